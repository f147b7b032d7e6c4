"""The run history: one SQLite file (Python's ``sqlite3``) shared by the editor, the CLI and scripts.

Where: ``--db PATH`` / ``db=``, else ``$CIRCUITLAB_RUNS_DB``, else
``runs.sqlite`` in the user's data folder (``$XDG_DATA_HOME/circuitlab`` or
``~/.local/share/circuitlab`` on Linux, ``~/Library/Application Support/circuitlab``
on macOS, ``%APPDATA%\\circuitlab`` on Windows; the editor passes Qt's
``AppDataLocation``).

Several processes may write at once: the file is in WAL mode (readers never
block the writer), every write is one short ``BEGIN IMMEDIATE`` transaction
and a busy database is waited for (``busy_timeout``) instead of failing.
WAL needs the file on a local disk (not a network share); a sweep on a
cluster therefore records from the client process, never from the workers.

Schema: ``schema_version`` holds one integer; ``MIGRATIONS[k]`` takes a
database from version k to k+1, applied in order inside one transaction
when a file is opened. A file written by a newer circuitlab is refused.
Curves are stored as one compressed ``.npz`` blob per run (NumPy arrays,
read with ``allow_pickle=False``); parameters and settings as JSON text.
"""

import io
import json
import os
import sqlite3
import sys
import uuid
from dataclasses import fields
from datetime import datetime, timezone
from pathlib import Path

import numpy as np

from circuitlab.runs.record import CURVE_COLUMNS, RunData

BUSY_TIMEOUT_MS = 30_000


class HistoryError(Exception):
    """The run history cannot be opened, read or written (the message says why)."""


def default_db_path() -> Path:
    """The history file used when no path is given (see the module docstring)."""
    env = os.environ.get("CIRCUITLAB_RUNS_DB")
    if env:
        return Path(env)
    return user_data_dir() / "runs.sqlite"


def user_data_dir() -> Path:
    """The per-user data folder of circuitlab on this platform."""
    if sys.platform == "win32":
        base = Path(os.environ.get("APPDATA") or Path.home() / "AppData" / "Roaming")
    elif sys.platform == "darwin":
        base = Path.home() / "Library" / "Application Support"
    else:
        base = Path(os.environ.get("XDG_DATA_HOME") or Path.home() / ".local" / "share")
    return base / "circuitlab"


_V1 = """
CREATE TABLE runs (
    id INTEGER PRIMARY KEY,
    uid TEXT NOT NULL UNIQUE,
    created TEXT NOT NULL,
    updated TEXT NOT NULL,
    source TEXT NOT NULL,
    file TEXT NOT NULL DEFAULT '',
    circuit_name TEXT NOT NULL,
    circuit_hash TEXT NOT NULL,
    settings TEXT NOT NULL,
    seed INTEGER NOT NULL,
    outcome TEXT NOT NULL,
    stopped_because TEXT NOT NULL DEFAULT '',
    error TEXT NOT NULL DEFAULT '',
    epochs INTEGER NOT NULL DEFAULT 0,
    selected_epoch INTEGER,
    target_epoch INTEGER,
    final_loss REAL,
    final_validation_loss REAL,
    best_validation_loss REAL,
    best_epoch INTEGER,
    test_loss REAL,
    wall_time REAL NOT NULL DEFAULT 0,
    machine TEXT NOT NULL DEFAULT '{}',
    curves BLOB,
    final_parameters TEXT,
    best_parameters TEXT,
    sweep_id INTEGER REFERENCES sweeps(id) ON DELETE SET NULL,
    task_key TEXT NOT NULL DEFAULT '',
    setting TEXT NOT NULL DEFAULT '{}'
);
CREATE INDEX runs_by_circuit ON runs (circuit_hash, circuit_name);
CREATE INDEX runs_by_task ON runs (task_key);
CREATE INDEX runs_by_sweep ON runs (sweep_id);
CREATE TABLE sweeps (
    id INTEGER PRIMARY KEY,
    key TEXT NOT NULL,
    created TEXT NOT NULL,
    updated TEXT NOT NULL,
    file TEXT NOT NULL DEFAULT '',
    circuit_name TEXT NOT NULL,
    circuit_hash TEXT NOT NULL,
    grid TEXT NOT NULL,
    seeds TEXT NOT NULL,
    summary TEXT NOT NULL DEFAULT '[]'
);
CREATE INDEX sweeps_by_key ON sweeps (key);
"""

