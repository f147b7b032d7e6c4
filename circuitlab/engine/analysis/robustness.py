"""How much noise a trained circuit tolerates, and how a single pulse dies away.

Noise of standard deviation sigma is drawn afresh (seeded) at every step of
every sequence and added either to the free units ("states": to each free
unit's net input, so a state stays inside its activation's range and the
cross-entropy stays defined) or to the clamped inputs ("inputs": to every
clamped cell after step 0). The loss is the circuit's own (mean over target
cells); each level is repeated and reported as mean, spread (standard
deviation), smallest and largest.
"""

from dataclasses import dataclass

import numpy as np

from circuitlab.engine.activations import activate
from circuitlab.engine.analysis.common import check_budget, chosen
from circuitlab.engine.analysis.horizon import extend
from circuitlab.engine.backward import loss_value
from circuitlab.engine.compile import Compiled, Parameters
from circuitlab.engine.errors import EngineError
from circuitlab.engine.forward import Activity, forward

NOISE_TARGETS = ("states", "inputs")
DEFAULT_LEVELS = (0.0, 0.01, 0.05, 0.1)


def noisy_forward(compiled: Compiled, params: Parameters, sigma: float, where: str,
                  rng: np.random.Generator) -> Activity:
    """The forward pass with Gaussian noise of size ``sigma`` at every step (see the module docstring)."""
    cm, cv = compiled.clamp_tm, compiled.clamp_values_tm
    T1, S, n = cm.shape
    W = np.where(compiled.connection_mask, params.W, 0.0)
    y = np.empty((T1, S, n))
    net = np.zeros((T1, S, n))
    y[0] = np.where(cm[0], cv[0], params.init)
    for t in range(1, T1):
        net[t] = y[t - 1] @ W + params.bias
        if where == "states" and sigma:
            net[t] += np.where(cm[t], 0.0, rng.normal(0.0, sigma, (S, n)))
        activate(compiled.groups, net[t], y[t])
        clamp = cv[t] + rng.normal(0.0, sigma, (S, n)) if where == "inputs" and sigma else cv[t]
        np.copyto(y[t], clamp, where=cm[t])
    return Activity(y, net)


@dataclass
class NoiseLevel:
    """The losses at one noise level over its repeats."""

    sigma: float
    losses: np.ndarray

    def as_record(self) -> dict:
        finite = self.losses[np.isfinite(self.losses)]
        stat = (lambda f: float(f(finite)) if finite.size else None)
        return {"sigma": self.sigma, "mean": stat(np.mean), "spread": stat(np.std),
                "smallest": stat(np.min), "largest": stat(np.max), "repeats": int(self.losses.size)}


@dataclass
class NoiseCurve:
    """Loss against noise level: the robustness curve."""

    where: str
    use: str
    levels: list[NoiseLevel]
    seed: int

    @property
    def sigmas(self) -> np.ndarray:
        return np.array([lv.sigma for lv in self.levels])

    @property
    def means(self) -> np.ndarray:
        return np.array([np.mean(lv.losses) for lv in self.levels])

    @property
    def spreads(self) -> np.ndarray:
        return np.array([np.std(lv.losses) for lv in self.levels])

    def as_record(self) -> dict:
        return {"noise_on": self.where, "sequences": self.use, "seed": self.seed,
                "levels": [lv.as_record() for lv in self.levels]}


def noise_curve(compiled: Compiled, params: Parameters, levels=DEFAULT_LEVELS, where: str = "states",
                repeats: int = 5, seed: int = 0, use: str = "training", loss: str | None = None) -> NoiseCurve:
    """The loss on the sequences of ``use`` with noise of each size in ``levels`` (seeded repeats)."""
    if where not in NOISE_TARGETS:
        raise EngineError(f"noise goes on 'states' or 'inputs', not '{where}'")
    if repeats < 1:
        raise EngineError("the number of repeats must be at least 1")
    levels = [float(v) for v in levels]
    if not levels or any(not (np.isfinite(v) and v >= 0) for v in levels):
        raise EngineError("noise levels must be finite numbers >= 0")
    comp = chosen(compiled, use)
    if comp.target_cells == 0:
        raise EngineError("no sequence has a target cell: with no loss there is nothing to compare")
    check_budget(2 * comp.clamp_tm.size, "the noise test")
    loss = loss or comp.loss
    rng = np.random.default_rng(seed)
    out = []
    for sigma in levels:
        values = np.empty(repeats)
        for r in range(repeats):
            with np.errstate(all="ignore"):
                values[r] = loss_value(comp, noisy_forward(comp, params, sigma, where, rng), loss)
        out.append(NoiseLevel(sigma, values))
    return NoiseCurve(where, use, out, seed)


@dataclass
class PulseResponse:
    """The difference a pulse made: ``response`` (K*L + 1, n) = pulsed states - undisturbed states."""

    unit_names: list[str]
    sequence: str
    unit: str
    step: int
    size: float
    response: np.ndarray
    decay_steps: list[int | None]   # per unit: steps after the pulse until |response| stays below 1 % of size

    def as_record(self) -> dict:
        return {"sequence": self.sequence, "unit": self.unit, "step": self.step, "size": self.size,
                "decay_steps": dict(zip(self.unit_names, self.decay_steps))}


def pulse_response(compiled: Compiled, params: Parameters, sequence: str, unit: str, step: int,
                   size: float = 0.1, factor: int = 1, clamps: str | float = "hold") -> PulseResponse:
    """Add ``size`` to ``unit``'s state at ``step`` of ``sequence`` and follow the difference it makes.

    With ``factor`` > 1 the run continues past the horizon (see ``horizon.extend``)
    so a slow decay can be seen to its end.
    """
    s = compiled.sequence_index(sequence)
    j = compiled.unit_index(unit)
    if not np.isfinite(size) or size == 0:
        raise EngineError("the pulse size must be a finite number other than 0")
    one = extend(compiled.subset([s]), factor, clamps)
    end = int(one.lengths[0])
    if not 0 <= step <= end:
        raise EngineError(f"the pulse step must lie in 0..{end}")
    base = forward(one, params).y_tm[:, 0]
    pulsed = _pulsed_forward(one, params, j, step, size)
    diff = pulsed - base
    small = np.abs(diff) < 0.01 * abs(size)
    decay = []
    for k in range(one.n_units):
        after = small[step:, k]
        if after.all():
            decay.append(0)
        elif after[-1]:
            last_big = len(after) - 1 - int(np.argmin(after[::-1]))
            decay.append(int(last_big + 1))
        else:
            decay.append(None)  # still disturbed at the end of the run
    return PulseResponse(list(compiled.unit_names), sequence, unit, int(step), float(size), diff, decay)


def _pulsed_forward(compiled: Compiled, params: Parameters, j: int, step: int, size: float) -> np.ndarray:
    cm, cv = compiled.clamp_tm[:, 0], compiled.clamp_values_tm[:, 0]
    W = np.where(compiled.connection_mask, params.W, 0.0)
    y = np.empty((cm.shape[0], compiled.n_units))
    y[0] = np.where(cm[0], cv[0], params.init)
    if step == 0:
        y[0, j] += size
    for t in range(1, cm.shape[0]):
        net = y[t - 1] @ W + params.bias
        activate(compiled.groups, net, y[t])
        np.copyto(y[t], cv[t], where=cm[t])
        if t == step:
            y[t, j] += size
    return y
