"""Automatic arrangement of units with a force-directed layout from networkx."""

import networkx as nx
import numpy as np

from circuitlab.model import Circuit

SPACING = 130.0  # typical distance from a unit to its nearest neighbour, in canvas pixels


def arrange_positions(circuit: Circuit, seed: int = 0) -> dict[str, tuple[float, float]]:
    """New positions for every unit: Fruchterman-Reingold (networkx ``spring_layout``),
    centred where the circuit is now and scaled so that a unit's nearest neighbour
    sits about ``SPACING`` away. Connection direction and self-connections do not
    matter for the layout.
    """
    g = nx.Graph()
    g.add_nodes_from(circuit.unit_names())
    g.add_edges_from((c.source, c.target) for c in circuit.connections if c.source != c.target)
    pos = nx.spring_layout(g, seed=seed, iterations=200)
    names = list(pos)
    xy = np.array([pos[n] for n in names], dtype=float)
    d = np.hypot(*(xy[:, None, :] - xy[None, :, :]).transpose(2, 0, 1))
    np.fill_diagonal(d, np.inf)
    nearest = np.median(d.min(axis=1)) if len(names) > 1 else 1.0
    xy = (xy - xy.mean(axis=0)) * (SPACING / max(nearest, 1e-9))
    cx = sum(u.x for u in circuit.units) / len(circuit.units)
    cy = sum(u.y for u in circuit.units) / len(circuit.units)
    return {n: (round(cx + float(x), 1), round(cy + float(y), 1)) for n, (x, y) in zip(names, xy)}
