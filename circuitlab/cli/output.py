"""Printing helpers shared by the headless commands: one JSON object, or readable text."""

import json
import os
import re
import sys
from pathlib import Path

# C0 and C1 control characters other than tab and line breaks: a name holding
# "\x1b[31m" must not recolour (or worse, reprogram) the user's terminal.
# A regular expression scans in C, so the CSV that `run` writes to standard
# output (megabytes) passes through at full speed.
_CONTROL = re.compile("[\x00-\x08\x0b\x0c\x0e-\x1f\x7f-\x9f]")


def printable(text: str) -> str:
    """``text`` with control characters written as Python escapes (``\\x1b``)."""
    return _CONTROL.sub(lambda m: m.group().encode("unicode_escape").decode("ascii"), text)


class EscapingStream:
    """A text stream that writes control characters escaped (see ``printable``)."""

    def __init__(self, stream):
        self._stream = stream

    def write(self, text: str) -> int:
        return self._stream.write(printable(text))

    def __getattr__(self, name):
        return getattr(self._stream, name)


def install_escaping_streams() -> None:
    """Escape control characters on standard output and error for the rest of the command.

    Files the commands write (``--out``, ``--csv``, ``--log``) are not affected.
    """
    for name in ("stdout", "stderr"):
        stream = getattr(sys, name)
        if stream is not None and not isinstance(stream, EscapingStream):
            setattr(sys, name, EscapingStream(stream))


def emit_json(obj: dict) -> None:
    """Print one machine-readable JSON object on standard output."""
    json.dump(obj, sys.stdout, indent=2, allow_nan=False, default=str)
    sys.stdout.write("\n")


def error(message: str) -> None:
    print(f"circuitlab: {message}", file=sys.stderr)


def destination_problem(out: str, inputs: list[str]) -> str | None:
    """Why ``out`` cannot be written (a folder, a missing folder, one of ``inputs``), or None.

    Checked before any work so that a bad destination loses nothing: no input
    is overwritten and no other output is written first.
    """
    path = Path(out)
    for source in inputs:
        if os.path.realpath(source) == os.path.realpath(out):
            return f"{out} is also the input file {source}; give another file to write"
    if path.is_dir():
        return f"cannot write {out}: it is a folder"
    parent = path.parent if str(path.parent) else Path(".")
    if not parent.is_dir():
        return f"cannot write {out}: the folder {parent} does not exist"
    return None
