"""What every analysis shares: which sequences it uses, which units are inputs, size limits."""

import numpy as np

from circuitlab.engine.compile import Compiled
from circuitlab.engine.errors import EngineError

# The sets of sequences an analysis can be asked to use.
SEQUENCE_SETS: tuple[str, ...] = ("training", "held_out", "all")

# Largest number of float64 cells (unit x step x sequence x repeat) one analysis may hold at once:
# 2e7 cells are 160 MB, comfortably inside a desktop's memory.
CELL_BUDGET = 20_000_000
# Fixed points solve dense n x n systems from many starts; beyond this the solver is too slow.
MAX_FREE_UNITS = 400


def sequence_indices(compiled: Compiled, use: str = "training") -> np.ndarray:
    """The sequence indices of ``use``: "training", "held_out" or "all".

    This is the one place the analyses read the sequences' held-out flag.
    """
    if use == "all":
        return np.arange(compiled.n_sequences)
    if use == "training":
        return np.flatnonzero(~compiled.held_out)
    if use == "held_out":
        return np.flatnonzero(compiled.held_out)
    raise EngineError(f"unknown set of sequences '{use}' (choose one of {', '.join(SEQUENCE_SETS)})")


def chosen(compiled: Compiled, use: str) -> Compiled:
    """``compiled`` cut down to the sequences of ``use``; refuses an empty choice."""
    idx = sequence_indices(compiled, use)
    if idx.size == 0:
        what = {"training": "training", "held_out": "held-out", "all": ""}[use]
        raise EngineError(f"the circuit has no {what} sequences to analyse".replace("no  ", "no "))
    return compiled.subset(idx) if idx.size != compiled.n_sequences else compiled


def input_units(compiled: Compiled) -> np.ndarray:
    """(n,) bool: units clamped to data at some step after step 0 (inputs, not initial states)."""
    return compiled.clamp_tm[1:].any(axis=(0, 1)) if compiled.steps else np.zeros(compiled.n_units, bool)


def check_budget(cells: int, what: str) -> None:
    """Refuse an analysis that would hold more than ``CELL_BUDGET`` numbers at once."""
    if cells > CELL_BUDGET:
        raise EngineError(f"{what} would hold {cells:,} numbers at once, more than the limit of "
                          f"{CELL_BUDGET:,}; use fewer steps, sequences or repeats")


def number(x) -> float | None:
    """A float for a plain record, None where it is not finite (JSON has no NaN)."""
    x = float(x)
    return x if np.isfinite(x) else None
