"""Fuzzing the loader: every malformed document gets a CircuitFileError, never another exception.

Inputs: truncations at every position of a seed document (and at sampled
positions of each example), random byte flips, wrong types / missing /
surplus keys at every field, random JSON, deep nesting, huge numbers, NaN
literals, bytes that are not UTF-8, bad headers and bad sequence files.
Hypothesis runs derandomized so CI sees the same inputs every time.
"""

import json
import re
from pathlib import Path

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from circuitlab.model import (Circuit, CircuitFileError, Sequence, TrainingRecord, TrainingSettings, Unit,
                              UnitSchedule, load_circuit)
from circuitlab.model.errors import join_path
from circuitlab.model.fileformat import dumps_circuit, loads_circuit
from strategies import ANY_FINITE, circuits

ROOT = Path(__file__).resolve().parents[1]
EXAMPLES = sorted((ROOT / "example_circuits").glob("*.circuit.json"))


FUZZ = settings(max_examples=300, deadline=None, derandomize=True, database=None,
                suppress_health_check=[HealthCheck.too_slow, HealthCheck.data_too_large])
PROBLEM_LINE = re.compile(r"^\S.*?: \S")
HEADER = '{"format": "circuitlab-circuit", "version": 1, '
WRONG_VALUES = [None, True, 0, -1, 1.5, 1e308, "", "text", [], [None], {}, {"k": 1}, 10**30]


def refused(data) -> CircuitFileError:
    """Load ``data``, which must be refused with a well-formed CircuitFileError."""
    with pytest.raises(CircuitFileError) as info:
        loads_circuit(data)
    check_problems(info.value)
    return info.value


def refused_or_loaded(data) -> CircuitFileError | Circuit:
    """Load ``data``: a Circuit or a well-formed CircuitFileError, never anything else."""
    try:
        return loads_circuit(data)
    except CircuitFileError as exc:
        check_problems(exc)
        return exc


def check_problems(exc: CircuitFileError) -> None:
    assert exc.problems
    for p in exc.problems:
        assert PROBLEM_LINE.match(p) or p.startswith("... and "), p


def seed_circuit() -> Circuit:
    """A small circuit that uses every kind of field, for the exhaustive walks below."""
    c = Circuit(name="seed \u00e9", description="every field once", sequences_file=None,
                training=TrainingSettings(clip_norm=1.0, truncation=5, target_loss=0.01),
                trained=TrainingRecord(epochs=12, loss=0.5, held_out_loss=0.75, stopped_because="target"))
    c.add_unit(Unit(name="cue", sign="excitatory", x=-1.5, y=2.0))
    c.add_unit(Unit(name="h.1", activation="tanh", initial_mode="learned", initial_value=0.2))
    c.add_unit(Unit(name="out", activation="linear", bias=-0.5, bias_trains=False, sign="inhibitory"))
    c.connect("cue", "h.1", 0.5, tie="g")
    c.connect("h.1", "h.1", 0.5, tie="g")
    c.connect("out", "out", -1e-3, trains=False)
    c.set_schedule("cue", UnitSchedule(clamp="steps", clamp_steps=[0, 2]))
    c.set_schedule("h.1", UnitSchedule(target="steps", target_steps=[1, 3]))
    c.set_schedule("out", UnitSchedule(target="last", target_last=2))
    c.add_sequence(Sequence(name="a", length=3, clamps={"cue": [1.0, None, 0.0, None]},
                            targets={"h.1": [None, 0.5, None, -0.5], "out": [None, None, 1.0, 2.0]}))
    c.add_sequence(Sequence(name="b", length=1, held_out=True, clamps={"cue": [0.0, None]}))
    return c


SEED = dumps_circuit(seed_circuit()).encode("utf-8")


