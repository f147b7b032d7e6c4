"""The schedule: which cells (unit, step) are clamped to data and which carry targets.

The engine's compiled masks and the editor's grid both come from
``clamp_mask`` and ``target_mask`` here, so they cannot disagree.
"""

from typing import Literal

from pydantic import Field, NonNegativeInt, PositiveInt

from circuitlab.model.base import ModelBase
from circuitlab.model.sequences import Sequence
from circuitlab.model.units import Unit

ClampMode = Literal["none", "initial", "every", "steps", "given"]
CLAMP_MODES: tuple[str, ...] = ("none", "initial", "every", "steps", "given")
TargetMode = Literal["none", "final", "last", "every", "steps", "given"]
TARGET_MODES: tuple[str, ...] = ("none", "final", "last", "every", "steps", "given")


class UnitSchedule(ModelBase):
    """How one unit is fed and judged over time.

    clamp: ``none``; ``initial`` (step 0 only); ``every`` step 0..T; ``steps``
    (the steps in ``clamp_steps``); ``given`` (wherever the sequence has a value).
    target: ``none``; ``final`` step T; ``last`` (the last ``target_last``
    steps); ``every`` step 1..T; ``steps`` (``target_steps``); ``given``.
    Listed steps past a sequence's end do not exist in that sequence and are
    ignored there.
    """

    clamp: ClampMode = "none"
    clamp_steps: list[NonNegativeInt] = Field(default_factory=list)
    target: TargetMode = "none"
    target_steps: list[PositiveInt] = Field(default_factory=list)
    target_last: PositiveInt = 1

    def is_default(self) -> bool:
        return self == UnitSchedule()


def clamp_mask(unit: Unit, schedule: UnitSchedule, sequence: Sequence) -> list[bool]:
    """For steps 0..T: is ``unit`` clamped to the sequence's data at that step?

    A unit whose initial mode is ``clamped`` is clamped at step 0 whatever its
    clamp mode.
    """
    steps = sequence.steps
    mode = schedule.clamp
    if mode == "none":
        mask = [False] * steps
    elif mode == "initial":
        mask = [t == 0 for t in range(steps)]
    elif mode == "every":
        mask = [True] * steps
    elif mode == "steps":
        chosen = set(schedule.clamp_steps)
        mask = [t in chosen for t in range(steps)]
    else:  # given
        mask = [sequence.clamp_value(unit.name, t) is not None for t in range(steps)]
    if unit.initial_mode == "clamped":
        mask[0] = True
    return mask


def target_mask(unit: Unit, schedule: UnitSchedule, sequence: Sequence) -> list[bool]:
    """For steps 0..T: does ``unit`` carry a target at that step? Step 0 never does."""
    steps = sequence.steps
    last = sequence.length
    mode = schedule.target
    if mode == "none":
        mask = [False] * steps
    elif mode == "final":
        mask = [t == last for t in range(steps)]
    elif mode == "last":
        mask = [t > last - schedule.target_last for t in range(steps)]
    elif mode == "every":
        mask = [True] * steps
    elif mode == "steps":
        chosen = set(schedule.target_steps)
        mask = [t in chosen for t in range(steps)]
    else:  # given
        mask = [sequence.target_value(unit.name, t) is not None for t in range(steps)]
    mask[0] = False
    return mask


def schedule_covers_step0(schedule: UnitSchedule) -> bool:
    """Does the clamp mode itself (ignoring the unit's initial mode) include step 0?"""
    return schedule.clamp in ("initial", "every") or (
        schedule.clamp == "steps" and 0 in schedule.clamp_steps
    )


def with_clamp_preset(unit: Unit, schedule: UnitSchedule, mode: str,
                      steps: list[int] | None = None) -> tuple[UnitSchedule, str]:
    """The unit's schedule and initial mode after choosing clamp ``mode``.

    Only the schedule changes, never the stored values: clamping at steps
    without a value leaves them for validation to report. The initial mode
    follows step 0, so the preset means what it says: a preset that clamps
    step 0 makes the initial state come from data (``clamped``); one that
    does not turns a ``clamped`` initial state back to ``fixed`` (a learned
    one stays learned).
    """
    new = schedule.model_copy(update={"clamp": mode,
                                      "clamp_steps": sorted(set(steps or [])) if mode == "steps" else []})
    initial = unit.initial_mode
    if schedule_covers_step0(new):
        initial = "clamped"
    elif initial == "clamped":
        initial = "fixed"
    return new, initial


def with_target_preset(schedule: UnitSchedule, mode: str, steps: list[int] | None = None,
                       last: int = 1) -> UnitSchedule:
    """The unit's schedule after choosing target ``mode`` (stored values are kept)."""
    return schedule.model_copy(update={
        "target": mode,
        "target_steps": sorted({t for t in steps or [] if t >= 1}) if mode == "steps" else [],
        "target_last": last if mode == "last" else 1})
