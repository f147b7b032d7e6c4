"""The training settings panel: optimizer, rates, epochs, batch, loss, clipping, decay, truncation, seed.

Settings belong to the circuit (they are saved in its file), so every change
is an undoable command on the document. While training runs the controller
passes the new settings to the trainer, which uses them from the next epoch.
"""

from pydantic import ValidationError
from PySide6.QtGui import QUndoCommand
from PySide6.QtWidgets import (QAbstractSpinBox, QCheckBox, QComboBox, QDoubleSpinBox, QFormLayout,
                               QHBoxLayout, QLabel, QSpinBox, QWidget)

from circuitlab.gui.document import SETTINGS, Document
from circuitlab.model import TrainingSettings

_MERGE_ID = 0x5E77  # successive edits of the same field merge into one undo step
DEFAULT_CLIP = 1.0        # gradient-norm limit offered when clipping is switched on
DEFAULT_TRUNCATION = 20   # steps offered when truncation is switched on


class ChangeSettings(QUndoCommand):
    """Replace the circuit's training settings (one field at a time, merging repeats)."""

    def __init__(self, document: Document, new: TrainingSettings, field: str):
        super().__init__(f"Change {field.replace('_', ' ')}")
        self.document = document
        self.old = document.circuit.training.model_copy()
        self.new = new
        self.field = field

    def id(self) -> int:
        return _MERGE_ID

    def mergeWith(self, other) -> bool:
        if not isinstance(other, ChangeSettings) or other.field != self.field:
            return False
        self.new = other.new
        return True

    def redo(self) -> None:
        self.document.circuit.training = self.new.model_copy()
        self.document.notify(SETTINGS)

    def undo(self) -> None:
        self.document.circuit.training = self.old.model_copy()
        self.document.notify(SETTINGS)


def _double(lo: float, hi: float, decimals: int, tip: str) -> QDoubleSpinBox:
    box = QDoubleSpinBox()
    box.setRange(lo, hi)
    box.setDecimals(decimals)
    box.setStepType(QAbstractSpinBox.StepType.AdaptiveDecimalStepType)
    box.setKeyboardTracking(False)
    box.setToolTip(tip)
    return box


def _int(lo: int, hi: int, tip: str) -> QSpinBox:
    box = QSpinBox()
    box.setRange(lo, hi)
    box.setKeyboardTracking(False)
    box.setToolTip(tip)
    return box


