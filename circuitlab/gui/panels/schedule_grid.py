"""The schedule grid: for one sequence, every unit by every time step.

Each cell shows what feeds or judges that unit at that step, told apart by
shape and type as well as colour:

- clamped to data: solid bar on the left edge, value in bold (``?`` if missing);
- carries a target: dashed frame, value in italics (``?`` if missing);
- initial state (step 0, not clamped): ``◆`` and the current value if learned,
  ``○`` and the value if fixed;
- free: empty, or a stored value the schedule does not use, in brackets;
- problem (from ``model.find_problems``): red double frame with a ``!`` corner,
  explained in the tooltip and listed below the grid.

The grid reads masks from ``model.schedule`` (the same functions the engine
compiles from), so what it shows is what trains. Edits go to the document as
undo commands (``gui.commands.sequence_edits``).

Where a typed, filled or pasted value goes: into the clamp value if the cell
is clamped, the target value if it carries a target; a free cell takes a
value for the unit's "given" layer if it has one, else for the layer its
schedule uses (targets for a unit that only carries targets), else for the
layer chosen in "Free cells take". Presets change only the schedule, never
stored values: clamping every step where some values are missing marks
those cells as problems until they are filled.
"""

import math
from dataclasses import dataclass, field

from PySide6.QtCore import (QAbstractTableModel, QEvent, QItemSelection, QModelIndex, QPointF, QRect, QRectF, QSize, Qt, QTimer, Signal)
from PySide6.QtGui import (QAction, QBrush, QColor, QFont, QGuiApplication, QKeySequence, QPainter,
                           QPalette, QPen, QPolygonF)
from PySide6.QtWidgets import (QAbstractItemView, QComboBox, QHBoxLayout, QHeaderView, QInputDialog,
                               QLabel, QLineEdit, QListWidget, QListWidgetItem, QMenu, QPushButton,
                               QSplitter, QStyle, QStyledItemDelegate, QTableView, QToolButton,
                               QVBoxLayout, QWidget)

from circuitlab.gui.commands.sequence_edits import SetCells, SetSchedules
from circuitlab.gui.document import Document
from circuitlab.model import ModelError, Problem, clamp_mask, find_problems, target_mask
from circuitlab.model.schedule import with_clamp_preset, with_target_preset

CELL_ROLE = Qt.ItemDataRole.UserRole + 1

CLAMP_PRESETS = [("none", "No clamp"), ("initial", "Clamp at step 0 only"),
                 ("every", "Clamp at every step"), ("steps", "Clamp at the selected steps"),
                 ("given", "Clamp wherever a value is given")]
TARGET_PRESETS = [("none", "No target"), ("final", "Target at the final step"),
                  ("last", "Target at the last k steps..."), ("every", "Target at every step"),
                  ("steps", "Target at the selected steps"),
                  ("given", "Target wherever a value is given")]

COLOURS = {
    "clamp_bg": QColor("#dce8f6"), "clamp_bar": QColor("#1d4f91"),
    "target_bg": QColor("#fcefd6"), "target_frame": QColor("#8a5a00"),
    "initial_bg": QColor("#ececec"), "text": QColor("#1a1a1a"), "muted": QColor("#7a7a7a"),
    "problem": QColor("#c4161c"), "highlight_row": QColor("#fff7c2"),
}


@dataclass
class Cell:
    """What one (unit, step) cell of the current sequence is."""

    clamped: bool = False
    targeted: bool = False
    clamp_value: float | None = None
    target_value: float | None = None
    initial: str | None = None  # "learned" or "fixed" at an unclamped step 0
    initial_value: float | None = None
    problems: list[str] = field(default_factory=list)

    @property
    def kind(self) -> str:
        if self.clamped:
            return "clamp"
        if self.targeted:
            return "target"
        return "initial" if self.initial else "free"

    def text(self) -> str:
        if self.clamped and self.targeted:
            return f"{_fmt(self.clamp_value)}|{_fmt(self.target_value)}"
        if self.clamped:
            return _fmt(self.clamp_value)
        if self.targeted:
            return _fmt(self.target_value)
        if self.initial:
            return ("◆ " if self.initial == "learned" else "○ ") + _fmt(self.initial_value)
        stored = self.clamp_value if self.clamp_value is not None else self.target_value
        return f"({_fmt(stored)})" if stored is not None else ""

    def describe(self, unit: str, step: int) -> str:
        parts = []
        if self.clamped:
            parts.append(f"clamped to {_fmt(self.clamp_value)}" if self.clamp_value is not None
                         else "clamped, but no value is given")
        if self.targeted:
            parts.append(f"target {_fmt(self.target_value)}" if self.target_value is not None
                         else "carries a target, but no value is given")
        if self.initial:
            parts.append(f"initial state, {self.initial} ({_fmt(self.initial_value)})")
        if not parts:
            parts.append("free (computed by the circuit)")
            if self.clamp_value is not None:
                parts.append(f"stored clamp value {_fmt(self.clamp_value)} is not used")
            if self.target_value is not None:
                parts.append(f"stored target value {_fmt(self.target_value)} is not used")
        lines = [f"{unit}, step {step}: " + "; ".join(parts)]
        lines += [f"problem: {p}" for p in self.problems]
        return "\n".join(lines)


