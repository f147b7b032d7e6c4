"""Moving trained values between the engine's arrays and the document's circuit.

Live display writes each snapshot's parameters straight into the circuit
(no undo step per snapshot); ``TrainCommand`` then records a whole run as one
undoable step, holding the values before and after it.
"""

from dataclasses import dataclass

import numpy as np
from PySide6.QtGui import QUndoCommand

from circuitlab.gui.document import VALUES, Document
from circuitlab.model import Circuit, TrainingRecord


@dataclass
class Values:
    """The trainable values of a circuit, keyed by name (so they survive unrelated edits)."""

    weights: dict[tuple[str, str], float]
    biases: dict[str, float]
    initial: dict[str, float | None]
    trained: TrainingRecord | None


def capture_values(circuit: Circuit) -> Values:
    return Values({c.key: c.weight for c in circuit.connections},
                  {u.name: u.bias for u in circuit.units},
                  {u.name: u.initial_value for u in circuit.units},
                  circuit.trained.model_copy() if circuit.trained else None)


def restore_values(circuit: Circuit, values: Values) -> None:
    """Write ``values`` back; connections or units that no longer exist are skipped."""
    for c in circuit.connections:
        if c.key in values.weights:
            c.weight = values.weights[c.key]
    for u in circuit.units:
        if u.name in values.biases:
            u.bias = values.biases[u.name]
            u.initial_value = values.initial[u.name]
    circuit.trained = values.trained.model_copy() if values.trained else None


def apply_parameters(circuit: Circuit, unit_names: list[str], W: np.ndarray, bias: np.ndarray,
                     init: np.ndarray) -> None:
    """Write engine parameters (unit order ``unit_names``) into ``circuit`` in place.

    Only learned initial states are written; fixed ones stay as the user set them.
    """
    index = {name: i for i, name in enumerate(unit_names)}
    for c in circuit.connections:
        i, j = index.get(c.source), index.get(c.target)
        if i is not None and j is not None:
            c.weight = float(W[i, j])
    for u in circuit.units:
        j = index.get(u.name)
        if j is None:
            continue
        u.bias = float(bias[j])
        if u.initial_mode == "learned":
            u.initial_value = float(init[j])


class TrainCommand(QUndoCommand):
    """One training run (or a re-initialisation) as a single undoable step."""

    def __init__(self, document: Document, text: str, before: Values, after: Values):
        super().__init__(text)
        self.document = document
        self.before = before
        self.after = after

    def redo(self) -> None:
        restore_values(self.document.circuit, self.after)
        self.document.notify(VALUES)

    def undo(self) -> None:
        restore_values(self.document.circuit, self.before)
        self.document.notify(VALUES)
