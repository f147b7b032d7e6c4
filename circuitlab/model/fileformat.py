"""Reading and writing circuit files: one versioned JSON document per circuit.

Structure is checked by pydantic against the model classes (the same
definitions produce ``resources/circuit.schema.json``), in strict mode: a
number written as text or ``1`` for ``true`` is refused, not guessed at.
Loading never runs code or unpickles; files over ``MAX_FILE_BYTES`` are
refused. Saving is atomic: the new text goes to a temporary file beside the
target, is flushed to disk, then renamed over it, so a failed save leaves
the old file intact.
"""

import json
import os
import re
import stat
from pathlib import Path

import pydantic

from circuitlab.model.circuit import FORMAT_NAME, FORMAT_VERSION, Circuit
from circuitlab.model.csvdata import (SequenceCsvError, load_sequences_file, save_sequences_file,
                                      sequences_file_path)
from circuitlab.model.atomic import write_atomic
from circuitlab.model.errors import CircuitFileError, ModelError, join_path

MAX_FILE_BYTES = 50 * 1024 * 1024
FILE_SUFFIX = ".circuit.json"
SCHEMA_ID = "https://circuitlab.invalid/schema/circuit-1.json"
MAX_REPORTED_PROBLEMS = 50

_SIZE_LIMIT = f"circuit files are limited to {MAX_FILE_BYTES // (1024 * 1024)} MB"
# A JSON escape of a UTF-16 surrogate; only then can a lone one reach a string.
_SURROGATE_ESCAPE = re.compile(r"\\u[dD][89a-fA-F]")


def load_circuit(path: str | os.PathLike) -> Circuit:
    """Read a circuit file; raise ``CircuitFileError`` naming each bad field."""
    path = Path(path)
    try:
        with open(path, "rb") as fh:
            size = os.fstat(fh.fileno()).st_size
            if size > MAX_FILE_BYTES:
                raise CircuitFileError(str(path), [f"(file): is {size / 2**20:.1f} MB; {_SIZE_LIMIT}"])
            # Read one byte past the limit so a pipe or a growing file is caught too.
            data = fh.read(MAX_FILE_BYTES + 1)
    except OSError as exc:
        raise CircuitFileError(str(path), [f"(file): cannot be read ({exc.strerror or exc})"]) from exc
    circuit = loads_circuit(data, source=str(path))
    if circuit.sequences_file:
        _load_sequences_file(circuit, path)
    return circuit


def _load_sequences_file(circuit: Circuit, path: Path) -> None:
    if circuit.sequences:
        raise CircuitFileError(str(path), ["sequences: must be empty when sequences_file is set"])
    csv_path = sequences_file_path(circuit, path)
    try:
        info = os.stat(csv_path)
    except (OSError, ValueError) as exc:  # ValueError: a NUL character in the name
        raise CircuitFileError(str(path), [
            f"sequences_file: {csv_path} cannot be read ({getattr(exc, 'strerror', None) or exc})"]) from exc
    if not stat.S_ISREG(info.st_mode):  # a device or pipe could be read forever
        raise CircuitFileError(str(path), [f"sequences_file: {csv_path} is not a regular file"])
    if info.st_size > MAX_FILE_BYTES:
        raise CircuitFileError(str(path), [
            f"sequences_file: {csv_path} is {info.st_size / 2**20:.1f} MB; {_SIZE_LIMIT}"])
    try:
        load_sequences_file(circuit, path)
    except SequenceCsvError as exc:
        raise CircuitFileError(str(path), [f"sequences_file: {exc.source} {p}"
                                           for p in exc.problems]) from exc


