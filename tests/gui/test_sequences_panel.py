"""The sequences list: every edit by real clicks and keys, each one undoable; generating and
CSV import are single undo steps, and a malformed CSV changes nothing."""

import pytest
from PySide6.QtCore import Qt
from PySide6.QtWidgets import QDialogButtonBox, QLineEdit

from circuitlab.gui.document import Document
from circuitlab.gui.panels.schedule_grid import ScheduleGridPanel
from circuitlab.gui.panels.sequences_panel import SequencesPanel, connect_panels
from circuitlab.model import Circuit, Sequence, Unit, UnitSchedule
from circuitlab.model.csvdata import circuit_csv


def make_circuit() -> Circuit:
    c = Circuit(units=[Unit(name="bit"), Unit(name="carry"), Unit(name="answer")])
    c.connect("bit", "carry", 1.0)
    c.connect("carry", "answer", 1.0)
    c.set_schedule("bit", UnitSchedule(clamp="every"))
    c.set_schedule("answer", UnitSchedule(target="every"))
    c.add_sequence(Sequence(name="first", length=4, clamps={"bit": [1.0, 0.0, 1.0, 1.0, 0.0]}))
    c.add_sequence(Sequence(name="second", length=2, clamps={"bit": [0.0, 1.0, 1.0]}))
    return c


@pytest.fixture
def panel(qtbot):
    doc = Document(make_circuit())
    p = SequencesPanel(doc)
    qtbot.addWidget(p)
    p.resize(400, 500)
    p.show()
    qtbot.waitExposed(p)
    yield p
    doc.undo_stack.cleanChanged.disconnect()


def settle(qtbot, p):
    qtbot.waitUntil(lambda: not p._refresh_timer.isActive(), timeout=2000)


def cell_click(qtbot, p, row, col, double=False):
    rect = p.list.visualRect(p.list.model().index(row, col))
    if double:
        qtbot.mouseDClick(p.list.viewport(), Qt.MouseButton.LeftButton, pos=rect.center())
    else:
        qtbot.mouseClick(p.list.viewport(), Qt.MouseButton.LeftButton, pos=rect.center())


def edit_cell(qtbot, p, row, col, text):
    cell_click(qtbot, p, row, col)
    cell_click(qtbot, p, row, col, double=True)
    # the open editor (a name's line edit or the length spin box's); closed ones may await deletion
    editor = [e for e in p.list.viewport().findChildren(QLineEdit) if e.isVisible()][-1]
    editor.selectAll()
    qtbot.keyClicks(editor, text)
    qtbot.keyClick(editor, Qt.Key.Key_Return)
    qtbot.waitUntil(lambda: p.list.state() != p.list.State.EditingState, timeout=2000)
    settle(qtbot, p)


def names(p):
    return [s.name for s in p.document.circuit.sequences]


def test_list_edits_by_clicks_and_keys_and_undo_all(panel, qtbot):
    doc = panel.document
    cell_click(qtbot, panel, 0, 0)
    qtbot.mouseClick(panel.add_button, Qt.MouseButton.LeftButton)
    settle(qtbot, panel)
    assert names(panel) == ["first", "sequence1", "second"] and doc.circuit.sequences[1].length == 4
    qtbot.mouseClick(panel.duplicate_button, Qt.MouseButton.LeftButton)  # duplicates the current (new) one
    settle(qtbot, panel)
    assert names(panel) == ["first", "sequence1", "sequence1 copy", "second"]
    edit_cell(qtbot, panel, 0, 0, "renamed")
    assert names(panel)[0] == "renamed"
    edit_cell(qtbot, panel, 0, 1, "7")
    seq = doc.circuit.sequence("renamed")
    assert seq.length == 7 and seq.clamps["bit"] == [1.0, 0.0, 1.0, 1.0, 0.0, None, None, None]
    # a name already used is refused with a reason, and the list shows the stored name again
    edit_cell(qtbot, panel, 0, 0, "second")
    assert names(panel)[0] == "renamed" and "already exists" in panel.status.text()
    assert panel.list.item(0, 0).text() == "renamed"
    # held out by ticking the box (not by colour alone: italics and the word)
    cell_click(qtbot, panel, 3, 2)
    qtbot.keyClick(panel.list, Qt.Key.Key_Space)  # toggles the check box of the current cell
    settle(qtbot, panel)
    assert doc.circuit.sequence("second").held_out
    assert panel.list.item(3, 2).text() == "held out" and panel.list.item(3, 0).font().italic()
    cell_click(qtbot, panel, 3, 0)
    qtbot.mouseClick(panel.up_button, Qt.MouseButton.LeftButton)
    settle(qtbot, panel)
    assert names(panel) == ["renamed", "sequence1", "second", "sequence1 copy"]
    cell_click(qtbot, panel, 1, 0)
    qtbot.mouseClick(panel.delete_button, Qt.MouseButton.LeftButton)
    settle(qtbot, panel)
    assert names(panel) == ["renamed", "second", "sequence1 copy"]
    steps = doc.undo_stack.count()
    assert steps == 7
    for _ in range(steps):
        doc.undo_stack.undo()
    assert doc.circuit == make_circuit()
    for _ in range(steps):
        doc.undo_stack.redo()
    assert names(panel) == ["renamed", "second", "sequence1 copy"] and doc.circuit.sequence("renamed").length == 7


