"""Sequences as CSV: the long layout, one row per sequence and step.

The layout (documented in README.md, "Sequences and the CSV layout")::

    sequence,step,held_out,clamp:sensor,target:echo
    stream1,0,,1,
    stream1,1,,0,
    stream1,2,,1,1

- ``sequence``: the sequence name; ``step``: 0..length (0 is the initial
  state). Every sequence needs exactly one row for each of its steps 0..T;
  rows may come in any order.
- ``held_out`` (optional): ``1`` marks a held-out (testing) sequence, empty
  or ``0`` a training one; the same on every row of a sequence.
- ``clamp:UNIT`` holds the values the unit is clamped to, ``target:UNIT``
  its targets. An empty cell means no value at that step.

Reading is strict: any problem (unknown unit, non-numeric value, missing or
duplicate step...) raises ``SequenceCsvError`` listing every problem with its
line and column, and nothing is returned. Writing uses the shortest text that
reads back to the same float, so a round trip is exact.
"""

import csv
import io
import math
import os
import re
from dataclasses import dataclass
from pathlib import Path
from typing import Iterable

from circuitlab.model.atomic import write_atomic
from circuitlab.model.base import UNIT_NAME_PATTERN
from circuitlab.model.errors import ProblemsError
from circuitlab.model.sequences import Sequence

SEQUENCE_COLUMN = "sequence"
STEP_COLUMN = "step"
HELD_OUT_COLUMN = "held_out"
CLAMP_PREFIX = "clamp:"
TARGET_PREFIX = "target:"
MAX_LENGTH = 100_000
MAX_REPORTED = 25

_UNIT_RE = re.compile(UNIT_NAME_PATTERN)


@dataclass(frozen=True)
class CsvProblem:
    """One problem of a CSV file: 1-based line and column (0 when it concerns the whole file)."""

    line: int
    column: int
    message: str

    def __str__(self) -> str:
        if self.line == 0:
            return self.message
        where = f"line {self.line}" + (f", column {self.column}" if self.column else "")
        return f"{where}: {self.message}"


class SequenceCsvError(ProblemsError):
    """A sequence CSV that cannot be read; ``problems`` lists each with line and column."""

    def __init__(self, source: str, problems: list[CsvProblem]):
        super().__init__(source, problems, "cannot be imported (nothing was imported)")


def write_csv(sequences: Iterable[Sequence], clamp_units: Iterable[str] = (),
              target_units: Iterable[str] = ()) -> str:
    """The CSV text for ``sequences``.

    There is one ``clamp:`` column for each unit in ``clamp_units`` (in that
    order) and one more for any other unit with clamp values; likewise for
    targets. Passing the circuit's clamped and targeted units gives their
    columns even where no value is stored yet, so the file is a template.
    """
    sequences = list(sequences)
    clamp_cols = _ordered(clamp_units, (u for s in sequences for u in s.clamps))
    target_cols = _ordered(target_units, (u for s in sequences for u in s.targets))
    held = any(s.held_out for s in sequences)
    out = io.StringIO()
    w = csv.writer(out, lineterminator="\n")
    w.writerow([SEQUENCE_COLUMN, STEP_COLUMN] + ([HELD_OUT_COLUMN] if held else [])
               + [CLAMP_PREFIX + u for u in clamp_cols] + [TARGET_PREFIX + u for u in target_cols])
    for s in sequences:
        for t in range(s.steps):
            row = [s.name, str(t)] + (["1" if s.held_out else ""] if held else [])
            row += [_text(s.clamp_value(u, t)) for u in clamp_cols]
            row += [_text(s.target_value(u, t)) for u in target_cols]
            w.writerow(row)
    return out.getvalue()


