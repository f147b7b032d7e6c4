"""Connections: weighted links that carry a unit's state to another unit one step later."""

from pydantic import Field

from circuitlab.model.base import ModelBase, UnitName


class Connection(ModelBase):
    """``source -> target`` with weight ``weight``, acting with a delay of one step.

    Connections with the same ``tie`` share one parameter during training.
    """

    source: UnitName
    target: UnitName
    weight: float = 0.0
    trains: bool = True
    tie: str | None = Field(default=None, min_length=1, max_length=64)

    @property
    def key(self) -> tuple[str, str]:
        return (self.source, self.target)
