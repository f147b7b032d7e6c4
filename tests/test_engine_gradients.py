"""BPTT gradients against autograd, finite differences and the equations of docs/mathematics.md.

The reference is an independent, plain implementation of the
mathematics of docs/mathematics.md in autograd.numpy (a loop over sequences, steps and units,
reading the model directly, not the compiled arrays); its gradients come from
autograd's reverse mode (source: the autograd package, HIPS).
"""

import autograd
import autograd.numpy as anp
import numpy as np
import pytest

from circuitlab.engine import backward, compile_circuit, contributions, forward
from circuitlab.model import clamp_mask, target_mask
from engine_circuits import random_circuit

# Circuits whose every parameter is frozen give autograd a function of nothing (it says so).
pytestmark = pytest.mark.filterwarnings("ignore:Output seems independent of input")


def _f(act, net):
    if act == "logistic":
        return 1.0 / (1.0 + anp.exp(-net))
    if act == "tanh":
        return anp.tanh(net)
    if act == "linear":
        return net
    return anp.maximum(net, 0.0)


def reference_loss(circuit, weight, bias, init, loss, detach_before=None):
    """The loss of docs/mathematics.md, mean over target cells; weight/bias/init map names to (traced) values.

    ``detach_before`` = (tau, k): only the cells at step tau count, and the
    states at step tau-k-1 are treated as constants (truncated BPTT's reference).
    """
    units = circuit.units
    total, cells = 0.0, 0
    for seq in circuit.sequences:
        cm = {u.name: clamp_mask(u, circuit.schedule_for(u.name), seq) for u in units}
        tm = {u.name: target_mask(u, circuit.schedule_for(u.name), seq) for u in units}
        y = {u.name: (seq.clamp_value(u.name, 0) if cm[u.name][0] else init[u.name]) for u in units}
        for t in range(1, seq.length + 1):
            if detach_before and t - 1 == detach_before[0] - detach_before[1] - 1:
                y = {k: getattr(v, "_value", v) for k, v in y.items()}
            new = {}
            for u in units:
                net = bias[u.name]
                for c in circuit.connections:
                    if c.target == u.name:
                        net = net + weight[c.key] * y[c.source]
                new[u.name] = seq.clamp_value(u.name, t) if cm[u.name][t] else _f(u.activation, net)
                if tm[u.name][t] and (detach_before is None or t == detach_before[0]):
                    d = seq.target_value(u.name, t)
                    yy = new[u.name]
                    if loss == "squared":
                        total = total + 0.5 * (yy - d) ** 2
                    else:
                        total = total - (d * anp.log(yy) + (1 - d) * anp.log(1 - yy))
            y = new
        for u in units:
            cells += sum(tm[u.name])
    return total / cells if cells else total


def _relerr(a, b):
    a, b = np.asarray(a, float), np.asarray(b, float)
    return float(np.max(np.abs(a - b) / np.maximum(np.maximum(np.abs(a), np.abs(b)), 1e-12), initial=0))


