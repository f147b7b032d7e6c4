"""Undo commands: every edit of the document is one of these.

Each command changes ``document.circuit`` in place in ``redo``/``undo`` and
then calls ``document.notify(kind)`` so the views refresh what they show.
"""

from circuitlab.gui.commands.connections import ConnectUnits, TieConnections, UntieConnections
from circuitlab.gui.commands.fields import SetConnectionFields, SetScheduleFields, SetUnitFields
from circuitlab.gui.commands.units import AddUnits, MoveUnits, RemoveItems, RenameUnit

__all__ = [
    "AddUnits", "ConnectUnits", "MoveUnits", "RemoveItems", "RenameUnit", "SetConnectionFields",
    "SetScheduleFields", "SetUnitFields", "TieConnections", "UntieConnections",
]
