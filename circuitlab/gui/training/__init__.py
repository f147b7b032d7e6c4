"""Live training in the editor: controls, settings, the worker thread and the training views.

``setup(window)`` (listed in ``gui.panels.PANEL_SETUPS``) docks the panels,
adds the Training menu, tool bar and status-bar fields, and keeps the
canvas selection and the unrolled view's selection in step. The controller
is reachable as ``window.training`` (a ``TrainingSetup``).
"""

from dataclasses import dataclass

from PySide6.QtCore import QEvent, QObject, QSettings, Qt, QTimer
from PySide6.QtWidgets import QApplication, QFrame, QScrollArea

from circuitlab.gui.training.activity_view import ActivityView
from circuitlab.gui.training.contributions_view import ContributionsView
from circuitlab.gui.training.controller import TrainingController
from circuitlab.gui.training.curves_view import CurvesView
from circuitlab.gui.training.panel import (StatusWidgets, TrainingPanel, TrainingViews, make_actions,
                                           view_with_export)
from circuitlab.gui.training.unrolled_view import UnrolledView


@dataclass
class TrainingSetup:
    """Everything ``setup`` built, for scripts and tests."""

    controller: TrainingController
    views: TrainingViews
    panel: TrainingPanel
    status: StatusWidgets
    unrolled: UnrolledView
    activity: ActivityView
    curves: CurvesView
    contributions: ContributionsView
    actions: dict


class _WindowWatcher(QObject):
    """Arranges the docks when the window first shows (unless a saved layout exists)."""

    def __init__(self, window):
        super().__init__(window)
        self.window = window
        self.arrange = not QSettings().contains("window/state")

    def eventFilter(self, obj, event) -> bool:
        if event.type() == QEvent.Type.Show and self.arrange:
            self.arrange = False
            # tabifying before the first show leaves a stray tab bar behind (Qt 6.11), so do it now
            QTimer.singleShot(0, lambda: arrange_docks(self.window, self.window.width(), self.window.height()))
        return False


def setup(window) -> TrainingSetup:
    """Add the training controls and views to ``window`` (a MainWindow)."""
    controller = TrainingController(window.document, refresh_weights=window.canvas.refresh_weights,
                                    parent=window)
    actions = make_actions(controller, window)
    panel = TrainingPanel(controller, actions)
    status = StatusWidgets()
    unrolled, activity = UnrolledView(), ActivityView()
    curves, contributions = CurvesView(), ContributionsView()

    def select_on_canvas(connection):
        window.canvas.circuit_scene.select(connections=[connection])

    views = TrainingViews(controller, panel, status, unrolled, activity, curves, contributions,
                          select_on_canvas, parent=window)
    window.selection_changed.connect(views.canvas_selection)

    menu = window.menu("Training")
    for key in ("train", "pause", "step", "stop"):
        menu.addAction(actions[key])
    menu.addSeparator()
    menu.addAction(actions["reinit"])
    bar = window.tool_bar("Training")
    for key in ("train", "pause", "step", "stop"):
        bar.addAction(actions[key])
    window.statusBar().addPermanentWidget(status)

    scroll = QScrollArea()
    scroll.setWidget(panel)
    scroll.setWidgetResizable(True)
    scroll.setFrameShape(QFrame.Shape.NoFrame)
    window.add_panel(scroll, "Training", "training_controls", Qt.RightDockWidgetArea,
                     tabify_with="properties")
    bottom = Qt.BottomDockWidgetArea
    unrolled_dock = window.add_panel(view_with_export(unrolled, "unrolled network", lambda: unrolled.plot,
                                                      unrolled.export_table),
                                     "Unrolled Network", "training_unrolled", bottom)
    # the activity stack has the inputs grid's shape (units by steps): they share a place as tabs
    activity_dock = window.add_panel(view_with_export(activity, "activity stack", lambda: activity.graphics.ci,
                                                      activity.export_table),
                                     "Activity Stack", "training_activity", bottom)
    curves_dock = window.add_panel(view_with_export(curves, "learning curves", lambda: curves.graphics.ci,
                                                    curves.export_table, {"e by step": curves.export_e_norm}),
                                   "Learning Curves", "training_curves", bottom)
    for dock in (unrolled_dock, window.panel("schedule_grid"), activity_dock, curves_dock):
        if dock is not None:  # one row, left to right
            window.addDockWidget(bottom, dock, Qt.Horizontal)
    # the contributions belong to the connection picked in the unrolled network: right under it
    contributions_dock = window.add_panel(view_with_export(contributions, "copy contributions",
                                                           lambda: contributions.plot,
                                                           contributions.export_table),
                                          "Contributions per Step", "training_contributions", bottom)
    window.splitDockWidget(unrolled_dock, contributions_dock, Qt.Vertical)
    # views out of sight skip their redraws until they are seen again
    for dock, view in ((unrolled_dock, unrolled), (activity_dock, activity), (curves_dock, curves),
                       (contributions_dock, contributions)):
        dock.visibilityChanged.connect(lambda on, v=view: views.set_in_sight(v, on))

    watcher = _WindowWatcher(window)
    window.installEventFilter(watcher)
    # a live run becomes an undo step before "save changes?" is asked; the thread stops only
    # once the window really goes (a cancelled close leaves the run paused, not ended)
    window.files.settle_requested.connect(controller.settle)
    window.closing.connect(controller.shutdown)
    app = QApplication.instance()
    if app is not None:
        app.aboutToQuit.connect(controller.shutdown)
    result = TrainingSetup(controller, views, panel, status, unrolled, activity, curves, contributions,
                           actions)
    window.training = result
    controller.prepare()
    return result



def arrange_docks(window, width: int, height: int) -> None:
    """The default layout: the activity stack shares the inputs grid's place (both are units by
    steps) and the training views get a generous share of a ``width`` x ``height`` window."""
    grid, activity = window.panel("schedule_grid"), window.panel("training_activity")
    if grid is not None and activity is not None and activity not in window.tabifiedDockWidgets(grid):
        window.tabifyDockWidget(grid, activity)
    if activity is not None:
        activity.raise_()
    docks = [window.panel(n) for n in ("training_unrolled", "training_activity", "training_curves")]
    if all(docks):
        window.resizeDocks(docks, [int(width * 0.36), int(width * 0.30), int(width * 0.34)], Qt.Horizontal)
        window.resizeDocks([docks[1]], [int(height * 0.42)], Qt.Vertical)
    stack = [window.panel(n) for n in ("training_unrolled", "training_contributions")]
    if all(stack):
        window.resizeDocks(stack, [int(height * 0.23), int(height * 0.19)], Qt.Vertical)
