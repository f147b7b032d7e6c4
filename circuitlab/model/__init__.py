"""The circuit model: plain Python, no Qt. Importable from scripts and cluster workers."""

from circuitlab.model.circuit import FORMAT_NAME, FORMAT_VERSION, Circuit
from circuitlab.model.connections import Connection
from circuitlab.model.errors import CircuitFileError, ModelError
from circuitlab.model.fileformat import load_circuit, loads_circuit, save_circuit
from circuitlab.model.schedule import UnitSchedule, clamp_mask, target_mask
from circuitlab.model.sequences import Sequence
from circuitlab.model.settings import TrainingRecord, TrainingSettings
from circuitlab.model.units import Unit
from circuitlab.model.validation import Problem, find_problems

__all__ = [
    "FORMAT_NAME", "FORMAT_VERSION", "Circuit", "CircuitFileError", "Connection", "ModelError",
    "Problem", "Sequence", "TrainingRecord", "TrainingSettings", "Unit", "UnitSchedule",
    "clamp_mask", "find_problems", "load_circuit", "loads_circuit", "save_circuit", "target_mask",
]
