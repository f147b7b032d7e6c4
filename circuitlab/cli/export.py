"""The writers behind ``export``: parameters as NPZ and CSV, the standalone Python file, canvas pictures."""

import csv
import io
from pathlib import Path

import numpy as np

from circuitlab.engine import compile_circuit
from circuitlab.engine.standalone import standalone_source
from circuitlab.model import Circuit
from circuitlab.model.fileformat import write_atomic

# --to name -> (suffixes that name it, description)
FORMATS = {
    "circuit": ((".json",), "circuit file"),
    "npz": ((".npz",), "NumPy arrays of weights, biases and initial states"),
    "csv": ((".csv",), "CSV weight matrix (and OUT.units.csv: biases and initial states)"),
    "graphml": ((".graphml",), "GraphML"),
    "py": ((".py",), "standalone NumPy-only Python file"),
    "png": ((".png",), "canvas picture (PNG)"),
    "svg": ((".svg",), "canvas drawing (SVG)"),
}


def format_of(out: str) -> str | None:
    """The format a file name's suffix names, or None."""
    suffix = Path(out).suffix.lower()
    return next((k for k, (suffixes, _) in FORMATS.items() if suffix in suffixes), None)


def units_csv_path(out: str) -> str:
    """Where the per-unit CSV beside a weight-matrix CSV goes: OUT.units.csv."""
    p = Path(out)
    return str(p.with_name(p.stem + ".units.csv"))


def _values(circuit: Circuit):
    names = circuit.unit_names()
    index = {n: i for i, n in enumerate(names)}
    W = np.zeros((len(names), len(names)))
    connected = np.zeros_like(W, dtype=bool)
    for c in circuit.connections:
        W[index[c.source], index[c.target]] = c.weight
        connected[index[c.source], index[c.target]] = True
    return names, W, connected


def write_npz(circuit: Circuit, out: str) -> None:
    """``W[i, j]`` (weight i -> j), ``connected``, ``bias``, ``initial_state``, ``unit_names``, ``activations``."""
    names, W, connected = _values(circuit)
    buffer = io.BytesIO()
    np.savez(buffer, W=W, connected=connected, bias=np.array([u.bias for u in circuit.units]),
             initial_state=np.array([u.initial_state() for u in circuit.units]),
             unit_names=np.array(names, dtype=str),
             activations=np.array([u.activation for u in circuit.units], dtype=str))
    write_atomic(out, buffer.getvalue())


def units_csv(circuit: Circuit) -> str:
    """One row per unit: name, activation, bias, initial mode and initial state."""
    buffer = io.StringIO()
    writer = csv.writer(buffer, lineterminator="\n")
    writer.writerow(["unit", "activation", "bias", "initial_mode", "initial_state"])
    for u in circuit.units:
        writer.writerow([u.name, u.activation, repr(u.bias), u.initial_mode, repr(u.initial_state())])
    return buffer.getvalue()


def write_standalone(circuit: Circuit, out: str) -> None:
    comp = compile_circuit(circuit)
    text = standalone_source(comp, comp.parameters_from_circuit(), circuit.name, Path(out).stem)
    write_atomic(out, text.encode("utf-8"))


def write_picture(circuit: Circuit, out: str, width: int) -> bool:
    """The canvas as PNG or SVG, drawn offscreen (the only export that needs Qt)."""
    from circuitlab.gui.analysis.canvas_picture import save_circuit_picture
    return save_circuit_picture(circuit, out, width)
