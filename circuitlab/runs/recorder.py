"""The one-line hook that the CLI, the API and the editor call to record a run.

Recording never costs the training result: a history that cannot be
written is reported once per recorder (through ``report``) and the caller
carries on.
"""

import os
import sys
import time
from typing import Callable

from circuitlab.model import Circuit
from circuitlab.runs.content import content_hash
from circuitlab.runs.history import HistoryError, RunHistory
from circuitlab.runs.record import RunData, from_trainer


def _to_stderr(message: str) -> None:
    print(f"circuitlab: {message}", file=sys.stderr)


class RunRecorder:
    """Writes runs to a ``RunHistory``; ``enabled=False`` records nothing.

    ``report(message)`` is called once, on the first failure to record
    (default: a line on standard error); later failures are silent.
    """

    def __init__(self, db: str | os.PathLike | RunHistory | None = None, enabled: bool = True,
                 report: Callable[[str], None] | None = None):
        self.enabled = enabled
        self._db = db
        self._history: RunHistory | None = db if isinstance(db, RunHistory) else None
        self.report = report or _to_stderr
        self.failed = False
        self.last_error: str | None = None

    @property
    def history(self) -> RunHistory:
        if self._history is None:
            self._history = RunHistory(self._db)
        return self._history

    def record(self, data: RunData, uid: str | None = None) -> str | None:
        """Store ``data``; the run's uid, or None if recording is off or failed."""
        if not self.enabled:
            return None
        try:
            return self.history.add_run(data, uid)
        except (HistoryError, OSError, ValueError) as exc:
            self._failed(str(exc))
            return None

    def record_trainer(self, trainer, circuit: Circuit, source: str, *, started: float | None = None,
                       interrupted: bool = False, initial_parameters=None, file: str = "",
                       uid: str | None = None) -> str | None:
        """Record a Trainer's run on ``circuit`` (the circuit it was built from)."""
        if not self.enabled:
            return None
        try:
            data = from_trainer(trainer, circuit, source, circuit_hash=content_hash(circuit), started=started,
                                interrupted=interrupted, initial_parameters=initial_parameters,
                                file=os.path.abspath(file) if file else "")
        except Exception as exc:  # never lose the training result to a recording problem
            self._failed(f"cannot summarise the run: {exc}")
            return None
        return self.record(data, uid)

    def _failed(self, message: str) -> None:
        self.last_error = message
        if not self.failed:
            self.failed = True
            self.report(f"the run was not recorded in the run history ({message}); "
                        "the training result itself is unaffected")


def record_run(trainer, circuit: Circuit, source: str, db=None, enabled: bool = True,
               started: float | None = None, interrupted: bool = False, initial_parameters=None,
               file: str = "", report: Callable[[str], None] | None = None) -> str | None:
    """Record one finished Trainer run; returns its uid (None when off or failed, reported once)."""
    return RunRecorder(db, enabled, report).record_trainer(
        trainer, circuit, source, started=started, interrupted=interrupted,
        initial_parameters=initial_parameters, file=file)


def add_record_options(parser) -> None:
    """``--db PATH`` and ``--no-record`` on a command that trains."""
    parser.add_argument("--db", metavar="PATH", help="run history file (default: runs.sqlite in the user's "
                        "data folder, or $CIRCUITLAB_RUNS_DB)")
    parser.add_argument("--no-record", action="store_true", help="do not record this run in the run history")


def now() -> float:
    """The clock that ``started`` is measured on."""
    return time.perf_counter()
