"""The file commands: validate, info, export and import-graphml, as a user runs them."""

import csv
import json
import subprocess
import sys
from pathlib import Path

import networkx as nx
import pytest

from circuitlab.cli import main
from circuitlab.model import (Circuit, Sequence, Unit, UnitSchedule, clamp_mask, load_circuit, save_circuit,
                              target_mask)

ROOT = Path(__file__).resolve().parents[1]
EXAMPLES = sorted((ROOT / "example_circuits").glob("*.circuit.json"))



def run(capsys, *argv) -> tuple[int, str, str]:
    code = main([str(a) for a in argv])
    out, err = capsys.readouterr()
    return code, out, err


@pytest.fixture
def broken(tmp_path):
    """An example with one bad weight: the deliberately broken file."""
    doc = json.loads(EXAMPLES[0].read_text(encoding="utf-8"))
    doc["connections"][0]["weight"] = "heavy"
    path = tmp_path / "broken.circuit.json"
    path.write_text(json.dumps(doc), encoding="utf-8")
    return path


@pytest.fixture
def half_clamped(tmp_path):
    """Structurally fine, but a unit clamped at every step lacks a value at step 1."""
    c = Circuit(name="half")
    c.add_unit(Unit(name="cue"))
    c.add_unit(Unit(name="out"))
    c.connect("cue", "out", 1.0)
    c.set_schedule("cue", UnitSchedule(clamp="every"))
    c.add_sequence(Sequence(name="s", length=2, clamps={"cue": [1.0, None, 0.0]}))
    path = tmp_path / "half.circuit.json"
    save_circuit(c, path)
    return path, "cue"


def test_validate_passes_every_example(capsys):
    assert EXAMPLES, "example_circuits/ holds no circuit"
    code, out, _ = run(capsys, "validate", *EXAMPLES)
    assert code == 0
    assert out.count("valid  ") == len(EXAMPLES) and "INVALID" not in out


def test_validate_broken_file_exits_1_and_names_the_field(capsys, broken):
    code, out, _ = run(capsys, "validate", EXAMPLES[0], broken)
    assert code == 1
    assert f"INVALID  {broken}" in out
    assert "connections[0].weight: must be a number" in out


def test_validate_names_a_semantic_problem(capsys, half_clamped):
    path, name = half_clamped
    code, out, _ = run(capsys, "validate", path)
    assert code == 1
    assert f"sequences[0].clamps.{name}: '{name}' is clamped at step 1, but the sequence has no value there" in out


def test_validate_json(capsys, broken):
    code, out, _ = run(capsys, "validate", "--json", *EXAMPLES, broken)
    report = json.loads(out)
    assert code == 1 and report["valid"] is False
    assert [f["valid"] for f in report["files"]] == [True] * len(EXAMPLES) + [False]
    assert report["files"][-1]["problems"] == ["connections[0].weight: must be a number"]


def test_validate_unreadable_and_non_json_files(capsys, tmp_path):
    garbage = tmp_path / "garbage.circuit.json"
    garbage.write_bytes(b"\x00\x01 not json")
    code, out, _ = run(capsys, "validate", tmp_path / "absent.circuit.json", garbage)
    assert code == 1
    assert "(file): cannot be read (No such file or directory)" in out
    assert "(file): is not valid JSON" in out


def test_validate_as_a_process_exits_with_the_right_code(broken):
    ok = subprocess.run([sys.executable, "-m", "circuitlab", "validate", *map(str, EXAMPLES)],
                        capture_output=True, text=True, cwd=ROOT)
    bad = subprocess.run([sys.executable, "-m", "circuitlab", "validate", str(broken)],
                         capture_output=True, text=True, cwd=ROOT)
    assert ok.returncode == 0, ok.stdout + ok.stderr
    assert bad.returncode == 1 and "connections[0].weight" in bad.stdout


@pytest.mark.parametrize("path", EXAMPLES, ids=lambda p: p.name)
def test_info_summarises(capsys, path):
    c = load_circuit(path)
    code, out, _ = run(capsys, "info", path)
    assert code == 0
    assert out.startswith(c.name)
    assert f"{len(c.units)} units" in out and f"{len(c.connections)} connections" in out
    for u in c.units:
        assert u.name in out


