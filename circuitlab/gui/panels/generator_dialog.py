"""The dialog that builds sequences (or fills rows of existing ones) with seeded generators.

Each line of the dialog is one ``RowRecipe``: a unit, clamp or target, a
generator and its parameters (read from the generator function's signature),
plus source units for the generators that derive a target from inputs.
"""

import inspect

from PySide6.QtWidgets import (QCheckBox, QComboBox, QDialog, QDialogButtonBox, QDoubleSpinBox,
                               QFormLayout, QGroupBox, QHBoxLayout, QLabel, QLineEdit, QPushButton,
                               QRadioButton, QSpinBox, QVBoxLayout, QWidget)

from circuitlab.model import ModelError
from circuitlab.model.generators import GENERATORS, TARGET_GENERATORS, RowRecipe, parameters

PARAMETER_LABELS = {
    "p_one": "chance of 1", "count": "pulses", "width": "width (steps)", "height": "height",
    "baseline": "baseline", "earliest": "earliest step", "period": "period (steps)",
    "amplitude": "amplitude", "offset": "offset", "phase": "phase (radians)",
    "random_phase": "random phase", "duty": "duty fraction", "low": "low", "high": "high",
    "shift": "shift (steps)", "mean": "mean", "std": "standard deviation", "delay": "delay (steps)",
    "gain": "gain",
}


class RecipeRow(QWidget):
    """One line: which row to generate, with what, and the generator's parameters."""

    def __init__(self, units: list[str], unit: str | None = None, layer: str = "clamp",
                 generator: str = "random binary", parent=None):
        super().__init__(parent)
        self.unit_box = QComboBox()
        self.unit_box.addItems(units)
        if unit in units:
            self.unit_box.setCurrentText(unit)
        self.layer_box = QComboBox()
        self.layer_box.addItem("clamp values", "clamp")
        self.layer_box.addItem("target values", "target")
        self.layer_box.setCurrentIndex(0 if layer == "clamp" else 1)
        self.generator_box = QComboBox()
        self.generator_box.addItems(list(GENERATORS))
        self.sources = QLineEdit()
        self.sources.setPlaceholderText("source units, comma-separated")
        self.remove_button = QPushButton("Remove")
        self.params = QWidget()
        self.param_layout = QHBoxLayout(self.params)
        self.param_layout.setContentsMargins(0, 0, 0, 0)
        self.fields: dict[str, QWidget] = {}
        top = QHBoxLayout()
        top.setContentsMargins(0, 0, 0, 0)
        for w in (self.unit_box, self.layer_box, self.generator_box, self.sources, self.remove_button):
            top.addWidget(w)
        layout = QVBoxLayout(self)
        layout.setContentsMargins(0, 2, 0 , 2)
        layout.addLayout(top)
        layout.addWidget(self.params)
        self.generator_box.currentTextChanged.connect(self._build_fields)
        self.generator_box.setCurrentText(generator)
        self._build_fields(generator)

    def _build_fields(self, name: str) -> None:
        while self.param_layout.count():
            w = self.param_layout.takeAt(0).widget()
            if w is not None:
                w.deleteLater()
        self.fields = {}
        sig = inspect.signature(GENERATORS[name])
        for pname, default in parameters(name).items():
            kind = sig.parameters[pname].annotation
            if isinstance(default, bool):
                w = QCheckBox()
                w.setChecked(default)
            elif isinstance(default, int) and kind is int:
                w = QSpinBox()
                w.setRange(-100_000, 100_000)
                w.setValue(default)
            elif default is None:
                w = QLineEdit()
                w.setPlaceholderText("none")
                w.setMaximumWidth(60)
            else:
                w = QDoubleSpinBox()
                w.setDecimals(4)
                w.setRange(-1e6, 1e6)
                w.setValue(float(default))
            w.setToolTip(PARAMETER_LABELS.get(pname, pname))
            self.param_layout.addWidget(QLabel(PARAMETER_LABELS.get(pname, pname)))
            self.param_layout.addWidget(w)
            self.fields[pname] = w
        self.param_layout.addStretch(1)
        derived = name in TARGET_GENERATORS
        self.sources.setVisible(derived)
        self.setToolTip((GENERATORS[name].__doc__ or "").strip())
        if derived:
            self.layer_box.setCurrentIndex(1)

    def recipe(self) -> RowRecipe:
        """The recipe this line describes; raises ModelError for unreadable fields."""
        params = {}
        for pname, w in self.fields.items():
            if isinstance(w, QCheckBox):
                params[pname] = w.isChecked()
            elif isinstance(w, (QSpinBox, QDoubleSpinBox)):
                params[pname] = w.value()
            else:
                text = w.text().strip()
                try:
                    params[pname] = float(text) if text else None
                except ValueError:
                    raise ModelError(f"{PARAMETER_LABELS.get(pname, pname)}: '{text}' is not a number") from None
        sources = [s.strip() for s in self.sources.text().split(",") if s.strip()]
        return RowRecipe(self.unit_box.currentText(), self.layer_box.currentData(),
                         self.generator_box.currentText(), params,
                         sources if self.generator_box.currentText() in TARGET_GENERATORS else [])


