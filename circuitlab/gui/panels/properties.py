"""The properties panel: edit the selected units or connections.

With several items selected, a field showing one value applies it to all of
them; a field whose items differ shows as blank ("mixed") until it is set.
Every change is an undo command; consecutive changes of the same field on
the same items merge into one undo step.
"""

from PySide6.QtCore import Qt
from PySide6.QtWidgets import (QCheckBox, QComboBox, QFormLayout, QGroupBox, QHBoxLayout, QLabel,
                               QLineEdit, QScrollArea, QSpinBox, QVBoxLayout, QWidget)

from circuitlab.gui.commands import (RenameUnit, SetConnectionFields, SetScheduleFields, SetUnitFields,
                                     TieConnections, UntieConnections)
from circuitlab.gui.exact_numbers import ExactField, format_number, parse_float
from circuitlab.model import ModelError
from circuitlab.model.units import ACTIVATIONS

INITIAL_CHOICES = [("fixed", "fixed value"), ("learned", "learned"), ("clamped", "clamped to data")]
CLAMP_CHOICES = [("none", "not clamped"), ("initial", "at step 0"), ("every", "at every step"),
                 ("steps", "at chosen steps"), ("given", "wherever the data has a value")]
TARGET_CHOICES = [("none", "no targets"), ("final", "at the final step"), ("last", "at the last N steps"),
                  ("every", "at every step"), ("steps", "at chosen steps"),
                  ("given", "wherever the data has a value")]
SIGN_CHOICES = [("none", "unconstrained"), ("excitatory", "excitatory (weights ≥ 0)"),
                ("inhibitory", "inhibitory (weights ≤ 0)")]
MIXED = "mixed"


def setup(window) -> None:
    panel = PropertiesPanel(window)
    window.properties_panel = panel
    scroller = QScrollArea()  # the dock may be shorter than the form: scroll instead of growing the window
    scroller.setWidget(panel)
    scroller.setWidgetResizable(True)
    scroller.setFrameShape(QScrollArea.NoFrame)
    window.add_panel(scroller, "Properties", "properties", Qt.RightDockWidgetArea)
    window.canvas.unit_activated.connect(panel.focus_name)


def parse_steps(text: str) -> list[int]:
    """'0, 3, 5-8' -> [0, 3, 5, 6, 7, 8]; raises ValueError with a plain message."""
    steps: set[int] = set()
    for part in filter(None, (p.strip() for p in text.replace(";", ",").split(","))):
        lo, sep, hi = part.partition("-")
        try:
            a = int(lo)
            b = int(hi) if sep else a
        except ValueError:
            raise ValueError(f"'{part}' is not a step number or a range like 3-7") from None
        if a < 0 or b < a or b - a > 100_000:
            raise ValueError(f"'{part}' is not a valid range of steps")
        steps.update(range(a, b + 1))
    return sorted(steps)


def format_steps(steps: list[int]) -> str:
    out, i = [], 0
    while i < len(steps):
        j = i
        while j + 1 < len(steps) and steps[j + 1] == steps[j] + 1:
            j += 1
        out.append(str(steps[i]) if j == i else f"{steps[i]}-{steps[j]}")
        i = j + 1
    return ", ".join(out)


class NumberField(ExactField):
    """A field for one float, shown exactly; blank with 'mixed' shown when the selected items differ.

    ``committed`` fires only when the user typed a change (Enter in an untouched field does nothing).
    """

    def __init__(self, placeholder: str = MIXED):
        super().__init__(placeholder)

    def show_value(self, values: list) -> None:
        same = len(set(values)) == 1
        v = values[0] if same else None
        self.show_text(format_number(v), self.default_placeholder if same else MIXED)

    def value(self) -> float | None:
        """The typed value (None for a blank field); ValueError with a plain message if it is not one."""
        text = self.text().strip()
        return parse_float(text) if text else None


