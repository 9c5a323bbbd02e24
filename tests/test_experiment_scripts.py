"""Every experiment script answers --help and writes under out/ unless told otherwise.

A script that wrote into its tracked results/ folder on every run replaced the README's
figures by accident (common practice: generated output goes to an ignored folder, the
published copy is written only when asked).
"""

from __future__ import annotations

import subprocess
import sys
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
DRIVER = """
import contextlib, io, runpy, sys
for path in sys.argv[1:]:
    sys.argv = [path, "--help"]
    text = io.StringIO()
    with contextlib.redirect_stdout(text):
        try:
            runpy.run_path(path, run_name="__main__")
        except SystemExit as exc:
            assert exc.code == 0, path
    print("=====", path)
    print(text.getvalue())
"""


def test_experiment_scripts_take_help_and_out():
    scripts = sorted(str(p) for p in (ROOT / "experiments").glob("*/run.py"))
    assert scripts
    done = subprocess.run(
        [sys.executable, "-c", DRIVER, *scripts], capture_output=True, text=True, timeout=600, cwd=ROOT
    )
    assert done.returncode == 0, done.stderr[-2000:]
    for block in done.stdout.split("=====")[1:]:
        path, _, text = block.strip().partition("\n")
        flat = " ".join(text.split())
        assert "--out OUT" in flat and "(default out/" in flat, path
