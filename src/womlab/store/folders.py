"""Results folders: where every command's files go, written so that a folder is never a mix.

:class:`FolderWriter` is how a command writes its folder. It checks the folder before any
work (:func:`check_results_folder`), writes every file into a hidden staging folder inside
it, and only when all are written moves them into place: first it removes the old
manifest (from then on the folder does not claim to be complete), then moves each new
file in, removes the files of the previous results that this one did not rewrite, and
writes ``manifest.json`` last. A failure before the move (disk full, a file-size limit,
an error drawing a figure) leaves the folder exactly as it was.

A folder is refused, with one line and before any work, when it

* exists and is not a folder, or cannot be created;
* holds a sweep's results (a sweep folder belongs to ``womlab sweep``);
* holds another command's or another scenario's results, unless ``force``;
* holds a file the command would write that womlab did not write (a user's own
  ``curves.csv``): womlab never touches files it did not create, ``force`` or not.

The manifest lists the files the command wrote (``files``), so the next command knows
which are womlab's. :func:`manifest` says how a folder was made; :func:`versions` and
:func:`machine` what it was made with.

Every file is flushed to disk (fsync) before it is renamed into place, and the folder after.
"""

from __future__ import annotations

import hashlib
import json
import os
import platform
import shutil
import subprocess
import tempfile
from collections.abc import Callable, Iterable
from datetime import datetime, timezone
from importlib import metadata
from pathlib import Path
from typing import Any

from womlab.errors import StoreError

__all__ = [
    "results_folder",
    "versions",
    "machine",
    "source_commit",
    "file_sha256",
    "atomic_write",
    "manifest",
    "check_results_folder",
    "FolderWriter",
    "MANIFEST",
    "TIMING_FIELDS",
    "differences",
]

_LIBRARIES = (
    "womlab",
    "numpy",
    "numba",
    "scipy",
    "pandas",
    "networkx",
    "mesa",
    "matplotlib",
    "joblib",
    "pyarrow",
    "dask",
    "distributed",
    "tqdm",
)

#: The one manifest name of every results folder.
MANIFEST = "manifest.json"
#: Manifest fields that differ from one run of the same command to the next (when and how long).
TIMING_FIELDS = ("wall_time_s", "written")
_STAGING = ".womlab-writing-"
_MOVING = ".womlab-moving.json"  # names being moved in, so a crash mid-move leaves them known as womlab's


def versions() -> dict[str, str]:
    """Versions of Python, womlab and the libraries it runs on."""
    out = {"python": platform.python_version()}
    for name in _LIBRARIES:
        try:
            out[name] = metadata.version(name)
        except metadata.PackageNotFoundError:
            out[name] = "not installed"
    return out


def source_commit() -> dict[str, Any] | None:
    """The git commit womlab's own source is at, and whether it has changes, or None.

    Asked of the folder the package is imported from, so it is found for a checkout
    installed in place (``pip install -e``) and is None for an installed package.
    """
    here = Path(__file__).resolve().parent
    try:
        commit = subprocess.run(
            ["git", "-C", str(here), "rev-parse", "HEAD"], capture_output=True, text=True, timeout=10
        )
        if commit.returncode != 0:
            return None
        status = subprocess.run(
            ["git", "-C", str(here), "status", "--porcelain", "--untracked-files=no"],
            capture_output=True,
            text=True,
            timeout=10,
        )
    except (OSError, subprocess.SubprocessError):
        return None
    return {"commit": commit.stdout.strip(), "modified": bool(status.stdout.strip())}


def machine() -> dict[str, Any]:
    """The operating system and CPU of this machine."""
    cpu = platform.processor() or platform.machine()
    try:
        for line in Path("/proc/cpuinfo").read_text(encoding="utf-8", errors="replace").splitlines():
            if line.startswith("model name"):
                cpu = line.split(":", 1)[1].strip()
                break
    except OSError:
        pass
    try:
        cores = len(os.sched_getaffinity(0))
    except (AttributeError, OSError):  # pragma: no cover - not Linux
        cores = os.cpu_count() or 1
    return {"os": platform.platform(), "cpu": cpu, "cores": cores}


