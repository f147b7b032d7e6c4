"""Training settings and the record of a finished training run."""

from typing import Literal

from pydantic import Field, NonNegativeFloat, PositiveFloat, PositiveInt

from circuitlab.model.base import ModelBase

Optimizer = Literal["sgd", "adam"]
Loss = Literal["squared", "cross_entropy"]
RateSchedule = Literal["constant", "step"]


class TrainingSettings(ModelBase):
    """Everything that decides how a circuit trains.

    The loss is the mean over target cells of the per-cell loss (squared
    error ``0.5*(y-d)^2`` or cross-entropy), and its gradient is what is
    followed. ``batch_size`` 0 puts all training sequences in one batch.
    ``truncation`` k backpropagates at most k steps (an approximation).
    """

    optimizer: Optimizer = "adam"
    learning_rate: PositiveFloat = 0.01
    momentum: float = Field(default=0.9, ge=0.0, lt=1.0)
    adam_beta1: float = Field(default=0.9, ge=0.0, lt=1.0)
    adam_beta2: float = Field(default=0.999, ge=0.0, lt=1.0)
    adam_epsilon: PositiveFloat = 1e-8
    epochs: PositiveInt = 1000
    batch_size: int = Field(default=0, ge=0)
    loss: Loss = "squared"
    seed: int = Field(default=0, ge=0, le=2**32 - 1)
    clip_norm: PositiveFloat | None = None
    weight_decay: NonNegativeFloat = 0.0
    rate_schedule: RateSchedule = "constant"
    rate_step_every: PositiveInt = 1000
    rate_step_factor: float = Field(default=0.5, gt=0.0, le=1.0)
    truncation: PositiveInt | None = None
    target_loss: NonNegativeFloat | None = None
    init_scale: PositiveFloat = 1.0


class TrainingRecord(ModelBase):
    """What the last training run reached; the trained values live in the units and connections."""

    epochs: int = Field(ge=0)
    loss: float
    held_out_loss: float | None = None
    stopped_because: str = ""
