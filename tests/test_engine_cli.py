"""``circuitlab train``, ``run`` and ``gradcheck``, and the script API."""

import csv
import io
import json

import numpy as np
import pytest

from circuitlab import api
from circuitlab.cli import main
from circuitlab.model import load_circuit, save_circuit
from test_engine_learning import latch
from test_engine_training import constrained_circuit, diverging_circuit


@pytest.fixture
def latch_file(tmp_path):
    path = tmp_path / "latch.circuit.json"
    c = latch(sequences=3, length=10)
    c.connection("set", "state").weight = 0.3
    save_circuit(c, path)
    return path


def test_train_prints_losses_writes_out_and_log(latch_file, tmp_path, capsys):
    before = latch_file.read_bytes()
    out, log = tmp_path / "trained.json", tmp_path / "curve.csv"
    code = main(["train", str(latch_file), "--epochs", "40", "--out", str(out), "--log", str(log), "--json"])
    assert code == 0
    report = json.loads(capsys.readouterr().out)
    assert report["epochs"] == 40 and report["stopped_because"] == "ran the set number of epochs (40)"
    assert report["final_loss"] < report["initial_loss"]
    assert latch_file.read_bytes() == before  # the input is never overwritten
    trained = load_circuit(out)
    assert trained.trained.epochs == 40
    assert trained.trained.loss == pytest.approx(report["final_loss"])
    assert api.gradients(trained).loss == pytest.approx(report["final_loss"], rel=1e-12)
    rows = list(csv.DictReader(io.StringIO(log.read_text())))
    assert len(rows) == 40 and float(rows[0]["loss"]) == pytest.approx(report["initial_loss"])


def test_train_is_reproducible_and_seed_reinit_changes_start(latch_file, tmp_path, capsys):
    results = []
    for seed in (5, 5, 6):
        assert main(["train", str(latch_file), "--epochs", "5", "--reinit", "--seed", str(seed), "--json"]) == 0
        results.append(json.loads(capsys.readouterr().out))
    assert results[0] == results[1]
    assert results[0]["initial_loss"] != results[2]["initial_loss"]


def test_train_text_output(latch_file, capsys):
    assert main(["train", str(latch_file), "--epochs", "3"]) == 0
    text = capsys.readouterr().out
    assert "initial loss" in text and "final loss" in text and "give --out FILE" in text


def test_train_refuses_bad_input_clearly(tmp_path, capsys):
    bad = tmp_path / "bad.circuit.json"
    bad.write_text('{"format": "circuitlab-circuit", "version": 1, "units": 3}')
    assert main(["train", str(bad)]) == 2
    assert "units" in capsys.readouterr().err
    c = constrained_circuit()
    c.sequences[0].clamps["x"][2] = None  # clamped cell without data
    path = tmp_path / "gap.circuit.json"
    save_circuit(c, path)
    assert main(["train", str(path), "--json"]) == 2
    report = json.loads(capsys.readouterr().out)
    assert not report["ok"] and any("no value" in p for p in report["problems"])


def test_run_writes_every_unit_at_every_step(latch_file, tmp_path, capsys):
    out = tmp_path / "activity.csv"
    assert main(["run", str(latch_file), "--csv", str(out)]) == 0
    assert "wrote" in capsys.readouterr().out
    rows = list(csv.reader(io.StringIO(out.read_text())))
    assert rows[0] == ["sequence", "step", "set", "reset", "state", "h"]
    assert len(rows) == 1 + 3 * 11
    expected = api.run(load_circuit(latch_file)).y
    assert float(rows[1 + 11 + 4][4]) == expected[1, 4, 2]
    assert main(["run", str(latch_file), "--sequence", "pulses1"]) == 0
    text = capsys.readouterr().out
    assert text.splitlines()[1].startswith("pulses1,0,") and len(text.splitlines()) == 12
    assert main(["run", str(latch_file), "--sequence", "nope"]) == 2
    assert "no sequence named 'nope'" in capsys.readouterr().err


