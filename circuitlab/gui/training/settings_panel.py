"""The training settings panel: one editor per field of ``TrainingSettings``, built from the model.

The form is made from the pydantic fields themselves: the field's type picks
the editor (a choice list for a Literal, a check box for a bool, an exact
number field for an int or a float, a switch beside it for an optional
value, a JSON line for anything else), the field's description is its
tooltip, and the small tables below give labels, groups and when a field
applies. A setting added to the model appears here without further edits.

Settings belong to the circuit (they are saved in its file), so every change
is an undoable command on the document that sets that one field and nothing
else. A number is shown exactly (shortest repr) and an edit the file format
refuses is explained and changes nothing. While training runs the controller
passes the new settings to the trainer, which uses them from the next epoch.
"""

import json
import types
import typing
from dataclasses import dataclass
from typing import Any

from pydantic import ValidationError
from PySide6.QtCore import Qt
from PySide6.QtGui import QUndoCommand
from PySide6.QtWidgets import (QCheckBox, QComboBox, QFormLayout, QGroupBox, QHBoxLayout, QLabel,
                               QVBoxLayout, QWidget)

from circuitlab.gui.document import SETTINGS, Document
from circuitlab.gui.exact_numbers import ExactField, format_number, parse_float, parse_int
from circuitlab.model import ModelError, TrainingSettings

_MERGE_ID = 0x5E77  # successive edits of the same field merge into one undo step

# field -> (label, group, tooltip used when the field has no description of its own)
LABELS: dict[str, tuple[str, str, str]] = {
    "epochs": ("Epochs", "Run", "How many epochs a training run lasts"),
    "target_loss": ("Stop at loss", "Run", "Stop as soon as the training loss is at most this value; "
                    "switch it off to train for the set number of epochs"),
    "batch_size": ("Batch size", "Run", "Sequences per update; 0 puts all training sequences in one batch"),
    "seed": ("Seed", "Run", "Seed for weight initialisation and batch order (0 to 4294967295)"),
    "init_scale": ("Initial weight scale", "Run", "Re-initialise draws each trainable weight from "
                   "N(0, (scale / sqrt(fan-in))^2)"),
    "optimizer": ("Optimizer", "Optimizer", "Adam adapts a step size per parameter; gradient descent "
                  "uses the learning rate and momentum as given"),
    "learning_rate": ("Learning rate", "Optimizer", "Step size of each update"),
    "rate_schedule": ("Rate schedule", "Optimizer", "Constant, or multiplied by a factor every so many epochs"),
    "rate_step_every": ("Step every (epochs)", "Optimizer", "Epochs between two steps of the learning rate"),
    "rate_step_factor": ("Step factor", "Optimizer", "The learning rate is multiplied by this at each step"),
    "momentum": ("Momentum", "Optimizer", "Gradient descent: fraction of the last update kept"),
    "adam_beta1": ("Adam beta 1", "Optimizer", "Decay of Adam's running mean of the gradient"),
    "adam_beta2": ("Adam beta 2", "Optimizer", "Decay of Adam's running mean of the squared gradient"),
    "adam_epsilon": ("Adam epsilon", "Optimizer", "Added to Adam's denominator to keep steps finite"),
    "loss": ("Loss", "Gradient", "Squared error 0.5*(y-d)^2, or cross-entropy for logistic targets"),
    "clip_norm": ("Clip gradient norm", "Gradient", "Rescale the gradient when its norm exceeds this value"),
    "weight_decay": ("Weight decay", "Gradient", "L2 penalty on the weights, added to each update"),
    "truncation": ("Truncate BPTT (steps)", "Gradient", "Backpropagate at most this many steps "
                   "(an approximation of the gradient)"),
}
GROUPS = ("Run", "Optimizer", "Gradient")
OTHER_GROUP = "More"

# labels of the choices of Literal fields (a value not listed shows as itself)
CHOICES: dict[str, dict[str, str]] = {
    "optimizer": {"adam": "Adam", "sgd": "Gradient descent with momentum"},
    "loss": {"squared": "Squared error", "cross_entropy": "Cross-entropy (logistic targets)"},
    "rate_schedule": {"constant": "Constant", "step": "Steps"},
}

# field -> (other field, values of it for which this field is used)
APPLIES_WHEN: dict[str, tuple[str, tuple]] = {
    "momentum": ("optimizer", ("sgd",)),
    "adam_beta1": ("optimizer", ("adam",)),
    "adam_beta2": ("optimizer", ("adam",)),
    "adam_epsilon": ("optimizer", ("adam",)),
    "rate_step_every": ("rate_schedule", ("step",)),
    "rate_step_factor": ("rate_schedule", ("step",)),
}

