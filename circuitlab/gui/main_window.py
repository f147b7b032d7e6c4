"""The main window: the canvas in the centre, dockable panels around it, menus, tool bar, status bar.

Other parts of the editor extend it through a small public surface:
``add_panel`` docks a widget (and lists it under View > Panels),
``menu(name)`` and ``tool_bar(name)`` return (creating if needed) a menu or
tool bar to add actions to, ``document`` and ``canvas`` are the live
document and the central view, ``selection_changed`` follows the canvas
selection as (unit names, connection keys), and ``closing`` is emitted once
when the window goes away (stop threads there).
"""

from pathlib import Path

from PySide6.QtCore import QByteArray, QSettings, Qt, QTimer, Signal
from PySide6.QtGui import QAction, QKeySequence
from PySide6.QtWidgets import (QDockWidget, QLabel, QMainWindow, QMenu, QMessageBox, QToolBar,
                               QUndoView, QWidget)

from circuitlab import __version__
from circuitlab.gui.canvas import CircuitCanvas
from circuitlab.gui.document import Document
from circuitlab.gui.files import FileController
from circuitlab.gui.panels import setup_panels
from circuitlab.model import find_problems

MENU_ORDER = ("File", "Edit", "View", "Circuit", "Help")
STATE_VERSION = 1


