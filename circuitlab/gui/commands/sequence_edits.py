"""Undo commands for sequences and the schedule: cell values, presets, the sequence list.

Each changes ``document.circuit`` in place and calls ``document.notify(DATA)``
(``VALUES`` too when a unit's initial mode changes). Commands refer to
sequences by name and keep copies of what they replace, so undo restores
exactly what was there.
"""

from PySide6.QtGui import QUndoCommand

from circuitlab.gui.document import DATA, VALUES, Document
from circuitlab.model import ModelError, Sequence, UnitSchedule

# (layer, unit, step, value): layer is "clamp" or "target"; value None clears the cell.
CellChange = tuple[str, str, int, float | None]


class SetCells(QUndoCommand):
    """Set or clear clamp and target values of cells of one sequence."""

    def __init__(self, document: Document, sequence: str, changes: list[CellChange], text: str = ""):
        n = len(changes)
        super().__init__(text or f"Set {n} value{'s' if n != 1 else ''} in {sequence}")
        self.document = document
        self.sequence = sequence
        seq = document.circuit.sequence(sequence)
        for layer, unit, step, _ in changes:
            if layer == "target" and step == 0:
                raise ModelError("step 0 is the initial state and cannot carry a target")
            if not 0 <= step <= seq.length:
                raise ModelError(f"step {step} is outside 0..{seq.length} of {sequence}")
        self.changes = list(changes)
        self.old = [(layer, unit, step, seq.value(layer, unit, step)) for layer, unit, step, _ in changes]

    def _apply(self, changes: list[CellChange]) -> None:
        seq = self.document.circuit.sequence(self.sequence)
        for layer, unit, step, value in changes:
            seq.set_value(layer, unit, step, value)
        self.document.notify(DATA)

    def redo(self) -> None:
        self._apply(self.changes)

    def undo(self) -> None:
        self._apply(list(reversed(self.old)))


class SetSchedules(QUndoCommand):
    """Give units new schedules and initial modes (a preset applied to some rows)."""

    def __init__(self, document: Document, changes: dict[str, tuple[UnitSchedule, str]], text: str):
        super().__init__(text)
        self.document = document
        c = document.circuit
        self.new = {u: (s.model_copy(deep=True), m) for u, (s, m) in changes.items()}
        self.old = {u: (c.schedule_for(u).model_copy(deep=True), c.unit(u).initial_mode) for u in changes}

    def _apply(self, states: dict[str, tuple[UnitSchedule, str]]) -> None:
        c = self.document.circuit
        modes_changed = False
        for unit, (schedule, mode) in states.items():
            c.set_schedule(unit, schedule.model_copy(deep=True))
            if c.unit(unit).initial_mode != mode:
                c.unit(unit).initial_mode = mode
                modes_changed = True
        kinds = (DATA, VALUES) if modes_changed else (DATA,)
        self.document.notify(*kinds)

    def redo(self) -> None:
        self._apply(self.new)

    def undo(self) -> None:
        self._apply(self.old)


class AddSequences(QUndoCommand):
    """Insert new sequences (copies of those given) at ``index`` (default: the end)."""

    def __init__(self, document: Document, sequences: list[Sequence], index: int | None = None,
                 text: str = ""):
        n = len(sequences)
        super().__init__(text or (f"Add sequence {sequences[0].name}" if n == 1 else f"Add {n} sequences"))
        self.document = document
        names = {s.name for s in document.circuit.sequences}
        for s in sequences:
            if s.name in names:
                raise ModelError(f"a sequence named '{s.name}' already exists")
            names.add(s.name)
        self.sequences = [s.model_copy(deep=True) for s in sequences]
        self.index = len(document.circuit.sequences) if index is None else index

    def redo(self) -> None:
        self.document.circuit.sequences[self.index:self.index] = [
            s.model_copy(deep=True) for s in self.sequences]
        self.document.notify(DATA)

    def undo(self) -> None:
        del self.document.circuit.sequences[self.index:self.index + len(self.sequences)]
        self.document.notify(DATA)