def file_sha256(path: str | Path) -> str:
    """SHA-256 of a file's bytes (hex)."""
    digest = hashlib.sha256()
    with open(path, "rb") as fh:
        for block in iter(lambda: fh.read(1 << 20), b""):
            digest.update(block)
    return digest.hexdigest()


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
        _shareable(Path(tmp))
        _fsync(tmp)
        os.replace(tmp, path)
    except BaseException:
        Path(tmp).unlink(missing_ok=True)
        raise
    _fsync(path.parent, directory=True)
    return path


def _shareable(path: Path) -> None:
    umask = os.umask(0)
    os.umask(umask)
    os.chmod(path, 0o666 & ~umask)  # mkstemp makes 0600; results folders are meant to be shared


def manifest(
    study: Any,
    extra: dict | None = None,
    *,
    wall_time: float | None = None,
    command: str | None = None,
    command_line: list[str] | None = None,
    sections: Iterable[str] | None = None,
) -> dict[str, Any]:
    """What a results folder records about how it was made, enough to make it again.

    ``study`` is anything with a ``scenario`` and a number of ``replicates`` (a batch, a
    seeding or programme study); ``wall_time`` defaults to its own ``wall_time``. The
    manifest holds the command and its command line, the scenario as run (only
    ``sections``, input files by the path the user gave), the scenario file and every
    input file with its SHA-256, the root seed and spawn keys, the womlab, Python and
    library versions, womlab's git commit where there is one, the OS and CPU, and the
    wall time. Keys of ``extra`` are added last and win.
    """
    s = study.scenario
    wall = getattr(study, "wall_time", 0.0) if wall_time is None else wall_time
    inputs = []
    for item in s.inputs():
        entry = {"field": item["field"], "path": item["path"]}
        try:
            entry["sha256"] = file_sha256(item["resolved"])
        except OSError:
            entry["sha256"] = None
        inputs.append(entry)
    info: dict[str, Any] = {
        "command": command,
        "command_line": command_line,
        "scenario": s.to_dict(given_paths=True, sections=sections),
        "scenario_file": s.source,
        "inputs": inputs,
        "root_seed": s.seed,
        "replicates": study.replicates,
        "spawn_keys": "SeedSequence(root_seed, spawn_key=(replicate,))",
        "engine": s.run.engine,
        "wall_time_s": round(wall, 3),
        "written": datetime.now(timezone.utc).isoformat(timespec="seconds"),
        "versions": versions(),
        "source": source_commit(),
        "machine": machine(),
    }
    info.update(extra or {})
    return info


def results_folder(out: str | Path) -> Path:
    """Create the results folder ``out`` if needed and return it as a Path.

    Raises
    ------
    StoreError
        If ``out`` exists and is not a folder, or cannot be created; nothing in it is touched.
    """
    out = _usable(Path(out))
    try:
        out.mkdir(parents=True, exist_ok=True)
    except OSError as exc:
        raise StoreError(f"--out {str(out)!r} cannot be created: {exc.strerror}") from None
    return out


def _usable(out: Path) -> Path:
    """``out`` if it is a folder or could be created as one (nothing is created)."""
    if out.exists() and not out.is_dir():
        raise StoreError(f"--out {str(out)!r} exists and is not a folder")
    if out.is_dir():
        if not os.access(out, os.W_OK | os.X_OK):
            raise StoreError(f"--out {str(out)!r} is a folder this user cannot write to")
        return out
    parent = out.parent
    while not parent.exists() and parent != parent.parent:
        parent = parent.parent
    if not parent.is_dir():
        raise StoreError(f"--out {str(out)!r} cannot be created: {str(parent)!r} is a file, not a folder")
    if not os.access(parent, os.W_OK | os.X_OK):
        raise StoreError(f"--out {str(out)!r} cannot be created: this user cannot write to {str(parent)!r}")
    return out


