"""The compiler behind womlab's formulas and engines: numba, checked once, with one clear error.

Every compiled function of womlab is made with :func:`compiled` (``numba.njit`` with the
compilation cached on disk, so a new process loads it instead of recompiling). There is
no pure-Python fallback: a numba that is missing, outside the versions womlab was
tested with, or unable to compile on this machine stops womlab with a
:class:`~womlab.errors.CompilerError` naming the problem and the version found, rather
than running something that might give other results.
"""

from __future__ import annotations

import functools
from collections.abc import Callable
from typing import Any

from womlab.errors import CompilerError

__all__ = ["NUMBA_SUPPORTED", "compiled", "numba_version", "check_numba"]

#: The numba versions womlab is tested with: [lowest, first unsupported). Keep in step
#: with ``pyproject.toml``.
NUMBA_SUPPORTED = ((0, 68), (0, 69))

_HOW = "install a supported one with: pip install 'numba>=0.68,<0.69'"


def numba_version() -> str | None:
    """The installed numba's version string, or None if it cannot be imported."""
    try:
        import numba
    except Exception:  # noqa: BLE001 - a broken install is reported by check_numba
        return None
    return str(numba.__version__)


def _parse(version: str) -> tuple[int, int]:
    parts = version.split(".")
    try:
        return int(parts[0]), int("".join(ch for ch in parts[1] if ch.isdigit()) or 0)
    except (IndexError, ValueError):
        return (0, 0)


def check_numba(version: str | None = None) -> str:
    """Raise :class:`CompilerError` unless ``version`` (default: the installed numba) is supported.

    Examples
    --------
    >>> check_numba("0.68.1")
    '0.68.1'
    >>> check_numba("0.50.0")
    Traceback (most recent call last):
    ...
    womlab.errors.CompilerError: numba 0.50.0 is outside the versions womlab supports (>= 0.68, < 0.69); install a supported one with: pip install 'numba>=0.68,<0.69'
    """
    found = numba_version() if version is None else version
    if found is None:
        raise CompilerError(f"numba cannot be imported (womlab compiles its engines with it); {_HOW}")
    low, high = NUMBA_SUPPORTED
    if not low <= _parse(found) < high:
        raise CompilerError(
            f"numba {found} is outside the versions womlab supports (>= {low[0]}.{low[1]}, < {high[0]}.{high[1]}); {_HOW}"
        )
    return found


class _Unavailable:
    """Stands for a compiled function when numba is missing or unsupported: calling it raises."""

    def __init__(self, func: Callable[..., Any], message: str) -> None:
        functools.update_wrapper(self, func)
        self._message = message

    def __call__(self, *args: Any, **kwargs: Any) -> Any:
        raise CompilerError(self._message)


def compiled(func: Callable[..., Any]) -> Callable[..., Any]:
    """``numba.njit(cache=True)`` of ``func``; a failure to compile becomes a one-line CompilerError.

    The returned object is numba's dispatcher (callable from Python and from other compiled
    functions). Its first call from Python in a process compiles it or loads it from the
    cache; if that fails, the error names numba's version and the function. Where numba is
    missing or outside :data:`NUMBA_SUPPORTED`, womlab still imports, and every compiled
    function raises that CompilerError when called; nothing falls back to other code.
    """
    try:
        check_numba()
    except CompilerError as exc:  # womlab still imports (``womlab check`` works); the first run says why not
        return _Unavailable(func, str(exc))
    import numba

    dispatcher = numba.njit(cache=True)(func)
    original = dispatcher._compile_for_args  # the step numba takes when a call needs a new compilation

    @functools.wraps(original)
    def compile_or_explain(*args: Any, **kwargs: Any) -> Any:
        try:
            return original(*args, **kwargs)
        except (numba.core.errors.NumbaError, RuntimeError, OSError) as exc:
            first = str(exc).strip().splitlines()[0] if str(exc).strip() else type(exc).__name__
            raise CompilerError(
                f"numba {numba.__version__} could not compile womlab's {func.__qualname__} on this machine "
                f"({first}); {_HOW}"
            ) from exc

    dispatcher._compile_for_args = compile_or_explain
    return dispatcher
