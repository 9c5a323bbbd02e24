"""The results folder of a sweep: Parquet tables that can be resumed.

Layout of a sweep's folder (store format 3)::

    manifest.json     scenario and sweep spec as run, study, outcome columns, root seed, versions,
                      input files and their SHA-256, the specs the folder has grown through, sessions
    points.parquet    one row per point: ``point`` and its axis values (design columns too)
    runs.parquet      one row per run: point, replicate, status, error, the study's outcomes, wall time
    curves.parquet    optional: point, replicate, period, customers, new and satisfied customers
    parts/            runs and curves of finished chunks, before consolidation
    damaged/          files found damaged, set aside (their runs are run again)
    .womlab.lock      the lock a writing process holds (one writer at a time)

The runs table's outcome columns are the study's (``manifest["columns"]``: name and
``int``/``float``), so a folder of the ``programme`` study holds ROI and cost where one
of the ``run`` study holds t50 and the final share. Format 1 folders (before studies)
hold the ``run`` study's columns and are read as such.

How resuming works. The driver writes each finished chunk of runs as one part file,
``parts/runs-<session>-<n>.parquet`` (and ``curves-…`` first, when curves are kept),
under a temporary name, flushed to disk and renamed into place
(:func:`womlab.store.folders.atomic_write`). A run exists once its runs part exists, so
a process killed halfway leaves either a whole part or none: no partial row. On
reopening, the finished runs are those with status ``ok`` in ``runs.parquet`` and the
parts; failed runs are tried again. Reading deduplicates by (point, replicate) — an
``ok`` row wins, otherwise the latest failure — so a part that survives a consolidation
killed before it deleted the parts is harmless. :meth:`ResultsStore.consolidate` lists
the finished parts once, merges exactly those with the final files, sorted by (point,
replicate), flushes them to disk, then removes exactly those parts.

Damage. A part or final file that cannot be read as Parquet (emptied, truncated, random
bytes) or whose columns are not this sweep's is moved to ``damaged/`` and reported in
one line (:attr:`ResultsStore.notices`); its runs are missing and run again. A runs part
and its curves part are set aside together, as are ``runs.parquet`` and ``curves.parquet``.

Company. A writing process holds an exclusive lock on ``.womlab.lock`` (the ``filelock``
library: ``flock`` on POSIX, released by the system if the process dies); a second
process refuses with one line, or waits up to a timeout (:meth:`ResultsStore.locked`).
"""

from __future__ import annotations

import json
import os
from collections.abc import Callable, Iterator
from contextlib import contextmanager
from datetime import datetime, timezone
from pathlib import Path
from typing import Any

import pandas as pd

from womlab.errors import StoreError
from womlab.store.folders import atomic_write, differences, file_sha256  # noqa: F401 - re-exported here too

__all__ = [
    "ResultsStore",
    "RUNS_SCHEMA",
    "CURVES_SCHEMA",
    "STORE_FORMAT",
    "LOCK_NAME",
    "runs_schema",
    "file_sha256",
    "differences",
    "RUN_COLUMNS",
]

STORE_FORMAT = 3  # 3: a programme sweep's acceleration and expansion are whole-life (on a continuation)
LOCK_NAME = ".womlab.lock"

RUN_COLUMNS = (
    ("customers", "int"),
    ("satisfied_customers", "int"),
    ("final_share", "float"),
    ("t10", "float"),
    ("t50", "float"),
    ("t90", "float"),
    ("peak_period", "int"),
    ("peak_new_share", "float"),
)
"""The outcome columns of the ``run`` study: those of every format 1 folder."""


def _pa():  # noqa: ANN202 - pyarrow is an optional dependency ("store" extra)
    try:
        import pyarrow as pa
        import pyarrow.parquet as pq
    except ImportError:  # pragma: no cover - depends on the installation
        raise StoreError("sweep results folders need pyarrow: pip install 'womlab[store]'") from None
    return pa, pq


