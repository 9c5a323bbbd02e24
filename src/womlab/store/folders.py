"""Results folders: where every command's files go, written so that none is ever half-written.

Files are written to a temporary name, flushed to disk (fsync) and renamed into place
(the folder is flushed too, so the rename survives a crash), so an interrupted write
never leaves a half-written file under its real name, and a failure leaves the files
already written intact. :func:`manifest` and :func:`versions` say how a folder was made.
"""

from __future__ import annotations

import os
import platform
import tempfile
from datetime import datetime, timezone
from importlib import metadata
from pathlib import Path
from typing import Any, Callable

from womlab.errors import StoreError

__all__ = ["results_folder", "versions", "atomic_write", "manifest"]

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


def _fsync(path: str | Path, directory: bool = False) -> None:
    fd = os.open(path, os.O_RDONLY | (getattr(os, "O_DIRECTORY", 0) if directory else 0))
    try:
        os.fsync(fd)
    except OSError:  # pragma: no cover - a file system that cannot sync a folder
        if not directory:
            raise
    finally:
        os.close(fd)


def atomic_write(path: Path, write: Callable[[Path], Any]) -> Path:
    """Call ``write(tmp)`` on a temporary file beside ``path``, flush it to disk, then rename it into place."""
    path.parent.mkdir(parents=True, exist_ok=True)
    fd, tmp = tempfile.mkstemp(prefix=f".{path.name}.", suffix=path.suffix, dir=path.parent)
    os.close(fd)
    try:
        write(Path(tmp))
        umask = os.umask(0)
        os.umask(umask)
        os.chmod(tmp, 0o666 & ~umask)  # mkstemp makes 0600; results folders are meant to be shared
        _fsync(tmp)
        os.replace(tmp, path)
    except BaseException:
        Path(tmp).unlink(missing_ok=True)
        raise
    _fsync(path.parent, directory=True)
    return path


def manifest(study: Any, extra: dict | None = None, *, wall_time: float | None = None) -> dict[str, Any]:
    """What a results folder records about how it was made.

    ``study`` is anything with a ``scenario`` and a number of ``replicates`` (a batch, a
    seeding or programme study); ``wall_time`` defaults to its own ``wall_time``. Keys of
    ``extra`` are added last and win.
    """
    wall = getattr(study, "wall_time", 0.0) if wall_time is None else wall_time
    return {
        "scenario": study.scenario.to_dict(),
        "root_seed": study.scenario.seed,
        "replicates": study.replicates,
        "spawn_keys": "SeedSequence(root_seed, spawn_key=(replicate,))",
        "engine": study.scenario.run.engine,
        "wall_time_s": round(wall, 3),
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

