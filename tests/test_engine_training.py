"""The trainer: constraints hold, runs repeat exactly, NaNs are recovered from."""

import numpy as np
import pytest

from circuitlab.engine import EngineError, Trainer, backward, forward
from circuitlab.engine import trainer as trainer_module
from circuitlab.engine.optimizers import Adam, clip_by_global_norm
from circuitlab.model import Circuit, Sequence, Unit, UnitSchedule
from engine_circuits import random_circuit


def constrained_circuit() -> Circuit:
    """Three units with a tie group, a frozen weight, a frozen bias and a sign constraint."""
    c = Circuit(name="constrained")
    c.add_unit(Unit(name="x", activation="linear", initial_mode="clamped"))
    c.add_unit(Unit(name="h", activation="tanh", sign="inhibitory", initial_mode="learned"))
    c.add_unit(Unit(name="o", activation="logistic", bias_trains=False, bias=0.3))
    c.connect("x", "h", 0.4)
    c.connect("x", "o", 0.4)
    c.connect("h", "o", -0.2)
    c.connect("h", "h", -0.1, trains=False)
    c.connect("o", "o", 0.1)
    c.tie([("x", "h"), ("x", "o")], "shared")
    c.set_schedule("x", UnitSchedule(clamp="every"))
    c.set_schedule("o", UnitSchedule(target="every"))
    rng = np.random.default_rng(7)
    for s in range(4):
        x = [float(v) for v in rng.normal(size=6)]
        d = [None] + [float(v) for v in rng.random(5)]
        c.add_sequence(Sequence(name=f"s{s}", length=5, clamps={"x": x}, targets={"o": d},
                                held_out=s == 3))
    c.training.learning_rate = 0.05
    c.training.epochs = 100
    return c


def test_ties_stay_equal_frozen_unchanged_signs_kept_over_100_epochs():
    # Constraints (docs/mathematics.md): a tie group is one parameter, frozen values never move,
    # sign-constrained weights are projected onto their half-line after each update.
    # Sources: weight sharing as one parameter (Rumelhart, Hinton and Williams, 1986, from
    # memory); projection onto the allowed half-line (common practice, projected gradient).
    c = constrained_circuit()
    tr = Trainer(c)
    tr.run()
    assert tr.epochs_done == 100 and tr.stopped_because.startswith("ran the set number")
    p = tr.parameters
    comp = tr.compiled
    i = {n: k for k, n in enumerate(comp.unit_names)}
    assert p.W[i["x"], i["h"]] == p.W[i["x"], i["o"]]
    assert p.W[i["x"], i["h"]] != 0.4  # it did train
    assert p.W[i["h"], i["h"]] == -0.1
    assert p.bias[i["o"]] == 0.3
    assert p.W[i["h"], i["o"]] <= 0.0
    assert all(r.parameters.W[i["h"], i["o"]] <= 0.0 for r in tr.history)
    assert tr.history[-1].loss < tr.history[0].loss
    assert tr.history[0].held_out_loss is not None


def test_sign_projection_holds_a_weight_at_zero():
    # A weight pushed across its allowed sign stops at 0 (projection, common practice).
    c = constrained_circuit()
    c.training.learning_rate = 0.5
    c.training.optimizer = "sgd"
    c.connection("h", "o").weight = -1e-3
    tr = Trainer(c)
    tr.run()
    w = [r.parameters.W[1, 2] for r in tr.history]
    assert max(w) <= 0.0


def test_training_repeats_bit_for_bit_with_mini_batches():
    # Seeded Generators and deterministic arithmetic: same seed, same numbers (common practice).
    def run():
        c = constrained_circuit()
        c.training.batch_size = 1
        c.training.epochs = 20
        tr = Trainer(c)
        tr.run()
        return tr
    a, b = run(), run()
    assert [r.loss for r in a.history] == [r.loss for r in b.history]
    assert np.array_equal(a.parameters.W, b.parameters.W)


