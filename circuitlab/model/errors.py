"""Exceptions raised by the model layer, each with a message a user can act on."""

import json
import re

_PLAIN_KEY = re.compile(r"[A-Za-z0-9_\-]+")


def join_path(path: str, key: str | int) -> str:
    """The field path ``path`` extended by a list index or an object key.

    ``units[2]``, ``schedule.cue``; a key that would be ambiguous or unreadable
    there (a dot, a space, a line break) is quoted: ``schedule["layer.1"]``.
    """
    if isinstance(key, int):
        return f"{path}[{key}]"
    if _PLAIN_KEY.fullmatch(key):
        return f"{path}.{key}" if path else key
    return f"{path}[{json.dumps(key)}]"


class ModelError(ValueError):
    """An edit that the circuit cannot accept (unknown unit, duplicate name...)."""


class ProblemsError(ValueError):
    """An input that cannot be read, with every problem found in it (one per line of the message)."""

    def __init__(self, source: str, problems: list, verdict: str):
        self.source = source
        self.problems = problems
        lines = "\n".join(f"  {p}" for p in problems)
        super().__init__(f"{source} {verdict}:\n{lines}")


class CircuitFileError(ProblemsError):
    """A circuit file that cannot be read. ``problems`` lists ``"path: reason"`` lines."""

    def __init__(self, source: str, problems: list[str]):
        super().__init__(source, problems, "is not a valid circuit file")
