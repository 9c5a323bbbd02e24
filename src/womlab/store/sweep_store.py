"""The results folder of a sweep: Parquet tables that can be resumed.

Layout of a sweep's folder::

    manifest.json     scenario and sweep spec as run, root seed, versions, start time, sessions
    points.parquet    one row per point: ``point`` and its axis values (design columns too)
    runs.parquet      one row per run: point, replicate, status, error, outcomes, wall time
    curves.parquet    optional: point, replicate, period, customers, new and satisfied customers
    parts/            runs and curves of finished chunks, before consolidation

How resuming works. The driver writes each finished chunk of runs as one part file,
``parts/runs-<session>-<n>.parquet`` (and ``curves-…`` first, when curves are kept),
under a temporary name renamed into place (:func:`womlab.store.folders.atomic_write`). A run
exists once its runs part exists, so a process killed halfway leaves either a whole
part or none: no partial row. On reopening, the finished runs are those with status
``ok`` in ``runs.parquet`` and the parts; failed runs are tried again. Reading
deduplicates by (point, replicate) — an ``ok`` row wins, otherwise the latest failure —
so a part that survives a consolidation killed before it deleted the parts is harmless.
:meth:`ResultsStore.consolidate` merges everything into the final files, sorted by
(point, replicate), then removes the parts; a later resume reads the final files.

A folder made by a different scenario or sweep spec (anything but ``run.jobs``) is
refused with :class:`~womlab.errors.StoreError` naming what differs.
"""

from __future__ import annotations

import json
import os
from datetime import datetime, timezone
from pathlib import Path
from typing import Any

import pandas as pd

from womlab.errors import StoreError
from womlab.store.folders import atomic_write

__all__ = ["ResultsStore", "RUNS_SCHEMA", "CURVES_SCHEMA", "STORE_FORMAT"]

STORE_FORMAT = 1


def _pa():  # noqa: ANN202 - pyarrow is an optional dependency ("store" extra)
    try:
        import pyarrow as pa
        import pyarrow.parquet as pq
    except ImportError:  # pragma: no cover - depends on the installation
        raise StoreError("sweep results folders need pyarrow: pip install 'womlab[store]'") from None
    return pa, pq


def _schemas():  # noqa: ANN202
    pa, _ = _pa()
    runs = pa.schema([
        ("point", pa.int32()), ("replicate", pa.int32()), ("status", pa.string()), ("error", pa.string()),
        ("customers", pa.int64()), ("satisfied_customers", pa.int64()), ("final_share", pa.float64()),
        ("t10", pa.float64()), ("t50", pa.float64()), ("t90", pa.float64()), ("peak_period", pa.int32()),
        ("peak_new_share", pa.float64()), ("wall_time", pa.float64()),
    ])
    curves = pa.schema([
        ("point", pa.int32()), ("replicate", pa.int32()), ("period", pa.int32()),
        ("customers", pa.int32()), ("new_customers", pa.int32()), ("satisfied_customers", pa.int32()),
    ])
    return runs, curves


def __getattr__(name: str) -> Any:  # RUNS_SCHEMA / CURVES_SCHEMA without importing pyarrow at import
    if name == "RUNS_SCHEMA":
        return _schemas()[0]
    if name == "CURVES_SCHEMA":
        return _schemas()[1]
    raise AttributeError(name)


def _flatten(value: Any, prefix: str = "") -> dict[str, Any]:
    if isinstance(value, dict):
        out: dict[str, Any] = {}
        for k, v in value.items():
            out.update(_flatten(v, f"{prefix}{k}."))
        return out or {prefix[:-1]: {}}
    return {prefix[:-1]: value}


def _differences(there: dict, now: dict, limit: int = 6) -> list[str]:
    a, b = _flatten(there), _flatten(now)
    missing = object()
    out = []
    for key in sorted(set(a) | set(b)):
        va, vb = a.get(key, missing), b.get(key, missing)
        if va != vb:
            show = lambda v: "(absent)" if v is missing else json.dumps(v)  # noqa: E731
            out.append(f"{key}: {show(va)} there, {show(vb)} now")
    return out[:limit] + ([f"... and {len(out) - limit} more"] if len(out) > limit else [])


