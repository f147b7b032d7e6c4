"""Compiling a circuit, its schedule and sequences into arrays.

Everything the numerical code needs is here as float64/bool/int NumPy arrays;
nothing downstream looks at the model again. Sequences of different lengths
share one batch: arrays run to the longest length T and ``step_mask`` says
which steps exist in each sequence (padding is never clamped or targeted, so
it carries no error and adds nothing to a gradient).

The trainable parameters form one flat vector ``theta``: one entry per tie
group or untied trainable connection, then the trainable biases, then the
learned initial states. Tied weights are one entry, so they stay exactly
equal; frozen values are not in ``theta`` at all, so they never change.
"""

from dataclasses import dataclass, field, fields
from typing import Iterable

import numpy as np

from circuitlab.engine.activations import CODES, Groups, groups_of
from circuitlab.engine.errors import EngineError
from circuitlab.model import Circuit, Sequence, clamp_mask, find_problems, target_mask

INIT_FIXED, INIT_LEARNED, INIT_CLAMPED = 0, 1, 2
_INIT_CODES = {"fixed": INIT_FIXED, "learned": INIT_LEARNED, "clamped": INIT_CLAMPED}

GROUP_NAMES = ("weights", "biases", "initial states")


@dataclass
class Parameters:
    """The values the circuit computes with.

    ``W[i, j]`` is the weight of connection i -> j (0 where there is none),
    ``bias[j]`` the bias of unit j, ``init[j]`` the state of unit j at step 0
    when it is not clamped there (its learned value or its fixed value).
    """

    W: np.ndarray
    bias: np.ndarray
    init: np.ndarray

    def copy(self) -> "Parameters":
        return Parameters(self.W.copy(), self.bias.copy(), self.init.copy())

    def all_finite(self) -> bool:
        return bool(np.isfinite(self.W).all() and np.isfinite(self.bias).all()
                    and np.isfinite(self.init).all())


