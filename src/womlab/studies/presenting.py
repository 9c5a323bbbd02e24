"""How a study's result is drawn and written: a registry the results layer fills.

A study returns an object (a :class:`~womlab.studies.compare.Comparison`, a sweep's
summary, ...) that offers ``figure()`` and ``save()`` for convenience in a notebook.
Drawing and writing files belong to :mod:`womlab.results`, which sits above the studies
and may not be imported by them. So those methods look the work up here, in a registry
that :mod:`womlab.results` fills when it is imported — and ``import womlab`` imports it.

Adding a study with a figure: give its result class a method that calls
``present(self, "figure", ...)``, and register the drawing function in
``womlab/results/__init__.py`` with ``register(TheClass, "figure", the_function)``.
"""

from __future__ import annotations

from collections.abc import Callable
from typing import Any

from womlab.errors import WomlabError

__all__ = ["register", "present"]

_ACTIONS: dict[tuple[type, str], Callable[..., Any]] = {}


def register(kind: type, action: str, func: Callable[..., Any]) -> None:
    """Make ``func(obj, *args, **kwargs)`` the way ``action`` (``figure``, ``save``, ``report``) is done for ``kind``."""
    _ACTIONS[(kind, action)] = func


def present(obj: Any, action: str, *args: Any, **kwargs: Any) -> Any:
    """Do ``action`` for ``obj`` with the function registered for its class (or a base class)."""
    for cls in type(obj).__mro__:
        func = _ACTIONS.get((cls, action))
        if func is not None:
            return func(obj, *args, **kwargs)
    raise WomlabError(  # pragma: no cover - `import womlab` registers every action
        f"no {action!r} is registered for {type(obj).__name__}; import womlab (womlab.results registers them)"
    )
