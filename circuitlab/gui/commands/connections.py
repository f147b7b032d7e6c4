"""Commands that connect units and tie connections together."""

from PySide6.QtGui import QUndoCommand

from circuitlab.gui.document import STRUCTURE, VALUES, Document
from circuitlab.model import Connection, ModelError


class ConnectUnits(QUndoCommand):
    """Add one connection ``source -> target``; a duplicate raises ModelError at once."""

    def __init__(self, document: Document, source: str, target: str, weight: float = 0.0):
        super().__init__(f"Connect {source} to {target}" if source != target else f"Connect {source} to itself")
        c = document.circuit
        c.unit(source)
        c.unit(target)
        if c.has_connection(source, target):
            raise ModelError(f"{source} -> {target} is already connected")
        self.document = document
        self.connection = Connection(source=source, target=target, weight=weight)

    def redo(self) -> None:
        self.document.circuit.connections.append(self.connection)
        self.document.notify(STRUCTURE)

    def undo(self) -> None:
        self.document.circuit.connections.remove(self.connection)
        self.document.notify(STRUCTURE)


class _TieBase(QUndoCommand):
    def __init__(self, document: Document, keys: list[tuple[str, str]], text: str):
        super().__init__(text)
        self.document = document
        self.keys = [tuple(k) for k in keys]
        self.before = [(k, c.weight, c.trains, c.tie) for k in self.keys
                       for c in [document.circuit.connection(*k)]]

    def undo(self) -> None:
        c = self.document.circuit
        for key, weight, trains, tie in self.before:
            conn = c.connection(*key)
            conn.weight, conn.trains, conn.tie = weight, trains, tie
        self.document.notify(VALUES)


class TieConnections(_TieBase):
    """Put connections in one tie group: they take the group's (or the first one's) weight."""

    def __init__(self, document: Document, keys: list[tuple[str, str]], group: str):
        super().__init__(document, keys, f"Tie {len(keys)} connection{'s' if len(keys) > 1 else ''} as '{group}'")
        self.group = group

    def redo(self) -> None:
        self.document.circuit.tie(self.keys, self.group)
        self.document.notify(VALUES)


class UntieConnections(_TieBase):
    def __init__(self, document: Document, keys: list[tuple[str, str]]):
        super().__init__(document, keys, f"Untie {len(keys)} connection{'s' if len(keys) > 1 else ''}")

    def redo(self) -> None:
        self.document.circuit.untie(self.keys)
        self.document.notify(VALUES)
