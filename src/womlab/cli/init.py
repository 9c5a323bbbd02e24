"""``womlab init NAME``: write a shipped demo scenario into a folder, to read, edit and run."""

from __future__ import annotations

import argparse
from typing import Any

__all__ = ["add"]


def cmd_init(args: argparse.Namespace) -> int:
    from womlab.scenario import demo_names, write_demo

    if args.name is None:
        print("shipped demo scenarios (all invented): " + ", ".join(demo_names()))
        return 0
    path = write_demo(args.name, args.folder, overwrite=args.force)
    print(f"wrote {path}; run it with: womlab run {path}")
    return 0


def add(sub: Any) -> None:
    cmd = sub.add_parser("init", help="write a shipped demo scenario (demo, seeding-demo, ...) into a folder")
    cmd.add_argument("name", nargs="?", help="demo name; leave out to list them")
    cmd.add_argument("--folder", default=".", help="where to write <name>.toml (default: here)")
    cmd.add_argument("--force", action="store_true", help="overwrite an existing file of that name")
    cmd.set_defaults(func=cmd_init)
