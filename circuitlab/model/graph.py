"""Graph interop: a circuit as a ``networkx.DiGraph``, and GraphML files.

Units become nodes (keyed by unit name) and connections become edges, with
every unit and connection field as an attribute (``weight``, ``bias``,
``activation``, positions ``x`` and ``y``...). Fields whose value is ``None``
are left out, since GraphML has no null; reading fills them with their
defaults again. The graph carries the circuit's ``name`` and ``description``;
the schedule, sequences and training settings stay in the circuit file.
GraphML is XML, which cannot hold control characters: they are dropped from
text on writing, and line breaks are written as ``\n``.
Attributes that are not fields of a unit or connection (a foreign tool's
``label`` or colour) are ignored on the way in.
"""

import io
import os
import re
import xml.etree.ElementTree as ElementTree
from pathlib import Path

import networkx as nx
import pydantic

from circuitlab.model.circuit import Circuit
from circuitlab.model.connections import Connection
from circuitlab.model.errors import ModelError
from circuitlab.model.fileformat import MAX_FILE_BYTES, describe_error, write_atomic
from circuitlab.model.units import Unit

GRAPH_FIELDS = ("name", "description")
# Characters XML 1.0 cannot hold at all; GraphML text drops them.
_XML_ILLEGAL = re.compile("[\x00-\x08\x0b\x0c\x0e-\x1f\ufffe\uffff]")


def to_networkx(circuit: Circuit) -> nx.DiGraph:
    """The circuit as a directed graph: one node per unit, one edge per connection.

    Raises ``ModelError`` if the circuit cannot be a simple directed graph
    (two units with one name, a connection twice, a connection to no unit).
    """
    names = circuit.unit_names()
    if len(set(names)) != len(names):
        dup = next(n for n in names if names.count(n) > 1)
        raise ModelError(f"two units are named '{dup}'; a graph needs distinct unit names")
    graph = nx.DiGraph(**{f: getattr(circuit, f) for f in GRAPH_FIELDS})
    for unit in circuit.units:
        graph.add_node(unit.name, **_attributes(unit, exclude={"name"}))
    for conn in circuit.connections:
        for end in (conn.source, conn.target):
            if end not in graph:
                raise ModelError(f"connection {conn.source} -> {conn.target}: there is no unit "
                                 f"named '{end}'")
        if graph.has_edge(conn.source, conn.target):
            raise ModelError(f"{conn.source} -> {conn.target} is connected twice")
        graph.add_edge(conn.source, conn.target, **_attributes(conn, exclude={"source", "target"}))
    return graph


def from_networkx(graph: nx.DiGraph) -> Circuit:
    """A circuit from a directed graph whose nodes are unit names.

    Node and edge attributes named like unit and connection fields are read
    (numbers given as text are accepted, as foreign GraphML often stores
    them so); a bad one raises ``ModelError`` naming the node or edge, the
    attribute and the reason. Units come in node order, connections in edge
    order.
    """
    if not isinstance(graph, nx.Graph):
        raise ModelError(f"expected a networkx graph, not {type(graph).__name__}")
    if not isinstance(graph, nx.DiGraph) or graph.is_multigraph():
        kind = "a multigraph" if graph.is_multigraph() else "undirected"
        raise ModelError(f"the graph is {kind}; a circuit needs a directed graph with at most "
                         "one edge per ordered pair of units")
    circuit = Circuit(**_graph_fields(graph))
    for node, data in graph.nodes(data=True):
        if not isinstance(node, str):
            raise ModelError(f"node {node!r}: unit names must be text, not {type(node).__name__}")
        fields = _known(data, Unit, exclude={"name"})
        circuit.units.append(_build(Unit, {"name": node, **fields}, f"node '{node}'"))
    for source, target, data in graph.edges(data=True):
        fields = _known(data, Connection, exclude={"source", "target"})
        circuit.connections.append(_build(
            Connection, {"source": source, "target": target, **fields}, f"edge {source} -> {target}"))
    return circuit


def write_graphml(circuit: Circuit, path: str | os.PathLike) -> None:
    """Write the circuit's graph as GraphML, atomically (see ``fileformat.write_atomic``)."""
    graph = to_networkx(circuit)
    for attrs in [graph.graph, *(d for _, d in graph.nodes(data=True)),
                  *(d for _, _, d in graph.edges(data=True))]:
        for key, value in attrs.items():
            if isinstance(value, str):
                attrs[key] = _xml_text(value)
    buffer = io.BytesIO()
    nx.write_graphml(graph, buffer, encoding="utf-8", prettyprint=True)
    write_atomic(path, buffer.getvalue())


def read_graphml(path: str | os.PathLike) -> Circuit:
    """Read a GraphML file as a circuit (default schedule, no sequences).

    Raises ``ModelError`` with a plain message if the file cannot be read, is
    not GraphML, is over ``MAX_FILE_BYTES``, or has bad attributes.
    """
    path = Path(path)
    try:
        with open(path, "rb") as fh:
            data = fh.read(MAX_FILE_BYTES + 1)
    except OSError as exc:
        raise ModelError(f"{path} cannot be read ({exc.strerror or exc})") from exc
    if len(data) > MAX_FILE_BYTES:
        raise ModelError(f"{path} is over {MAX_FILE_BYTES // 2**20} MB, the limit for graph files")
    try:
        graph = nx.read_graphml(io.BytesIO(data), node_type=str)
    except (ElementTree.ParseError, nx.NetworkXError, ValueError, KeyError, TypeError) as exc:
        raise ModelError(f"{path} is not a GraphML file this program can read: {exc}") from exc
    try:
        return from_networkx(graph)
    except ModelError as exc:
        raise ModelError(f"{path}: {exc}") from exc


def _xml_text(text: str) -> str:
    """Text as XML will give it back: no control characters, line breaks as ``\n``."""
    return _XML_ILLEGAL.sub("", text.replace("\r\n", "\n").replace("\r", "\n"))


def _attributes(model: pydantic.BaseModel, exclude: set[str]) -> dict:
    return {k: v for k, v in model.model_dump(mode="json", exclude=exclude).items() if v is not None}


def _graph_fields(graph: nx.Graph) -> dict:
    fields = {k: graph.graph[k] for k in GRAPH_FIELDS if graph.graph.get(k) is not None}
    _build(Circuit, fields, "the graph")  # names the bad one
    return fields


def _known(data: dict, model: type[pydantic.BaseModel], exclude: set[str]) -> dict:
    return {k: v for k, v in data.items() if k in model.model_fields and k not in exclude}


def _build(model: type[pydantic.BaseModel], fields: dict, where: str):
    try:
        return model.model_validate(fields)
    except pydantic.ValidationError as exc:
        reasons = [describe_error(e) for e in exc.errors(include_url=False)]
        raise ModelError(f"{where}: " + "; ".join(reasons)) from exc
