"""The ``circuitlab`` command.

``circuitlab [FILE]`` opens the editor; ``circuitlab COMMAND ...`` runs a
headless command. Each command lives in its own module with a ``register``
function that adds its sub-parser; nothing here imports Qt unless the editor
is being opened.
"""

import argparse
import sys

from circuitlab import __version__
from circuitlab.cli import bench, files, graph, runs, sequences, sweep, training

# Modules that each add one or more headless commands.
COMMAND_MODULES = [files, bench, sequences, graph, training, runs, sweep]


def build_parser() -> argparse.ArgumentParser:
    parser = argparse.ArgumentParser(
        prog="circuitlab",
        description="Design, train and inspect small recurrent circuits. "
        "Run 'circuitlab FILE' to open the editor, or one of the commands below.",
    )
    parser.add_argument("--version", action="version", version=f"circuitlab {__version__}")
    commands = parser.add_subparsers(dest="command", metavar="COMMAND")
    for module in COMMAND_MODULES:
        module.register(commands)
    return parser


def build_editor_parser() -> argparse.ArgumentParser:
    parser = argparse.ArgumentParser(prog="circuitlab", description="Open the circuit editor.")
    parser.add_argument("file", nargs="?", help="circuit file to open (.circuit.json)")
    parser.add_argument("--screenshot", metavar="OUT.png",
                        help="render the main window offscreen to a PNG and exit")
    parser.add_argument("--size", default="1600x1000", metavar="WxH",
                        help="window size for --screenshot (default 1600x1000)")
    parser.add_argument("--train-epochs", type=int, default=0, metavar="N",
                        help="with --screenshot: train N epochs before rendering")
    return parser


def main(argv: list[str] | None = None) -> int:
    argv = sys.argv[1:] if argv is None else list(argv)
    parser = build_parser()
    command_names = set(parser._subparsers._group_actions[0].choices)  # type: ignore[union-attr]
    if argv and (argv[0] in command_names or argv[0] in ("-h", "--help", "--version")):
        args = parser.parse_args(argv)
        return int(args.run(args) or 0)
    args = build_editor_parser().parse_args(argv)
    return open_editor(args)


def open_editor(args: argparse.Namespace) -> int:
    """Start the editor (imports Qt only now)."""
    try:
        from circuitlab.gui.app import run_editor
    except ImportError as exc:
        print(f"circuitlab: the editor cannot start: {exc}", file=sys.stderr)
        return 2
    return run_editor(args)