def _read_manifest(out: Path) -> dict[str, Any] | None:
    path = out / MANIFEST
    if not path.exists():
        return None
    try:
        data = json.loads(path.read_text(encoding="utf-8"))
    except (OSError, UnicodeDecodeError, json.JSONDecodeError):
        raise StoreError(f"--out {str(out)!r} holds a {MANIFEST} womlab cannot read; choose another folder") from None
    if not isinstance(data, dict):
        raise StoreError(f"--out {str(out)!r} holds a {MANIFEST} womlab did not write; choose another folder")
    return data


def _is_sweep(out: Path, data: dict[str, Any] | None) -> bool:
    if data is not None and ("sessions" in data or "sweep" in data.get("identity", {})):
        return True
    return (out / "runs.parquet").exists() or (out / "points.parquet").exists() or (out / "parts").is_dir()


def _ours(out: Path, data: dict[str, Any] | None) -> set[str]:
    """The files in ``out`` that womlab wrote: the manifest's list, and any a crash left mid-move."""
    names = set()
    if data is not None:
        names.add(MANIFEST)
        names.update(n for n in data.get("files", []) if isinstance(n, str) and "/" not in n)
    moving = out / _MOVING
    if moving.exists():
        try:
            names.update(
                n for n in json.loads(moving.read_text(encoding="utf-8")) if isinstance(n, str) and "/" not in n
            )
        except (OSError, UnicodeDecodeError, json.JSONDecodeError, TypeError):
            pass
    return names


def _flatten(value: Any, prefix: str = "") -> dict[str, Any]:
    if isinstance(value, dict):
        out: dict[str, Any] = {}
        for k, v in value.items():
            out.update(_flatten(v, f"{prefix}{k}."))
        return out or {prefix[:-1]: {}}
    return {prefix[:-1]: value}


def differences(there: dict, now: dict, limit: int = 6) -> list[str]:
    """``key: <there> there, <now> now`` for every dotted key whose value differs (at most ``limit``)."""
    a, b = _flatten(there), _flatten(now)
    missing = object()
    out = []
    for key in sorted(set(a) | set(b)):
        va, vb = a.get(key, missing), b.get(key, missing)
        if va != vb:
            show = lambda v: "(absent)" if v is missing else json.dumps(v)  # noqa: E731
            out.append(f"{key}: {show(va)} there, {show(vb)} now")
    return out[:limit] + ([f"... and {len(out) - limit} more"] if len(out) > limit else [])


def check_results_folder(
    out: str | Path, command: str, identity: dict[str, Any], names: Iterable[str], *, force: bool = False
) -> Path:
    """Check, before any work, that ``command`` may write the files ``names`` into ``out``.

    ``identity`` is what must match for a folder's results to be replaced without
    ``force`` (the scenario as it bears on the results). Nothing is created or changed.

    Raises
    ------
    StoreError
        One line naming the folder and what is in the way (see the module notes).
    """
    out = _usable(Path(out))
    if not out.is_dir():
        return out
    data = _read_manifest(out)
    if _is_sweep(out, data):
        raise StoreError(
            f"--out {str(out)!r} holds a sweep's results (womlab sweep); choose another folder for womlab {command}"
        )
    ours = _ours(out, data)
    theirs = sorted(n for n in set(names) | {MANIFEST} if (out / n).exists() and n not in ours)
    if theirs:
        raise StoreError(
            f"--out {str(out)!r} holds {', '.join(theirs)}, which womlab did not write; choose another "
            "folder (womlab never replaces files it did not make)"
        )
    if data is None or force:
        return out
    if data.get("command") != command:
        made_by = f"womlab {data['command']}" if data.get("command") else "an earlier womlab"
        raise StoreError(
            f"--out {str(out)!r} holds the results of {made_by}; use --force to replace them with "
            f"womlab {command}'s, or choose another folder"
        )
    if data.get("identity") != identity:
        diff = differences(data.get("identity") or {}, identity, limit=4)
        raise StoreError(
            f"--out {str(out)!r} holds the results of another scenario ({'; '.join(diff)}); use "
            "--force to replace them, or choose another folder"
        )
    return out


