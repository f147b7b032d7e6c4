"""The Examples menu, the hint banner and the first start."""

from pathlib import Path

import pytest
from PySide6.QtCore import QSettings, Qt

from circuitlab.gui.commands import AddUnits
from circuitlab.gui.examples_menu import (DEFAULT_EXAMPLE, EXAMPLES_DIR, ExamplesMenu, example_files,
                                          open_on_first_start, try_hint)
from circuitlab.gui.files import RECENT_KEY
from circuitlab.model import Unit, load_circuit

REPO_EXAMPLES = Path(__file__).resolve().parents[2] / "example_circuits"
EXAMPLES = sorted(REPO_EXAMPLES.glob("*.circuit.json"))


def click_example(qtbot, window, path: Path) -> None:
    """Open the Examples menu from the menu bar and click the entry of ``path`` with the mouse."""
    menu, bar = window.menu("Examples"), window.menuBar()
    qtbot.mouseClick(bar, Qt.LeftButton, pos=bar.actionGeometry(menu.menuAction()).center())
    qtbot.waitUntil(menu.isVisible)
    action = next(a for a in menu.actions() if a.data() == str(path))
    qtbot.mouseClick(menu, Qt.LeftButton, pos=menu.actionGeometry(action).center())


def test_the_folder_is_found_beside_the_package():
    assert EXAMPLES_DIR == REPO_EXAMPLES
    assert example_files() == EXAMPLES and len(EXAMPLES) >= 6


def test_menu_lists_every_example_by_name(main_window):
    menu = main_window.menu("Examples")
    menu.aboutToShow.emit()
    actions = [a for a in menu.actions() if not a.isSeparator()]
    assert [a.text() for a in actions] == [load_circuit(p).name for p in EXAMPLES]
    assert [Path(a.data()) for a in actions] == EXAMPLES
    assert all(a.isEnabled() and "Try:" in a.toolTip() for a in actions)


def test_clicking_an_example_opens_it_as_an_untitled_copy_with_its_hint(qtbot, main_window):
    path = EXAMPLES_DIR / "onset_detector.circuit.json"
    click_example(qtbot, main_window, path)
    expected = load_circuit(path)
    qtbot.waitUntil(lambda: main_window.document.circuit.name == expected.name)
    assert main_window.document.circuit == expected
    assert main_window.document.path is None and not main_window.document.is_modified
    banner = main_window.examples.banner
    assert banner.isVisible()
    assert banner.label.text() == f"{expected.name} — {try_hint(expected.description)}"
    assert banner.label.text().split(" — ")[1].startswith("Try:")
    assert main_window.canvas.rect().contains(banner.geometry())


def test_every_example_opens_and_loads(main_window):
    for path in EXAMPLES:
        assert main_window.examples.open_example(path)
        assert main_window.document.circuit == load_circuit(path)


def test_unsaved_work_is_not_lost_when_the_user_cancels(main_window):
    doc = main_window.document
    doc.push(AddUnits(doc, [Unit(name="mine")]))
    main_window.files.ask_save_changes = lambda: "cancel"
    assert not main_window.examples.open_example(EXAMPLES[0])
    assert doc.circuit.unit_names() == ["mine"] and doc.is_modified
    assert not main_window.examples.banner.isVisible()


def test_banner_closes_with_its_button_and_with_another_document(qtbot, main_window):
    examples = main_window.examples
    examples.open_example(EXAMPLES[0])
    qtbot.mouseClick(examples.banner.close_button, Qt.LeftButton)
    assert not examples.banner.isVisible()
    examples.open_example(EXAMPLES[1])
    assert examples.banner.isVisible()
    main_window.files.new()
    assert not examples.banner.isVisible() and main_window.document.circuit.units == []


def test_first_start_opens_the_default_example(main_window):
    assert QSettings().value(RECENT_KEY, []) in ([], None)
    assert open_on_first_start(main_window)
    default = load_circuit(EXAMPLES_DIR / DEFAULT_EXAMPLE)
    assert main_window.document.circuit == default
    assert main_window.examples.banner.isVisible()
    assert try_hint(default.description) in main_window.statusBar().currentMessage()


def test_no_example_when_there_are_recent_files(main_window, tmp_path):
    QSettings().setValue(RECENT_KEY, [str(tmp_path / "mine.circuit.json")])
    assert not open_on_first_start(main_window)
    assert main_window.document.circuit.units == []
    assert not main_window.examples.banner.isVisible()


def test_an_unreadable_example_is_listed_disabled_and_others_still_open(main_window, tmp_path):
    (tmp_path / "broken.circuit.json").write_text('{"format": "circuitlab-circuit", "version": 1, '
                                                  '"units": 3}', encoding="utf-8")
    (tmp_path / "good.circuit.json").write_bytes(EXAMPLES[0].read_bytes())
    menu = ExamplesMenu(main_window, folder=tmp_path).menu
    items = {a.text(): a for a in menu.actions()}
    assert not items["broken.circuit.json (cannot be read)"].isEnabled()
    assert "units" in items["broken.circuit.json (cannot be read)"].toolTip()
    assert items[load_circuit(EXAMPLES[0]).name].isEnabled()


@pytest.mark.parametrize("description, hint", [
    ("A latch holds a bit. Try: train it, then\n look.", "Try: train it, then look."),
    ("No hint here. Second sentence.", "No hint here."),
])
def test_try_hint(description, hint):
    assert try_hint(description) == hint
