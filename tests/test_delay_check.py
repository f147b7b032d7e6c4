"""The delay check: steps from the clamped inputs to each target unit, checked against networkx."""

from pathlib import Path

import networkx as nx
import pytest

from circuitlab.model import Circuit, Sequence, Unit, UnitSchedule, clamp_mask, load_circuit
from circuitlab.model.delays import clamped_units, delay_check, input_reach
from engine_circuits import random_circuit

ROOT = Path(__file__).resolve().parents[1]
EXAMPLES = sorted((ROOT / "example_circuits").glob("*.circuit.json"))


def _graph(circuit) -> nx.DiGraph:
    g = nx.DiGraph()
    g.add_nodes_from(circuit.unit_names())
    g.add_edges_from(c.key for c in circuit.connections)
    return g


def _walk(g: nx.DiGraph, u: str, v: str) -> int | None:
    """Fewest connections (at least one) from u to v: a shortest path, or for u == v the shortest
    cycle through u (source: networkx shortest_path_length)."""
    if u != v:
        try:
            return nx.shortest_path_length(g, u, v)
        except nx.NetworkXNoPath:
            return None
    lengths = nx.single_source_shortest_path_length(g, u)
    cycles = [lengths[p] + 1 for p in g.predecessors(u) if p in lengths]
    return min(cycles, default=None)


def _expected(circuit):
    g = _graph(circuit)
    sources = clamped_units(circuit)
    out = {}
    for unit in circuit.units:
        if circuit.schedule_for(unit.name).target == "none":
            continue
        walks = [w for w in (_walk(g, s, unit.name) for s in sources) if w is not None]
        out[unit.name] = min(walks, default=None)
    return out, g, sources


@pytest.mark.parametrize("path", EXAMPLES, ids=lambda p: p.name.split(".")[0])
def test_reach_of_every_example_equals_networkx_shortest_paths(path):
    circuit = load_circuit(path)
    expected, _, _ = _expected(circuit)
    assert input_reach(circuit) == expected
    assert expected  # every example has target units


@pytest.mark.parametrize("seed", range(40))
def test_reach_and_first_step_equal_networkx_on_random_circuits(seed):
    circuit = random_circuit(seed)
    expected, g, sources = _expected(circuit)
    assert input_reach(circuit) == expected
    for seq in circuit.sequences:
        starts = {}
        for s in sources:
            mask = clamp_mask(circuit.unit(s), circuit.schedule_for(s), seq)
            if any(mask):
                starts[s] = mask.index(True)
        for d in delay_check(circuit, seq):
            times = [t0 + w for s, t0 in starts.items() if (w := _walk(g, s, d.unit)) is not None]
            first = min(times, default=None)
            if first is not None and first > seq.length:
                first = None
            assert d.first_step == first, (seed, seq.name, d.unit)


def test_a_target_two_connections_from_the_input_is_flagged_before_step_two():
    c = Circuit(name="chain")
    for name in ("inp", "hid", "out"):
        c.add_unit(Unit(name=name))
    c.connect("inp", "hid", 1.0)
    c.connect("hid", "out", 1.0)
    c.set_schedule("inp", UnitSchedule(clamp="every"))
    c.set_schedule("out", UnitSchedule(target="every"))
    seq = Sequence(name="s", length=4, clamps={"inp": [0.0, 1, 0, 1, 0]},
                   targets={"out": [None, 0.0, 0.0, 1.0, 0.0]})
    c.add_sequence(seq)
    (d,) = delay_check(c, seq)
    assert (d.connections, d.first_step, d.early_targets) == (2, 2, [1])
    assert "step 1 cannot depend on the inputs" in d.describe()
    c.connect("inp", "out", 0.5)  # a direct path: the target at step 1 is reachable now
    (d,) = delay_check(c, seq)
    assert (d.connections, d.first_step, d.early_targets) == (1, 1, [])
