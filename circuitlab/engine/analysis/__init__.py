"""Analysis of a trained circuit: past the horizon, fixed points, robustness, state space, predictions.

NumPy and SciPy only, no Qt. Each module holds one analysis and returns
arrays with plain records beside them (``as_record``); ``report.analyse``
runs the set the ``analyze`` command prints.
"""

from circuitlab.engine.analysis.common import SEQUENCE_SETS, input_units, sequence_indices
from circuitlab.engine.analysis.fixed_points import (FixedPoint, FixedPointReport, find_fixed_points,
                                                     weight_facts)
from circuitlab.engine.analysis.horizon import HorizonRun, detect_period, extend, past_horizon
from circuitlab.engine.analysis.predictions import Predictions, predictions
from circuitlab.engine.analysis.robustness import (NoiseCurve, PulseResponse, noise_curve, noisy_forward,
                                                   pulse_response)
from circuitlab.engine.analysis.state_space import StateSpace, principal_components, state_space
from circuitlab.engine.analysis.step_map import StepMap, step_map
from circuitlab.engine.analysis.report import Analysis, analyse, default_held, fixed_points_of

__all__ = [
    "Analysis", "FixedPoint", "FixedPointReport", "HorizonRun", "NoiseCurve", "Predictions", "PulseResponse",
    "SEQUENCE_SETS", "StateSpace", "StepMap", "analyse", "default_held", "detect_period", "extend",
    "find_fixed_points", "fixed_points_of", "input_units", "noise_curve", "noisy_forward", "past_horizon",
    "predictions", "principal_components", "pulse_response", "sequence_indices", "state_space", "step_map",
    "weight_facts",
]