class GeneratorDialog(QDialog):
    """Choose recipes, then either add new sequences or fill rows of the selected ones."""

    def __init__(self, units: list[str], selected: list[str], suggestions: list[tuple[str, str]] = (),
                 parent=None):
        super().__init__(parent)
        self.setWindowTitle("Generate sequence data")
        self.units = units
        self.new_button = QRadioButton("Add new sequences")
        self.fill_button = QRadioButton(f"Fill rows of the {len(selected)} selected sequence"
                                        + ("s" if len(selected) != 1 else ""))
        self.fill_button.setEnabled(bool(selected))
        self.new_button.setChecked(True)
        self.count = QSpinBox()
        self.count.setRange(1, 10_000)
        self.count.setValue(8)
        self.length = QSpinBox()
        self.length.setRange(1, 100_000)
        self.length.setValue(20)
        self.held_out = QSpinBox()
        self.held_out.setRange(0, 10_000)
        self.stem = QLineEdit("generated")
        self.seed = QSpinBox()
        self.seed.setRange(0, 2**31 - 1)
        form = QFormLayout()
        form.addRow(self.new_button)
        form.addRow("Number of sequences", self.count)
        form.addRow("Length (steps after step 0)", self.length)
        form.addRow("Of which held out", self.held_out)
        form.addRow("Names start with", self.stem)
        form.addRow(self.fill_button)
        form.addRow("Seed", self.seed)

        self.rows_box = QGroupBox("Rows to generate (in order: inputs before the targets made from them)")
        self.rows_layout = QVBoxLayout(self.rows_box)
        self.rows: list[RecipeRow] = []
        add = QPushButton("Add a row")
        add.clicked.connect(lambda: self.add_row())
        self.error = QLabel()
        self.error.setStyleSheet("color: #c4161c")
        buttons = QDialogButtonBox(QDialogButtonBox.StandardButton.Ok | QDialogButtonBox.StandardButton.Cancel)
        buttons.button(QDialogButtonBox.StandardButton.Ok).setText("Generate")
        buttons.accepted.connect(self._accept)
        buttons.rejected.connect(self.reject)
        layout = QVBoxLayout(self)
        layout.addLayout(form)
        layout.addWidget(self.rows_box)
        layout.addWidget(add)
        layout.addWidget(self.error)
        layout.addWidget(buttons)
        for unit, layer in suggestions:
            self.add_row(unit, layer, "random binary" if layer == "clamp" else "delayed copy")
        if not self.rows and units:
            self.add_row()

    def add_row(self, unit: str | None = None, layer: str = "clamp", generator: str = "random binary") -> RecipeRow:
        row = RecipeRow(self.units, unit, layer, generator)
        row.remove_button.clicked.connect(lambda: self._remove(row))
        self.rows.append(row)
        self.rows_layout.addWidget(row)
        return row

    def _remove(self, row: RecipeRow) -> None:
        self.rows.remove(row)
        row.deleteLater()

    def recipes(self) -> list[RowRecipe]:
        return [r.recipe() for r in self.rows]

    def _accept(self) -> None:
        try:
            recipes = self.recipes()
            if not recipes:
                raise ModelError("add at least one row to generate")
            for r in recipes:
                if r.generator in TARGET_GENERATORS and not r.sources:
                    raise ModelError(f"'{r.generator}' for {r.unit} needs source units")
                bad = [s for s in r.sources if s not in self.units]
                if bad:
                    raise ModelError(f"there is no unit named '{bad[0]}'")
        except ModelError as exc:
            self.error.setText(str(exc))
            return
        self.accept()
