"""Automatic arrangement of units with a force-directed layout from networkx."""

import math

import networkx as nx

from circuitlab.model import Circuit

SPACING = 120.0  # typical distance between neighbouring units, in canvas pixels


def arrange_positions(circuit: Circuit, seed: int = 0) -> dict[str, tuple[float, float]]:
    """New positions for every unit: Fruchterman-Reingold (networkx ``spring_layout``),
    centred where the circuit is now and scaled so neighbours sit about ``SPACING`` apart.
    Connection direction is ignored for the layout; self-connections do not matter.
    """
    g = nx.Graph()
    g.add_nodes_from(circuit.unit_names())
    g.add_edges_from((c.source, c.target) for c in circuit.connections if c.source != c.target)
    n = g.number_of_nodes()
    pos = nx.spring_layout(g, seed=seed, iterations=200)
    cx = sum(u.x for u in circuit.units) / n
    cy = sum(u.y for u in circuit.units) / n
    size = SPACING * math.sqrt(n) / 2  # spring_layout fills [-1, 1]^2
    return {name: (round(cx + float(p[0]) * size, 1), round(cy + float(p[1]) * size, 1))
            for name, p in pos.items()}
