"""Run history (SQLite) and parameter sweeps (dask.distributed). No Qt.

``RunHistory`` is the history file, ``RunRecorder`` / ``record_run`` the hook
that records a training run, ``content_hash`` says which runs belong to the
same circuit. Sweeps live in ``circuitlab.runs.sweep`` (imported on demand,
since it needs dask).
"""

from circuitlab.runs.content import canonical_json, content_hash
from circuitlab.runs.history import HistoryError, RunHistory, default_db_path
from circuitlab.runs.record import OUTCOMES, RunData
from circuitlab.runs.recorder import RunRecorder, record_run

__all__ = ["OUTCOMES", "HistoryError", "RunData", "RunHistory", "RunRecorder", "canonical_json",
           "content_hash", "default_db_path", "record_run"]
