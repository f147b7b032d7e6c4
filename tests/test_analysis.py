"""The analyses of a trained circuit against facts from outside the project."""

import numpy as np
import pytest

from circuitlab import api
from circuitlab.engine import EngineError, compile_circuit, forward, loss_value
from circuitlab.engine.activations import FORWARD, CODES
from circuitlab.engine.analysis import (default_held, detect_period, find_fixed_points, fixed_points_of,
                                        noise_curve, past_horizon, predictions, principal_components,
                                        pulse_response, sequence_indices, state_space, step_map)
from circuitlab.model import Circuit, Sequence, Unit, UnitSchedule
from tests.engine_circuits import random_circuit


def compiled_of(circuit):
    comp = compile_circuit(circuit)
    return comp, comp.parameters_from_circuit()


def independent_step(circuit, state, free):
    """One step of the update in docs/mathematics.md written out unit by unit, apart from the engine's code."""
    names = circuit.unit_names()
    out = []
    for j in free:
        unit = circuit.units[j]
        net = unit.bias + sum(c.weight * state[names.index(c.source)] for c in circuit.connections
                              if c.target == unit.name)
        out.append(FORWARD[CODES[unit.activation]](np.array(net)))
    return np.array(out, dtype=float)


def held_inputs(comp, rng):
    return {name: float(rng.uniform(0, 1)) for name in default_held(comp)}


# ------------------------------------------------------------------ Jacobian
@pytest.mark.parametrize("seed", range(8))
def test_analytic_jacobian_equals_central_differences_and_its_eigenvalues(seed):
    circuit = random_circuit(seed)
    comp, params = compiled_of(circuit)
    rng = np.random.default_rng(seed)
    F = step_map(comp, params, held_inputs(comp, rng))
    if F.size == 0:
        pytest.skip("every unit is an input")
    y = rng.uniform(-1, 1, F.size)
    # A ReLU net input near 0 has no derivative; move away from the kink (common practice).
    y += 0.3 * (np.abs(F.net(y)) < 1e-3)
    h = 1e-6
    # Central differences, (F(y + h e_i) - F(y - h e_i)) / 2h, error O(h^2) (common practice).
    fd = np.column_stack([(F(y + h * e) - F(y - h * e)) / (2 * h) for e in np.eye(F.size)])
    J = F.jacobian(y)
    assert np.allclose(J, fd, rtol=1e-6, atol=1e-8)
    # The eigenvalues of the analytic J are numpy.linalg.eigvals of the finite-difference matrix.
    assert np.allclose(np.sort_complex(np.linalg.eigvals(J)), np.sort_complex(np.linalg.eigvals(fd)),
                       atol=1e-5)


def test_reported_eigenvalues_are_those_of_the_finite_difference_jacobian_at_each_fixed_point():
    circuit = random_circuit(3, loss="squared")
    comp, params = compiled_of(circuit)
    report = fixed_points_of(comp, params, starts=16)
    F = report.map
    assert report.points
    for p in report.points:
        h = 1e-6
        fd = np.column_stack([(F(p.y + h * e) - F(p.y - h * e)) / (2 * h) for e in np.eye(F.size)])
        # numpy.linalg.eigvals of the central-difference matrix (common practice).
        assert np.allclose(np.sort_complex(p.eigenvalues), np.sort_complex(np.linalg.eigvals(fd)), atol=1e-5)
        assert p.stable == (np.abs(np.linalg.eigvals(fd)).max() < 1)


# --------------------------------------------------------------- fixed points
@pytest.mark.parametrize("seed", range(10))
def test_every_reported_fixed_point_satisfies_y_equals_F_of_y(seed):
    circuit = random_circuit(seed)
    comp, params = compiled_of(circuit)
    held = held_inputs(comp, np.random.default_rng(seed))
    report = fixed_points_of(comp, params, held, starts=24, seed=seed)
    free = report.map.free
    for p in report.points:
        # y = F(y) checked with the update written out unit by unit (docs/mathematics.md).
        assert np.abs(independent_step(circuit, p.state, free) - p.y).max() <= 1e-10
        assert all(p.state[comp.unit_index(k)] == v for k, v in held.items())
    ys = [p.y for p in report.points]
    assert all(np.abs(a - b).max() > 1e-6 for i, a in enumerate(ys) for b in ys[i + 1:])  # no duplicates


def linear_circuit(rng, n=5):
    c = Circuit(name="linear")
    for k in range(n):
        c.add_unit(Unit(name=f"u{k}", activation="linear", bias=float(rng.normal())))
    c.add_unit(Unit(name="drive", activation="linear"))
    for i in range(n):
        for j in range(n):
            if rng.random() < 0.6:
                c.connect(f"u{i}", f"u{j}", float(rng.normal(0, 0.4)))
        c.connect("drive", f"u{i}", float(rng.normal()))
    c.set_schedule("drive", UnitSchedule(clamp="every"))
    c.set_schedule("u0", UnitSchedule(target="final"))
    c.add_sequence(Sequence(name="s", length=3, clamps={"drive": [1.0] * 4}, targets={"u0": [None] * 3 + [0.0]}))
    return c


