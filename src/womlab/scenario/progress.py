"""How long work reports itself: a bar on a terminal, a few plain lines when piped, nothing when quiet.

Every layer that does long work reports through this module, so that the one place that
knows where the output goes (the ``womlab`` command) decides how it is shown:

* :func:`bar` — a count of finished units (runs, sweep points). On a terminal it is a
  ``tqdm`` bar; when standard error is a file or a pipe it prints a handful of plain lines
  (at most one every :data:`LINE_EVERY` seconds, plus the last), never carriage returns.
* :func:`stage` — one expensive step inside a unit (sampled betweenness, greedy seed
  selection): a line when it starts and one with its duration when it ends. It shows
  when reporting is enabled, or while a shown bar is open in this process.
* :func:`doing` — what the current unit is (a strategy's name), shown beside the bar.

Reporting is off unless switched on with :func:`enable` (the command does, unless
``--quiet``), or a function is called with ``progress=True``. The switch travels to worker
processes in the environment variable :data:`ENV`, so a stage inside a worker reports too.
It sits in the scenario layer, the lowest one, so that the seeding strategies and the
engines can report without importing anything above them.
"""

from __future__ import annotations

import os
import sys
import time
from collections.abc import Iterator
from contextlib import contextmanager
from typing import Any, TextIO

__all__ = ["ENV", "LINE_EVERY", "enable", "enabled", "bar", "stage", "doing", "on_terminal"]

#: Environment variable that switches reporting on in this process and the workers it starts.
ENV = "WOMLAB_PROGRESS"
#: Seconds between two plain progress lines when standard error is not a terminal.
LINE_EVERY = 30.0

_ACTIVE: list[Any] = []  # the bars open in this process, innermost last


def enable(on: bool = True) -> None:
    """Switch progress reporting on (or off) for this process and the worker processes it starts."""
    if on:
        os.environ[ENV] = "1"
    else:
        os.environ.pop(ENV, None)


def enabled() -> bool:
    """Whether progress reporting is switched on here."""
    return os.environ.get(ENV) == "1"


def on_terminal(stream: TextIO | None = None) -> bool:
    """Whether ``stream`` (standard error by default) is a terminal that can redraw a bar."""
    stream = sys.stderr if stream is None else stream
    try:
        return bool(stream.isatty())
    except (AttributeError, ValueError):
        return False


def _say(text: str) -> None:
    if _ACTIVE and getattr(_ACTIVE[-1], "tty", False):
        _ACTIVE[-1].write(text)
    else:
        try:
            print(text, file=sys.stderr, flush=True)
        except (OSError, ValueError):  # a closed pipe must not stop the work
            pass


class _Lines:
    """A progress count written as a few plain lines (standard error is not a terminal)."""

    def __init__(self, total: int, desc: str, unit: str, initial: int = 0) -> None:
        self.total, self.desc, self.unit, self.n = total, desc, unit, initial
        self.start = time.monotonic()
        self.last = self.start
        self.what = ""
        _say(f"{desc}: {total - initial} {unit}s to do" + (f" ({initial} done before)" if initial else ""))

    def update(self, k: int = 1) -> None:
        self.n += k
        now = time.monotonic()
        if self.n >= self.total or now - self.last >= LINE_EVERY:
            self.last = now
            self._line(now)

    def _line(self, now: float) -> None:
        elapsed = now - self.start
        text = f"{self.desc}: {self.n}/{self.total} {self.unit}s, {elapsed:.0f} s"
        if 0 < self.n < self.total:
            text += f", about {elapsed * (self.total - self.n) / self.n:.0f} s left"
        if self.what and self.n < self.total:
            text += f" ({self.what})"
        _say(text)

    def set_postfix_str(self, text: str) -> None:
        self.what = text

    def close(self) -> None:
        pass


class _Quiet:
    def update(self, k: int = 1) -> None:
        pass

    def set_postfix_str(self, text: str) -> None:
        pass

    def close(self) -> None:
        pass


class _Bar:
    """The bar a caller holds: closes itself and leaves the list of open bars."""

    def __init__(self, inner: Any, tty: bool) -> None:
        self.inner = inner
        self.tty = tty

    def update(self, k: int = 1) -> None:
        self.inner.update(k)

    def write(self, text: str) -> None:
        from tqdm.auto import tqdm

        tqdm.write(text, file=sys.stderr)

    def set_postfix_str(self, text: str) -> None:
        self.inner.set_postfix_str(text)

    def set_postfix(self, **values: Any) -> None:
        """Show ``name value`` pairs beside the count (e.g. ``failed=2``)."""
        self.inner.set_postfix_str(", ".join(f"{k} {v}" for k, v in values.items()))

    def close(self) -> None:
        self.inner.close()
        if self in _ACTIVE:
            _ACTIVE.remove(self)

    def __enter__(self) -> _Bar:
        return self

    def __exit__(self, *exc: object) -> None:
        self.close()


def bar(
    total: int,
    desc: str = "runs",
    *,
    unit: str = "run",
    show: bool | None = None,
    initial: int = 0,
    leave: bool = False,
) -> _Bar:
    """A progress count of ``total`` units; call ``.update(k)`` and ``.close()`` (or use ``with``).

    ``show`` forces it on or off; by default it shows when reporting is :func:`enabled`.
    On a terminal it is a ``tqdm`` bar, otherwise plain lines (see the module notes).

    Examples
    --------
    >>> with bar(3, show=False) as b:
    ...     b.update(3)
    """
    show = enabled() if show is None else show
    tty = False
    if not show:
        inner: Any = _Quiet()
    elif on_terminal():
        from tqdm.auto import tqdm

        inner = tqdm(total=total, initial=initial, unit=unit, desc=desc, leave=leave, file=sys.stderr, smoothing=0.1)
        tty = True
    else:
        inner = _Lines(total, desc, unit, initial)
    handle = _Bar(inner, tty)
    if show:
        _ACTIVE.append(handle)
    return handle


def doing(what: str) -> None:
    """Say what the unit now running is (e.g. the strategy), beside the innermost open bar."""
    if _ACTIVE:
        _ACTIVE[-1].set_postfix_str(what)


@contextmanager
def stage(what: str, *, show: bool | None = None) -> Iterator[None]:
    """Report one expensive step: a line as it starts, one with its duration as it ends.

    Examples
    --------
    >>> with stage("sampled betweenness", show=False):
    ...     pass
    """
    show = (enabled() or bool(_ACTIVE)) if show is None else show
    if not show:
        yield
        return
    start = time.monotonic()
    _say(f"  {what} ...")
    yield
    _say(f"  {what}: done in {time.monotonic() - start:.1f} s")
