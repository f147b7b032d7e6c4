"""The error e = dL/dy at a saturated cross-entropy target.

For a logistic unit y = 1/(1+exp(-net)), dy/dnet = y(1-y) and the
cross-entropy's dL/dy = (y-d)/(y(1-y)) (calculus; common practice). At
net = 40 the exact value is computed here with Python's ``decimal`` module
(50 digits), outside the engine's floating-point arithmetic.
"""

from decimal import Decimal, getcontext

import numpy as np
import pytest

from circuitlab.engine import backward, compile_circuit, forward
from circuitlab.model import Circuit, Sequence, Unit, UnitSchedule


def _exact_dy(net: float, d: float) -> float:
    getcontext().prec = 50
    y = 1 / (1 + (-Decimal(net)).exp())
    return float((y - Decimal(d)) / (y * (1 - y)))


def _one_unit(bias: float, target: float) -> Circuit:
    c = Circuit()
    c.add_unit(Unit(name="out", bias=bias, bias_trains=True))
    c.set_schedule("out", UnitSchedule(target="final"))
    c.add_sequence(Sequence(name="s", length=1, targets={"out": [None, target]}))
    c.training.loss = "cross_entropy"
    return c


@pytest.mark.parametrize("bias, target", [(40.0, 0.5), (40.0, 1.0), (-45.0, 0.25), (3.0, 0.5)])
def test_saturated_cross_entropy_error_is_exact(bias, target):
    """Issue 15 item 3: with bias 40 and target 0.5 e(t) was 5.0e299 instead of 1.18e17."""
    circuit = _one_unit(bias, target)
    compiled = compile_circuit(circuit)
    params = compiled.parameters_from_circuit()
    act = forward(compiled, params)
    _, grads, back = backward(compiled, params, act, loss="cross_entropy")
    e = back.e[0, 1, 0]
    assert e == pytest.approx(_exact_dy(bias, target), rel=1e-12)
    assert np.isfinite(back.e).all()
    # delta = dL/dnet = y - d stays what it was (the gradient the trainer follows)
    assert back.delta[0, 1, 0] == pytest.approx(float(act.y[0, 1, 0]) - target, abs=1e-15)
