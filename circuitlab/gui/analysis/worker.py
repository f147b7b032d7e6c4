"""Running one analysis off the GUI thread (QThreadPool) and handing back its result or its failure."""

import traceback

from PySide6.QtCore import QObject, QRunnable, Signal


class _Signals(QObject):
    done = Signal(object)
    failed = Signal(str)


class AnalysisJob(QRunnable):
    """Calls ``job()`` in a pool thread; emits ``signals.done(result)`` or ``signals.failed(message)``."""

    def __init__(self, job):
        super().__init__()
        self.job = job
        self.signals = _Signals()
        self.setAutoDelete(False)  # the panel keeps it until its signal has been handled

    def run(self) -> None:
        try:
            result = self.job()
        except Exception as exc:  # every failure reaches the user, whatever it is
            detail = str(exc) or type(exc).__name__
            if not hasattr(exc, "problems"):
                detail += "\n\n" + "".join(traceback.format_exception_only(type(exc), exc)).strip()
            self.signals.failed.emit(detail)
        else:
            self.signals.done.emit(result)
