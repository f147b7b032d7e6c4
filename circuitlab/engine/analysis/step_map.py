"""The one-step map of a circuit with some units held at constants, and its analytic Jacobian.

With the held (clamped) units c at constant values x_c, the free units f
follow ``y_f(t) = F(y_f(t-1))`` with

    F(y)_j = f_j(b_j + sum_{i in c} w_ij x_i + sum_{i in f} w_ij y_i)      (docs/mathematics.md)

and its Jacobian ``J[j, i] = dF_j/dy_i = f_j'(net_j) * w_ij`` over free i, j.
"""

from dataclasses import dataclass

import numpy as np

from circuitlab.engine.activations import DERIVATIVE, FORWARD, groups_of
from circuitlab.engine.compile import Compiled, Parameters
from circuitlab.engine.errors import EngineError


@dataclass(eq=False)
class StepMap:
    """F over the free units, with the held units' contribution folded into a constant drive."""

    unit_names: list[str]
    free: np.ndarray          # indices of the free units, in unit order
    held: dict[int, float]    # unit index -> constant value
    W_free: np.ndarray        # (m, m): W[free][:, free], [i, j] = weight i -> j
    drive: np.ndarray         # (m,): b_j + sum over held i of w_ij x_i
    codes: np.ndarray         # (m,) activation codes of the free units

    def __post_init__(self):
        self._groups = groups_of(self.codes) if len(self.codes) else ()

    @property
    def size(self) -> int:
        return len(self.free)

    @property
    def free_names(self) -> list[str]:
        return [self.unit_names[i] for i in self.free]

    def net(self, y: np.ndarray) -> np.ndarray:
        """Net inputs of the free units for free states ``y`` (..., m)."""
        return self.drive + y @ self.W_free

    def __call__(self, y: np.ndarray) -> np.ndarray:
        """F(y): the free units' states one step after ``y``."""
        net = self.net(np.asarray(y, dtype=float))
        out = np.empty_like(net)
        for code, cols in self._groups:
            out[..., cols] = FORWARD[code](net[..., cols])
        return out

    def jacobian(self, y: np.ndarray) -> np.ndarray:
        """(m, m): ``J[j, i] = dF_j/dy_i = f_j'(net_j) w_ij`` (rows: the unit moved, columns: its source)."""
        net = self.net(np.asarray(y, dtype=float))
        fy = self(y)
        slope = np.empty_like(net)
        for code, cols in self._groups:
            slope[cols] = DERIVATIVE[code](net[cols], fy[cols])
        return slope[:, None] * self.W_free.T

    def full_state(self, y: np.ndarray) -> np.ndarray:
        """(n,): every unit's state, the held units at their constants and the free ones at ``y``."""
        out = np.zeros(len(self.unit_names))
        out[self.free] = y
        for i, v in self.held.items():
            out[i] = v
        return out


def step_map(compiled: Compiled, params: Parameters, held: dict[str, float]) -> StepMap:
    """The map F of the free units with the units named in ``held`` kept at those values."""
    n = compiled.n_units
    idx = {}
    for name, value in held.items():
        if not np.isfinite(value):
            raise EngineError(f"the value held for unit '{name}' must be a finite number")
        idx[compiled.unit_index(name)] = float(value)
    free = np.array([j for j in range(n) if j not in idx], dtype=int)
    W = np.where(compiled.connection_mask, params.W, 0.0)
    hold = np.array(sorted(idx), dtype=int)
    x = np.array([idx[i] for i in hold])
    drive = params.bias[free] + (x @ W[np.ix_(hold, free)] if hold.size else 0.0)
    return StepMap(list(compiled.unit_names), free, idx, W[np.ix_(free, free)],
                   np.asarray(drive, dtype=float), compiled.activation_codes[free])
