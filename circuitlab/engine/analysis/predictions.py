"""Predictions against targets: per target cell the output, the target, the error and the cell loss.

The cell loss is the one training uses (squared error ``0.5 (y - d)^2`` or
cross-entropy from the net input), so the mean over all cells is the loss.
"""

from dataclasses import dataclass

import numpy as np

from circuitlab.engine.analysis.common import chosen
from circuitlab.engine.backward import _cell_losses, check_loss
from circuitlab.engine.compile import Compiled, Parameters
from circuitlab.engine.forward import Activity, forward


@dataclass
class Predictions:
    """One row per target cell (arrays of equal length), plus what they were computed on."""

    unit_names: list[str]
    sequence_names: list[str]
    held_out: np.ndarray       # (S,) per sequence
    sequence: np.ndarray       # (N,) sequence index of each cell
    step: np.ndarray
    unit: np.ndarray           # unit index
    output: np.ndarray
    target: np.ndarray
    error: np.ndarray          # output - target
    loss: np.ndarray           # cell loss
    loss_name: str
    tolerance: float
    activity: Activity
    compiled: Compiled

    def __len__(self) -> int:
        return int(self.sequence.size)

    def records(self) -> list[dict]:
        """Every target cell as a plain record."""
        return [{"sequence": self.sequence_names[s], "step": int(t), "unit": self.unit_names[j],
                 "output": float(y), "target": float(d), "error": float(e), "loss": float(c)}
                for s, t, j, y, d, e, c in zip(self.sequence, self.step, self.unit, self.output,
                                               self.target, self.error, self.loss)]

    def _summary(self, key: np.ndarray, labels: list[str]) -> list[dict]:
        out = []
        for k, label in enumerate(labels):
            sel = key == k
            if not sel.any():
                continue
            err = np.abs(self.error[sel])
            out.append({"name": label, "cells": int(sel.sum()), "loss": float(self.loss[sel].mean()),
                        "largest_error": float(err.max()),
                        "within_tolerance": float((err <= self.tolerance).mean())})
        return out

    def per_sequence(self) -> list[dict]:
        """Per sequence: target cells, mean cell loss, largest |error|, fraction within the tolerance."""
        rows = self._summary(self.sequence, self.sequence_names)
        for r in rows:
            r["held_out"] = bool(self.held_out[self.sequence_names.index(r["name"])])
        return rows

    def per_unit(self) -> list[dict]:
        """The same per target unit."""
        return self._summary(self.unit, self.unit_names)


def predictions(compiled: Compiled, params: Parameters, use: str = "all", loss: str | None = None,
                tolerance: float = 0.1) -> Predictions:
    """The outputs against the targets on the sequences of ``use``."""
    comp = chosen(compiled, use)
    loss = loss or comp.loss
    check_loss(comp, loss)
    act = forward(comp, params)
    cells = _cell_losses(comp, act, loss)           # (T+1, S, n)
    t, s, j = np.nonzero(comp.target_tm)
    order = np.lexsort((j, t, s))                   # by sequence, then step, then unit
    t, s, j = t[order], s[order], j[order]
    y = act.y_tm[t, s, j]
    d = comp.target_values_tm[t, s, j]
    return Predictions(list(comp.unit_names), list(comp.sequence_names), comp.held_out.copy(), s, t, j,
                       y, d, y - d, cells[t, s, j], loss, float(tolerance), act, comp)


def states_with_targets_csv(pred: Predictions) -> str:
    """CSV: per (sequence, step) every unit's state, and beside each target unit its target, error, loss.

    The cells off a unit's targets are left empty.
    """
    import csv
    import io

    comp, y = pred.compiled, pred.activity.y
    targeted = np.flatnonzero(comp.target_tm.any(axis=(0, 1)))
    cell = {(int(s), int(t), int(j)): k for k, (s, t, j) in enumerate(zip(pred.sequence, pred.step, pred.unit))}
    buffer = io.StringIO()
    writer = csv.writer(buffer, lineterminator="\n")
    names = pred.unit_names
    writer.writerow(["sequence", "step", *names,
                     *(f"{kind}:{names[j]}" for j in targeted for kind in ("target", "error", "loss"))])
    for s, seq in enumerate(pred.sequence_names):
        for t in range(int(comp.lengths[s]) + 1):
            extra = []
            for j in targeted:
                k = cell.get((s, t, int(j)))
                extra += ["", "", ""] if k is None else [repr(float(pred.target[k])), repr(float(pred.error[k])),
                                                          repr(float(pred.loss[k]))]
            writer.writerow([seq, t, *(repr(float(v)) for v in y[s, t]), *extra])
    return buffer.getvalue()
