"""The ``womlab`` command. It only parses, calls the public functions and writes files.

One module per command (``check``, ``run``, ``seeding``, ``referral``, ``compare``,
``sweep``, ``fit``, ``init``, ``view``); each has an ``add(subparsers)`` that declares its options and the function it
calls. A new command is a new module here and one entry in :data:`COMMANDS`. A user
mistake (a :class:`~womlab.errors.WomlabError`) is printed as one line on standard error
with exit status 2, never as a traceback; a warning about the scenario as
``womlab: warning: ...``; a reader that closes the pipe early (``womlab ... | head -1``)
ends the output quietly, with the files already written intact.
"""

from __future__ import annotations

import argparse
import os
import sys
import typing
import warnings

from womlab.cli import check, compare, fit, init, levers, referral, run, seeding, sweep, view
from womlab.errors import WomlabError

__all__ = ["main", "build_parser", "COMMANDS"]

#: The command modules, in the order ``womlab --help`` lists them (check first: try it before a run).
COMMANDS = (check, run, seeding, referral, levers, compare, sweep, fit, init, view)


class _Parser(argparse.ArgumentParser):
    """An argument parser whose mistakes are one line, like every other womlab error."""

    def error(self, message: str) -> typing.NoReturn:
        self.exit(2, f"womlab: error: {message} (see {self.prog} --help)\n")


def build_parser() -> argparse.ArgumentParser:
    parser = _Parser(
        prog="womlab",
        description="Word-of-mouth growth on referral networks, set against the aggregate model. "
        "Start with `womlab check CONFIG`: it validates the scenario and says what each command "
        "will run, with a rough time.",
    )
    parser.add_argument("--version", action="version", version=f"womlab {_version()}")
    sub = parser.add_subparsers(dest="command", required=True, metavar="COMMAND")
    for command in COMMANDS:
        command.add(sub)
    return parser


def _show_warning(message, category, filename, lineno, file=None, line=None) -> None:  # noqa: ANN001
    """Warnings about the user's input as one plain line each, not a source location."""
    text = f"womlab: warning: {message}"
    try:
        print(text, file=sys.stderr)
    except (OSError, ValueError):
        pass


def _quiet_pipe() -> None:
    """After the reader of standard output has gone, send what is left to nowhere."""
    try:
        devnull = os.open(os.devnull, os.O_WRONLY)
        os.dup2(devnull, sys.stdout.fileno())
    except (OSError, ValueError):
        pass


def _version() -> str:
    from importlib import metadata

    try:
        return metadata.version("womlab")
    except metadata.PackageNotFoundError:  # pragma: no cover - a source tree never installed
        return "0+unknown"


def main(argv: list[str] | None = None) -> int:
    argv = sys.argv[1:] if argv is None else list(argv)
    parser = build_parser()
    args = parser.parse_args(argv)
    args.command_line = ["womlab", *argv]
    try:
        with warnings.catch_warnings():
            warnings.showwarning = _show_warning
            warnings.simplefilter("always", UserWarning)
            status = args.func(args)
        sys.stdout.flush()
        return status
    except WomlabError as exc:
        print(f"womlab: error: {exc}", file=sys.stderr)
        return 2
    except BrokenPipeError:
        _quiet_pipe()
        return 141  # what a shell reports for a process ended by SIGPIPE
    except KeyboardInterrupt:
        print("womlab: interrupted; files already written are intact", file=sys.stderr)
        return 130


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