# MIGRATIONS[k] takes the schema from version k to k + 1 (version 0: an empty file).
MIGRATIONS: list[str] = [_V1]
SCHEMA_VERSION = len(MIGRATIONS)

# columns of ``runs`` that a listing reads (everything but the blobs)
LIST_COLUMNS = ("id", "uid", "created", "source", "file", "circuit_name", "circuit_hash", "seed", "outcome",
                "stopped_because", "error", "epochs", "selected_epoch", "target_epoch", "final_loss",
                "final_validation_loss", "best_validation_loss", "best_epoch", "test_loss", "wall_time",
                "sweep_id", "task_key", "settings", "setting", "machine")
_JSON_COLUMNS = ("settings", "setting", "machine", "final_parameters", "best_parameters")


def _now() -> str:
    return datetime.now(timezone.utc).isoformat(timespec="seconds")


def encode_curves(curves: dict[str, np.ndarray]) -> bytes:
    buffer = io.BytesIO()
    np.savez_compressed(buffer, **{k: np.asarray(curves.get(k, ()), dtype=float) for k in CURVE_COLUMNS})
    return buffer.getvalue()


def decode_curves(blob: bytes | None) -> dict[str, np.ndarray]:
    if not blob:
        return {k: np.zeros(0) for k in CURVE_COLUMNS}
    with np.load(io.BytesIO(blob), allow_pickle=False) as npz:
        return {k: npz[k] if k in npz.files else np.zeros(0) for k in CURVE_COLUMNS}


