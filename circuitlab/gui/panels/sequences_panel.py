"""The sequences list: add, duplicate, rename, delete, length, held out, reorder,
generate, and CSV import and export. Every change is one undo step."""

from pathlib import Path

from PySide6.QtCore import Qt, QTimer, Signal
from PySide6.QtGui import QBrush, QColor, QFont
from PySide6.QtWidgets import (QAbstractItemView, QFileDialog, QGridLayout, QHeaderView, QLabel,
                               QPushButton, QTableWidget, QTableWidgetItem, QVBoxLayout, QWidget)

from circuitlab.gui.commands.sequence_edits import (AddSequences, MoveSequence, RemoveSequences,
                                                    RenameSequence, ReplaceSequences, ResizeSequence,
                                                    SetHeldOut)
from circuitlab.gui.document import Document
from circuitlab.gui.panels.generator_dialog import GeneratorDialog
from circuitlab.model import ModelError, Sequence
from circuitlab.model.csvdata import SequenceCsvError, circuit_csv, read_csv_file, write_csv_file
from circuitlab.model.generators import fill_sequences, generate_sequences

DEFAULT_LENGTH = 20


class SequencesPanel(QWidget):
    """The dock's widget. ``current_changed`` carries the name of the sequence chosen."""

    current_changed = Signal(str)

    def __init__(self, document: Document, parent=None):
        super().__init__(parent)
        self.setObjectName("sequences_panel")
        self.document = document
        self._refresh_timer = QTimer(self, singleShot=True, interval=0)
        self._refresh_timer.timeout.connect(self.refresh)
        # one row per sequence: name and length edit in place, held out is a check box
        self.list = QTableWidget(0, 3)
        self.list.setHorizontalHeaderLabels(["Sequence", "Length", "Held out"])
        header = self.list.horizontalHeader()
        header.setSectionResizeMode(0, QHeaderView.ResizeMode.Stretch)
        for column in (1, 2):  # as wide as their contents: the names get the rest of a narrow panel
            header.setSectionResizeMode(column, QHeaderView.ResizeMode.ResizeToContents)
        self.list.verticalHeader().setVisible(False)
        self.list.setSelectionBehavior(QAbstractItemView.SelectionBehavior.SelectRows)
        self.list.setSelectionMode(QAbstractItemView.SelectionMode.ExtendedSelection)
        self.list.setEditTriggers(QAbstractItemView.EditTrigger.DoubleClicked
                                  | QAbstractItemView.EditTrigger.EditKeyPressed)
        self.list.setToolTip("Double-click a name or length to change it; tick 'Held out' to keep "
                             "a sequence for testing (it is not trained on)")
        self.list.currentCellChanged.connect(self._current_changed)
        self.list.itemChanged.connect(self._item_edited)

        self.add_button = QPushButton("Add")
        self.duplicate_button = QPushButton("Duplicate")
        self.delete_button = QPushButton("Delete")
        self.up_button = QPushButton("Move up")
        self.down_button = QPushButton("Move down")
        self.generate_button = QPushButton("Generate...")
        self.import_button = QPushButton("Import CSV...")
        self.export_button = QPushButton("Export CSV...")
        self.status = QLabel()
        self.status.setWordWrap(True)

        self.add_button.clicked.connect(self.add_sequence)
        self.duplicate_button.clicked.connect(self.duplicate_selected)
        self.delete_button.clicked.connect(self.delete_selected)
        self.up_button.clicked.connect(lambda: self.move_current(-1))
        self.down_button.clicked.connect(lambda: self.move_current(+1))
        self.generate_button.clicked.connect(self.open_generator)
        self.import_button.clicked.connect(lambda: self._ask_import())
        self.export_button.clicked.connect(self._ask_export)

        buttons = QGridLayout()
        for i, b in enumerate((self.add_button, self.duplicate_button, self.delete_button,
                               self.up_button, self.down_button, self.generate_button,
                               self.import_button, self.export_button)):
            buttons.addWidget(b, i // 3, i % 3)
        layout = QVBoxLayout(self)
        layout.setContentsMargins(4, 4, 4, 4)
        layout.addWidget(self.list, 1)
        layout.addLayout(buttons)
        layout.addWidget(self.status)
        for sig in (document.data_changed, document.replaced):
            sig.connect(self._refresh_timer.start)
        self.refresh()

    # ---------------------------------------------------------- showing
    def refresh(self) -> None:
        seqs = self.document.circuit.sequences
        current = self.current_name()
        selected = set(self.selected_names())
        names = [s.name for s in seqs]
        if current not in names:
            current = names[0] if names else None
        self.list.blockSignals(True)
        self.list.setRowCount(len(seqs))
        italic = QFont()
        italic.setItalic(True)
        for row, s in enumerate(seqs):
            name = QTableWidgetItem(s.name)
            name.setData(Qt.ItemDataRole.UserRole, s.name)
            length = QTableWidgetItem()
            length.setData(Qt.ItemDataRole.EditRole, s.length)
            length.setToolTip("Steps after the initial step 0; shortening cuts values (undo restores them)")
            held = QTableWidgetItem("held out" if s.held_out else "")
            held.setFlags(Qt.ItemFlag.ItemIsEnabled | Qt.ItemFlag.ItemIsSelectable
                          | Qt.ItemFlag.ItemIsUserCheckable)
            held.setCheckState(Qt.CheckState.Checked if s.held_out else Qt.CheckState.Unchecked)
            if s.held_out:  # not by colour alone: italics and the word
                for item in (name, length, held):
                    item.setFont(italic)
                    item.setForeground(QBrush(QColor("#555555")))
            for col, item in enumerate((name, length, held)):
                self.list.setItem(row, col, item)
        sm = self.list.selectionModel()
        sm.clearSelection()
        if current is not None:
            self.list.setCurrentCell(names.index(current), 0)
        for row, n in enumerate(names):
            if n in selected or (not selected and n == current):
                sm.select(self.list.model().index(row, 0), sm.SelectionFlag.Select | sm.SelectionFlag.Rows)
        self.list.blockSignals(False)
        self._show_properties()
        if current is not None:
            self.current_changed.emit(current)

    def current_name(self) -> str | None:
        row = self.list.currentRow()
        item = self.list.item(row, 0) if row >= 0 else None
        return item.data(Qt.ItemDataRole.UserRole) if item is not None else None

    def selected_names(self) -> list[str]:
        rows = {i.row() for i in self.list.selectedIndexes()}
        names = [self.list.item(r, 0).data(Qt.ItemDataRole.UserRole) for r in rows if self.list.item(r, 0)]
        order = [s.name for s in self.document.circuit.sequences]
        return sorted((n for n in names if n in order), key=order.index)

    def set_current(self, name: str) -> None:
        """Make ``name`` the current (and only selected) sequence."""
        if self._refresh_timer.isActive():  # show the latest list first
            self._refresh_timer.stop()
            self.refresh()
        names = [s.name for s in self.document.circuit.sequences]
        if name in names:
            self.list.setCurrentCell(names.index(name), 0)
            self.list.selectRow(names.index(name))

    def _current_changed(self, *_args) -> None:
        self._show_properties()
        name = self.current_name()
        if name is not None:
            self.current_changed.emit(name)

    def _show_properties(self) -> None:
        has = self.current_name() is not None
        for w in (self.duplicate_button, self.delete_button, self.up_button, self.down_button):
            w.setEnabled(has)

    # ---------------------------------------------------------- editing
    def _push(self, make) -> bool:
        """Build a command and push it; a refused edit shows its reason and changes nothing."""
        try:
            self.document.push(make())
        except ModelError as exc:
            self.status.setText(str(exc))
            return False
        self.status.setText("")
        return True

    def _fresh_name(self, stem: str) -> str:
        taken = {s.name for s in self.document.circuit.sequences}
        i = 1
        while f"{stem}{i}" in taken:
            i += 1
        return f"{stem}{i}"

    def add_sequence(self) -> None:
        """Add an empty sequence after the current one, as long as it (or 20 steps)."""
        name = self.current_name()
        seqs = self.document.circuit.sequences
        length = self.document.circuit.sequence(name).length if name else DEFAULT_LENGTH
        index = [s.name for s in seqs].index(name) + 1 if name else len(seqs)
        new = Sequence(name=self._fresh_name("sequence"), length=length)
        if self._push(lambda: AddSequences(self.document, [new], index)):
            self.set_current(new.name)

    def duplicate_selected(self) -> None:
        names = self.selected_names() or ([self.current_name()] if self.current_name() else [])
        if not names:
            return
        copies, taken = [], {s.name for s in self.document.circuit.sequences}
        for n in names:
            copy = self.document.circuit.sequence(n).model_copy(deep=True)
            i = 1
            while f"{n} copy{'' if i == 1 else f' {i}'}" in taken:
                i += 1
            copy.name = f"{n} copy{'' if i == 1 else f' {i}'}"
            taken.add(copy.name)
            copies.append(copy)
        last = [s.name for s in self.document.circuit.sequences].index(names[-1]) + 1
        if self._push(lambda: AddSequences(self.document, copies, last,
                                           f"Duplicate {len(copies)} sequence{'s' if len(copies) > 1 else ''}")):
            self.set_current(copies[0].name)

    def delete_selected(self) -> None:
        names = self.selected_names() or ([self.current_name()] if self.current_name() else [])
        if names:
            self._push(lambda: RemoveSequences(self.document, names))

    def rename(self, old: str, new: str) -> bool:
        if new.strip() == old:
            return True
        ok = self._push(lambda: RenameSequence(self.document, old, new))
        if ok:
            self.set_current(new.strip())
        return ok

    def _item_edited(self, item: QTableWidgetItem) -> None:
        name_item = self.list.item(item.row(), 0)
        if name_item is None:
            return
        name = name_item.data(Qt.ItemDataRole.UserRole)
        if item.column() == 0:
            ok = self.rename(name, item.text())
        elif item.column() == 1:
            ok = self.set_length(name, item.data(Qt.ItemDataRole.EditRole))
        else:
            ok = self.set_held_out([name], item.checkState() == Qt.CheckState.Checked)
        if not ok:
            self._refresh_timer.start()  # show the stored value again

    def move_current(self, delta: int) -> None:
        name = self.current_name()
        if name is None:
            return
        index = [s.name for s in self.document.circuit.sequences].index(name)
        target = index + delta
        if 0 <= target < len(self.document.circuit.sequences):
            self._push(lambda: MoveSequence(self.document, name, target))

    def set_length(self, name: str, length) -> bool:
        try:
            length = int(length)
        except (TypeError, ValueError):
            self.status.setText(f"'{length}' is not a whole number of steps")
            return False
        if self.document.circuit.sequence(name).length == length:
            return True
        return self._push(lambda: ResizeSequence(self.document, name, length))

    def set_held_out(self, names: list[str], held_out: bool) -> bool:
        if all(self.document.circuit.sequence(n).held_out == held_out for n in names):
            return True
        return self._push(lambda: SetHeldOut(self.document, names, held_out))

    # ------------------------------------------------ generate, import, export
    def generator_dialog(self) -> GeneratorDialog:
        """A dialog pre-filled with a row for each clamped and each targeted unit."""
        c = self.document.circuit
        suggestions = []
        for u in c.units:
            sched = c.schedule_for(u.name)
            if sched.clamp != "none" or u.initial_mode == "clamped":
                suggestions.append((u.name, "clamp"))
        for u in c.units:
            if c.schedule_for(u.name).target != "none":
                suggestions.append((u.name, "target"))
        selected = self.selected_names()
        dialog = GeneratorDialog(c.unit_names(), selected, suggestions, self)
        if selected and all(_is_empty(c.sequence(n)) for n in selected):
            dialog.fill_button.setChecked(True)  # sequences just added, still without values: fill them
        first_input = next((u for u, layer in suggestions if layer == "clamp"), "")
        for row in dialog.rows:
            if row.layer_box.currentData() == "target":
                row.sources.setText(first_input)
        return dialog

    def open_generator(self) -> None:
        dialog = self.generator_dialog()
        if dialog.exec():
            self.generate_from(dialog)

    def generate_from(self, dialog: GeneratorDialog) -> None:
        """Run the dialog's recipes as one undo step."""
        try:
            recipes = dialog.recipes()
            if dialog.fill_button.isChecked():
                names = self.selected_names()
                filled = {s.name: s for s in fill_sequences(
                    [self.document.circuit.sequence(n) for n in names], recipes, dialog.seed.value())}
                new = [filled.get(s.name, s) for s in self.document.circuit.sequences]
                text = f"Generate rows of {len(names)} sequence{'s' if len(names) != 1 else ''}"
                self.document.push(ReplaceSequences(self.document, new, text))
            else:
                seqs = generate_sequences(recipes, dialog.count.value(), dialog.length.value(),
                                          dialog.seed.value(), dialog.stem.text().strip() or "generated",
                                          {s.name for s in self.document.circuit.sequences},
                                          min(dialog.held_out.value(), dialog.count.value()))
                self.document.push(AddSequences(self.document, seqs, text=f"Generate {len(seqs)} sequences"))
                self.set_current(seqs[0].name)
        except ModelError as exc:
            self.status.setText(str(exc))

    def import_csv(self, path: str, replace: bool = False) -> bool:
        """Read sequences from a CSV file (one undo step); on any problem nothing changes."""
        c = self.document.circuit
        try:
            seqs = read_csv_file(path, c.unit_names())
            if replace:
                cmd = ReplaceSequences(self.document, seqs, f"Import {len(seqs)} sequences (replacing)")
            else:
                cmd = AddSequences(self.document, seqs, text=f"Import {len(seqs)} sequences")
        except SequenceCsvError as exc:
            self.status.setText(str(exc))
            return False
        except ModelError as exc:
            self.status.setText(f"{path}: {exc}; nothing was imported (to replace all the sequences "
                                "instead, use Circuit > Replace sequences from CSV...)")
            return False
        self.document.push(cmd)
        self.status.setText(f"Imported {len(seqs)} sequences from {Path(path).name}")
        return True

    def export_csv(self, path: str) -> bool:
        try:
            write_csv_file(path, circuit_csv(self.document.circuit))
        except OSError as exc:
            self.status.setText(f"cannot write {path} ({exc.strerror or exc})")
            return False
        self.status.setText(f"Wrote {len(self.document.circuit.sequences)} sequences to {Path(path).name}")
        return True

    def _ask_import(self, replace: bool = False) -> None:
        title = "Replace sequences from CSV" if replace else "Import sequences"
        path, _ = QFileDialog.getOpenFileName(self, title, "", "CSV files (*.csv);;All files (*)")
        if path:
            self.import_csv(path, replace)

    def _ask_export(self) -> None:
        path, _ = QFileDialog.getSaveFileName(self, "Export sequences", "sequences.csv", "CSV files (*.csv)")
        if path:
            self.export_csv(path)


def _is_empty(sequence) -> bool:
    return all(v is None for values in (*sequence.clamps.values(), *sequence.targets.values()) for v in values)


def connect_panels(sequences: SequencesPanel, grid) -> None:
    """Make the grid show the sequence chosen in the list."""
    sequences.current_changed.connect(grid.set_sequence)
    if sequences.current_name():
        grid.set_sequence(sequences.current_name())


def setup(window) -> None:
    """Dock the sequences list (left) and the schedule grid (bottom) in the main window."""
    from circuitlab.gui.panels.schedule_grid import ScheduleGridPanel

    sequences = SequencesPanel(window.document)
    grid = ScheduleGridPanel(window.document)
    window.sequences_panel, window.schedule_grid = sequences, grid
    window.add_panel(sequences, "Sequences", "sequences", Qt.DockWidgetArea.LeftDockWidgetArea)
    window.add_panel(grid, "Inputs and Targets", "schedule_grid", Qt.DockWidgetArea.BottomDockWidgetArea)
    connect_panels(sequences, grid)
    window.selection_changed.connect(lambda units, _connections: grid.highlight_units(units))
    menu = window.menu("Circuit")
    menu.addSeparator()
    for text, slot in (("Generate sequences...", sequences.open_generator),
                       ("Import sequences from CSV...", sequences._ask_import),
                       ("Replace sequences from CSV...", lambda: sequences._ask_import(replace=True)),
                       ("Export sequences to CSV...", sequences._ask_export)):
        menu.addAction(text).triggered.connect(lambda _checked=False, s=slot: s())
