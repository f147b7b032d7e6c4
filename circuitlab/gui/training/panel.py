"""The training panel (buttons, sequence choice, messages, settings) and the hub that feeds the views.

``TrainingViews`` turns each controller update into view updates. How often
that happens is the worker's business: it waits for each snapshot to be
drawn and spaces them so drawing takes at most 15 % of the time.
"""

import numpy as np
from PySide6.QtCore import QObject, Qt
from PySide6.QtGui import QAction, QKeySequence
from PySide6.QtWidgets import (QComboBox, QFrame, QHBoxLayout, QLabel, QProgressBar, QPushButton,
                               QVBoxLayout, QWidget)

from circuitlab.gui.training.activity_view import ActivityView
from circuitlab.gui.training.contributions_view import ContributionsView
from circuitlab.gui.training.controller import PAUSED, RUNNING, TrainingController
from circuitlab.gui.training.curves_view import CurvesView
from circuitlab.gui.training.export import export_button
from circuitlab.gui.training.settings_panel import SettingsPanel
from circuitlab.gui.training.unrolled_view import UnrolledView
from circuitlab.gui.training.worker import Snapshot


def make_actions(controller: TrainingController, parent) -> dict[str, QAction]:
    """Train, Pause, One epoch, Stop, Re-initialise: the actions of the Training menu and tool bar."""
    specs = (("train", "Train", "F5", "Train until paused, stopped or finished", controller.train),
             ("pause", "Pause", "F6", "Pause after the current epoch", controller.pause),
             ("step", "One Epoch", "F7", "Train exactly one epoch", controller.step),
             ("stop", "Stop", "Shift+F5", "End this training run (it becomes one undo step)",
              controller.stop),
             ("reinit", "Re-initialise Weights", None,
              "Draw fresh weights from the settings' seed (undoable)", controller.reinitialise))
    actions = {}
    for key, text, shortcut, tip, slot in specs:
        a = QAction(text, parent)
        if shortcut:
            a.setShortcut(QKeySequence(shortcut))
        a.setToolTip(f"{tip} ({shortcut})" if shortcut else tip)
        a.setStatusTip(tip)
        a.triggered.connect(lambda _checked=False, s=slot: s())
        actions[key] = a

    def enable(state: str) -> None:
        actions["train"].setEnabled(state != RUNNING)
        actions["pause"].setEnabled(state == RUNNING)
        actions["stop"].setEnabled(state in (RUNNING, PAUSED))
    controller.state_changed.connect(enable)
    enable(controller.state)
    return actions


class TrainingPanel(QWidget):
    """Buttons, the sequence shown in the views, a message area and the settings form."""

    def __init__(self, controller: TrainingController, actions: dict[str, QAction], parent=None):
        super().__init__(parent)
        self.controller = controller
        buttons = QHBoxLayout()
        buttons.setSpacing(4)
        self.buttons = {}
        for key in ("train", "pause", "step", "stop"):
            b = QPushButton(actions[key].text())
            b.setToolTip(actions[key].toolTip())
            b.clicked.connect(actions[key].trigger)
            actions[key].changed.connect(lambda b=b, a=actions[key]: b.setEnabled(a.isEnabled()))
            b.setEnabled(actions[key].isEnabled())
            buttons.addWidget(b)
            self.buttons[key] = b
        reinit = QPushButton(actions["reinit"].text())
        reinit.setToolTip(actions["reinit"].toolTip())
        reinit.clicked.connect(actions["reinit"].trigger)
        self.buttons["reinit"] = reinit
        self.sequence = QComboBox()
        self.sequence.setToolTip("The sequence whose activity the unrolled network and the activity stack show")
        self.sequence.currentTextChanged.connect(lambda name: name and controller.choose_sequence(name))
        seq_row = QHBoxLayout()
        seq_row.addWidget(QLabel("Show sequence"))
        seq_row.addWidget(self.sequence, 1)
        self.notice = QLabel()
        self.notice.setWordWrap(True)
        self.notice.setTextInteractionFlags(Qt.TextInteractionFlag.TextSelectableByMouse)
        self.notice.setFrameShape(QFrame.Shape.StyledPanel)
        self.notice.hide()
        self.settings = SettingsPanel(controller.document)
        layout = QVBoxLayout(self)
        layout.setContentsMargins(4, 4, 4, 4)
        layout.addLayout(buttons)
        row2 = QHBoxLayout()
        row2.addWidget(reinit)
        row2.addStretch(1)
        layout.addLayout(row2)
        layout.addLayout(seq_row)
        layout.addWidget(self.notice)
        layout.addWidget(self.settings)
        layout.addStretch(1)
        controller.message.connect(self.show_notice)
        # a run that starts makes the last notice (a refusal, a pause) out of date
        controller.state_changed.connect(lambda state: state == RUNNING and self.notice.hide())

    def show_notice(self, text: str, warning: bool) -> None:
        colour = "#fdecea" if warning else "#eaf4ea"
        rim = "#c4161c" if warning else "#2e7d32"
        self.notice.setStyleSheet(f"QLabel {{ background: {colour}; border: 1px solid {rim}; padding: 4px; }}")
        self.notice.setText(text)
        self.notice.show()

    def set_sequences(self, names: list[str], current: str | None) -> None:
        if [self.sequence.itemText(i) for i in range(self.sequence.count())] != names:
            self.sequence.blockSignals(True)
            self.sequence.clear()
            self.sequence.addItems(names)
            self.sequence.blockSignals(False)
        if current and self.sequence.currentText() != current:
            self.sequence.blockSignals(True)
            self.sequence.setCurrentText(current)
            self.sequence.blockSignals(False)