def _fmt(v: float | None) -> str:
    return "?" if v is None else f"{v:.4g}"


def parse_value(text: str) -> float | None:
    """A cell's text as a value: empty clears; anything but a finite number raises ValueError."""
    text = text.strip()
    if not text:
        return None
    v = float(text)
    if not math.isfinite(v):
        raise ValueError(f"'{text}' is not a finite number")
    return v


class ScheduleModel(QAbstractTableModel):
    """Rows are the circuit's units, columns the steps 0..T of one sequence."""

    message = Signal(str)

    def __init__(self, document: Document, parent=None):
        super().__init__(parent)
        self.document = document
        self.sequence_name: str | None = None
        self.free_layer = "clamp"
        self.highlighted: set[str] = set()
        self._units: list[str] = []
        self._cmask: list[list[bool]] = []
        self._tmask: list[list[bool]] = []
        self._problems: dict[tuple[int, int], list[str]] = {}
        self._row_problems: dict[int, list[str]] = {}
        self.problems: list[Problem] = []      # the current sequence's and the schedule's
        self.other_problems = 0                # in other sequences or not about data
        self._steps = 0

    # ----------------------------------------------------------- refreshing
    def sequence(self):
        if self.sequence_name is None:
            return None
        try:
            return self.document.circuit.sequence(self.sequence_name)
        except ModelError:
            return None

    def set_sequence(self, name: str | None) -> None:
        self.sequence_name = name
        self.refresh()

    def refresh(self, problems: list[Problem] | None = None) -> None:
        """Recompute the masks (cheap) and the problems of the current sequence."""
        self.beginResetModel()
        c = self.document.circuit
        seq = self.sequence()
        self._units = c.unit_names() if seq is not None else []
        self._steps = seq.steps if seq is not None else 0
        self._cmask, self._tmask = [], []
        if seq is not None:
            for u in c.units:
                sched = c.schedule_for(u.name)
                self._cmask.append(clamp_mask(u, sched, seq))
                self._tmask.append(target_mask(u, sched, seq))
        self._place_problems(find_problems(c) if problems is None else problems)
        self.endResetModel()

    def _place_problems(self, problems: list[Problem]) -> None:
        self._problems, self._row_problems, self.problems = {}, {}, []
        self.other_problems = 0
        rows = {u: i for i, u in enumerate(self._units)}
        for p in problems:
            mine = p.sequence == self.sequence_name if p.sequence is not None else p.unit in rows
            if not mine:
                self.other_problems += 1
                continue
            self.problems.append(p)
            row = rows.get(p.unit) if p.unit is not None else None
            if row is None:
                continue
            steps = p.steps or ((p.step,) if p.step is not None else ())
            if p.sequence is None or not steps:
                self._row_problems.setdefault(row, []).append(p.message)
            for t in steps:
                if 0 <= t < self._steps:
                    self._problems.setdefault((row, t), []).append(p.message)

    # ---------------------------------------------------------------- cells
    def unit_at(self, row: int) -> str:
        return self._units[row]

    def problem_cells(self) -> set[tuple[int, int]]:
        return set(self._problems)

    def cell(self, row: int, step: int) -> Cell:
        seq = self.sequence()
        unit = self._units[row]
        cell = Cell(clamped=self._cmask[row][step], targeted=self._tmask[row][step],
                    clamp_value=seq.clamp_value(unit, step), target_value=seq.target_value(unit, step),
                    problems=self._problems.get((row, step), []))
        if step == 0 and not cell.clamped:
            u = self.document.circuit.units[row]
            cell.initial = "learned" if u.initial_mode == "learned" else "fixed"
            cell.initial_value = u.initial_state()
        return cell

    def layer_for(self, row: int, step: int) -> str:
        """Which value (clamp or target) an edit of this cell sets (see the module docstring)."""
        if self._cmask[row][step]:
            return "clamp"
        if self._tmask[row][step]:
            return "target"
        sched = self.document.circuit.schedule_for(self._units[row])
        if sched.clamp == "given":
            return "clamp"
        if sched.target == "given":
            return "target" if step > 0 else "clamp"
        if sched.target != "none" and sched.clamp == "none" and step > 0:
            return "target"
        if sched.clamp != "none":
            return "clamp"
        return self.free_layer if step > 0 else "clamp"

    def set_values(self, cells: list[tuple[int, int, float | None]], text: str = "") -> int:
        """Push one undo command setting ``(row, step, value)`` cells; returns how many were set."""
        seq = self.sequence()
        if seq is None:
            return 0
        changes, skipped = [], 0
        for row, step, value in cells:
            layer = self.layer_for(row, step)
            if layer == "target" and step == 0:
                skipped += 1
                continue
            unit = self._units[row]
            if seq.value(layer, unit, step) != value:
                changes.append((layer, unit, step, value))
        if skipped:
            self.message.emit("step 0 is the initial state and cannot carry a target")
        if changes:
            self.document.push(SetCells(self.document, seq.name, changes, text))
        return len(changes)

    # ------------------------------------------------------ Qt model methods
    def rowCount(self, parent=QModelIndex()) -> int:
        return 0 if parent.isValid() else len(self._units)

    def columnCount(self, parent=QModelIndex()) -> int:
        return 0 if parent.isValid() else self._steps

    def data(self, index, role=Qt.ItemDataRole.DisplayRole):
        if not index.isValid():
            return None
        row, step = index.row(), index.column()
        if role == CELL_ROLE:
            return self.cell(row, step)
        if role == Qt.ItemDataRole.DisplayRole:
            return self.cell(row, step).text()
        if role == Qt.ItemDataRole.EditRole:
            v = self.sequence().value(self.layer_for(row, step), self._units[row], step)
            return "" if v is None else repr(v)
        if role == Qt.ItemDataRole.ToolTipRole:
            return self.cell(row, step).describe(self._units[row], step)
        return None

    def setData(self, index, value, role=Qt.ItemDataRole.EditRole) -> bool:
        if role != Qt.ItemDataRole.EditRole or not index.isValid():
            return False
        try:
            v = parse_value(str(value))
        except ValueError:
            self.message.emit(f"'{value}' is not a number; nothing was changed")
            return False
        self.set_values([(index.row(), index.column(), v)])
        return True

    def flags(self, index):
        return (Qt.ItemFlag.ItemIsEnabled | Qt.ItemFlag.ItemIsSelectable | Qt.ItemFlag.ItemIsEditable)

    def headerData(self, section, orientation, role=Qt.ItemDataRole.DisplayRole):
        if orientation == Qt.Orientation.Horizontal:
            if role == Qt.ItemDataRole.DisplayRole:
                return "0 init" if section == 0 else str(section)
            if role == Qt.ItemDataRole.ToolTipRole:
                return "step 0: the initial state" if section == 0 else f"step {section}"
            return None
        if section >= len(self._units):
            return None
        unit = self._units[section]
        if role == Qt.ItemDataRole.DisplayRole:
            role_text = self._role_text(section)
            mark = ("! " if section in self._row_problems else "") + ("▸ " if unit in self.highlighted else "")
            return mark + unit + (f" · {role_text}" if role_text else "")
        if role == Qt.ItemDataRole.ToolTipRole:
            lines = [f"{unit}: {self._role_text(section, long=True)}"]
            lines += [f"problem: {m}" for m in self._row_problems.get(section, [])]
            return "\n".join(lines)
        if role == Qt.ItemDataRole.FontRole and unit in self.highlighted:
            f = QFont()
            f.setBold(True)
            return f
        if role == Qt.ItemDataRole.ForegroundRole and section in self._row_problems:
            return QBrush(COLOURS["problem"])
        return None

    def _role_text(self, row: int, long: bool = False) -> str:
        c = self.document.circuit
        sched = c.schedule_for(self._units[row])
        clamp = {"none": "", "initial": "clamp 0", "every": "clamp every", "steps": "clamp steps",
                 "given": "clamp given"}
        target = {"none": "", "final": "target T", "last": f"target last {sched.target_last}",
                  "every": "target every", "steps": "target steps", "given": "target given"}
        if long:
            parts = [f"clamp: {sched.clamp}" + (f" {sched.clamp_steps}" if sched.clamp == "steps" else ""),
                     f"target: {sched.target}" + (f" {sched.target_steps}" if sched.target == "steps" else "")
                     + (f" {sched.target_last}" if sched.target == "last" else ""),
                     f"initial state: {c.units[row].initial_mode}"]
            return "; ".join(parts)
        bits = [clamp[sched.clamp], target[sched.target]]
        return " ".join(b for b in bits if b)