def loads_circuit(data: str | bytes, source: str = "<text>") -> Circuit:
    """Parse circuit JSON text; raise ``CircuitFileError`` naming each bad field."""
    if len(data) > MAX_FILE_BYTES:
        raise CircuitFileError(source, [f"(file): is over {MAX_FILE_BYTES // 2**20} MB; {_SIZE_LIMIT}"])
    if isinstance(data, bytes):
        try:
            data = data.decode("utf-8-sig")  # a leading byte-order mark is harmless
        except UnicodeDecodeError as exc:
            raise CircuitFileError(source, [f"(file): is not UTF-8 text (byte {exc.start})"]) from exc
    elif not data.isascii():
        try:
            data.encode("utf-8")
        except UnicodeEncodeError as exc:
            raise CircuitFileError(source, [
                f"(file): holds a character that is not valid Unicode (at {exc.start})"]) from exc
    try:
        doc = json.loads(data, parse_constant=_refuse_constant, object_pairs_hook=_unique_keys)
    except json.JSONDecodeError as exc:
        raise CircuitFileError(source, [
            f"(file): is not valid JSON: {exc.msg} at line {exc.lineno} column {exc.colno}"]) from exc
    except RecursionError as exc:
        raise CircuitFileError(source, ["(file): is nested too deeply"]) from exc
    except ValueError as exc:  # NaN/Infinity, duplicate keys, integers of thousands of digits
        raise CircuitFileError(source, [f"(file): is not valid JSON: {exc}"]) from exc
    _check_header(doc, source)
    if _SURROGATE_ESCAPE.search(data):
        bad = _lone_surrogates(doc, "")
        if bad:
            raise CircuitFileError(source, [f"{p}: holds a lone UTF-16 surrogate, which is not "
                                            "valid Unicode text" for p in bad[:MAX_REPORTED_PROBLEMS]])
    try:
        return Circuit.model_validate(doc, strict=True)
    except pydantic.ValidationError as exc:
        problems = [describe_error(e) for e in exc.errors(include_url=False)]
        raise CircuitFileError(source, _capped(problems)) from exc
    except RecursionError as exc:  # absurdly deep nesting inside a field
        raise CircuitFileError(source, ["(file): is nested too deeply"]) from exc


def dumps_circuit(circuit: Circuit) -> str:
    """The file text for ``circuit`` (format name and version first).

    The text is checked as the loader would check it, so a circuit edited in
    memory into something the format cannot hold (an infinite weight, a
    number where text belongs) raises ``ModelError`` naming the field instead
    of producing a file that cannot be opened again.
    """
    doc = circuit.model_dump(mode="json", warnings=False)
    try:
        Circuit.model_validate(doc, strict=True)
    except pydantic.ValidationError as exc:
        problems = _capped([describe_error(e) for e in exc.errors(include_url=False)])
        raise ModelError("the circuit cannot be saved:\n" + "\n".join(f"  {p}" for p in problems)) from exc
    if circuit.sequences_file:  # the sequences live in that CSV file (written by save_circuit)
        doc["sequences"] = []
    return json.dumps(doc, indent=1, ensure_ascii=False, allow_nan=False) + "\n"


def save_circuit(circuit: Circuit, path: str | os.PathLike) -> None:
    """Write ``circuit`` to ``path`` atomically (temporary file, fsync, rename)."""
    text = _utf8(dumps_circuit(circuit))
    if circuit.sequences_file:
        save_sequences_file(circuit, path)
    write_atomic(path, text)


def _utf8(text: str) -> bytes:
    try:
        return text.encode("utf-8")
    except UnicodeEncodeError as exc:  # a lone surrogate put in by a script
        raise ModelError("the circuit cannot be saved: it holds text that is not valid Unicode "
                         f"near {text[max(0, exc.start - 30):exc.start]!r}") from exc


def json_schema() -> dict:
    """The JSON Schema of the circuit file format, as published in ``resources/``."""
    schema = Circuit.model_json_schema()
    return {"$schema": "https://json-schema.org/draft/2020-12/schema", "$id": SCHEMA_ID, **schema}


def _refuse_constant(name: str):
    raise ValueError(f"{name} is not a number JSON allows")


def _unique_keys(pairs: list[tuple[str, object]]) -> dict:
    """Refuse an object that names a key twice (plain JSON parsing keeps the last silently)."""
    out = dict(pairs)
    if len(out) != len(pairs):
        seen: set[str] = set()
        for key, _ in pairs:
            if key in seen:
                raise ValueError(f"the key {key!r} appears twice in one object")
            seen.add(key)
    return out


def _lone_surrogates(node, path: str) -> list[str]:
    """Paths of strings (values or keys) in a parsed document that are not valid Unicode."""
    out: list[str] = []
    stack = [(node, path)]
    while stack:
        node, path = stack.pop()
        if isinstance(node, str):
            if not _is_unicode(node):
                out.append(path or "(file)")
        elif isinstance(node, dict):
            for key, value in node.items():
                if not _is_unicode(key):
                    out.append(f"{path or '(file)'} (a key)")
                    continue
                stack.append((value, join_path(path, key)))
        elif isinstance(node, list):
            stack.extend((v, join_path(path, i)) for i, v in enumerate(node))
    return sorted(out)


def _is_unicode(text: str) -> bool:
    try:
        text.encode("utf-8")
    except UnicodeEncodeError:
        return False
    return True


