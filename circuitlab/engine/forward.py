"""The forward pass: run every sequence of a compiled batch through time.

Batched over sequences and vectorised over units: one step is one matrix
product ``y(t-1) @ W`` plus the activation of each unit group, so the only
Python loop is over time.
"""

from dataclasses import dataclass

import numpy as np

from circuitlab.engine.activations import activate
from circuitlab.engine.compile import Compiled, Parameters


@dataclass(eq=False)
class Activity:
    """The activity stack of a forward pass.

    ``y`` (S, T+1, n): the state of every unit at every step (data where
    clamped); ``net`` (S, T+1, n): the net inputs (``net[:, 0]`` is 0).
    Steps past a sequence's length (see ``Compiled.step_mask``) are computed
    but belong to no sequence. Both are views of time-major buffers
    ``y_tm``/``net_tm`` of shape (T+1, S, n).
    """

    y_tm: np.ndarray
    net_tm: np.ndarray

    @property
    def y(self) -> np.ndarray:
        return self.y_tm.transpose(1, 0, 2)

    @property
    def net(self) -> np.ndarray:
        return self.net_tm.transpose(1, 0, 2)


def forward(compiled: Compiled, params: Parameters) -> Activity:
    """Run the circuit: ``net_j(t) = b_j + sum_i w_ij y_i(t-1)``, ``y_j(t) = f_j(net_j(t))``.

    A clamped cell takes its data value. The state at step 0 is the data
    where the unit is clamped at 0, else ``params.init`` (the learned or the
    fixed initial state).
    """
    cm, cv = compiled.clamp_tm, compiled.clamp_values_tm
    T1, S, n = cm.shape
    W = np.where(compiled.connection_mask, params.W, 0.0)
    b = params.bias
    groups = compiled.groups
    y = np.empty((T1, S, n))
    net = np.zeros((T1, S, n))
    y[0] = np.where(cm[0], cv[0], params.init)
    for t in range(1, T1):
        nt = net[t]
        np.matmul(y[t - 1], W, out=nt)
        nt += b
        yt = y[t]
        activate(groups, nt, yt)
        np.copyto(yt, cv[t], where=cm[t])
    return Activity(y, net)
