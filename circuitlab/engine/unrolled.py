"""The unrolled network: one node per (unit, step), one edge per copy of a connection."""

import networkx as nx
import numpy as np

from circuitlab.engine.compile import Compiled, Parameters
from circuitlab.model import Circuit


def unrolled_graph(circuit: Circuit | Compiled, steps: int | None = None,
                   params: Parameters | None = None, sequence: int | None = None) -> nx.DiGraph:
    """The circuit unrolled over steps 0..``steps`` as a directed graph.

    Nodes are ``(unit name, t)`` with attributes ``unit`` and ``step``; each
    connection i -> j gives edges ``(i, t-1) -> (j, t)`` for t = 1..steps,
    with attributes ``weight`` (from ``params`` or the circuit) and
    ``connection`` (the pair of unit names). This is the tensor product of
    the circuit graph with a directed path over the steps. ``steps``
    defaults to the compiled batch's T. Given a compiled batch and a
    ``sequence`` index, nodes also carry ``clamped`` and ``targeted`` for
    that sequence (and only its steps are drawn).
    """
    if isinstance(circuit, Circuit):
        names = circuit.unit_names()
        pairs = [(names.index(c.source), names.index(c.target)) for c in circuit.connections]
        weights = [c.weight for c in circuit.connections]
        T = steps if steps is not None else max((s.length for s in circuit.sequences), default=0)
        compiled = None
    else:
        compiled = circuit
        names = compiled.unit_names
        pairs = [tuple(p) for p in compiled.connections]
        W = (params or compiled.parameters_from_circuit()).W
        weights = [float(W[i, j]) for i, j in pairs]
        T = steps if steps is not None else (
            int(compiled.lengths[sequence]) if sequence is not None else compiled.steps)
    g = nx.DiGraph()
    for t in range(T + 1):
        for j, name in enumerate(names):
            attrs = {"unit": name, "step": t}
            if compiled is not None and sequence is not None and t <= compiled.steps:
                attrs["clamped"] = bool(compiled.clamp_tm[t, sequence, j])
                attrs["targeted"] = bool(compiled.target_tm[t, sequence, j])
            g.add_node((name, t), **attrs)
    g.add_edges_from(
        ((names[i], t - 1), (names[j], t), {"weight": w, "connection": (names[i], names[j])})
        for t in range(1, T + 1) for (i, j), w in zip(pairs, weights))
    return g


def edge_arrays(compiled: Compiled, steps: int | None = None) -> tuple[np.ndarray, np.ndarray]:
    """The unrolled edges as index arrays (source node, target node), node = t * n + unit.

    For drawing large unrolled networks without building a graph object.
    """
    T = compiled.steps if steps is None else steps
    n = compiled.n_units
    src, dst = compiled.connections.T if len(compiled.connections) else (np.zeros(0, int),) * 2
    t = np.arange(1, T + 1)[:, None]
    return ((t - 1) * n + src).ravel(), (t * n + dst).ravel()
