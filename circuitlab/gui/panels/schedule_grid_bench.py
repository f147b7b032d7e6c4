"""``circuitlab bench --only grid``: the schedule grid at 50 units x 500 steps."""

import time

from circuitlab.engine.benchmarks import best_of

SIZE_UNITS, SIZE_STEPS, SEQUENCES = 50, 500, 4


def run() -> list[dict]:
    """Refresh, paint, paste and undo on a 50 x 500 grid (offscreen)."""
    import os

    os.environ.setdefault("QT_QPA_PLATFORM", "offscreen")
    from PySide6.QtWidgets import QApplication

    from circuitlab.gui.document import Document
    from circuitlab.gui.panels.schedule_grid import ScheduleGridPanel
    from circuitlab.model import Circuit, Sequence, Unit, UnitSchedule

    app = QApplication.instance() or QApplication([])
    c = Circuit(units=[Unit(name=f"u{i}") for i in range(SIZE_UNITS)])
    for i in range(0, SIZE_UNITS, 2):
        c.set_schedule(f"u{i}", UnitSchedule(clamp="every"))
    c.set_schedule(f"u{SIZE_UNITS - 1}", UnitSchedule(target="last", target_last=50))
    for s in range(SEQUENCES):
        seq = Sequence(name=f"s{s}", length=SIZE_STEPS - 1)
        for i in range(0, SIZE_UNITS, 2):
            seq.clamps[f"u{i}"] = [float((t + s) % 2) for t in range(SIZE_STEPS)]
        c.add_sequence(seq)
    doc = Document(c)
    panel = ScheduleGridPanel(doc)
    panel.resize(1400, 800)
    panel.show()
    app.processEvents()
    refresh = best_of(panel.refresh, 3)
    paint = best_of(lambda: panel.view.viewport().grab(), 3)
    block = "\n".join("\t".join("0.5" for _ in range(SIZE_STEPS)) for _ in range(SIZE_UNITS))
    panel.view.setCurrentIndex(panel.model.index(0, 0))

    def paste_and_refresh():
        panel.paste(block)
        panel.refresh()

    t0 = time.perf_counter()
    paste_and_refresh()
    paste = time.perf_counter() - t0
    t0 = time.perf_counter()
    doc.undo_stack.undo()
    panel.refresh()
    undo = time.perf_counter() - t0
    panel.close()
    doc.undo_stack.cleanChanged.disconnect()
    size = f"{SIZE_UNITS} units x {SIZE_STEPS} steps"
    return [
        {"name": f"grid refresh with problem check, {size}", "value": refresh * 1e3, "unit": "ms",
         "goal": "< 150 ms"},
        {"name": f"grid paint of the visible cells, {size}", "value": paint * 1e3, "unit": "ms",
         "goal": "< 50 ms"},
        {"name": f"grid paste of a {SIZE_UNITS} x {SIZE_STEPS} block + refresh", "value": paste * 1e3,
         "unit": "ms", "goal": "< 500 ms"},
        {"name": "grid undo of that paste + refresh", "value": undo * 1e3, "unit": "ms", "goal": "< 300 ms"},
    ]
