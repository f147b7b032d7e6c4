"""Engine facts checked against outside sources: RTRL, finite differences, networkx,
the Pascanu-Mikolov-Bengio bound, truncated BPTT, the logistic derivative.

Papers are cited from memory (authors and year); every number compared is computed
here by the reference (autograd, networkx, the formula), none is copied from a paper.
"""

import autograd
import autograd.numpy as anp
import networkx as nx
import numpy as np
import pytest

from circuitlab.engine import EngineError, backward, compile_circuit, forward, loss_value
from circuitlab.engine.activations import logistic, logistic_derivative
from circuitlab.engine.gradcheck import gradient_check, relative_error
from circuitlab.engine.rtrl import rtrl_gradient
from circuitlab.engine.unrolled import edge_arrays, unrolled_graph
from circuitlab.model import Circuit, Sequence, Unit, UnitSchedule
from engine_circuits import random_circuit
from test_engine_gradients import reference_loss


def _flat(p):
    return np.concatenate([p.W.ravel(), p.bias, p.init])


def test_bptt_equals_rtrl_on_random_circuits():
    # Williams and Zipser (1989): RTRL computes the same gradient forwards in time.
    worst = 0.0
    for seed in range(50):
        c = random_circuit(seed)
        comp = compile_circuit(c)
        p = comp.parameters_from_circuit()
        value, grads, _ = backward(comp, p, forward(comp, p), loss=c.training.loss)
        value_rtrl, grads_rtrl = rtrl_gradient(comp, p, loss=c.training.loss)
        assert value_rtrl == pytest.approx(value, rel=1e-12)
        worst = max(worst, relative_error(_flat(grads), _flat(grads_rtrl), 1e-12).max())
    assert worst < 1e-9


def test_finite_differences_agree_on_random_circuits():
    # Central differences (common practice; five-point stencil, Richardson extrapolation).
    checked = 0
    for seed in range(50):
        c = random_circuit(seed)
        comp = compile_circuit(c)
        report = gradient_check(comp, comp.parameters_from_circuit(), c.training.loss)
        if report.kink:
            continue
        checked += 1
        assert report.max_error < 1e-6, (seed, report.as_dict())
        assert all(g.rtrl < 1e-9 for g in report.groups)
    assert checked >= 45


def test_gradient_check_catches_a_wrong_gradient(monkeypatch):
    # A check must be able to fail (common practice): a 0.1 % error in the bias gradient shows
    # against central finite differences.
    import circuitlab.engine.gradcheck as gc
    c = random_circuit(1, loss="squared")
    comp = compile_circuit(c)
    real = gc.backward

    def off(*args, **kwargs):
        value, grads, back = real(*args, **kwargs)
        grads.bias *= 1.001
        return value, grads, back

    monkeypatch.setattr(gc, "backward", off)
    report = gradient_check(comp, comp.parameters_from_circuit(), "squared")
    assert not report.passed
    assert {g.group: g.finite_differences for g in report.groups}["biases"] > 1e-4


