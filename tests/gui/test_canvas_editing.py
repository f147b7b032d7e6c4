"""Drive the real canvas with mouse and key events, then undo and redo every step.

The expected behaviour (one undo step per user action, undo restoring the
exact previous model) is common practice for document editors.
"""

import math

from PySide6.QtCore import QPoint, QPointF, Qt
from PySide6.QtTest import QTest

from circuitlab.gui.canvas.items import R
from circuitlab.model import Circuit


def vp(win, x, y) -> QPoint:
    """Viewport pixel of scene point (x, y)."""
    return win.canvas.mapFromScene(QPointF(x, y))


def unit_pos(win, name):
    u = win.document.circuit.unit(name)
    return u.x, u.y


def drag(win, start: QPoint, end: QPoint, modifier=Qt.NoModifier, via: QPoint | None = None):
    viewport = win.canvas.viewport()
    QTest.mousePress(viewport, Qt.LeftButton, modifier, start)
    for p in ([via] if via is not None else []) + [(start + end) / 2, end]:
        QTest.mouseMove(viewport, p)
    QTest.mouseRelease(viewport, Qt.LeftButton, modifier, end)


def click(win, at: QPoint, modifier=Qt.NoModifier):
    QTest.mouseClick(win.canvas.viewport(), Qt.LeftButton, modifier, at)


def rim(win, name, dx=1.0, dy=0.0) -> QPoint:
    x, y = unit_pos(win, name)
    return vp(win, x + dx * (R - 3), y + dy * (R - 3))


def centre(win, name) -> QPoint:
    return vp(win, *unit_pos(win, name))


def on_edge(win, key) -> QPoint:
    item = win.canvas.circuit_scene.edges[key]
    return win.canvas.mapFromScene(item.mapToScene(item.path.pointAtPercent(0.5)))


def choose(combo, data):
    """Pick an entry of a combo box with the keyboard, as a user would."""
    combo.setFocus()
    target = combo.findData(data)
    key = Qt.Key_Down if target > combo.currentIndex() else Qt.Key_Up
    while combo.currentIndex() != target:
        QTest.keyClick(combo, key)


def type_into(edit, text):
    edit.setFocus()
    edit.selectAll()
    QTest.keyClicks(edit, text)
    QTest.keyClick(edit, Qt.Key_Return)