# ------------------------------------------------------------ truncations
def test_every_truncation_is_refused():
    body = SEED.rstrip()
    kinds = set()
    for cut in range(len(body)):
        exc = refused(body[:cut])
        kinds.add(chr(body[cut - 1]) if cut else "")
        assert exc.problems[0].startswith(("(file): is not valid JSON", "(file): is not UTF-8")), exc.problems
    # the cuts fell after every kind of token: braces, brackets, quotes, digits, letters, colons, commas
    assert {"{", "[", '"', ":", ",", "0", "e", ".", "-", " ", "\n"} <= kinds
    assert b"\xc3" in body  # and inside a two-byte character


@pytest.mark.parametrize("path", EXAMPLES, ids=lambda p: p.name)
def test_truncations_of_an_example_are_refused(path):
    body = path.read_bytes().rstrip()
    for cut in range(0, len(body), max(1, len(body) // 300)):  # about 300 cuts, whatever the size
        refused(body[:cut])


@FUZZ
@given(circuits(values=ANY_FINITE), st.data())
def test_random_truncation_of_generated_document_is_refused(circuit, data):
    body = dumps_circuit(circuit).encode("utf-8").rstrip()
    cut = data.draw(st.integers(0, len(body) - 1))
    refused(body[:cut])  # a cut inside a multi-byte character is caught as well


# ------------------------------------------------------------ byte flips
@FUZZ
@given(circuits(values=ANY_FINITE), st.data())
def test_random_byte_flips_never_escape(circuit, data):
    body = bytearray(dumps_circuit(circuit).encode("utf-8"))
    for _ in range(data.draw(st.integers(1, 4))):
        body[data.draw(st.integers(0, len(body) - 1))] = data.draw(st.integers(0, 255))
    refused_or_loaded(bytes(body))


@settings(FUZZ, max_examples=500)
@given(st.binary(max_size=200))
def test_random_bytes_are_refused(data):
    refused(data)  # 200 random bytes are never a circuit: no format name


# ------------------------------------------------------------ every field
def _walk(node, path=""):
    """(path, parent, key) for every value in a parsed document, scalar list items thinned out."""
    if isinstance(node, dict):
        for key, value in node.items():
            sub = join_path(path, key)
            yield sub, node, key
            yield from _walk(value, sub)
    elif isinstance(node, list):
        scalars = all(not isinstance(v, (dict, list)) for v in node)
        indices = sorted({0, len(node) - 1}) if scalars and node else range(len(node))
        for i in indices:
            yield join_path(path, i), node, i
            yield from _walk(node[i], join_path(path, i))


def _mutations(doc):
    for path, parent, key in _walk(doc):
        for wrong in WRONG_VALUES:
            yield path, parent, key, ("set", wrong)
        if isinstance(parent, dict):
            yield path, parent, key, ("drop", None)
        if isinstance(parent[key], dict):
            yield path, parent, key, ("surplus", None)


def _apply(doc, parent, key, action) -> str:
    """The document's text with one mutation; ``doc`` itself is left as it was."""
    kind, value = action
    old = parent[key]
    order = list(parent) if isinstance(parent, dict) else None
    if kind == "set":
        parent[key] = value
    elif kind == "drop":
        del parent[key]
    else:
        old["surplus"] = 1
    text = json.dumps(doc)
    if kind == "surplus":
        del old["surplus"]
    elif order is not None:  # put the key back in its place, so later paths stay right
        restored = {k: (old if k == key else parent[k]) for k in order}
        parent.clear()
        parent.update(restored)
    else:
        parent[key] = old
    return text


def test_wrong_type_missing_or_surplus_at_every_field_names_that_field():
    doc = json.loads(SEED)
    count = 0
    for path, parent, key, action in list(_mutations(doc)):
        snapshot = json.dumps(doc)
        result = refused_or_loaded(_apply(doc, parent, key, action))
        assert json.dumps(doc) == snapshot
        count += 1
        if isinstance(result, Circuit):
            continue  # e.g. null where null is allowed, 0 for a bias, a dropped field with a default
        shown = join_path(path, "surplus") if action[0] == "surplus" else path
        assert any(p.startswith(shown) for p in result.problems), (path, action, result.problems)
    assert count > 1500


@FUZZ
@given(circuits(values=ANY_FINITE), st.data())
def test_wrong_type_at_a_random_field_of_a_generated_document(circuit, data):
    doc = json.loads(dumps_circuit(circuit))
    path, parent, key = data.draw(st.sampled_from(list(_walk(doc))))
    wrong = data.draw(st.sampled_from(WRONG_VALUES))
    result = refused_or_loaded(_apply(doc, parent, key, ("set", wrong)))
    if isinstance(result, CircuitFileError):
        assert any(p.startswith(path) for p in result.problems), (path, wrong, result.problems)


json_values = st.recursive(
    st.none() | st.booleans() | st.integers() | st.floats() | st.text(max_size=8),
    lambda inner: st.lists(inner, max_size=4) | st.dictionaries(st.text(max_size=6), inner, max_size=4),
    max_leaves=30)


@FUZZ
@given(st.dictionaries(st.sampled_from(["name", "units", "connections", "schedule", "sequences",
                                        "training", "trained", "description", "other"]),
                       json_values, max_size=6))
def test_random_json_under_a_valid_header_never_escapes(body):
    text = json.dumps({"format": "circuitlab-circuit", "version": 1, **body})  # NaN/Infinity too
    refused_or_loaded(text)


csv_cells = st.sampled_from(["sequence", "step", "clamp:a", "target:a", "s", "0", "1", "-1", "x", "",
                             "0.5", "nan", "1e999", '"', "clamp:", "target:zz"])


@settings(FUZZ, max_examples=200, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(sequences_file=st.sampled_from(["seq.csv", "absent.csv", ".", "/dev/null", "a\x00b.csv", "../seq.csv"]),
       rows=st.lists(st.lists(csv_cells, max_size=5), max_size=6), raw=st.binary(max_size=40))
def test_a_bad_sequences_file_never_escapes(tmp_path, sequences_file, rows, raw):
    (tmp_path / "seq.csv").write_bytes("\n".join(",".join(r) for r in rows).encode() + raw)
    path = tmp_path / "c.circuit.json"
    path.write_text(HEADER + '"units": [{"name": "a"}], "schedule": {"a": {"clamp": "every"}}, '
                    f'"sequences_file": {json.dumps(sequences_file)}}}', encoding="utf-8")
    try:
        load_circuit(path)
    except CircuitFileError as exc:
        check_problems(exc)


# ------------------------------------------------------------ named cases
@pytest.mark.parametrize("depth", [100, 5000, 200_000])
@pytest.mark.parametrize("where", ["top", "name", "sequences"])
def test_deep_nesting_is_refused(where, depth):
    nest = "[" * depth + "]" * depth
    text = {"top": nest,
            "name": HEADER + f'"name": {nest}}}',
            "sequences": HEADER + f'"sequences": [{{"name": "s", "length": 1, "clamps": {{"a": {nest}}}}}]}}',
            }[where]
    refused(text)


@pytest.mark.parametrize("literal, reason", [
    ("1e999", "must be a finite number"),
    ("-1e999", "must be a finite number"),
    ("1" + "0" * 400, "is too large"),
    ("NaN", "NaN is not a number JSON allows"),
    ("Infinity", "Infinity is not a number JSON allows"),
    ("-Infinity", "-Infinity is not a number JSON allows"),
    ("nan", "is not valid JSON"),
    ("1" * 5000, "is not valid JSON"),  # past Python's limit on digits
])
def test_huge_and_non_finite_numbers_are_refused(literal, reason):
    # RFC 8259, section 6: NaN and Infinity are not JSON numbers (cited from memory). Python's
    # limit on integer digits is 4300 by default (sys.get_int_max_str_digits, Python 3.11+).
    text = HEADER + '"units": [{"name": "a"}], "connections": [{"source": "a", "target": "a", ' \
        f'"weight": {literal}}}]}}'
    exc = refused(text)
    assert reason in exc.problems[0]
    if "finite" in reason or "large" in reason:
        assert exc.problems[0].startswith("connections[0].weight: ")


@pytest.mark.parametrize("data, reason", [
    (b'{"format": "circuitlab-circuit", "version": 1, "name": "caf\xe9"}', "is not UTF-8 text (byte 59)"),
    (b"\xff\xfe" + '{"format": "circuitlab-circuit"}'.encode("utf-16-le"), "is not UTF-8 text (byte 0)"),
    (b'{"format": "circuitlab-circuit", "version": 1, "name": "\xc3"}', "is not UTF-8 text"),
    (b"", "is not valid JSON"),
    (b"   \n", "is not valid JSON"),
    (b"[]", "must be a JSON object (found an array)"),
    (b'[{"format": "circuitlab-circuit", "version": 1}]', "must be a JSON object (found an array)"),
    (b'"circuit"', "must be a JSON object (found a string)"),
    (b"null", "must be a JSON object (found null)"),
    (b"{}", "format: is required"),
    (b'{"version": 1}', "format: is required"),
    (b'{"format": "circuitlab-circuit"}', "version: is required"),
    (b'{"format": "some-other-tool", "version": 1}', "format: must be 'circuitlab-circuit' (found 'some-other-tool')"),
    (b'{"format": ["circuitlab-circuit"], "version": 1}', "format: must be 'circuitlab-circuit' (found an array)"),
    (b'{"format": "circuitlab-circuit", "version": 2}', "version: is 2, newer than this program reads (1)"),
    (b'{"format": "circuitlab-circuit", "version": 10000000000000000000000}', "version: is 10000000000000000000000, newer"),
    (b'{"format": "circuitlab-circuit", "version": 0}', "version: must be a whole number >= 1 (found 0)"),
    (b'{"format": "circuitlab-circuit", "version": "1"}', "version: must be a whole number >= 1 (found '1')"),
    (b'{"format": "circuitlab-circuit", "version": 1.0}', "version: must be a whole number >= 1 (found 1.0)"),
    (b'{"format": "circuitlab-circuit", "version": true}', "version: must be a whole number >= 1 (found True)"),
    (b'{"format": "circuitlab-circuit", "version": 1, "name": "a", "name": "b"}', "the key 'name' appears twice"),
    (b'{"format": "circuitlab-circuit", "version": 1, "name": "\\ud800"}', "name: holds a lone UTF-16 surrogate"),
    (b'{"format": "circuitlab-circuit", "version": 1, "schedule": {"\\udfff": {}}}', "schedule (a key): holds a lone"),
])
def test_bad_encodings_and_headers_are_refused(data, reason):
    # RFC 8259 (cited from memory): JSON exchanged between systems is UTF-8 (8.1), names in an
    # object should be unique (4); a lone surrogate is no Unicode character (Unicode standard).
    exc = refused(data)
    assert reason in exc.problems[0], exc.problems


def test_a_surrogate_pair_escape_is_fine():
    # RFC 8259, section 7: a character beyond U+FFFF is escaped as a UTF-16 surrogate pair;
    # \ud83d\ude00 is U+1F600 (from memory; Python's json module decodes it the same way).
    c = loads_circuit(HEADER + '"description": "\\ud83d\\ude00"}')
    assert c.description == "\U0001F600"


def test_many_problems_are_capped_with_a_count():
    values = ", ".join(['"x"'] * 300)
    exc = refused(HEADER + f'"sequences": [{{"name": "s", "length": 299, "clamps": {{"a": [{values}]}}}}]}}')
    assert len(exc.problems) == 51
    assert exc.problems[-1] == "... and 250 more problems"
