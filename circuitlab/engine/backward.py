"""Backpropagation through time (BPTT) and the per-step contributions of a connection.

Backwards from T (docs/mathematics.md, "Backpropagation through time"), with L the loss (the mean over
the batch's target cells of the per-cell loss, N target cells)::

    e_j(t)     = dL/dy_j(t)   = m_j(t) dloss/dy / N + sum_k w_jk delta_k(t+1)
    delta_j(t) = dL/dnet_j(t) = e_j(t) f_j'(net_j(t))
    dL/dw_ij = sum_t y_i(t-1) delta_j(t),  dL/db_j = sum_t delta_j(t),  dL/dy_j(0) = e_j(0)

Where unit j is clamped at t, y_j(t) is data: e_j(t) = delta_j(t) = 0 and
nothing flows further back through it. Under cross-entropy the injected term
of delta is computed as ``(y - d) / N`` from the net input (logistic units),
not as e * f', so saturated units give exact, finite gradients.

Truncation (an approximation): with ``truncation=k`` the error injected at a
target step tau is carried back through at most k delay-one connections: it
reaches delta at steps tau, tau-1, ..., tau-k and the initial state only if
tau <= k; each copy of a weight beyond that window gets nothing from it.
e(t) then holds only the error that reaches y(t) within those windows. For
k >= T the result is the exact gradient.
"""

from dataclasses import dataclass

import numpy as np

from circuitlab.engine import losses
from circuitlab.engine.activations import LOGISTIC, derivative
from circuitlab.engine.compile import Compiled, Parameters
from circuitlab.engine.errors import EngineError
from circuitlab.engine.forward import Activity


@dataclass(eq=False)
class Backward:
    """The backward stacks: ``e`` = dL/dy and ``delta`` = dL/dnet, each (S, T+1, n).

    Time-major buffers ``e_tm``/``delta_tm`` are (T+1, S, n). ``loss`` is the
    value of L and ``target_cells`` its N.
    """

    e_tm: np.ndarray
    delta_tm: np.ndarray
    loss: float
    target_cells: int

    @property
    def e(self) -> np.ndarray:
        return self.e_tm.transpose(1, 0, 2)

    @property
    def delta(self) -> np.ndarray:
        return self.delta_tm.transpose(1, 0, 2)


def check_loss(compiled: Compiled, loss: str) -> None:
    if loss not in losses.LOSSES:
        raise EngineError(f"unknown loss '{loss}' (choose {' or '.join(losses.LOSSES)})")
    if loss == "cross_entropy":
        targeted = compiled.target_tm.any(axis=(0, 1))
        bad = [compiled.unit_names[j] for j in np.flatnonzero(targeted & (compiled.activation_codes != LOGISTIC))]
        if bad:
            raise EngineError("cross-entropy needs logistic units, but these carry targets: "
                              + ", ".join(bad))
        d = compiled.target_values_tm[compiled.target_tm]
        if d.size and (d.min() < 0.0 or d.max() > 1.0):
            raise EngineError("cross-entropy targets must lie in [0, 1]")


def _cell_losses(compiled: Compiled, act: Activity, loss: str) -> np.ndarray:
    """The per-cell loss at every cell (T+1, S, n); only target cells count."""
    if loss == "squared":
        return losses.squared(act.y_tm, compiled.target_values_tm)
    return losses.cross_entropy_from_net(act.net_tm, compiled.target_values_tm)


def loss_value(compiled: Compiled, act: Activity, loss: str = "squared") -> float:
    """L: the mean over target cells of the per-cell loss (0 when there are no target cells)."""
    check_loss(compiled, loss)
    m = compiled.target_tm
    N = int(m.sum())
    return float(np.sum(_cell_losses(compiled, act, loss), where=m)) / N if N else 0.0


def loss_terms(compiled: Compiled, act: Activity, loss: str):
    """(L, dL/dy injected, dL/dnet injected or None), the arrays (T+1, S, n), zero off target cells.

    For squared error the dL/dnet term is None: it is dL/dy * f', formed by
    the caller that has f'.
    """
    value = loss_value(compiled, act, loss)
    m = compiled.target_tm
    d = compiled.target_values_tm
    y = act.y_tm
    N = int(m.sum())
    scale = 1.0 / N if N else 0.0
    if loss == "squared":
        return value, np.where(m, losses.squared_dy(y, d), 0.0) * scale, None
    gy = np.where(m, losses.cross_entropy_dy(act.net_tm, d), 0.0) * scale
    gnet = np.where(m, losses.cross_entropy_dnet(y, d), 0.0) * scale
    return value, gy, gnet