def runs_schema(columns: Any = RUN_COLUMNS):  # noqa: ANN201 - a pyarrow schema
    """The runs table's schema for outcome ``columns`` (pairs of name and ``"int"``/``"float"``)."""
    pa, _ = _pa()
    kinds = {"int": pa.int64(), "float": pa.float64()}
    fields = [("point", pa.int32()), ("replicate", pa.int32()), ("status", pa.string()), ("error", pa.string())]
    fields += [(str(name), kinds[kind]) for name, kind in columns]
    return pa.schema([*fields, ("wall_time", pa.float64())])


def _curves_schema():  # noqa: ANN202
    pa, _ = _pa()
    return pa.schema(
        [
            ("point", pa.int32()),
            ("replicate", pa.int32()),
            ("period", pa.int32()),
            ("customers", pa.int32()),
            ("new_customers", pa.int32()),
            ("satisfied_customers", pa.int32()),
        ]
    )


def __getattr__(name: str) -> Any:  # RUNS_SCHEMA / CURVES_SCHEMA without importing pyarrow at import
    if name == "RUNS_SCHEMA":
        return runs_schema(RUN_COLUMNS)
    if name == "CURVES_SCHEMA":
        return _curves_schema()
    raise AttributeError(name)


def _now() -> str:
    return datetime.now(timezone.utc).isoformat(timespec="seconds")