def test_linear_circuit_fixed_point_solves_the_linear_system():
    rng = np.random.default_rng(5)
    circuit = linear_circuit(rng)
    comp, params = compiled_of(circuit)
    report = fixed_points_of(comp, params, {"drive": 0.7}, starts=8)
    W = params.W
    free = report.map.free
    d = comp.unit_index("drive")
    # Linear algebra: y = b + W_ff^T y + W_df^T x  <=>  (I - W_ff^T) y = b + x W_df.
    expected = np.linalg.solve(np.eye(free.size) - W[np.ix_(free, free)].T,
                               params.bias[free] + 0.7 * W[d, free])
    assert len(report.points) == 1
    assert np.allclose(report.points[0].y, expected, rtol=0, atol=1e-10)
    # For a linear map J = W_ff^T everywhere.
    assert np.allclose(report.points[0].jacobian, W[np.ix_(free, free)].T)


def one_logistic_unit(w):
    c = Circuit(name="bistable")
    c.add_unit(Unit(name="a", activation="logistic", bias=-w / 2))
    c.connect("a", "a", w)
    return c


@pytest.mark.parametrize("w, count", [(2.0, 1), (3.5, 1), (4.5, 3), (6.0, 3)])
def test_single_logistic_unit_has_one_fixed_point_below_slope_one_and_three_above(w, count):
    # Calculus: the logistic's derivative at 0 is 1/4, so y = sigma(w (y - 1/2)) has slope w/4 at
    # y = 1/2; the fixed point 1/2 splits into three as w passes 4.
    comp, params = compiled_of(one_logistic_unit(w))
    report = find_fixed_points(step_map(comp, params, {}), starts=40, seed=1)
    assert len(report.points) == count
    middle = min(report.points, key=lambda p: abs(p.y[0] - 0.5))
    assert middle.y[0] == pytest.approx(0.5, abs=1e-12)
    assert middle.eigenvalues[0].real == pytest.approx(w / 4, rel=1e-12)
    assert middle.stable == (w < 4)
    assert all(p.stable for p in report.points if p is not middle)
    assert middle.time_constant == (pytest.approx(-1 / np.log(w / 4)) if w < 4 else np.inf)


def test_weight_facts_are_numpys_spectral_radius_and_largest_singular_value():
    comp, params = compiled_of(random_circuit(4))
    report = fixed_points_of(comp, params, starts=4)
    W = params.W[np.ix_(report.map.free, report.map.free)]
    # Definitions (linear algebra): max |eig(W)| and the 2-norm of W.
    assert report.spectral_radius == pytest.approx(max(abs(np.linalg.eigvals(W))))
    assert report.largest_singular_value == pytest.approx(np.linalg.norm(W, 2))


def test_an_unknown_held_unit_is_refused():
    comp, params = compiled_of(one_logistic_unit(3))
    with pytest.raises(EngineError, match="no unit named 'b'"):
        fixed_points_of(comp, params, {"b": 1.0})


# -------------------------------------------------------------------- horizon
def test_a_circuit_trained_to_hold_its_last_steps_settles(examples_dir):
    circuit = api.load(examples_dir / "pattern_cleaner.circuit.json")  # targets on the last 4 of 6 steps
    trained = api.train(circuit).circuit
    run = past_horizon(*compiled_of(trained), factor=4)
    assert {v["verdict"] for v in run.verdicts} == {"settles"}
    assert run.y.shape[1] == 4 * 6 + 1


def test_a_circuit_that_passes_through_its_target_and_moves_on_leaves():
    # y(t) = y(t-1) + 0.1 from 0: it meets its target 0.5 at the final step 5 and keeps climbing.
    c = Circuit(name="ramp")
    c.add_unit(Unit(name="r", activation="linear", bias=0.1, initial_value=0.0))
    c.connect("r", "r", 1.0)
    c.set_schedule("r", UnitSchedule(target="final"))
    c.add_sequence(Sequence(name="s", length=5, targets={"r": [None] * 5 + [0.5]}))
    run = past_horizon(*compiled_of(c), factor=3)
    (v,) = run.verdicts
    assert v["verdict"] == "leaves" and v["state_at_horizon"] == pytest.approx(0.5)
    assert v["state_at_end"] == pytest.approx(1.5)


def test_a_trained_oscillator_oscillates_with_its_period(examples_dir):
    circuit = api.load(examples_dir / "beat_keeper.circuit.json")  # strong-weak-weak: period 3
    trained = api.train(circuit).circuit
    run = past_horizon(*compiled_of(trained), factor=4)
    assert [(v["verdict"], v["period"]) for v in run.verdicts] == [("oscillates", 3)]


def test_period_detection_finds_a_sines_period():
    t = np.arange(200)
    # A sampled sine with period 7 repeats every 7 samples (trigonometry).
    assert detect_period(np.sin(2 * np.pi * t / 7), 1e-9) == 7
    assert detect_period(np.full(200, 0.3), 1e-3) is None


