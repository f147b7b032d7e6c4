"""The set of analyses the ``analyze`` command prints, run in one go on a compiled circuit."""

from dataclasses import dataclass

import numpy as np

from circuitlab.engine.analysis.common import input_units
from circuitlab.engine.analysis.fixed_points import FixedPointReport, find_fixed_points
from circuitlab.engine.analysis.horizon import HorizonRun, past_horizon
from circuitlab.engine.analysis.robustness import DEFAULT_LEVELS, NoiseCurve, noise_curve
from circuitlab.engine.analysis.step_map import step_map
from circuitlab.engine.compile import Compiled, Parameters
from circuitlab.engine.errors import EngineError
from circuitlab.engine.forward import forward


def default_held(compiled: Compiled, given: dict[str, float] | None = None) -> dict[str, float]:
    """The constant held units: every input unit (clamped after step 0) at 0 unless ``given`` says otherwise.

    ``given`` may also hold units that are not inputs (they are then held too).
    """
    given = dict(given or {})
    for name in given:
        compiled.unit_index(name)  # an unknown unit is an error, not silently ignored
    held = {compiled.unit_names[j]: 0.0 for j in np.flatnonzero(input_units(compiled))}
    held.update({k: float(v) for k, v in given.items()})
    return held


def fixed_points_of(compiled: Compiled, params: Parameters, held: dict[str, float] | None = None,
                    starts: int = 64, seed: int = 0) -> FixedPointReport:
    """Fixed points with the input units held (``default_held``); the sequences' end states seed the search."""
    F = step_map(compiled, params, default_held(compiled, held))
    near = None
    if compiled.n_sequences and F.size:
        y = forward(compiled, params).y
        near = y[np.arange(compiled.n_sequences), compiled.lengths][:, F.free]
        near = near[np.isfinite(near).all(axis=1)]
    return find_fixed_points(F, starts=starts, seed=seed, near=near)


@dataclass
class Analysis:
    """What ``analyse`` found; each part is None when it could not be computed (see ``problems``)."""

    horizon: HorizonRun | None
    fixed_points: FixedPointReport | None
    noise: NoiseCurve | None
    problems: dict[str, str]

    def as_record(self) -> dict:
        rec: dict = {"problems": self.problems}
        if self.horizon is not None:
            h = self.horizon
            rec["horizon"] = {"factor_steps": [int(v) for v in h.lengths], "clamps": h.clamps,
                              "tolerance": h.tolerance, "units": h.summary(), "verdicts": h.verdicts}
        if self.fixed_points is not None:
            rec["fixed_points"] = self.fixed_points.as_record()
        if self.noise is not None:
            rec["noise"] = self.noise.as_record()
        return rec


def analyse(compiled: Compiled, params: Parameters, held: dict[str, float] | None = None, factor: int = 4,
            clamps: str | float = "hold", tolerance: float = 0.1, levels=DEFAULT_LEVELS, repeats: int = 5,
            seed: int = 0, starts: int = 64, use: str = "training") -> Analysis:
    """Past the horizon, fixed points and the noise curve; a part that cannot run says why in ``problems``."""
    problems: dict[str, str] = {}
    parts = {}
    for key, job in (("horizon", lambda: past_horizon(compiled, params, factor, clamps, tolerance, use)),
                     ("fixed_points", lambda: fixed_points_of(compiled, params, held, starts, seed)),
                     ("noise", lambda: noise_curve(compiled, params, levels, "states", repeats, seed, use))):
        try:
            parts[key] = job()
        except EngineError as exc:
            parts[key] = None
            problems[key] = str(exc)
    return Analysis(parts["horizon"], parts["fixed_points"], parts["noise"], problems)
