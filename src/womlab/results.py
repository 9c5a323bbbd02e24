"""The result of one run, the same object whatever engine made it.

A run keeps per-organisation vectors — adoption period (−1 = never), referrer (−1 =
external, initial, or never), whether satisfied — and derives every per-period count
from them, so that no engine can report counts that disagree with its own adopters.
Period 0 is the seeded state; a run of ``periods = T`` has exactly T + 1 rows.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np
import pandas as pd

__all__ = ["RunResult", "CURVE_COLUMNS"]

CURVE_COLUMNS = ("period", "time", "customers", "new_customers", "satisfied_customers")


@dataclass(eq=False)
class RunResult:
    """One run's outcome.

    Attributes
    ----------
    periods : int
        Horizon T; every per-period array has T + 1 entries.
    adoption_period : numpy.ndarray
        int32 per organisation: the period in which it became a customer (0 for the
        initial customers), −1 if it never did by the horizon.
    referrer : numpy.ndarray
        int32 per organisation: the satisfied customer whose word of mouth caused its
        adoption, −1 for external influence, initial customers and non-adopters.
    satisfied : numpy.ndarray
        bool per organisation: satisfied customer at the horizon.
    region : numpy.ndarray
        int32 region code per organisation.
    initial : numpy.ndarray
        int32 ids of the initial customers.
    engine : str
        Name of the engine that made it.
    seed : int
        Root seed; with ``spawn_key`` it replays the run.
    spawn_key : tuple
        The SeedSequence spawn key of the run.
    """

    periods: int
    adoption_period: np.ndarray
    referrer: np.ndarray
    satisfied: np.ndarray
    region: np.ndarray
    initial: np.ndarray
    engine: str
    seed: int = 0
    spawn_key: tuple = ()
    extra: dict = field(default_factory=dict)

    @property
    def n(self) -> int:
        return int(self.adoption_period.size)

    def _per_period(self, mask: np.ndarray | None = None) -> np.ndarray:
        ap = self.adoption_period if mask is None else self.adoption_period[mask]
        return np.bincount(ap[ap >= 0], minlength=self.periods + 1)[: self.periods + 1]

    @property
    def new_customers(self) -> np.ndarray:
        """New customers in each period (period 0: the initial customers), int64."""
        return self._per_period()

    @property
    def customers(self) -> np.ndarray:
        """Customers at the end of each period, int64."""
        return np.cumsum(self.new_customers)

    @property
    def satisfied_customers(self) -> np.ndarray:
        """Satisfied customers at the end of each period, int64."""
        return np.cumsum(self._per_period(self.satisfied))

    @property
    def share(self) -> np.ndarray:
        """Customers as a share of the market, per period."""
        return self.customers / self.n

    def customers_by_region(self) -> np.ndarray:
        """Customers at the end of each period by region: array (T + 1, regions)."""
        regions = int(self.region.max()) + 1 if self.n else 0
        adopted = self.adoption_period >= 0
        counts = np.zeros((self.periods + 1, regions), dtype=np.int64)
        np.add.at(counts, (self.adoption_period[adopted], self.region[adopted]), 1)
        return np.cumsum(counts, axis=0)

    def curve(self) -> pd.DataFrame:
        """Per-period table: period, time, customers, new_customers, satisfied_customers."""
        t = np.arange(self.periods + 1)
        return pd.DataFrame(
            {
                "period": t,
                "time": t.astype(float),
                "customers": self.customers,
                "new_customers": self.new_customers,
                "satisfied_customers": self.satisfied_customers,
            }
        )

    def region_curve(self) -> pd.DataFrame:
        """Long table: period, region, customers."""
        by = self.customers_by_region()
        periods, regions = np.meshgrid(np.arange(by.shape[0]), np.arange(by.shape[1]), indexing="ij")
        return pd.DataFrame({"period": periods.ravel(), "region": regions.ravel(), "customers": by.ravel()})
