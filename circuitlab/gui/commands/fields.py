"""Commands that set a field of several units, connections or unit schedules at once.

Consecutive edits of the same field on the same items merge into one undo
step, so typing a value or stepping it with the wheel is undone in one go.
"""

from typing import Any

from PySide6.QtGui import QUndoCommand

from circuitlab.gui.document import DATA, VALUES, Document
from circuitlab.model import UnitSchedule

FIELD_ID = 1002

LABELS = {
    "activation": "activation", "bias": "bias", "bias_trains": "bias training",
    "initial_mode": "initial state", "initial_value": "initial value", "sign": "sign constraint",
    "weight": "weight", "trains": "weight training", "clamp": "clamp mode",
    "clamp_steps": "clamped steps", "target": "target mode", "target_steps": "target steps",
    "target_last": "number of final target steps",
}


class _SetFields(QUndoCommand):
    kind = VALUES
    noun = "item"

    def __init__(self, document: Document, keys: list, field: str, value: Any):
        self.document = document
        self.keys = list(keys)
        self.field = field
        self.value = value
        self.old = [getattr(self._get(k), field) for k in self.keys]
        what = keys[0] if len(keys) == 1 else f"{len(keys)} {self.noun}s"
        if isinstance(what, tuple):
            what = f"{what[0]} -> {what[1]}"
        super().__init__(f"Set {LABELS.get(field, field)} of {what}")

    def _get(self, key):
        raise NotImplementedError

    def _set(self, key, value) -> None:
        setattr(self._get(key), self.field, value)

    def id(self) -> int:
        return FIELD_ID

    def mergeWith(self, other: QUndoCommand) -> bool:
        if type(other) is not type(self) or other.field != self.field or other.keys != self.keys:
            return False
        self.value = other.value
        return True

    def redo(self) -> None:
        for k in self.keys:
            self._set(k, self.value)
        self.document.notify(self.kind)

    def undo(self) -> None:
        for k, v in zip(self.keys, self.old):
            self._set(k, v)
        self.document.notify(self.kind)


class SetUnitFields(_SetFields):
    """Set one field (bias, activation, initial mode...) of the named units."""

    noun = "unit"

    def _get(self, key):
        return self.document.circuit.unit(key)


class SetConnectionFields(_SetFields):
    """Set one field (weight, trains) of connections given by ``(source, target)`` keys.

    A tied connection shares its parameter with its group, so the change
    reaches every member of the group.
    """

    noun = "connection"

    def __init__(self, document: Document, keys: list, field: str, value: Any):
        c = document.circuit
        expanded: list[tuple[str, str]] = []
        for k in keys:
            conn = c.connection(*k)
            for m in c.tie_members(conn.tie) if conn.tie else [conn]:
                if m.key not in expanded:
                    expanded.append(m.key)
        super().__init__(document, expanded, field, value)

    def _get(self, key):
        return self.document.circuit.connection(*key)


class SetScheduleFields(_SetFields):
    """Set one field of the named units' schedules (clamp mode, target mode, steps)."""

    kind = DATA
    noun = "unit"

    def _get(self, key):
        return self.document.circuit.schedule_for(key)

    def _set(self, key, value) -> None:
        sched = self.document.circuit.schedule_for(key).model_copy(update={self.field: value})
        self.document.circuit.set_schedule(key, UnitSchedule.model_validate(sched.model_dump()))
