"""The ``circuitlab`` command.

``circuitlab [FILE]`` opens the editor; ``circuitlab COMMAND ...`` runs a
headless command. Each command lives in its own module with a ``register``
function that adds its sub-parser; nothing here imports Qt unless the editor
is being opened.
"""

import argparse
import os
import sys

from circuitlab import __version__
from circuitlab.cli import analyze, bench, files, graph, output, runs, sequences, sweep, training

# Modules that each add one or more headless commands.
COMMAND_MODULES = [files, bench, sequences, graph, training, analyze, runs, sweep]


def build_parser() -> argparse.ArgumentParser:
    parser = argparse.ArgumentParser(
        prog="circuitlab",
        description="Design, train and inspect small recurrent circuits. "
        "Run 'circuitlab FILE' to open the editor, or one of the commands below.",
        epilog=_editor_usage(),
        formatter_class=argparse.RawDescriptionHelpFormatter,
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
    parser.add_argument("--show-analysis", metavar="PAGE",
                        choices=("horizon", "fixed", "noise", "space", "predictions"),
                        help="with --screenshot: compute the analyses and show this page of the Analysis panel")
    return parser


def _editor_usage() -> str:
    """The editor's own options, for the main help (they are parsed by the editor's parser)."""
    lines = ["the editor:", "  circuitlab [FILE] [options]   open the editor (on FILE, if given)"]
    for action in build_editor_parser()._actions:
        if action.option_strings and action.help != argparse.SUPPRESS and "-h" not in action.option_strings:
            flag = f"{action.option_strings[0]} {action.metavar or ''}".strip()
            lines.append(f"  {flag:<28}  {action.help}")
    return "\n".join(lines)


def main(argv: list[str] | None = None) -> int:
    argv = sys.argv[1:] if argv is None else list(argv)
    parser = build_parser()
    command_names = set(parser._subparsers._group_actions[0].choices)  # type: ignore[union-attr]
    if argv and (argv[0] in command_names or argv[0] in ("-h", "--help", "--version")):
        args = parser.parse_args(argv)
        return _run_command(args)
    editor = build_editor_parser()
    args = editor.parse_args(argv)
    if args.train_epochs and not args.screenshot:
        editor.error("--train-epochs applies only with --screenshot; in the editor, press Train")
    return open_editor(args)


def _run_command(args: argparse.Namespace) -> int:
    """Run a headless command; a reader that closes the pipe early (``| head``) ends it quietly."""
    saved = sys.stdout, sys.stderr
    output.install_escaping_streams()
    try:
        code = int(args.run(args) or 0)
        sys.stdout.flush()
        return code
    except BrokenPipeError:
        # Python's documented remedy: point stdout at devnull so the interpreter's
        # final flush does not raise a second time, and exit with an error status.
        devnull = os.open(os.devnull, os.O_WRONLY)
        os.dup2(devnull, sys.__stdout__.fileno())
        return 1
    finally:
        sys.stdout, sys.stderr = saved


def open_editor(args: argparse.Namespace) -> int:
    """Start the editor (imports Qt only now)."""
    from circuitlab.cli.display import NO_DISPLAY_HINT, display_problem

    problem = None if args.screenshot else display_problem()
    if problem:
        print(f"circuitlab: {problem}. {NO_DISPLAY_HINT}", file=sys.stderr)
        return 2
    try:
        from circuitlab.gui.app import run_editor
    except ImportError as exc:
        print(f"circuitlab: the editor cannot start: {exc}", file=sys.stderr)
        return 2
    return run_editor(args)
