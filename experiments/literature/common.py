"""What every script in experiments/literature shares: its command line, its results folder,
and the one-row verdict each writes beside its table and figure.

Every script takes ``--out`` (default ``out/literature/<script>``) and ``--help``; it writes
``table.csv`` (the numbers), ``figure.png`` and ``verdict.json`` (the result, the source,
the set-up, womlab's number with its interval, and whether womlab reproduces it) into
``--out``, and prints the verdict.
"""

from __future__ import annotations

import argparse
import json
import time
from pathlib import Path
from typing import Any

import pandas as pd
from matplotlib.figure import Figure

from womlab.store import atomic_write, results_folder, versions


def parser(name: str, doc: str) -> argparse.ArgumentParser:
    """The script's argument parser: ``--out`` and whatever the script adds."""
    first = doc.strip().splitlines()[0]
    p = argparse.ArgumentParser(
        prog=f"{name}.py", description=first, epilog="Writes table.csv, figure.png and verdict.json into --out."
    )
    p.add_argument(
        "--out", default=str(Path("out") / "literature" / name), help=f"results folder (default: out/literature/{name})"
    )
    return p


def write(out: str | Path, table: pd.DataFrame, figure: Figure, verdict: dict[str, Any], started: float) -> Path:
    """Write table.csv, figure.png and verdict.json (with versions and wall time) into ``out``."""
    folder = results_folder(out)
    atomic_write(folder / "table.csv", lambda p: table.to_csv(p, index=False, float_format="%.6g"))
    atomic_write(folder / "figure.png", lambda p: figure.savefig(p, dpi=130, format="png"))
    record = {**verdict, "seconds": round(time.perf_counter() - started, 1), "versions": versions()}
    atomic_write(folder / "verdict.json", lambda p: p.write_text(json.dumps(record, indent=2, default=float) + "\n"))
    print(f"{verdict['result']}: {verdict['womlab']} -> {verdict['verdict']}")
    print(f"wrote table.csv, figure.png and verdict.json to {folder}/")
    return folder
