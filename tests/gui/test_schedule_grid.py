"""The inputs-and-targets grid: presets, typing, filling, pasting, problems, undo; and the engine
compiles exactly the masks and values the grid shows."""

import numpy as np
import pytest
from PySide6.QtCore import Qt
from PySide6.QtGui import QGuiApplication
from PySide6.QtWidgets import QLineEdit

from circuitlab.engine import compile_circuit
from circuitlab.gui.document import Document
from circuitlab.gui.panels.schedule_grid import ScheduleGridPanel
from circuitlab.model import Circuit, Sequence, Unit, UnitSchedule


def make_circuit() -> Circuit:
    c = Circuit(units=[Unit(name="cue"), Unit(name="hidden", activation="tanh"), Unit(name="report")])
    c.connect("cue", "hidden", 0.5)
    c.connect("hidden", "hidden", 0.3)
    c.connect("hidden", "report", -0.7)
    c.set_schedule("cue", UnitSchedule(clamp="every"))
    c.set_schedule("report", UnitSchedule(target="final"))
    c.add_sequence(Sequence(name="one", length=5, clamps={"cue": [1.0, 0.0, 1.0, 0.0, 1.0, 0.0]},
                            targets={"report": [None] * 5 + [0.25]}))
    c.add_sequence(Sequence(name="two", length=3, clamps={"cue": [0.0, 1.0, 1.0, 0.0]},
                            targets={"report": [None, None, None, 0.75]}))
    return c


@pytest.fixture
def grid(qtbot):
    doc = Document(make_circuit())
    panel = ScheduleGridPanel(doc)
    qtbot.addWidget(panel)
    panel.resize(900, 400)
    panel.show()
    qtbot.waitExposed(panel)
    yield panel
    doc.undo_stack.cleanChanged.disconnect()


def type_into(qtbot, panel, row, step, text):
    """Click a cell and type: the first key opens the cell's editor, Return commits."""
    click(qtbot, panel, row, step)
    qtbot.keyClick(panel.view, text[0])
    editor = [e for e in panel.view.viewport().findChildren(QLineEdit) if e.isVisible()][-1]
    qtbot.keyClicks(editor, text[1:])
    qtbot.keyClick(editor, Qt.Key.Key_Return)
    # the item view commits a finished editor through a queued call
    qtbot.waitUntil(lambda: panel.view.state() != panel.view.State.EditingState, timeout=2000)


def click(qtbot, panel, row, step, modifier=Qt.KeyboardModifier.NoModifier):
    rect = panel.view.visualRect(panel.model.index(row, step))
    qtbot.mouseClick(panel.view.viewport(), Qt.MouseButton.LeftButton, modifier, rect.center())


def settle(qtbot, panel):
    qtbot.waitUntil(lambda: not panel._refresh_timer.isActive(), timeout=2000)


def test_grid_shows_what_the_engine_compiles(grid, qtbot):
    c = grid.document.circuit
    c.set_schedule("hidden", UnitSchedule(clamp="steps", clamp_steps=[2]))
    c.sequences[0].set_clamp("hidden", 2, -0.5)
    c.sequences[1].set_clamp("hidden", 2, 0.5)
    c.set_schedule("report", UnitSchedule(target="last", target_last=2))
    c.sequences[0].set_target("report", 4, 0.5)
    c.sequences[1].set_target("report", 2, 1.0)
    grid.document.notify("data")
    settle(qtbot, grid)
    # the engine's own masks, compared cell by cell (the engine itself is checked against the
    # autograd reference in tests/test_engine_gradients.py)
    compiled = compile_circuit(c)
    for s, seq in enumerate(c.sequences):
        grid.set_sequence(seq.name)
        assert grid.model.sequence_name == seq.name
        for j, unit in enumerate(c.unit_names()):
            for t in range(compiled.clamp_mask.shape[1]):
                if t > seq.length:
                    assert not compiled.step_mask[s, t]
                    continue
                cell = grid.model.cell(j, t)
                assert cell.clamped == bool(compiled.clamp_mask[s, t, j]), (seq.name, unit, t)
                assert cell.targeted == bool(compiled.target_mask[s, t, j]), (seq.name, unit, t)
                if cell.clamped:
                    assert cell.clamp_value == compiled.clamp_values[s, t, j]
                if cell.targeted:
                    assert cell.target_value == compiled.target_values[s, t, j]
    assert int(compiled.target_mask.sum()) == 4 and int(compiled.clamp_mask.sum()) == 6 + 4 + 2