@dataclass(eq=False)
class Compiled:
    """A circuit with a batch of sequences, as arrays (see the module docstring).

    Shapes: S sequences, steps 0..T, n units in the order of ``circuit.units``.
    The per-cell arrays (``clamp_mask`` ...) are (S, T+1, n) views of
    time-major buffers, so editing them edits what ``forward`` uses.
    """

    unit_names: list[str]
    sequence_names: list[str]
    held_out: np.ndarray            # (S,) bool
    lengths: np.ndarray             # (S,) int
    connection_mask: np.ndarray     # (n, n) bool, [i, j]: connection i -> j
    activation_codes: np.ndarray    # (n,) int, see activations.CODES
    init_mode: np.ndarray           # (n,) int: INIT_FIXED / INIT_LEARNED / INIT_CLAMPED
    weight_trains: np.ndarray       # (n, n) bool, False for frozen and absent connections
    bias_trains: np.ndarray         # (n,) bool
    sign: np.ndarray                # (n, n) int: +1 weight must be >= 0, -1 <= 0, 0 free
    tie_group: np.ndarray           # (n, n) int: index into tie_names, -1 if untied/absent
    tie_names: list[str]
    connections: np.ndarray         # (C, 2) int: (source, target) in the circuit's order
    conn_param: np.ndarray          # (C,) int: index into theta, -1 if the weight is frozen
    bias_units: np.ndarray          # units whose bias is in theta, in theta order
    init_units: np.ndarray          # units whose initial state is in theta, in theta order
    param_labels: list[str]         # one plain label per theta entry
    loss: str                       # the circuit's loss setting
    circuit_values: Parameters      # the values the circuit held when compiled
    groups: Groups = field(repr=False)
    clamp_tm: np.ndarray = field(repr=False)     # (T+1, S, n) bool
    clamp_values_tm: np.ndarray = field(repr=False)
    target_tm: np.ndarray = field(repr=False)
    target_values_tm: np.ndarray = field(repr=False)

    # ------------------------------------------------------------- shapes
    @property
    def n_units(self) -> int:
        return len(self.unit_names)

    @property
    def n_sequences(self) -> int:
        return len(self.sequence_names)

    @property
    def steps(self) -> int:
        """T, the last step of the longest sequence."""
        return self.clamp_tm.shape[0] - 1

    @property
    def step_mask(self) -> np.ndarray:
        """(S, T+1) bool: the step exists in that sequence."""
        return np.arange(self.steps + 1)[None, :] <= self.lengths[:, None]

    @property
    def clamp_mask(self) -> np.ndarray:
        return self.clamp_tm.transpose(1, 0, 2)

    @property
    def clamp_values(self) -> np.ndarray:
        return self.clamp_values_tm.transpose(1, 0, 2)

    @property
    def target_mask(self) -> np.ndarray:
        return self.target_tm.transpose(1, 0, 2)

    @property
    def target_values(self) -> np.ndarray:
        return self.target_values_tm.transpose(1, 0, 2)

    @property
    def target_cells(self) -> int:
        return int(self.target_tm.sum())

    # --------------------------------------------------------- look-up
    def unit_index(self, name: str) -> int:
        try:
            return self.unit_names.index(name)
        except ValueError:
            raise EngineError(f"there is no unit named '{name}'") from None

    def sequence_index(self, name: str) -> int:
        try:
            return self.sequence_names.index(name)
        except ValueError:
            raise EngineError(f"there is no sequence named '{name}'") from None

    def parameters_from_circuit(self) -> Parameters:
        """The weights, biases and initial states the circuit held (a fresh copy)."""
        return self.circuit_values.copy()

    def subset(self, indices: Iterable[int]) -> "Compiled":
        """The same circuit with only the chosen sequences (trimmed to their longest length)."""
        idx = np.asarray(list(indices), dtype=int)
        T = int(self.lengths[idx].max()) if idx.size else 0
        cut = slice(0, T + 1)
        own = {f.name: getattr(self, f.name) for f in fields(self)}
        return Compiled(
            **{**own,
               "sequence_names": [self.sequence_names[i] for i in idx],
               "held_out": self.held_out[idx], "lengths": self.lengths[idx],
               "clamp_tm": self.clamp_tm[cut, idx], "clamp_values_tm": self.clamp_values_tm[cut, idx],
               "target_tm": self.target_tm[cut, idx],
               "target_values_tm": self.target_values_tm[cut, idx]})

    # ------------------------------------------------ the parameter vector
    @property
    def n_weight_params(self) -> int:
        return int(self.conn_param.max(initial=-1)) + 1

    @property
    def n_params(self) -> int:
        return self.n_weight_params + len(self.bias_units) + len(self.init_units)

    def param_groups(self) -> dict[str, slice]:
        """The slices of theta holding weights, biases and initial states."""
        nw, nb = self.n_weight_params, len(self.bias_units)
        return {"weights": slice(0, nw), "biases": slice(nw, nw + nb),
                "initial states": slice(nw + nb, self.n_params)}

    def pack(self, params: Parameters) -> np.ndarray:
        """theta from full parameters (a tie group takes its first member's weight)."""
        nw = self.n_weight_params
        weights = np.zeros(nw)
        if len(self.connections):
            trains = self.conn_param >= 0
            src, dst = self.connections[trains].T
            # A tie group takes the value of its first member.
            p, first = np.unique(self.conn_param[trains], return_index=True)
            weights[p] = params.W[src[first], dst[first]]
        return np.concatenate([weights, params.bias[self.bias_units], params.init[self.init_units]])

    def unpack(self, theta: np.ndarray, base: Parameters) -> Parameters:
        """Full parameters: ``base`` with the entries of theta written in (tied members alike)."""
        out = base.copy()
        nw, nb = self.n_weight_params, len(self.bias_units)
        if len(self.connections):
            trains = self.conn_param >= 0
            src, dst = self.connections[trains].T
            out.W[src, dst] = theta[self.conn_param[trains]]
        out.bias[self.bias_units] = theta[nw:nw + nb]
        out.init[self.init_units] = theta[nw + nb:]
        return out

    def pack_gradient(self, grads: Parameters) -> np.ndarray:
        """The gradient with respect to theta: a tie group's gradient is the sum of its members'."""
        nw = self.n_weight_params
        if len(self.connections):
            trains = self.conn_param >= 0
            src, dst = self.connections[trains].T
            gw = np.bincount(self.conn_param[trains], weights=grads.W[src, dst], minlength=nw)
        else:
            gw = np.zeros(0)
        return np.concatenate([gw, grads.bias[self.bias_units], grads.init[self.init_units]])

    def bounds(self) -> tuple[np.ndarray, np.ndarray]:
        """Lower and upper bounds of theta (sign-constrained weights; others unbounded)."""
        lo = np.full(self.n_params, -np.inf)
        hi = np.full(self.n_params, np.inf)
        if len(self.connections):
            trains = self.conn_param >= 0
            src, dst = self.connections[trains].T
            s = self.sign[src, dst]
            p = self.conn_param[trains]
            lo[p[s > 0]] = 0.0
            hi[p[s < 0]] = 0.0
        return lo, hi