class ResultsStore:
    """A sweep's results folder (see the module notes for its layout and resume rules).

    Parameters
    ----------
    path : str or Path
        The folder. Opening does not create it; :meth:`create` does.
    notify : callable, optional
        Called with each one-line notice (a damaged file set aside); notices are also kept
        in :attr:`notices`.

    Examples
    --------
    >>> store = ResultsStore("out/sweep")          # doctest: +SKIP
    >>> store.runs().groupby("point")["final_share"].mean()   # doctest: +SKIP
    """

    def __init__(self, path: str | Path, notify: Callable[[str], None] | None = None) -> None:
        self.path = Path(path)
        self.notify = notify
        self.notices: list[str] = []

    # ------------------------------------------------------------------ files
    @property
    def parts(self) -> Path:
        return self.path / "parts"

    def _file(self, name: str) -> Path:
        return self.path / name

    def exists(self) -> bool:
        """Whether the folder holds a sweep's manifest."""
        return self._file("manifest.json").is_file()

    def manifest(self) -> dict[str, Any]:
        """The folder's manifest; StoreError if it is not a sweep's results folder."""
        p = self._file("manifest.json")
        if not p.is_file():
            raise StoreError(f"{str(self.path)!r} is not a sweep results folder (no manifest.json)")
        try:
            data = json.loads(p.read_text(encoding="utf-8"))
        except (OSError, UnicodeDecodeError, json.JSONDecodeError) as exc:
            raise StoreError(f"{p}: cannot be read as JSON: {exc}") from None
        if not isinstance(data, dict) or data.get("kind") != "sweep":
            raise StoreError(f"{str(self.path)!r} holds the results of a single batch, not of a sweep")
        return data

    def write_manifest(self, data: dict[str, Any]) -> None:
        """Replace the manifest (atomically)."""
        text = json.dumps(data, indent=2) + "\n"
        atomic_write(self._file("manifest.json"), lambda p: p.write_text(text, encoding="utf-8"))

    def columns(self) -> list[tuple[str, str]]:
        """The outcome columns of the runs table: (name, ``int``/``float``)."""
        return [tuple(c) for c in self.manifest().get("columns", RUN_COLUMNS)]

    def schema(self):  # noqa: ANN201 - pyarrow schema
        """The runs table's schema in this folder."""
        return runs_schema(self.columns())

    # ------------------------------------------------------------------ lock
    @contextmanager
    def locked(self, timeout: float = 0.0, *, create: bool = True) -> Iterator[ResultsStore]:
        """Hold the folder's lock: no other process writes it meanwhile.

        Parameters
        ----------
        timeout : float
            Seconds to wait for another process to finish; 0 refuses at once.
        create : bool
            Create the folder if it does not exist (a new sweep).

        Raises
        ------
        StoreError
            The folder is not a folder, cannot be created, or another process holds its
            lock past ``timeout``.
        """
        from filelock import FileLock, Timeout

        p = self.path
        if p.exists() and not p.is_dir():
            raise StoreError(f"--out {str(p)!r} exists and is not a folder")
        if not p.is_dir():
            if not create:
                raise StoreError(f"{str(p)!r} is not a sweep results folder (no such folder)")
            try:
                p.mkdir(parents=True, exist_ok=True)
            except OSError as exc:
                raise StoreError(f"--out {str(p)!r} cannot be created: {exc}") from None
        lock = FileLock(str(p / LOCK_NAME), timeout=timeout)
        try:
            lock.acquire()
        except Timeout:
            waited = f" within {timeout:g} s" if timeout > 0 else ""
            raise StoreError(
                f"results folder {str(p)!r} is being written by another womlab process{waited}; "
                "wait for it to finish (or give --wait SECONDS), or use another --out folder"
            ) from None
        except OSError as exc:
            raise StoreError(f"results folder {str(p)!r}: cannot take its lock: {exc}") from None
        try:
            yield self
        finally:
            lock.release()

    # ------------------------------------------------------------------ opening
    def check_usable(self) -> None:
        """Refuse, touching nothing, a path that is a file or a folder of other files (before any lock file is made)."""
        p = self.path
        if p.exists() and not p.is_dir():
            raise StoreError(f"--out {str(p)!r} exists and is not a folder")
        if p.is_dir() and not self.exists() and any(f.name != LOCK_NAME for f in p.iterdir()):
            if self._lock_held():  # another process is starting a sweep here: locked() says so in one line
                return
            raise StoreError(f"--out {str(p)!r} is not empty and holds no sweep manifest; use a new or empty folder")

    def _lock_held(self) -> bool:
        """Whether another process holds the folder's lock now (a sweep being started or run)."""
        from filelock import FileLock, Timeout

        if not (self.path / LOCK_NAME).exists():
            return False
        lock = FileLock(str(self.path / LOCK_NAME), timeout=0)
        try:
            lock.acquire()
        except (Timeout, OSError):
            return True
        lock.release()
        return False

    def create(self, manifest: dict[str, Any], points: pd.DataFrame) -> None:
        """Start a new sweep in the (empty, locked) folder: ``points.parquet``, then the manifest.

        Raises
        ------
        StoreError
            If the folder holds files that are not a sweep's.
        """
        p = self.path
        other = [f.name for f in p.iterdir() if f.name != LOCK_NAME] if p.is_dir() else []
        if other:
            raise StoreError(f"--out {str(p)!r} is not empty and holds no sweep manifest; use a new or empty folder")
        try:
            self.parts.mkdir(parents=True, exist_ok=True)
        except OSError as exc:
            raise StoreError(f"--out {str(p)!r} cannot be created: {exc}") from None
        self.write_points(points)
        self.write_manifest({**manifest, "started": _now(), "sessions": []})

    def write_points(self, points: pd.DataFrame) -> None:
        """Write ``points.parquet`` (atomically)."""
        pa, pq = _pa()
        table = pa.Table.from_pandas(points, preserve_index=False)
        atomic_write(self._file("points.parquet"), lambda f: pq.write_table(table, f))

    def read_points(self) -> pd.DataFrame | None:
        """The points table, or None when it is missing or damaged (a damaged one is set aside)."""
        _, pq = _pa()
        p = self._file("points.parquet")
        if not p.is_file():
            return None
        try:
            frame = pq.read_table(p).to_pandas()
            if "point" not in frame.columns:
                raise ValueError("it has no 'point' column")
            return frame
        except Exception as exc:  # noqa: BLE001 - any unreadable file is set aside, never a traceback
            self._set_aside([p], _reason(exc), "the points are rebuilt from the manifest")
            return None

    def tidy(self) -> None:
        """Remove temporary files of killed writes and curves parts whose runs part never landed,
        and set aside damaged files (see the module notes)."""
        self.parts.mkdir(exist_ok=True)
        for tmp in list(self.parts.glob(".*")) + list(self.path.glob(".*.parquet")) + list(self.path.glob(".*.json")):
            tmp.unlink(missing_ok=True)
        runs = {f.name[len("runs-") :] for f in self.parts.glob("runs-*.parquet")}
        for f in self.parts.glob("curves-*.parquet"):
            if f.name[len("curves-") :] not in runs:
                f.unlink(missing_ok=True)
        self.verify()

    def verify(self) -> None:
        """Check that every runs and curves file reads as Parquet with this sweep's columns; set aside the others."""
        for kind in ("runs", "curves"):
            for f in self._files(kind):
                self._load(f, kind)

    # ------------------------------------------------------------------ damage
    def _partner(self, f: Path) -> Path:
        if f.parent == self.parts:
            kind, _, rest = f.name.partition("-")
            return self.parts / f"{'curves' if kind == 'runs' else 'runs'}-{rest}"
        return self._file("curves.parquet" if f.name == "runs.parquet" else "runs.parquet")

    def _set_aside(self, files: list[Path], reason: str, then: str = "its runs will be run again") -> None:
        aside = self.path / "damaged"
        aside.mkdir(exist_ok=True)
        moved = []
        for f in files:
            if not f.exists():
                continue
            target = aside / f.name
            n = 1
            while target.exists():
                target = aside / f"{f.name}.{n}"
                n += 1
            os.replace(f, target)
            moved.append(f"{f.relative_to(self.path)} as {target.relative_to(self.path)}")
        if moved:
            message = f"{self.path}: set aside damaged {moved[0]} ({reason})"
            if len(moved) > 1:
                message += f" with {', '.join(moved[1:])}"
            message += f"; {then}"
            self.notices.append(message)
            if self.notify is not None:
                self.notify(message)

    def _load(self, f: Path, kind: str):  # noqa: ANN202 - pyarrow table or None
        """Read one runs/curves file, checked against this sweep's columns; None if it vanished or was set aside."""
        _, pq = _pa()
        schema = self.schema() if kind == "runs" else _curves_schema()
        try:
            table = pq.read_table(f)
            if table.schema.names != schema.names:
                raise ValueError(f"its columns are not this sweep's: {', '.join(table.schema.names[:8])}")
            return table.cast(schema)
        except FileNotFoundError:
            return None
        except Exception as exc:  # noqa: BLE001 - any unreadable file is set aside, never a traceback
            self._set_aside([f, self._partner(f)], _reason(exc))
            return None

    # ------------------------------------------------------------------ sessions
    def begin_session(self, info: dict[str, Any]) -> str:
        """Record the start of a (resumed) execution; returns the session's name for part files."""
        data = self.manifest()
        name = datetime.now(timezone.utc).strftime("%Y%m%dT%H%M%S%fZ") + f"-{os.getpid()}"
        data.setdefault("sessions", []).append({"session": name, "started": _now(), **info})
        self.write_manifest(data)
        return name

    def end_session(self, name: str, info: dict[str, Any]) -> None:
        data = self.manifest()
        for s in data.get("sessions", []):
            if s.get("session") == name:
                s.update({"finished": _now(), **info})
        self.write_manifest(data)

    # ------------------------------------------------------------------ writing
    def write_part(self, session: str, number: int, runs, curves=None) -> None:  # noqa: ANN001 - pyarrow tables
        """Write one chunk's runs (and curves) as part files, curves first, each flushed and renamed into place."""
        _, pq = _pa()
        stem = f"{session}-{number:06d}.parquet"
        if curves is not None:
            atomic_write(self.parts / f"curves-{stem}", lambda f: pq.write_table(curves, f))
        atomic_write(self.parts / f"runs-{stem}", lambda f: pq.write_table(runs, f))

    # ------------------------------------------------------------------ reading
    def points(self) -> pd.DataFrame:
        """One row per point: ``point`` and its axis values."""
        points = self.read_points()
        if points is None:
            raise StoreError(f"{str(self.path)!r} has no readable points.parquet; rerun the sweep to rebuild it")
        return points

    def _files(self, kind: str) -> list[Path]:
        """The finished files of ``kind`` (runs or curves) now in the folder: the final file, then the parts."""
        final = self._file(f"{kind}.parquet")
        files = [final] if final.is_file() else []
        return files + (sorted(self.parts.glob(f"{kind}-*.parquet")) if self.parts.is_dir() else [])

    def _read(self, kind: str, files: list[Path] | None = None):  # noqa: ANN202
        pa, _ = _pa()
        schema = self.schema() if kind == "runs" else _curves_schema()
        files = self._files(kind) if files is None else files
        tables = [t for t in (self._load(f, kind) for f in files) if t is not None]
        return pa.concat_tables(tables) if tables else schema.empty_table()

    def _runs_table(self, files: list[Path] | None = None):  # noqa: ANN202
        table = self._read("runs", files)
        keys = table.select(["point", "replicate", "status"]).to_pandas()
        keys["row"] = range(len(keys))
        ok = keys[keys["status"] == "ok"].drop_duplicates(["point", "replicate"], keep="first")
        bad = keys[keys["status"] != "ok"].drop_duplicates(["point", "replicate"], keep="last")
        done = pd.MultiIndex.from_frame(ok[["point", "replicate"]])
        bad = bad[~pd.MultiIndex.from_frame(bad[["point", "replicate"]]).isin(done)]
        keep = pd.concat([ok, bad]).sort_values(["point", "replicate"], kind="stable")
        return table.take(keep["row"].to_numpy())

    def _curves_table(self, files: list[Path] | None = None):  # noqa: ANN202
        table = self._read("curves", files)
        keys = table.select(["point", "replicate", "period"]).to_pandas()
        keys["row"] = range(len(keys))
        keep = keys.drop_duplicates(["point", "replicate", "period"], keep="first")
        keep = keep.sort_values(["point", "replicate", "period"], kind="stable")
        return table.take(keep["row"].to_numpy())

    def runs(self) -> pd.DataFrame:
        """One row per run, sorted by (point, replicate); nullable integer outcomes."""
        return self._runs_table().to_pandas(types_mapper=_nullable)

    def curves(self) -> pd.DataFrame | None:
        """Per-period curves of the finished runs, or None if the sweep kept none."""
        if not self.manifest().get("identity", {}).get("curves"):
            return None
        return self._curves_table().to_pandas()

    def finished(self) -> set[tuple[int, int]]:
        """(point, replicate) of the runs that finished with status ``ok``."""
        t = self._read("runs").select(["point", "replicate", "status"]).to_pandas()
        t = t[t["status"] == "ok"]
        return set(zip(t["point"].tolist(), t["replicate"].tolist()))

    # ------------------------------------------------------------------ consolidation
    def consolidate(self) -> None:
        """Merge ``runs.parquet``/``curves.parquet`` and the finished parts into the final files, then drop
        exactly those parts (listed once, before reading: a part that lands meanwhile is kept for later)."""
        _, pq = _pa()
        runs_files, curves_files = self._files("runs"), self._files("curves")
        curves_kept = bool(self.manifest().get("identity", {}).get("curves"))
        runs = self._runs_table(runs_files)
        curves = self._curves_table(curves_files) if curves_kept else None
        if curves is not None:
            atomic_write(self._file("curves.parquet"), lambda f: pq.write_table(curves, f, compression="zstd"))
        atomic_write(self._file("runs.parquet"), lambda f: pq.write_table(runs, f))
        for f in runs_files + curves_files:
            if f.parent == self.parts:
                f.unlink(missing_ok=True)


def _reason(exc: Exception) -> str:
    text = str(exc).strip().splitlines()[0] if str(exc).strip() else type(exc).__name__
    return text[:160]


def _nullable(t):  # noqa: ANN001, ANN202 - pyarrow type -> pandas nullable dtype
    import pyarrow as pa

    return {pa.int32(): pd.Int32Dtype(), pa.int64(): pd.Int64Dtype()}.get(t)
