"""Reading and writing circuit files: one versioned JSON document per circuit.

Structure is checked by pydantic against the model classes (the same
definitions produce ``resources/circuit.schema.json``). Loading never runs
code or unpickles; files over ``MAX_FILE_BYTES`` are refused. Saving is
atomic: the new text goes to a temporary file beside the target, is flushed
to disk, then renamed over it, so a failed save leaves the old file intact.
"""

import json
import os
import tempfile
from pathlib import Path

import pydantic

from circuitlab.model.circuit import FORMAT_NAME, FORMAT_VERSION, Circuit
from circuitlab.model.errors import CircuitFileError

MAX_FILE_BYTES = 50 * 1024 * 1024
FILE_SUFFIX = ".circuit.json"
SCHEMA_ID = "https://circuitlab.invalid/schema/circuit-1.json"


def load_circuit(path: str | os.PathLike) -> Circuit:
    """Read a circuit file; raise ``CircuitFileError`` naming each bad field."""
    path = Path(path)
    try:
        size = path.stat().st_size
        if size > MAX_FILE_BYTES:
            raise CircuitFileError(str(path), [
                f"(file): is {size / 1e6:.1f} MB; circuit files are limited to "
                f"{MAX_FILE_BYTES / 1e6:.0f} MB"])
        data = path.read_bytes()
    except OSError as exc:
        raise CircuitFileError(str(path), [f"(file): cannot be read ({exc.strerror or exc})"]) from exc
    return loads_circuit(data, source=str(path))


def loads_circuit(data: str | bytes, source: str = "<text>") -> Circuit:
    """Parse circuit JSON text; raise ``CircuitFileError`` naming each bad field."""
    if len(data) > MAX_FILE_BYTES:
        raise CircuitFileError(source, [f"(file): is over {MAX_FILE_BYTES / 1e6:.0f} MB"])
    if isinstance(data, bytes):
        try:
            data = data.decode("utf-8")
        except UnicodeDecodeError as exc:
            raise CircuitFileError(source, [f"(file): is not UTF-8 text (byte {exc.start})"]) from exc
    try:
        doc = json.loads(data, parse_constant=_refuse_constant)
    except json.JSONDecodeError as exc:
        raise CircuitFileError(source, [
            f"(file): is not valid JSON: {exc.msg} at line {exc.lineno} column {exc.colno}"]) from exc
    except (ValueError, RecursionError) as exc:
        raise CircuitFileError(source, [f"(file): is not valid JSON: {exc}"]) from exc
    _check_header(doc, source)
    try:
        return Circuit.model_validate(doc, strict=False)
    except pydantic.ValidationError as exc:
        raise CircuitFileError(source, [_describe(e) for e in exc.errors()]) from exc
    except RecursionError as exc:  # absurdly deep nesting inside a field
        raise CircuitFileError(source, ["(file): is nested too deeply"]) from exc


def dumps_circuit(circuit: Circuit) -> str:
    """The file text for ``circuit`` (format name and version first)."""
    return json.dumps(circuit.model_dump(mode="json"), indent=1, ensure_ascii=False,
                      allow_nan=False) + "\n"


def save_circuit(circuit: Circuit, path: str | os.PathLike) -> None:
    """Write ``circuit`` to ``path`` atomically (temporary file, fsync, rename)."""
    path = Path(path)
    text = dumps_circuit(circuit).encode("utf-8")
    fd, tmp = tempfile.mkstemp(prefix=f".{path.name}.", suffix=".tmp", dir=path.parent or ".")
    try:
        with os.fdopen(fd, "wb") as fh:
            fh.write(text)
            fh.flush()
            os.fsync(fh.fileno())
        os.replace(tmp, path)
    except BaseException:
        try:
            os.unlink(tmp)
        except FileNotFoundError:
            pass
        raise


def json_schema() -> dict:
    """The JSON Schema of the circuit file format, as published in ``resources/``."""
    schema = Circuit.model_json_schema()
    return {"$schema": "https://json-schema.org/draft/2020-12/schema", "$id": SCHEMA_ID, **schema}


def _refuse_constant(name: str):
    raise ValueError(f"{name} is not a number JSON allows")


def _check_header(doc, source: str) -> None:
    if not isinstance(doc, dict):
        raise CircuitFileError(source, ["(file): must be a JSON object"])
    fmt = doc.get("format")
    if fmt != FORMAT_NAME:
        raise CircuitFileError(source, [f"format: must be '{FORMAT_NAME}' (found {fmt!r})"])
    version = doc.get("version")
    if not isinstance(version, int) or isinstance(version, bool) or version < 1:
        raise CircuitFileError(source, [f"version: must be a whole number >= 1 (found {version!r})"])
    if version > FORMAT_VERSION:
        raise CircuitFileError(source, [
            f"version: is {version}, newer than this program reads ({FORMAT_VERSION}); "
            "update circuitlab to open it"])


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
    "list_type": "must be a list",
    "dict_type": "must be an object",
    "model_type": "must be an object",
    "model_attributes_type": "must be an object",
}


def _describe(error: dict) -> str:
    """``connections[3].weight: must be a finite number`` from a pydantic error."""
    path = ""
    for part in error["loc"]:
        path += f"[{part}]" if isinstance(part, int) else (f".{part}" if path else str(part))
    reason = _REASONS.get(error["type"])
    if reason is None:
        msg = error["msg"]
        if error["type"] == "string_pattern_mismatch":
            msg = "must be a unit name: 1-64 letters, digits, '_', '.' or '-', starting with a letter or '_'"
        elif msg.startswith("Input should be"):
            msg = "must be" + msg[len("Input should be"):]
        elif msg.startswith("Value error, "):
            msg = msg[len("Value error, "):]
        reason = msg[0].lower() + msg[1:] if msg else "is not valid"
    return f"{path or '(file)'}: {reason}"
