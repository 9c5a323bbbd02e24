"""The small exception family of womlab.

Every error a user can cause by what they ask for is a :class:`WomlabError`; the
``womlab`` command turns one into a single line on standard error and exit status 2.
"""

from __future__ import annotations

__all__ = [
    "WomlabError",
    "ScenarioError",
    "NetworkError",
    "StoreError",
    "ClusterError",
    "ViewError",
    "CompilerError",
    "ObservedDataError",
    "ScenarioWarning",
]


class WomlabError(Exception):
    """Base class of every error womlab raises on purpose."""


class ScenarioError(WomlabError, ValueError):
    """A scenario field has a wrong name, type or value.

    The message always names the dotted field, the value given and what is allowed,
    e.g. ``adoption.satisfied_share must be in [0, 1], got 1.4``.
    """


class NetworkError(WomlabError, ValueError):
    """A referral network cannot be built or read as asked."""


class StoreError(WomlabError):
    """A results folder cannot be written, read or resumed."""


class ScenarioWarning(UserWarning):
    """A scenario is valid but says something that will not happen as written, e.g. a field
    that has no effect under the chosen rule (``adoption.cap`` with ``rule = "share"``).
    The ``womlab`` command prints it as ``womlab: warning: ...``; the work goes on."""


class ClusterError(WomlabError):
    """A Dask cluster cannot be started or its scheduler cannot be reached."""


class ViewError(WomlabError):
    """The browser view cannot start (its extra is not installed, or the server did not come up)."""


class CompilerError(WomlabError):
    """numba, which compiles womlab's formulas and engines, is missing, unsupported or cannot
    compile on this machine; the message names the version found and how to get a supported one."""


class ObservedDataError(WomlabError, ValueError):
    """An observed adoption series cannot be used as given.

    The message names the file, the column, the row (the header is row 1) and what is
    allowed, e.g. ``sales.csv: column 'customers', row 6 (period 4): customers must not
    fall (the column is cumulative), got 130 after 142``.
    """