class FolderWriter:
    """Write a command's results folder all at once (see the module notes).

    Examples
    --------
    >>> import tempfile, pathlib
    >>> out = pathlib.Path(tempfile.mkdtemp()) / "results"
    >>> with FolderWriter(out, "run", {"name": "x"}, ["a.txt"]) as folder:
    ...     folder.write("a.txt", lambda p: p.write_text("hello"))
    ...     paths = folder.commit({"command": "run"})
    >>> sorted(p.name for p in paths)
    ['a.txt', 'manifest.json']
    """

    def __init__(
        self, out: str | Path, command: str, identity: dict[str, Any], names: Iterable[str], *, force: bool = False
    ) -> None:
        self.out = check_results_folder(out, command, identity, names, force=force)
        self.command = command
        self.identity = identity
        previous = _read_manifest(self.out) if self.out.is_dir() else None
        self._previous = sorted(_ours(self.out, previous) - {MANIFEST}) if self.out.is_dir() else []
        self._created = not self.out.exists()
        self._stage: Path | None = None
        self._files: list[str] = []

    def __enter__(self) -> FolderWriter:
        try:
            self.out.mkdir(parents=True, exist_ok=True)
            self._stage = Path(tempfile.mkdtemp(prefix=_STAGING, dir=self.out))
        except OSError as exc:
            raise StoreError(f"--out {str(self.out)!r} cannot be written: {exc.strerror}") from None
        return self

    def write(self, name: str, write: Callable[[Path], Any]) -> None:
        """Write the file ``name`` with ``write(path)`` into the staging folder."""
        if self._stage is None:
            raise RuntimeError("FolderWriter.write outside its with-block")
        try:
            write(self._stage / name)
        except OSError as exc:
            raise StoreError(
                f"--out {str(self.out)!r}: {name} could not be written ({exc.strerror or exc}); the folder is as it was"
            ) from None
        self._files.append(name)

    def commit(self, info: dict[str, Any]) -> list[Path]:
        """Move every file in and write the manifest ``info`` last; returns the paths written."""
        if self._stage is None:
            raise RuntimeError("FolderWriter.commit outside its with-block")
        stage = self._stage
        info = {**info, "command": self.command, "identity": self.identity, "files": sorted({*self._files, MANIFEST})}
        try:
            text = json.dumps(info, indent=2, default=_plain) + "\n"
            (stage / MANIFEST).write_text(text, encoding="utf-8")
            for name in [*self._files, MANIFEST]:
                _shareable(stage / name)
                _fsync(stage / name)
            (self.out / _MOVING).write_text(json.dumps(sorted({*self._files, *self._previous})), encoding="utf-8")
            (self.out / MANIFEST).unlink(missing_ok=True)
            for name in self._files:
                os.replace(stage / name, self.out / name)
            for name in self._previous:
                if name not in self._files:
                    (self.out / name).unlink(missing_ok=True)
            os.replace(stage / MANIFEST, self.out / MANIFEST)
            (self.out / _MOVING).unlink(missing_ok=True)
            _fsync(self.out, directory=True)
        except OSError as exc:
            raise StoreError(f"--out {str(self.out)!r} could not be written: {exc.strerror}") from None
        return [self.out / name for name in [*self._files, MANIFEST]]

    def __exit__(self, kind: object, exc: object, tb: object) -> None:
        if self._stage is not None:
            shutil.rmtree(self._stage, ignore_errors=True)
            self._stage = None
        if kind is not None and self._created:
            try:
                self.out.rmdir()  # only if still empty: nothing of ours is left
            except OSError:
                pass


def _plain(value: Any) -> Any:
    """JSON form of numpy scalars and other plain numbers."""
    try:
        return float(value)
    except (TypeError, ValueError):
        return str(value)