def test_seed_changes_the_mini_batch_order():
    # Mini-batches in a seeded shuffled order (common practice): another seed, another order.
    losses = []
    for seed in (1, 2):
        c = constrained_circuit()
        c.training.batch_size = 1
        c.training.epochs = 5
        c.training.seed = seed
        tr = Trainer(c)
        tr.run()
        losses.append([r.loss for r in tr.history])
    assert losses[0] != losses[1]


def test_nan_mid_training_stops_and_restores_the_last_finite_parameters(monkeypatch):
    # Stop on a non-finite value and keep the last finite parameters (common practice).
    c = constrained_circuit()
    tr = Trainer(c)
    for _ in range(5):
        tr.epoch()
    before = tr.parameters
    real = trainer_module.backward
    calls = {"n": 0}

    def poisoned(*args, **kwargs):
        # Inject a NaN into the gradient of the 7th epoch.
        calls["n"] += 1
        value, grads, back = real(*args, **kwargs)
        if calls["n"] == 2:
            grads.W[0, 1] = np.nan
        return value, grads, back

    monkeypatch.setattr(trainer_module, "backward", poisoned)
    rec6 = tr.epoch()
    assert rec6.finite
    rec7 = tr.epoch()
    assert not rec7.finite and tr.done
    assert "NaN or infinite in epoch 7" in tr.stopped_because
    # Back to the parameters epoch 7 started from: the last with a finite loss and gradient.
    assert tr.parameters.all_finite()
    np.testing.assert_array_equal(tr.parameters.W, rec6.parameters.W)
    assert len(tr.history) == 7 and np.array_equal(tr.history[4].parameters.W, before.W)
    with pytest.raises(EngineError, match="training has stopped"):
        tr.epoch()


def diverging_circuit() -> Circuit:
    """A linear self-loop trained with a huge rate: its values overflow within a few epochs."""
    c = Circuit()
    c.add_unit(Unit(name="a", activation="linear", initial_value=1.0))
    c.connect("a", "a", 1.5)
    c.set_schedule("a", UnitSchedule(target="final"))
    c.add_sequence(Sequence(name="s", length=50, targets={"a": [None] * 50 + [1.0]}))
    c.training.optimizer = "sgd"
    c.training.learning_rate = 1e6
    c.training.epochs = 1000
    return c


def test_divergence_to_infinity_is_caught():
    # Training must stop with finite values when the loss overflows.
    tr = Trainer(diverging_circuit())
    tr.run()
    assert tr.done and "NaN or infinite" in tr.stopped_because
    assert tr.parameters.all_finite()
    assert tr.epochs_done < 1000


def test_target_loss_stops_training():
    # Stopping once the loss reaches a set target (common practice).
    c = constrained_circuit()
    c.training.epochs = 1000
    tr = Trainer(c)
    first = tr.epoch().loss
    tr.settings.target_loss = first * 0.95
    tr.run()
    assert tr.stopped_because.startswith("reached the target loss")
    assert tr.history[-1].loss <= first * 0.95 < tr.history[-2].loss
    assert tr.epochs_done < 1000
    # Training stops at the parameters whose loss reached the target.
    assert tr.loss() == tr.history[-1].loss
    np.testing.assert_array_equal(tr.parameters.W, tr.history[-1].parameters.W)


def test_target_loss_with_mini_batches_is_checked_after_the_epoch():
    c = constrained_circuit()
    c.training.batch_size = 1
    c.training.epochs = 1000
    tr = Trainer(c)
    tr.settings.target_loss = tr.loss() * 0.95
    tr.run()
    assert tr.stopped_because.startswith("reached the target loss")
    assert tr.loss() <= tr.settings.target_loss


