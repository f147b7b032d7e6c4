"""Graph interop: networkx graphs and GraphML files carry units, connections and their attributes."""

import csv
import io
import math
from pathlib import Path

import networkx as nx
import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings

from circuitlab.cli.graph import CORNER, weight_matrix_csv
from circuitlab.model import Circuit, ModelError, Unit, load_circuit
from circuitlab.model.graph import from_networkx, read_graphml, to_networkx, write_graphml
from strategies import ANY_FINITE, circuits

ROOT = Path(__file__).resolve().parents[1]
EXAMPLES = sorted((ROOT / "example_circuits").glob("*.circuit.json"))


GRAPH = settings(max_examples=60, deadline=None, derandomize=True,
                 suppress_health_check=[HealthCheck.too_slow, HealthCheck.function_scoped_fixture])


def graph_part(c: Circuit) -> tuple:
    """What a graph carries: name, description, units in order, connections by ordered pair."""
    return (c.name, c.description, c.units, {k.key: k for k in c.connections})


def latch() -> Circuit:
    c = Circuit(name="latch", description="two units")
    c.add_unit(Unit(name="a", x=10.5, y=-3.0, sign="excitatory", initial_mode="learned",
                    initial_value=0.25))
    c.add_unit(Unit(name="b", activation="tanh", bias=-0.75, bias_trains=False))
    c.connect("a", "b", 0.125, tie="g")
    c.connect("b", "b", -1.5, trains=False)
    c.connect("b", "a", 2.0)
    return c


@GRAPH
@given(circuits(values=ANY_FINITE))
def test_networkx_round_trip(circuit):
    # Reference library: networkx (the circuit's graph part survives a DiGraph round trip).
    assert graph_part(from_networkx(to_networkx(circuit))) == graph_part(circuit)


@GRAPH
@given(circuit=circuits(values=ANY_FINITE))
def test_graphml_round_trip_preserves_weights_and_attributes(tmp_path, circuit):
    circuit.name, circuit.description = "named", "described"  # text is tested on its own below
    path = tmp_path / "c.graphml"
    write_graphml(circuit, path)
    back = read_graphml(path)
    assert graph_part(back) == graph_part(circuit)
    # reference library: networkx's own GraphML reader sees the same weights, bit for bit
    g = nx.read_graphml(path)
    for c in circuit.connections:
        assert g.edges[c.source, c.target]["weight"] == c.weight


def test_graph_facts_agree_with_networkx():
    c = latch()
    g = to_networkx(c)
    # structure as networkx computes it (reference library: networkx)
    assert nx.number_of_selfloops(g) == 1
    assert sorted(map(sorted, nx.simple_cycles(g))) == [["a", "b"], ["b"]]
    assert dict(g.in_degree()) == {"a": 1, "b": 2}
    assert g.nodes["a"] == {"activation": "logistic", "bias": 0.0, "bias_trains": True,
                            "initial_mode": "learned", "initial_value": 0.25, "sign": "excitatory",
                            "x": 10.5, "y": -3.0}
    assert g.edges["a", "b"] == {"weight": 0.125, "trains": True, "tie": "g"}
    assert g.graph == {"name": "latch", "description": "two units"}


def test_none_attributes_are_left_out_of_graphml(tmp_path):
    c = latch()
    path = tmp_path / "c.graphml"
    write_graphml(c, path)
    text = path.read_text(encoding="utf-8")
    g = nx.read_graphml(path)
    assert "initial_value" in g.nodes["a"] and "initial_value" not in g.nodes["b"]
    assert "sign" not in g.nodes["b"] and "tie" not in g.edges["b", "b"]
    assert "None" not in text
    back = read_graphml(path)
    assert back.unit("b").initial_value is None and back.unit("b").sign is None
    assert back.connection("b", "b").tie is None


def test_graphml_text_is_xml_safe(tmp_path):
    c = latch()
    c.description = "line one\r\nline two\x01\x1f end\ttab"
    write_graphml(c, tmp_path / "c.graphml")
    # XML 1.0 cannot hold control characters; line breaks come back as \n
    assert read_graphml(tmp_path / "c.graphml").description == "line one\nline two end\ttab"


@pytest.mark.parametrize("path", EXAMPLES, ids=lambda p: p.name)
def test_examples_export_and_import(tmp_path, path):
    c = load_circuit(path)
    write_graphml(c, tmp_path / "x.graphml")
    assert graph_part(read_graphml(tmp_path / "x.graphml")) == graph_part(c)