class PropertiesPanel(QWidget):
    """Fields for the selected units and connections of ``window.document``."""

    def __init__(self, window):
        super().__init__()
        self.window = window
        self.document = window.document
        self.units: list[str] = []
        self.connections: list[tuple[str, str]] = []
        self._filling = False
        layout = QVBoxLayout(self)
        self.heading = QLabel()
        self.heading.setWordWrap(True)
        layout.addWidget(self.heading)
        self.unit_box = QGroupBox("Unit")
        self.conn_box = QGroupBox("Connection")
        layout.addWidget(self.unit_box)
        layout.addWidget(self.conn_box)
        self.problem = QLabel()
        self.problem.setWordWrap(True)
        self.problem.setStyleSheet("color: #a3261b;")
        layout.addWidget(self.problem)
        layout.addStretch(1)
        self._build_unit_fields()
        self._build_connection_fields()
        window.selection_changed.connect(self.show_selection)
        self.document.changed.connect(self.refresh)
        self.document.replaced.connect(lambda: self.show_selection([], []))
        self.show_selection([], [])

    # ------------------------------------------------------------ widgets
    def _combo(self, choices, slot) -> QComboBox:
        box = QComboBox()
        for key, label in choices:
            box.addItem(label, key)
        box.activated.connect(lambda i: slot(box.itemData(i)))
        return box

    def _build_unit_fields(self) -> None:
        f = QFormLayout(self.unit_box)
        f.setFieldGrowthPolicy(QFormLayout.AllNonFixedFieldsGrow)
        self.name = QLineEdit()
        self.name.editingFinished.connect(self._rename)
        f.addRow("Name", self.name)
        self.activation = self._combo([(a, a) for a in ACTIVATIONS], lambda v: self._set_unit("activation", v))
        f.addRow("Activation", self.activation)
        self.bias = NumberField()
        self.bias.committed.connect(lambda _t: self._set_number(self.bias, "bias", required=True))
        self.bias_trains = QCheckBox("trains")
        self.bias_trains.clicked.connect(lambda on: self._set_unit("bias_trains", on))
        row = QHBoxLayout()
        row.addWidget(self.bias, 1)
        row.addWidget(self.bias_trains)
        f.addRow("Bias", row)
        self.initial_mode = self._combo(INITIAL_CHOICES, lambda v: self._set_unit("initial_mode", v))
        f.addRow("Initial state", self.initial_mode)
        self.initial_value = NumberField("default")
        self.initial_value.setToolTip("The state at step 0 (or the learned value's starting point). "
                                      "Leave blank for the default: 0.5 for logistic units, 0 otherwise.")
        self.initial_value.committed.connect(
            lambda _t: self._set_number(self.initial_value, "initial_value", required=False))
        f.addRow("Initial value", self.initial_value)
        self.clamp = self._combo(CLAMP_CHOICES, lambda v: self._set_schedule("clamp", v))
        f.addRow("Clamped", self.clamp)
        self.clamp_steps = QLineEdit()
        self.clamp_steps.setPlaceholderText("e.g. 0, 4, 10-12")
        self.clamp_steps.editingFinished.connect(lambda: self._set_steps(self.clamp_steps, "clamp_steps"))
        f.addRow("Clamped steps", self.clamp_steps)
        self.target = self._combo(TARGET_CHOICES, lambda v: self._set_schedule("target", v))
        f.addRow("Targets", self.target)
        self.target_last = QSpinBox()
        self.target_last.setRange(1, 100_000)
        self.target_last.valueChanged.connect(self._set_target_last)
        f.addRow("Final steps (N)", self.target_last)
        self.target_steps = QLineEdit()
        self.target_steps.setPlaceholderText("e.g. 5, 10-12")
        self.target_steps.editingFinished.connect(lambda: self._set_steps(self.target_steps, "target_steps"))
        f.addRow("Target steps", self.target_steps)
        self.sign = self._combo(SIGN_CHOICES, lambda v: self._set_unit("sign", None if v == "none" else v))
        f.addRow("Sign", self.sign)
        self.unit_form = f

    def _build_connection_fields(self) -> None:
        f = QFormLayout(self.conn_box)
        f.setFieldGrowthPolicy(QFormLayout.AllNonFixedFieldsGrow)
        self.weight = NumberField()
        self.weight.committed.connect(self._set_weight)
        self.weight_trains = QCheckBox("trains")
        self.weight_trains.clicked.connect(
            lambda on: self._push(lambda: SetConnectionFields(self.document, self.connections, "trains", on)))
        row = QHBoxLayout()
        row.addWidget(self.weight, 1)
        row.addWidget(self.weight_trains)
        f.addRow("Weight", row)
        self.tie = QLineEdit()
        self.tie.setPlaceholderText("none")
        self.tie.setToolTip("Connections with the same tie group share one weight during training. "
                            "Type a group name to tie the selected connections; clear it to untie them.")
        self.tie.editingFinished.connect(self._set_tie)
        f.addRow("Tie group", self.tie)

    # ------------------------------------------------------------ showing
    def show_selection(self, units: list, connections: list) -> None:
        self.units, self.connections = list(units), [tuple(k) for k in connections]
        self.problem.clear()
        self.refresh()

    def refresh(self) -> None:
        c = self.document.circuit
        self.units = [n for n in self.units if c.has_unit(n)]
        self.connections = [k for k in self.connections if c.has_connection(*k)]
        nu, nc = len(self.units), len(self.connections)
        if not nu and not nc:
            self.heading.setText("Select units or connections on the canvas to edit them here. "
                                 "Double-click the canvas to add a unit; drag from a unit's rim to connect.")
        else:
            parts = [f"{nu} unit{'s' if nu != 1 else ''}"] if nu else []
            parts += [f"{nc} connection{'s' if nc != 1 else ''}"] if nc else []
            self.heading.setText(" and ".join(parts) + " selected")
        self.unit_box.setVisible(bool(nu))
        self.conn_box.setVisible(bool(nc))
        self._filling = True
        try:
            if nu:
                self._fill_units()
            if nc:
                self._fill_connections()
        finally:
            self._filling = False

    def _fill_units(self) -> None:
        c = self.document.circuit
        units = [c.unit(n) for n in self.units]
        scheds = [c.schedule_for(n) for n in self.units]
        if not self.name.hasFocus():
            self.name.setText(units[0].name if len(units) == 1 else "")
            self.name.setPlaceholderText("" if len(units) == 1 else f"{len(units)} units")
        self.name.setEnabled(len(units) == 1)
        _show_combo(self.activation, [u.activation for u in units])
        self.bias.show_value([u.bias for u in units])
        _show_check(self.bias_trains, [u.bias_trains for u in units])
        _show_combo(self.initial_mode, [u.initial_mode for u in units])
        self.initial_value.show_value([u.initial_value for u in units])
        self.initial_value.setEnabled(all(u.initial_mode != "clamped" for u in units))
        _show_combo(self.clamp, [s.clamp for s in scheds])
        _show_combo(self.target, [s.target for s in scheds])
        _show_combo(self.sign, [u.sign or "none" for u in units])
        clamp_steps = {tuple(s.clamp_steps) for s in scheds}
        target_steps = {tuple(s.target_steps) for s in scheds}
        if not self.clamp_steps.hasFocus():
            self.clamp_steps.setText(format_steps(list(next(iter(clamp_steps)))) if len(clamp_steps) == 1 else "")
        if not self.target_steps.hasFocus():
            self.target_steps.setText(format_steps(list(next(iter(target_steps)))) if len(target_steps) == 1 else "")
        lasts = {s.target_last for s in scheds}
        self.target_last.setValue(next(iter(lasts)) if len(lasts) == 1 else 1)
        show = {s.clamp for s in scheds}
        self.unit_form.setRowVisible(self.clamp_steps, "steps" in show)
        show = {s.target for s in scheds}
        self.unit_form.setRowVisible(self.target_steps, "steps" in show)
        self.unit_form.setRowVisible(self.target_last, "last" in show)

    def _fill_connections(self) -> None:
        c = self.document.circuit
        conns = [c.connection(*k) for k in self.connections]
        self.weight.show_value([k.weight for k in conns])
        _show_check(self.weight_trains, [k.trains for k in conns])
        ties = {k.tie for k in conns}
        if not self.tie.hasFocus():
            self.tie.setText((next(iter(ties)) or "") if len(ties) == 1 else "")
            self.tie.setPlaceholderText("none" if len(ties) == 1 else MIXED)

    def focus_name(self, name: str) -> None:
        """Bring the name field forward for ``name`` (double-click on a unit)."""
        dock = self.window.panel("properties")
        if dock is not None:
            dock.show()
            dock.raise_()
        if self.units == [name]:
            self.name.setFocus()
            self.name.selectAll()

    # ------------------------------------------------------------ editing
    def _push(self, make_command) -> bool:
        """Build and push a command; a refused edit shows its reason and changes nothing."""
        if self._filling:
            return False
        try:
            self.document.push(make_command())
        except ModelError as exc:
            self.problem.setText(str(exc))
            self.refresh()
            return False
        self.problem.clear()
        return True

    def _rename(self) -> None:
        if self._filling or len(self.units) != 1:
            return
        old, new = self.units[0], self.name.text().strip()
        if new and new != old and self._push(lambda: RenameUnit(self.document, old, new)):
            self.units = [new]
            self.window.canvas.circuit_scene.select([new])
        elif not new:
            self.name.setText(old)

    def _set_unit(self, field: str, value) -> None:
        c = self.document.circuit
        if self.units and any(getattr(c.unit(n), field) != value for n in self.units):
            self._push(lambda: SetUnitFields(self.document, self.units, field, value))

    def _set_schedule(self, field: str, value) -> None:
        c = self.document.circuit
        if self.units and any(getattr(c.schedule_for(n), field) != value for n in self.units):
            self._push(lambda: SetScheduleFields(self.document, self.units, field, value))

    def _set_number(self, edit: NumberField, field: str, required: bool) -> None:
        if self._filling or not self.units:
            return
        try:
            value = edit.value()
        except ValueError as exc:
            self.problem.setText(f"{field.replace('_', ' ')}: {exc}; nothing was changed.")
            edit.revert()
            return
        if value is None and (required or edit.placeholderText() == MIXED):
            return  # blank: leave the (mixed) values alone
        self._set_unit(field, value)

    def _set_weight(self, _text: str = "") -> None:
        if self._filling or not self.connections:
            return
        try:
            value = self.weight.value()
        except ValueError as exc:
            self.problem.setText(f"weight: {exc}; nothing was changed.")
            self.weight.revert()
            return
        c = self.document.circuit
        if value is not None and any(c.connection(*k).weight != value for k in self.connections):
            self._push(lambda: SetConnectionFields(self.document, self.connections, "weight", value))

    def _set_steps(self, edit: QLineEdit, field: str) -> None:
        if self._filling or not self.units:
            return
        try:
            steps = parse_steps(edit.text())
        except ValueError as exc:
            self.problem.setText(str(exc))
            return
        if field == "target_steps" and 0 in steps:
            self.problem.setText("step 0 is the initial state and cannot carry a target")
            return
        self._set_schedule(field, steps)

    def _set_target_last(self, n: int) -> None:
        if not self._filling:
            self._set_schedule("target_last", n)

    def _set_tie(self) -> None:
        if self._filling or not self.connections:
            return
        group = self.tie.text().strip()
        c = self.document.circuit
        current = {c.connection(*k).tie for k in self.connections}
        if group and current != {group}:
            self._push(lambda: TieConnections(self.document, self.connections, group[:64]))
        elif not group and len(current) == 1 and current != {None}:
            # blank over one group unties; blank over mixed groups leaves them alone
            self._push(lambda: UntieConnections(self.document, self.connections))


def _show_combo(box: QComboBox, values: list) -> None:
    box.setCurrentIndex(box.findData(values[0]) if len(set(values)) == 1 else -1)


def _show_check(box: QCheckBox, values: list) -> None:
    box.setTristate(len(set(values)) > 1)
    box.setCheckState(Qt.PartiallyChecked if len(set(values)) > 1
                      else (Qt.Checked if values[0] else Qt.Unchecked))
