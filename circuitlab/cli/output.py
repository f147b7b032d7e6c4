"""Printing helpers shared by the headless commands: one JSON object, or readable text."""

import json
import os
import sys
from pathlib import Path


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