def paint_cell(painter: QPainter, rect: QRect, cell: Cell, font: QFont, highlight_row: bool = False) -> None:
    """Draw one cell; also used for the legend, so the legend is exactly what the grid shows."""
    painter.save()
    r = QRectF(rect)
    bg = {"clamp": COLOURS["clamp_bg"], "target": COLOURS["target_bg"],
          "initial": COLOURS["initial_bg"]}.get(cell.kind)
    if bg is None and highlight_row:
        bg = COLOURS["highlight_row"]
    if bg is not None:
        painter.fillRect(r, bg)
    if cell.targeted:
        pen = QPen(COLOURS["target_frame"], 1.5, Qt.PenStyle.DashLine)
        painter.setPen(pen)
        painter.drawRect(r.adjusted(2, 2, -2, -2))
    if cell.clamped:
        painter.fillRect(QRectF(r.left(), r.top(), 4, r.height()), COLOURS["clamp_bar"])
    f = QFont(font)
    colour = COLOURS["text"]
    if cell.clamped:
        f.setBold(True)
    elif cell.targeted:
        f.setItalic(True)
    else:
        colour = COLOURS["muted"]
    missing = (cell.clamped and cell.clamp_value is None) or (cell.targeted and cell.target_value is None)
    if missing:
        colour = COLOURS["problem"]
    painter.setFont(f)
    painter.setPen(colour)
    painter.drawText(r.adjusted(6, 0, -3, 0), Qt.AlignmentFlag.AlignVCenter | Qt.AlignmentFlag.AlignLeft,
                     cell.text())
    if cell.problems:
        painter.setPen(QPen(COLOURS["problem"], 1.0))
        painter.drawRect(r.adjusted(0.5, 0.5, -1.5, -1.5))
        painter.drawRect(r.adjusted(2.5, 2.5, -3.5, -3.5))
        corner = QPolygonF([QPointF(r.right() - 11, r.top()), r.topRight(),
                            QPointF(r.right(), r.top() + 11)])
        painter.setBrush(COLOURS["problem"])
        painter.setPen(Qt.PenStyle.NoPen)
        painter.drawPolygon(corner)
        small = QFont(font)
        small.setPointSizeF(max(5.0, font.pointSizeF() * 0.65))
        small.setBold(True)
        painter.setFont(small)
        painter.setPen(QColor("white"))
        painter.drawText(QRectF(r.right() - 7, r.top() - 1, 7, 8), Qt.AlignmentFlag.AlignCenter, "!")
    painter.restore()


