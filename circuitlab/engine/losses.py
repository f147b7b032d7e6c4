"""Per-cell losses, each with its derivatives right beside it.

The loss of a batch is the mean over its target cells of the per-cell loss
(this is the number shown and the one differentiated). Each loss gives its
value, ``dloss/dy`` (reported as the error e) and ``dloss/dnet`` (what the
backward pass injects). Cross-entropy is only defined for logistic units and
is computed from the net input, so it never takes log(0):
``-(d ln y + (1-d) ln(1-y)) = d*softplus(-net) + (1-d)*softplus(net)`` and
``dloss/dnet = y - d``.
"""

import numpy as np

LOSSES: tuple[str, ...] = ("squared", "cross_entropy")

# y(1-y) below this counts as saturated when reporting dloss/dy of cross-entropy.
_SATURATED = 1e-300


def squared(y: np.ndarray, d: np.ndarray) -> np.ndarray:
    """``0.5 * (y - d)**2``."""
    return 0.5 * (y - d) ** 2


def squared_dy(y: np.ndarray, d: np.ndarray) -> np.ndarray:
    return y - d


def softplus(x: np.ndarray) -> np.ndarray:
    """``ln(1 + exp(x))`` without overflow."""
    return np.maximum(x, 0.0) + np.log1p(np.exp(-np.abs(x)))


def cross_entropy_from_net(net: np.ndarray, d: np.ndarray) -> np.ndarray:
    """Cross-entropy of a logistic unit with net input ``net`` against target ``d``."""
    return d * softplus(-net) + (1.0 - d) * softplus(net)


def cross_entropy_dnet(y: np.ndarray, d: np.ndarray) -> np.ndarray:
    """``dloss/dnet`` for a logistic unit: ``y - d`` (finite even when y saturates)."""
    return y - d


def cross_entropy_dy(y: np.ndarray, d: np.ndarray) -> np.ndarray:
    """``dloss/dy = (y - d) / (y (1 - y))``; y(1-y) is floored at 1e-300 for saturated units."""
    return (y - d) / np.maximum(y * (1.0 - y), _SATURATED)
