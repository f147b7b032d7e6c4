"""Real-time recurrent learning (Williams and Zipser, 1989): the gradient computed forwards.

An independent second way to the BPTT gradient, for cross-checks on small
circuits. Alongside the states it carries the sensitivities
``P_k(t) = dy_k(t)/dtheta`` of every state to every raw parameter (each
connection weight, each bias, each initial state)::

    dnet_k(t)/dtheta = sum_l w_lk P_l(t-1) + [direct term: y_i(t-1) for w_ik, 1 for b_k]
    P_k(t)           = f_k'(net_k(t)) dnet_k(t)/dtheta      (0 where k is clamped at t)
    P_k(0)           = 1 for theta = s_k where k is not clamped at step 0, else 0

and accumulates ``dL/dtheta += sum_k dL/dnet_k(t) dnet_k(t)/dtheta``. Memory
grows as S * n * (connections + 2n) and time as that times n per step, so
this is for circuits of a few dozen parameters.
"""

import numpy as np

from circuitlab.engine import losses
from circuitlab.engine.activations import activate, derivative
from circuitlab.engine.backward import check_loss
from circuitlab.engine.compile import Compiled, Parameters


def rtrl_gradient(compiled: Compiled, params: Parameters, loss: str = "squared") -> tuple[float, Parameters]:
    """(L, raw gradients) by RTRL; the same quantities as ``backward`` (no truncation)."""
    check_loss(compiled, loss)
    cm, cv = compiled.clamp_tm, compiled.clamp_values_tm
    m, d = compiled.target_tm, compiled.target_values_tm
    T1, S, n = cm.shape
    N = int(m.sum())
    scale = 1.0 / N if N else 0.0
    conns = compiled.connections
    C = len(conns)
    Q = C + 2 * n
    W = np.where(compiled.connection_mask, params.W, 0.0)
    step = np.arange(T1)[:, None] <= compiled.lengths[None, :]

    y = np.where(cm[0], cv[0], params.init)
    P = np.zeros((S, n, Q))
    units = np.arange(n)
    P[:, units, C + n + units] = (~cm[0]).astype(float)
    grad = np.zeros(Q)
    value = 0.0
    for t in range(1, T1):
        net = y @ W + params.bias
        DN = np.matmul(W.T, P)  # dnet_k = sum_l w_lk P_l, for every sequence at once
        if C:
            DN[:, conns[:, 1], np.arange(C)] += y[:, conns[:, 0]]
        DN[:, units, C + units] += 1.0
        y_new = np.empty_like(net)
        activate(compiled.groups, net, y_new)
        fp = derivative(compiled.groups, net, y_new)
        mt, dt = m[t], d[t]
        if loss == "squared":
            value += float(np.sum(losses.squared(y_new, dt), where=mt))
            gnet = np.where(mt, losses.squared_dy(y_new, dt) * fp, 0.0)
        else:
            value += float(np.sum(losses.cross_entropy_from_net(net, dt), where=mt))
            gnet = np.where(mt, losses.cross_entropy_dnet(y_new, dt), 0.0)
        grad += np.einsum("sk,skq->q", gnet, DN) * scale
        keep = (~cm[t] & step[t][:, None]).astype(float)
        P = (fp * keep)[:, :, None] * DN
        y = np.where(cm[t], cv[t], y_new)
    gW = np.zeros((n, n))
    if C:
        gW[conns[:, 0], conns[:, 1]] = grad[:C]
    return value * scale, Parameters(gW, grad[C:C + n], grad[C + n:])
