"""The engine: compile a circuit to arrays, run it, backpropagate through time, train it.

NumPy only, no Qt: everything here works from scripts, notebooks and
cluster workers (README, "Python API").
"""

from circuitlab.engine.backward import Backward, backward, contributions, loss_value
from circuitlab.engine.compile import Compiled, Parameters, compile_circuit
from circuitlab.engine.errors import EngineError
from circuitlab.engine.forward import Activity, forward
from circuitlab.engine.trainer import EpochRecord, Trainer

__all__ = [
    "Activity", "Backward", "Compiled", "EngineError", "EpochRecord", "Parameters", "Trainer",
    "backward", "compile_circuit", "contributions", "forward", "loss_value",
]
