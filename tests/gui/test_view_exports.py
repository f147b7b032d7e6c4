"""Every CSV a training view writes parses back to the numbers it shows.

RFC 4180 (CSV) read with Python's own ``csv`` module, and IEEE 754 doubles
round-trip through ``repr`` (Python's shortest repr, common practice).
"""

import csv

import numpy as np

from circuitlab.engine import Trainer, backward, compile_circuit, contributions, forward
from circuitlab.gui.training import export
from circuitlab.gui.training.activity_view import ActivityView
from circuitlab.gui.training.contributions_view import ContributionsView
from circuitlab.gui.training.curves_view import CurvesView
from circuitlab.model import load_circuit


def _read(path):
    with open(path, newline="", encoding="utf-8") as fh:
        return list(csv.reader(fh))


def test_activity_export_writes_plain_numbers(qtbot, examples_dir, tmp_path):
    """Issue 15 item 1: the activity stack's data export wrote np.float64(1.0) instead of 1.0."""
    circuit = load_circuit(examples_dir / "set_reset_latch.circuit.json")
    compiled = compile_circuit(circuit)
    params = compiled.parameters_from_circuit()
    act = forward(compiled, params)
    _, _, back = backward(compiled, params, act, loss=circuit.training.loss)
    view = ActivityView()
    qtbot.addWidget(view)
    steps = int(compiled.lengths[0]) + 1
    view.set_data(compiled.unit_names, act.y[0, :steps], back.e[0, :steps], back.delta[0, :steps],
                  compiled.target_mask[0, :steps], compiled.target_values[0, :steps])
    path = tmp_path / "activity.csv"
    export.write_csv(path, *view.export_table())
    header, *rows = _read(path)
    assert header == ["step", "unit", "y", "e", "delta", "target"]
    assert len(rows) == steps * compiled.n_units
    n = compiled.n_units
    for k, row in enumerate(rows):
        t, j = divmod(k, n)
        assert int(row[0]) == t and row[1] == compiled.unit_names[j]
        assert float(row[2]) == act.y[0, t, j]
        assert float(row[3]) == back.e[0, t, j]
        assert float(row[4]) == back.delta[0, t, j]
        if compiled.target_mask[0, t, j]:
            assert float(row[5]) == compiled.target_values[0, t, j]
        else:
            assert row[5] == ""


def test_curves_and_contributions_exports_parse(qtbot, examples_dir, tmp_path):
    """Issue 15 item 1: the other views' CSVs read back with float() to the same numbers."""
    circuit = load_circuit(examples_dir / "set_reset_latch.circuit.json")
    trainer = Trainer(circuit)
    records = [trainer.epoch() for _ in range(4)]
    curves = CurvesView()
    qtbot.addWidget(curves)
    curves.add_records(records)
    path = tmp_path / "curves.csv"
    export.write_csv(path, *curves.export_table())
    header, *rows = _read(path)
    assert len(rows) == 4
    loss_col = header.index("loss")
    assert [float(r[loss_col]) for r in rows] == [r.loss for r in records]

    compiled = compile_circuit(circuit)
    params = compiled.parameters_from_circuit()
    act = forward(compiled, params)
    _, _, back = backward(compiled, params, act, loss=circuit.training.loss)
    c = circuit.connections[0]
    values = contributions(compiled, act, back, c.source, c.target)
    view = ContributionsView()
    qtbot.addWidget(view)
    view.set_contributions(c.source, c.target, values, None)
    path = tmp_path / "contributions.csv"
    export.write_csv(path, *view.export_table())
    _, *rows = _read(path)
    np.testing.assert_array_equal([float(r[1]) for r in rows], values[1:])


def test_csv_cell_turns_numpy_scalars_into_plain_numbers():
    """Issue 15 item 1: the cell formatter itself (numpy scalars, ints, text, empty)."""
    assert export.csv_cell(np.float64(1.0)) == "1.0"
    assert export.csv_cell(np.float32(0.5)) == "0.5"
    assert export.csv_cell(np.int64(3)) == "3"
    assert export.csv_cell(0.1) == "0.1"
    assert export.csv_cell("u1") == "u1" and export.csv_cell("") == ""