def test_generate_new_sequences_is_one_undo_step_and_seeded(panel, qtbot):
    doc = panel.document
    dialog = panel.generator_dialog()
    qtbot.addWidget(dialog)
    # pre-filled: a random binary input for 'bit', a delayed copy of 'bit' as the target of 'answer'
    assert [(r.unit_box.currentText(), r.layer_box.currentData(), r.generator_box.currentText())
            for r in dialog.rows] == [("bit", "clamp", "random binary"), ("answer", "target", "delayed copy")]
    dialog.rows[1].generator_box.setCurrentText("running parity")
    dialog.count.setValue(5)
    dialog.length.setValue(12)
    dialog.held_out.setValue(1)
    dialog.seed.setValue(42)
    qtbot.mouseClick(dialog.findChild(QDialogButtonBox).button(QDialogButtonBox.StandardButton.Ok),
                     Qt.MouseButton.LeftButton)
    assert dialog.result() == dialog.DialogCode.Accepted
    panel.generate_from(dialog)
    settle(qtbot, panel)
    new = doc.circuit.sequences[2:]
    assert [s.name for s in new] == [f"generated{i}" for i in range(1, 6)]
    assert [s.held_out for s in new] == [False] * 4 + [True] and all(s.length == 12 for s in new)
    bits = new[0].clamps["bit"]
    parity = [None] + [float(sum(bits[: t]) % 2) for t in range(1, 13)]  # cumulative sum mod 2
    assert new[0].targets["answer"] == parity
    again = [s.model_copy(deep=True) for s in new]
    doc.undo_stack.undo()
    assert doc.circuit == make_circuit()
    panel.generate_from(dialog)
    assert doc.circuit.sequences[2:] == again  # same seed, same data


def test_generate_into_the_selected_sequence_rows(panel, qtbot):
    doc = panel.document
    cell_click(qtbot, panel, 1, 0)
    dialog = panel.generator_dialog()
    qtbot.addWidget(dialog)
    dialog.fill_button.setChecked(True)
    dialog.rows[0].generator_box.setCurrentText("square wave")
    dialog.rows[0].fields["period"].setValue(2)
    panel.generate_from(dialog)
    assert doc.circuit.sequence("second").clamps["bit"] == [1.0, 0.0, 1.0]
    assert doc.circuit.sequence("second").targets["answer"] == [None, 1.0, 0.0]
    assert doc.circuit.sequence("first") == make_circuit().sequence("first")
    doc.undo_stack.undo()
    assert doc.circuit == make_circuit()


def test_csv_import_and_export(panel, qtbot, tmp_path):
    doc = panel.document
    path = tmp_path / "out.csv"
    assert panel.export_csv(str(path))
    assert path.read_text() == circuit_csv(doc.circuit)
    bad = tmp_path / "bad.csv"
    bad.write_text("sequence,step,clamp:bit,target:ghost\nx,0,1,\nx,1,0,1\n")
    assert not panel.import_csv(str(bad))
    assert "line 1, column 4" in panel.status.text() and "ghost" in panel.status.text()
    assert doc.undo_stack.count() == 0 and doc.circuit == make_circuit()
    assert not panel.import_csv(str(path))  # same names again: refused whole
    assert "already exists" in panel.status.text() and doc.circuit == make_circuit()
    assert panel.import_csv(str(path), replace=True) and doc.undo_stack.count() == 1
    assert doc.circuit == make_circuit()
    good = tmp_path / "more.csv"
    good.write_text("sequence,step,clamp:bit,target:answer\nthird,0,1,\nthird,1,0,1\n")
    assert panel.import_csv(str(good))
    settle(qtbot, panel)
    assert names(panel) == ["first", "second", "third"] and panel.list.rowCount() == 3
    doc.undo_stack.undo()
    assert names(panel) == ["first", "second"]


def test_choosing_a_sequence_shows_it_in_the_grid(panel, qtbot):
    grid = ScheduleGridPanel(panel.document)
    qtbot.addWidget(grid)
    connect_panels(panel, grid)
    cell_click(qtbot, panel, 1, 0)
    assert grid.model.sequence_name == "second" and grid.model.columnCount() == 3
    cell_click(qtbot, panel, 0, 0)
    assert grid.model.sequence_name == "first" and grid.model.columnCount() == 5


def test_generate_fills_a_sequence_just_added(panel, qtbot):
    """Add, then Generate: the new, still empty sequence is what gets filled (not eight new ones)."""
    from circuitlab.model import find_problems
    doc = panel.document
    qtbot.mouseClick(panel.add_button, Qt.MouseButton.LeftButton)
    settle(qtbot, panel)
    added = panel.current_name()
    assert added not in ("first", "second") and panel.selected_names() == [added]
    dialog = panel.generator_dialog()
    qtbot.addWidget(dialog)
    assert dialog.fill_button.isChecked()
    qtbot.mouseClick(dialog.findChild(QDialogButtonBox).button(QDialogButtonBox.StandardButton.Ok),
                     Qt.MouseButton.LeftButton)
    panel.generate_from(dialog)
    assert sorted(names(panel)) == sorted(["first", "second", added])  # filled, none added
    assert doc.undo_stack.undoText() == "Generate rows of 1 sequence"
    seq = doc.circuit.sequence(added)
    assert None not in seq.clamps["bit"] and None not in seq.targets["answer"][1:]
    assert not [p for p in find_problems(doc.circuit) if f"'{added}'" in str(p) or added in str(p)]
    # a selection that already holds values keeps "add new" as the default
    cell_click(qtbot, panel, 0, 0)
    dialog = panel.generator_dialog()
    qtbot.addWidget(dialog)
    assert dialog.new_button.isChecked()


def test_names_have_the_room_in_a_narrow_panel(panel, qtbot):
    edit_cell(qtbot, panel, 0, 0, "twelve_steps")
    panel.resize(280, 400)
    qtbot.wait(20)
    rect = panel.list.visualRect(panel.list.model().index(0, 0))
    assert rect.width() >= panel.list.fontMetrics().horizontalAdvance("twelve_steps") + 8
