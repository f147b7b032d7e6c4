"""The trainer: a plain object that advances training one epoch per call.

It compiles a copy of the circuit once, starts from the values the circuit
holds, and follows the gradient of the loss (the mean over the batch's
target cells of the per-cell loss) plus, with weight decay lambda, the
penalty ``0.5 * lambda * sum of theta_w**2`` over the weight parameters
(a tie group counts once; biases and initial states are not decayed).
Everything random (mini-batch order, ``reinitialise``) comes from seeded
NumPy Generators, so a run repeats bit for bit on one machine.

A non-finite loss, gradient or parameter stops training: the parameters
go back to the last ones whose loss was finite, the history is kept, and
``stopped_because`` says what happened.
"""

from dataclasses import dataclass, field

import numpy as np

from circuitlab.engine.backward import Backward, backward, loss_value
from circuitlab.engine.compile import Compiled, Parameters, compile_circuit
from circuitlab.engine.errors import EngineError
from circuitlab.engine.forward import Activity, forward
from circuitlab.engine.optimizers import carry_state, clip_by_global_norm, learning_rate, make_optimizer
from circuitlab.engine.activations import NAMES
from circuitlab.model import Circuit, TrainingRecord, TrainingSettings
from circuitlab.model.units import default_initial_state


@dataclass(eq=False)
class EpochRecord:
    """What one epoch did.

    ``loss``: the training loss, measured at the parameters each mini-batch
    started from (one batch: the parameters the epoch started from), the
    cell-weighted mean over the batches; ``held_out_loss``: the same for the
    held-out sequences at the parameters the epoch started from (None if
    there are none); ``grad_norm``: the norm of the tie-summed gradient
    (with weight decay, before clipping), the mean over the batches;
    ``e_norm`` (T+1,): the norm over units and training sequences of e(t);
    ``parameters``: the parameters after the epoch (a copy per record:
    about 8 n^2 bytes, so 20 kB for 50 units); ``finite``: False if the
    epoch hit a NaN or infinity (training then stopped); ``decay_penalty``:
    the weight-decay term ``0.5 * lambda * sum theta_w**2`` (not in ``loss``).
    """

    epoch: int
    loss: float
    held_out_loss: float | None
    grad_norm: float
    learning_rate: float
    e_norm: np.ndarray
    finite: bool
    parameters: Parameters
    decay_penalty: float = 0.0


