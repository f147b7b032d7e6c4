"""Terminal safety and pipes for the headless commands.

ECMA-48 control sequences start with ESC (0x1b); printing them raw lets a
file recolour or reprogram the user's terminal (common practice: escape
control characters in text output). A reader that closes the pipe early
(``| head``) must end the command quietly (Python documentation, "Note on
SIGPIPE").
"""

import subprocess
import sys

from circuitlab.cli import main
from circuitlab.cli.output import printable
from circuitlab.model import load_circuit, save_circuit


def test_info_prints_control_characters_escaped(examples_dir, tmp_path, capsys):
    """Issue 15 item 8: a circuit name holding an escape sequence was printed raw by info."""
    circuit = load_circuit(examples_dir / "set_reset_latch.circuit.json")
    circuit.name = "latch\x1b[31mRED\x07"
    circuit.description = "line one\nline two \x1b]0;title\x07"
    path = tmp_path / "odd.circuit.json"
    save_circuit(circuit, path)
    assert main(["info", str(path)]) == 0
    out = capsys.readouterr().out
    assert "\x1b" not in out and "\x07" not in out
    assert "latch\\x1b[31mRED\\x07" in out
    assert "line one\nline two" in out  # line breaks stay line breaks


def test_printable_keeps_ordinary_text():
    """Issue 15 item 8: only control characters change (tab, line breaks and non-ASCII letters stay)."""
    assert printable("Zürich\tδ\n") == "Zürich\tδ\n"
    assert printable("a\x00b\x9bc") == "a\\x00b\\x9bc"


def test_closed_pipe_ends_the_command_quietly(examples_dir):
    """Issue 15 item 8: `train --json | head` printed a double BrokenPipeError traceback."""
    proc = subprocess.Popen([sys.executable, "-m", "circuitlab", "train",
                             str(examples_dir / "set_reset_latch.circuit.json"), "--json", "--epochs", "3"],
                            stdout=subprocess.PIPE, stderr=subprocess.PIPE)
    proc.stdout.close()  # the reader is gone before the command writes anything
    err = proc.stderr.read().decode()
    assert proc.wait(timeout=60) == 1
    assert "Traceback" not in err and "BrokenPipeError" not in err