def test_held_and_released_clamps_past_the_horizon(examples_dir):
    circuit = api.train(api.load(examples_dir / "set_reset_latch.circuit.json")).circuit
    comp, params = compiled_of(circuit)
    held = past_horizon(comp, params, factor=2, clamps="hold")
    filled = past_horizon(comp, params, factor=2, clamps=0.0)
    s, L = 0, int(held.horizons[0])
    pulse = comp.unit_index("open_pulse")
    assert np.all(held.y[s, L:2 * L + 1, pulse] == comp.clamp_values[s, L, pulse])
    assert np.all(filled.y[s, L + 1:2 * L + 1, pulse] == 0.0)


# ----------------------------------------------------------------- robustness
def test_noise_of_size_zero_gives_the_plain_loss_and_noise_is_seeded(examples_dir):
    circuit = api.load(examples_dir / "set_reset_latch.circuit.json")
    comp, params = compiled_of(circuit)
    train = comp.subset(sequence_indices(comp, "training"))
    plain = loss_value(train, forward(train, params), comp.loss)
    a = noise_curve(comp, params, [0.0, 0.2], repeats=3, seed=7)
    b = noise_curve(comp, params, [0.0, 0.2], repeats=3, seed=7)
    assert np.all(a.levels[0].losses == plain)
    assert np.array_equal(a.levels[1].losses, b.levels[1].losses)
    assert not np.all(a.levels[1].losses == plain)
    c = noise_curve(comp, params, [0.2], where="inputs", repeats=2, seed=7)
    assert np.isfinite(c.levels[0].losses).all() and not np.all(c.levels[0].losses == plain)


def test_a_pulse_into_a_leaky_linear_unit_decays_geometrically():
    c = Circuit(name="leak")
    c.add_unit(Unit(name="x", activation="linear", initial_value=0.0))
    c.connect("x", "x", 0.5)
    c.set_schedule("x", UnitSchedule(target="final"))
    c.add_sequence(Sequence(name="s", length=20, targets={"x": [None] * 20 + [0.0]}))
    comp, params = compiled_of(c)
    r = pulse_response(comp, params, "s", "x", step=2, size=1.0)
    # Geometric series: after k steps the pulse is 0.5^k; 0.5^7 < 1 % <= 0.5^6.
    assert np.allclose(r.response[2:, 0], 0.5 ** np.arange(19))
    assert r.decay_steps == [7]


# ---------------------------------------------------------------- state space
def test_explained_variance_shares_are_those_of_the_svd_of_the_centred_trajectories(examples_dir):
    circuit = api.load(examples_dir / "pattern_cleaner.circuit.json")
    comp, params = compiled_of(circuit)
    space = state_space(comp, params, components=3)
    y = forward(comp, params).y
    data = np.vstack([y[s, : comp.lengths[s] + 1] for s in range(comp.n_sequences)])
    centred = data - data.mean(axis=0)
    s = np.linalg.svd(centred, compute_uv=False)   # numpy.linalg.svd
    assert np.allclose(space.all_explained, s ** 2 / np.sum(s ** 2))
    # The same shares are the covariance matrix's eigenvalues over their sum (PCA, linear algebra).
    ev = np.sort(np.linalg.eigvalsh(np.cov(centred.T)))[::-1]
    assert np.allclose(space.all_explained, ev / ev.sum(), atol=1e-12)
    assert space.all_explained.sum() == pytest.approx(1.0)
    assert np.allclose(space.explained, space.all_explained[:3])
    assert np.allclose(np.vstack(space.trajectories), centred @ space.directions.T)


def test_principal_components_of_points_on_a_line_explain_everything():
    data = np.outer(np.linspace(-1, 1, 9), [1.0, 2.0, -2.0])
    _, directions, shares, _ = principal_components(data, 2)
    assert shares[0] == pytest.approx(1.0) and abs(shares[1]) < 1e-20
    assert np.allclose(np.abs(directions[0]), [1 / 3, 2 / 3, 2 / 3])


# ---------------------------------------------------------------- predictions
def test_predictions_mean_cell_loss_is_the_training_loss(examples_dir):
    circuit = api.load(examples_dir / "two_step_echo.circuit.json")
    comp, params = compiled_of(circuit)
    pred = predictions(comp, params, use="all")
    assert np.mean(pred.loss) == pytest.approx(loss_value(comp, forward(comp, params), comp.loss), rel=1e-12)
    assert np.array_equal(pred.error, pred.output - pred.target)
    assert len(pred) == comp.target_cells
    per_seq = pred.per_sequence()
    assert sum(r["cells"] for r in per_seq) == len(pred)
    first = pred.records()[0]
    assert first["error"] == first["output"] - first["target"]


def test_sequence_sets(examples_dir):
    circuit = api.load(examples_dir / "set_reset_latch.circuit.json")
    comp, _ = compiled_of(circuit)
    train, held, both = (sequence_indices(comp, k) for k in ("training", "held_out", "all"))
    assert np.array_equal(np.sort(np.concatenate([train, held])), both)
    assert all(comp.held_out[held]) and not any(comp.held_out[train])
    with pytest.raises(EngineError, match="unknown set"):
        sequence_indices(comp, "test-ish")
