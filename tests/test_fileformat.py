"""The circuit file format: exact round trips, atomic saves, size limit, published schema."""

import builtins
import errno
import json
import os
import pickle
import stat
import sys
from pathlib import Path

import jsonschema
import pytest
from hypothesis import HealthCheck, given, settings

from circuitlab.model import Circuit, CircuitFileError, ModelError, Unit, load_circuit, save_circuit
from circuitlab.model import fileformat
from circuitlab.model.fileformat import MAX_FILE_BYTES, dumps_circuit, json_schema, loads_circuit
from strategies import ANY_FINITE, circuits

ROOT = Path(__file__).resolve().parents[1]
EXAMPLES = sorted((ROOT / "example_circuits").glob("*.circuit.json"))

SCHEMA_FILE = ROOT / "resources" / "circuit.schema.json"
sys.path.insert(0, str(ROOT / "tools"))
import write_schema  # noqa: E402  (tools/ is not a package)



def small_circuit() -> Circuit:
    c = Circuit(name="pair")
    c.add_unit(Unit(name="a", x=1.5, y=-2.25))
    c.add_unit(Unit(name="b", activation="tanh", initial_value=0.25))
    c.connect("a", "b", 0.125)
    c.connect("b", "b", -0.5)
    return c


# ---------------------------------------------------------------- round trip
@settings(max_examples=100, deadline=None, derandomize=True,
          suppress_health_check=[HealthCheck.too_slow])
@given(circuits(values=ANY_FINITE))
def test_round_trip_is_exact(circuit):
    text = dumps_circuit(circuit)
    again = loads_circuit(text)
    assert again == circuit
    assert dumps_circuit(again) == text  # byte-for-byte, floats included (repr is shortest exact)
    # and the published schema, checked by an independent validator (jsonschema), agrees
    jsonschema.validate(json.loads(text), PUBLISHED_SCHEMA)


def test_round_trip_through_a_file_keeps_extreme_floats(tmp_path):
    # IEEE 754 binary64 limits (handbook facts; here equal to float.fromhex and -sys.float_info.max).
    c = small_circuit()
    c.connection("a", "b").weight = 5e-324        # smallest subnormal
    c.connection("b", "b").weight = -1.7976931348623157e308  # most negative double
    c.unit("a").bias = 0.1 + 0.2                 # 0.30000000000000004
    path = tmp_path / "x.circuit.json"
    save_circuit(c, path)
    back = load_circuit(path)
    assert back == c
    assert back.connection("a", "b").weight == 5e-324
    assert back.unit("a").bias == 0.30000000000000004


@pytest.mark.parametrize("path", EXAMPLES, ids=lambda p: p.name)
def test_examples_load_and_round_trip(path):
    c = load_circuit(path)
    assert c.units, "an example with no units demonstrates nothing"
    assert loads_circuit(dumps_circuit(c)) == c


def test_file_starts_with_format_and_version():
    doc = json.loads(dumps_circuit(small_circuit()))
    assert list(doc)[:2] == ["format", "version"]
    assert doc["format"] == "circuitlab-circuit" and doc["version"] == 1


def test_byte_order_mark_is_accepted():
    # RFC 8259, section 8.1: a parser may ignore a leading byte order mark (cited from memory).
    text = dumps_circuit(small_circuit())
    assert loads_circuit(b"\xef\xbb\xbf" + text.encode()) == small_circuit()


# ---------------------------------------------------------------- atomic save
def _old_file(tmp_path: Path) -> tuple[Path, bytes]:
    path = tmp_path / "keep.circuit.json"
    save_circuit(small_circuit(), path)
    return path, path.read_bytes()


def _changed() -> Circuit:
    c = small_circuit()
    c.add_unit(Unit(name="c" * 60))
    return c


