"""Gradient check: BPTT against central finite differences and against RTRL.

Works on the trainable parameters theta (tie groups summed, frozen values
left out), so it checks what training follows. The finite differences are
central, with Richardson extrapolation (the five-point stencil
``(-L(x+2h) + 8L(x+h) - 8L(x-h) + L(x-2h)) / 12h``, error O(h^4)), with
``h = step * max(1, |theta_i|)``. The relative error of two numbers a, b is
``|a - b| / max(|a|, |b|, floor)`` with ``floor = 1e-6 * max(1, L)``:
gradients smaller than that are compared absolutely, since rounding in L
(about 1e-16 L / h) is all a difference quotient can resolve of them.

A ReLU unit's kink at net input 0 makes a difference quotient that steps
across it meaningless. Each evaluation therefore also records which ReLU
cells are active (net > 0, the branch BPTT differentiates: f'(0) = 0). A
parameter whose stencil keeps that pattern gets the central difference; one
whose stencil crosses a kink on one side only gets the one-sided difference
``(-3L(x) + 4L(x+-h) - L(x+-2h)) / (+-2h)`` (error O(h^2)) on the side that
keeps it; one crossed on both sides is left out of the verdict and listed
in ``excluded`` (its BPTT and RTRL values are still compared).
"""

from dataclasses import dataclass, field

import numpy as np

from circuitlab.engine.activations import RELU
from circuitlab.engine.backward import backward, loss_value
from circuitlab.engine.compile import GROUP_NAMES, Compiled, Parameters
from circuitlab.engine.forward import forward
from circuitlab.engine.rtrl import rtrl_gradient

DEFAULT_TOLERANCE = 1e-6
FLOOR = 1e-6


def relative_error(a: np.ndarray, b: np.ndarray, floor: float = FLOOR) -> np.ndarray:
    """Elementwise ``|a - b| / max(|a|, |b|, floor)``."""
    a, b = np.asarray(a, float), np.asarray(b, float)
    return np.abs(a - b) / np.maximum(np.maximum(np.abs(a), np.abs(b)), floor)


@dataclass
class GroupCheck:
    """The largest relative errors within one group of parameters."""

    group: str
    count: int
    finite_differences: float
    rtrl: float | None
    worst: str | None  # label of the parameter with the largest error


@dataclass
class GradientCheck:
    loss_name: str
    loss: float
    tolerance: float
    groups: list[GroupCheck] = field(default_factory=list)
    kink: str | None = None  # a warning when a ReLU net input sits near 0
    one_sided: list[str] = field(default_factory=list)  # parameters checked by one-sided differences
    excluded: list[str] = field(default_factory=list)   # parameters whose stencil crosses kinks both ways

    @property
    def max_error(self) -> float:
        errs = [g.finite_differences for g in self.groups]
        errs += [g.rtrl for g in self.groups if g.rtrl is not None]
        return max(errs, default=0.0)

    @property
    def passed(self) -> bool:
        return self.max_error <= self.tolerance

    def as_dict(self) -> dict:
        return {"loss_name": self.loss_name, "loss": self.loss, "tolerance": self.tolerance,
                "max_error": self.max_error, "passed": self.passed, "kink": self.kink,
                "one_sided": list(self.one_sided), "excluded": list(self.excluded),
                "groups": [dict(g.__dict__) for g in self.groups]}


def finite_difference_gradient(compiled: Compiled, params: Parameters, loss: str = "squared",
                               step: float = 1e-4) -> np.ndarray:
    """dL/dtheta by finite differences that never step across a ReLU kink (module docstring).

    Entries whose stencil crosses a kink on both sides are NaN.
    """
    return _finite_differences(compiled, params, loss, step)[0]


def _finite_differences(compiled: Compiled, params: Parameters, loss: str, step: float):
    theta = compiled.pack(params)
    out = np.zeros_like(theta)
    kind = np.zeros(theta.size, dtype=int)  # 0 central, 1 one-sided, 2 excluded
    relu = _relu_cells(compiled)

    def L(th):
        act = forward(compiled, compiled.unpack(th, params))
        pattern = act.net_tm[relu] > 0 if relu is not None else None
        return loss_value(compiled, act, loss), pattern

    base, base_pattern = L(theta)
    for i in range(theta.size):
        h = step * max(1.0, abs(theta[i]))
        th = theta.copy()
        vals, same = {}, {}
        for k in (2, 1, -1, -2):
            th[i] = theta[i] + k * h
            vals[k], pattern = L(th)
            same[k] = pattern is None or np.array_equal(pattern, base_pattern)
        if all(same.values()):
            out[i] = (-vals[2] + 8 * vals[1] - 8 * vals[-1] + vals[-2]) / (12 * h)
        elif same[1] and same[2]:
            out[i], kind[i] = (-3 * base + 4 * vals[1] - vals[2]) / (2 * h), 1
        elif same[-1] and same[-2]:
            out[i], kind[i] = (-3 * base + 4 * vals[-1] - vals[-2]) / (-2 * h), 1
        else:
            out[i], kind[i] = np.nan, 2
    return out, kind


def _relu_cells(compiled: Compiled) -> np.ndarray | None:
    """(T+1, S, n) bool: the live, unclamped cells of ReLU units (None if there are none)."""
    relu = compiled.activation_codes == RELU
    if not relu.any():
        return None
    live = (~compiled.clamp_tm & (np.arange(compiled.steps + 1)[:, None] <= compiled.lengths)[:, :, None])
    live[0] = False
    return live & relu


def gradient_check(compiled: Compiled, params: Parameters, loss: str = "squared",
                   tolerance: float = DEFAULT_TOLERANCE, rtrl: bool = True,
                   step: float = 1e-4) -> GradientCheck:
    """Compare the BPTT gradient with finite differences and (if ``rtrl``) RTRL, per group."""
    act = forward(compiled, params)
    value, grads, _ = backward(compiled, params, act, loss=loss)
    g_bptt = compiled.pack_gradient(grads)
    g_fd, kind = _finite_differences(compiled, params, loss, step)
    g_rtrl = compiled.pack_gradient(rtrl_gradient(compiled, params, loss)[1]) if rtrl else None
    report = GradientCheck(loss, value, tolerance, kink=_kink(compiled, act, step))
    report.one_sided = [compiled.param_labels[i] for i in np.flatnonzero(kind == 1)]
    report.excluded = [compiled.param_labels[i] for i in np.flatnonzero(kind == 2)]
    floor = FLOOR * max(1.0, abs(value))
    for name in GROUP_NAMES:
        sl = compiled.param_groups()[name]
        count = sl.stop - sl.start
        if count == 0:
            continue
        # an excluded parameter has no finite difference: it counts 0 here and is listed instead
        fd = np.where(kind[sl] == 2, 0.0, relative_error(g_bptt[sl], np.nan_to_num(g_fd[sl]), floor))
        rt = relative_error(g_bptt[sl], g_rtrl[sl], floor) if g_rtrl is not None else None
        worst_of = np.maximum(fd, rt) if rt is not None else fd
        report.groups.append(GroupCheck(
            name, count, float(fd.max()), float(rt.max()) if rt is not None else None,
            compiled.param_labels[sl.start + int(np.argmax(worst_of))]))
    return report


def _kink(compiled: Compiled, act, step: float) -> str | None:
    cells = _relu_cells(compiled)
    if cells is None:
        return None
    net = np.abs(act.net_tm)[cells]
    if net.size and net.min() < 10 * step:
        return (f"a ReLU net input is {net.min():.2g} from the kink at 0; parameters whose "
                "finite-difference steps cross it are checked one-sided or left out (listed)")
    return None