def read_csv(text: str, unit_names: Iterable[str] | None = None,
             source: str = "<csv>") -> list[Sequence]:
    """Parse the long layout into sequences (in order of first appearance).

    With ``unit_names`` given, a column naming any other unit is an error.
    Raises ``SequenceCsvError`` with every problem found; returns nothing partial.
    """
    problems: list[CsvProblem] = []
    known = set(unit_names) if unit_names is not None else None
    if text.startswith("\ufeff"):  # spreadsheets often write a byte-order mark
        text = text[1:]
    reader = csv.reader(io.StringIO(text, newline=""), strict=True)
    try:
        header = next(reader, None)
    except csv.Error as exc:
        raise SequenceCsvError(source, [CsvProblem(1, 0, f"is not valid CSV: {exc}")]) from exc
    if header is None or not any(h.strip() for h in header):
        raise SequenceCsvError(source, [CsvProblem(1, 0, "the file is empty; the first line must be "
                                                         "the header 'sequence,step,...'")])
    header = [h.strip() for h in header]
    columns = _parse_header(header, known, problems)
    rows: dict[str, dict[int, tuple[int, list[str]]]] = {}
    order: list[str] = []
    first_line: dict[str, int] = {}
    broken: set[str] = set()  # sequences with a bad row: not checked further
    line = reader.line_num + 1
    try:
        for fields in reader:
            line, start = reader.line_num + 1, line
            if not any(f.strip() for f in fields):
                continue  # blank line
            name = fields[0].strip()
            if len(fields) != len(header):
                problems.append(CsvProblem(start, min(len(fields), len(header)) + 1,
                                           f"has {len(fields)} fields but the header has {len(header)}"))
                broken.add(name)
                continue
            if columns is None:
                continue  # the header is wrong (maybe one column): rows cannot be read against it
            if not name:
                problems.append(CsvProblem(start, 1, "the sequence name is empty"))
                continue
            if len(name) > 128:
                problems.append(CsvProblem(start, 1, "the sequence name is longer than 128 characters"))
                continue
            step = _parse_step(fields[1], start, problems)
            if step is None:
                broken.add(name)
                continue
            seq_rows = rows.setdefault(name, {})
            if name not in first_line:
                order.append(name)
                first_line[name] = line
            if step in seq_rows:
                problems.append(CsvProblem(start, 2, f"sequence '{name}' step {step} appears twice "
                                                    f"(first on line {seq_rows[step][0]})"))
                continue
            seq_rows[step] = (start, fields)
    except csv.Error as exc:
        problems.append(CsvProblem(line, 0, f"is not valid CSV: {exc}"))
    if columns is None:
        raise SequenceCsvError(source, problems[:MAX_REPORTED])
    sequences = []
    for name in (n for n in order if n not in broken):
        seq = _build_sequence(name, rows[name], columns, problems)
        if seq is not None:
            sequences.append(seq)
        if len(problems) >= MAX_REPORTED:
            break
    if not sequences and not problems:
        problems.append(CsvProblem(0, 0, "the file has a header but no rows"))
    if problems:
        raise SequenceCsvError(source, sorted(problems, key=lambda p: (p.line, p.column))[:MAX_REPORTED])
    return sequences


def read_csv_file(path: str | os.PathLike, unit_names: Iterable[str] | None = None) -> list[Sequence]:
    """``read_csv`` on a UTF-8 file; unreadable files raise ``SequenceCsvError`` too."""
    path = Path(path)
    try:
        data = path.read_bytes()
    except OSError as exc:
        raise SequenceCsvError(str(path), [CsvProblem(0, 0, f"cannot be read ({exc.strerror or exc})")]) from exc
    try:
        text = data.decode("utf-8")
    except UnicodeDecodeError as exc:
        line = data[: exc.start].count(b"\n") + 1
        raise SequenceCsvError(str(path), [CsvProblem(line, 0, "is not UTF-8 text")]) from exc
    return read_csv(text, unit_names, source=str(path))


def write_csv_file(path: str | os.PathLike, text: str) -> None:
    """Write CSV text atomically (temporary file beside it, fsync, rename)."""
    write_atomic(path, text.encode("utf-8"))


def circuit_csv(circuit) -> str:
    """The CSV text of a circuit's sequences, with a column for every clamped or targeted unit."""
    clamp_units, target_units = [], []
    for u in circuit.units:
        sched = circuit.schedule_for(u.name)
        if sched.clamp != "none" or u.initial_mode == "clamped":
            clamp_units.append(u.name)
        if sched.target != "none":
            target_units.append(u.name)
    return write_csv(circuit.sequences, clamp_units, target_units)


def sequences_file_path(circuit, circuit_path: str | os.PathLike) -> Path:
    """Where a circuit's ``sequences_file`` lives: relative to the circuit file."""
    return Path(circuit_path).parent / circuit.sequences_file


def load_sequences_file(circuit, circuit_path: str | os.PathLike) -> None:
    """Read the circuit's sequences from its ``sequences_file`` (replacing ``circuit.sequences``)."""
    circuit.sequences = read_csv_file(sequences_file_path(circuit, circuit_path), circuit.unit_names())


def save_sequences_file(circuit, circuit_path: str | os.PathLike) -> None:
    """Write the circuit's sequences to its ``sequences_file`` atomically."""
    write_csv_file(sequences_file_path(circuit, circuit_path), circuit_csv(circuit))


# ----------------------------------------------------------------- internals
@dataclass(frozen=True)
class _Column:
    index: int
    layer: str  # "clamp", "target" or "held_out"
    unit: str = ""