class StatusWidgets(QWidget):
    """Epoch, loss and epochs per second, with a progress bar towards the set number of epochs."""

    def __init__(self, parent=None):
        super().__init__(parent)
        self.epoch = QLabel("epoch -")
        self.loss = QLabel("loss -")
        self.rate = QLabel("")
        self.progress = QProgressBar()
        self.progress.setMaximumWidth(160)
        self.progress.setMaximumHeight(14)
        self.progress.setTextVisible(False)
        row = QHBoxLayout(self)
        row.setContentsMargins(0, 0, 6, 0)
        for w in (self.epoch, self.loss, self.rate, self.progress):
            row.addWidget(w)

    def show_state(self, epoch: int, total: int, loss: float | None, rate: float, running: bool) -> None:
        self.epoch.setText(f"epoch {epoch} / {total}")
        self.loss.setText("loss -" if loss is None else f"loss {loss:.5g}")
        self.rate.setText(f"{rate:,.0f} epochs/s" if running and rate > 0 else "")
        self.progress.setMaximum(max(total, 1))
        self.progress.setValue(min(epoch, total))


class TrainingViews(QObject):
    """Feeds the views from controller updates and keeps their selections in step.

    A view out of sight (its panel closed, or a tab behind another: ``set_in_sight``, fed by the
    docks' visibilityChanged) is not redrawn at each snapshot; it is drawn from the latest
    snapshot when it comes back into sight.
    """

    def __init__(self, controller: TrainingController, panel: TrainingPanel, status: StatusWidgets,
                 unrolled: UnrolledView, activity: ActivityView, curves: CurvesView,
                 contributions: ContributionsView, select_on_canvas=None, parent=None):
        super().__init__(parent)
        self.controller = controller
        self.panel, self.status = panel, status
        self.unrolled, self.activity, self.curves, self.contributions = unrolled, activity, curves, contributions
        self.select_on_canvas = select_on_canvas or (lambda connection: None)
        self.updates = 0               # controller updates received (for tests and the bench)
        self._structure_key = None
        self._drawn = None
        self._last_loss: float | None = None
        self._out_of_sight: set[QWidget] = set()
        self._stale: set[QWidget] = set()  # views that missed a snapshot while out of sight
        controller.updated.connect(self.update)
        controller.state_changed.connect(self._state_changed)
        unrolled.connection_selected.connect(self._connection_picked)

    def update(self, snap: Snapshot, records: tuple, new_run: bool) -> None:
        self.updates += 1
        if new_run:
            self.curves.clear()
            self._last_loss = None
        if records:
            self.curves.add_records(records)
            self._last_loss = records[-1].loss
        c = self.controller
        total = c.epoch_offset + (c.epoch_limit or c.document.circuit.training.epochs)
        self.status.show_state(c.run_epochs, total, self._last_loss, snap.epochs_per_second, snap.running)
        self.panel.set_sequences(snap.sequence_names, snap.inspection.sequence_name if snap.inspection else None)
        if snap is not self._drawn:  # a new run re-announces the last snapshot: nothing to redraw
            self.draw(snap)

    def draw(self, snap: Snapshot) -> None:
        """Redraw the unrolled network, the activity stack and the contributions from ``snap``
        (those in sight; the others when they show)."""
        self._drawn = snap
        if snap.inspection is None:
            return
        for view in (self.unrolled, self.activity, self.contributions):
            if view in self._out_of_sight:
                self._stale.add(view)
            else:
                self._stale.discard(view)
                self._draw_view(view, snap)

    def set_in_sight(self, view: QWidget, in_sight: bool) -> None:
        """Tell whether ``view`` (any training view) can be seen; back in sight, it catches up."""
        if view is self.curves:
            self.curves.set_in_sight(in_sight)
            return
        if not in_sight:
            self._out_of_sight.add(view)
            return
        self._out_of_sight.discard(view)
        if view in self._stale and self._drawn is not None and self._drawn.inspection is not None:
            self._stale.discard(view)
            self._draw_view(view, self._drawn)

    def _draw_view(self, view: QWidget, snap: Snapshot) -> None:
        insp = snap.inspection
        if view is self.unrolled:
            key = (tuple(insp.unit_names), tuple(insp.connections), insp.steps, insp.sequence_name)
            if key != self._structure_key:
                self._structure_key = key
                self.unrolled.set_structure(insp.unit_names, insp.connections, insp.steps,
                                            insp.clamp_mask, insp.target_mask)
            index = {n: i for i, n in enumerate(insp.unit_names)}
            src = np.array([index[s] for s, _ in insp.connections], int)
            tgt = np.array([index[t] for _, t in insp.connections], int)
            self.unrolled.set_weights(snap.W[src, tgt] if len(src) else [])
            self.unrolled.set_stacks(insp.y, insp.net, insp.e, insp.delta)
        elif view is self.activity:
            self.activity.set_data(insp.unit_names, insp.y, insp.e, insp.delta, insp.target_mask,
                                   insp.target_values)
        else:
            self._show_contributions(insp)

    def select_connection(self, source: str | None, target: str | None = None) -> None:
        """Highlight every copy of a connection and show its contributions."""
        self.unrolled.select_connection(source, target)
        snap = self.controller.snapshot
        if snap is not None and snap.inspection is not None:
            self._show_contributions(snap.inspection)

    def canvas_selection(self, units: list, connections: list) -> None:
        if connections:
            self.select_connection(*connections[0])
        elif units:
            self.select_connection(None)

    def _connection_picked(self, source: str, target: str) -> None:
        self.select_connection(source, target)
        self.select_on_canvas((source, target))

    def _show_contributions(self, insp) -> None:
        sel = self.unrolled.selected_connection
        if sel is None or sel not in insp.connections:
            self.contributions.set_contributions(None)
            return
        k = insp.connections.index(sel)
        self.contributions.set_contributions(sel[0], sel[1], insp.contributions[k], float(insp.gradient[k]))

    def _state_changed(self, state: str) -> None:
        if state != RUNNING:
            self.status.rate.setText("")


def view_with_export(view: QWidget, name: str, item_of, table_of, more_tables=None) -> QWidget:
    """``view`` with a small Export button in its top right corner."""
    box = QWidget()
    layout = QVBoxLayout(box)
    layout.setContentsMargins(0, 0, 0, 0)
    layout.setSpacing(0)
    bar = QHBoxLayout()
    bar.setContentsMargins(4, 0, 4, 0)
    bar.addStretch(1)
    bar.addWidget(export_button(box, name, item_of, table_of, more_tables))
    layout.addLayout(bar)
    layout.addWidget(view, 1)
    return box
