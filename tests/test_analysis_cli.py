"""The analyze and export commands and run --with-targets, from the command line."""

import csv
import json

import numpy as np

from circuitlab import api
from circuitlab.cli import main


def test_analyze_json_reports_verdicts_fixed_points_and_noise(tmp_path, examples_dir, capsys):
    trained = api.train(api.load(examples_dir / "set_reset_latch.circuit.json")).circuit
    path = tmp_path / "latch.circuit.json"
    api.save(trained, path)
    assert main(["analyze", str(path), "--clamp", "open_pulse=0", "--horizon", "3",
                 "--noise", "0,0.1", "--json"]) == 0
    out = json.loads(capsys.readouterr().out)
    assert out["ok"] and out["problems"] == {}
    assert {v["verdict"] for v in out["horizon"]["verdicts"]} <= {"settles", "oscillates", "leaves"}
    fp = out["fixed_points"]
    assert fp["held"] == {"open_pulse": 0.0, "close_pulse": 0.0}
    # A latch with no input has two stable states (one open, one closed) and an unstable one between.
    assert sorted(p["stable"] for p in fp["fixed_points"]) == [False, True, True]
    assert [lv["sigma"] for lv in out["noise"]["levels"]] == [0.0, 0.1]
    assert main(["analyze", str(path)]) == 0
    assert "fixed points" in capsys.readouterr().out


def test_analyze_refuses_bad_input_clearly(examples_dir, capsys):
    path = str(examples_dir / "set_reset_latch.circuit.json")
    assert main(["analyze", path, "--clamp", "open_pulse"]) == 2
    assert "write UNIT=VALUE" in capsys.readouterr().err
    assert main(["analyze", path, "--clamp", "nobody=1"]) == 2
    assert "no unit named 'nobody'" in capsys.readouterr().err
    assert main(["analyze", path, "--noise", "a,b"]) == 2
    assert "--noise" in capsys.readouterr().err


def test_export_formats_by_suffix_and_by_to(tmp_path, examples_dir):
    path = str(examples_dir / "tank_balancer.circuit.json")
    circuit = api.load(path)
    assert main(["export", path, str(tmp_path / "w.csv")]) == 0
    rows = list(csv.reader(open(tmp_path / "w.units.csv")))
    assert rows[0] == ["unit", "activation", "bias", "initial_mode", "initial_state"]
    assert [r[0] for r in rows[1:]] == circuit.unit_names()
    assert main(["export", path, str(tmp_path / "p.npz")]) == 0
    data = np.load(tmp_path / "p.npz")
    c = circuit.connections[0]
    names = list(data["unit_names"])
    assert data["W"][names.index(c.source), names.index(c.target)] == c.weight
    assert main(["export", path, str(tmp_path / "anything.dat"), "--to", "py"]) == 0
    assert "def run(" in (tmp_path / "anything.dat").read_text()
    assert main(["export", path, str(tmp_path / "copy.circuit.json")]) == 0
    assert api.load(tmp_path / "copy.circuit.json") == circuit
    assert main(["export", path, str(tmp_path / "c.png"), "--width", "400"]) == 0
    assert (tmp_path / "c.png").read_bytes()[:4] == b"\x89PNG"
    assert main(["export", path, str(tmp_path / "c.txt")]) == 2


def test_run_with_targets_puts_target_error_and_loss_beside_the_states(tmp_path, examples_dir):
    path = str(examples_dir / "two_step_echo.circuit.json")
    out = tmp_path / "p.csv"
    assert main(["run", path, "--with-targets", "--csv", str(out)]) == 0
    rows = list(csv.DictReader(open(out)))
    cells = [r for r in rows if r["target:echo"]]
    pred = api.predictions(api.load(path))
    assert len(cells) == len(pred)
    for r in cells[:20]:
        assert float(r["error:echo"]) == float(r["echo"]) - float(r["target:echo"])
    assert main(["run", path, "--with-targets", "--steps", "30"]) == 2