class RunHistory:
    """One history file. Cheap to create; each call opens a short-lived connection.

    Raises ``HistoryError`` with a plain message when the file cannot be used.
    """

    def __init__(self, path: str | os.PathLike | None = None):
        self.path = Path(path) if path is not None else default_db_path()
        self._ready = False

    # ------------------------------------------------------------ plumbing
    def _connect(self) -> sqlite3.Connection:
        try:
            if not self._ready:
                self.path.parent.mkdir(parents=True, exist_ok=True)
            con = sqlite3.connect(self.path, timeout=BUSY_TIMEOUT_MS / 1000, isolation_level=None)
        except (OSError, sqlite3.Error) as exc:
            raise HistoryError(f"cannot open the run history {self.path}: {exc}") from exc
        try:
            con.execute(f"PRAGMA busy_timeout = {BUSY_TIMEOUT_MS}")
            con.execute("PRAGMA foreign_keys = ON")
            if not self._ready:
                # on a file system that cannot hold WAL SQLite keeps its rollback journal: still safe
                con.execute("PRAGMA journal_mode = WAL")
                self._migrate(con)
                self._ready = True
        except sqlite3.DatabaseError as exc:
            con.close()
            raise HistoryError(f"{self.path} is not a usable run history: {exc}") from exc
        return con

    def _migrate(self, con: sqlite3.Connection) -> None:
        con.execute("BEGIN IMMEDIATE")
        try:
            con.execute("CREATE TABLE IF NOT EXISTS schema_version (version INTEGER NOT NULL)")
            row = con.execute("SELECT version FROM schema_version").fetchone()
            version = row[0] if row else 0
            if version > SCHEMA_VERSION:
                raise HistoryError(f"{self.path} was written by a newer circuitlab (history version "
                                   f"{version}; this one reads up to {SCHEMA_VERSION})")
            for step in MIGRATIONS[version:]:
                for statement in filter(str.strip, step.split(";")):
                    con.execute(statement)
            if row is None:
                con.execute("INSERT INTO schema_version VALUES (?)", (SCHEMA_VERSION,))
            elif version != SCHEMA_VERSION:
                con.execute("UPDATE schema_version SET version = ?", (SCHEMA_VERSION,))
            con.execute("COMMIT")
        except BaseException:
            con.execute("ROLLBACK")
            raise

    def _write(self, sql_calls) -> list:
        """Run ``sql_calls(con)`` in one immediate transaction; return its result."""
        con = self._connect()
        try:
            con.execute("BEGIN IMMEDIATE")
            try:
                result = sql_calls(con)
                con.execute("COMMIT")
            except BaseException:
                con.execute("ROLLBACK")
                raise
            return result
        except sqlite3.Error as exc:
            raise HistoryError(f"cannot write the run history {self.path}: {exc}") from exc
        finally:
            con.close()

    def _read(self, sql: str, params=()) -> list[sqlite3.Row]:
        con = self._connect()
        try:
            con.row_factory = sqlite3.Row
            return con.execute(sql, params).fetchall()
        except sqlite3.Error as exc:
            raise HistoryError(f"cannot read the run history {self.path}: {exc}") from exc
        finally:
            con.close()

    def schema_version(self) -> int:
        return self._read("SELECT version FROM schema_version")[0][0]

    # ----------------------------------------------------------------- runs
    def add_run(self, data: RunData, uid: str | None = None) -> str:
        """Store ``data`` (replacing the run with the same ``uid`` if there is one); return its uid."""
        return self.add_runs([data], [uid])[0]

    def add_runs(self, runs: list[RunData], uids: list[str | None] | None = None) -> list[str]:
        """Store several runs in one transaction (cheap for a batch of sweep results)."""
        uids = [u or uuid.uuid4().hex for u in (uids or [None] * len(runs))]
        now = _now()
        rows = [_row(d, u, now) for d, u in zip(runs, uids)]

        def insert(con):
            for row in rows:
                cols = ", ".join(row)
                marks = ", ".join("?" * len(row))
                updates = ", ".join(f"{c} = excluded.{c}" for c in row if c not in ("uid", "created"))
                con.execute(f"INSERT INTO runs ({cols}) VALUES ({marks}) "
                            f"ON CONFLICT(uid) DO UPDATE SET {updates}", tuple(row.values()))
            return uids
        return self._write(insert)

    def list_runs(self, circuit_name: str | None = None, circuit_hash: str | None = None,
                  sweep_id: int | None = None, limit: int | None = None) -> list[dict]:
        """Runs, newest first, without curves or parameters (matching name, hash and sweep when given)."""
        where, params = [], []
        for col, value in (("circuit_name", circuit_name), ("circuit_hash", circuit_hash),
                           ("sweep_id", sweep_id)):
            if value is not None:
                where.append(f"{col} = ?")
                params.append(value)
        sql = f"SELECT {', '.join(LIST_COLUMNS)} FROM runs"
        if where:
            sql += " WHERE " + " AND ".join(where)
        sql += " ORDER BY id DESC"
        if limit is not None:
            sql += f" LIMIT {int(limit)}"
        return [_decoded(r) for r in self._read(sql, params)]

    def get_run(self, run_id: int | str) -> dict | None:
        """Everything about one run (by id or uid, or a unique uid prefix of at least 6 characters)."""
        if isinstance(run_id, int) or str(run_id).isdigit():
            rows = self._read("SELECT * FROM runs WHERE id = ?", (int(run_id),))
        else:
            rows = self._read("SELECT * FROM runs WHERE uid LIKE ? LIMIT 2", (f"{run_id}%",)) \
                if len(str(run_id)) >= 6 else []
            if len(rows) > 1:
                raise HistoryError(f"'{run_id}' names more than one run; give more of its uid or its id")
        if not rows:
            return None
        out = _decoded(rows[0])
        out["curves"] = decode_curves(rows[0]["curves"])
        return out

    def last_run(self, circuit_name: str, circuit_hash: str) -> dict | None:
        """The newest run of that circuit, with its curves, or None."""
        rows = self._read("SELECT id FROM runs WHERE circuit_name = ? AND circuit_hash = ? "
                          "ORDER BY id DESC LIMIT 1", (circuit_name, circuit_hash))
        return self.get_run(rows[0][0]) if rows else None

    def delete_runs(self, ids: list[int]) -> int:
        """Delete runs by id; returns how many were deleted."""
        ids = [int(i) for i in ids]
        return self._write(lambda con: sum(
            con.execute("DELETE FROM runs WHERE id = ?", (i,)).rowcount for i in ids))

    def count_runs(self) -> int:
        return self._read("SELECT COUNT(*) FROM runs")[0][0]

    def task_keys_done(self, keys: list[str]) -> set[str]:
        """Which of ``keys`` already have a run that did not fail (what ``--resume`` skips)."""
        done: set[str] = set()
        for i in range(0, len(keys), 500):
            chunk = keys[i:i + 500]
            rows = self._read(f"SELECT DISTINCT task_key FROM runs WHERE outcome != 'failed' AND task_key IN "
                              f"({', '.join('?' * len(chunk))})", chunk)
            done.update(r[0] for r in rows)
        return done

    def runs_for_keys(self, keys: list[str]) -> list[dict]:
        """The newest run of each task key (a failed run only where no other exists)."""
        best: dict[str, dict] = {}
        for i in range(0, len(keys), 500):
            chunk = keys[i:i + 500]
            for r in self._read(f"SELECT {', '.join(LIST_COLUMNS)} FROM runs WHERE task_key IN "
                                f"({', '.join('?' * len(chunk))}) ORDER BY id", chunk):
                d = _decoded(r)
                old = best.get(d["task_key"])
                if old is None or d["outcome"] != "failed" or old["outcome"] == "failed":
                    best[d["task_key"]] = d
        return [best[k] for k in keys if k in best]

    # --------------------------------------------------------------- sweeps
    def start_sweep(self, key: str, circuit_name: str, circuit_hash: str, grid: dict, seeds: list[int],
                    file: str = "", resume: bool = False) -> int:
        """A new sweep row (or, with ``resume``, the newest one with this key); returns its id."""
        def start(con):
            if resume:
                row = con.execute("SELECT id FROM sweeps WHERE key = ? ORDER BY id DESC LIMIT 1",
                                  (key,)).fetchone()
                if row:
                    return row[0]
            now = _now()
            cur = con.execute("INSERT INTO sweeps (key, created, updated, file, circuit_name, circuit_hash, "
                              "grid, seeds) VALUES (?, ?, ?, ?, ?, ?, ?, ?)",
                              (key, now, now, file, circuit_name, circuit_hash, json.dumps(grid),
                               json.dumps(seeds)))
            return cur.lastrowid
        return self._write(start)

    def save_sweep_summary(self, sweep_id: int, summary: list[dict]) -> None:
        self._write(lambda con: con.execute("UPDATE sweeps SET summary = ?, updated = ? WHERE id = ?",
                                            (json.dumps(summary, allow_nan=False), _now(), sweep_id)))

    def get_sweep(self, sweep_id: int) -> dict | None:
        rows = self._read("SELECT * FROM sweeps WHERE id = ?", (sweep_id,))
        if not rows:
            return None
        out = dict(rows[0])
        for key in ("grid", "seeds", "summary"):
            out[key] = json.loads(out[key])
        return out


def _row(d: RunData, uid: str, now: str) -> dict:
    row = {f.name: getattr(d, f.name) for f in fields(RunData)}
    row["curves"] = encode_curves(d.curves)
    for key in _JSON_COLUMNS:
        row[key] = None if row[key] is None else json.dumps(row[key], allow_nan=False)
    row.update(uid=uid, created=now, updated=now)
    return row


def _decoded(row: sqlite3.Row) -> dict:
    out = dict(row)
    out.pop("curves", None)
    for key in _JSON_COLUMNS:
        if key in out and out[key] is not None:
            out[key] = json.loads(out[key])
    return out


def run_as_data(row: dict) -> RunData:
    """A stored run (``get_run``) back as ``RunData``."""
    names = {f.name for f in fields(RunData)}
    return RunData(**{k: v for k, v in row.items() if k in names})


__all__ = ["HistoryError", "MIGRATIONS", "RunHistory", "SCHEMA_VERSION", "default_db_path", "run_as_data"]