def _now() -> str:
    return datetime.now(timezone.utc).isoformat(timespec="seconds")


class ResultsStore:
    """A sweep's results folder (see the module notes for its layout and resume rules).

    Parameters
    ----------
    path : str or Path
        The folder. Opening does not create it; :meth:`create_or_resume` does.

    Examples
    --------
    >>> store = ResultsStore("out/sweep")          # doctest: +SKIP
    >>> store.runs().groupby("point")["final_share"].mean()   # doctest: +SKIP
    """

    def __init__(self, path: str | Path) -> None:
        self.path = Path(path)

    # ------------------------------------------------------------------ files
    @property
    def parts(self) -> Path:
        return self.path / "parts"

    def _file(self, name: str) -> Path:
        return self.path / name

    def manifest(self) -> dict[str, Any]:
        """The folder's manifest; StoreError if it is not a sweep's results folder."""
        p = self._file("manifest.json")
        if not p.is_file():
            raise StoreError(f"{str(self.path)!r} is not a sweep results folder (no manifest.json)")
        try:
            data = json.loads(p.read_text(encoding="utf-8"))
        except (OSError, json.JSONDecodeError) as exc:
            raise StoreError(f"{p}: cannot be read as JSON: {exc}") from None
        if data.get("kind") != "sweep":
            raise StoreError(f"{str(self.path)!r} holds the results of a single batch, not of a sweep")
        return data

    def _write_manifest(self, data: dict[str, Any]) -> None:
        text = json.dumps(data, indent=2) + "\n"
        atomic_write(self._file("manifest.json"), lambda p: p.write_text(text, encoding="utf-8"))

    # ------------------------------------------------------------------ opening
    @classmethod
    def create_or_resume(cls, path: str | Path, manifest: dict[str, Any], points: pd.DataFrame) -> ResultsStore:
        """Create the folder for a new sweep, or reopen one made by the same spec.

        ``manifest`` must hold ``identity`` (what has to match for a resume); the
        stored ``points`` must then also match.

        Raises
        ------
        StoreError
            If ``path`` is not a folder, cannot be written, holds other results, or was
            made by a different spec (the message lists the differences).
        """
        store = cls(path)
        p = store.path
        if p.exists() and not p.is_dir():
            raise StoreError(f"--out {str(p)!r} exists and is not a folder")
        identity = json.loads(json.dumps(manifest["identity"]))
        if (p / "manifest.json").exists():
            old = store.manifest()
            diff = _differences(old.get("identity", {}), identity)
            if diff:
                raise StoreError(
                    f"results folder {str(p)!r} was made by a different sweep; refusing to mix results. "
                    f"Differences: {'; '.join(diff)}. Use a new --out folder, or the scenario that made it."
                )
            pa, pq = _pa()
            if not pq.read_table(p / "points.parquet").equals(pa.Table.from_pandas(points, preserve_index=False)):
                raise StoreError(f"results folder {str(p)!r}: points.parquet differs from this sweep's points")
            store._tidy()
            return store
        if p.exists() and any(p.iterdir()):
            raise StoreError(f"--out {str(p)!r} is not empty and holds no sweep manifest; use a new or empty folder")
        try:
            p.mkdir(parents=True, exist_ok=True)
            store.parts.mkdir(exist_ok=True)
        except OSError as exc:
            raise StoreError(f"--out {str(p)!r} cannot be created: {exc}") from None
        pa, pq = _pa()
        table = pa.Table.from_pandas(points, preserve_index=False)
        atomic_write(p / "points.parquet", lambda f: pq.write_table(table, f))
        store._write_manifest({**manifest, "identity": identity, "started": _now(), "sessions": []})
        return store

    def _tidy(self) -> None:
        """Remove temporary files of killed writes and curves parts whose runs part never landed."""
        self.parts.mkdir(exist_ok=True)
        for tmp in list(self.parts.glob(".*")) + list(self.path.glob(".*.parquet")) + list(self.path.glob(".*.json")):
            tmp.unlink(missing_ok=True)
        runs = {f.name[len("runs-"):] for f in self.parts.glob("runs-*.parquet")}
        for f in self.parts.glob("curves-*.parquet"):
            if f.name[len("curves-"):] not in runs:
                f.unlink(missing_ok=True)

    # ------------------------------------------------------------------ sessions
    def begin_session(self, info: dict[str, Any]) -> str:
        """Record the start of a (resumed) execution; returns the session's name for part files."""
        data = self.manifest()
        name = datetime.now(timezone.utc).strftime("%Y%m%dT%H%M%S%fZ") + f"-{os.getpid()}"
        data.setdefault("sessions", []).append({"session": name, "started": _now(), **info})
        self._write_manifest(data)
        return name

    def end_session(self, name: str, info: dict[str, Any]) -> None:
        data = self.manifest()
        for s in data.get("sessions", []):
            if s.get("session") == name:
                s.update({"finished": _now(), **info})
        self._write_manifest(data)

    # ------------------------------------------------------------------ writing
    def write_part(self, session: str, number: int, runs, curves=None) -> None:  # noqa: ANN001 - pyarrow tables
        """Write one chunk's runs (and curves) as part files, curves first, each renamed into place."""
        _, pq = _pa()
        stem = f"{session}-{number:06d}.parquet"
        if curves is not None:
            atomic_write(self.parts / f"curves-{stem}", lambda f: pq.write_table(curves, f))
        atomic_write(self.parts / f"runs-{stem}", lambda f: pq.write_table(runs, f))

    # ------------------------------------------------------------------ reading
    def points(self) -> pd.DataFrame:
        """One row per point: ``point`` and its axis values."""
        _, pq = _pa()
        p = self._file("points.parquet")
        if not p.is_file():
            raise StoreError(f"{str(self.path)!r} has no points.parquet")
        return pq.read_table(p).to_pandas()

    def _read(self, kind: str):  # noqa: ANN202
        pa, pq = _pa()
        schema = _schemas()[0 if kind == "runs" else 1]
        files = [self._file(f"{kind}.parquet")] if self._file(f"{kind}.parquet").is_file() else []
        files += sorted(self.parts.glob(f"{kind}-*.parquet")) if self.parts.is_dir() else []
        tables = [pq.read_table(f).cast(schema) for f in files]
        return pa.concat_tables(tables) if tables else schema.empty_table()

    def _runs_table(self):  # noqa: ANN202
        table = self._read("runs")
        keys = table.select(["point", "replicate", "status"]).to_pandas()
        keys["row"] = range(len(keys))
        ok = keys[keys["status"] == "ok"].drop_duplicates(["point", "replicate"], keep="first")
        bad = keys[keys["status"] != "ok"].drop_duplicates(["point", "replicate"], keep="last")
        done = pd.MultiIndex.from_frame(ok[["point", "replicate"]])
        bad = bad[~pd.MultiIndex.from_frame(bad[["point", "replicate"]]).isin(done)]
        keep = pd.concat([ok, bad]).sort_values(["point", "replicate"], kind="stable")
        return table.take(keep["row"].to_numpy())

    def _curves_table(self):  # noqa: ANN202
        table = self._read("curves")
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
        """Merge ``runs.parquet``/``curves.parquet`` and the parts into the final files, then drop the parts."""
        _, pq = _pa()
        runs = self._runs_table()
        curves_kept = bool(self.manifest().get("identity", {}).get("curves"))
        curves = self._curves_table() if curves_kept else None
        part_files = sorted(self.parts.glob("*.parquet")) if self.parts.is_dir() else []
        if curves is not None:
            atomic_write(self._file("curves.parquet"), lambda f: pq.write_table(curves, f, compression="zstd"))
        atomic_write(self._file("runs.parquet"), lambda f: pq.write_table(runs, f))
        for f in part_files:
            f.unlink(missing_ok=True)


def _nullable(t):  # noqa: ANN001, ANN202 - pyarrow type -> pandas nullable dtype
    import pyarrow as pa

    return {pa.int32(): pd.Int32Dtype(), pa.int64(): pd.Int64Dtype()}.get(t)
