"""Model edits keep the circuit consistent (common practice for graph editors)."""

import pytest

from circuitlab.model import Circuit, ModelError, Sequence, Unit, UnitSchedule, find_problems


def small() -> Circuit:
    c = Circuit()
    for n in "abc":
        c.add_unit(Unit(name=n))
    c.connect("a", "b", 0.5)
    c.connect("b", "b", -0.25)
    c.connect("b", "c", 1.0)
    c.set_schedule("a", UnitSchedule(clamp="every"))
    c.add_sequence(Sequence(name="s", length=2, clamps={"a": [0, 1, 0]}))
    return c


def test_remove_unit_takes_connections_schedule_and_rows():
    c = small()
    c.remove_unit("a")
    assert c.unit_names() == ["b", "c"]
    assert [k.key for k in c.connections] == [("b", "b"), ("b", "c")]
    assert "a" not in c.schedule and "a" not in c.sequences[0].clamps


def test_rename_follows_everywhere():
    c = small()
    c.rename_unit("a", "input")
    assert c.connections[0].source == "input"
    assert "input" in c.schedule and "input" in c.sequences[0].clamps
    with pytest.raises(ModelError, match="already exists"):
        c.rename_unit("b", "c")


def test_duplicate_connection_refused():
    c = small()
    with pytest.raises(ModelError, match="already connected"):
        c.connect("a", "b")
    with pytest.raises(ModelError, match="no unit named 'zz'"):
        c.connect("a", "zz")


def test_tie_shares_weight_and_freeze_follows_group():
    c = small()
    c.tie([("a", "b"), ("b", "c")], "g")
    assert c.connection("b", "c").weight == 0.5
    c.freeze(connections=[("a", "b")])
    assert not c.connection("b", "c").trains
    assert find_problems(c) == []