def backward(compiled: Compiled, params: Parameters, act: Activity, loss: str = "squared",
             truncation: int | None = None) -> tuple[float, Parameters, Backward]:
    """BPTT: (L, dL/d(parameters), Backward stacks) for the activity ``act`` of ``params``.

    L is the mean over the batch's target cells of the per-cell loss.
    ``grads.W`` is the raw gradient of each connection (before tie groups are
    summed; ``Compiled.pack_gradient`` sums them), 0 where there is none.
    ``grads.init[j]`` is e_j(0) summed over the sequences where j is not
    clamped at step 0 (the gradient of its learned or fixed initial state).
    ``truncation=k`` gives the truncated approximation of the module docstring.
    """
    if truncation is not None and truncation < 1:
        raise EngineError("truncation must be at least 1 step")
    value, gy, gnet = loss_terms(compiled, act, loss)
    y, net = act.y_tm, act.net_tm
    T1, S, n = y.shape
    W = np.where(compiled.connection_mask, params.W, 0.0)
    WT = np.ascontiguousarray(W.T)
    fprime = derivative(compiled.groups, net, y)
    if gnet is None:
        gnet = gy * fprime
    step = np.arange(T1)[:, None] <= compiled.lengths[None, :]
    keep = (~compiled.clamp_tm & step[:, :, None]).astype(float)
    e = np.zeros((T1, S, n))
    delta = np.zeros((T1, S, n))
    if truncation is None or truncation >= T1 - 1:
        r = np.zeros((S, n))
        for t in range(T1 - 1, 0, -1):
            dt = delta[t]
            np.multiply(fprime[t], r, out=dt)
            dt += gnet[t]
            dt *= keep[t]
            et = e[t]
            np.add(gy[t], r, out=et)
            et *= keep[t]
            np.matmul(dt, WT, out=r)
        e[0] = r * keep[0]
    else:
        _truncated(truncation, gy, gnet, fprime, keep, WT, e, delta)
    grads = _gradients(compiled, y, e, delta)
    return value, grads, Backward(e, delta, value, compiled.target_cells)


def _truncated(k: int, gy, gnet, fprime, keep, WT, e, delta) -> None:
    """BPTT where each injected error travels back at most k connections (see module docstring).

    ``D[a]`` holds the part of delta(t) due to error injected at step t + a,
    for ages a = 0..k; ``R[a]`` what reaches y(t) from channel a-1 at t+1.
    """
    T1, S, n = e.shape
    D = np.zeros((k + 1, S, n))
    R = np.zeros((k + 1, S, n))
    for t in range(T1 - 1, 0, -1):
        D[0] = gnet[t] * keep[t]
        D[1:] = fprime[t] * R[1:] * keep[t]
        delta[t] = D.sum(axis=0)
        e[t] = (gy[t] + R[1:].sum(axis=0)) * keep[t]
        np.matmul(D[:k], WT, out=R[1:])
    e[0] = R[1:].sum(axis=0) * keep[0]


_BLOCK = 8


def _gradients(compiled: Compiled, y, e, delta) -> Parameters:
    T1, S, n = y.shape
    gW = np.zeros((n, n))
    # sum_t y(t-1)^T delta(t) in blocks of a few steps: each product stays small enough for
    # BLAS to run it on one thread, which on a busy machine is far faster than one big product.
    for t in range(1, T1, _BLOCK):
        stop = min(t + _BLOCK, T1)
        gW += y[t - 1:stop - 1].reshape(-1, n).T @ delta[t:stop].reshape(-1, n)
    gW *= compiled.connection_mask
    return Parameters(gW, delta[1:].sum(axis=(0, 1)), e[0].sum(axis=0))


def contributions(compiled: Compiled, act: Activity, back: Backward, source: str, target: str,
                  per_sequence: bool = False) -> np.ndarray:
    """The per-step contributions ``y_a(t-1) * delta_b(t)`` of connection ``source -> target``.

    Returns (T+1,) summed over the batch's sequences, or (S, T+1) with
    ``per_sequence=True``; entry 0 is 0. Their sum is ``grads.W[a, b]``, the
    connection's own (raw, not tie-summed) gradient.
    """
    a, b = compiled.unit_index(source), compiled.unit_index(target)
    if not compiled.connection_mask[a, b]:
        raise EngineError(f"there is no connection {source} -> {target}")
    T1, S, _ = act.y_tm.shape
    out = np.zeros((S, T1))
    out[:, 1:] = (act.y_tm[:-1, :, a] * back.delta_tm[1:, :, b]).T
    return out if per_sequence else out.sum(axis=0)