class CellDelegate(QStyledItemDelegate):
    """Paints cells with ``paint_cell`` and edits them with a plain line edit."""

    def __init__(self, model: ScheduleModel, parent=None):
        super().__init__(parent)
        self.model = model

    def paint(self, painter, option, index):
        cell = index.data(CELL_ROLE)
        unit = self.model.unit_at(index.row())
        painter.fillRect(option.rect, option.palette.color(QPalette.ColorRole.Base))
        paint_cell(painter, option.rect, cell, option.font, unit in self.model.highlighted)
        if option.state & QStyle.StateFlag.State_Selected:
            sel = QColor(option.palette.color(QPalette.ColorRole.Highlight))
            sel.setAlpha(70)
            painter.fillRect(option.rect, sel)
            painter.setPen(QPen(option.palette.color(QPalette.ColorRole.Highlight), 1))
            painter.drawRect(QRectF(option.rect).adjusted(0.5, 0.5, -1.5, -1.5))

    def createEditor(self, parent, option, index):
        editor = QLineEdit(parent)
        editor.setFrame(False)
        return editor

    def setEditorData(self, editor, index):
        editor.setText(index.data(Qt.ItemDataRole.EditRole))

    def setModelData(self, editor, model, index):
        model.setData(index, editor.text(), Qt.ItemDataRole.EditRole)