def test_unrolled_graph_is_the_tensor_product_with_a_path():
    # networkx.tensor_product(G, P): edge (u,t)->(v,t+1) iff u->v in G and t->t+1 in P (source: networkx).
    c = random_circuit(11)
    T = 6
    G = nx.DiGraph()
    G.add_nodes_from(c.unit_names())
    G.add_edges_from(k.key for k in c.connections)
    P = nx.path_graph(T + 1, create_using=nx.DiGraph)
    reference = nx.tensor_product(G, P)
    mine = unrolled_graph(c, steps=T)
    assert set(mine.nodes) == set(reference.nodes)
    assert set(mine.edges) == set(reference.edges)
    comp = compile_circuit(c)
    src, dst = edge_arrays(comp, T)
    n = comp.n_units
    as_pairs = {((comp.unit_names[s % n], s // n), (comp.unit_names[d % n], d // n)) for s, d in zip(src, dst)}
    assert as_pairs == set(reference.edges)
    one = unrolled_graph(comp, sequence=0)
    assert max(t for _, t in one.nodes) == c.sequences[0].length
    assert all("clamped" in a and "targeted" in a for _, a in one.nodes(data=True))


def test_logistic_derivative_is_y_times_one_minus_y():
    # Common practice: d/dx 1/(1+exp(-x)) = y (1 - y); checked against autograd too.
    x = np.linspace(-30, 30, 121)
    y = logistic(x)
    ref = np.array([autograd.grad(lambda v: 1.0 / (1.0 + anp.exp(-v)))(v) for v in x])
    np.testing.assert_allclose(logistic_derivative(x, y), y * (1 - y), rtol=1e-15, atol=2e-16)
    np.testing.assert_allclose(logistic_derivative(x, y), ref, rtol=1e-12, atol=1e-300)
    assert 0.0 <= logistic(np.array([-800.0]))[0] < 1e-300 and logistic(np.array([800.0]))[0] == 1.0


def _logistic_circuit(n: int, T: int, seed: int, sigma: float) -> Circuit:
    """n logistic units, dense W rescaled to largest singular value ``sigma``, target at T only."""
    rng = np.random.default_rng(seed)
    W = rng.normal(size=(n, n))
    W *= sigma / np.linalg.svd(W, compute_uv=False)[0]
    c = Circuit()
    for k in range(n):
        c.add_unit(Unit(name=f"u{k}", bias=float(rng.normal())))
    for i in range(n):
        for j in range(n):
            c.connect(f"u{i}", f"u{j}", float(W[i, j]))
    for k in range(n):
        c.set_schedule(f"u{k}", UnitSchedule(target="final"))
    for s in range(3):
        c.add_sequence(Sequence(name=f"s{s}", length=T,
                                targets={f"u{k}": [None] * T + [float(rng.random())] for k in range(n)}))
    return c


@pytest.mark.parametrize("sigma", [1.0, 2.5, 3.9])
def test_backward_norms_shrink_geometrically_below_the_bound(sigma):
    # Pascanu, Mikolov and Bengio (2013): with |f'| <= gamma = 1/4 (logistic) and largest singular
    # value of W below 1/gamma, |e(t-1)| <= (sigma_max * gamma) |e(t)|: a geometric decay.
    c = _logistic_circuit(6, 30, seed=int(sigma * 10), sigma=sigma)
    comp = compile_circuit(c)
    p = comp.parameters_from_circuit()
    _, _, back = backward(comp, p, forward(comp, p))
    rate = np.linalg.svd(p.W, compute_uv=False)[0] / 4.0
    assert rate < 1.0
    norms = np.linalg.norm(back.e, axis=2)  # (S, T+1): per sequence over units
    ratios = norms[:, :-1] / norms[:, 1:]
    assert np.all(ratios <= rate * (1 + 1e-12))
    assert np.all(norms[:, 0] <= rate ** 30 * norms[:, -1] * (1 + 1e-9))
    # The bound is not vacuous: the measured decay is geometric and strictly below 1.
    assert np.all(norms[:, 0] < norms[:, -1])


@pytest.mark.parametrize("k, seed", [(1, 21), (2, 21), (3, 22), (2, 23)])
def test_truncated_bptt_matches_its_definition(k, seed):
    # Reference: autograd on the plain loop, where each target step tau only sees the last k
    # steps (states at tau-k-1 held constant) -- the truncation documented in engine/backward.py.
    c = random_circuit(seed, max_length=9, loss="squared")
    comp = compile_circuit(c)
    p = comp.parameters_from_circuit()
    _, grads, _ = backward(comp, p, forward(comp, p), loss="squared", truncation=k)
    names = c.unit_names()
    keys = [x.key for x in c.connections]
    theta = np.concatenate([[x.weight for x in c.connections], p.bias, p.init])

    def part(th, tau):
        nw, nu = len(keys), len(names)
        return reference_loss(c, dict(zip(keys, th[:nw])), dict(zip(names, th[nw:nw + nu])),
                              dict(zip(names, th[nw + nu:])), "squared", detach_before=(tau, k))

    ref = sum(autograd.grad(part)(theta, tau) for tau in range(1, comp.steps + 1)
              if comp.target_tm[tau].any())
    mine = np.concatenate([[grads.W[names.index(s), names.index(t)] for s, t in keys], grads.bias, grads.init])
    assert comp.steps > k + 1
    np.testing.assert_allclose(mine, ref, rtol=1e-9, atol=1e-13)
    # And with k >= T the truncated gradient is the exact one.
    _, exact, _ = backward(comp, p, forward(comp, p), loss="squared")
    _, long, _ = backward(comp, p, forward(comp, p), loss="squared", truncation=comp.steps)
    np.testing.assert_array_equal(exact.W, long.W)
    assert not np.allclose(exact.W, grads.W)


def test_cross_entropy_of_saturated_logistic_units_is_finite():
    # Computed from the net input: d*softplus(-net) + (1-d)*softplus(net) (common practice).
    c = Circuit()
    c.add_unit(Unit(name="a", bias=60.0))
    c.connect("a", "a", 0.0)
    c.set_schedule("a", UnitSchedule(target="final"))
    c.add_sequence(Sequence(name="s", length=1, targets={"a": [None, 0.0]}))
    c.training.loss = "cross_entropy"
    comp = compile_circuit(c)
    p = comp.parameters_from_circuit()
    act = forward(comp, p)
    assert act.y[0, 1, 0] == 1.0  # saturated in float64
    value, grads, back = backward(comp, p, act, loss="cross_entropy")
    assert value == pytest.approx(60.0, rel=1e-12)  # -ln(1 - y) = softplus(60) = 60 + ln(1+e^-60)
    assert grads.bias[0] == pytest.approx(1.0, rel=1e-12)  # y - d
    assert np.isfinite(back.e).all()


def test_loss_is_the_mean_over_target_cells():
    # Squared error 0.5 (y - d)^2 averaged over the target cells (common practice; the 0.5
    # makes dE/dy = y - d), written out by hand with numpy.
    c = random_circuit(5, loss="squared")
    comp = compile_circuit(c)
    p = comp.parameters_from_circuit()
    act = forward(comp, p)
    m = comp.target_mask
    manual = (0.5 * (act.y - comp.target_values) ** 2)[m].sum() / m.sum()
    assert loss_value(comp, act, "squared") == pytest.approx(manual, rel=1e-13)


def test_uneven_lengths_are_masked_not_dropped():
    # Padding plus a step mask (common practice for batches of unequal length): the padded
    # batch must give what the sequences give one by one.
    c = Circuit()
    c.add_unit(Unit(name="x", activation="linear"))
    c.add_unit(Unit(name="y", activation="tanh"))
    c.connect("x", "y", 0.7)
    c.connect("y", "y", 0.5)
    c.set_schedule("x", UnitSchedule(clamp="every"))
    c.set_schedule("y", UnitSchedule(target="final"))
    c.add_sequence(Sequence(name="short", length=2, clamps={"x": [1, 0, 0]}, targets={"y": [None, None, 0.5]}))
    c.add_sequence(Sequence(name="long", length=5, clamps={"x": [0, 1, 0, 1, 0, 0]},
                            targets={"y": [None] * 5 + [-0.2]}))
    both = compile_circuit(c)
    assert both.step_mask.tolist() == [[1, 1, 1, 0, 0, 0], [1] * 6]
    p = both.parameters_from_circuit()
    value, grads, _ = backward(both, p, forward(both, p))
    parts = []
    for name in ("short", "long"):
        one = compile_circuit(c, [name])
        parts.append(backward(one, p, forward(one, p))[:2])
    # Each sequence has one target cell, so the batch mean is the mean of the two.
    assert value == pytest.approx((parts[0][0] + parts[1][0]) / 2, rel=1e-13)
    np.testing.assert_allclose(grads.W, (parts[0][1].W + parts[1][1].W) / 2, rtol=1e-12)


def test_cross_entropy_on_a_tanh_unit_is_refused():
    # Binary cross-entropy needs outputs in (0, 1), i.e. logistic units (common practice).
    c = random_circuit(2, loss="squared")
    comp = compile_circuit(c)
    if all(comp.activation_codes[comp.target_tm.any(axis=(0, 1))] == 0):
        pytest.skip("every targeted unit is logistic here")
    p = comp.parameters_from_circuit()
    with pytest.raises(EngineError, match="cross-entropy needs logistic units"):
        backward(comp, p, forward(comp, p), loss="cross_entropy")


def test_tanh_derivative_is_one_minus_y_squared():
    # Common practice: d/dx tanh x = 1 - tanh^2 x; checked against autograd too.
    from circuitlab.engine.activations import tanh, tanh_derivative
    x = np.linspace(-15, 15, 61)
    y = tanh(x)
    np.testing.assert_allclose(tanh_derivative(x, y), 1 - y * y, rtol=1e-14, atol=3e-16)
    ref = np.array([autograd.grad(anp.tanh)(v) for v in x])
    np.testing.assert_allclose(tanh_derivative(x, y), ref, rtol=1e-12)
