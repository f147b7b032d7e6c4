"""Canvas tools besides drawing: clipboard, duplicate, arrange, zoom, context-free shortcuts, refusals.

Expected behaviours are common practice for graph editors; the layout is
networkx's spring layout (Fruchterman and Reingold, 1991).
"""

import math

from PySide6.QtCore import QPoint, QPointF, Qt
from PySide6.QtTest import QTest

from circuitlab.gui.canvas import style
from circuitlab.gui.canvas.geometry import UP, free_angle
from circuitlab.gui.commands import ConnectUnits, SetUnitFields
from circuitlab.model import Circuit, Unit, UnitSchedule


def small() -> Circuit:
    c = Circuit()
    for i, name in enumerate(["a", "b", "c"]):
        c.add_unit(Unit(name=name, x=100.0 * i, y=0.0))
    c.connect("a", "b", 0.5)
    c.connect("b", "a", -1.0)
    c.connect("b", "b", 0.25)
    c.set_schedule("a", UnitSchedule(clamp="every"))
    return c


def test_copy_paste_duplicate_keep_internal_connections_and_rename(make_main_window):
    win = make_main_window(small())
    doc, canvas = win.document, win.canvas
    canvas.circuit_scene.select(["a", "b"])
    canvas.actions_["copy"].trigger()
    canvas.actions_["paste"].trigger()
    c = doc.circuit
    assert c.unit_names() == ["a", "b", "c", "a1", "b1"]
    assert {k.key for k in c.connections} >= {("a1", "b1"), ("b1", "a1"), ("b1", "b1")}
    assert c.schedule_for("a1").clamp == "every"
    assert (c.unit("a1").x, c.unit("a1").y) == (40.0, 40.0)
    assert canvas.circuit_scene.selected_units() == ["a1", "b1"]
    canvas.actions_["duplicate"].trigger()
    assert c.unit_names()[-2:] == ["a2", "b2"]
    win.undo_action.trigger()
    win.undo_action.trigger()
    assert doc.circuit.model_dump() == small().model_dump()


def test_arrange_is_one_undoable_step_and_spreads_units(make_main_window):
    c = small()
    for u in c.units:
        u.x, u.y = 0.0, float(len(u.name))  # piled up
    win = make_main_window(c)
    before = win.document.circuit.model_dump()
    win.canvas.actions_["arrange"].trigger()
    units = win.document.circuit.units
    gaps = [math.dist((p.x, p.y), (q.x, q.y)) for i, p in enumerate(units) for q in units[i + 1:]]
    assert min(gaps) > 2 * style.UNIT_RADIUS
    assert win.document.undo_stack.count() == 1
    win.undo_action.trigger()
    assert win.document.circuit.model_dump() == before


def test_wheel_zooms_and_fit_shows_everything(make_main_window):
    win = make_main_window(small())
    canvas = win.canvas
    # opening a circuit shows all of it
    view_rect = canvas.mapToScene(canvas.viewport().rect()).boundingRect()
    assert view_rect.contains(canvas.circuit_scene.content_rect())
    z0 = canvas.transform().m11()
    canvas.zoom(2.0)
    assert canvas.transform().m11() == 2 * z0
    canvas.actions_["fit"].trigger()
    view_rect = canvas.mapToScene(canvas.viewport().rect()).boundingRect()
    assert view_rect.contains(canvas.circuit_scene.content_rect())


def test_refusals_lose_nothing(main_window):
    win = main_window
    doc, canvas, panel = win.document, win.canvas, win.properties_panel
    canvas.add_unit_at(QPointF(0, 0))
    canvas.add_unit_at(QPointF(120, 0))
    assert canvas.connect_units("u1", "u2")
    before = doc.circuit.model_dump()
    assert not canvas.connect_units("u1", "u2")  # already connected: a message, no change
    assert doc.circuit.model_dump() == before
    canvas.circuit_scene.select(["u1"])
    for bad in ("u2", "9lives", "has space"):
        panel.name.setFocus()
        panel.name.selectAll()
        QTest.keyClicks(panel.name, bad)
        QTest.keyClick(panel.name, Qt.Key_Return)
        assert doc.circuit.model_dump() == before
        assert panel.problem.text(), bad
    panel.clamp_steps.setText("3, x")
    panel.clamp_steps.editingFinished.emit()
    assert "x" in panel.problem.text() and doc.circuit.model_dump() == before