def test_reinitialise_respects_ties_frozen_and_signs():
    c = constrained_circuit()
    tr = Trainer(c)
    tr.epoch()
    tr.reinitialise(seed=3)
    p = tr.parameters
    assert p.W[0, 1] == p.W[0, 2] and p.W[0, 1] != 0.4
    assert p.W[1, 1] == -0.1 and p.bias[2] == 0.3 and p.W[1, 2] <= 0.0
    assert tr.history == [] and not tr.done
    other = Trainer(c)
    other.reinitialise(seed=3)
    assert np.array_equal(other.parameters.W, p.W)
    other.reinitialise(seed=4)
    assert not np.array_equal(other.parameters.W, p.W)


def test_fan_in_scaling_of_initial_weights():
    # Fan-in scaling: weight spread ~ init_scale / sqrt(fan-in) (LeCun et al., 1998; common practice).
    c = Circuit()
    for k in range(41):
        c.add_unit(Unit(name=f"u{k}", activation="tanh"))
    for k in range(1, 41):
        c.connect(f"u{k}", "u0", 0.0)
        c.connect("u0", f"u{k}", 0.0)
    c.set_schedule("u0", UnitSchedule(target="final"))
    c.add_sequence(Sequence(name="s", length=2, targets={"u0": [None, None, 0.5]}))
    tr = Trainer(c)
    tr.reinitialise(seed=0)
    W = tr.parameters.W
    into_hub = W[1:, 0]      # fan-in 40
    from_hub = W[0, 1:]      # fan-in 1 each
    assert 0.5 / np.sqrt(40) < into_hub.std() < 2 / np.sqrt(40)
    assert 0.5 < from_hub.std() < 2


def test_write_back_and_update_values():
    c = constrained_circuit()
    tr = Trainer(c)
    for _ in range(10):
        tr.epoch()
    tr.write_back(c)
    assert c.connection("x", "h").weight == c.connection("x", "o").weight == tr.parameters.W[0, 1]
    assert c.unit("h").initial_value == tr.parameters.init[1]
    assert c.trained.epochs == 10 and c.trained.loss == pytest.approx(tr.loss())
    # A fresh trainer on the written-back circuit starts where this one stopped.
    assert Trainer(c).loss() == pytest.approx(tr.loss(), rel=1e-12)
    c.connection("h", "o").weight = -0.5
    c.training.learning_rate = 0.001
    tr.update_values(c)
    assert tr.parameters.W[1, 2] == -0.5 and tr.settings.learning_rate == 0.001
    assert tr.epoch().epoch == 11


def test_nothing_to_train_is_a_clear_error():
    c = constrained_circuit()
    for s in c.sequences:
        s.held_out = True
    with pytest.raises(EngineError, match="every sequence is held out"):
        Trainer(c)
    c = constrained_circuit()
    c.set_schedule("o", UnitSchedule())
    with pytest.raises(EngineError, match="no training sequence has a target cell"):
        Trainer(c)


def test_trainer_leaves_the_given_circuit_alone():
    c = constrained_circuit()
    text = c.model_dump_json()
    tr = Trainer(c)
    tr.run()
    assert c.model_dump_json() == text


def test_adam_first_step_moves_each_parameter_by_the_rate():
    # Kingma and Ba (2015): with bias correction the first step is lr * sign(g) (up to epsilon).
    # The update rule is recalled from memory of the paper's algorithm.
    opt = Adam(3)
    theta = opt.step(np.zeros(3), np.array([2.0, -0.001, 5.0]), 0.1)
    np.testing.assert_allclose(theta, [-0.1, 0.1, -0.1], rtol=1e-4)


def test_clipping_by_global_norm():
    # Pascanu, Mikolov and Bengio (2013): g <- g * threshold / |g| when |g| > threshold.
    g = np.array([3.0, 4.0])
    np.testing.assert_allclose(clip_by_global_norm(g, 1.0), [0.6, 0.8])
    assert clip_by_global_norm(g, 10.0) is g