def test_draw_connect_edit_then_undo_and_redo_everything(main_window, qtbot):
    win = main_window
    doc, canvas, panel = win.document, win.canvas, win.properties_panel
    scene = canvas.circuit_scene
    states = [doc.circuit.model_dump()]
    assert states[0] == Circuit().model_dump()

    def step():
        states.append(doc.circuit.model_dump())
        assert [n for n in scene.units] == doc.circuit.unit_names()
        assert set(scene.edges) == {c.key for c in doc.circuit.connections}
        assert doc.undo_stack.count() == len(states) - 1

    # three units: one by double-click, two with the add tool
    QTest.mouseDClick(canvas.viewport(), Qt.LeftButton, Qt.NoModifier, vp(win, -200, 0))
    step()
    win.canvas.actions_["tool_add"].trigger()
    click(win, vp(win, 100, -120))
    step()
    click(win, vp(win, 100, 140))
    step()
    win.canvas.actions_["tool_select"].trigger()
    assert doc.circuit.unit_names() == ["u1", "u2", "u3"]
    assert abs(doc.circuit.unit("u2").x - 100) < 2 and abs(doc.circuit.unit("u2").y + 120) < 2

    # connections: drag from the rim (select tool) and with the connect tool
    drag(win, rim(win, "u1"), centre(win, "u2"))
    step()
    win.canvas.actions_["tool_connect"].trigger()
    drag(win, centre(win, "u2"), centre(win, "u1"))
    step()
    drag(win, centre(win, "u2"), centre(win, "u3"))
    step()
    # self-connection: leave the unit and come back to it
    drag(win, centre(win, "u3"), centre(win, "u3"), via=vp(win, 100 + 3 * R, 140))
    step()
    win.canvas.actions_["tool_select"].trigger()
    keys = [c.key for c in doc.circuit.connections]
    assert keys == [("u1", "u2"), ("u2", "u1"), ("u2", "u3"), ("u3", "u3")]
    assert scene.edges[("u1", "u2")].bend > 0 and scene.edges[("u2", "u1")].bend > 0  # a reciprocal pair bows apart
    assert scene.edges[("u2", "u3")].bend == 0
    # the reciprocal arrows are distinct curves, and the loop rises above its unit
    mid_a = scene.edges[("u1", "u2")].path.pointAtPercent(0.5)
    mid_b = scene.edges[("u2", "u1")].path.pointAtPercent(0.5)
    assert (mid_a - mid_b).manhattanLength() > 20
    # the loop sits outside its unit, turned away from the unit's other arrow (to u2)
    centre3 = scene.edges[("u3", "u3")].path.boundingRect().center() - scene.units["u3"].pos()
    towards2 = scene.units["u2"].pos() - scene.units["u3"].pos()
    assert math.hypot(centre3.x(), centre3.y()) > 1.5 * R
    turn = math.atan2(centre3.y(), centre3.x()) - math.atan2(towards2.y(), towards2.x())
    assert abs(math.remainder(turn, 2 * math.pi)) > math.radians(60)

    # a drag moves the unit in one undo step, its arrows follow
    before = unit_pos(win, "u3")
    drag(win, centre(win, "u3"), vp(win, 160, 200))
    step()
    assert unit_pos(win, "u3") != before and abs(unit_pos(win, "u3")[0] - 160) < 2
    assert scene.edges[("u2", "u3")].arrow.boundingRect().bottom() > 150

    # properties of one unit
    click(win, centre(win, "u1"))
    assert scene.selected_units() == ["u1"] and panel.units == ["u1"]
    choose(panel.activation, "tanh")
    step()
    type_into(panel.bias, "0.5")
    step()
    type_into(panel.bias, "0.75")  # a second bias edit merges with the first
    states[-1] = doc.circuit.model_dump()
    assert doc.undo_stack.count() == len(states) - 1
    assert doc.circuit.unit("u1").bias == 0.75 and doc.circuit.unit("u1").activation == "tanh"
    choose(panel.clamp, "every")
    step()
    assert doc.circuit.schedule["u1"].clamp == "every"
    QTest.mouseClick(panel.bias_trains, Qt.LeftButton)
    step()
    assert doc.circuit.unit("u1").bias_trains is False

    # shift-click extends the selection; a field edits both units together
    click(win, centre(win, "u2"))
    click(win, centre(win, "u3"), Qt.ShiftModifier)
    assert scene.selected_units() == ["u2", "u3"]
    choose(panel.target, "final")
    step()
    assert [doc.circuit.schedule_for(n).target for n in ("u2", "u3")] == ["final", "final"]
    choose(panel.initial_mode, "learned")
    step()
    choose(panel.sign, "excitatory")
    step()
    click(win, centre(win, "u3"), Qt.ShiftModifier)  # shift-click again removes it
    assert scene.selected_units() == ["u2"]

    # a connection: weight, frozen, tie group
    click(win, on_edge(win, ("u2", "u3")))
    assert scene.selected_connections() == [("u2", "u3")] and not scene.selected_units()
    type_into(panel.weight, "1.5")
    step()
    assert doc.circuit.connection("u2", "u3").weight == 1.5
    assert scene.edges[("u2", "u3")].width > scene.edges[("u1", "u2")].width
    QTest.mouseClick(panel.weight_trains, Qt.LeftButton)
    step()
    assert scene.edges[("u2", "u3")].frozen
    click(win, on_edge(win, ("u3", "u3")))
    type_into(panel.tie, "loop")
    step()
    assert doc.circuit.connection("u3", "u3").tie == "loop"

    # rename through the name field
    click(win, centre(win, "u1"))
    type_into(panel.name, "driver")
    step()
    assert ("driver", "u2") in scene.edges

    # rubber band selects what it encloses; Delete removes units with their connections
    drag(win, vp(win, -260, -60), vp(win, -140, 60))
    assert scene.selected_units() == ["driver"]
    click(win, centre(win, "u2"))
    canvas.setFocus()
    QTest.keyClick(canvas, Qt.Key_Delete)
    step()
    assert doc.circuit.unit_names() == ["driver", "u3"]
    assert [c.key for c in doc.circuit.connections] == [("u3", "u3")]

    # undo everything, step by step, back to the empty circuit; then redo it all
    stack = doc.undo_stack
    for i in range(len(states) - 2, -1, -1):
        win.undo_action.trigger()
        assert doc.circuit.model_dump() == states[i], f"undo to step {i}"
        assert set(scene.edges) == {c.key for c in doc.circuit.connections}
        assert list(scene.units) == doc.circuit.unit_names()
        for name, item in scene.units.items():
            u = doc.circuit.unit(name)
            assert (item.x(), item.y()) == (u.x, u.y)
    assert not stack.canUndo() and doc.circuit.model_dump() == Circuit().model_dump()
    assert not scene.units and not scene.edges
    for i in range(1, len(states)):
        win.redo_action.trigger()
        assert doc.circuit.model_dump() == states[i], f"redo to step {i}"
        assert set(scene.edges) == {c.key for c in doc.circuit.connections}
