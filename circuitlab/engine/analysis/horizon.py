"""Running a circuit past its training horizon, and what each target unit does there.

Each sequence of length L runs to ``K * L`` steps. Past step L the units
clamped at step L are, by ``clamps``: "hold" (kept at their value at step L),
"release" (let go: they follow their net input like any other unit) or a
number (held at that value, for example 0 for "no input"). Every unit not
clamped at step L runs free. For each target unit of each sequence, with d
its target at its last targeted step:

- "settles":     every state past L lies within ``tolerance`` of d (an attractor);
- "oscillates":  otherwise, if the later half of the run repeats with a period
                 p >= 2 (to within ``tolerance / 2``) and swings by more than
                 ``tolerance``: the smallest such p is reported;
- "leaves":      anything else (it passed through d and moved on).
"""

from dataclasses import dataclass, replace

import numpy as np

from circuitlab.engine.analysis.common import check_budget, chosen, number
from circuitlab.engine.compile import Compiled, Parameters
from circuitlab.engine.errors import EngineError
from circuitlab.engine.forward import forward

VERDICTS = ("settles", "oscillates", "leaves")


@dataclass
class HorizonRun:
    """States past the horizon: ``y`` is (S, K*T_max + 1, n); ``horizons[s]`` is sequence s's own L."""

    unit_names: list[str]
    sequence_names: list[str]
    horizons: np.ndarray
    lengths: np.ndarray          # K * L per sequence
    y: np.ndarray
    targets: np.ndarray          # (S, n) the final target of each target unit (NaN elsewhere)
    verdicts: list[dict]         # one record per (sequence, target unit)
    tolerance: float
    clamps: str | float

    def states(self, sequence: str) -> np.ndarray:
        """(K*L + 1, n): one sequence's states, padding cut off."""
        s = self.sequence_names.index(sequence)
        return self.y[s, : self.lengths[s] + 1]

    def summary(self) -> list[dict]:
        """Per target unit: how many sequences it settles, oscillates or leaves in, and the periods seen."""
        out = []
        for name in self.unit_names:
            mine = [v for v in self.verdicts if v["unit"] == name]
            if not mine:
                continue
            counts = {k: sum(v["verdict"] == k for v in mine) for k in VERDICTS}
            periods = sorted({v["period"] for v in mine if v["period"]})
            out.append({"unit": name, **counts, "periods": periods,
                        "verdict": max(VERDICTS, key=lambda k: counts[k])})
        return out


def extend(compiled: Compiled, factor: int, clamps: str | float = "hold") -> Compiled:
    """A copy of ``compiled`` whose sequences run ``factor`` times their length, without targets."""
    if factor < 1:
        raise EngineError("the horizon factor K must be at least 1")
    if not (clamps in ("hold", "release") or (isinstance(clamps, (int, float)) and np.isfinite(clamps))):
        raise EngineError("clamps past the horizon must be 'hold', 'release' or a finite number")
    T1, S, n = compiled.clamp_tm.shape
    L = compiled.lengths
    ext = L * factor
    T2 = int(ext.max()) + 1 if S else 1
    check_budget(2 * T2 * S * n, "running past the horizon")
    cm = np.zeros((T2, S, n), dtype=bool)
    cv = np.zeros((T2, S, n))
    cm[:T1], cv[:T1] = compiled.clamp_tm, compiled.clamp_values_tm
    for s in range(S):
        last = int(L[s])
        cm[last + 1:, s] = False
        cv[last + 1:, s] = 0.0
        if clamps == "release":
            continue
        held = compiled.clamp_tm[last, s]
        value = compiled.clamp_values_tm[last, s] if clamps == "hold" else np.full(n, float(clamps))
        cm[last + 1: ext[s] + 1, s] = held
        cv[last + 1: ext[s] + 1, s] = np.where(held, value, 0.0)
    return replace(compiled, lengths=ext, clamp_tm=cm, clamp_values_tm=cv,
                   target_tm=np.zeros((T2, S, n), dtype=bool), target_values_tm=np.zeros((T2, S, n)))


def final_targets(compiled: Compiled) -> np.ndarray:
    """(S, n): each unit's target at its last targeted step in each sequence (NaN if it has none)."""
    m = compiled.target_mask            # (S, T+1, n)
    S, T1, n = m.shape
    out = np.full((S, n), np.nan)
    any_t = m.any(axis=1)
    last = T1 - 1 - np.argmax(m[:, ::-1, :], axis=1)   # last True step per (s, j)
    vals = np.take_along_axis(compiled.target_values, last[:, None, :], axis=1)[:, 0, :]
    out[any_t] = vals[any_t]
    return out


def detect_period(x: np.ndarray, tolerance: float) -> int | None:
    """The smallest period p >= 2 of the later half of ``x`` (to within ``tolerance``), or None.

    A series that barely moves (swing <= 2 * tolerance) has no period: it is settling somewhere.
    """
    w = x[len(x) // 2:]
    if w.size < 4 or not np.isfinite(w).all() or np.ptp(w) <= 2.0 * tolerance:
        return None
    for p in range(2, w.size // 2 + 1):
        if np.abs(w[p:] - w[:-p]).max() <= tolerance:
            return p
    return None


def past_horizon(compiled: Compiled, params: Parameters, factor: int = 4, clamps: str | float = "hold",
                 tolerance: float = 0.1, use: str = "training") -> HorizonRun:
    """Run the sequences of ``use`` for ``factor`` times their length and judge every target unit."""
    if not (tolerance > 0 and np.isfinite(tolerance)):
        raise EngineError("the tolerance must be a positive number")
    base = chosen(compiled, use)
    if base.target_cells == 0:
        raise EngineError("no sequence has a target cell: there is nothing to hold past the horizon")
    long = extend(base, factor, clamps)
    act = forward(long, params)
    y = act.y.copy()
    d = final_targets(base)
    verdicts = []
    for s, seq in enumerate(base.sequence_names):
        L, end = int(base.lengths[s]), int(long.lengths[s])
        tail = y[s, L + 1: end + 1]
        for j in np.flatnonzero(np.isfinite(d[s])):
            x = tail[:, j]
            dev = float(np.abs(x - d[s, j]).max()) if x.size else 0.0
            period = None
            if np.isfinite(dev) and dev <= tolerance:
                verdict = "settles"
            else:
                period = detect_period(x, tolerance / 2.0)
                verdict = "oscillates" if period else "leaves"
            verdicts.append({"sequence": seq, "unit": base.unit_names[j], "verdict": verdict,
                             "period": period, "final_target": float(d[s, j]),
                             "state_at_horizon": number(y[s, L, j]),
                             "largest_deviation": dev if np.isfinite(dev) else None,
                             "state_at_end": number(y[s, end, j])})
    return HorizonRun(list(base.unit_names), list(base.sequence_names), base.lengths.copy(),
                      long.lengths.copy(), y, d, verdicts, float(tolerance), clamps)
