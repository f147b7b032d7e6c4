"""The run history: content hash, recording from train / api.train, the runs command, concurrency."""

import hashlib
import json
import sqlite3
import subprocess
import sys
import warnings
from pathlib import Path

import numpy as np
import pytest

from circuitlab import api
from circuitlab.cli import main
from circuitlab.runs import HistoryError, RunHistory, canonical_json, content_hash
from circuitlab.runs.history import SCHEMA_VERSION
from circuitlab.runs.record import RAN_EPOCHS, REACHED_TARGET, RunData

ROOT = Path(__file__).resolve().parents[1]
LATCH = ROOT / "example_circuits" / "set_reset_latch.circuit.json"


def test_content_hash_ignores_training_and_layout_but_not_structure():
    circuit = api.load(LATCH)
    digest = content_hash(circuit)
    # common practice: a content address is the SHA-256 of a canonical serialisation
    assert digest == hashlib.sha256(canonical_json(circuit).encode("utf-8")).hexdigest()
    trained = api.train(circuit, epochs=5, record=False).circuit
    moved = circuit.copy()
    moved.units[0].x += 40
    moved.name = "another name"
    moved.training.learning_rate = 0.5
    assert content_hash(trained) == content_hash(moved) == digest
    assert trained.connections[0].weight != circuit.connections[0].weight  # training did change a weight
    frozen = circuit.copy()
    frozen.connections[0].trains = False
    assert content_hash(frozen) != digest
    data = circuit.copy()
    data.sequences[0].length += 1
    data.sequences[0].resize(data.sequences[0].length)
    assert content_hash(data) != digest


def test_train_records_its_run_and_no_record_records_nothing(tmp_path, capsys):
    db = tmp_path / "h.sqlite"
    assert main(["train", str(LATCH), "--epochs", "12", "--db", str(db)]) == 0
    assert main(["train", str(LATCH), "--epochs", "12", "--db", str(db), "--no-record"]) == 0
    history = RunHistory(db)
    runs = history.list_runs()
    assert len(runs) == 1
    run = history.get_run(runs[0]["id"])
    assert run["source"] == "cli" and run["outcome"] == RAN_EPOCHS and run["epochs"] == 12
    assert run["circuit_hash"] == content_hash(api.load(LATCH)) and run["circuit_name"] == "door latch"
    assert run["curves"]["epoch"].tolist() == list(range(1, 13))
    # the latch has one held-out sequence: its loss is the validation curve (no test set yet)
    assert np.isfinite(run["curves"]["validation_loss"]).all()
    assert np.isnan(run["curves"]["test_loss"]).all()
    assert run["settings"]["learning_rate"] == api.load(LATCH).training.learning_rate
    assert len(run["final_parameters"]["weights"]) == 3
    assert run["best_validation_loss"] == pytest.approx(min(run["curves"]["validation_loss"].min(),
                                                            run["final_validation_loss"]))


def test_api_train_records_the_curve_it_returns(tmp_path):
    db = tmp_path / "h.sqlite"
    result = api.train(api.load(LATCH), db=db)
    api.train(api.load(LATCH), epochs=3, db=db, record=False)
    (row,) = RunHistory(db).list_runs()
    run = RunHistory(db).get_run(row["id"])
    assert run["outcome"] == REACHED_TARGET and run["target_epoch"] == result.epochs
    np.testing.assert_array_equal(run["curves"]["loss"], result.curve()["loss"])
    np.testing.assert_array_equal(run["curves"]["validation_loss"], result.curve()["held_out_loss"])
    assert run["final_loss"] == pytest.approx(result.final_loss)
    weights = {(a, b): w for a, b, w in run["final_parameters"]["weights"]}
    assert weights == {c.key: c.weight for c in result.circuit.connections}


def test_a_broken_history_loses_no_result_and_warns_once(tmp_path, capsys):
    folder = tmp_path / "a-folder"
    folder.mkdir()
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        result = api.train(api.load(LATCH), epochs=4, db=folder)
    assert result.epochs == 4 and np.isfinite(result.final_loss)
    assert len(caught) == 1 and "not recorded" in str(caught[0].message)
    out = tmp_path / "trained.circuit.json"
    assert main(["train", str(LATCH), "--epochs", "4", "--db", str(folder), "--out", str(out)]) == 0
    err = capsys.readouterr().err
    assert err.count("not recorded") == 1 and out.exists()


