"""The long CSV layout of sequences: exact round trips and strict, located errors."""

import csv
import io
from pathlib import Path

import pytest

from circuitlab.model import Circuit, Sequence, Unit, UnitSchedule, load_circuit, save_circuit
from circuitlab.model.csvdata import SequenceCsvError, circuit_csv, read_csv, write_csv


def sample() -> list[Sequence]:
    return [
        Sequence(name="a", length=3, clamps={"x": [1.0, 0.0, 1e-17, -2.5]},
                 targets={"y": [None, None, 0.1 + 0.2, 1.0]}),
        Sequence(name="b, quoted", length=2, held_out=True, clamps={"x": [0.0, None, 1.0]},
                 targets={"z": [None, 3.0, None]}),
    ]


def test_round_trip_is_exact():
    seqs = sample()
    text = write_csv(seqs)
    assert read_csv(text, ["x", "y", "z"]) == seqs
    # the header is the documented scheme, and the file parses with the standard csv module
    rows = list(csv.reader(io.StringIO(text)))  # Python's csv module as the outside reader
    assert rows[0] == ["sequence", "step", "held_out", "clamp:x", "target:y", "target:z"]
    # shortest text that reads back to the same float: Python's repr (common practice, from memory)
    assert rows[3] == ["a", "2", "", "1e-17", "0.30000000000000004", ""]
    # a field holding a comma is quoted (RFC 4180, cited from memory)
    assert rows[5][:3] == ["b, quoted", "0", "1"]


def test_template_columns_and_any_row_order():
    c = Circuit(units=[Unit(name="x"), Unit(name="y")])
    c.set_schedule("x", UnitSchedule(clamp="every"))
    c.set_schedule("y", UnitSchedule(target="final"))
    c.add_sequence(Sequence(name="s", length=1))
    assert circuit_csv(c).splitlines() == ["sequence,step,clamp:x,target:y", "s,0,,", "s,1,,"]
    text = "sequence,step,clamp:x\ns,2,1\nt,0,5\ns,0,0\ns,1,\nt,1,6\n"
    seqs = read_csv(text)
    assert [(s.name, s.length) for s in seqs] == [("s", 2), ("t", 1)]
    assert seqs[0].clamps == {"x": [0.0, None, 1.0]}


MALFORMED = [
    ("", 1, 0, "the file is empty"),
    ("step,sequence,clamp:x\n", 1, 1, "must start with 'sequence,step'"),
    ("sequence,step,clamp:nobody\ns,0,1\ns,1,1\n", 1, 3, "no unit named 'nobody'"),
    ("sequence,step,weight:x\ns,0,1\n", 1, 3, "column 'weight:x' is not understood"),
    ("sequence,step,clamp:x,clamp:x\n", 1, 4, "appears twice"),
    ("sequence,step,clamp:x\ns,0,1\ns,1,abc\n", 3, 3, "'abc' is not a number"),
    ("sequence,step,clamp:x\ns,0,nan\ns,1,1\n", 2, 3, "not a finite number"),
    ("sequence,step,clamp:x\ns,0,1\ns,1.5,1\n", 3, 2, "not a whole number"),
    ("sequence,step,clamp:x\ns,0,1\ns,-1,1\n", 3, 2, "outside 0..100000"),
    ("sequence,step,clamp:x\ns,0,1\ns,1,1\ns,3,1\n", 4, 2, "no row for step 2"),
    ("sequence,step,clamp:x\ns,0,1\ns,1,1\ns,1,0\n", 4, 2, "step 1 appears twice (first on line 3)"),
    ("sequence,step,clamp:x\ns,0,1\ns,1\n", 3, 3, "has 2 fields but the header has 3"),
    ("sequence,step,clamp:x\n,0,1\n", 2, 1, "sequence name is empty"),
    ("sequence,step,clamp:x\ns,0,1\n", 2, 2, "has only step 0"),
    ("sequence,step,held_out,clamp:x\ns,0,1,1\ns,1,,1\n", 2, 3, "held_out differs"),
    ("sequence,step,held_out,clamp:x\ns,0,yes,1\ns,1,yes,1\n", 2, 3, "held_out must be 1, 0 or empty"),
    ("sequence,step,clamp:x\ns,0,\"1\ns,1,1\n", 2, 0, "not valid CSV"),
    ("sequence,step,target:x\ns,,1\n", 2, 2, "the step is empty"),
]


@pytest.mark.parametrize("text,line,column,words", MALFORMED)
def test_malformed_csv_names_line_and_column(text, line, column, words):
    with pytest.raises(SequenceCsvError) as info:
        read_csv(text, ["x", "y"])
    first = info.value.problems[0]
    assert (first.line, first.column) == (line, column), str(info.value)
    assert words in first.message
    assert "nothing was imported" in str(info.value)


def test_every_problem_is_listed_not_only_the_first():
    text = "sequence,step,clamp:x\ns,0,a\ns,1,b\nt,0,1\n"
    with pytest.raises(SequenceCsvError) as info:
        read_csv(text, ["x"])
    assert [(p.line, p.column) for p in info.value.problems] == [(2, 3), (3, 3), (4, 2)]


def test_circuit_with_sequences_file_reads_and_writes_the_csv(tmp_path):
    c = Circuit(units=[Unit(name="x"), Unit(name="y"), Unit(name="z")], sequences=sample(),
                sequences_file="data/seqs.csv")
    c.set_schedule("x", UnitSchedule(clamp="given"))
    (tmp_path / "data").mkdir()
    save_circuit(c, tmp_path / "c.circuit.json")
    assert '"sequences": []' in (tmp_path / "c.circuit.json").read_text()
    assert (tmp_path / "data" / "seqs.csv").read_text().startswith("sequence,step,held_out,clamp:x")
    back = load_circuit(tmp_path / "c.circuit.json")
    assert back == c
    (tmp_path / "data" / "seqs.csv").write_text("sequence,step,clamp:x\ns,0,1\ns,2,0\n")
    with pytest.raises(Exception) as info:
        load_circuit(tmp_path / "c.circuit.json")
    assert "sequences_file: " in str(info.value) and "line 3, column 2" in str(info.value)


def test_the_readme_example_reads_as_documented():
    readme = (Path(__file__).resolve().parent.parent / "README.md").read_text()
    block = readme.split("```csv\n", 1)[1].split("```", 1)[0]
    (seq,) = read_csv(block, ["sensor", "echo"])
    assert seq.length == 3 and seq.clamps == {"sensor": [1.0, 0.0, 1.0, 1.0]}
    assert seq.targets == {"echo": [None, None, 1.0, 0.0]}