# the value an optional setting takes when it is switched on (other optional fields: 1)
SWITCH_ON: dict[str, Any] = {"clip_norm": 1.0, "truncation": 20, "target_loss": 0.001}


def label_of(name: str) -> str:
    return LABELS.get(name, (name.replace("_", " ").capitalize(),))[0]


class ChangeSetting(QUndoCommand):
    """Set one training setting; repeated edits of the same field merge into one undo step."""

    def __init__(self, document: Document, field: str, value: Any):
        super().__init__(f"Change {label_of(field).lower()}")
        self.document = document
        self.field = field
        self.old = getattr(document.circuit.training, field)
        self.new = _checked(field, value)

    def id(self) -> int:
        return _MERGE_ID

    def mergeWith(self, other) -> bool:
        if not isinstance(other, ChangeSetting) or other.field != self.field:
            return False
        self.new = other.new
        return True

    def _set(self, value) -> None:
        c = self.document.circuit
        c.training = c.training.model_copy(update={self.field: value})
        self.document.notify(SETTINGS)

    def redo(self) -> None:
        self._set(self.new)

    def undo(self) -> None:
        self._set(self.old)


def _checked(field: str, value):
    """``value`` as the file format takes it for ``field``; ValidationError if refused."""
    return getattr(TrainingSettings.model_validate({field: value}), field)


@dataclass
class _FieldType:
    base: Any             # float, int, bool, str, "choice" or None (anything else: JSON)
    optional: bool
    choices: tuple = ()


def field_type(annotation) -> _FieldType:
    """What kind of editor a pydantic field annotation needs."""
    optional = False
    args = typing.get_args(annotation)
    if typing.get_origin(annotation) in (typing.Union, types.UnionType) and type(None) in args:
        rest = [a for a in args if a is not type(None)]
        optional = True
        annotation = rest[0] if len(rest) == 1 else None
    if typing.get_origin(annotation) is typing.Annotated:
        annotation = typing.get_args(annotation)[0]
    if typing.get_origin(annotation) is typing.Literal:
        return _FieldType("choice", optional, typing.get_args(annotation))
    if annotation in (bool, int, float, str):
        return _FieldType(annotation, optional)
    return _FieldType(None, optional)


class SettingEditor(QWidget):
    """The editor of one setting: a switch for optional values beside the value's own editor."""

    def __init__(self, panel: "SettingsPanel", name: str, info):
        super().__init__()
        self.panel, self.name = panel, name
        self.kind = field_type(info.annotation)
        row = QHBoxLayout(self)
        row.setContentsMargins(0, 0, 0, 0)
        self.switch: QCheckBox | None = None
        if self.kind.optional and self.kind.base is not None:
            self.switch = QCheckBox()
            self.switch.setToolTip(f"Switch {label_of(name).lower()} on or off")
            self.switch.clicked.connect(self._switched)
            row.addWidget(self.switch)
        base = self.kind.base
        if base == "choice":
            self.box = QComboBox()
            for value in self.kind.choices:
                self.box.addItem(CHOICES.get(name, {}).get(value, str(value)), value)
            self.box.activated.connect(lambda i: self.panel.set_field(name, self.box.itemData(i)))
        elif base is bool:
            self.box = QCheckBox()
            self.box.clicked.connect(lambda on: self.panel.set_field(name, bool(on)))
        else:
            self.box = ExactField("off" if self.switch is not None else "")
            self.box.committed.connect(self._typed)
        row.addWidget(self.box, 1)

    # the value shown, for tests and scripts
    def value(self):
        if self.switch is not None and not self.switch.isChecked():
            return None
        if isinstance(self.box, QComboBox):
            return self.box.currentData()
        if isinstance(self.box, QCheckBox):
            return self.box.isChecked()
        return self._parse(self.box.text())

    def setValue(self, value) -> None:
        """Set the setting to ``value`` as if the user had entered it (tests and scripts)."""
        self.panel.set_field(self.name, value)

    def display(self, value) -> None:
        if self.switch is not None:
            self.switch.setChecked(value is not None)
            self.box.setEnabled(value is not None)
            if value is None:
                # when off, the field offers the value that switching it on would use
                self.box.show_text(format_number(SWITCH_ON.get(self.name, 1)), "off")
                return
        if isinstance(self.box, QComboBox):
            i = self.box.findData(value)
            if i < 0:  # a value this build has no label for still shows
                self.box.addItem(str(value), value)
                i = self.box.count() - 1
            self.box.setCurrentIndex(i)
        elif isinstance(self.box, QCheckBox):
            self.box.setChecked(bool(value))
        elif self.kind.base in (int, float):
            self.box.show_value(value)
        elif self.kind.base is str:
            self.box.show_text(value)
        else:
            self.box.show_text(json.dumps(value))

    def _parse(self, text: str):
        base = self.kind.base
        if base is int:
            return parse_int(text)
        if base is float:
            return parse_float(text)
        if base is str:
            return text
        try:
            return json.loads(text)
        except json.JSONDecodeError as exc:
            raise ValueError(f"'{text}' is not JSON ({exc.msg})") from None

    def _typed(self, text: str) -> None:
        if self.switch is not None and not text.strip():
            self.panel.set_field(self.name, None)  # a cleared optional field switches it off
            return
        try:
            value = self._parse(text)
        except ValueError as exc:
            self.panel.refuse(self.name, str(exc))
            return
        self.panel.set_field(self.name, value)

    def _switched(self, on: bool) -> None:
        if not on:
            self.panel.set_field(self.name, None)
            return
        try:
            value = self._parse(self.box.text())
        except ValueError:
            value = SWITCH_ON.get(self.name, 1)
        self.panel.set_field(self.name, value)


