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


def _logistic_parts(net: np.ndarray, d: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """``y - d`` and ``y (1 - y)`` of a logistic unit, both computed from the net input.

    Forming them from y loses everything once y rounds to 1 (|net| above
    about 37): ``1 - y`` becomes 0. With ``s = logistic(-|net|)`` (never
    rounds to 0 before |net| ~ 745), ``y (1 - y) = s (1 - s)`` and
    ``y - d = (1 - d) - s`` for net >= 0, ``s - d`` for net < 0.
    """
    a = np.exp(-np.abs(net))
    s = a / (1.0 + a)
    slope = a / (1.0 + a) ** 2
    diff = np.where(net >= 0, (1.0 - d) - s, s - d)
    return diff, slope


def cross_entropy_dnet(y: np.ndarray, d: np.ndarray) -> np.ndarray:
    """``dloss/dnet`` for a logistic unit: ``y - d`` (finite even when y saturates)."""
    return y - d


def cross_entropy_dy(net: np.ndarray, d: np.ndarray) -> np.ndarray:
    """``dloss/dy = (y - d) / (y (1 - y))``, from the net input so a saturated unit keeps its value.

    Past |net| ~ 709 the true value exceeds the largest double; it is then
    reported as the largest finite double of its sign.
    """
    diff, slope = _logistic_parts(net, d)
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        out = diff / slope
    big = np.finfo(float).max
    return np.where(np.isfinite(out), out, np.where(diff == 0, 0.0, np.copysign(big, diff)))
