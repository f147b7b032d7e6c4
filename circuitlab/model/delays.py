"""The delay check: how many steps the clamped inputs need before they can reach each target unit.

Every connection carries a state one step forward, so an input clamped at
step t can first change a unit ``d`` connections downstream at step
``t + d``. A target set before that step is judged on a state the inputs
have not yet touched (it depends only on initial states and biases), which
is a common surprise when predicting a series: input -> hidden -> output
answers two steps after the input, not one.

``input_reach`` counts the fewest connections from any clamped unit to each
target unit (a breadth-first search from all clamped units at once, linear in
the number of connections); ``delay_check`` adds, for one sequence, the first
step each target unit can be influenced and the target steps that come
earlier. Paths are counted through the graph alone: a unit clamped at some
step on the way also passes nothing on at that step, so the true first
influence can only be later than the count, never earlier.
"""

import heapq
from collections import deque
from dataclasses import dataclass, field

from circuitlab.model.schedule import clamp_mask, target_mask


def clamped_units(circuit) -> list[str]:
    """Units the schedule clamps to data at some step (or whose initial state is data)."""
    return [u.name for u in circuit.units
            if circuit.schedule_for(u.name).clamp != "none" or u.initial_mode == "clamped"]


def targeted_units(circuit) -> list[str]:
    return [u.name for u in circuit.units if circuit.schedule_for(u.name).target != "none"]


def _successors(circuit) -> dict[str, list[str]]:
    out: dict[str, list[str]] = {u.name: [] for u in circuit.units}
    for c in circuit.connections:
        if c.source in out and c.target in out:
            out[c.source].append(c.target)
    return out


def reach_from(circuit, sources) -> dict[str, int]:
    """For every unit reachable from ``sources``: the fewest connections (at least one) from any source.

    A source counts as reached only through a path of one or more connections
    (its own clamp is not an influence of the inputs on it through the circuit).
    """
    succ = _successors(circuit)
    dist: dict[str, int] = {}
    queue: deque[str] = deque()
    for s in sources:
        for v in succ.get(s, ()):
            if v not in dist:
                dist[v] = 1
                queue.append(v)
    while queue:
        u = queue.popleft()
        d = dist[u] + 1
        for v in succ[u]:
            if v not in dist:
                dist[v] = d
                queue.append(v)
    return dist


def input_reach(circuit) -> dict[str, int | None]:
    """For each target unit: the fewest connections from any clamped unit to it (None: none reaches it)."""
    dist = reach_from(circuit, clamped_units(circuit))
    return {name: dist.get(name) for name in targeted_units(circuit)}


@dataclass
class UnitDelay:
    """The delay check of one target unit in one sequence."""

    unit: str
    connections: int | None      # fewest connections from a clamped unit (None: unreachable)
    first_step: int | None       # the first step the inputs can influence it (None: never in this sequence)
    early_targets: list[int] = field(default_factory=list)  # target steps before ``first_step``

    def describe(self) -> str:
        if self.connections is None:
            reach = "no clamped input reaches it through the connections"
        else:
            n = self.connections
            reach = f"inputs need {n} step{'s' if n != 1 else ''} to reach it"
            if self.first_step is not None:
                reach += f" (first influenced at step {self.first_step})"
        text = f"{self.unit}: {reach}"
        if self.early_targets:
            text += f"; targets at {_steps_text(self.early_targets)} cannot depend on the inputs yet"
        return text


def delay_check(circuit, sequence) -> list[UnitDelay]:
    """For each target unit, the fewest steps from the inputs and the target steps of ``sequence``
    that come before the inputs can influence it."""
    sources = clamped_units(circuit)
    succ = _successors(circuit)
    steps = sequence.steps
    # the first step at which each unit's state can carry an input: a shortest-path search (all
    # connections one step long) where each clamped unit enters at its first clamped step
    heap: list[tuple[int, str]] = []
    for name in sources:
        mask = clamp_mask(circuit.unit(name), circuit.schedule_for(name), sequence)
        t0 = next((t for t, m in enumerate(mask) if m), None)
        if t0 is not None:
            heap.append((t0, name))
    heapq.heapify(heap)
    first: dict[str, int] = {}
    done: set[str] = set()
    while heap:
        t, u = heapq.heappop(heap)
        if u in done:
            continue
        done.add(u)
        for v in succ[u]:
            if v not in first or first[v] > t + 1:
                first[v] = t + 1
                heapq.heappush(heap, (t + 1, v))
    reach = reach_from(circuit, sources)
    out = []
    for name in targeted_units(circuit):
        mask = target_mask(circuit.unit(name), circuit.schedule_for(name), sequence)
        f = first.get(name)
        f = f if f is not None and f < steps else None
        early = [t for t, m in enumerate(mask) if m and (f is None or t < f)]
        out.append(UnitDelay(name, reach.get(name), f, early))
    return out


def _steps_text(steps: list[int]) -> str:
    if len(steps) == 1:
        return f"step {steps[0]}"
    if steps == list(range(steps[0], steps[-1] + 1)):
        return f"steps {steps[0]}..{steps[-1]}"
    shown = ", ".join(str(t) for t in steps[:6])
    return f"steps {shown}" + (", ..." if len(steps) > 6 else "")
