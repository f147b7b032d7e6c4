"""The gradient check at a ReLU kink (net input exactly 0).

ReLU's derivative at 0 is taken as 0 (the inactive branch), the usual
convention (common practice). Finite differences that step across 0 see the
mean of the two branches, so they cannot check that parameter; the check
must use one-sided differences on the branch BPTT differentiates, or leave
the parameter out and say so. RTRL (Williams and Zipser, 1989) still
computes the same gradient forwards in time.
"""

import json

from circuitlab import api
from circuitlab.cli import main
from circuitlab.model import Circuit, Sequence, Unit, UnitSchedule, save_circuit


def _kinked() -> Circuit:
    """x (clamped to 0) -> h (ReLU, bias 0: net exactly 0 at every step) -> out (linear)."""
    c = Circuit()
    c.add_unit(Unit(name="x", activation="linear", bias_trains=False, initial_mode="clamped"))
    c.add_unit(Unit(name="h", activation="relu", bias=0.0))
    c.add_unit(Unit(name="out", activation="linear", bias=0.2))
    c.connect("x", "h", 0.7)
    c.connect("h", "out", 0.5)
    c.connect("out", "out", 0.3)
    c.set_schedule("x", UnitSchedule(clamp="every"))
    c.set_schedule("out", UnitSchedule(target="every"))
    c.add_sequence(Sequence(name="s", length=4, clamps={"x": [0.0] * 5},
                            targets={"out": [None, 0.1, 0.4, -0.2, 0.3]}))
    return c


def test_gradcheck_agrees_next_to_a_relu_kink():
    """Issue 15 item 4: gradcheck said DISAGREE at a ReLU kink although BPTT and RTRL agree."""
    report = api.check_gradients(_kinked())
    assert report.kink is not None
    assert report.passed, report.as_dict()
    # bias h sits on the kink: +h activates the unit, -h keeps it off, so it is checked one-sided
    assert "bias h" in report.one_sided
    assert all(g.rtrl is not None and g.rtrl < 1e-9 for g in report.groups)


def test_gradcheck_command_exits_0_and_names_the_kinked_parameters(tmp_path, capsys):
    """Issue 15 item 4: the command exits 0 and lists the parameters checked one-sided."""
    path = tmp_path / "kink.circuit.json"
    save_circuit(_kinked(), path)
    assert main(["gradcheck", str(path)]) == 0
    out = capsys.readouterr().out
    assert "gradients agree" in out and "bias h" in out
    assert main(["gradcheck", str(path), "--json"]) == 0
    data = json.loads(capsys.readouterr().out)
    assert data["passed"] and "bias h" in data["one_sided"]


def test_one_sided_check_still_catches_a_wrong_gradient(monkeypatch):
    """A check must be able to fail (common practice): a 1 % error in the kinked bias shows."""
    import circuitlab.engine.gradcheck as gc
    real = gc.backward

    def off(*args, **kwargs):
        value, grads, back = real(*args, **kwargs)
        grads.bias[1] = grads.bias[1] * 1.01 + 1e-3
        return value, grads, back

    monkeypatch.setattr(gc, "backward", off)
    report = api.check_gradients(_kinked(), rtrl=False)
    assert not report.passed