class Trainer:
    """Trains a copy of ``circuit`` with its ``circuit.training`` settings.

    ``epoch()`` advances one epoch per call, ``step()`` one mini-batch.

    ``epochs`` overrides the settings' maximum number of epochs. Raises
    ``EngineError`` if the circuit has problems, no training sequences or
    no target cells in them.
    """

    def __init__(self, circuit: Circuit, epochs: int | None = None):
        if epochs is not None and epochs < 1:
            raise EngineError(f"the number of epochs must be at least 1 (got {epochs})")
        self._max_epochs = epochs
        self.history: list[EpochRecord] = []
        self.done = False
        self.stopped_because: str | None = None
        self._pending: _Epoch | None = None
        self._load(circuit, keep_state=False)

    # ------------------------------------------------------------ set-up
    def _load(self, circuit: Circuit, keep_state: bool) -> None:
        circuit = circuit.copy()
        compiled = compile_circuit(circuit)
        train = np.flatnonzero(~compiled.held_out)
        held = np.flatnonzero(compiled.held_out)
        if train.size == 0:
            raise EngineError("there is nothing to train on: every sequence is held out (or there are none)")
        train_set = compiled.subset(train)
        if train_set.target_cells == 0:
            raise EngineError("there is nothing to learn: no training sequence has a target cell")
        old_labels = getattr(self, "compiled", None) and self.compiled.param_labels
        self.circuit = circuit
        self.settings: TrainingSettings = circuit.training
        self.compiled = compiled
        self._train_idx = train
        self._train_set = train_set
        self._held_set = compiled.subset(held) if held.size else None
        self._base = compiled.parameters_from_circuit()
        self._theta = compiled.pack(self._base)
        self._lo, self._hi = compiled.bounds()
        self._good_theta = self._theta.copy()
        self._pending = None  # an epoch begun by step() restarts with the new values
        nw = compiled.n_weight_params
        self._decay_mask = np.zeros(compiled.n_params, dtype=bool)
        self._decay_mask[:nw] = True
        optimizer = make_optimizer(self.settings, compiled.n_params)
        if keep_state and old_labels == compiled.param_labels:
            self._optimizer = carry_state(optimizer, self._optimizer)
        else:
            self._optimizer = optimizer
            self._rng = np.random.default_rng(self.settings.seed)

    @property
    def max_epochs(self) -> int:
        return self._max_epochs if self._max_epochs is not None else self.settings.epochs

    @property
    def epochs_done(self) -> int:
        return len(self.history)

    @property
    def parameters(self) -> Parameters:
        """The current weights, biases and initial states (a copy)."""
        return self.compiled.unpack(self._theta, self._base)

    # ---------------------------------------------------------- training
    def epoch(self) -> EpochRecord:
        """Run one epoch (the rest of it, if ``step`` has begun one) and return its record."""
        while True:
            rec = self.step()
            if rec is not None:
                return rec

    def step(self) -> EpochRecord | None:
        """Train on one mini-batch; return the epoch's record if this batch ends the epoch, else None."""
        if self.done:
            raise EngineError(f"training has stopped: {self.stopped_because}")
        if self._pending is None:
            self._pending = self._begin_epoch()
        p = self._pending
        batch = p.batches[p.next]
        p.next += 1
        finite = self._train_batch(batch, p)
        if finite and p.next < len(p.batches):
            return None
        self._pending = None
        return self._finish_epoch(p, finite)

    def _begin_epoch(self) -> "_Epoch":
        number = self.epochs_done + 1
        held = self._held_out_loss()
        return _Epoch(number, learning_rate(self.settings, number), held, self._batches(),
                      np.zeros(self._train_set.steps + 1))

    def _train_batch(self, batch: Compiled, p: "_Epoch") -> bool:
        """One optimizer step on ``batch``; False (and training stopped) on NaN or infinity."""
        s = self.settings
        params = self.compiled.unpack(self._theta, self._base)
        with np.errstate(over="ignore", invalid="ignore"):  # overflow is caught below
            act = forward(batch, params)
            value, grads, back = backward(batch, params, act, loss=s.loss, truncation=s.truncation)
        g = batch.pack_gradient(grads)
        w = self._theta[self._decay_mask]
        p.penalty = 0.5 * s.weight_decay * float(w @ w)
        g[self._decay_mask] += s.weight_decay * w
        norm = float(np.linalg.norm(g))
        if np.isfinite(value):
            self._good_theta = self._theta.copy()
        if not (np.isfinite(value) and np.isfinite(norm)):
            self._stop_non_finite(p.number, "the loss" if not np.isfinite(value) else "the gradient")
            return False
        theta = self._optimizer.step(self._theta, clip_by_global_norm(g, s.clip_norm), p.lr)
        theta = np.clip(theta, self._lo, self._hi)
        p.loss_sum += value * back.target_cells
        p.cells += back.target_cells
        p.norms.append(norm)
        p.e_sq[:back.e_tm.shape[0]] += np.einsum("tsn,tsn->t", back.e_tm, back.e_tm)
        if not np.isfinite(theta).all():
            self._stop_non_finite(p.number, "a parameter")
            return False
        self._theta = theta
        return True

    def _finish_epoch(self, p: "_Epoch", finite: bool) -> EpochRecord:
        s = self.settings
        rec = EpochRecord(
            epoch=p.number, loss=p.loss_sum / p.cells if finite and p.cells else float("nan"),
            held_out_loss=p.held_out_loss, grad_norm=float(np.mean(p.norms)) if p.norms else float("nan"),
            learning_rate=p.lr, e_norm=np.sqrt(p.e_sq), finite=finite, parameters=self.parameters,
            decay_penalty=p.penalty)
        self.history.append(rec)
        if not self.done:
            if s.target_loss is not None and self._reached_target(p, rec):
                self._stop(f"reached the target loss {s.target_loss:g} (loss {self.loss():.6g}) "
                           f"after {p.number} epochs")
            elif p.number >= self.max_epochs:
                self._stop(f"ran the set number of epochs ({self.max_epochs})")
        return rec

    def _reached_target(self, p: "_Epoch", rec: EpochRecord) -> bool:
        """Is the training loss at the parameters training would stop with at most target_loss?

        With one batch, rec.loss was measured at the parameters the epoch
        started from: if it reached the target, those parameters are kept (the
        epoch's update is dropped), so the final loss is the one that reached
        it. With mini-batches the loss after the epoch is measured.
        """
        target = self.settings.target_loss
        if len(p.batches) > 1:
            return self.loss() <= target
        if rec.loss > target:
            return False
        self._theta = self._good_theta.copy()
        rec.parameters = self.parameters
        return True

    @property
    def batches_per_epoch(self) -> int:
        size, n = self.settings.batch_size, self._train_idx.size
        return 1 if size == 0 or size >= n else -(-n // size)

    def run(self, callback=None) -> list[EpochRecord]:
        """Train until done; ``callback(record)`` after each epoch. Returns the new records."""
        out = []
        while not self.done:
            rec = self.epoch()
            out.append(rec)
            if callback is not None:
                callback(rec)
        return out

    def _batches(self) -> list[Compiled]:
        size = self.settings.batch_size
        n = self._train_idx.size
        if size == 0 or size >= n:
            return [self._train_set]
        order = self._rng.permutation(n)
        return [self._train_set.subset(order[i:i + size]) for i in range(0, n, size)]

    def _stop(self, reason: str) -> None:
        self.done = True
        self.stopped_because = reason

    def _stop_non_finite(self, epoch: int, what: str) -> None:
        self._theta = self._good_theta.copy()
        self._stop(f"{what} became NaN or infinite in epoch {epoch}; the parameters are back to "
                   "the last ones with a finite loss (try a smaller learning rate or gradient clipping)")

    # -------------------------------------------------------- evaluation
    def loss(self) -> float:
        """The training loss at the current parameters."""
        params = self.parameters
        with np.errstate(over="ignore", invalid="ignore"):  # an overflow shows as an infinite loss
            return loss_value(self._train_set, forward(self._train_set, params), self.settings.loss)

    def _held_out_loss(self) -> float | None:
        if self._held_set is None:
            return None
        params = self.parameters
        with np.errstate(over="ignore", invalid="ignore"):
            return loss_value(self._held_set, forward(self._held_set, params), self.settings.loss)

    def held_out_loss(self) -> float | None:
        """The held-out loss at the current parameters (None without held-out sequences)."""
        return self._held_out_loss()

    def inspect(self, sequence: str | None = None) -> tuple[Compiled, Activity, Backward]:
        """(Compiled, Activity, Backward) at the current parameters, for the views.

        ``sequence`` None means every sequence (held-out ones included);
        otherwise only the named one. The backward pass uses the training
        settings (loss, truncation).
        """
        comp = self.compiled
        if sequence is not None:
            comp = comp.subset([comp.sequence_index(sequence)])
        params = self.parameters
        with np.errstate(over="ignore", invalid="ignore"):  # the views show inf/NaN as they are
            act = forward(comp, params)
            _, _, back = backward(comp, params, act, loss=self.settings.loss,
                                  truncation=self.settings.truncation)
        return comp, act, back

    # --------------------------------------------------- circuit values
    def write_back(self, circuit: Circuit) -> None:
        """Store the trained weights, biases and learned initial states in ``circuit``
        (which must have the trained circuit's units and connections), and the
        record of this run in ``circuit.trained``."""
        params = self.parameters
        comp = self.compiled
        names = comp.unit_names
        pairs = [(names[i], names[j]) for i, j in comp.connections]
        missing = [f"unit '{u}'" for u in names if not circuit.has_unit(u)]
        missing += [f"connection {a} -> {b}" for a, b in pairs if not circuit.has_connection(a, b)]
        if missing:
            raise EngineError("the trained values cannot be stored: the circuit no longer has "
                              + ", ".join(missing[:5]) + (" ..." if len(missing) > 5 else ""))
        loss, held = self.loss(), self.held_out_loss()
        if not np.isfinite(loss):
            raise EngineError("the trained values cannot be stored: the loss is not finite at them")
        for (i, j), (a, b) in zip(comp.connections, pairs):
            circuit.connection(a, b).weight = float(params.W[i, j])
        for j, name in enumerate(names):
            unit = circuit.unit(name)
            unit.bias = float(params.bias[j])
            if unit.initial_mode == "learned":
                unit.initial_value = float(params.init[j])
        last = self.history[-1] if self.history else None
        circuit.trained = TrainingRecord(
            epochs=self.epochs_done, loss=loss, held_out_loss=held if held is not None and np.isfinite(held) else None,
            stopped_because=self.stopped_because or (f"paused after {self.epochs_done} epochs" if last else ""))

    def reinitialise(self, seed: int) -> None:
        """Draw fresh weights and restart: trainable weights ~ N(0, (init_scale / sqrt(fan-in))^2).

        Fan-in is the number of connections into the weight's target unit (a
        tie group gets one draw, scaled by its first member's target). Signs
        are respected (the magnitude takes the allowed sign); trainable biases
        become 0 and learned initial states their unit's default; frozen
        values keep theirs. History and optimizer state start afresh.
        """
        comp = self.compiled
        rng = np.random.default_rng(seed)
        fan_in = np.maximum(comp.connection_mask.sum(axis=0), 1)
        nw = comp.n_weight_params
        theta = self._theta.copy()
        trains = comp.conn_param >= 0
        params, first = np.unique(comp.conn_param[trains], return_index=True)
        src, dst = comp.connections[trains][first].T
        draws = rng.normal(size=nw) * self.settings.init_scale / np.sqrt(fan_in[dst])
        sign = comp.sign[src, dst]
        draws = np.where(sign > 0, np.abs(draws), np.where(sign < 0, -np.abs(draws), draws))
        theta[params] = draws
        groups = comp.param_groups()
        theta[groups["biases"]] = 0.0
        theta[groups["initial states"]] = [
            default_initial_state(NAMES[comp.activation_codes[j]]) for j in comp.init_units]
        self._theta = theta
        self._good_theta = theta.copy()
        self._pending = None
        self._optimizer = make_optimizer(self.settings, comp.n_params)
        self._rng = np.random.default_rng(self.settings.seed)
        self.history = []
        self.done = False
        self.stopped_because = None

    def update_values(self, circuit: Circuit) -> None:
        """Take the values and settings of an edited ``circuit`` and carry on training.

        The circuit is recompiled (cheap), so edits of structure, schedule or
        data are taken too; the optimizer's state is kept when the trainable
        parameters are the same ones, and the history is kept. A stopped
        trainer may continue (for example after a smaller learning rate).
        """
        self._load(circuit, keep_state=True)
        self.done = False
        self.stopped_because = None
        if self.epochs_done >= self.max_epochs:
            self._stop(f"ran the set number of epochs ({self.max_epochs})")


@dataclass(eq=False)
class _Epoch:
    """An epoch in progress (between ``step`` calls)."""

    number: int
    lr: float
    held_out_loss: float | None
    batches: list[Compiled]
    e_sq: np.ndarray
    next: int = 0
    loss_sum: float = 0.0
    cells: int = 0
    norms: list[float] = field(default_factory=list)
    penalty: float = 0.0