def _check_header(doc, source: str) -> None:
    if not isinstance(doc, dict):
        raise CircuitFileError(source, [
            f"(file): must be a JSON object (found {_json_kind(doc)})"])
    if "format" not in doc:
        raise CircuitFileError(source, [f"format: is required and must be '{FORMAT_NAME}'; "
                                        "this does not look like a circuit file"])
    fmt = doc["format"]
    if fmt != FORMAT_NAME:
        raise CircuitFileError(source, [f"format: must be '{FORMAT_NAME}' (found {_short(fmt)})"])
    if "version" not in doc:
        raise CircuitFileError(source, ["version: is required (a whole number, 1 for this format)"])
    version = doc["version"]
    if not isinstance(version, int) or isinstance(version, bool) or version < 1:
        raise CircuitFileError(source, [
            f"version: must be a whole number >= 1 (found {_short(version)})"])
    if version > FORMAT_VERSION:
        raise CircuitFileError(source, [
            f"version: is {version}, newer than this program reads ({FORMAT_VERSION}); "
            "update circuitlab to open it"])


def _json_kind(value) -> str:
    names = {list: "an array", str: "a string", bool: "true/false", type(None): "null",
             int: "a number", float: "a number", dict: "an object"}
    return names.get(type(value), type(value).__name__)


def _short(value) -> str:
    """A value for a message: short and never huge (a file may hold anything there)."""
    if isinstance(value, (dict, list)):
        return _json_kind(value)
    text = repr(value) if not isinstance(value, int) or abs(value) < 10**12 else "a huge number"
    return text if len(text) <= 40 else text[:37] + "..."


def _capped(problems: list[str]) -> list[str]:
    if len(problems) <= MAX_REPORTED_PROBLEMS:
        return problems
    rest = len(problems) - MAX_REPORTED_PROBLEMS
    return problems[:MAX_REPORTED_PROBLEMS] + [f"... and {rest} more problems"]


_REASONS = {
    "missing": "is required",
    "extra_forbidden": "is not a field of this format",
    "finite_number": "must be a finite number",
    "float_type": "must be a number",
    "float_parsing": "must be a number",
    "int_type": "must be a whole number",
    "int_parsing": "must be a whole number",
    "int_from_float": "must be a whole number",
    "bool_type": "must be true or false",
    "bool_parsing": "must be true or false",
    "string_type": "must be text",
    "string_unicode": "must be valid Unicode text",
    "list_type": "must be a list",
    "dict_type": "must be an object",
    "model_type": "must be an object",
    "model_attributes_type": "must be an object",
    "none_required": "must be null",
}

_BOUNDS = {
    "greater_than": "must be greater than {gt}",
    "greater_than_equal": "must be {ge} or more",
    "less_than": "must be less than {lt}",
    "less_than_equal": "must be {le} or less",
    "string_too_short": "must have at least {min_length} character{s}",
    "string_too_long": "must have at most {max_length} character{s}",
    "too_short": "must have at least {min_length} entr{ies}",
    "too_long": "must have at most {max_length} entr{ies}",
}


def _plain_number(value):
    """``1`` rather than ``1.0`` in a message; other values as they are."""
    return int(value) if isinstance(value, float) and value.is_integer() else value


def describe_error(error: dict) -> str:
    """``connections[3].weight: must be a finite number`` from one pydantic error dict."""
    path = ""
    for part in error["loc"]:
        path = path + " (a key)" if part == "[key]" else join_path(path, part)
    kind = error["type"]
    value = error.get("input")
    if kind == "float_type" and isinstance(value, int) and not isinstance(value, bool):
        return f"{path or '(file)'}: is too large; numbers here must be finite (within about 1.8e308)"
    reason = _REASONS.get(kind)
    if reason is None and kind in _BOUNDS and error.get("ctx"):
        ctx = {k: _plain_number(v) for k, v in error["ctx"].items()}
        one = ctx.get("min_length", ctx.get("max_length")) == 1
        reason = _BOUNDS[kind].format(**ctx, s="" if one else "s", ies="y" if one else "ies")
    if reason is None:
        msg = error["msg"]
        if kind == "string_pattern_mismatch":
            msg = "must be a unit name: 1-64 letters, digits, '_', '.' or '-', starting with a letter or '_'"
        elif msg.startswith("Input should be"):
            msg = "must be" + msg[len("Input should be"):]
        elif msg.startswith("Value error, "):
            msg = msg[len("Value error, "):]
        reason = msg[0].lower() + msg[1:] if msg else "is not valid"
    return f"{path or '(file)'}: {reason}"