class GridView(QTableView):
    """The table: copy, paste and delete work on the selected block."""

    paste_requested = Signal()
    copy_requested = Signal()
    clear_requested = Signal()

    def _own_key(self, event) -> bool:
        return (event.matches(QKeySequence.StandardKey.Paste) or event.matches(QKeySequence.StandardKey.Copy)
                or event.key() in (Qt.Key.Key_Delete, Qt.Key.Key_Backspace))

    def event(self, event):
        # keep paste, copy and delete here rather than letting window shortcuts (the canvas's) take them
        if event.type() == QEvent.Type.ShortcutOverride and self._own_key(event):
            event.accept()
            return True
        return super().event(event)

    def keyPressEvent(self, event):
        if event.matches(QKeySequence.StandardKey.Paste):
            self.paste_requested.emit()
        elif event.matches(QKeySequence.StandardKey.Copy):
            self.copy_requested.emit()
        elif event.key() in (Qt.Key.Key_Delete, Qt.Key.Key_Backspace) and self.state() != self.State.EditingState:
            self.clear_requested.emit()
        else:
            super().keyPressEvent(event)


class Legend(QWidget):
    """Sample cells with captions, drawn by the grid's own painter."""

    SAMPLES = [
        (Cell(clamped=True, clamp_value=1.0), "clamped"),
        (Cell(targeted=True, target_value=0.5), "target"),
        (Cell(initial="learned", initial_value=0.2), "learned initial"),
        (Cell(initial="fixed", initial_value=0.5), "fixed initial"),
        (Cell(clamp_value=0.3), "stored, unused"),
        (Cell(clamped=True, problems=["x"]), "problem"),
    ]

    def __init__(self, parent=None):
        super().__init__(parent)
        self.setToolTip("Clamped: solid bar at the left, value in bold.\n"
                        "Target: dashed frame, value in italics.\n"
                        "◆ learned initial state, ○ fixed initial state (step 0).\n"
                        "(v): a stored value the schedule does not use.\n"
                        "?: the schedule needs a value here and none is given.\n"
                        "Red double frame with a ! corner: a problem; hover over the cell for the reason.")

    SAMPLE_W, ROW_H = 40, 24

    def _places(self, width: int) -> list[tuple[int, int, int]]:
        """(x, y, caption width) of each sample, wrapping into rows to fit ``width``."""
        fm = self.fontMetrics()
        x, y, out = 2, 1, []
        for _cell, caption in self.SAMPLES:
            w = fm.horizontalAdvance(caption) + 4
            if x > 2 and x + self.SAMPLE_W + 4 + w > width:
                x, y = 2, y + self.ROW_H
            out.append((x, y, w))
            x += self.SAMPLE_W + 4 + w + 12
        return out

    def hasHeightForWidth(self) -> bool:
        return True

    def heightForWidth(self, width: int) -> int:
        return self._places(width)[-1][1] + self.ROW_H + 1

    def sizeHint(self) -> QSize:
        return QSize(640, self.heightForWidth(640))

    def minimumSizeHint(self) -> QSize:
        return QSize(160, self.heightForWidth(max(160, self.width())))

    def resizeEvent(self, event):
        self.setMinimumHeight(self.heightForWidth(event.size().width()))
        super().resizeEvent(event)

    def paintEvent(self, event):
        p = QPainter(self)
        h = self.ROW_H - 2
        p.setPen(self.palette().color(QPalette.ColorRole.WindowText))
        for (cell, caption), (x, y, w) in zip(self.SAMPLES, self._places(self.width())):
            paint_cell(p, QRect(x, y, self.SAMPLE_W, h), cell, self.font())
            p.setPen(self.palette().color(QPalette.ColorRole.WindowText))
            p.drawText(QRect(x + self.SAMPLE_W + 4, y, w, h), Qt.AlignmentFlag.AlignVCenter, caption)
        p.end()