def test_gradcheck_agrees_and_reports(latch_file, capsys):
    assert main(["gradcheck", str(latch_file)]) == 0
    text = capsys.readouterr().out
    assert "finite diff." in text and "RTRL" in text and "gradients agree" in text
    assert main(["gradcheck", str(latch_file), "--json"]) == 0
    report = json.loads(capsys.readouterr().out)
    assert report["passed"] and report["max_error"] < 1e-6
    assert {g["group"] for g in report["groups"]} == {"weights", "biases"}


def test_gradcheck_exits_1_when_gradients_disagree(latch_file, capsys, monkeypatch):
    import circuitlab.engine.gradcheck as gc
    real = gc.backward

    def wrong(*args, **kwargs):
        value, grads, back = real(*args, **kwargs)
        grads.W *= 1.01
        return value, grads, back

    monkeypatch.setattr(gc, "backward", wrong)
    assert main(["gradcheck", str(latch_file)]) == 1
    assert "DISAGREE" in capsys.readouterr().out


def test_api_gradients_contributions_and_unroll():
    c = constrained_circuit()
    g = api.gradients(c)
    i, j = g.compiled.unit_index("h"), g.compiled.unit_index("o")
    # a shared weight's gradient is the sum of its copies' (Rumelhart, Hinton and Williams, 1986, from memory)
    assert g.contributions("h", "o").sum() == pytest.approx(g.W[i, j], rel=1e-12)
    assert g.e.shape == g.delta.shape == g.y.shape == (4, 6, 3)
    assert len(g.theta_gradient) == len(g.theta_labels)
    # unrolled over T steps: (T + 1) n nodes and T |E| edges, as networkx.tensor_product with a path gives
    graph = api.unroll(c, steps=5)
    assert graph.number_of_nodes() == 3 * 6 and graph.number_of_edges() == 5 * len(c.connections)
    result = api.train(c, epochs=20)
    assert result.epochs == 20 and c.trained is None  # the given circuit is not changed
    curve = result.curve()
    assert curve["loss"].shape == (20,) and np.isfinite(curve["held_out_loss"]).all()


def test_train_exits_1_and_saves_finite_values_when_training_diverges(tmp_path, capsys):
    c = diverging_circuit()
    path, out = tmp_path / "wild.circuit.json", tmp_path / "out.circuit.json"
    save_circuit(c, path)
    assert main(["train", str(path), "--out", str(out), "--json"]) == 1
    report = json.loads(capsys.readouterr().out)
    assert "NaN or infinite" in report["stopped_because"] and not report["ok"]
    assert np.isfinite(load_circuit(out).connection("a", "a").weight)


def test_run_past_the_data_needs_data_for_clamped_units():
    c = constrained_circuit()  # 'x' is clamped at every step
    with pytest.raises(api.EngineError, match="(?s)clamped past the end of the data.*steps 6-20.*fill="):
        api.run(c, steps=20)
    filled = api.run(c, steps=20, fill=0.25)
    assert (filled.y[:, 6:, 0] == 0.25).all() and (filled.y[:, :6, 0] == api.run(c).y[:, :, 0]).all()
    c.set_schedule("x", c.schedule_for("x").model_copy(update={"clamp": "given"}))
    run = api.run(c, steps=20)  # 'given': clamped where data exist, free after
    assert run.y.shape == (4, 21, 3) and np.isfinite(run.y).all()
    assert c.sequences[0].length == 5  # the circuit itself is untouched


def test_compile_lists_the_circuit_problems():
    from circuitlab.engine import compile_circuit
    c = constrained_circuit()
    c.sequences[1].targets["o"][3] = None
    c.training.loss = "cross_entropy"
    c.sequences[2].targets["o"][2] = 3.0
    with pytest.raises(api.EngineError) as info:
        compile_circuit(c)
    text = str(info.value)
    assert "2 problem(s)" in text or len(info.value.problems) >= 2
    assert any("no value" in p for p in info.value.problems)
    assert any("[0, 1]" in p for p in info.value.problems)
