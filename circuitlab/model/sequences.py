"""Sequences: the data a circuit is run on (clamp values and target values per step)."""

from pydantic import Field

from circuitlab.model.base import ModelBase, UnitName

Values = list[float | None]


class Sequence(ModelBase):
    """One training or held-out sequence of ``length`` steps after the initial step 0.

    ``clamps[u]`` and ``targets[u]`` hold ``length + 1`` entries, one per step
    0..length; ``None`` means no value at that step. Which cells are actually
    clamped or targeted is decided by the schedule (see ``model.schedule``).
    """

    name: str = Field(min_length=1, max_length=128)
    length: int = Field(ge=1, le=100_000)
    held_out: bool = False
    clamps: dict[UnitName, Values] = Field(default_factory=dict)
    targets: dict[UnitName, Values] = Field(default_factory=dict)

    @property
    def steps(self) -> int:
        """Number of stored steps, including step 0."""
        return self.length + 1

    def clamp_value(self, unit: str, step: int) -> float | None:
        row = self.clamps.get(unit)
        return row[step] if row is not None and step < len(row) else None

    def target_value(self, unit: str, step: int) -> float | None:
        row = self.targets.get(unit)
        return row[step] if row is not None and step < len(row) else None

    def set_clamp(self, unit: str, step: int, value: float | None) -> None:
        _set(self.clamps, unit, step, value, self.steps)

    def set_target(self, unit: str, step: int, value: float | None) -> None:
        _set(self.targets, unit, step, value, self.steps)

    def value(self, layer: str, unit: str, step: int) -> float | None:
        """The clamp (``layer="clamp"``) or target (``"target"``) value of a cell, or None."""
        return self.clamp_value(unit, step) if layer == "clamp" else self.target_value(unit, step)

    def set_value(self, layer: str, unit: str, step: int, value: float | None) -> None:
        """Set (or, with None, clear) the clamp or target value of a cell."""
        _set(self.clamps if layer == "clamp" else self.targets, unit, step, value, self.steps)

    def resize(self, length: int) -> None:
        """Change the length, cutting or padding every row with ``None``."""
        self.length = length
        for rows in (self.clamps, self.targets):
            for unit, row in list(rows.items()):
                rows[unit] = (row + [None] * self.steps)[: self.steps]
                if all(v is None for v in rows[unit]):
                    del rows[unit]


def _set(rows: dict[str, Values], unit: str, step: int, value: float | None, steps: int) -> None:
    if not 0 <= step < steps:
        raise IndexError(f"step {step} is outside 0..{steps - 1}")
    row = rows.setdefault(unit, [None] * steps)
    row[step] = value
    if all(v is None for v in row):
        del rows[unit]
