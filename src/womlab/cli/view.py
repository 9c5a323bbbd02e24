"""``womlab view CONFIG``: the Mesa model of a scenario in the browser (needs ``womlab[viz]``)."""

from __future__ import annotations

import argparse
from typing import Any

from womlab.cli.common import positive

__all__ = ["add"]


def cmd_view(args: argparse.Namespace) -> int:
    from womlab.view import serve_view

    print(f"womlab view: serving {args.config} at http://{args.host}:{args.port} (Ctrl-C stops it)", flush=True)
    return serve_view(
        args.config, port=args.port, host=args.host, max_organisations=args.max_organisations, open_browser=args.open
    )


def add(sub: Any) -> None:
    cmd = sub.add_parser("view", help="show the Mesa model of a scenario in the browser, step by step")
    cmd.add_argument("config", help="scenario TOML file, or a shipped demo's name")
    cmd.add_argument("--port", type=positive, default=8765, help="port to serve on (default 8765)")
    cmd.add_argument("--host", default="127.0.0.1", help="address to listen on (default 127.0.0.1, this machine only)")
    cmd.add_argument(
        "--max-organisations",
        type=positive,
        default=400,
        help="scale larger markets down to this many organisations (default 400)",
    )
    cmd.add_argument("--open", action="store_true", help="open the page in the default web browser")
    cmd.set_defaults(func=cmd_view)
