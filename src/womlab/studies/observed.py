"""An observed adoption series: read, validated, and summarised the way a fit compares it.

The file is a CSV with a ``period`` column and one of

``new_customers``
    organisations that became customers in that period; or
``customers``
    customers at the end of that period (cumulative),

and optionally ``market``, the known number of organisations that could ever buy (the
same in every row that gives it). Periods are whole numbers >= 0 in increasing order;
they may start at 0 or 1 and may have gaps: a missing period is unknown, not zero.
Period t of the data is period t of a simulation (period 0 is the seeded state).

Every problem is reported as one line naming the file, the column, the row (as a
spreadsheet numbers it: the header is row 1) and what is allowed, e.g.
``sales.csv: column 'customers', row 6 (period 4): customers must not fall, got 130 after 142``.

The cumulative curve a fit compares
    :meth:`ObservedSeries.cumulative` — for ``customers`` data the customers at each
    observed period; for ``new_customers`` data the new customers summed over the observed
    periods so far (a missing period is left out of the sum, in the data and in every
    simulation alike, so gaps need no guess). :func:`cumulative_at` computes the same
    statistic from a simulated curve.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, replace
from pathlib import Path

import numpy as np
import pandas as pd

from womlab.errors import ObservedDataError

__all__ = ["ObservedSeries", "read_observed", "observed_series", "cumulative_at", "MIN_POINTS", "COLUMNS"]

MIN_POINTS = 4
COLUMNS = ("period", "new_customers", "customers", "market")


@dataclass(frozen=True, eq=False)
class ObservedSeries:
    """A validated observed adoption series.

    Attributes
    ----------
    periods : numpy.ndarray
        The observed periods, increasing whole numbers.
    counts : numpy.ndarray
        The observed values: new customers in each period, or customers at its end.
    kind : str
        ``new_customers`` or ``customers`` (what ``counts`` holds).
    market : int or None
        The known market size, when the data give it.
    source : str
        The file it was read from (or ``"data"``), for messages.
    """

    periods: np.ndarray
    counts: np.ndarray
    kind: str
    market: int | None = None
    source: str = "data"

    def __len__(self) -> int:
        return int(self.periods.size)

    @property
    def last_period(self) -> int:
        return int(self.periods[-1])

    def cumulative(self) -> np.ndarray:
        """The cumulative curve at the observed periods (see the module docstring)."""
        if self.kind == "customers":
            return self.counts.astype(float)
        return np.cumsum(self.counts, dtype=float)

    def initial_customers(self) -> int | None:
        """Customers at period 0 when the data say (``customers`` data observed at period 0)."""
        if self.kind == "customers" and self.periods[0] == 0:
            return int(self.counts[0])
        return None

    def largest_count(self) -> int:
        """The most customers the data show: the last cumulative count, or the sum of new
        customers (a lower bound on the customers at the last period)."""
        return int(self.counts[-1] if self.kind == "customers" else self.counts.sum())

    def head(self, last_period: int) -> ObservedSeries:
        """The points at or before ``last_period``."""
        keep = self.periods <= last_period
        return replace(self, periods=self.periods[keep], counts=self.counts[keep])

    def tail(self, after_period: int) -> ObservedSeries:
        """The points after ``after_period``."""
        keep = self.periods > after_period
        return replace(self, periods=self.periods[keep], counts=self.counts[keep])

    def to_frame(self) -> pd.DataFrame:
        """period, the observed column, and the cumulative curve the fit compares."""
        frame = pd.DataFrame({"period": self.periods, self.kind: self.counts, "cumulative": self.cumulative()})
        if self.market is not None:
            frame["market"] = self.market
        return frame


def cumulative_at(customers: np.ndarray, periods: np.ndarray, kind: str) -> np.ndarray:
    """The statistic :meth:`ObservedSeries.cumulative` of a simulated curve.

    Parameters
    ----------
    customers : array
        Simulated customers per period 0..T (cumulative), or an array (runs, T + 1).
    periods : array
        The observed periods (all <= T).
    kind : str
        ``customers`` (the customers at those periods) or ``new_customers`` (the new
        customers of those periods, summed in order).
    start : int, optional
        For ``new_customers``: begin the sum after this many of the given periods' values
        have been summed elsewhere; unused otherwise (kept for symmetry with holdout scores).

    Examples
    --------
    >>> c = np.array([2, 5, 9, 14, 20])
    >>> cumulative_at(c, np.array([1, 2, 4]), "new_customers").tolist()
    [3.0, 7.0, 13.0]
    >>> cumulative_at(c, np.array([1, 2, 4]), "customers").tolist()
    [5.0, 9.0, 20.0]
    """
    c = np.asarray(customers, dtype=float)
    p = np.asarray(periods, dtype=int)
    if kind == "customers":
        return c[..., p]
    prev = np.where(p > 0, p - 1, 0)
    new = np.where(p > 0, c[..., p] - c[..., prev], c[..., p])
    return np.cumsum(new, axis=-1)


def _fail(source: str, column: str, row: int | None, period: object, message: str) -> ObservedDataError:
    where = f"{source}: column {column!r}"
    if row is not None:
        where += f", row {row}" + (f" (period {period})" if period is not None else "")
    return ObservedDataError(f"{where}: {message}")


def _whole_numbers(
    frame: pd.DataFrame,
    column: str,
    source: str,
    periods: np.ndarray | None,
    *,
    minimum: int,
    allow_blank: bool = False,
) -> np.ndarray:
    values = frame[column].tolist()
    out = np.zeros(len(values), dtype=np.int64)
    blank = np.zeros(len(values), dtype=bool)
    for i, raw in enumerate(values):
        row = i + 2
        period = None if periods is None else periods[i]
        text = "" if raw is None else str(raw).strip()
        if text == "" or text.lower() == "nan":
            if allow_blank:
                blank[i] = True
                continue
            raise _fail(
                source,
                column,
                row,
                period,
                "is empty; every row needs a value (leave a missing period "
                "out of the file rather than writing 0 or nothing)",
            )
        try:
            number = float(text)
        except ValueError:
            raise _fail(source, column, row, period, f"must be a whole number, got {text!r}") from None
        if not math.isfinite(number) or number != int(number):
            raise _fail(source, column, row, period, f"must be a whole number, got {text!r}")
        if number < minimum:
            raise _fail(source, column, row, period, f"must be >= {minimum}, got {text}")
        out[i] = int(number)
    if allow_blank:
        out[blank] = -1
    return out


def observed_series(frame: pd.DataFrame, source: str = "data") -> ObservedSeries:
    """Validate a table of observations (columns as in the module docstring).

    Raises
    ------
    ObservedDataError
        One line naming the source, column, row and what is allowed: an unknown or
        missing column, an empty or non-whole value, a negative count, periods that repeat
        or go back, cumulative customers that fall, customers above the market size, a
        market size that changes, or fewer than 4 points.

    Examples
    --------
    >>> s = observed_series(pd.DataFrame({"period": [1, 2, 3, 5], "new_customers": [3, 8, 15, 30]}))
    >>> s.kind, s.cumulative().tolist()
    ('new_customers', [3.0, 11.0, 26.0, 56.0])
    """
    frame = frame.copy()
    frame.columns = [str(c).strip() for c in frame.columns]
    for column in frame.columns:
        if column not in COLUMNS:
            raise ObservedDataError(
                f"{source}: unknown column {column!r}; the columns are period, and "
                "new_customers or customers, and optionally market"
            )
    if len(set(frame.columns)) != len(frame.columns):
        raise ObservedDataError(f"{source}: a column appears twice in {list(frame.columns)}")
    if "period" not in frame.columns:
        raise ObservedDataError(
            f"{source}: column 'period' is missing; the columns are period, and new_customers "
            "or customers, and optionally market"
        )
    given = [c for c in ("new_customers", "customers") if c in frame.columns]
    if len(given) != 1:
        what = "neither is there" if not given else "both are there"
        raise ObservedDataError(
            f"{source}: give one of the columns new_customers (per period) or customers (cumulative); {what}"
        )
    kind = given[0]
    if len(frame) < MIN_POINTS:
        raise ObservedDataError(f"{source}: a fit needs at least {MIN_POINTS} observed periods, got {len(frame)} rows")
    periods = _whole_numbers(frame, "period", source, None, minimum=0)
    for i in range(1, periods.size):
        if periods[i] == periods[i - 1]:
            raise _fail(source, "period", i + 2, None, f"period {periods[i]} appears twice (rows {i + 1} and {i + 2})")
        if periods[i] < periods[i - 1]:
            raise _fail(
                source,
                "period",
                i + 2,
                None,
                f"periods must increase from row to row, got {periods[i]} after {periods[i - 1]}",
            )
    counts = _whole_numbers(frame, kind, source, periods, minimum=0)
    if kind == "customers":
        for i in range(1, counts.size):
            if counts[i] < counts[i - 1]:
                raise _fail(
                    source,
                    kind,
                    i + 2,
                    periods[i],
                    f"customers must not fall (the column is cumulative), got {counts[i]} after {counts[i - 1]}",
                )
    market = None
    if "market" in frame.columns:
        sizes = _whole_numbers(frame, "market", source, periods, minimum=1, allow_blank=True)
        given_rows = np.flatnonzero(sizes >= 0)
        if given_rows.size == 0:
            raise ObservedDataError(f"{source}: column 'market' is empty; give the market size or drop the column")
        market = int(sizes[given_rows[0]])
        for i in given_rows:
            if sizes[i] != market:
                raise _fail(
                    source,
                    "market",
                    i + 2,
                    periods[i],
                    f"the market size must be the same in every row, got {sizes[i]} after {market}",
                )
        running = counts if kind == "customers" else np.cumsum(counts)
        over = np.flatnonzero(running > market)
        if over.size:
            i = int(over[0])
            what = "customers" if kind == "customers" else "new customers so far"
            raise _fail(source, kind, i + 2, periods[i], f"{running[i]} {what} is more than the market size {market}")
    return ObservedSeries(periods=periods, counts=counts, kind=kind, market=market, source=source)


def read_observed(path: str | Path) -> ObservedSeries:
    """Read and validate an observed adoption series from a CSV file.

    Parameters
    ----------
    path : str or Path
        A CSV file with ``period`` and ``new_customers`` or ``customers``, and optionally
        ``market`` (see :mod:`womlab.studies.observed`).

    Returns
    -------
    ObservedSeries

    Raises
    ------
    ObservedDataError
        If the file is missing or unreadable, or any value is not allowed (one line naming
        file, column and row).

    Examples
    --------
    >>> import tempfile, os
    >>> path = os.path.join(tempfile.mkdtemp(), "seen.csv")
    >>> _ = open(path, "w").write("period,customers\\n0,5\\n1,9\\n2,16\\n4,40\\n")
    >>> read_observed(path).initial_customers()
    5
    """
    p = Path(path)
    name = p.name
    if not p.is_file():
        raise ObservedDataError(f"observed data file {str(path)!r} does not exist")
    try:
        frame = pd.read_csv(p, dtype=str, keep_default_na=False, skipinitialspace=True)
    except (pd.errors.ParserError, pd.errors.EmptyDataError, UnicodeDecodeError) as exc:
        raise ObservedDataError(f"{name}: not a readable CSV file ({str(exc).splitlines()[0]})") from None
    return observed_series(frame, name)