def test_foreign_graphml_with_text_numbers_and_extra_attributes(tmp_path):
    # as another tool might write it: weights typed as strings, a label and a colour
    path = tmp_path / "foreign.graphml"
    path.write_text("""<?xml version="1.0" encoding="UTF-8"?>
<graphml xmlns="http://graphml.graphdrawing.org/xmlns">
  <key id="w" for="edge" attr.name="weight" attr.type="string"/>
  <key id="l" for="node" attr.name="label" attr.type="string"/>
  <key id="x" for="node" attr.name="x" attr.type="int"/>
  <key id="c" for="node" attr.name="colour" attr.type="string"/>
  <graph edgedefault="directed">
    <node id="n0"><data key="l">first</data><data key="x">12</data><data key="c">red</data></node>
    <node id="n1"/>
    <edge source="n0" target="n1"><data key="w">0.75</data></edge>
    <edge source="n1" target="n1"><data key="w">-2</data></edge>
  </graph>
</graphml>""", encoding="utf-8")
    c = read_graphml(path)
    assert c.unit_names() == ["n0", "n1"]
    assert c.unit("n0").x == 12.0
    assert c.connection("n0", "n1").weight == 0.75 and c.connection("n1", "n1").weight == -2.0


@pytest.mark.parametrize("make, message", [
    (lambda: nx.Graph([("a", "b")]), "the graph is undirected"),
    (lambda: nx.MultiDiGraph([("a", "b"), ("a", "b")]), "the graph is a multigraph"),
    (lambda: nx.DiGraph([(1, 2)]), "node 1: unit names must be text, not int"),
    (lambda: nx.DiGraph([("a", "2b")]), "node '2b': name: must be a unit name"),
    (lambda: _digraph(node={"activation": "softmax"}), "node 'a': activation: must be 'logistic', 'tanh'"),
    (lambda: _digraph(node={"bias": "high"}), "node 'a': bias: must be a number"),
    (lambda: _digraph(node={"x": math.nan}), "node 'a': x: must be a finite number"),
    (lambda: _digraph(edge={"weight": "strong"}), "edge a -> b: weight: must be a number"),
    (lambda: _digraph(edge={"weight": math.inf}), "edge a -> b: weight: must be a finite number"),
    (lambda: _digraph(edge={"trains": "perhaps"}), "edge a -> b: trains: must be true or false"),
    (lambda: _digraph(graph={"name": 7}), "the graph: name: must be text"),
    (lambda: [("a", "b")], "expected a networkx graph, not list"),
])
def test_from_networkx_names_bad_attributes(make, message):
    with pytest.raises(ModelError) as info:
        from_networkx(make())
    assert message in str(info.value)


def _digraph(node=None, edge=None, graph=None) -> nx.DiGraph:
    g = nx.DiGraph(**(graph or {}))
    g.add_node("a", **(node or {}))
    g.add_edge("a", "b", **(edge or {}))
    return g


def test_to_networkx_refuses_what_a_graph_cannot_hold():
    c = latch()
    c.units.append(Unit(name="a"))
    with pytest.raises(ModelError, match="two units are named 'a'"):
        to_networkx(c)
    c = latch()
    c.connections.append(c.connections[0].model_copy())
    with pytest.raises(ModelError, match="a -> b is connected twice"):
        to_networkx(c)


@pytest.mark.parametrize("content, message", [
    ("not xml at all", "is not a GraphML file this program can read"),
    ("<other/>", "is not a GraphML file this program can read"),
    ('<graphml xmlns="http://graphml.graphdrawing.org/xmlns"><key id="d" for="edge" attr.name="weight" '
     'attr.type="double"/><graph edgedefault="directed"><node id="a"/><edge source="a" target="a">'
     '<data key="d">heavy</data></edge></graph></graphml>', "is not a GraphML file this program can read"),
])
def test_read_graphml_refuses_bad_files_plainly(tmp_path, content, message):
    path = tmp_path / "bad.graphml"
    path.write_text(content, encoding="utf-8")
    with pytest.raises(ModelError, match=message):
        read_graphml(path)


def test_read_graphml_missing_file(tmp_path):
    with pytest.raises(ModelError, match="cannot be read"):
        read_graphml(tmp_path / "absent.graphml")


def test_weight_matrix_csv_matches_networkx_adjacency():
    c = latch()
    rows = list(csv.reader(io.StringIO(weight_matrix_csv(c))))
    assert rows[0] == [CORNER, "a", "b"]
    assert [r[0] for r in rows[1:]] == ["a", "b"]
    ours = np.array([[float(v) if v else np.nan for v in r[1:]] for r in rows[1:]])
    # reference: networkx's adjacency matrix, row = source, column = target
    ref = nx.to_numpy_array(to_networkx(c), nodelist=["a", "b"], weight="weight", nonedge=np.nan)
    np.testing.assert_array_equal(ours, ref)
