"""The store layer: results folders, written safely, and the resumable Parquet store of a sweep.

Below the studies, because a sweep writes its runs here as they finish (so that it can
resume), and above everything that simulates; it knows nothing of how runs are made.
``folders`` holds atomic writes, folder checks, manifests and versions; ``sweep_store``
the :class:`ResultsStore`. What a study's folder contains (tables, figures, the report
page) is written by :mod:`womlab.results`.
"""

from __future__ import annotations

from typing import Any

from womlab.store.folders import (
    MANIFEST,
    FolderWriter,
    atomic_write,
    check_results_folder,
    differences,
    file_sha256,
    manifest,
    results_folder,
    versions,
)
from womlab.store.sweep_store import STORE_FORMAT, ResultsStore, runs_schema

__all__ = [
    "atomic_write",
    "manifest",
    "results_folder",
    "versions",
    "check_results_folder",
    "FolderWriter",
    "MANIFEST",
    "ResultsStore",
    "STORE_FORMAT",
    "RUNS_SCHEMA",
    "CURVES_SCHEMA",
    "runs_schema",
    "file_sha256",
    "differences",
]


def __getattr__(name: str) -> Any:  # RUNS_SCHEMA / CURVES_SCHEMA without importing pyarrow at import
    if name in ("RUNS_SCHEMA", "CURVES_SCHEMA"):
        from womlab.store import sweep_store

        return getattr(sweep_store, name)
    raise AttributeError(f"module 'womlab.store' has no attribute {name!r}")