def _parse_header(header: list[str], known: set[str] | None,
                  problems: list[CsvProblem]) -> list[_Column] | None:
    ok = True
    if len(header) < 2 or header[0] != SEQUENCE_COLUMN or header[1] != STEP_COLUMN:
        problems.append(CsvProblem(1, 1 if not header or header[0] != SEQUENCE_COLUMN else 2,
                                   "the header must start with 'sequence,step'"))
        ok = False
    columns: list[_Column] = []
    seen: dict[str, int] = {}
    for i, h in enumerate(header[2:], start=2):
        col = i + 1
        if h in seen:
            problems.append(CsvProblem(1, col, f"column '{h}' appears twice (first as column {seen[h]})"))
            ok = False
            continue
        seen[h] = col
        if h == HELD_OUT_COLUMN:
            columns.append(_Column(i, "held_out"))
            continue
        for prefix, layer in ((CLAMP_PREFIX, "clamp"), (TARGET_PREFIX, "target")):
            if h.startswith(prefix):
                unit = h[len(prefix):]
                if not _UNIT_RE.match(unit):
                    problems.append(CsvProblem(1, col, f"'{unit}' in column '{h}' is not a valid unit name"))
                    ok = False
                elif known is not None and unit not in known:
                    problems.append(CsvProblem(1, col, f"column '{h}': the circuit has no unit named '{unit}'"))
                    ok = False
                else:
                    columns.append(_Column(i, layer, unit))
                break
        else:
            problems.append(CsvProblem(1, col, f"column '{h}' is not understood; columns after "
                                               "'sequence,step' are 'held_out', 'clamp:UNIT' or 'target:UNIT'"))
            ok = False
    return columns if ok else None


def _parse_step(text: str, line: int, problems: list[CsvProblem]) -> int | None:
    text = text.strip()
    try:
        step = int(text)
    except ValueError:
        problems.append(CsvProblem(line, 2, f"step '{text}' is not a whole number" if text
                                   else "the step is empty"))
        return None
    if not 0 <= step <= MAX_LENGTH:
        problems.append(CsvProblem(line, 2, f"step {step} is outside 0..{MAX_LENGTH}"))
        return None
    return step


def _build_sequence(name: str, rows: dict[int, tuple[int, list[str]]], columns: list[_Column],
                    problems: list[CsvProblem]) -> Sequence | None:
    length = max(rows)
    last_line = rows[length][0]
    if length < 1:
        problems.append(CsvProblem(last_line, 2, f"sequence '{name}' has only step 0; a sequence "
                                                 "needs at least steps 0 and 1"))
        return None
    missing = [t for t in range(length + 1) if t not in rows]
    if missing:
        shown = ", ".join(str(t) for t in missing[:10]) + (" ..." if len(missing) > 10 else "")
        problems.append(CsvProblem(last_line, 2, f"sequence '{name}' goes to step {length} but has "
                                                 f"no row for step {shown}"))
        return None
    clamps: dict[str, list[float | None]] = {}
    targets: dict[str, list[float | None]] = {}
    held: set[bool] = set()
    ok = True
    for t in range(length + 1):
        line, fields = rows[t]
        for c in columns:
            text = fields[c.index].strip()
            if c.layer == "held_out":
                if text not in ("", "0", "1"):
                    problems.append(CsvProblem(line, c.index + 1, f"held_out must be 1, 0 or empty, not '{text}'"))
                    ok = False
                held.add(text == "1")
                continue
            if not text:
                continue
            try:
                value = float(text)
            except ValueError:
                problems.append(CsvProblem(line, c.index + 1, f"'{text}' is not a number"))
                ok = False
                continue
            if not math.isfinite(value):
                problems.append(CsvProblem(line, c.index + 1, f"'{text}' is not a finite number"))
                ok = False
                continue
            rows_of = clamps if c.layer == "clamp" else targets
            rows_of.setdefault(c.unit, [None] * (length + 1))[t] = value
    if len(held) > 1:
        col = next(c.index for c in columns if c.layer == "held_out") + 1
        problems.append(CsvProblem(rows[0][0], col, f"sequence '{name}': held_out differs between its rows"))
        ok = False
    if not ok:
        return None
    return Sequence(name=name, length=length, held_out=held == {True}, clamps=clamps, targets=targets)


def _ordered(first: Iterable[str], rest: Iterable[str]) -> list[str]:
    out = list(dict.fromkeys(first))
    seen = set(out)
    for u in rest:
        if u not in seen:
            seen.add(u)
            out.append(u)
    return out


def _text(value: float | None) -> str:
    if value is None:
        return ""
    return repr(float(value))