class SettingsPanel(QWidget):
    """A form bound to ``document.circuit.training``."""

    def __init__(self, document: Document, parent=None):
        super().__init__(parent)
        self.document = document
        self._loading = False
        self.optimizer = QComboBox()
        self.optimizer.addItem("Adam", "adam")
        self.optimizer.addItem("Gradient descent with momentum", "sgd")
        self.optimizer.setToolTip("Adam adapts a step size per parameter; gradient descent uses the "
                                  "learning rate and momentum as given")
        self.learning_rate = _double(1e-6, 100.0, 6, "Step size of each update")
        self.momentum = _double(0.0, 0.999, 3, "Gradient descent: fraction of the last update kept "
                                "(Adam uses its own averages)")
        self.epochs = _int(1, 10_000_000, "How many epochs a training run lasts")
        self.batch_size = _int(0, 1_000_000, "Sequences per update; 0 puts all training sequences in one batch")
        self.batch_size.setSpecialValueText("all sequences")
        self.loss = QComboBox()
        self.loss.addItem("Squared error", "squared")
        self.loss.addItem("Cross-entropy (logistic targets)", "cross_entropy")
        self.clip_on = QCheckBox()
        self.clip_on.setToolTip("Rescale the gradient when its norm exceeds this value")
        self.clip_norm = _double(1e-4, 1e6, 4, "Largest gradient norm allowed")
        self.weight_decay = _double(0.0, 10.0, 6, "L2 penalty on the weights, added to each update")
        self.truncate_on = QCheckBox()
        self.truncate_on.setToolTip("Backpropagate at most this many steps (an approximation of the gradient)")
        self.truncation = _int(1, 100_000, "Steps backpropagated")
        self.seed = _int(0, 2**31 - 1, "Seed for weight initialisation and batch order")

        form = QFormLayout(self)
        form.setContentsMargins(6, 6, 6, 6)
        form.addRow("Optimizer", self.optimizer)
        form.addRow("Learning rate", self.learning_rate)
        form.addRow("Momentum", self.momentum)
        form.addRow("Epochs", self.epochs)
        form.addRow("Batch size", self.batch_size)
        form.addRow("Loss", self.loss)
        form.addRow("Clip gradient norm", _pair(self.clip_on, self.clip_norm))
        form.addRow("Weight decay", self.weight_decay)
        form.addRow("Truncate BPTT", _pair(self.truncate_on, self.truncation))
        form.addRow("Seed", self.seed)
        self.problem = QLabel()
        self.problem.setWordWrap(True)
        self.problem.setStyleSheet("color: #c4161c;")
        self.problem.hide()
        form.addRow(self.problem)

        for box, field in ((self.learning_rate, "learning_rate"), (self.momentum, "momentum"),
                           (self.epochs, "epochs"), (self.batch_size, "batch_size"),
                           (self.weight_decay, "weight_decay"), (self.seed, "seed"),
                           (self.clip_norm, "clip_norm"), (self.truncation, "truncation")):
            box.valueChanged.connect(lambda _v, f=field: self._edited(f))
        self.optimizer.currentIndexChanged.connect(lambda _i: self._edited("optimizer"))
        self.loss.currentIndexChanged.connect(lambda _i: self._edited("loss"))
        self.clip_on.toggled.connect(lambda _b: self._edited("clip_norm"))
        self.truncate_on.toggled.connect(lambda _b: self._edited("truncation"))
        document.settings_changed.connect(self.load)
        document.replaced.connect(self.load)
        self.load()

    def load(self) -> None:
        """Show the document's settings."""
        s = self.document.circuit.training
        self._loading = True
        try:
            self.optimizer.setCurrentIndex(self.optimizer.findData(s.optimizer))
            self.learning_rate.setValue(s.learning_rate)
            self.momentum.setValue(s.momentum)
            self.momentum.setEnabled(s.optimizer == "sgd")
            self.epochs.setValue(s.epochs)
            self.batch_size.setValue(s.batch_size)
            self.loss.setCurrentIndex(self.loss.findData(s.loss))
            self.clip_on.setChecked(s.clip_norm is not None)
            self.clip_norm.setEnabled(s.clip_norm is not None)
            # when off, the box offers the value that switching it on would use
            self.clip_norm.setValue(s.clip_norm if s.clip_norm is not None else DEFAULT_CLIP)
            self.weight_decay.setValue(s.weight_decay)
            self.truncate_on.setChecked(s.truncation is not None)
            self.truncation.setEnabled(s.truncation is not None)
            self.truncation.setValue(s.truncation if s.truncation is not None else DEFAULT_TRUNCATION)
            self.seed.setValue(s.seed)
        finally:
            self._loading = False

    def settings(self) -> TrainingSettings:
        """The settings as the form shows them."""
        current = self.document.circuit.training
        return current.model_copy(update={
            "optimizer": self.optimizer.currentData(),
            "learning_rate": self.learning_rate.value(),
            "momentum": self.momentum.value(),
            "epochs": self.epochs.value(),
            "batch_size": self.batch_size.value(),
            "loss": self.loss.currentData(),
            "clip_norm": self.clip_norm.value() if self.clip_on.isChecked() else None,
            "weight_decay": self.weight_decay.value(),
            "truncation": self.truncation.value() if self.truncate_on.isChecked() else None,
            "seed": self.seed.value(),
        })

    def _edited(self, field: str) -> None:
        if self._loading:
            return
        try:
            new = TrainingSettings.model_validate(self.settings().model_dump())
        except ValidationError as exc:
            err = exc.errors()[0]
            self.problem.setText(f"{field.replace('_', ' ')}: {err['msg']}; the setting was not changed.")
            self.problem.show()
            self.load()
            return
        self.problem.hide()
        if new != self.document.circuit.training:
            self.document.push(ChangeSettings(self.document, new, field))


def _pair(check: QCheckBox, box) -> QWidget:
    w = QWidget()
    row = QHBoxLayout(w)
    row.setContentsMargins(0, 0, 0, 0)
    row.addWidget(check)
    row.addWidget(box, 1)
    return w
