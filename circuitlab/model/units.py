"""Units: the nodes of a circuit."""

from typing import Literal

from pydantic import Field

from circuitlab.model.base import ModelBase, UnitName

Activation = Literal["logistic", "tanh", "linear", "relu"]
ACTIVATIONS: tuple[str, ...] = ("logistic", "tanh", "linear", "relu")

InitialMode = Literal["fixed", "learned", "clamped"]
INITIAL_MODES: tuple[str, ...] = ("fixed", "learned", "clamped")

Sign = Literal["excitatory", "inhibitory"]


class Unit(ModelBase):
    """One unit. Its outgoing connections all act with a delay of one step.

    ``initial_mode`` says where the state at step 0 comes from: a fixed value,
    a learned parameter shared by all sequences (its current value is
    ``initial_value``), or the sequence data (clamped at step 0).
    ``sign`` constrains every outgoing weight to be >= 0 (excitatory) or
    <= 0 (inhibitory).
    """

    name: UnitName
    activation: Activation = "logistic"
    bias: float = 0.0
    bias_trains: bool = True
    initial_mode: InitialMode = "fixed"
    initial_value: float | None = Field(
        default=None, description="null means the default: 0.5 for logistic units, 0 otherwise"
    )
    sign: Sign | None = None
    x: float = 0.0
    y: float = 0.0

    def initial_state(self) -> float:
        """The state at step 0 when it is not clamped to data."""
        if self.initial_value is not None:
            return self.initial_value
        return default_initial_state(self.activation)


def default_initial_state(activation: str) -> float:
    """0.5 for a logistic unit (the middle of its range), 0 for the others."""
    return 0.5 if activation == "logistic" else 0.0
