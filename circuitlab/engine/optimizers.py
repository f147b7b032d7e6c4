"""Optimizers over the flat parameter vector theta, gradient clipping and rate schedules.

Both optimizers work on theta (see ``compile``), so a tie group moves as one
parameter and frozen values, not being in theta, never move. Sign
constraints are applied by the trainer after each step (projection onto
the allowed half-line).
"""

import numpy as np

from circuitlab.model import TrainingSettings


class SGD:
    """Gradient descent with (heavy-ball) momentum: ``v = mu v + g``, ``theta -= lr v``."""

    STATE = ("velocity",)

    def __init__(self, size: int, momentum: float = 0.0):
        self.momentum = momentum
        self.velocity = np.zeros(size)

    def step(self, theta: np.ndarray, grad: np.ndarray, lr: float) -> np.ndarray:
        self.velocity *= self.momentum
        self.velocity += grad
        return theta - lr * self.velocity


class Adam:
    """Adam (Kingma and Ba, 2015) with bias-corrected first and second moments."""

    STATE = ("m", "v", "t")

    def __init__(self, size: int, beta1: float = 0.9, beta2: float = 0.999, epsilon: float = 1e-8):
        self.beta1, self.beta2, self.epsilon = beta1, beta2, epsilon
        self.m = np.zeros(size)
        self.v = np.zeros(size)
        self.t = 0

    def step(self, theta: np.ndarray, grad: np.ndarray, lr: float) -> np.ndarray:
        self.t += 1
        self.m = self.beta1 * self.m + (1.0 - self.beta1) * grad
        self.v = self.beta2 * self.v + (1.0 - self.beta2) * grad * grad
        m_hat = self.m / (1.0 - self.beta1 ** self.t)
        v_hat = self.v / (1.0 - self.beta2 ** self.t)
        return theta - lr * m_hat / (np.sqrt(v_hat) + self.epsilon)


def make_optimizer(settings: TrainingSettings, size: int) -> SGD | Adam:
    if settings.optimizer == "sgd":
        return SGD(size, settings.momentum)
    return Adam(size, settings.adam_beta1, settings.adam_beta2, settings.adam_epsilon)


def carry_state(new: SGD | Adam, old: SGD | Adam) -> SGD | Adam:
    """``new`` (built from changed settings) continuing the moments of ``old`` if it is the same kind."""
    if type(new) is type(old):
        for name in new.STATE:
            setattr(new, name, getattr(old, name))
    return new


def clip_by_global_norm(grad: np.ndarray, max_norm: float | None) -> np.ndarray:
    """Rescale ``grad`` to norm ``max_norm`` if it is longer (Pascanu, Mikolov and Bengio, 2013)."""
    if max_norm is None:
        return grad
    norm = float(np.linalg.norm(grad))
    return grad * (max_norm / norm) if norm > max_norm else grad


def learning_rate(settings: TrainingSettings, epoch: int) -> float:
    """The rate for 1-based ``epoch``: constant, or multiplied by ``rate_step_factor``
    every ``rate_step_every`` epochs (step schedule)."""
    if settings.rate_schedule == "step":
        return settings.learning_rate * settings.rate_step_factor ** ((epoch - 1) // settings.rate_step_every)
    return settings.learning_rate
