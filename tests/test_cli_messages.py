"""Plain messages for the command line's rough edges (run past the data, editor options, no display)."""

import os
import socket
import subprocess
import sys

import pytest

from circuitlab import api
from circuitlab.cli import main
from circuitlab.cli.display import display_problem


def test_run_past_the_data_without_fill_says_so_once(examples_dir, capsys):
    """Issue 15 item 9: `run --steps 50` without --fill printed 18 near-identical lines and a
    hint mixing API and CLI syntax."""
    path = examples_dir / "two_step_echo.circuit.json"
    assert main(["run", str(path), "--steps", "50"]) == 2
    err = capsys.readouterr().err
    assert len(err.strip().splitlines()) == 1
    assert "'sensor'" in err and "--fill VALUE" in err and "fill=" not in err
    with pytest.raises(api.MissingFillError) as info:
        api.run(api.load(path), steps=50)
    assert info.value.units == {"sensor": 10}
    assert "fill=VALUE" in str(info.value) and "--fill" not in str(info.value)
    assert main(["run", str(path), "--steps", "50", "--fill", "0"]) == 0


def test_train_epochs_without_screenshot_is_refused(capsys):
    """Issue 15 item 9: --train-epochs without --screenshot was silently ignored."""
    with pytest.raises(SystemExit) as done:
        main(["x.circuit.json", "--train-epochs", "5"])
    assert done.value.code == 2
    assert "--train-epochs applies only with --screenshot" in capsys.readouterr().err


def test_main_help_lists_the_editor_options(capsys):
    """Issue 15 item 9: `circuitlab --help` did not mention the editor's options."""
    with pytest.raises(SystemExit):
        main(["--help"])
    out = capsys.readouterr().out
    for option in ("--screenshot", "--size", "--train-epochs"):
        assert option in out


def test_no_display_is_a_plain_message_with_exit_2(examples_dir):
    """Issue 15 item 13: without a display the editor aborted (exit 134) with Qt's plugin note."""
    env = {k: v for k, v in os.environ.items() if k not in ("DISPLAY", "WAYLAND_DISPLAY", "QT_QPA_PLATFORM")}
    proc = subprocess.run([sys.executable, "-m", "circuitlab", str(examples_dir / "set_reset_latch.circuit.json")],
                          env=env, capture_output=True, text=True, timeout=60)
    assert proc.returncode == 2
    assert "no display" in proc.stderr and "--screenshot" in proc.stderr
    assert "xcb" not in proc.stderr


@pytest.mark.skipif(not sys.platform.startswith("linux"), reason="X11 abstract sockets are Linux's")
def test_display_check_sees_a_listening_x_socket():
    """Issue 15 item 13: a display that answers passes; one that does not, or none, is named."""
    assert display_problem({}, "linux") is not None
    assert display_problem({"QT_QPA_PLATFORM": "offscreen"}, "linux") is None
    assert display_problem({"WAYLAND_DISPLAY": "wayland-0"}, "linux") is None
    assert display_problem({}, "darwin") is None
    number = 9000 + os.getpid() % 900
    assert "DISPLAY=:%d" % number in display_problem({"DISPLAY": f":{number}"}, "linux")
    with socket.socket(socket.AF_UNIX, socket.SOCK_STREAM) as server:
        server.bind(f"\0/tmp/.X11-unix/X{number}")  # abstract: leaves no file behind
        server.listen(1)
        assert display_problem({"DISPLAY": f":{number}.0"}, "linux") is None
    assert display_problem({"DISPLAY": "remote.example:10.0"}, "linux") is None  # not checked: TCP
