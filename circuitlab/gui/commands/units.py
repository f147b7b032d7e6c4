"""Commands that add, remove, rename and move units (and remove connections)."""

import re

from PySide6.QtGui import QUndoCommand

from circuitlab.gui.document import STRUCTURE, VALUES, DATA, Document
from circuitlab.model import Connection, ModelError, Unit, UnitSchedule
from circuitlab.model.base import UNIT_NAME_PATTERN

MOVE_ID = 1001


class AddUnits(QUndoCommand):
    """Add units (with connections among them and their schedules): new units, paste, duplicate."""

    def __init__(self, document: Document, units: list[Unit], connections: list[Connection] = (),
                 schedules: dict[str, UnitSchedule] | None = None, text: str | None = None):
        super().__init__(text or (f"Add unit {units[0].name}" if len(units) == 1
                                  else f"Add {len(units)} units"))
        self.document = document
        self.units = list(units)
        self.connections = list(connections)
        self.schedules = dict(schedules or {})

    def redo(self) -> None:
        c = self.document.circuit
        for u in self.units:
            c.add_unit(u)
        c.connections.extend(self.connections)
        for name, sched in self.schedules.items():
            c.set_schedule(name, sched)
        self.document.notify(STRUCTURE, DATA)

    def undo(self) -> None:
        c = self.document.circuit
        for u in reversed(self.units):
            c.remove_unit(u.name)
        self.document.notify(STRUCTURE, DATA)


class RemoveItems(QUndoCommand):
    """Delete units (with every connection touching them) and connections.

    Undo puts everything back at its former index, with the units' schedule
    entries and sequence rows.
    """

    def __init__(self, document: Document, unit_names: list[str], connection_keys: list[tuple[str, str]]):
        names = set(unit_names)
        c = document.circuit
        self.document = document
        self.units = [(i, u) for i, u in enumerate(c.units) if u.name in names]
        keys = set(map(tuple, connection_keys))
        self.connections = [(i, k) for i, k in enumerate(c.connections)
                            if k.key in keys or k.source in names or k.target in names]
        self.schedules = {n: c.schedule[n] for n in names if n in c.schedule}
        self.rows = [(s, kind, n, rows[n]) for s in c.sequences
                     for kind, rows in (("clamps", s.clamps), ("targets", s.targets))
                     for n in names if n in rows]
        parts = []
        if self.units:
            parts.append(f"{len(self.units)} unit" + ("s" if len(self.units) > 1 else ""))
        if self.connections:
            parts.append(f"{len(self.connections)} connection" + ("s" if len(self.connections) > 1 else ""))
        super().__init__("Delete " + " and ".join(parts))

    def is_empty(self) -> bool:
        return not self.units and not self.connections

    def redo(self) -> None:
        c = self.document.circuit
        gone = {id(conn) for _, conn in self.connections}
        c.connections = [k for k in c.connections if id(k) not in gone]
        for _, u in self.units:
            c.remove_unit(u.name)
        self.document.notify(STRUCTURE, DATA)

    def undo(self) -> None:
        c = self.document.circuit
        for i, u in self.units:
            c.units.insert(i, u)
        for i, conn in self.connections:
            c.connections.insert(i, conn)
        c.schedule.update(self.schedules)
        for seq, kind, name, row in self.rows:
            getattr(seq, kind)[name] = row
        self.document.notify(STRUCTURE, DATA)


class RenameUnit(QUndoCommand):
    """Rename a unit everywhere it is referred to; a bad or taken name raises ModelError at once."""

    def __init__(self, document: Document, old: str, new: str):
        super().__init__(f"Rename {old} to {new}")
        c = document.circuit
        c.unit(old)
        if c.has_unit(new):
            raise ModelError(f"a unit named '{new}' already exists")
        if not re.match(UNIT_NAME_PATTERN, new):
            raise ModelError(f"'{new}' is not a valid unit name: use 1-64 letters, digits, '_', '.' or '-', "
                             "starting with a letter or '_'")
        self.document, self.old, self.new = document, old, new

    def redo(self) -> None:
        self.document.circuit.rename_unit(self.old, self.new)
        self.document.notify(STRUCTURE, DATA)

    def undo(self) -> None:
        self.document.circuit.rename_unit(self.new, self.old)
        self.document.notify(STRUCTURE, DATA)


class MoveUnits(QUndoCommand):
    """Move units to new canvas positions. One drag is one command.

    With ``merge=True`` (keyboard nudges) consecutive moves of the same units
    fold into one undo step; drags never merge.
    """

    def __init__(self, document: Document, moves: dict[str, tuple[tuple[float, float], tuple[float, float]]],
                 text: str | None = None, merge: bool = False):
        super().__init__(text or (f"Move {next(iter(moves))}" if len(moves) == 1 else f"Move {len(moves)} units"))
        self.document = document
        self.moves = dict(moves)
        self.merge = merge

    def id(self) -> int:
        return MOVE_ID

    def mergeWith(self, other: QUndoCommand) -> bool:
        if not (self.merge and isinstance(other, MoveUnits) and other.merge
                and other.moves.keys() == self.moves.keys()):
            return False
        self.moves = {n: (self.moves[n][0], other.moves[n][1]) for n in self.moves}
        return True

    def _apply(self, which: int) -> None:
        c = self.document.circuit
        for name, ends in self.moves.items():
            u = c.unit(name)
            u.x, u.y = ends[which]
        self.document.notify(VALUES)

    def redo(self) -> None:
        self._apply(1)

    def undo(self) -> None:
        self._apply(0)
