"""Fixed points of the one-step map, their Jacobians, eigenvalues and stability.

Each fixed point solves ``y = F(y)`` over the free units (``step_map``) and is
found by ``scipy.optimize.root`` (MINPACK's hybrid method) with the analytic
Jacobian ``J - I``, from many seeded starting points, then polished by Newton
steps and kept only if ``max |F(y) - y| <= RESIDUAL``. In discrete time a
fixed point is stable when every eigenvalue of J lies inside the unit
circle; a disturbance along the slowest direction shrinks by ``|lambda_max|``
per step, i.e. with time constant ``-1 / ln |lambda_max|`` steps.
"""

from dataclasses import dataclass

import numpy as np
from scipy.optimize import root

from circuitlab.engine.activations import LINEAR, LOGISTIC, RELU, TANH
from circuitlab.engine.analysis.common import MAX_FREE_UNITS
from circuitlab.engine.analysis.step_map import StepMap
from circuitlab.engine.errors import EngineError

RESIDUAL = 1e-10      # every reported fixed point satisfies max |F(y) - y| <= this
SAME_POINT = 1e-6     # two solutions closer than this (max norm, relative) are one fixed point


@dataclass
class FixedPoint:
    """One fixed point: the free units' states, J there, its eigenvalues and what they imply."""

    y: np.ndarray              # (m,) the free units' states
    state: np.ndarray          # (n,) every unit's state (held units at their constants)
    jacobian: np.ndarray       # (m, m)
    eigenvalues: np.ndarray    # (m,) complex, largest magnitude first
    residual: float            # max |F(y) - y|
    hits: int                  # how many starting points ended here

    @property
    def largest_magnitude(self) -> float:
        return float(np.abs(self.eigenvalues).max()) if self.eigenvalues.size else 0.0

    @property
    def stable(self) -> bool:
        """Discrete time: stable when every |lambda| < 1."""
        return self.largest_magnitude < 1.0

    @property
    def time_constant(self) -> float:
        """``-1 / ln |lambda_max|`` in steps (0 if every eigenvalue is 0, inf if |lambda_max| >= 1)."""
        r = self.largest_magnitude
        if r == 0.0:
            return 0.0
        return float(-1.0 / np.log(r)) if r < 1.0 else float("inf")

    def as_record(self, names: list[str]) -> dict:
        """A plain record (JSON-ready) of this fixed point."""
        tc = self.time_constant
        return {"state": {nm: float(v) for nm, v in zip(names, self.state)},
                "eigenvalues": [[float(e.real), float(e.imag)] for e in self.eigenvalues],
                "largest_magnitude": self.largest_magnitude, "stable": self.stable,
                "time_constant": tc if np.isfinite(tc) else None,
                "residual": self.residual, "starts_ending_here": self.hits}


@dataclass
class FixedPointReport:
    """All fixed points found for one setting of the held units, plus facts of the free weights."""

    map: StepMap
    points: list[FixedPoint]
    starts: int
    spectral_radius: float          # of the free units' weight matrix
    largest_singular_value: float   # of the same matrix

    def as_record(self) -> dict:
        names = self.map.unit_names
        return {"held": {names[i]: v for i, v in self.map.held.items()},
                "free_units": self.map.free_names, "starts": self.starts,
                "spectral_radius": self.spectral_radius,
                "largest_singular_value": self.largest_singular_value,
                "fixed_points": [p.as_record(names) for p in self.points]}


def weight_facts(W: np.ndarray) -> tuple[float, float]:
    """(spectral radius, largest singular value) of a square matrix (0, 0 when empty)."""
    if W.size == 0:
        return 0.0, 0.0
    return float(np.abs(np.linalg.eigvals(W)).max()), float(np.linalg.svd(W, compute_uv=False)[0])


def starting_points(F: StepMap, count: int, seed: int, near: np.ndarray | None = None) -> np.ndarray:
    """(count, m) seeded starts: uniform over each bounded unit's range, wide around the others.

    ``near`` (k, m), for example the states the sequences end in, are used first.
    """
    rng = np.random.default_rng(seed)
    m = F.size
    lo = np.full(m, -2.0)
    hi = np.full(m, 2.0)
    lo[F.codes == LOGISTIC], hi[F.codes == LOGISTIC] = 0.0, 1.0
    lo[F.codes == TANH], hi[F.codes == TANH] = -1.0, 1.0
    lo[F.codes == RELU] = 0.0
    if near is not None and len(near):  # unbounded units: also cover the range the data visits
        span = near.max(axis=0) - near.min(axis=0) + 1.0
        wide = np.isin(F.codes, (LINEAR, RELU))
        lo[wide] = np.minimum(lo, near.min(axis=0) - span)[wide]
        hi[wide] = np.maximum(hi, near.max(axis=0) + span)[wide]
        lo[F.codes == RELU] = 0.0
    given = np.zeros((0, m)) if near is None else np.asarray(near, dtype=float)[:count]
    drawn = rng.uniform(lo, hi, size=(max(0, count - len(given)), m))
    return np.vstack([given, drawn])


def find_fixed_points(F: StepMap, starts: int = 64, seed: int = 0,
                      near: np.ndarray | None = None) -> FixedPointReport:
    """Solve ``y = F(y)`` from ``starts`` seeded starting points; deduplicated, stablest first."""
    m = F.size
    if m > MAX_FREE_UNITS:
        raise EngineError(f"fixed points are searched for at most {MAX_FREE_UNITS} free units "
                          f"(this circuit has {m})")
    if starts < 1:
        raise EngineError("the number of starting points must be at least 1")
    rho, sigma = weight_facts(F.W_free)
    if m == 0:
        point = FixedPoint(np.zeros(0), F.full_state(np.zeros(0)), np.zeros((0, 0)),
                           np.zeros(0, complex), 0.0, starts)
        return FixedPointReport(F, [point], starts, rho, sigma)
    eye = np.eye(m)

    def g(y):
        return F(y) - y

    def dg(y):
        return F.jacobian(y) - eye

    found: list[FixedPoint] = []
    for y0 in starting_points(F, starts, seed, near):
        with np.errstate(all="ignore"):
            sol = root(g, y0, jac=dg, method="hybr", options={"xtol": 1e-13})
            y = _polish(g, dg, sol.x)
        if y is None:
            continue
        residual = float(np.abs(g(y)).max())
        for p in found:
            if np.abs(p.y - y).max() <= SAME_POINT * (1.0 + np.abs(y).max()):
                p.hits += 1
                break
        else:
            J = F.jacobian(y)
            ev = np.linalg.eigvals(J)
            ev = ev[np.argsort(-np.abs(ev), kind="stable")]
            found.append(FixedPoint(y, F.full_state(y), J, ev, residual, 1))
    found.sort(key=lambda p: (not p.stable, p.largest_magnitude))
    return FixedPointReport(F, found, starts, rho, sigma)


def _polish(g, dg, y: np.ndarray, rounds: int = 6) -> np.ndarray | None:
    """A few Newton steps from the solver's answer; the point if it reaches RESIDUAL, else None."""
    if not np.isfinite(y).all():
        return None
    best, r_best = y, float(np.abs(g(y)).max())
    for _ in range(rounds):
        if r_best <= RESIDUAL * 1e-3:
            break
        try:
            step = np.linalg.solve(dg(best), g(best))
        except np.linalg.LinAlgError:
            break
        trial = best - step
        r = float(np.abs(g(trial)).max()) if np.isfinite(trial).all() else np.inf
        if not r < r_best:
            break
        best, r_best = trial, r
    return best if r_best <= RESIDUAL else None
