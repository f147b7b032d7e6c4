"""The free units' trajectories projected onto their principal components (NumPy SVD).

All steps of all chosen sequences are stacked into one (steps, free units)
matrix and centred on its mean; the right singular vectors of that matrix
are the principal directions and the shares ``s_k^2 / sum s^2`` the
variance each explains.
"""

from dataclasses import dataclass

import numpy as np

from circuitlab.engine.analysis.common import check_budget, chosen, input_units
from circuitlab.engine.compile import Compiled, Parameters
from circuitlab.engine.errors import EngineError
from circuitlab.engine.forward import forward


@dataclass
class StateSpace:
    """Per sequence, its trajectory in the first ``components`` principal coordinates."""

    unit_names: list[str]          # the free units that span the space
    sequence_names: list[str]
    mean: np.ndarray               # (m,)
    directions: np.ndarray         # (k, m) unit vectors
    explained: np.ndarray          # (k,) share of the variance each direction explains
    all_explained: np.ndarray      # (min(N, m),) every component's share; sums to 1
    trajectories: list[np.ndarray]  # per sequence (L+1, k)
    fixed_points: np.ndarray       # (p, k) projected fixed points (empty if none given)

    def as_record(self) -> dict:
        return {"units": self.unit_names, "explained": [float(v) for v in self.explained],
                "directions": self.directions.tolist()}


def principal_components(data: np.ndarray, components: int = 3):
    """(mean, directions (k, m), shares of the k, shares of all) of the rows of ``data``."""
    mean = data.mean(axis=0)
    centred = data - mean
    _, s, vt = np.linalg.svd(centred, full_matrices=False)
    power = s ** 2
    total = power.sum()
    shares = power / total if total > 0 else np.zeros_like(power)
    k = min(components, vt.shape[0])
    return mean, vt[:k], shares[:k], shares


def state_space(compiled: Compiled, params: Parameters, components: int = 3, use: str = "all",
                fixed_points: np.ndarray | None = None) -> StateSpace:
    """PCA of the free units' states over the sequences of ``use``; ``fixed_points`` (p, n) are projected too."""
    if components < 1:
        raise EngineError("at least one component is needed")
    comp = chosen(compiled, use)
    free = np.flatnonzero(~input_units(comp))
    if free.size == 0:
        raise EngineError("every unit is clamped to data: there is no state space to look at")
    check_budget(2 * int((comp.lengths + 1).sum()) * free.size, "the state-space analysis")
    y = forward(comp, params).y
    trajectories = [y[s, : comp.lengths[s] + 1][:, free] for s in range(comp.n_sequences)]
    data = np.vstack(trajectories)
    mean, directions, shares, all_shares = principal_components(data, components)
    proj = [(tr - mean) @ directions.T for tr in trajectories]
    fp = np.zeros((0, directions.shape[0]))
    if fixed_points is not None and len(fixed_points):
        fp = (np.asarray(fixed_points)[:, free] - mean) @ directions.T
    return StateSpace([comp.unit_names[i] for i in free], list(comp.sequence_names), mean, directions,
                      shares, all_shares, proj, fp)
