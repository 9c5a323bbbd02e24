"""Writing a batch's results folder: CSV tables, the figure and a manifest.

Files are written to a temporary name and renamed into place, so an interrupted write
never leaves a half-written file under its real name, and a failure leaves the files
already written intact.
"""

from __future__ import annotations

import json
import os
import platform
import tempfile
from datetime import datetime, timezone
from importlib import metadata
from pathlib import Path
from typing import Any, Callable

from .errors import StoreError

__all__ = ["results_folder", "save_batch", "save_programme", "versions", "atomic_write"]

_LIBRARIES = ("womlab", "numpy", "scipy", "pandas", "networkx", "mesa", "matplotlib", "joblib",
              "pyarrow", "dask", "distributed", "tqdm")


def versions() -> dict[str, str]:
    """Versions of Python, womlab and the libraries it runs on."""
    out = {"python": platform.python_version()}
    for name in _LIBRARIES:
        try:
            out[name] = metadata.version(name)
        except metadata.PackageNotFoundError:
            out[name] = "not installed"
    return out


def atomic_write(path: Path, write: Callable[[Path], Any]) -> Path:
    """Call ``write(tmp)`` on a temporary file beside ``path``, then rename it into place."""
    path.parent.mkdir(parents=True, exist_ok=True)
    fd, tmp = tempfile.mkstemp(prefix=f".{path.name}.", suffix=path.suffix, dir=path.parent)
    os.close(fd)
    try:
        write(Path(tmp))
        umask = os.umask(0)
        os.umask(umask)
        os.chmod(tmp, 0o666 & ~umask)  # mkstemp makes 0600; results folders are meant to be shared
        os.replace(tmp, path)
    except BaseException:
        Path(tmp).unlink(missing_ok=True)
        raise
    return path


def manifest(batch, extra: dict | None = None) -> dict[str, Any]:  # noqa: ANN001 - Batch
    """What a results folder records about how it was made."""
    return {
        "scenario": batch.scenario.to_dict(),
        "root_seed": batch.scenario.seed,
        "replicates": batch.replicates,
        "spawn_keys": "SeedSequence(root_seed, spawn_key=(replicate,))",
        "engine": batch.scenario.run.engine,
        "wall_time_s": round(batch.wall_time, 3),
        "written": datetime.now(timezone.utc).isoformat(timespec="seconds"),
        "versions": versions(),
        **(extra or {}),
    }


def results_folder(out: str | Path) -> Path:
    """Create the results folder ``out`` if needed and return it as a Path.

    Raises
    ------
    StoreError
        If ``out`` exists and is not a folder, or cannot be created; nothing in it is touched.
    """
    out = Path(out)
    if out.exists() and not out.is_dir():
        raise StoreError(f"--out {str(out)!r} exists and is not a folder")
    try:
        out.mkdir(parents=True, exist_ok=True)
    except OSError as exc:
        raise StoreError(f"--out {str(out)!r} cannot be created: {exc}") from None
    return out


def save_batch(batch, out: str | Path, *, figure: bool = True) -> list[Path]:  # noqa: ANN001 - Batch
    """Write ``curves.csv``, ``summary.csv``, ``metrics.csv``, ``adoption.png`` and ``manifest.json`` into ``out``.

    Returns the paths written.

    Raises
    ------
    StoreError
        If ``out`` exists and is not a folder, or cannot be written.
    """
    out = results_folder(out)
    written = [
        atomic_write(out / "curves.csv", lambda p: batch.curves().to_csv(p, index=False)),
        atomic_write(out / "summary.csv", lambda p: batch.summary().to_csv(p, index=False, float_format="%.6g")),
        atomic_write(out / "metrics.csv", lambda p: batch.metrics().to_csv(p, index=False, float_format="%.6g")),
    ]
    if figure:
        from .plots import adoption_figure

        fig = adoption_figure(batch)
        written.append(atomic_write(out / "adoption.png", lambda p: fig.savefig(p, dpi=130, format="png")))
    text = json.dumps(manifest(batch), indent=2)
    written.append(atomic_write(out / "manifest.json", lambda p: p.write_text(text + "\n", encoding="utf-8")))
    return written


def save_programme(study, out: str | Path, *, figure: bool = True, wall_time: float = 0.0) -> list[Path]:  # noqa: ANN001
    """Write a referral programme study's results folder.

    Files: ``programme_summary.csv`` (outcome, estimate, 95 % interval),
    ``programme_runs.csv`` (one row per replicate), ``programme_curves.csv`` (baseline and
    programme share per period), ``programme_cumulative.csv`` (cumulative cost and
    incremental value per period), ``referral_tree.csv`` (tree statistics, baseline beside
    programme), ``programme.png``, ``referral_tree.png`` and ``manifest.json``.

    Raises
    ------
    StoreError
        If ``out`` exists and is not a folder, or cannot be created.
    """
    out = results_folder(out)
    tables = {
        "programme_summary.csv": study.summary(),
        "programme_runs.csv": study.per_replicate(),
        "programme_curves.csv": study.curves(),
        "programme_cumulative.csv": study.cumulative(),
        "referral_tree.csv": study.tree(),
    }
    written = [
        atomic_write(out / name, lambda p, t=table: t.to_csv(p, index=False, float_format="%.6g"))
        for name, table in tables.items()
    ]
    if figure:
        from .plots import programme_figure, referral_tree_figure

        for name, fig in (("programme.png", programme_figure(study)), ("referral_tree.png", referral_tree_figure(study))):
            written.append(atomic_write(out / name, lambda p, f=fig: f.savefig(p, dpi=130, format="png")))
    info = {
        "scenario": study.scenario.to_dict(),
        "root_seed": study.scenario.seed,
        "replicates": study.replicates,
        "spawn_keys": "SeedSequence(root_seed, spawn_key=(replicate,)); baseline and programme paired",
        "engine": study.scenario.run.engine,
        "wall_time_s": round(wall_time, 3),
        "written": datetime.now(timezone.utc).isoformat(timespec="seconds"),
        "versions": versions(),
    }
    text = json.dumps(info, indent=2)
    written.append(atomic_write(out / "manifest.json", lambda p: p.write_text(text + "\n", encoding="utf-8")))
    return written