def test_history_file_is_versioned_and_in_wal_mode(tmp_path):
    db = tmp_path / "h.sqlite"
    history = RunHistory(db)
    assert history.count_runs() == 0 and history.schema_version() == SCHEMA_VERSION
    con = sqlite3.connect(db)
    assert con.execute("PRAGMA journal_mode").fetchone()[0] == "wal"
    con.execute("UPDATE schema_version SET version = ?", (SCHEMA_VERSION + 1,))
    con.commit()
    con.close()
    with pytest.raises(HistoryError, match="newer circuitlab"):
        RunHistory(db).count_runs()
    junk = tmp_path / "junk.sqlite"
    junk.write_bytes(b"not a database at all" * 100)
    with pytest.raises(HistoryError, match="not a usable run history"):
        RunHistory(junk).count_runs()


def _run(i: int) -> RunData:
    return RunData(circuit_name="c", circuit_hash="h", settings={"i": i}, seed=i, source="api",
                   outcome=RAN_EPOCHS, curves={"epoch": np.arange(1, 6.0), "loss": np.full(5, i / 10)})


WRITER = """
import sys
from circuitlab.runs import RunHistory
from circuitlab.runs.record import RunData
import numpy as np
h = RunHistory(sys.argv[1]); tag = int(sys.argv[2])
for i in range(40):
    uid = h.add_run(RunData(circuit_name="c", circuit_hash="h", settings={}, seed=tag * 1000 + i, source="api",
                            outcome="ran_epochs", curves={"loss": np.arange(50.0)}))
    print(uid, flush=True)
"""


def test_two_processes_writing_at_once_lose_nothing(tmp_path):
    db = tmp_path / "h.sqlite"
    RunHistory(db).count_runs()  # created before, so the two writers race on inserts, not on creation
    procs = [subprocess.Popen([sys.executable, "-c", WRITER, str(db), str(tag)], stdout=subprocess.PIPE,
                              text=True, cwd=ROOT) for tag in (1, 2)]
    outputs = [p.communicate(timeout=60)[0].split() for p in procs]
    assert [p.returncode for p in procs] == [0, 0]
    history = RunHistory(db)
    runs = history.list_runs()
    assert len(runs) == 80 == history.count_runs()
    assert {r["uid"] for r in runs} == set(outputs[0]) | set(outputs[1])
    assert sorted(r["seed"] for r in runs) == sorted([1000 + i for i in range(40)] + [2000 + i for i in range(40)])


def test_runs_command_lists_shows_exports_and_deletes(tmp_path, capsys):
    db = tmp_path / "h.sqlite"
    history = RunHistory(db)
    uids = history.add_runs([_run(1), _run(2)])
    assert main(["runs", "list", "--db", str(db), "--json"]) == 0
    listed = json.loads(capsys.readouterr().out)["runs"]
    assert [r["uid"] for r in listed] == uids[::-1]
    assert main(["runs", "show", uids[0][:8], "--db", str(db), "--json"]) == 0
    shown = json.loads(capsys.readouterr().out)["run"]
    assert shown["curves"]["loss"] == [0.1] * 5 and shown["curves"]["test_loss"] == []
    out = tmp_path / "curve.csv"
    assert main(["runs", "export", str(listed[0]["id"]), str(out), "--db", str(db)]) == 0
    assert capsys.readouterr().out.startswith("wrote")
    lines = out.read_text().splitlines()
    assert lines[0].startswith("epoch,loss,validation_loss") and lines[1].startswith("1,0.2,")
    assert main(["runs", "list", "--db", str(db), "--circuit", str(LATCH), "--json"]) == 0
    assert json.loads(capsys.readouterr().out)["runs"] == []  # other circuit
    # a bad id deletes nothing
    assert main(["runs", "delete", str(listed[0]["id"]), "999", "--db", str(db)]) == 1
    assert "no run '999'" in capsys.readouterr().err and history.count_runs() == 2
    assert main(["runs", "delete", str(listed[0]["id"]), "--db", str(db)]) == 0
    assert [r["uid"] for r in history.list_runs()] == [uids[0]]


def test_runs_and_sweeps_load_no_qt():
    probe = ("import sys, circuitlab.runs, circuitlab.runs.sweep, circuitlab.cli.runs, circuitlab.cli.sweep;"
             "print([m for m in sys.modules if m.split('.')[0] in ('PySide6', 'shiboken6', 'pyqtgraph')])")
    done = subprocess.run([sys.executable, "-c", probe], capture_output=True, text=True, cwd=ROOT, timeout=60)
    assert done.returncode == 0, done.stderr
    assert done.stdout.strip() == "[]"
