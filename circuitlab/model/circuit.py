"""The circuit: units, delay-one connections, schedule, sequences and training settings.

All edits go through the methods here, which keep the parts consistent (a
removed unit takes its connections, schedule entry and sequence rows with it;
a rename follows into all of them). Edits that cannot be made raise
``ModelError`` with a plain message.
"""

from typing import Iterable, Literal

from pydantic import Field

from circuitlab.model.base import ModelBase, UnitName
from circuitlab.model.connections import Connection
from circuitlab.model.errors import ModelError
from circuitlab.model.schedule import UnitSchedule
from circuitlab.model.sequences import Sequence
from circuitlab.model.settings import TrainingRecord, TrainingSettings
from circuitlab.model.units import Unit

FORMAT_NAME = "circuitlab-circuit"
FORMAT_VERSION = 1


class Circuit(ModelBase):
    """A recurrent circuit with everything needed to train and run it."""

    format: Literal["circuitlab-circuit"] = FORMAT_NAME
    version: Literal[1] = FORMAT_VERSION
    name: str = Field(default="untitled", max_length=200)
    description: str = Field(default="", max_length=10_000)
    units: list[Unit] = Field(default_factory=list)
    connections: list[Connection] = Field(default_factory=list)
    schedule: dict[UnitName, UnitSchedule] = Field(default_factory=dict)
    sequences: list[Sequence] = Field(default_factory=list)
    sequences_file: str | None = Field(
        default=None, min_length=1, max_length=1000,
        description="a CSV file of the sequences (long layout), relative to the circuit file; "
        "when set, the sequences are read from it on load and written to it on save")
    training: TrainingSettings = Field(default_factory=TrainingSettings)
    trained: TrainingRecord | None = None

    # ----------------------------------------------------------------- look-up
    def unit_names(self) -> list[str]:
        return [u.name for u in self.units]

    def has_unit(self, name: str) -> bool:
        return any(u.name == name for u in self.units)

    def unit(self, name: str) -> Unit:
        for u in self.units:
            if u.name == name:
                return u
        raise ModelError(f"there is no unit named '{name}'")

    def unit_index(self, name: str) -> int:
        for i, u in enumerate(self.units):
            if u.name == name:
                return i
        raise ModelError(f"there is no unit named '{name}'")

    def has_connection(self, source: str, target: str) -> bool:
        return any(c.source == source and c.target == target for c in self.connections)

    def connection(self, source: str, target: str) -> Connection:
        for c in self.connections:
            if c.source == source and c.target == target:
                return c
        raise ModelError(f"there is no connection {source} -> {target}")

    def schedule_for(self, name: str) -> UnitSchedule:
        """The unit's schedule (a fresh default one if it has none; not stored)."""
        return self.schedule.get(name) or UnitSchedule()

    def sequence(self, name: str) -> Sequence:
        for s in self.sequences:
            if s.name == name:
                return s
        raise ModelError(f"there is no sequence named '{name}'")

    def fresh_unit_name(self, stem: str = "u") -> str:
        """A unit name not yet used: ``stem1``, ``stem2``..."""
        taken = set(self.unit_names())
        i = 1
        while f"{stem}{i}" in taken:
            i += 1
        return f"{stem}{i}"

    # ------------------------------------------------------------------- units
    def add_unit(self, unit: Unit, index: int | None = None) -> Unit:
        if self.has_unit(unit.name):
            raise ModelError(f"a unit named '{unit.name}' already exists")
        self.units.insert(len(self.units) if index is None else index, unit)
        return unit

    def rename_unit(self, old: str, new: str) -> None:
        """Rename a unit everywhere it is referred to."""
        unit = self.unit(old)
        if new == old:
            return
        if self.has_unit(new):
            raise ModelError(f"a unit named '{new}' already exists")
        Unit(name=new)  # raises if the name is not a valid unit name
        unit.name = new
        for c in self.connections:
            if c.source == old:
                c.source = new
            if c.target == old:
                c.target = new
        if old in self.schedule:
            self.schedule[new] = self.schedule.pop(old)
        for s in self.sequences:
            for rows in (s.clamps, s.targets):
                if old in rows:
                    rows[new] = rows.pop(old)

    def remove_unit(self, name: str) -> Unit:
        """Remove a unit with its connections, schedule entry and sequence rows."""
        unit = self.unit(name)
        self.units.remove(unit)
        self.connections = [c for c in self.connections if name not in (c.source, c.target)]
        self.schedule.pop(name, None)
        for s in self.sequences:
            s.clamps.pop(name, None)
            s.targets.pop(name, None)
        return unit

    # ------------------------------------------------------------- connections
    def connect(self, source: str, target: str, weight: float = 0.0, **fields) -> Connection:
        """Add ``source -> target``; at most one connection per ordered pair."""
        self.unit(source)
        self.unit(target)
        if self.has_connection(source, target):
            raise ModelError(f"{source} -> {target} is already connected")
        conn = Connection(source=source, target=target, weight=weight, **fields)
        self.connections.append(conn)
        return conn

    def disconnect(self, source: str, target: str) -> Connection:
        conn = self.connection(source, target)
        self.connections.remove(conn)
        return conn

    def tie(self, pairs: Iterable[tuple[str, str]], group: str) -> None:
        """Put connections in one tie group; they take the weight and trainability of the first."""
        conns = [self.connection(s, t) for s, t in pairs]
        if not conns:
            raise ModelError("tying needs at least one connection")
        members = self.tie_members(group) or conns
        first = members[0]
        for c in conns:
            c.tie = group
            c.weight = first.weight
            c.trains = first.trains

    def untie(self, pairs: Iterable[tuple[str, str]]) -> None:
        for s, t in pairs:
            self.connection(s, t).tie = None

    def tie_members(self, group: str) -> list[Connection]:
        return [c for c in self.connections if c.tie == group]

    def tie_groups(self) -> dict[str, list[Connection]]:
        groups: dict[str, list[Connection]] = {}
        for c in self.connections:
            if c.tie is not None:
                groups.setdefault(c.tie, []).append(c)
        return groups

    def freeze(
        self,
        connections: Iterable[tuple[str, str]] = (),
        biases: Iterable[str] = (),
        frozen: bool = True,
    ) -> None:
        """Stop (or, with ``frozen=False``, resume) training of weights and biases.

        Freezing a tied connection freezes its whole tie group, since they share
        one parameter.
        """
        for s, t in connections:
            conn = self.connection(s, t)
            for c in self.tie_members(conn.tie) if conn.tie else [conn]:
                c.trains = not frozen
        for name in biases:
            self.unit(name).bias_trains = not frozen

    # ---------------------------------------------------------------- schedule
    def set_schedule(self, name: str, schedule: UnitSchedule) -> None:
        self.unit(name)
        if schedule.is_default():
            self.schedule.pop(name, None)
        else:
            self.schedule[name] = schedule

    # --------------------------------------------------------------- sequences
    def add_sequence(self, sequence: Sequence, index: int | None = None) -> Sequence:
        if any(s.name == sequence.name for s in self.sequences):
            raise ModelError(f"a sequence named '{sequence.name}' already exists")
        self.sequences.insert(len(self.sequences) if index is None else index, sequence)
        return sequence

    def remove_sequence(self, name: str) -> Sequence:
        seq = self.sequence(name)
        self.sequences.remove(seq)
        return seq

    def copy(self) -> "Circuit":
        """A deep copy that shares nothing with this circuit."""
        return self.model_copy(deep=True)
