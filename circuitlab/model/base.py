"""Shared pydantic configuration and field types for the model classes.

The model classes are pydantic models so that one definition serves as the
in-memory model, the file-format validator and the published JSON Schema.
"""

from typing import Annotated

from pydantic import BaseModel, ConfigDict, Field

UNIT_NAME_PATTERN = r"^[A-Za-z_][A-Za-z0-9_.\-]{0,63}$"

UnitName = Annotated[
    str,
    Field(
        pattern=UNIT_NAME_PATTERN,
        description="1-64 characters: letters, digits, '_', '.', '-'; starts with a letter or '_'",
    ),
]


class ModelBase(BaseModel):
    """Strict base: unknown fields are refused and floats must be finite."""

    model_config = ConfigDict(extra="forbid", allow_inf_nan=False, validate_default=True)
