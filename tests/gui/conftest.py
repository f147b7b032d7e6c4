"""Fixtures for editor tests: a main window whose settings and autosaves live in a temporary folder.

``main_window`` is an empty window; ``make_main_window(circuit_or_path)``
opens one on a given circuit. Neither touches the user's real settings or
application-data folders.
"""

import pytest
from PySide6.QtCore import QSettings, QStandardPaths

from circuitlab.model import Circuit


@pytest.fixture
def isolated_settings(tmp_path, qapp):
    QStandardPaths.setTestModeEnabled(True)
    qapp.setOrganizationName("circuitlab")
    qapp.setApplicationName("circuitlab")
    QSettings.setDefaultFormat(QSettings.IniFormat)
    QSettings.setPath(QSettings.IniFormat, QSettings.UserScope, str(tmp_path / "settings"))
    QSettings().clear()
    yield tmp_path
    QSettings().clear()


@pytest.fixture
def autosave_dir(isolated_settings):
    path = isolated_settings / "autosave"
    path.mkdir()
    return path


@pytest.fixture
def make_main_window(qtbot, autosave_dir):
    """Factory: ``make_main_window(circuit=None | Circuit | path)`` -> a shown MainWindow."""
    from circuitlab.gui.main_window import MainWindow

    windows = []

    def make(circuit: Circuit | str | None = None, size=(1200, 800)):
        win = MainWindow(autosave_dir=autosave_dir)
        # no modal question may block a test; tests of the prompts replace these answers
        win.files.ask_save_changes = lambda: "discard"
        win.files.ask_revert = lambda: True
        win.files.ask_recover = lambda path, saved_at: False
        qtbot.addWidget(win)
        if isinstance(circuit, Circuit):
            win.document.replace(circuit, None)
        elif circuit is not None:
            assert win.files.open_path(str(circuit), ask=False)
        win.resize(*size)
        win.show()
        qtbot.waitExposed(win)
        windows.append(win)
        return win

    yield make
    for win in windows:
        win.files.shutdown()


@pytest.fixture
def main_window(make_main_window):
    """An empty, shown main window with isolated settings and autosave folder."""
    return make_main_window()
