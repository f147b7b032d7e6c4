"""``circuitlab sequences export/import``: exact round trips; bad input changes nothing."""

import shutil

import pytest

from circuitlab.cli import main
from circuitlab.model import load_circuit, save_circuit


@pytest.fixture
def echo(examples_dir, tmp_path):
    path = tmp_path / "echo.circuit.json"
    shutil.copy(examples_dir / "two_step_echo.circuit.json", path)
    return path


def test_export_then_import_into_a_copy_gives_identical_sequences(echo, tmp_path, capsys):
    csv_path = tmp_path / "data.csv"
    assert main(["sequences", "export", str(echo), str(csv_path)]) == 0
    header = csv_path.read_text().splitlines()[0]
    assert header == "sequence,step,held_out,clamp:sensor,target:echo"  # the example holds some out
    copy = tmp_path / "copy.circuit.json"
    out = tmp_path / "out.circuit.json"
    shutil.copy(echo, copy)
    assert main(["sequences", "import", str(copy), str(csv_path), "--replace", "--out", str(out)]) == 0
    assert load_circuit(out).sequences == load_circuit(echo).sequences
    # without --replace the names clash: exit 1, nothing written
    before = copy.read_bytes()
    assert main(["sequences", "import", str(copy), str(csv_path)]) == 1
    assert "already exists" in capsys.readouterr().err and copy.read_bytes() == before


def test_malformed_csv_exits_1_with_line_and_column_and_writes_nothing(echo, tmp_path, capsys):
    bad = tmp_path / "bad.csv"
    bad.write_text("sequence,step,clamp:sensor\nnew,0,1\nnew,1,one\n")
    before = echo.read_bytes()
    out = tmp_path / "out.json"
    assert main(["sequences", "import", str(echo), str(bad), "--out", str(out)]) == 1
    err = capsys.readouterr().err
    assert "line 3, column 3: 'one' is not a number" in err and "nothing was imported" in err
    assert echo.read_bytes() == before and not out.exists()
    assert main(["sequences", "import", str(echo), str(tmp_path / "missing.csv")]) == 1
    assert "cannot be read" in capsys.readouterr().err


def test_import_adds_to_existing_sequences(echo, tmp_path):
    extra = tmp_path / "extra.csv"
    extra.write_text("sequence,step,held_out,target:echo\nprobe,0,1,\nprobe,1,1,0.25\n")
    n = len(load_circuit(echo).sequences)
    assert main(["sequences", "import", str(echo), str(extra)]) == 0
    seqs = load_circuit(echo).sequences
    assert len(seqs) == n + 1 and seqs[-1].held_out and seqs[-1].targets == {"echo": [None, 0.25]}


@pytest.fixture
def xy_circuit(tmp_path):
    from circuitlab.model import Circuit, Sequence, Unit, save_circuit

    c = Circuit(units=[Unit(name="x"), Unit(name="y")],
                sequences=[Sequence(name="kept", length=1, clamps={"x": [0.0, 1.0]})])
    path = tmp_path / "xy.circuit.json"
    save_circuit(c, path)
    return path


def test_every_malformed_case_exits_1_naming_its_place_and_changes_nothing(xy_circuit, tmp_path, capsys):
    from test_csvdata import MALFORMED  # tests/ is on the path: the same cases as the reader's tests

    before = xy_circuit.read_bytes()
    for i, (text, line, column, words) in enumerate(MALFORMED):
        bad = tmp_path / f"bad{i}.csv"
        bad.write_text(text)
        assert main(["sequences", "import", str(xy_circuit), str(bad), "--replace"]) == 1, text
        err = capsys.readouterr().err
        where = f"line {line}" + (f", column {column}" if column else "")
        assert f"{where}: " in err and words in err, (text, err)
        assert xy_circuit.read_bytes() == before


def test_import_with_out_leaves_the_input_circuits_csv_file_alone(echo, tmp_path, capsys):
    # A circuit keeping its sequences in a CSV file beside it: writing the result to --out in
    # the same folder must not rewrite the CSV file the input circuit reads.
    c = load_circuit(echo)
    c.sequences_file = "echo-data.csv"
    save_circuit(c, echo)
    data = (tmp_path / "echo-data.csv").read_bytes()
    extra = tmp_path / "extra.csv"
    extra.write_text("sequence,step,clamp:sensor\nnew,0,1.0\nnew,1,0.0\n")
    out = tmp_path / "out.circuit.json"
    assert main(["sequences", "import", str(echo), str(extra), "--out", str(out)]) == 0
    assert "left as it was" in capsys.readouterr().out
    assert (tmp_path / "echo-data.csv").read_bytes() == data
    assert load_circuit(echo).sequences == c.sequences
    result = load_circuit(out)
    assert [s.name for s in result.sequences] == [s.name for s in c.sequences] + ["new"]
