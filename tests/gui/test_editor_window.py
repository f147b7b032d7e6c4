"""The main window: panels dock through add_panel, menus are extensible, the title tracks the file."""

from PySide6.QtCore import Qt
from PySide6.QtWidgets import QLabel

from circuitlab.gui.commands import AddUnits
from circuitlab.model import Unit


def test_add_panel_docks_and_lists_in_view_menu(main_window):
    dock = main_window.add_panel(QLabel("hello"), "Extra Panel", "extra_panel", Qt.BottomDockWidgetArea)
    assert main_window.panel("extra_panel") is dock
    panel_menu = [a for a in main_window.menu("View").actions() if a.menu() is not None][0].menu()
    assert "Extra Panel" in [a.text() for a in panel_menu.actions()]
    extra = main_window.menu("Extra Tools")
    titles = [a.text() for a in main_window.menuBar().actions()]
    assert titles[-2:] == ["Extra Tools", "Help"] and extra is main_window.menu("Extra Tools")


def test_title_shows_file_and_modified_mark(main_window, examples_dir):
    assert main_window.windowTitle().startswith("untitled circuit")
    assert main_window.files.open_path(str(examples_dir / "set_reset_latch.circuit.json"))
    assert "set_reset_latch.circuit.json" in main_window.windowTitle()
    assert not main_window.isWindowModified()
    main_window.document.push(AddUnits(main_window.document, [Unit(name="extra")]))
    assert main_window.isWindowModified()
    main_window.document.undo_stack.undo()
    assert not main_window.isWindowModified()
