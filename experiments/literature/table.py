"""Print the README's table from the verdict.json files the scripts wrote.

python experiments/literature/table.py [--results experiments/literature/results]
"""

from __future__ import annotations

import argparse
import json
import sys
from pathlib import Path

ORDER = [
    "bounds",
    "tree_laws",
    "cascade_window",
    "complex_contagion",
    "hub_advantage",
    "influence_max",
    "acceleration_expansion",
    "complete_network_bass",
    "interval_coverage",
    "sobol_errors",
]


def main(argv: list[str] | None = None) -> str:
    p = argparse.ArgumentParser(
        prog="table.py", description="Print the README table from the scripts' verdict.json files."
    )
    p.add_argument(
        "--results",
        default=str(Path(__file__).resolve().parent / "results"),
        help="folder holding one results folder per script (default: experiments/literature/results)",
    )
    args = p.parse_args(argv)
    lines = [
        "| result | source | set-up | womlab (with interval) | verdict | script |",
        "| --- | --- | --- | --- | --- | --- |",
    ]
    for name in ORDER:
        path = Path(args.results) / name / "verdict.json"
        if not path.exists():
            continue
        v = json.loads(path.read_text())
        cells = [v["result"], v["source"], v["setup"], v["womlab"], f"**{v['verdict']}**", f"`{name}.py`"]
        lines.append("| " + " | ".join(c.replace("|", "/") for c in cells) + " |")
    text = "\n".join(lines)
    print(text)
    return text


if __name__ == "__main__":
    main(sys.argv[1:])
