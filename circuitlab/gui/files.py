"""New, Open, Save, Revert, recent files, autosave and recovery after a crash.

Autosave writes the circuit every minute, while it has unsaved changes, to
the user's application-data folder (``QStandardPaths.AppDataLocation``). Each
running editor holds a lock file beside its autosave; an autosave whose lock
is not held (its editor crashed) is offered for recovery at the next start.
Questions to the user go through the ``ask_*`` and ``choose_*`` methods so a
test can answer them.
"""

import json
import os
import time
import uuid
from pathlib import Path

from PySide6.QtCore import QLockFile, QObject, QSettings, QStandardPaths, QTimer, Signal
from PySide6.QtGui import QAction, QKeySequence
from PySide6.QtWidgets import QFileDialog, QMenu, QMessageBox

from circuitlab.model import Circuit, CircuitFileError, load_circuit, save_circuit

AUTOSAVE_INTERVAL_MS = 60_000
MAX_RECENT = 10
RECENT_KEY = "files/recent"
FILE_FILTER = "Circuit files (*.circuit.json *.json);;All files (*)"


def default_autosave_dir() -> Path:
    return Path(QStandardPaths.writableLocation(QStandardPaths.AppDataLocation)) / "autosave"


class FileController(QObject):
    """The window's file commands; owns the autosave timer and this session's lock."""

    # emitted (direct) before unsaved changes are judged: a live training run makes itself an undo step
    settle_requested = Signal()

    def __init__(self, window, autosave_dir: str | os.PathLike | None = None):
        super().__init__(window)
        self.window = window
        self.document = window.document
        self.autosave_dir = Path(autosave_dir) if autosave_dir else default_autosave_dir()
        self.session = f"session-{uuid.uuid4().hex[:12]}"
        self._lock: QLockFile | None = None
        self.error_box: QMessageBox | None = None
        self.timer = QTimer(self)
        self.timer.setInterval(AUTOSAVE_INTERVAL_MS)
        self.timer.timeout.connect(self.autosave_now)
        self.timer.start()
        self.actions = self._make_actions()
        self.recent_menu = QMenu("Open Recent", window)
        self.recent_menu.aboutToShow.connect(self._fill_recent_menu)

    # ----------------------------------------------------------- paths
    @property
    def autosave_path(self) -> Path:
        return self.autosave_dir / f"{self.session}.circuit.json"

    def _meta_path(self, session: str) -> Path:
        return self.autosave_dir / f"{session}.meta.json"

    def _lock_path(self, session: str) -> Path:
        return self.autosave_dir / f"{session}.lock"

    # --------------------------------------------------------- actions
    def _make_actions(self) -> dict[str, QAction]:
        acts = {}
        for key, text, slot, shortcut in (
                ("new", "New", self.new, QKeySequence.New),
                ("open", "Open…", self.open_dialog, QKeySequence.Open),
                ("save", "Save", self.save, QKeySequence.Save),
                ("save_as", "Save As…", self.save_as, QKeySequence.SaveAs),
                ("revert", "Revert to Saved", self.revert, None)):
            a = QAction(text, self.window)
            if shortcut is not None:
                a.setShortcut(QKeySequence(shortcut))
            a.triggered.connect(lambda _=False, s=slot: s())
            acts[key] = a
        return acts

    def new(self) -> bool:
        if not self.maybe_save():
            return False
        self.document.replace(Circuit(), None)
        return True

    def open_dialog(self) -> bool:
        if not self.maybe_save():
            return False
        path = self.choose_open_path()
        return bool(path) and self.open_path(path, ask=False)

    def read_circuit(self, path: str | Path, title: str) -> Circuit | None:
        """The circuit in ``path``, or None after showing the validator's message under ``title``."""
        try:
            return load_circuit(path)
        except CircuitFileError as exc:
            self.show_error(title, str(exc))
            return None

    def open_path(self, path: str, ask: bool = True) -> bool:
        """Load ``path``; on a bad file show the validator's message and keep the current document."""
        if ask and not self.maybe_save():
            return False
        circuit = self.read_circuit(path, "The file cannot be opened")
        if circuit is None:
            return False
        self.document.replace(circuit, str(Path(path).resolve()))
        self._remember(self.document.path)
        return True

    def save(self) -> bool:
        if self.document.path is None:
            return self.save_as()
        return self._write(self.document.path)

    def save_as(self) -> bool:
        path = self.choose_save_path()
        if not path:
            return False
        if not path.endswith(".json"):
            path += ".circuit.json"
        return self._write(path)

    def _write(self, path: str) -> bool:
        try:
            save_circuit(self.document.circuit, path)
        except OSError as exc:
            self.show_error("The circuit was not saved", f"{path}: {exc.strerror or exc}")
            return False
        self.document.mark_saved(str(Path(path).resolve()))
        self._remember(self.document.path)
        self._remove_autosave()
        self.window.show_message(f"Saved {path}")
        return True

    def revert(self) -> bool:
        path = self.document.path
        if path is None or not self.document.is_modified:
            return False
        if self.ask_revert() and self.open_path(path, ask=False):
            self.window.show_message(f"Reverted to the saved {Path(path).name}")
            return True
        return False

    def maybe_save(self) -> bool:
        """Ask about unsaved changes; False means the user cancelled."""
        self.settle_requested.emit()
        if not self.document.is_modified:
            return True
        answer = self.ask_save_changes()
        if answer == "save":
            return self.save()
        return answer == "discard"

    # ---------------------------------------------------------- recent
    def recent_files(self) -> list[str]:
        value = QSettings().value(RECENT_KEY, [])
        if isinstance(value, str):
            value = [value]
        return [p for p in (value or []) if p]

    def _remember(self, path: str) -> None:
        files = [path] + [p for p in self.recent_files() if p != path]
        QSettings().setValue(RECENT_KEY, files[:MAX_RECENT])

    def _fill_recent_menu(self) -> None:
        self.recent_menu.clear()
        files = self.recent_files()
        for p in files:
            a = self.recent_menu.addAction(Path(p).name, lambda p=p: self.open_path(p))
            a.setStatusTip(p)
            a.setEnabled(Path(p).exists())
        if not files:
            self.recent_menu.addAction("(no recent files)").setEnabled(False)
        else:
            self.recent_menu.addSeparator()
            self.recent_menu.addAction("Clear List", lambda: QSettings().setValue(RECENT_KEY, []))

    # -------------------------------------------------------- autosave
    def autosave_now(self) -> bool:
        """Write the unsaved circuit beside this session's lock; True if something was written."""
        if not self.document.is_modified:
            return False
        self.autosave_dir.mkdir(parents=True, exist_ok=True)
        if self._lock is None:
            lock = QLockFile(str(self._lock_path(self.session)))
            lock.setStaleLockTime(0)  # held as long as the editor runs; stale only if its process died
            if not lock.tryLock(0):
                return False
            self._lock = lock
        try:
            save_circuit(self.document.circuit, self.autosave_path)
            self._meta_path(self.session).write_text(json.dumps(
                {"path": self.document.path, "saved_at": time.time()}), encoding="utf-8")
        except OSError as exc:
            self.window.show_message(f"Autosave failed: {exc.strerror or exc}")
            return False
        return True

    def _remove_autosave(self) -> None:
        for p in (self.autosave_path, self._meta_path(self.session)):
            p.unlink(missing_ok=True)

    def shutdown(self) -> None:
        """A clean exit: nothing is left to recover."""
        self.timer.stop()
        self._remove_autosave()
        if self._lock is not None:
            self._lock.unlock()
            self._lock = None

    def orphaned_autosaves(self) -> list[tuple[str, dict]]:
        """Autosaves of editors that did not close properly, newest first."""
        found = []
        if not self.autosave_dir.is_dir():
            return found
        for meta in self.autosave_dir.glob("session-*.meta.json"):
            session = meta.name[: -len(".meta.json")]
            if session == self.session:
                continue
            probe = QLockFile(str(self._lock_path(session)))
            probe.setStaleLockTime(0)
            if not probe.tryLock(0):
                continue  # another editor is running with it
            probe.unlock()
            try:
                info = json.loads(meta.read_text(encoding="utf-8"))
            except (OSError, ValueError):
                info = {}
            found.append((session, info))
        found.sort(key=lambda s: -float(s[1].get("saved_at", 0)))
        return found

    def offer_recovery(self) -> bool:
        """Offer the newest orphaned autosave; True if it was loaded."""
        orphans = self.orphaned_autosaves()
        if not orphans:
            return False
        session, info = orphans[0]
        data = self.autosave_dir / f"{session}.circuit.json"
        recovered = False
        if self.ask_recover(info.get("path"), float(info.get("saved_at", 0))):
            try:
                circuit = load_circuit(data)
            except CircuitFileError as exc:
                self.show_error("The autosaved circuit cannot be recovered", str(exc))
            else:
                self.document.replace(circuit, info.get("path"))
                self.document.undo_stack.resetClean()  # recovered changes are not saved anywhere yet
                recovered = True
        for p in (data, self._meta_path(session), self._lock_path(session)):
            p.unlink(missing_ok=True)
        return recovered

    # -------------------------------------------------------- dialogs
    def ask_save_changes(self) -> str:
        """'save', 'discard' or 'cancel'."""
        name = Path(self.document.path).name if self.document.path else "the untitled circuit"
        box = QMessageBox(QMessageBox.Warning, "Unsaved changes", f"Save the changes to {name}?",
                          QMessageBox.Save | QMessageBox.Discard | QMessageBox.Cancel, self.window)
        box.setDefaultButton(QMessageBox.Save)
        return {QMessageBox.Save: "save", QMessageBox.Discard: "discard"}.get(box.exec(), "cancel")

    def ask_revert(self) -> bool:
        return QMessageBox.question(self.window, "Revert to saved",
                                    "Throw away every change since the last save?") == QMessageBox.Yes

    def ask_recover(self, path: str | None, saved_at: float) -> bool:
        name = Path(path).name if path else "an untitled circuit"
        when = time.strftime("%Y-%m-%d %H:%M", time.localtime(saved_at)) if saved_at else "an unknown time"
        return QMessageBox.question(
            self.window, "Recover unsaved work",
            f"The editor did not close properly last time. Recover the changes to {name} "
            f"autosaved at {when}?") == QMessageBox.Yes

    def choose_open_path(self) -> str | None:
        path, _ = QFileDialog.getOpenFileName(self.window, "Open circuit", self._start_dir(), FILE_FILTER)
        return path or None

    def choose_save_path(self) -> str | None:
        path, _ = QFileDialog.getSaveFileName(self.window, "Save circuit as", self._start_dir(), FILE_FILTER)
        return path or None

    def _start_dir(self) -> str:
        if self.document.path:
            return str(Path(self.document.path).parent)
        recent = self.recent_files()
        return str(Path(recent[0]).parent) if recent else str(Path.home())

    def show_error(self, title: str, text: str) -> None:
        """A window-modal message that does not block (so scripts and tests can continue)."""
        first, _, rest = text.partition("\n")
        box = QMessageBox(QMessageBox.Critical, title, first, QMessageBox.Ok, self.window)
        if rest:
            box.setInformativeText(rest.strip())
        self.error_box = box
        box.open()