def test_presets_from_the_menus_change_schedule_and_undo(grid, qtbot):
    doc, c = grid.document, grid.document.circuit
    click(qtbot, grid, 1, 3)  # a cell of 'hidden'
    grid.preset_action("clamp", "every").trigger()
    assert c.schedule_for("hidden").clamp == "every" and c.unit("hidden").initial_mode == "clamped"
    settle(qtbot, grid)
    # values missing at every step: marked in the grid and listed, stored values kept
    assert {(1, t) for t in range(6)} <= grid.model.problem_cells()
    assert grid.problem_list.count() >= 1 and "no value" in grid.problem_list.item(0).text()
    assert grid.model.cell(1, 3).text() == "?"
    doc.undo_stack.undo()
    settle(qtbot, grid)
    assert c.schedule_for("hidden").clamp == "none" and c.unit("hidden").initial_mode == "fixed"
    assert grid.model.problem_cells() == set() and grid.problem_list.count() == 0
    doc.undo_stack.redo()
    assert c.schedule_for("hidden").clamp == "every"
    # target presets on 'report': chosen steps come from the selected columns (shift-click a range)
    click(qtbot, grid, 2, 2)
    click(qtbot, grid, 2, 4, Qt.KeyboardModifier.ShiftModifier)
    grid.preset_action("target", "steps").trigger()
    assert c.schedule_for("report").target == "steps" and c.schedule_for("report").target_steps == [2, 3, 4]
    grid.set_target("last", last=3)
    assert c.schedule_for("report").target == "last" and c.schedule_for("report").target_last == 3
    settle(qtbot, grid)
    assert [grid.model.cell(2, t).targeted for t in range(6)] == [False, False, False, True, True, True]
    click(qtbot, grid, 0, 1)
    grid.preset_action("clamp", "initial").trigger()
    assert c.schedule_for("cue").clamp == "initial"
    settle(qtbot, grid)
    assert [grid.model.cell(0, t).clamped for t in range(3)] == [True, False, False]
    assert grid.model.cell(0, 1).text() == "(0)"  # stored but no longer used: shown in brackets
    for _ in range(4):
        doc.undo_stack.undo()
    assert c == make_circuit()


def test_typing_into_a_cell_sets_its_value_and_bad_text_changes_nothing(grid, qtbot):
    doc, seq = grid.document, grid.document.circuit.sequence("one")
    type_into(qtbot, grid, 0, 2, "0.75")
    assert seq.clamp_value("cue", 2) == 0.75
    settle(qtbot, grid)
    assert grid.model.cell(0, 2).text() == "0.75"
    # a free cell of a unit that only carries targets takes a target value
    type_into(qtbot, grid, 2, 3, "1.")
    assert seq.target_value("report", 3) == 1.0 and seq.clamp_value("report", 3) is None
    count = doc.undo_stack.count()
    type_into(qtbot, grid, 0, 4, "abc")
    assert doc.undo_stack.count() == count and seq.clamp_value("cue", 4) == 1.0
    assert "not a number" in grid.status.text()
    doc.undo_stack.undo()
    doc.undo_stack.undo()
    assert seq.clamp_value("cue", 2) == 1.0 and seq.target_value("report", 3) is None


def test_paste_a_block_fill_and_clear(grid, qtbot):
    doc, seq = grid.document, grid.document.circuit.sequence("one")
    click(qtbot, grid, 0, 1)
    QGuiApplication.clipboard().setText("0.5\t0.25\t0\r\n-1\t2\t3\r\n")  # as spreadsheets copy
    before = doc.undo_stack.count()
    qtbot.keyClick(grid.view, Qt.Key.Key_V, Qt.KeyboardModifier.ControlModifier)
    assert doc.undo_stack.count() == before + 1
    assert seq.clamps["cue"][1:4] == [0.5, 0.25, 0.0]
    assert seq.clamp_value("hidden", 1) == -1.0 and seq.clamp_value("hidden", 3) == 3.0  # free row: clamp layer
    settle(qtbot, grid)
    assert grid.model.cell(1, 2).text() == "(2)"
    # copying the block gives back what was pasted, tab-separated
    click(qtbot, grid, 0, 1)
    click(qtbot, grid, 1, 3, Qt.KeyboardModifier.ShiftModifier)
    qtbot.keyClick(grid.view, Qt.Key.Key_C, Qt.KeyboardModifier.ControlModifier)
    assert QGuiApplication.clipboard().text() == "0.5\t0.25\t0.0\n-1.0\t2.0\t3.0\n"
    # a block with a non-number is refused whole
    QGuiApplication.clipboard().setText("1\t1\n1\tx\n")
    qtbot.keyClick(grid.view, Qt.Key.Key_V, Qt.KeyboardModifier.ControlModifier)
    assert doc.undo_stack.count() == before + 1 and "row 2, column 2" in grid.status.text()
    # fill a shift-clicked range from the value box
    click(qtbot, grid, 0, 0)
    click(qtbot, grid, 0, 5, Qt.KeyboardModifier.ShiftModifier)
    qtbot.keyClicks(grid.value_edit, "0.125")
    qtbot.mouseClick(grid.fill_button, Qt.MouseButton.LeftButton)
    assert seq.clamps["cue"] == [0.125] * 6
    qtbot.keyClick(grid.view, Qt.Key.Key_Delete)
    assert "cue" not in seq.clamps
    settle(qtbot, grid)
    assert grid.model.cell(0, 0).text() == "?" and (0, 3) in grid.model.problem_cells()
    for _ in range(3):
        doc.undo_stack.undo()
    assert doc.circuit == make_circuit()
    doc.undo_stack.redo()
    assert seq.clamps["cue"][1:4] == [0.5, 0.25, 0.0]