def test_loops_turn_away_from_neighbours_and_weights_restyle_cheaply(make_main_window):
    win = make_main_window(small())
    scene = win.canvas.circuit_scene
    # b has neighbours left (a) and right (c, unconnected), so only a counts; up stays free
    assert free_angle([math.pi]) == UP
    assert free_angle([UP]) != UP
    loop = scene.edges[("b", "b")]
    top = loop.path.boundingRect().top()
    assert top < -2 * style.UNIT_RADIUS
    # the live-training path: weights given in connection order, restyled without touching the model
    win.canvas.refresh_weights([0.0, 3.0, -3.0])
    assert [scene.edges[k].level for k in [("a", "b"), ("b", "a"), ("b", "b")]] == [
        style.weight_level(w, 3.0) for w in (0.0, 3.0, -3.0)]
    assert win.document.circuit.connection("b", "a").weight == -1.0
    win.document.push(ConnectUnits(win.document, "c", "c", 0.1))
    assert scene.edges[("c", "c")].level == style.weight_level(0.1, 1.0)


def test_hover_shows_the_value_and_editing_keys_stay_on_the_canvas(make_main_window, qtbot):
    win = make_main_window(small())
    canvas, scene = win.canvas, win.canvas.circuit_scene
    qtbot.wait(50)  # let the panels settle their first layout, which moves the view
    item = scene.edges[("b", "a")]
    at = canvas.mapFromScene(item.path.pointAtPercent(0.5))
    QTest.mouseMove(canvas.viewport(), at + QPoint(0, 40))
    qtbot.wait(20)
    QTest.mouseMove(canvas.viewport(), at)
    qtbot.waitUntil(lambda: "weight -1" in win.statusBar().currentMessage(), timeout=2000)
    assert "-1" in item.toolTip()
    # Delete pressed in a text field of another panel edits the text, not the circuit
    scene.select(["a"])
    panel = win.properties_panel
    win.panel("properties").show()
    panel.name.setFocus()
    QTest.keyClick(panel.name, Qt.Key_End)
    QTest.keyClick(panel.name, Qt.Key_Delete)
    QTest.keyClick(panel.name, Qt.Key_Backspace)
    assert win.document.circuit.unit_names() == ["a", "b", "c"]
    canvas.setFocus()
    QTest.keyClick(canvas, Qt.Key_Delete)
    assert win.document.circuit.unit_names() == ["b", "c"]


def test_snapping_and_tied_weights_and_the_problem_count(make_main_window, qtbot):
    win = make_main_window(small())
    doc, canvas, scene, panel = win.document, win.canvas, win.canvas.circuit_scene, win.properties_panel
    qtbot.wait(50)
    canvas.actions_["snap"].trigger()
    start = canvas.mapFromScene(QPointF(200, 0))  # unit c
    end = canvas.mapFromScene(QPointF(263, 47))
    QTest.mousePress(canvas.viewport(), Qt.LeftButton, Qt.NoModifier, start)
    QTest.mouseMove(canvas.viewport(), end)
    QTest.mouseRelease(canvas.viewport(), Qt.LeftButton, Qt.NoModifier, end)
    c = doc.circuit.unit("c")
    assert (c.x % style.GRID_STEP, c.y % style.GRID_STEP) == (0, 0) and c.x > 200
    # tie a -> b and b -> a: the second takes the first one's weight, and later edits reach both
    scene.select([], [("a", "b"), ("b", "a")])
    panel.tie.setFocus()
    QTest.keyClicks(panel.tie, "mirror")
    QTest.keyClick(panel.tie, Qt.Key_Return)
    assert {doc.circuit.connection(*k).weight for k in [("a", "b"), ("b", "a")]} == {0.5}
    scene.select([], [("b", "a")])
    panel.weight.setFocus()
    panel.weight.selectAll()
    QTest.keyClicks(panel.weight, "2")
    QTest.keyClick(panel.weight, Qt.Key_Return)
    assert doc.circuit.connection("a", "b").weight == 2.0
    win.undo_action.trigger()
    assert doc.circuit.connection("a", "b").weight == 0.5
    # an inhibitory source with positive weights is a problem the status bar counts (validator)
    assert not win.check_problems() and win.problems_label.text() == "no problems"
    doc.push(SetUnitFields(doc, ["b"], "sign", "inhibitory"))
    assert win.check_problems()
    assert "problem" in win.problems_label.text() and "inhibitory" in win.problems_label.toolTip()


def test_context_menu_freezes_a_connection(make_main_window, qtbot):
    win = make_main_window(small())
    qtbot.wait(50)
    canvas = win.canvas
    item = canvas.circuit_scene.edges[("a", "b")]
    menu = canvas.context_menu(canvas.mapFromScene(item.path.pointAtPercent(0.5)))
    texts = [x.text() for x in menu.actions() if x.text()]
    assert texts[0] == "Freeze Weight" and "Delete" in texts
    assert canvas.circuit_scene.selected_connections() == [("a", "b")]
    menu.actions()[0].trigger()
    assert not win.document.circuit.connection("a", "b").trains
    assert canvas.circuit_scene.edges[("a", "b")].frozen
    menu = canvas.context_menu(canvas.mapFromScene(QPointF(50, 300)))  # empty canvas
    assert "Add Unit Here" in [x.text() for x in menu.actions()]
