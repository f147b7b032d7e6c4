"""README.md cannot drift from the command line.

Every ``circuitlab ...`` line shown in README.md (in shell code blocks and
in inline code, e.g. the command table) must name real commands, and every
option it shows must appear in that command's ``--help``. Shell lines with
real arguments must also parse as they are written. The parsers are the
real ones: ``circuitlab.cli.build_parser`` for commands and
``build_editor_parser`` for ``circuitlab [FILE]``.
"""

import argparse
import contextlib
import io
import re
import shlex
from pathlib import Path

import pytest

from circuitlab.cli import build_editor_parser, build_parser

README = (Path(__file__).resolve().parent.parent / "README.md").read_text(encoding="utf-8")
FENCE = re.compile(r"^```(\w*)\n(.*?)^```", re.S | re.M)
INLINE = re.compile(r"`([^`\n]+)`")
SHELLS = ("bash", "sh", "shell", "console", "")
OPTION = re.compile(r"^--?[A-Za-z][\w-]*")


def command_tokens(line: str) -> list[list[str]]:
    """The argument lists of every circuitlab command in one shell line (``&&`` chains too)."""
    line = line.strip().removeprefix("$ ")
    try:
        tokens = shlex.split(line, comments=True)
    except ValueError:
        return []
    out, current = [], []
    for tok in tokens + ["&&"]:
        if tok in ("&&", "||", ";", "|"):
            if current[:1] == ["circuitlab"]:
                out.append(current[1:])
            elif current[:3] in (["python", "-m", "circuitlab"], ["python3", "-m", "circuitlab"]):
                out.append(current[3:])
            current = []
        else:
            current.append(tok)
    return out


def shell_commands(text: str) -> list[list[str]]:
    found = []
    for lang, body in FENCE.findall(text):
        if lang in SHELLS:
            for line in body.splitlines():
                found += command_tokens(line)
    return found


def inline_commands(text: str) -> list[list[str]]:
    prose = FENCE.sub("", text)
    return [args for span in INLINE.findall(prose) if span.startswith("circuitlab")
            for args in command_tokens(span)]


def inline_options(text: str) -> list[str]:
    """Options named on their own in prose, such as `--reinit` or `--out TRAINED.json`."""
    prose = FENCE.sub("", text)
    return [span.split()[0] for span in INLINE.findall(prose)
            if re.fullmatch(r"--[a-z][\w-]*( \S+)?", span)]


def _subcommands(parser: argparse.ArgumentParser) -> dict[str, argparse.ArgumentParser]:
    for action in parser._actions:
        if isinstance(action, argparse._SubParsersAction):
            return dict(action.choices)
    return {}


def _shown(word: str, help_text: str) -> bool:
    return re.search(rf"(?<![\w-]){re.escape(word)}(?![\w-])", help_text) is not None


def resolve(args: list[str]) -> tuple[argparse.ArgumentParser, list[str], list[str]]:
    """(the parser that handles ``args``, its command path, the remaining arguments).

    As in ``circuitlab.cli.main``: a first argument that names a command goes
    to that command, anything else to the editor.
    """
    parser, path = build_parser(), ["circuitlab"]
    if not args or args[0] not in _subcommands(parser) and args[0] not in ("-h", "--help", "--version"):
        return build_editor_parser(), path, args
    while args and args[0] in _subcommands(parser):
        parser, path, args = _subcommands(parser)[args[0]], path + [args[0]], args[1:]
    return parser, path, args


def problems(args: list[str]) -> list[str]:
    """What in ``circuitlab ARGS`` (placeholders and [optional] brackets allowed) the CLI lacks."""
    words = [w.strip("[]").removesuffix("...") for w in args]
    words = [w for w in words if w]
    parser, path, rest = resolve(words)
    where = " ".join(path)
    found = []
    help_text = parser.format_help()
    for word in rest:
        option = OPTION.match(word)
        if option:
            if not _shown(option.group(0), help_text):
                found.append(f"'{where}' has no option {option.group(0)} (see '{where} --help')")
        elif re.fullmatch(r"[a-z][a-z-]*", word) and _subcommands(parser):
            found.append(f"'{where}' has no command '{word}'")
    if path == ["circuitlab"] and not any(OPTION.match(w) for w in rest):
        editor_files = [w for w in rest if not OPTION.match(w)]
        if editor_files and re.fullmatch(r"[a-z][a-z-]*", editor_files[0]):
            found.append(f"'circuitlab' has no command '{editor_files[0]}'")
    return found


SHELL_LINES = shell_commands(README)
ALL_LINES = SHELL_LINES + inline_commands(README)


def test_readme_shows_commands():
    assert len(SHELL_LINES) >= 3 and len(ALL_LINES) >= 10


@pytest.mark.parametrize("args", ALL_LINES, ids=lambda a: " ".join(["circuitlab", *a])[:80])
def test_readme_command_and_its_options_exist(args):
    assert problems(args) == []


@pytest.mark.parametrize("args", SHELL_LINES, ids=lambda a: " ".join(["circuitlab", *a])[:80])
def test_readme_shell_command_parses_as_written(args):
    parser, _, rest = resolve(args)
    errors = io.StringIO()
    with contextlib.redirect_stderr(errors):
        try:
            parser.parse_args(rest)
        except SystemExit as exc:
            pytest.fail(f"circuitlab {' '.join(args)}: {errors.getvalue().strip()} (exit {exc.code})")


def all_help_texts() -> list[str]:
    """The --help of the editor, of circuitlab and of every command and sub-command."""
    texts, parsers = [], [build_editor_parser(), build_parser()]
    while parsers:
        p = parsers.pop()
        parsers += _subcommands(p).values()
        texts.append(p.format_help())
    return texts


def test_options_named_in_prose_exist_in_some_help():
    options = inline_options(README)
    helps = all_help_texts()
    assert len(options) >= 3 and len(helps) > 5
    missing = sorted({o for o in options if not any(_shown(o, h) for h in helps)})
    assert missing == [], f"README names options no command has: {missing}"


def test_every_command_is_in_the_readme():
    shown = {tuple(resolve(a)[1]) for a in ALL_LINES}
    missing = [name for name in _subcommands(build_parser()) if ("circuitlab", name) not in
               {s[:2] for s in shown}]
    assert missing == [], f"commands missing from README.md: {missing}"


@pytest.mark.parametrize("line, complaint", [
    ("circuitlab train FILE [--no-such-option]", "no option --no-such-option"),
    ("circuitlab sequences export FILE DATA.csv --json", "no option --json"),
    ("circuitlab sequences shuffle FILE", "no command 'shuffle'"),
    ("circuitlab frobnicate FILE", "no command 'frobnicate'"),
    ("circuitlab FILE --fullscreen", "no option --fullscreen"),
])
def test_the_check_catches_drift(line, complaint):
    (args,) = command_tokens(line)
    assert any(complaint in p for p in problems(args))