class RemoveSequences(QUndoCommand):
    """Delete sequences by name."""

    def __init__(self, document: Document, names: list[str]):
        super().__init__(f"Delete sequence {names[0]}" if len(names) == 1 else f"Delete {len(names)} sequences")
        self.document = document
        seqs = document.circuit.sequences
        self.removed = sorted(((seqs.index(document.circuit.sequence(n)), document.circuit.sequence(n)
                                .model_copy(deep=True)) for n in names), key=lambda p: p[0])

    def redo(self) -> None:
        for index, _ in reversed(self.removed):
            del self.document.circuit.sequences[index]
        self.document.notify(DATA)

    def undo(self) -> None:
        for index, seq in self.removed:
            self.document.circuit.sequences.insert(index, seq.model_copy(deep=True))
        self.document.notify(DATA)


class RenameSequence(QUndoCommand):
    def __init__(self, document: Document, old: str, new: str):
        super().__init__(f"Rename sequence {old} to {new}")
        new = new.strip()
        if not 1 <= len(new) <= 128:
            raise ModelError("a sequence name has 1 to 128 characters")
        document.circuit.sequence(old)
        if new != old and any(s.name == new for s in document.circuit.sequences):
            raise ModelError(f"a sequence named '{new}' already exists")
        self.document, self.old, self.new = document, old, new

    def _rename(self, old: str, new: str) -> None:
        self.document.circuit.sequence(old).name = new
        self.document.notify(DATA)

    def redo(self) -> None:
        self._rename(self.old, self.new)

    def undo(self) -> None:
        self._rename(self.new, self.old)


class SetHeldOut(QUndoCommand):
    """Mark sequences as held out (for testing, not trained on) or as training sequences."""

    def __init__(self, document: Document, names: list[str], held_out: bool):
        what = names[0] if len(names) == 1 else f"{len(names)} sequences"
        super().__init__(f"{'Hold out' if held_out else 'Train on'} {what}")
        self.document, self.held_out = document, held_out
        self.old = {n: document.circuit.sequence(n).held_out for n in names}

    def redo(self) -> None:
        for n in self.old:
            self.document.circuit.sequence(n).held_out = self.held_out
        self.document.notify(DATA)

    def undo(self) -> None:
        for n, v in self.old.items():
            self.document.circuit.sequence(n).held_out = v
        self.document.notify(DATA)


class MoveSequence(QUndoCommand):
    """Move a sequence to another place in the list."""

    def __init__(self, document: Document, name: str, index: int):
        super().__init__(f"Move sequence {name}")
        seqs = document.circuit.sequences
        self.document, self.name = document, name
        self.old = seqs.index(document.circuit.sequence(name))
        self.new = max(0, min(index, len(seqs) - 1))

    def _move(self, to: int) -> None:
        seqs = self.document.circuit.sequences
        seq = self.document.circuit.sequence(self.name)
        seqs.remove(seq)
        seqs.insert(to, seq)
        self.document.notify(DATA)

    def redo(self) -> None:
        self._move(self.new)

    def undo(self) -> None:
        self._move(self.old)


class ResizeSequence(QUndoCommand):
    """Change a sequence's length; values cut off come back on undo."""

    def __init__(self, document: Document, name: str, length: int):
        super().__init__(f"Set length of {name} to {length}")
        if not 1 <= length <= 100_000:
            raise ModelError("a sequence's length must lie in 1..100000")
        self.document, self.name, self.length = document, name, length
        self.before = document.circuit.sequence(name).model_copy(deep=True)

    def redo(self) -> None:
        self.document.circuit.sequence(self.name).resize(self.length)
        self.document.notify(DATA)

    def undo(self) -> None:
        seq = self.document.circuit.sequence(self.name)
        seq.length = self.before.length
        seq.clamps = {u: list(r) for u, r in self.before.clamps.items()}
        seq.targets = {u: list(r) for u, r in self.before.targets.items()}
        self.document.notify(DATA)


class ReplaceSequences(QUndoCommand):
    """Replace the whole sequence list (generating into existing rows, importing with replace)."""

    def __init__(self, document: Document, sequences: list[Sequence], text: str):
        super().__init__(text)
        names = [s.name for s in sequences]
        if len(set(names)) != len(names):
            raise ModelError("two of the sequences have the same name")
        self.document = document
        self.old = [s.model_copy(deep=True) for s in document.circuit.sequences]
        self.new = [s.model_copy(deep=True) for s in sequences]

    def _put(self, seqs: list[Sequence]) -> None:
        self.document.circuit.sequences[:] = [s.model_copy(deep=True) for s in seqs]
        self.document.notify(DATA)

    def redo(self) -> None:
        self._put(self.new)

    def undo(self) -> None:
        self._put(self.old)
