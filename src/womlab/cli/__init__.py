"""The ``womlab`` command. It only parses, calls the public functions and writes files.

One module per command (``run``, ``compare``, ``seeding``, ``referral``, ``check``,
``sweep``, ``init``, ``view``); each has an ``add(subparsers)`` that declares its options and the function it
calls. A new command is a new module here and one entry in :data:`COMMANDS`. A user
mistake (a :class:`~womlab.errors.WomlabError`) is printed as one line on standard error
with exit status 2, never as a traceback.
"""

from __future__ import annotations

import argparse
import sys

from womlab.cli import check, compare, init, referral, run, seeding, sweep, view
from womlab.errors import WomlabError

__all__ = ["main", "build_parser", "COMMANDS"]

#: The command modules, in the order ``womlab --help`` lists them.
COMMANDS = (run, seeding, referral, compare, check, sweep, init, view)


def build_parser() -> argparse.ArgumentParser:
    parser = argparse.ArgumentParser(
        prog="womlab",
        description="Word-of-mouth growth on referral networks, set against the aggregate model.",
    )
    parser.add_argument("--version", action="version", version=f"womlab {_version()}")
    sub = parser.add_subparsers(dest="command", required=True, metavar="COMMAND")
    for command in COMMANDS:
        command.add(sub)
    return parser


def _version() -> str:
    from importlib import metadata

    try:
        return metadata.version("womlab")
    except metadata.PackageNotFoundError:  # pragma: no cover - a source tree never installed
        return "0+unknown"


def main(argv: list[str] | None = None) -> int:
    parser = build_parser()
    args = parser.parse_args(argv)
    import warnings

    try:
        with warnings.catch_warnings():  # a warning is one line, like an error (e.g. too few replicates)
            warnings.showwarning = lambda message, *_args, **_kw: print(f"womlab: warning: {message}", file=sys.stderr)
            return args.func(args)
    except WomlabError as exc:
        print(f"womlab: error: {exc}", file=sys.stderr)
        return 2
    except KeyboardInterrupt:
        print("womlab: interrupted; files already written are intact", file=sys.stderr)
        return 130


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