def test_e_norm_of_record_matches_backward():
    # Euclidean norm of e(t) over units and training sequences, per step, as used to watch
    # vanishing and exploding derivatives (Pascanu, Mikolov and Bengio, 2013, from memory).
    c = random_circuit(6, loss="squared")
    c.training.optimizer = "sgd"
    tr = Trainer(c)
    comp, act, back = tr.inspect()
    rec = tr.epoch()
    train = ~comp.held_out
    expected = np.sqrt((back.e[train] ** 2).sum(axis=(0, 2)))
    np.testing.assert_allclose(rec.e_norm, expected[: rec.e_norm.size], rtol=1e-12)


def test_step_advances_one_mini_batch_and_matches_epoch():
    def trainer():
        c = constrained_circuit()
        c.training.batch_size = 1
        return Trainer(c)
    a, b = trainer(), trainer()
    assert a.batches_per_epoch == 3  # three training sequences, one held out
    assert a.step() is None and a.step() is None
    rec = a.step()
    assert rec is not None and rec.epoch == 1
    assert b.epoch().loss == rec.loss
    np.testing.assert_array_equal(a.parameters.W, b.parameters.W)


def test_sgd_step_with_weight_decay_follows_the_penalised_gradient():
    # L2 weight decay: the followed gradient is dL/dw + lambda w on weights only (common practice).
    c = constrained_circuit()
    c.training.optimizer = "sgd"
    c.training.momentum = 0.0
    c.training.weight_decay = 0.1
    c.training.learning_rate = 0.01
    tr = Trainer(c)
    comp = tr._train_set
    p = tr.parameters
    _, grads, _ = backward(comp, p, forward(comp, p))
    g = comp.pack_gradient(grads)
    theta = comp.pack(p)
    weights = comp.param_groups()["weights"]
    g[weights] += 0.1 * theta[weights]
    rec = tr.epoch()
    np.testing.assert_allclose(comp.pack(tr.parameters), theta - 0.01 * g, rtol=1e-13)
    assert rec.decay_penalty == pytest.approx(0.05 * float(theta[weights] @ theta[weights]))


def test_step_rate_schedule():
    # Step decay: rate * factor ** (epoch // every) (common practice); 0.05 is the test circuit's rate.
    c = constrained_circuit()
    c.training.rate_schedule = "step"
    c.training.rate_step_every = 3
    c.training.rate_step_factor = 0.5
    c.training.epochs = 7
    tr = Trainer(c)
    tr.run()
    assert [r.learning_rate for r in tr.history] == [0.05] * 3 + [0.025] * 3 + [0.0125]


def test_write_back_into_a_changed_circuit_is_refused_clearly():
    c = constrained_circuit()
    tr = Trainer(c)
    tr.epoch()
    other = constrained_circuit()
    other.disconnect("h", "o")
    with pytest.raises(EngineError, match="no longer has connection h -> o"):
        tr.write_back(other)
    assert other.connection("x", "h").weight == 0.4  # nothing half-written


def test_write_back_matches_connections_by_name():
    c = constrained_circuit()
    tr = Trainer(c)
    for _ in range(3):
        tr.epoch()
    shuffled = c.copy()
    shuffled.connections.reverse()
    tr.write_back(shuffled)
    tr.write_back(c)
    for conn in c.connections:
        assert shuffled.connection(*conn.key).weight == conn.weight


def test_update_values_keeps_adam_moments_and_takes_new_settings():
    c = constrained_circuit()
    tr = Trainer(c)
    for _ in range(3):
        tr.epoch()
    m = tr._optimizer.m.copy()
    c.training.adam_beta1 = 0.5
    tr.update_values(c)
    assert tr._optimizer.beta1 == 0.5 and tr._optimizer.t == 3
    np.testing.assert_array_equal(tr._optimizer.m, m)
    c.training.optimizer = "sgd"
    tr.update_values(c)
    assert not hasattr(tr._optimizer, "m")
