"""Exceptions raised by the model layer, each with a message a user can act on."""


class ModelError(ValueError):
    """An edit that the circuit cannot accept (unknown unit, duplicate name...)."""


class CircuitFileError(ValueError):
    """A circuit file that cannot be read. ``problems`` lists ``"path: reason"`` lines."""

    def __init__(self, source: str, problems: list[str]):
        self.source = source
        self.problems = problems
        lines = "\n".join(f"  {p}" for p in problems)
        super().__init__(f"{source} is not a valid circuit file:\n{lines}")
