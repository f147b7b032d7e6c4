"""Batches of uneven sequences, held-out sequences and constraints on tie groups.

What the random-circuit gradient checks (test_engine_gradients, test_engine_theory)
do not pin down cell by cell: where the error may and may not be, that a
learned initial state is one value for every sequence, that held-out data
never moves a parameter, and how constraints act on a whole tie group.
"""

import numpy as np
import pytest

from circuitlab.engine import EngineError, Trainer, backward, compile_circuit, forward
from circuitlab.engine.gradcheck import finite_difference_gradient, relative_error
from circuitlab.model import Circuit, Sequence, Unit, UnitSchedule, find_problems


def uneven_circuit() -> Circuit:
    """x clamped every step; o learns its initial state and carries a target at each sequence's end."""
    c = Circuit(name="uneven")
    c.add_unit(Unit(name="x", activation="linear", initial_mode="clamped"))
    c.add_unit(Unit(name="h", activation="tanh", initial_mode="learned", initial_value=0.2))
    c.add_unit(Unit(name="o", activation="logistic", initial_mode="learned", initial_value=0.6))
    c.connect("x", "h", 0.8)
    c.connect("h", "h", 0.4)
    c.connect("h", "o", -0.7)
    c.connect("o", "o", 0.9)
    c.connect("o", "h", 0.3)
    c.set_schedule("x", UnitSchedule(clamp="every"))
    c.set_schedule("o", UnitSchedule(target="final"))
    c.add_sequence(Sequence(name="short", length=2, clamps={"x": [1.0, -0.5, 0.2]},
                            targets={"o": [None, None, 0.9]}))
    c.add_sequence(Sequence(name="long", length=6, clamps={"x": [0.3, 1.0, -1.0, 0.5, 0.0, 0.7, -0.2]},
                            targets={"o": [None] * 6 + [0.1]}))
    c.add_sequence(Sequence(name="mid", length=4, clamps={"x": [-0.4, 0.6, 0.1, -0.9, 0.4]},
                            targets={"o": [None] * 4 + [0.5]}))
    return c


def test_uneven_batch_puts_error_only_where_the_design_allows():
    # docs/mathematics.md: "final" targets each sequence at its own last step; e = delta = 0 where a unit
    # is clamped; padding past a sequence's end is no cell of it, so it carries no error
    # (padding with a step mask, common practice).
    c = uneven_circuit()
    comp = compile_circuit(c)
    p = comp.parameters_from_circuit()
    act = forward(comp, p)
    _, _, back = backward(comp, p, act)
    o, x = comp.unit_index("o"), comp.unit_index("x")
    for s, length in enumerate(comp.lengths):
        assert np.flatnonzero(comp.target_mask[s, :, o]).tolist() == [length]
        assert not back.e[s, length + 1:].any() and not back.delta[s, length + 1:].any()
        assert back.e[s, :length + 1, o].any()  # the error is there up to the end
    assert not back.e[:, :, x].any() and not back.delta[:, :, x].any()
    assert not back.delta[:, 0].any()  # step 0 has no net input


def test_learned_initial_state_is_shared_and_its_gradient_sums_the_sequences():
    # One learned s_j for every sequence: dE/ds_j = sum over sequences of e_j(0) (docs/mathematics.md),
    # here for a unit that learns its initial state and carries a target. Checked against
    # central finite differences of the batch loss (common practice) and against the
    # sequences run one by one.
    c = uneven_circuit()
    comp = compile_circuit(c)
    p = comp.parameters_from_circuit()
    _, grads, back = backward(comp, p, forward(comp, p))
    g = comp.pack_gradient(grads)
    fd = finite_difference_gradient(comp, p)
    assert relative_error(g, fd).max() < 1e-7  # floor 1e-6: the bias of clamped x has gradient 0
    init = comp.param_groups()["initial states"]
    assert [comp.param_labels[k] for k in range(init.start, init.stop)] == \
        ["initial state h", "initial state o"]
    np.testing.assert_allclose(grads.init, back.e[:, 0].sum(axis=0), rtol=1e-15)
    # Each sequence has one target cell, so the batch mean is the mean of the three.
    singles = [backward(one, p, forward(one, p))[1].init
               for one in (compile_circuit(c, [s.name]) for s in c.sequences)]
    np.testing.assert_allclose(grads.init, np.mean(singles, axis=0), rtol=1e-12)


