"""Every headless command given bad input: a clear message on stderr, exit 1 or 2, nothing written.

"Bad input loses nothing" is checked by comparing every file in the working
folder (names and bytes) before and after the command.
"""

import json
import shutil
from pathlib import Path

import pytest

from circuitlab.cli import main

EXAMPLE = Path(__file__).resolve().parents[1] / "example_circuits" / "set_reset_latch.circuit.json"


@pytest.fixture
def folder(tmp_path, monkeypatch):
    monkeypatch.chdir(tmp_path)
    shutil.copy(EXAMPLE, "good.json")
    doc = json.loads(EXAMPLE.read_text())
    variants = {
        "noseq.json": lambda d: d.update(sequences=[]),
        "notarget.json": lambda d: d["schedule"]["latched_open"].update(target="none"),
        "semantic.json": lambda d: d["connections"].append({**d["connections"][0], "source": "ghost"}),
    }
    for name, change in variants.items():
        d = json.loads(json.dumps(doc))
        change(d)
        Path(name).write_text(json.dumps(d))
    Path("bad.json").write_text("not json")
    Path("s.csv").write_text("sequence,step,clamp:open_pulse\nz,0,1.0\n")
    Path("adir").mkdir()
    Path("dir.csv").mkdir()
    return tmp_path


def snapshot(root: Path) -> dict:
    return {str(p.relative_to(root)): (p.read_bytes() if p.is_file() else None) for p in root.rglob("*")}


CASES = [
    # (arguments, exit code, words the message must hold)
    ("info missing.json", 1, "No such file"),
    ("info adir", 1, "Is a directory"),
    ("info bad.json", 1, "not valid JSON"),
    ("train missing.json", 2, "No such file"),
    ("train adir", 2, "Is a directory"),
    ("train bad.json", 2, "not valid JSON"),
    ("train semantic.json", 2, "ghost"),
    ("train noseq.json", 2, "nothing to train on"),
    ("train notarget.json", 2, "no training sequence has a target"),
    ("train good.json --epochs 0", 2, "--epochs"),
    ("train good.json --epochs -3", 2, "--epochs"),
    ("train good.json --epochs 1 --out good.json", 2, "is also the input"),
    ("train good.json --epochs 1 --log good.json", 2, "is also the input"),
    ("train good.json --epochs 1 --out adir", 2, "is a folder"),
    ("train good.json --epochs 1 --out nofolder/t.json --log curve.csv", 2, "does not exist"),
    ("train good.json --epochs 1 --out t.json --log t.json", 2, "the same file"),
    ("run missing.json", 2, "No such file"),
    ("run semantic.json", 2, "ghost"),
    ("run noseq.json", 2, "no sequences"),
    ("run good.json --sequence ghost", 2, "no sequence named 'ghost'"),
    ("run good.json --steps 0", 2, "steps must be at least 1"),
    ("run good.json --steps 40 --fill nan", 2, "fill must be a finite number"),
    ("run good.json --fill 0", 2, "only applies with --steps"),
    ("run good.json --csv dir.csv", 2, "is a folder"),
    ("run good.json --csv good.json", 2, "is also the input"),
    ("run good.json --csv nofolder/out.csv", 2, "does not exist"),
    ("gradcheck missing.json", 2, "No such file"),
    ("gradcheck semantic.json", 2, "ghost"),
    ("gradcheck noseq.json", 2, "nothing to check"),
    ("gradcheck notarget.json", 2, "nothing to check"),
    ("gradcheck good.json --tolerance -1", 2, "--tolerance"),
    ("export missing.json out.csv", 1, "No such file"),
    ("export semantic.json out.csv", 1, "no unit named 'ghost'"),
    ("export semantic.json out.graphml", 1, "no unit named 'ghost'"),
    ("export good.json adir", 2, "cannot tell the format"),
    ("export good.json dir.csv", 2, "is a folder"),
    ("export good.json nofolder/out.graphml", 2, "does not exist"),
    ("import-graphml missing.graphml new.json", 1, "No such file"),
    ("import-graphml adir new.json", 1, "Is a directory"),
    ("import-graphml bad.json new.json", 1, "not a GraphML file"),
    ("import-graphml good.json good.json", 2, "is also the input"),
    ("sequences export missing.json out.csv", 1, "No such file"),
    ("sequences export good.json adir", 1, "is a folder"),
    ("sequences export good.json good.json", 1, "is also the input"),
    ("sequences export good.json nofolder/out.csv", 1, "does not exist"),
    ("sequences import adir s.csv", 1, "is a folder"),
    ("sequences import good.json missing.csv --out new.json", 1, "No such file"),
    ("sequences import good.json dir.csv --out new.json", 1, "Is a directory"),
    ("sequences import good.json s.csv --replace --out s.csv", 1, "is also the input"),
    ("sequences import good.json s.csv --replace --out nofolder/new.json", 1, "does not exist"),
    ("sequences import good.json s.csv --replace --out adir", 1, "is a folder"),
]


@pytest.mark.parametrize("args, code, words", CASES, ids=[c[0] for c in CASES])
def test_bad_input_gets_a_clear_message_and_writes_nothing(folder, capsys, args, code, words):
    before = snapshot(folder)
    assert main(args.split()) == code
    out, err = capsys.readouterr()
    assert words in err, err
    assert err.startswith("circuitlab: ") and "Traceback" not in err
    assert snapshot(folder) == before


def test_train_log_onto_the_circuits_own_sequences_file_is_refused(folder, capsys):
    doc = json.loads(Path("good.json").read_text())
    Path("data.csv").write_text("sequence,step,clamp:open_pulse,clamp:close_pulse,target:latched_open\n"
                                "a,0,1.0,0.0,\na,1,0.0,0.0,1.0\n")
    doc.update(sequences=[], sequences_file="data.csv")
    Path("split.json").write_text(json.dumps(doc))
    before = snapshot(folder)
    assert main(["train", "split.json", "--epochs", "1", "--log", "data.csv"]) == 2
    assert "is also the input file" in capsys.readouterr().err
    assert snapshot(folder) == before