def test_info_json(capsys):
    c = load_circuit(EXAMPLES[0])
    code, out, _ = run(capsys, "info", "--json", EXAMPLES[0])
    s = json.loads(out)
    assert code == 0
    assert [u["name"] for u in s["units"]] == c.unit_names()
    assert [(k["source"], k["target"], k["weight"]) for k in s["connections"]] == \
        [(k.source, k.target, k.weight) for k in c.connections]
    assert s["problems"] == []
    cells = [(sum(clamp_mask(u, c.schedule_for(u.name), q)), sum(target_mask(u, c.schedule_for(u.name), q)))
             for q in c.sequences for u in c.units]
    assert s["cells"] == {"clamped": sum(a for a, _ in cells), "targeted": sum(b for _, b in cells)}


def test_info_on_broken_file(capsys, broken):
    code, _, err = run(capsys, "info", broken)
    assert code == 1 and "connections[0].weight: must be a number" in err
    code, out, _ = run(capsys, "info", "--json", broken)
    assert code == 1 and json.loads(out) == {"valid": False,
                                             "problems": ["connections[0].weight: must be a number"]}


# ------------------------------------------------------------ export / import-graphml
def test_export_graphml_and_import_it_back(capsys, tmp_path):
    source = load_circuit(EXAMPLES[0])
    code, out, _ = run(capsys, "export", EXAMPLES[0], tmp_path / "g.graphml", "--json")
    assert code == 0 and json.loads(out)["format"] == "GraphML"
    g = nx.read_graphml(tmp_path / "g.graphml")
    assert sorted(g.edges) == sorted(c.key for c in source.connections)
    code, out, _ = run(capsys, "import-graphml", tmp_path / "g.graphml", tmp_path / "back.circuit.json")
    assert code == 0 and "wrote" in out
    back = load_circuit(tmp_path / "back.circuit.json")
    assert back.units == source.units
    assert {c.key: c.weight for c in back.connections} == {c.key: c.weight for c in source.connections}
    code, _, _ = run(capsys, "validate", tmp_path / "back.circuit.json")
    assert code == 0


def test_import_graphml_refuses_to_overwrite_without_force(capsys, tmp_path):
    run(capsys, "export", EXAMPLES[0], tmp_path / "g.graphml")
    target = tmp_path / "keep.circuit.json"
    target.write_text("precious", encoding="utf-8")
    code, _, err = run(capsys, "import-graphml", tmp_path / "g.graphml", target)
    assert code == 1 and "exists; pass --force" in err
    assert target.read_text(encoding="utf-8") == "precious"
    code, _, _ = run(capsys, "import-graphml", "--force", tmp_path / "g.graphml", target)
    assert code == 0 and load_circuit(target).units


def test_import_graphml_bad_file(capsys, tmp_path):
    bad = tmp_path / "bad.graphml"
    bad.write_text("<graphml", encoding="utf-8")
    code, out, _ = run(capsys, "import-graphml", "--json", bad, tmp_path / "out.circuit.json")
    assert code == 1 and "is not a GraphML file" in json.loads(out)["error"]
    assert not (tmp_path / "out.circuit.json").exists()


def test_export_csv_weight_matrix(capsys, tmp_path):
    c = load_circuit(EXAMPLES[0])
    code, out, _ = run(capsys, "export", EXAMPLES[0], tmp_path / "w.csv")
    assert code == 0 and "CSV weight matrix" in out
    with open(tmp_path / "w.csv", newline="", encoding="utf-8") as fh:
        rows = list(csv.reader(fh))
    names = c.unit_names()
    assert rows[0][1:] == names and [r[0] for r in rows[1:]] == names
    for conn in c.connections:
        i, j = names.index(conn.source) + 1, names.index(conn.target)
        assert float(rows[i][j + 1]) == conn.weight


def test_export_unknown_suffix_and_broken_input(capsys, tmp_path, broken):
    code, _, err = run(capsys, "export", EXAMPLES[0], tmp_path / "x.txt")  # .png is now the canvas picture
    assert code == 2 and "use a name ending in one of" in err and ".graphml" in err
    code, _, err = run(capsys, "export", broken, tmp_path / "x.graphml")
    assert code == 1 and "connections[0].weight: must be a number" in err
    assert not (tmp_path / "x.graphml").exists()