@pytest.mark.parametrize("batch_size", [0, 1])
def test_held_out_sequences_never_move_the_parameters(batch_size):
    # Held-out data is for measuring only (common practice): training with a held-out
    # sequence gives bit for bit what training without it gives, with one batch and with
    # mini-batches, while its loss is still reported.
    with_held = uneven_circuit()
    with_held.sequences[1].held_out = True
    without = uneven_circuit()
    without.sequences = [s for s in without.sequences if s.name != "long"]
    runs = []
    for c in (with_held, without):
        c.training.batch_size = batch_size
        c.training.epochs = 15
        c.training.learning_rate = 0.1
        tr = Trainer(c)
        tr.run()
        runs.append(tr)
    a, b = runs
    np.testing.assert_array_equal(a.compiled.pack(a.parameters), b.compiled.pack(b.parameters))
    assert [r.loss for r in a.history] == [r.loss for r in b.history]
    assert all(r.held_out_loss is not None for r in a.history)
    assert all(r.held_out_loss is None for r in b.history)
    assert a.history[0].held_out_loss != a.history[-1].held_out_loss  # it is measured each epoch


def _tied_pair() -> Circuit:
    c = uneven_circuit()
    c.connect("x", "o", 0.5)
    c.tie([("x", "h"), ("x", "o")], "from x")
    return c


def test_tie_group_mixing_frozen_and_training_members_is_refused():
    # One parameter cannot both train and stay fixed (docs/mathematics.md: tied weights share one parameter).
    c = _tied_pair()
    c.connection("x", "o").trains = False
    assert any("some members train and some are frozen" in str(p) for p in find_problems(c))
    with pytest.raises(EngineError, match="from x"):
        compile_circuit(c)


def test_tie_group_mixing_excitatory_and_inhibitory_sources_is_refused():
    # One shared weight cannot be both >= 0 and <= 0 except at 0 (docs/mathematics.md, sign constraints).
    c = _tied_pair()
    for pair in (("x", "o"), ("x", "h"), ("h", "o")):
        c.connection(*pair).weight = 0.0
    c.unit("x").sign = "excitatory"
    c.unit("h").sign = "inhibitory"
    c.tie([("h", "o")], "from x")
    assert any("joins excitatory and inhibitory" in str(p) for p in find_problems(c))
    with pytest.raises(EngineError, match="from x"):
        compile_circuit(c)


def test_sign_projection_acts_on_a_whole_tie_group():
    # Projection onto the allowed half-line after each update (common practice, projected
    # gradient) applied to the one shared parameter: every member stops at 0 together.
    c = _tied_pair()
    c.unit("x").sign = "excitatory"
    c.connection("x", "h").weight = c.connection("x", "o").weight = 1e-3
    c.set_schedule("h", UnitSchedule(target="every"))
    for s in c.sequences:  # targets that ask for less of x in h: the tied weight is pushed below 0
        s.targets["h"] = [None] + [-0.9 * np.sign(v) if v else 0.0 for v in s.clamps["x"][:-1]]
    c.training.optimizer = "sgd"
    c.training.learning_rate = 2.0
    c.training.epochs = 20
    tr = Trainer(c)
    tr.run()
    comp = tr.compiled
    x, h, o = (comp.unit_index(n) for n in ("x", "h", "o"))
    for r in tr.history:
        assert r.parameters.W[x, h] == r.parameters.W[x, o] >= 0.0
    assert tr.parameters.W[x, h] == 0.0  # it was pushed down to the bound and held there