class MainWindow(QMainWindow):
    """The editor window for one document."""

    selection_changed = Signal(list, list)  # unit names, connection keys (source, target)
    closing = Signal()  # the window is going away: stop worker threads, flush what must be kept

    def __init__(self, document: Document | None = None, autosave_dir=None, restore_layout: bool = True,
                 parent=None):
        super().__init__(parent)
        self.setObjectName("circuitlab_main_window")
        self.setDockNestingEnabled(True)
        self.document = document if document is not None else Document(parent=self)
        self.canvas = CircuitCanvas(self.document, self)
        self.setCentralWidget(self.canvas)
        self.files = FileController(self, autosave_dir)
        self._menus: dict[str, QMenu] = {}
        self._tool_bars: dict[str, QToolBar] = {}
        self._panels_menu: QMenu | None = None
        self._layout_restored = False
        self._build_menus()
        self._build_status_bar()
        self.canvas.selection_changed.connect(self.selection_changed)
        self.canvas.status_message.connect(self.show_message)
        self.document.file_changed.connect(self._update_title)
        self.document.replaced.connect(self._after_replace)
        self.document.changed.connect(self._update_counts)
        self.undo_view = QUndoView(self.document.undo_stack)
        self.undo_view.setEmptyLabel("(opened)")
        self.add_panel(self.undo_view, "Edit History", "edit_history", Qt.RightDockWidgetArea, visible=False)
        setup_panels(self)
        self.resize(1400, 900)
        self._persist_layout = restore_layout  # screenshot and bench windows leave the settings alone
        if restore_layout:
            self._restore_layout()
        self._layout_restored = True
        self._update_title()
        self._update_counts()
        self._problem_timer.start()

    # ---------------------------------------------------------- extension API
    def add_panel(self, widget: QWidget, title: str, object_name: str,
                  area: Qt.DockWidgetArea = Qt.RightDockWidgetArea, visible: bool = True,
                  tabify_with: str | None = None) -> QDockWidget:
        """Dock ``widget`` as a panel titled ``title``; ``object_name`` keys its saved place.

        The panel appears under View > Panels. With ``tabify_with`` (another
        panel's object name) it shares that panel's place as a tab.
        """
        dock = QDockWidget(title, self)
        dock.setObjectName(object_name)
        dock.setWidget(widget)
        self.addDockWidget(area, dock)
        if tabify_with:
            other = self.panel(tabify_with)
            if other is not None:
                self.tabifyDockWidget(other, dock)
        dock.setVisible(visible)
        self._panels_menu.addAction(dock.toggleViewAction())
        if self._layout_restored:
            self.restoreDockWidget(dock)
        return dock

    def panel(self, object_name: str) -> QDockWidget | None:
        return self.findChild(QDockWidget, object_name)

    def menu(self, name: str) -> QMenu:
        """The menu called ``name`` (e.g. "File", "Edit", "View", "Circuit", "Training"), made if missing.

        New menus go before Help.
        """
        if name in self._menus:
            return self._menus[name]
        menu = QMenu(name.replace("&", ""), self)
        menu.setTitle(name)
        bar = self.menuBar()
        help_menu = self._menus.get("Help")
        if help_menu is not None:
            bar.insertMenu(help_menu.menuAction(), menu)
        else:
            bar.addMenu(menu)
        self._menus[name] = menu
        return menu

    def tool_bar(self, name: str = "Editing") -> QToolBar:
        """The tool bar called ``name``, made if missing (its place is saved with the layout)."""
        if name in self._tool_bars:
            return self._tool_bars[name]
        bar = QToolBar(name, self)
        bar.setObjectName(f"toolbar_{name.lower().replace(' ', '_')}")
        bar.setToolButtonStyle(Qt.ToolButtonTextOnly)
        self.addToolBar(Qt.TopToolBarArea, bar)
        self._tool_bars[name] = bar
        return bar

    def show_message(self, text: str, msec: int = 5000) -> None:
        self.statusBar().showMessage(text, msec)

    # ----------------------------------------------------------------- build
    def _build_menus(self) -> None:
        for name in MENU_ORDER:
            self.menu(name)
        f, c = self.files.actions, self.canvas.actions_
        stack = self.document.undo_stack
        undo = stack.createUndoAction(self, "Undo")
        undo.setShortcut(QKeySequence.Undo)
        redo = stack.createRedoAction(self, "Redo")
        redo.setShortcuts([QKeySequence(QKeySequence.Redo), QKeySequence("Ctrl+Y")])
        self.undo_action, self.redo_action = undo, redo

        m = self.menu("File")
        for key in ("new", "open"):
            m.addAction(f[key])
        m.addMenu(self.files.recent_menu)
        m.addSeparator()
        for key in ("save", "save_as", "revert"):
            m.addAction(f[key])
        m.addSeparator()
        quit_action = QAction("Quit", self)
        quit_action.setShortcut(QKeySequence.Quit)
        quit_action.triggered.connect(self.close)
        m.addAction(quit_action)

        m = self.menu("Edit")
        m.addActions([undo, redo])
        m.addSeparator()
        for key in ("cut", "copy", "paste", "duplicate", "delete"):
            m.addAction(c[key])
        m.addSeparator()
        m.addAction(c["select_all"])

        m = self.menu("View")
        for key in ("zoom_in", "zoom_out", "fit"):
            m.addAction(c[key])
        m.addSeparator()
        for key in ("snap", "legend"):
            m.addAction(c[key])
        m.addSeparator()
        self._panels_menu = m.addMenu("Panels")

        m = self.menu("Circuit")
        for key in ("tool_select", "tool_add", "tool_connect"):
            m.addAction(c[key])
        m.addSeparator()
        m.addAction(c["arrange"])

        about = QAction("About circuitlab", self)
        about.triggered.connect(self._about)
        self.menu("Help").addAction(about)

        bar = self.tool_bar("Editing")
        bar.addActions([f["new"], f["open"], f["save"]])
        bar.addSeparator()
        bar.addActions([undo, redo])
        bar.addSeparator()
        bar.addActions([c["tool_select"], c["tool_add"], c["tool_connect"]])
        bar.addSeparator()
        bar.addActions([c["arrange"], c["fit"]])

    def _build_status_bar(self) -> None:
        self._counts = QLabel()
        self.problems_label = QLabel()
        self.problems_label.setContentsMargins(0, 0, 14, 0)
        self.statusBar().addPermanentWidget(self.problems_label)
        self.statusBar().addPermanentWidget(self._counts)
        # the validator runs shortly after each edit (not at every training snapshot)
        self._problem_timer = QTimer(self)
        self._problem_timer.setSingleShot(True)
        self._problem_timer.setInterval(250)
        self._problem_timer.timeout.connect(self.check_problems)
        self.document.undo_stack.indexChanged.connect(lambda _i: self._problem_timer.start())
        self.document.replaced.connect(self._problem_timer.start)

    def check_problems(self) -> list:
        """Run the validator on the circuit and show how many problems it has (details on hover)."""
        problems = find_problems(self.document.circuit)
        if problems:
            n = len(problems)
            self.problems_label.setText(f"<span style='color:#a3261b'>{n} problem{'s' if n != 1 else ''}</span>")
            shown = "\n".join(f"• {p}" for p in problems[:15])
            more = f"\n… and {n - 15} more" if n > 15 else ""
            self.problems_label.setToolTip(shown + more)
        else:
            self.problems_label.setText("no problems")
            self.problems_label.setToolTip("The validator finds nothing that would stop training.")
        return problems

    def _update_counts(self) -> None:
        c = self.document.circuit
        self._counts.setText(f"{len(c.units)} units, {len(c.connections)} connections  ")

    def _update_title(self) -> None:
        path = self.document.path
        name = Path(path).name if path else "untitled circuit"
        self.setWindowTitle(f"{name}[*] — circuitlab")
        self.setWindowModified(self.document.is_modified)
        self.files.actions["revert"].setEnabled(path is not None and self.document.is_modified)

    def _after_replace(self) -> None:
        self._update_title()

    def _about(self) -> None:
        QMessageBox.about(self, "About circuitlab", (
            f"<b>circuitlab {__version__}</b><p>Design, train by backpropagation through time, and "
            "inspect small recurrent circuits.</p><p>A trained circuit is a model: validate it "
            "for any real use (for example controlling a device) before relying on it.</p>"))

    # ------------------------------------------------------- layout & close
    def _restore_layout(self) -> None:
        s = QSettings()
        geometry = s.value("window/geometry")
        state = s.value("window/state")
        if isinstance(geometry, QByteArray):
            self.restoreGeometry(geometry)
        if isinstance(state, QByteArray):
            self.restoreState(state, STATE_VERSION)
        self.canvas.actions_["snap"].setChecked(s.value("canvas/snap", False, type=bool))
        self.canvas._toggle_snap(self.canvas.actions_["snap"].isChecked())

    def save_layout(self) -> None:
        s = QSettings()
        s.setValue("window/geometry", self.saveGeometry())
        s.setValue("window/state", self.saveState(STATE_VERSION))
        s.setValue("canvas/snap", self.canvas.actions_["snap"].isChecked())

    def shutdown(self, save_layout: bool = True) -> None:
        """Leave without questions: keep the layout, clear this session's autosave, tell the panels."""
        if save_layout:
            self.save_layout()
        self.closing.emit()
        self.files.shutdown()

    def closeEvent(self, event) -> None:
        if not self.files.maybe_save():
            event.ignore()
            return
        self.shutdown(save_layout=self._persist_layout)
        event.accept()
