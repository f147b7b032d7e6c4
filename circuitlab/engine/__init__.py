"""The engine: compile a circuit to arrays, run it, backpropagate through time, train it.

NumPy only, no Qt: everything here works from scripts, notebooks and
cluster workers (README, "Python API").
"""

from circuitlab.engine.backward import Backward, backward, contributions, loss_value
from circuitlab.engine.compile import Compiled, Parameters, compile_circuit
from circuitlab.engine.errors import EngineError
from circuitlab.engine.forward import Activity, forward
from circuitlab.engine.gradcheck import GradientCheck, gradient_check
from circuitlab.engine.rtrl import rtrl_gradient
from circuitlab.engine.trainer import EpochRecord, Trainer
from circuitlab.engine.unrolled import unrolled_graph

__all__ = [
    "Activity", "Backward", "Compiled", "EngineError", "EpochRecord", "GradientCheck", "Parameters",
    "Trainer", "backward", "compile_circuit", "contributions", "forward", "gradient_check", "loss_value",
    "rtrl_gradient", "unrolled_graph",
]