def test_failed_write_midway_keeps_old_file(tmp_path, monkeypatch):
    path, before = _old_file(tmp_path)
    real_fdopen = os.fdopen

    class HalfWriter:
        """Writes half the bytes, then fails as a full disk would."""

        def __init__(self, fh):
            self.fh = fh

        def __enter__(self):
            return self

        def __exit__(self, *exc):
            self.fh.close()

        def write(self, data):
            self.fh.write(data[: len(data) // 2])
            self.fh.flush()
            raise OSError(errno.ENOSPC, "No space left on device")

    monkeypatch.setattr(fileformat.os, "fdopen", lambda fd, mode: HalfWriter(real_fdopen(fd, mode)))
    with pytest.raises(OSError, match="No space left"):
        save_circuit(_changed(), path)
    assert path.read_bytes() == before
    assert sorted(p.name for p in tmp_path.iterdir()) == [path.name]  # no temporary file left
    assert load_circuit(path) == small_circuit()


@pytest.mark.parametrize("step", ["fsync", "replace"])
def test_failed_fsync_or_rename_keeps_old_file(tmp_path, monkeypatch, step):
    path, before = _old_file(tmp_path)

    def fail(*args):
        raise OSError(errno.EIO, f"simulated {step} failure")

    monkeypatch.setattr(fileformat.os, step, fail)
    with pytest.raises(OSError, match="simulated"):
        save_circuit(_changed(), path)
    monkeypatch.undo()
    assert path.read_bytes() == before
    assert sorted(p.name for p in tmp_path.iterdir()) == [path.name]


def test_unsavable_circuit_raises_model_error_and_keeps_old_file(tmp_path):
    path, before = _old_file(tmp_path)
    bad = _changed()
    bad.connections[0].weight = float("inf")  # possible from a script: no validation on assignment
    with pytest.raises(ModelError, match=r"connections\[0\]\.weight: must be a finite number"):
        save_circuit(bad, path)
    assert path.read_bytes() == before


def test_save_keeps_permissions_and_follows_symlink(tmp_path):
    path, _ = _old_file(tmp_path)
    os.chmod(path, 0o640)
    link = tmp_path / "link.circuit.json"
    link.symlink_to(path)
    save_circuit(_changed(), link)
    assert link.is_symlink()
    assert stat.S_IMODE(path.stat().st_mode) == 0o640
    assert load_circuit(path) == _changed()


def test_new_file_gets_the_usual_permissions(tmp_path):
    old = os.umask(0o022)
    try:
        save_circuit(small_circuit(), tmp_path / "new.circuit.json")
    finally:
        os.umask(old)
    # mkstemp would have left 0600; a newly saved file should look like any other (common practice)
    assert stat.S_IMODE((tmp_path / "new.circuit.json").stat().st_mode) == 0o644


# ---------------------------------------------------------------- refusals
def test_file_over_50_mb_is_refused_before_reading(tmp_path):
    path = tmp_path / "huge.circuit.json"
    with open(path, "wb") as fh:
        fh.truncate(MAX_FILE_BYTES + 1)  # sparse: costs no disk space
    with pytest.raises(CircuitFileError, match=r"\(file\): is 50\.0 MB; circuit files are limited to 50 MB"):
        load_circuit(path)


def test_text_over_50_mb_is_refused():
    with pytest.raises(CircuitFileError, match="limited to 50 MB"):
        loads_circuit(b" " * (MAX_FILE_BYTES + 1))


def test_missing_file_and_directory_give_a_plain_message(tmp_path):
    with pytest.raises(CircuitFileError, match=r"\(file\): cannot be read \(No such file"):
        load_circuit(tmp_path / "absent.circuit.json")
    with pytest.raises(CircuitFileError, match=r"\(file\): cannot be read \(Is a directory"):
        load_circuit(tmp_path)


def test_loading_never_unpickles_or_evaluates(monkeypatch):
    def forbidden(*args, **kwargs):
        raise AssertionError("the loader ran code from a file")

    for name in ("loads", "load", "Unpickler"):
        monkeypatch.setattr(pickle, name, forbidden)
    monkeypatch.setattr(builtins, "eval", forbidden)
    monkeypatch.setattr(builtins, "exec", forbidden)
    payloads = [
        pickle.dumps(small_circuit()),  # a pickle where JSON belongs
        b'{"format": "circuitlab-circuit", "version": 1, "name": {"__class__": "os.system"}}',
        b'{"format": "circuitlab-circuit", "version": 1, "units": "__import__(\'os\')"}',
    ]
    for data in payloads:
        with pytest.raises(CircuitFileError):
            loads_circuit(data)
    for path in EXAMPLES:
        load_circuit(path)


# ---------------------------------------------------------------- schema
PUBLISHED_SCHEMA = json.loads(SCHEMA_FILE.read_text(encoding="utf-8"))


def test_published_schema_matches_the_code():
    assert PUBLISHED_SCHEMA == json_schema(), "run: python tools/write_schema.py"
    assert SCHEMA_FILE.read_text(encoding="utf-8") == write_schema.schema_text()


def test_published_schema_is_a_valid_json_schema():
    # checked by jsonschema's own meta-schema for draft 2020-12
    jsonschema.Draft202012Validator.check_schema(PUBLISHED_SCHEMA)


@pytest.mark.parametrize("path", EXAMPLES, ids=lambda p: p.name)
def test_examples_validate_against_published_schema(path):
    jsonschema.validate(json.loads(path.read_text(encoding="utf-8")), PUBLISHED_SCHEMA)


def test_schema_and_loader_refuse_the_same_bad_document():
    doc = json.loads(dumps_circuit(small_circuit()))
    doc["connections"][0]["weight"] = "heavy"
    with pytest.raises(jsonschema.ValidationError):
        jsonschema.validate(doc, PUBLISHED_SCHEMA)
    with pytest.raises(CircuitFileError, match=r"connections\[0\]\.weight: must be a number"):
        loads_circuit(json.dumps(doc))