@pytest.mark.parametrize("seed", list(range(50)) + [("large", k) for k in range(10)])
def test_bptt_equals_autograd_on_random_circuits(seed):
    # Reference: autograd reverse mode on the plain loop of docs/mathematics.md (source: autograd).
    # 50 small circuits, then 10 larger and longer ones.
    if isinstance(seed, tuple):
        circuit = random_circuit(1000 + seed[1], max_units=9, max_length=15, max_sequences=4)
    else:
        circuit = random_circuit(seed)
    loss = circuit.training.loss
    comp = compile_circuit(circuit)
    p = comp.parameters_from_circuit()
    value, grads, _ = backward(comp, p, forward(comp, p), loss=loss)

    keys = [c.key for c in circuit.connections]
    names = circuit.unit_names()

    def raw(theta):
        nw, nu = len(keys), len(names)
        return reference_loss(circuit, dict(zip(keys, theta[:nw])), dict(zip(names, theta[nw:nw + nu])),
                              dict(zip(names, theta[nw + nu:])), loss)

    theta = np.concatenate([[c.weight for c in circuit.connections], p.bias, p.init])
    assert abs(raw(theta) - value) <= 1e-12 * max(1.0, abs(value))
    g = autograd.grad(raw)(theta)
    mine = np.concatenate([[grads.W[names.index(s), names.index(t)] for s, t in keys],
                           grads.bias, grads.init])
    assert _relerr(mine, g) < 1e-9

    # Trainable parameters only: tie groups share one value, frozen values are constants.
    def shared(th):
        weight, k = {}, 0
        slot = {}
        for c in circuit.connections:
            if not c.trains:
                weight[c.key] = c.weight
                continue
            tag = c.tie if c.tie is not None else c.key
            if tag not in slot:
                slot[tag] = k
                k += 1
            weight[c.key] = th[slot[tag]]
        bias = {u.name: u.bias for u in circuit.units}
        init = {u.name: u.initial_state() for u in circuit.units}
        for u in circuit.units:
            if u.bias_trains:
                bias[u.name] = th[k]
                k += 1
        for u in circuit.units:
            if u.initial_mode == "learned":
                init[u.name] = th[k]
                k += 1
        return reference_loss(circuit, weight, bias, init, loss)

    th = comp.pack(p)
    assert len(comp.param_labels) == th.size
    assert _relerr(comp.pack_gradient(grads), autograd.grad(shared)(th)) < 1e-9


def test_contributions_sum_to_the_connection_gradient():
    # docs/mathematics.md: dE/dw_ij = sum over t of y_i(t-1) delta_j(t). Source: a weight shared by the copies
    # of an unrolled net gets the sum of their gradients (Rumelhart, Hinton and Williams, 1986;
    # Werbos, 1990; cited from memory).
    circuit = random_circuit(3)
    comp = compile_circuit(circuit)
    p = comp.parameters_from_circuit()
    act = forward(comp, p)
    _, grads, back = backward(comp, p, act, loss=circuit.training.loss)
    for c in circuit.connections:
        i, j = comp.unit_index(c.source), comp.unit_index(c.target)
        contrib = contributions(comp, act, back, c.source, c.target)
        assert contrib.shape == (comp.steps + 1,) and contrib[0] == 0.0
        assert contrib.sum() == pytest.approx(grads.W[i, j], rel=1e-12, abs=1e-15)
        seq = contributions(comp, act, back, c.source, c.target, per_sequence=True)
        np.testing.assert_allclose(seq.sum(axis=0), contrib, rtol=1e-12, atol=1e-15)


def test_random_circuits_cover_every_feature():
    # The 50 circuits above must between them exercise everything the issue lists.
    seen = set()
    for seed in range(50):
        c = random_circuit(seed)
        seen |= {u.activation for u in c.units} | {c.training.loss}
        seen |= {"tie"} if c.tie_groups() else set()
        seen |= {"frozen weight"} if any(not k.trains for k in c.connections) else set()
        seen |= {"frozen bias"} if any(not u.bias_trains for u in c.units) else set()
        seen |= {f"initial {u.initial_mode}" for u in c.units}
        seen |= {f"clamp {s.clamp}" for s in c.schedule.values()} | {f"target {s.target}" for s in c.schedule.values()}
        seen |= {"sign"} if any(u.sign for u in c.units) else set()
        seen |= {"uneven lengths"} if len({s.length for s in c.sequences}) > 1 else set()
    wanted = {"logistic", "tanh", "linear", "relu", "squared", "cross_entropy", "tie", "frozen weight",
              "frozen bias", "initial fixed", "initial learned", "initial clamped", "clamp every",
              "clamp steps", "clamp given", "clamp initial", "target final", "target last",
              "target every", "target steps", "target given", "sign", "uneven lengths"}
    assert wanted <= seen, wanted - seen