class SettingsPanel(QWidget):
    """A form bound to ``document.circuit.training``: one editor per setting, grouped.

    Each editor is also an attribute named after its field (``panel.epochs``).
    """

    def __init__(self, document: Document, parent=None):
        super().__init__(parent)
        self.document = document
        self.editors: dict[str, SettingEditor] = {}
        self.forms: dict[str, QFormLayout] = {}
        layout = QVBoxLayout(self)
        layout.setContentsMargins(0, 0, 0, 0)
        fields = TrainingSettings.model_fields
        groups = {g: [] for g in GROUPS}
        for name in fields:
            groups.setdefault(LABELS.get(name, ("", OTHER_GROUP))[1], []).append(name)
        for group, names in groups.items():
            if not names:
                continue
            box = QGroupBox(group)
            form = QFormLayout(box)
            form.setFieldGrowthPolicy(QFormLayout.FieldGrowthPolicy.AllNonFixedFieldsGrow)
            form.setContentsMargins(6, 4, 6, 4)
            for name in names:
                info = fields[name]
                editor = SettingEditor(self, name, info)
                tip = info.description or LABELS.get(name, ("", "", ""))[2]
                label = QLabel(label_of(name))
                label.setToolTip(tip)
                editor.setToolTip(tip)
                form.addRow(label, editor)
                self.editors[name] = editor
                setattr(self, name, editor)
            self.forms[group] = form
            layout.addWidget(box)
        self.problem = QLabel()
        self.problem.setWordWrap(True)
        self.problem.setStyleSheet("color: #c4161c;")
        self.problem.setTextInteractionFlags(Qt.TextInteractionFlag.TextSelectableByMouse)
        self.problem.hide()
        layout.addWidget(self.problem)
        document.settings_changed.connect(self.load)
        document.replaced.connect(self.load)
        self.load()

    def load(self) -> None:
        """Show the document's settings (each editor shows its field exactly)."""
        s = self.document.circuit.training
        for name, editor in self.editors.items():
            editor.display(getattr(s, name))
            other = APPLIES_WHEN.get(name)
            if other is not None:
                applies = getattr(s, other[0]) in other[1]
                editor.setEnabled(applies)
                for form in self.forms.values():
                    label = form.labelForField(editor)
                    if label is not None:
                        label.setEnabled(applies)

    def set_field(self, name: str, value) -> bool:
        """Set one setting through an undo command; a value the file format refuses is explained
        and changes nothing. True if the setting changed."""
        current = getattr(self.document.circuit.training, name)
        if value == current and type(value) is type(current):
            self.problem.hide()
            return False
        try:
            self.document.push(ChangeSetting(self.document, name, value))
        except (ModelError, ValidationError) as exc:
            self.refuse(name, _message(exc))
            return False
        self.problem.hide()
        return True

    def refuse(self, name: str, reason: str) -> None:
        shown = format_number(getattr(self.document.circuit.training, name)) or "off"
        self.problem.setText(f"{label_of(name)}: {reason}; the setting keeps {shown}.")
        self.problem.show()
        self.editors[name].display(getattr(self.document.circuit.training, name))


def _message(exc: Exception) -> str:
    if isinstance(exc, ValidationError):
        return exc.errors()[0]["msg"]
    return str(exc)
