"""The machine and library versions a benchmark writes beside its table (shared by the benchmarks)."""

from __future__ import annotations

import os
import platform
from pathlib import Path


def versions(names: tuple[str, ...]) -> dict[str, str]:
    """Python's version and each named library's (``not installed`` where it is missing)."""
    out = {"python": platform.python_version()}
    for name in names:
        try:
            out[name] = __import__(name).__version__
        except Exception:  # noqa: BLE001 - a missing library is reported, not fatal
            out[name] = "not installed"
    return out


def machine() -> str:
    """CPU model, logical cores and operating system."""
    cpu = platform.processor() or platform.machine()
    try:
        for line in Path("/proc/cpuinfo").read_text().splitlines():
            if line.startswith("model name"):
                cpu = line.split(":", 1)[1].strip()
                break
    except OSError:
        pass
    return f"{cpu}, {os.cpu_count()} logical cores, {platform.system()} {platform.release()}"