class ScheduleGridPanel(QWidget):
    """The dock's widget: sequence chooser, presets, fill and paste, the grid, its problems."""

    def __init__(self, document: Document, parent=None):
        super().__init__(parent)
        self.setObjectName("schedule_grid")
        self.document = document
        self.model = ScheduleModel(document, self)
        self._refresh_timer = QTimer(self, singleShot=True, interval=0)
        self._refresh_timer.timeout.connect(self.refresh)

        self.sequence_box = QComboBox()
        self.sequence_box.setMinimumContentsLength(12)
        self.sequence_box.currentTextChanged.connect(self._sequence_chosen)
        self.clamp_button = self._preset_button("Clamp", CLAMP_PRESETS, self.set_clamp)
        self.target_button = self._preset_button("Target", TARGET_PRESETS, self._target_action)
        self.value_edit = QLineEdit()
        self.value_edit.setPlaceholderText("value")
        self.value_edit.setMinimumWidth(60)
        self.value_edit.setMaximumWidth(90)
        self.value_edit.returnPressed.connect(self.fill_selection)
        self.fill_button = QPushButton("Fill selection")
        self.fill_button.clicked.connect(self.fill_selection)
        self.clear_button = QPushButton("Clear selection")
        self.clear_button.clicked.connect(self.clear_selection)
        self.free_box = QComboBox()
        self.free_box.addItem("clamp values", "clamp")
        self.free_box.addItem("target values", "target")
        self.free_box.setToolTip("Where values typed into a free cell go when the unit's schedule "
                                 "does not say")
        self.free_box.currentIndexChanged.connect(
            lambda _i: setattr(self.model, "free_layer", self.free_box.currentData()))

        bar = QHBoxLayout()
        bar.setContentsMargins(0, 0, 0, 0)
        for w in (QLabel("Sequence"), self.sequence_box, self.clamp_button, self.target_button,
                  self.value_edit, self.fill_button, self.clear_button):
            bar.addWidget(w)
        bar.addStretch(1)
        second = QHBoxLayout()
        second.setContentsMargins(0, 0, 0, 0)
        second.addWidget(Legend(), 1)
        second.addWidget(QLabel("Free cells take"))
        second.addWidget(self.free_box)

        self.view = GridView()
        self.view.setModel(self.model)
        self.delegate = CellDelegate(self.model, self.view)
        self.view.setItemDelegate(self.delegate)
        self.view.setSelectionMode(QAbstractItemView.SelectionMode.ExtendedSelection)
        self.view.setEditTriggers(QAbstractItemView.EditTrigger.DoubleClicked
                                  | QAbstractItemView.EditTrigger.AnyKeyPressed
                                  | QAbstractItemView.EditTrigger.EditKeyPressed)
        self.view.setWordWrap(False)
        self.view.setShowGrid(True)
        hh, vh = self.view.horizontalHeader(), self.view.verticalHeader()
        hh.setSectionResizeMode(QHeaderView.ResizeMode.Fixed)
        hh.setDefaultSectionSize(50)
        vh.setSectionResizeMode(QHeaderView.ResizeMode.Fixed)
        vh.setDefaultSectionSize(24)
        self.view.paste_requested.connect(self.paste)
        self.view.copy_requested.connect(self.copy_selection)
        self.view.clear_requested.connect(self.clear_selection)

        self.problem_list = QListWidget()
        self.problem_list.setObjectName("schedule_problems")
        self.problem_list.itemActivated.connect(self._go_to_problem)
        self.problem_list.itemClicked.connect(self._go_to_problem)
        self.status = QLabel()
        self.status.setWordWrap(True)
        self.model.message.connect(self.status.setText)

        split = QSplitter(Qt.Orientation.Vertical)
        split.addWidget(self.view)
        problems = QWidget()
        pl = QVBoxLayout(problems)
        pl.setContentsMargins(0, 0, 0, 0)
        self.problem_title = QLabel()
        pl.addWidget(self.problem_title)
        pl.addWidget(self.problem_list)
        split.addWidget(problems)
        split.setStretchFactor(0, 4)
        split.setStretchFactor(1, 1)

        layout = QVBoxLayout(self)
        layout.setContentsMargins(4, 4, 4, 4)
        layout.addLayout(bar)
        layout.addLayout(second)
        layout.addWidget(split, 1)
        layout.addWidget(self.status)

        for sig in (document.data_changed, document.structure_changed, document.values_changed,
                    document.settings_changed, document.replaced):
            sig.connect(self._refresh_timer.start)
        self.refresh()

    # ---------------------------------------------------------- building
    def _preset_button(self, text: str, presets, slot) -> QToolButton:
        button = QToolButton()
        button.setText(text)
        button.setToolTip(f"{text} presets for the units of the selected rows")
        button.setPopupMode(QToolButton.ToolButtonPopupMode.InstantPopup)
        menu = QMenu(button)
        for mode, label in presets:
            action = QAction(label, menu)
            action.setData(mode)
            action.triggered.connect(lambda _checked=False, m=mode: slot(m))
            menu.addAction(action)
        button.setMenu(menu)
        return button

    def preset_action(self, which: str, mode: str) -> QAction:
        """The menu action of a preset (``which`` is "clamp" or "target")."""
        button = self.clamp_button if which == "clamp" else self.target_button
        return next(a for a in button.menu().actions() if a.data() == mode)

    # --------------------------------------------------------- refreshing
    def refresh(self) -> None:
        """Follow the document: sequence names, masks, problems."""
        names = [s.name for s in self.document.circuit.sequences]
        current = self.model.sequence_name
        if current not in names:
            current = names[0] if names else None
        self.sequence_box.blockSignals(True)
        self.sequence_box.clear()
        self.sequence_box.addItems(names)
        if current is not None:
            self.sequence_box.setCurrentText(current)
        self.sequence_box.blockSignals(False)
        selection = [(r.top(), r.left(), r.bottom(), r.right()) for r in self.view.selectionModel().selection()]
        focus = self.view.currentIndex()
        focus = (focus.row(), focus.column()) if focus.isValid() else None
        self.model.sequence_name = current
        self.model.refresh()
        self._restore_selection(selection, focus)
        self._show_problems()

    def select_block(self, ranges) -> None:
        """Select the cell blocks ``(top, left, bottom, right)`` (clipped to the grid)."""
        rows, cols = self.model.rowCount(), self.model.columnCount()
        sel = QItemSelection()
        for top, left, bottom, right in ranges:
            bottom, right = min(bottom, rows - 1), min(right, cols - 1)
            if top <= bottom and left <= right:
                sel.select(self.model.index(top, left), self.model.index(bottom, right))
        sm = self.view.selectionModel()
        sm.select(sel, sm.SelectionFlag.ClearAndSelect)

    def _restore_selection(self, ranges, focus) -> None:
        self.select_block(ranges)
        sm = self.view.selectionModel()
        if focus and focus[0] < self.model.rowCount() and focus[1] < self.model.columnCount():
            sm.setCurrentIndex(self.model.index(*focus), sm.SelectionFlag.NoUpdate)

    def _show_problems(self) -> None:
        self.problem_list.clear()
        for p in self.model.problems:
            item = QListWidgetItem(f"⚠ {p.message}")
            item.setData(Qt.ItemDataRole.UserRole, (p.unit, p.step))
            item.setToolTip(str(p))
            self.problem_list.addItem(item)
        self.problem_list.setVisible(bool(self.model.problems))
        n, other = len(self.model.problems), self.model.other_problems
        if self.model.sequence_name is None:
            text = "No sequence yet: add or generate one in the Sequences panel"
        elif n:
            text = f"{n} problem{'s' if n != 1 else ''} in this sequence and its schedule"
        else:
            text = "No problems in this sequence"
        if other:
            text += f"; {other} elsewhere (see the circuit's problems)"
        if n or other:
            text += ". Training will not start until they are resolved."
        self.problem_title.setText(text)

    def set_sequence(self, name: str) -> None:
        """Show sequence ``name``."""
        self.sequence_box.setCurrentText(name)

    def _sequence_chosen(self, name: str) -> None:
        if name and name != self.model.sequence_name:
            self.model.set_sequence(name)
            self._show_problems()

    def highlight_units(self, names) -> None:
        """Mark the rows of these units (for example those selected on the canvas) and show the first."""
        self.model.highlighted = set(names)
        self.model.headerDataChanged.emit(Qt.Orientation.Vertical, 0, max(0, self.model.rowCount() - 1))
        self.view.viewport().update()
        rows = [i for i, u in enumerate(self.model._units) if u in self.model.highlighted]
        if rows:
            self.view.scrollTo(self.model.index(rows[0], max(0, self.view.currentIndex().column())))

    def _go_to_problem(self, item: QListWidgetItem) -> None:
        unit, step = item.data(Qt.ItemDataRole.UserRole)
        if unit in self.model._units:
            index = self.model.index(self.model._units.index(unit), step or 0)
            self.view.setCurrentIndex(index)
            self.view.scrollTo(index)

    # ------------------------------------------------------------ editing
    def selected_rows(self) -> list[int]:
        rows = {i.row() for i in self.view.selectedIndexes()}
        if not rows and self.view.currentIndex().isValid():
            rows = {self.view.currentIndex().row()}
        return sorted(rows)

    def selected_steps(self) -> list[int]:
        return sorted({i.column() for i in self.view.selectedIndexes()})

    def set_clamp(self, mode: str, steps: list[int] | None = None) -> None:
        """Apply a clamp preset to the units of the selected rows (one undo step)."""
        rows = self.selected_rows()
        if not rows:
            self.status.setText("Select cells in the rows of the units to change first")
            return
        c = self.document.circuit
        changes = {}
        for row in rows:
            unit = c.units[row]
            changes[unit.name] = with_clamp_preset(unit, c.schedule_for(unit.name), mode,
                                                   steps if steps is not None else self.selected_steps())
        label = dict(CLAMP_PRESETS)[mode].rstrip(".").lower()
        self.document.push(SetSchedules(self.document, changes, f"{label} for {_units_text(changes)}"))

    def set_target(self, mode: str, steps: list[int] | None = None, last: int = 1) -> None:
        """Apply a target preset to the units of the selected rows (one undo step)."""
        rows = self.selected_rows()
        if not rows:
            self.status.setText("Select cells in the rows of the units to change first")
            return
        c = self.document.circuit
        chosen = steps if steps is not None else self.selected_steps()
        if mode == "steps" and not [t for t in chosen if t >= 1]:
            self.status.setText("Select the steps (1 or later) to carry targets first")
            return
        changes = {}
        for row in rows:
            name = c.units[row].name
            changes[name] = (with_target_preset(c.schedule_for(name), mode, chosen, last),
                             c.units[row].initial_mode)
        label = dict(TARGET_PRESETS)[mode].rstrip(".").lower().replace(" k ", f" {last} ")
        self.document.push(SetSchedules(self.document, changes, f"{label} for {_units_text(changes)}"))

    def _target_action(self, mode: str) -> None:
        last = 1
        if mode == "last":
            seq = self.model.sequence()
            k, ok = QInputDialog.getInt(self, "Target the last steps", "Number of final steps k:",
                                        3, 1, seq.length if seq else 100_000)
            if not ok:
                return
            last = k
        self.set_target(mode, last=last)

    def fill_selection(self) -> None:
        """Set every selected cell to the value in the value box (empty clears)."""
        try:
            v = parse_value(self.value_edit.text())
        except ValueError:
            self.status.setText(f"'{self.value_edit.text()}' is not a number; nothing was changed")
            return
        cells = [(i.row(), i.column(), v) for i in self.view.selectedIndexes()]
        if not cells:
            self.status.setText("Select the cells to fill first")
            return
        n = self.model.set_values(cells, f"Fill {len(cells)} cells with {_fmt(v) if v is not None else 'nothing'}")
        self.status.setText(f"Set {n} cells")

    def clear_selection(self) -> None:
        cells = [(i.row(), i.column(), None) for i in self.view.selectedIndexes()]
        if cells:
            self.model.set_values(cells, f"Clear {len(cells)} cells")

    def copy_selection(self) -> None:
        """Copy the selected block as tab-separated values (what spreadsheets paste)."""
        idx = self.view.selectedIndexes()
        if not idx:
            return
        r0, r1 = min(i.row() for i in idx), max(i.row() for i in idx)
        c0, c1 = min(i.column() for i in idx), max(i.column() for i in idx)
        lines = ["\t".join(self.model.data(self.model.index(r, c), Qt.ItemDataRole.EditRole)
                           for c in range(c0, c1 + 1)) for r in range(r0, r1 + 1)]
        QGuiApplication.clipboard().setText("\n".join(lines) + "\n")

    def paste(self, text: str | None = None) -> None:
        """Paste a tab-separated block at the top-left selected cell; refuses it whole if any
        entry is not a number. Entries beyond the grid are left out (and said so)."""
        text = QGuiApplication.clipboard().text() if text is None else text
        idx = self.view.selectedIndexes() or ([self.view.currentIndex()] if self.view.currentIndex().isValid() else [])
        if not idx or not text.strip():
            self.status.setText("Nothing to paste, or no cell selected")
            return
        r0, c0 = min(i.row() for i in idx), min(i.column() for i in idx)
        lines = text.replace("\r\n", "\n").replace("\r", "\n").split("\n")
        while lines and lines[-1] == "":
            lines.pop()
        cells, outside = [], 0
        for dr, line in enumerate(lines):
            for dc, entry in enumerate(line.split("\t")):
                try:
                    v = parse_value(entry)
                except ValueError:
                    self.status.setText(f"Pasted row {dr + 1}, column {dc + 1}: '{entry.strip()}' is not "
                                        "a number; nothing was pasted")
                    return
                r, c = r0 + dr, c0 + dc
                if r < self.model.rowCount() and c < self.model.columnCount():
                    cells.append((r, c, v))
                else:
                    outside += 1
        n = self.model.set_values(cells, f"Paste {len(cells)} values")
        rows, cols = len(lines), max(len(line.split("\t")) for line in lines)
        self.select_block([(r0, c0, r0 + rows - 1, c0 + cols - 1)])
        self.status.setText(f"Pasted a {rows} x {cols} block ({n} cells changed)"
                            + (f"; {outside} values fell outside the grid and were left out" if outside else ""))


def _units_text(changes: dict) -> str:
    names = list(changes)
    return names[0] if len(names) == 1 else f"{len(names)} units"
