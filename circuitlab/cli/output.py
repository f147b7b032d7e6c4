"""Printing helpers shared by the headless commands: one JSON object, or readable text."""

import json
import sys


def emit_json(obj: dict) -> None:
    """Print one machine-readable JSON object on standard output."""
    json.dump(obj, sys.stdout, indent=2, allow_nan=False, default=str)
    sys.stdout.write("\n")


def error(message: str) -> None:
    print(f"circuitlab: {message}", file=sys.stderr)
