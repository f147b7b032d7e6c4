"""Activation functions, each with its derivative right beside it.

Units are grouped by activation once at compile time; a step then applies
each function to its group's columns at once (no loop over units). The
derivative takes both the net input and the unit's output ``y = f(net)``,
whichever is cheaper and more accurate: the logistic derivative is
``y * (1 - y)`` and the tanh derivative ``1 - y**2`` (common practice), both
computed from net so that they keep full relative precision when the unit
saturates.
"""

import numpy as np

LOGISTIC, TANH, LINEAR, RELU = 0, 1, 2, 3
CODES: dict[str, int] = {"logistic": LOGISTIC, "tanh": TANH, "linear": LINEAR, "relu": RELU}
NAMES: tuple[str, ...] = tuple(CODES)


def logistic(net: np.ndarray) -> np.ndarray:
    # 1 / (1 + exp(-net)) keeps full relative precision, also for tiny outputs; net is
    # floored at -709 only so that exp cannot overflow (the output there is below 1e-307).
    return 1.0 / (1.0 + np.exp(-np.maximum(net, -709.0)))


def logistic_derivative(net: np.ndarray, y: np.ndarray) -> np.ndarray:
    # y (1 - y), evaluated as z / (1 + z)^2 with z = exp(-|net|): the same number, but
    # without the cancellation in 1 - y when y is near 1.
    z = np.exp(-np.abs(net))
    return z / ((1.0 + z) * (1.0 + z))


def tanh(net: np.ndarray) -> np.ndarray:
    return np.tanh(net)


def tanh_derivative(net: np.ndarray, y: np.ndarray) -> np.ndarray:
    # 1 - y^2 = 4 z / (1 + z)^2 with z = exp(-2|net|): no cancellation when |y| is near 1.
    z = np.exp(-2.0 * np.abs(net))
    return 4.0 * z / ((1.0 + z) * (1.0 + z))


def linear(net: np.ndarray) -> np.ndarray:
    return np.array(net, dtype=float, copy=True)


def linear_derivative(net: np.ndarray, y: np.ndarray) -> np.ndarray:
    return np.ones_like(net)


def relu(net: np.ndarray) -> np.ndarray:
    return np.maximum(net, 0.0)


def relu_derivative(net: np.ndarray, y: np.ndarray) -> np.ndarray:
    # The derivative at exactly 0 is taken as 0 (common practice).
    return (net > 0.0).astype(float)


FORWARD = (logistic, tanh, linear, relu)
DERIVATIVE = (logistic_derivative, tanh_derivative, linear_derivative, relu_derivative)

Groups = tuple[tuple[int, slice | np.ndarray], ...]


def groups_of(codes: np.ndarray) -> Groups:
    """``(code, columns)`` for each activation present; columns is a slice where they are contiguous."""
    groups = []
    for c in sorted(set(int(c) for c in codes)):
        cols = np.flatnonzero(codes == c)
        contiguous = cols[-1] - cols[0] + 1 == cols.size
        groups.append((c, slice(int(cols[0]), int(cols[-1]) + 1) if contiguous else cols))
    return tuple(groups)



def activate(groups: Groups, net: np.ndarray, out: np.ndarray) -> None:
    """``out[..., j] = f_j(net[..., j])`` for every unit j."""
    for code, cols in groups:
        out[..., cols] = FORWARD[code](net[..., cols])


def derivative(groups: Groups, net: np.ndarray, y: np.ndarray) -> np.ndarray:
    """``f_j'(net[..., j])`` for every unit j, given ``y = f(net)``."""
    out = np.empty_like(net)
    for code, cols in groups:
        out[..., cols] = DERIVATIVE[code](net[..., cols], y[..., cols])
    return out