def test_conflicts_are_marked_listed_and_explained(grid, qtbot):
    c = grid.document.circuit
    click(qtbot, grid, 0, 2)
    grid.preset_action("target", "every").trigger()  # 'cue' is clamped every step: now also targeted
    c.training.loss = "cross_entropy"
    grid.document.notify("settings")
    settle(qtbot, grid)
    cells = grid.model.problem_cells()
    assert {(0, t) for t in range(1, 6)} <= cells
    tip = grid.model.data(grid.model.index(0, 2), Qt.ItemDataRole.ToolTipRole)
    assert "both clamped and targeted" in tip
    # a cross-entropy target outside [0, 1]
    type_into(qtbot, grid, 2, 5, "1.5")
    settle(qtbot, grid)
    assert (2, 5) in grid.model.problem_cells()
    texts = [grid.problem_list.item(i).text() for i in range(grid.problem_list.count())]
    assert any("[0, 1]" in t for t in texts) and "Training will not start" in grid.problem_title.text()
    # clicking a listed problem takes the grid to its cell
    item = next(grid.problem_list.item(i) for i, t in enumerate(texts) if "[0, 1]" in t)
    grid._go_to_problem(item)
    assert (grid.view.currentIndex().row(), grid.view.currentIndex().column()) == (2, 5)


def test_highlight_follows_unit_selection(grid):
    grid.highlight_units(["report"])
    assert grid.model.highlighted == {"report"}
    font = grid.model.headerData(2, Qt.Orientation.Vertical, Qt.ItemDataRole.FontRole)
    assert font is not None and font.bold()
    assert grid.model.headerData(0, Qt.Orientation.Vertical, Qt.ItemDataRole.FontRole) is None


def test_large_grid_builds_and_pastes(qtbot):
    c = Circuit(units=[Unit(name=f"u{i}") for i in range(50)])
    c.add_sequence(Sequence(name="long", length=499))
    doc = Document(c)
    panel = ScheduleGridPanel(doc)
    qtbot.addWidget(panel)
    assert (panel.model.rowCount(), panel.model.columnCount()) == (50, 500)
    panel.view.setCurrentIndex(panel.model.index(0, 0))
    block = "\n".join("\t".join("1" for _ in range(500)) for _ in range(50))
    panel.paste(block)
    assert c.sequences[0].clamps["u49"] == [1.0] * 500
    assert np.array([c.sequences[0].clamps[f"u{i}"] for i in range(50)]).sum() == 25_000
    doc.undo_stack.cleanChanged.disconnect()


def test_docked_in_the_main_window_and_following_the_canvas_selection(make_main_window, examples_dir, qtbot):
    win = make_main_window(examples_dir / "two_step_echo.circuit.json", size=(1400, 900))
    grid, sequences = win.schedule_grid, win.sequences_panel
    assert win.panel("schedule_grid").widget() is grid and win.panel("sequences").widget() is sequences
    qtbot.waitUntil(lambda: grid.model.sequence_name == win.document.circuit.sequences[0].name, timeout=2000)
    win.canvas.fit_to_view()
    item = win.canvas.circuit_scene.units["echo"]
    pos = win.canvas.mapFromScene(item.sceneBoundingRect().center())
    qtbot.mouseClick(win.canvas.viewport(), Qt.MouseButton.LeftButton, pos=pos)
    assert win.canvas.selected()[0] == ["echo"]
    assert grid.model.highlighted == {"echo"}
