"""The editor's live document: a plain model circuit, an undo stack, and change signals.

The model has no signals of its own; every edit reaches it through an undo
command pushed here, and the command tells the document what kind of thing it
changed so each view refreshes only what it shows.
"""

from PySide6.QtCore import QObject, Signal
from PySide6.QtGui import QUndoCommand, QUndoStack

from circuitlab.model import Circuit

STRUCTURE = "structure"  # units or connections added, removed or renamed: recompile
VALUES = "values"        # weights, biases, unit properties, positions
DATA = "data"            # schedule and sequences
SETTINGS = "settings"    # training settings
KINDS = (STRUCTURE, VALUES, DATA, SETTINGS)


class Document(QObject):
    """The circuit being edited, with its file path and undo history."""

    structure_changed = Signal()
    values_changed = Signal()
    data_changed = Signal()
    settings_changed = Signal()
    changed = Signal()        # after any of the above
    file_changed = Signal()   # path or modified flag changed
    replaced = Signal()       # a different circuit was loaded (New, Open, Revert, recovery)

    def __init__(self, circuit: Circuit | None = None, path: str | None = None, parent=None):
        super().__init__(parent)
        self._circuit = circuit if circuit is not None else Circuit()
        self._path = path
        self.undo_stack = QUndoStack(self)
        # a bound method, not a lambda: Qt drops the connection when the document is deleted
        # (a lambda outlives it and fires on the half-destroyed document as its stack clears)
        self.undo_stack.cleanChanged.connect(self._clean_changed)

    def _clean_changed(self, _clean: bool) -> None:
        self.file_changed.emit()

    @property
    def circuit(self) -> Circuit:
        return self._circuit

    @property
    def path(self) -> str | None:
        return self._path

    @property
    def is_modified(self) -> bool:
        return not self.undo_stack.isClean()

    def push(self, command: QUndoCommand) -> None:
        """Run ``command`` (its ``redo``) and record it for undo."""
        self.undo_stack.push(command)

    def notify(self, *kinds: str) -> None:
        """Called by commands after they change the circuit in place."""
        for kind in kinds:
            getattr(self, f"{kind}_changed").emit()
        self.changed.emit()

    def replace(self, circuit: Circuit, path: str | None) -> None:
        """Load another circuit: the undo history starts afresh."""
        self._circuit = circuit
        self._path = path
        self.undo_stack.clear()
        self.undo_stack.setClean()
        self.replaced.emit()
        self.notify(*KINDS)
        self.file_changed.emit()

    def mark_saved(self, path: str) -> None:
        self._path = path
        self.undo_stack.setClean()
        self.file_changed.emit()
