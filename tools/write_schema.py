"""Regenerate resources/circuit.schema.json from the model classes.

Run after changing a field of a model class: ``python tools/write_schema.py``.
A test fails while the published file and the code disagree.
"""

import json
from pathlib import Path

from circuitlab.model.fileformat import json_schema

SCHEMA_PATH = Path(__file__).resolve().parent.parent / "resources" / "circuit.schema.json"


def schema_text() -> str:
    """The schema exactly as it is published (sorted keys, two-space indent)."""
    return json.dumps(json_schema(), indent=2, sort_keys=True, ensure_ascii=False) + "\n"


if __name__ == "__main__":
    SCHEMA_PATH.write_text(schema_text(), encoding="utf-8")
    print(f"wrote {SCHEMA_PATH}")