def compile_circuit(circuit: Circuit, sequences: Iterable[str | Sequence] | None = None) -> Compiled:
    """Compile ``circuit`` with ``sequences`` (names or Sequence objects; default all of them).

    Raises ``EngineError`` listing the model's problems (``find_problems``) if
    the circuit cannot be run as it stands.
    """
    problems = find_problems(circuit)
    if problems:
        lines = [str(p) for p in problems]
        shown = "\n".join(f"  {p}" for p in lines[:20])
        more = f"\n  ... and {len(lines) - 20} more" if len(lines) > 20 else ""
        raise EngineError(f"the circuit has {len(lines)} problem(s):\n{shown}{more}", lines)
    if sequences is None:
        seqs = list(circuit.sequences)
    else:
        seqs = [s if isinstance(s, Sequence) else _find_sequence(circuit, s) for s in sequences]

    units = circuit.units
    names = [u.name for u in units]
    index = {nm: i for i, nm in enumerate(names)}
    n = len(units)

    codes = np.array([CODES[u.activation] for u in units], dtype=int)
    init_mode = np.array([_INIT_CODES[u.initial_mode] for u in units], dtype=int)
    bias = np.array([u.bias for u in units], dtype=float)
    init = np.array([u.initial_state() for u in units], dtype=float)
    bias_trains = np.array([u.bias_trains for u in units], dtype=bool)
    unit_sign = np.array([{"excitatory": 1, "inhibitory": -1}.get(u.sign, 0) for u in units], dtype=int)

    W = np.zeros((n, n))
    cmask = np.zeros((n, n), dtype=bool)
    wtrains = np.zeros((n, n), dtype=bool)
    sign = np.zeros((n, n), dtype=int)
    tie = np.full((n, n), -1, dtype=int)
    tie_names: list[str] = []
    conns = np.zeros((len(circuit.connections), 2), dtype=int)
    conn_param = np.full(len(circuit.connections), -1, dtype=int)
    labels: list[str] = []
    group_param: dict[str, int] = {}
    for k, c in enumerate(circuit.connections):
        i, j = index[c.source], index[c.target]
        conns[k] = i, j
        W[i, j] = c.weight
        cmask[i, j] = True
        wtrains[i, j] = c.trains
        sign[i, j] = unit_sign[i]
        if c.tie is not None:
            if c.tie not in tie_names:
                tie_names.append(c.tie)
            tie[i, j] = tie_names.index(c.tie)
        if not c.trains:
            continue
        if c.tie is None:
            conn_param[k] = len(labels)
            labels.append(f"weight {c.source} -> {c.target}")
        else:
            if c.tie not in group_param:
                group_param[c.tie] = len(labels)
                size = len(circuit.tie_members(c.tie))
                labels.append(f"tie group '{c.tie}' ({size} connections)")
            conn_param[k] = group_param[c.tie]
    bias_units = np.flatnonzero(bias_trains)
    init_units = np.flatnonzero(init_mode == INIT_LEARNED)
    labels += [f"bias {names[j]}" for j in bias_units]
    labels += [f"initial state {names[j]}" for j in init_units]

    S = len(seqs)
    lengths = np.array([s.length for s in seqs], dtype=int)
    T = int(lengths.max()) if S else 0
    clamp_tm = np.zeros((T + 1, S, n), dtype=bool)
    clamp_val = np.zeros((T + 1, S, n))
    target_tm = np.zeros((T + 1, S, n), dtype=bool)
    target_val = np.zeros((T + 1, S, n))
    for s, seq in enumerate(seqs):
        steps = seq.steps
        for j, u in enumerate(units):
            sched = circuit.schedule_for(u.name)
            cm = clamp_mask(u, sched, seq)
            if any(cm):
                clamp_tm[:steps, s, j] = cm
                clamp_val[:steps, s, j] = _row(seq.clamps.get(u.name), cm, "clamped", u.name, seq)
            tm = target_mask(u, sched, seq)
            if any(tm):
                target_tm[:steps, s, j] = tm
                target_val[:steps, s, j] = _row(seq.targets.get(u.name), tm, "targeted", u.name, seq)

    return Compiled(
        unit_names=names, sequence_names=[s.name for s in seqs],
        held_out=np.array([s.held_out for s in seqs], dtype=bool), lengths=lengths,
        connection_mask=cmask, activation_codes=codes, init_mode=init_mode,
        weight_trains=wtrains, bias_trains=bias_trains, sign=sign, tie_group=tie,
        tie_names=tie_names, connections=conns, conn_param=conn_param,
        bias_units=bias_units, init_units=init_units, param_labels=labels,
        loss=circuit.training.loss, circuit_values=Parameters(W, bias, init),
        groups=groups_of(codes) if n else (),
        clamp_tm=clamp_tm, clamp_values_tm=clamp_val, target_tm=target_tm,
        target_values_tm=target_val)


def _find_sequence(circuit: Circuit, name: str) -> Sequence:
    for s in circuit.sequences:
        if s.name == name:
            return s
    raise EngineError(f"there is no sequence named '{name}'")


def _row(values: list | None, mask: list[bool], kind: str, unit: str, seq: Sequence) -> list[float]:
    # find_problems checks the circuit's own sequences; a Sequence given directly may still lack data.
    values = list(values or [])
    values += [None] * (len(mask) - len(values))
    out = []
    for t, (v, m) in enumerate(zip(values, mask)):
        if m and v is None:
            raise EngineError(f"sequence '{seq.name}': unit '{unit}' is {kind} at step {t} "
                              "but the sequence has no value for it")
        out.append(float(v) if m else 0.0)
    return out
