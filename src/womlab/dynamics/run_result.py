"""The result of one run, the same object whatever engine made it.

A run keeps per-organisation vectors — adoption period (−1 = never), referrer (−1 =
external, initial, or never), whether satisfied — and derives every per-period count
from them, so that no engine can report counts that disagree with its own adopters.
Period 0 is the seeded state; a run of ``periods = T`` has exactly T + 1 rows.

Finer grids. Engines that know when within a period each adoption happened (the event
engine: exact times; the array engine: the end of the step) also keep
``adoption_time`` (float per organisation, NaN = never). Period k covers the times
(k − 1, k], so ``adoption_period = ceil(adoption_time)``. :meth:`RunResult.curve` with
``every = 1/n`` (by default the scenario's ``run.report_every``, kept as
``report_every``) gives rows at times 0, 1/n, 2/n, …, T — ``period`` then holds the
period each row's time falls in, and ``new_customers`` counts adoptions since the
previous row. Every per-period count (``customers``, ``share``, …) stays on the period
grid, so the T + 1 row rule holds for them whatever the report grid.

Churn. With churn on, an engine also keeps ``leave_period`` (int32 per organisation: the
period in which the customer left, −1 if it had not by the horizon; ``leave_time`` on the
finer grid). ``customers`` is then the installed base (customers who have not left), and
the curve gains ``former_customers`` and ``ever_customers`` (every organisation that was a
customer at some time up to then). Without churn both are None and the curve is as it
always was.

Warnings (negative word of mouth). With ``adoption.warning`` above 0 an engine also keeps
``rejection_period`` (int32: the period in which a potential customer was warned off for
good, −1 if never) and ``warned_by`` (int32: the warner it is attributed to); the curve
gains ``rejecters``.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any

import networkx as nx
import numpy as np
import pandas as pd

from womlab.errors import NetworkError
from womlab.networks.given import organisation_ids
from womlab.networks.network import ReferralNetwork

__all__ = ["RunResult", "CURVE_COLUMNS", "CHURN_COLUMNS", "WARNING_COLUMNS", "ORGANISATION_COLUMNS", "to_networkx"]

CURVE_COLUMNS = ("period", "time", "customers", "new_customers", "satisfied_customers")
#: Columns a run with churn adds to its curve.
CHURN_COLUMNS = ("former_customers", "ever_customers")
#: The column a run with warnings adds to its curve.
WARNING_COLUMNS = ("rejecters",)

#: Columns of :meth:`RunResult.to_frame` (a network's node attributes go after ``region``).
ORGANISATION_COLUMNS = (
    "id",
    "region",
    "customer",
    "initial",
    "adoption_period",
    "adoption_time",
    "referrer",
    "satisfied",
    "referrals",
)


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
        bool per organisation: became a satisfied customer by the horizon (with churn, it
        may have left since; see ``leave_period``).
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
    adoption_time : numpy.ndarray, optional
        float64 per organisation: when in continuous time it became a customer (0 for
        the initial customers), NaN if never by the horizon. None when the engine does
        not record it (Mesa).
    report_every : float
        Default spacing of :meth:`curve` rows (1/n of a period; 1 = the period grid).
    segment : numpy.ndarray, optional
        int32 segment code per organisation (``[segments]`` or a node file's ``segment``
        column), names in ``segment_names``; None without segments.
    value : numpy.ndarray, optional
        Value per period of each organisation as a customer (segment value × node ``size``);
        None: 1 each.
    opens_at : numpy.ndarray, optional
        int32 period in which each organisation entered the market (``market.opens``; 0 = from
        the start); None when the whole market is open from period 0.
    leave_period : numpy.ndarray, optional
        Churn: int32 per organisation, the period in which the customer left, −1 if it did
        not by the horizon (or never was a customer). None when churn is off.
    leave_time : numpy.ndarray, optional
        Churn: float64 per organisation, when it left (NaN: not by the horizon).
    rejection_period : numpy.ndarray, optional
        Warnings: int32 per organisation, the period in which it became a rejecter, −1 if
        never. None when warnings are off.
    warned_by : numpy.ndarray, optional
        Warnings: int32 per organisation, the warner its rejection is attributed to, −1 if
        it did not reject.
    rejection_time : numpy.ndarray, optional
        Warnings: float64 per organisation, when it became a rejecter (NaN: never).
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
    adoption_time: np.ndarray | None = None
    report_every: float = 1.0
    segment: np.ndarray | None = None
    segment_names: tuple[str, ...] = ()
    value: np.ndarray | None = None
    opens_at: np.ndarray | None = None
    leave_period: np.ndarray | None = None
    leave_time: np.ndarray | None = None
    rejection_period: np.ndarray | None = None
    warned_by: np.ndarray | None = None
    rejection_time: np.ndarray | None = None

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
    def churns(self) -> bool:
        """Whether the run had churn (it keeps ``leave_period``)."""
        return self.leave_period is not None

    def _left_per_period(self, mask: np.ndarray | None = None) -> np.ndarray:
        if self.leave_period is None:
            return np.zeros(self.periods + 1, dtype=np.int64)
        lp = self.leave_period if mask is None else self.leave_period[mask]
        return np.bincount(lp[lp >= 0], minlength=self.periods + 1)[: self.periods + 1]

    @property
    def ever_customers(self) -> np.ndarray:
        """Organisations that were customers at some time up to the end of each period, int64
        (with churn: the installed base plus the former customers)."""
        return np.cumsum(self.new_customers)

    @property
    def former_customers(self) -> np.ndarray:
        """Customers who had left by the end of each period (churn; 0 without), int64."""
        return np.cumsum(self._left_per_period())

    @property
    def customers(self) -> np.ndarray:
        """Customers at the end of each period (with churn: the installed base), int64."""
        if self.leave_period is None:
            return np.cumsum(self.new_customers)
        return self.ever_customers - self.former_customers

    @property
    def satisfied_customers(self) -> np.ndarray:
        """Satisfied customers at the end of each period, int64."""
        if self.leave_period is None:
            return np.cumsum(self._per_period(self.satisfied))
        return np.cumsum(self._per_period(self.satisfied)) - np.cumsum(self._left_per_period(self.satisfied))

    @property
    def warns(self) -> bool:
        """Whether the run had warnings (it keeps ``rejection_period``)."""
        return self.rejection_period is not None

    @property
    def rejecters(self) -> np.ndarray:
        """Warnings: organisations warned off the product by the end of each period (0 without), int64."""
        if self.rejection_period is None:
            return np.zeros(self.periods + 1, dtype=np.int64)
        rp = self.rejection_period
        return np.cumsum(np.bincount(rp[rp >= 0], minlength=self.periods + 1)[: self.periods + 1])

    @property
    def ever_share(self) -> np.ndarray:
        """``ever_customers`` as a share of the market, per period."""
        return self.ever_customers / self.n

    def lifetimes(self) -> tuple[np.ndarray, np.ndarray]:
        """Churn: every customer's time as a customer up to the horizon, and whether it left.

        Returns ``(duration, left)`` over the organisations that became customers: the time
        from adoption to leaving (or to the horizon, where it had not left; censored), in
        periods, from the adoption and leaving times where the engine keeps them, else from
        the periods.
        """
        adopted = self.adoption_period >= 0
        if self.leave_period is None:
            left = np.zeros(int(adopted.sum()), dtype=bool)
        else:
            left = self.leave_period[adopted] >= 0
        if self.adoption_time is not None and self.leave_time is not None:
            start = self.adoption_time[adopted]
            end = np.where(left, self.leave_time[adopted], float(self.periods))
        else:
            start = self.adoption_period[adopted].astype(float)
            lp = self.leave_period[adopted] if self.leave_period is not None else np.full(start.size, -1)
            end = np.where(left, lp, self.periods).astype(float)
        return end - start, left

    def mean_lifetime(self) -> float:
        """Churn: mean customer lifetime in periods, censoring-aware: time as a customer summed
        over every customer up to the horizon, over the number who left (the exponential
        maximum-likelihood estimate 1/δ̂ with right censoring; Lawless 2003, *Statistical Models
        and Methods for Lifetime Data*, §2.2). NaN where no customer left.

        Examples
        --------
        >>> from womlab import Scenario, run_one
        >>> s = Scenario.from_dict({"market": {"organisations": 400, "initial_customers": 40},
        ...                         "adoption": {"churn": 0.1}, "run": {"periods": 30}})
        >>> 5 < run_one(s, (0,)).mean_lifetime() < 20
        True
        """
        duration, left = self.lifetimes()
        return float(duration.sum() / left.sum()) if left.any() else float("nan")

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

    @property
    def market_size(self) -> np.ndarray:
        """Organisations in the market at each period (all N unless parts open later), int64."""
        if self.opens_at is None:
            return np.full(self.periods + 1, self.n, dtype=np.int64)
        return np.cumsum(np.bincount(self.opens_at, minlength=self.periods + 1)[: self.periods + 1])

    @property
    def share_of_current_market(self) -> np.ndarray:
        """Customers as a share of the organisations in the market at each period."""
        return self.customers / np.maximum(self.market_size, 1)

    def product_curves(self) -> pd.DataFrame:
        """Per period and product generation (``[[product]]`` runs): customers on it, new customers
        (organisations whose first product it is), upgrades (arrivals from an earlier generation)
        and value (customers × its value per period); then the portfolio as product ``all``.

        Raises
        ------
        ValueError
            On a run without product generations.
        """
        start = self.extra.get("product_start")
        if start is None:
            raise ValueError("product curves need a run with product generations ([[product]]); this run has none")
        names, values = self.extra["product_names"], self.extra["product_values"]
        rows, G = self.periods + 1, start.shape[1]
        first = np.where(start >= 0, start, rows).min(axis=1)
        arrivals = np.zeros((rows, G), dtype=np.int64)
        new = np.zeros((rows, G), dtype=np.int64)
        leaving = np.zeros((rows, G), dtype=np.int64)
        for g in range(G):
            on = start[:, g] >= 0
            np.add.at(arrivals[:, g], start[on, g], 1)
            np.add.at(new[:, g], start[on & (start[:, g] == first), g], 1)
            later = np.where(start[:, g + 1 :] >= 0, start[:, g + 1 :], rows).min(axis=1) if g + 1 < G else None
            if later is not None:
                gone = on & (later < rows)
                np.add.at(leaving[:, g], later[gone], 1)
        customers = np.cumsum(arrivals - leaving, axis=0)
        frames = [
            pd.DataFrame(
                {
                    "period": np.arange(rows),
                    "product": names[g],
                    "customers": customers[:, g],
                    "new_customers": new[:, g],
                    "upgrades": arrivals[:, g] - new[:, g],
                    "value": customers[:, g] * float(values[g]),
                }
            )
            for g in range(G)
        ]
        frames.append(
            pd.DataFrame(
                {
                    "period": np.arange(rows),
                    "product": "all",
                    "customers": customers.sum(axis=1),
                    "new_customers": new.sum(axis=1),
                    "upgrades": (arrivals - new).sum(axis=1),
                    "value": customers @ values.astype(float),
                }
            )
        )
        return pd.concat(frames, ignore_index=True)

    def groups(self, by: str) -> tuple[np.ndarray, tuple[str, ...]]:
        """Each organisation's group code and the groups' names: ``by = "segment"`` or ``"region"``.

        Raises
        ------
        ValueError
            For another ``by``, or ``"segment"`` on a run without segments.
        """
        if by == "region":
            k = int(self.region.max()) + 1 if self.n else 0
            return self.region, tuple(str(r) for r in range(k))
        if by == "segment":
            if self.segment is None:
                raise ValueError(
                    'by = "segment" needs segments ([segments], or a node file column segment); this run has none'
                )
            return self.segment, self.segment_names
        raise ValueError(f'by must be "segment" or "region", got {by!r}')

    def curve_by(self, by: str) -> pd.DataFrame:
        """Per period and group (``by = "segment"`` or ``"region"``): organisations, customers, new
        customers, satisfied customers, share of the group, and value (customers × value per period).

        Examples
        --------
        >>> import numpy as np
        >>> r = RunResult(periods=2, adoption_period=np.array([0, 1, -1, 2], dtype=np.int32),
        ...               referrer=np.full(4, -1, dtype=np.int32), satisfied=np.array([1, 1, 0, 0], bool),
        ...               region=np.array([0, 0, 1, 1], dtype=np.int32), initial=np.array([0]), engine="array")
        >>> r.curve_by("region")[["period", "group", "customers", "share"]].values.tolist()
        [[0, '0', 1, 0.5], [0, '1', 0, 0.0], [1, '0', 2, 1.0], [1, '1', 0, 0.0], [2, '0', 2, 1.0], [2, '1', 1, 0.5]]
        """
        codes, names = self.groups(by)
        k, rows = len(names), self.periods + 1
        adopted = self.adoption_period >= 0
        new = np.zeros((rows, k), dtype=np.int64)
        np.add.at(new, (self.adoption_period[adopted], codes[adopted]), 1)
        sat = np.zeros((rows, k), dtype=np.int64)
        np.add.at(sat, (self.adoption_period[self.satisfied], codes[self.satisfied]), 1)
        value = np.zeros((rows, k))
        np.add.at(
            value, (self.adoption_period[adopted], codes[adopted]), 1.0 if self.value is None else self.value[adopted]
        )
        sizes = np.bincount(codes, minlength=k)
        customers = np.cumsum(new, axis=0)
        return pd.DataFrame(
            {
                "period": np.repeat(np.arange(rows), k),
                "group": np.tile(np.array(names, dtype=object), rows),
                "organisations": np.tile(sizes, rows),
                "customers": customers.ravel(),
                "new_customers": new.ravel(),
                "satisfied_customers": np.cumsum(sat, axis=0).ravel(),
                "share": (customers / np.maximum(sizes, 1)).ravel(),
                "value": np.cumsum(value, axis=0).ravel(),
            }
        )

    def curve(self, every: float | None = None) -> pd.DataFrame:
        """Table of period, time, customers, new_customers, satisfied_customers (and, when parts
        of the market open later, market, share_of_current_market, share_of_final_market).

        Parameters
        ----------
        every : float, optional
            Row spacing, 1/n of a period; defaults to ``report_every``. With 1 (the
            default for a scenario that does not ask for finer) there is one row per
            period, T + 1 rows. Finer grids need ``adoption_time``.

        Raises
        ------
        ValueError
            If ``every`` is not 1/n of a period, or is finer than 1 without ``adoption_time``.
        """
        every = self.report_every if every is None else float(every)
        per = int(round(1 / every)) if 0 < every <= 1 else 0
        if per < 1 or abs(1 / every - per) > 1e-9:
            raise ValueError(f"every must be 1/n of a period for a whole n >= 1, got {every!r}")
        if per == 1:
            t = np.arange(self.periods + 1)
            table = pd.DataFrame(
                {
                    "period": t,
                    "time": t.astype(float),
                    "customers": self.customers,
                    "new_customers": self.new_customers,
                    "satisfied_customers": self.satisfied_customers,
                }
            )
            if self.churns:
                table["former_customers"] = self.former_customers
                table["ever_customers"] = self.ever_customers
            if self.warns:
                table["rejecters"] = self.rejecters
            return self._with_market(table)
        if self.adoption_time is None:
            raise ValueError(
                f"a report grid finer than one period needs adoption times; the {self.engine} engine keeps none"
            )
        slots = self.periods * per
        at = self.adoption_time
        seen = ~np.isnan(at)
        # row r covers times ((r − 1)/n, r/n]; row 0 is the seeded state (time 0)
        row = np.ceil(np.round(at[seen] * per, 9)).astype(np.int64)
        new = np.bincount(row, minlength=slots + 1)[: slots + 1]
        sat = np.bincount(row[self.satisfied[seen]], minlength=slots + 1)[: slots + 1]
        k = np.arange(slots + 1)
        table = pd.DataFrame(
            {
                "period": (k + per - 1) // per,
                "time": k / per,
                "customers": np.cumsum(new),
                "new_customers": new,
                "satisfied_customers": np.cumsum(sat),
            }
        )
        if self.churns:
            if self.leave_time is None:
                raise ValueError(
                    f"a report grid finer than one period needs leaving times; the {self.engine} engine keeps none"
                )
            gone = ~np.isnan(self.leave_time)
            out = np.ceil(np.round(self.leave_time[gone] * per, 9)).astype(np.int64)
            former = np.cumsum(np.bincount(out, minlength=slots + 1)[: slots + 1])
            former_sat = np.cumsum(np.bincount(out[self.satisfied[gone]], minlength=slots + 1)[: slots + 1])
            table["ever_customers"] = table["customers"]
            table["customers"] = table["ever_customers"] - former
            table["satisfied_customers"] = table["satisfied_customers"] - former_sat
            table["former_customers"] = former
            table = table[[*CURVE_COLUMNS, *CHURN_COLUMNS]]
        if self.warns:
            if self.rejection_time is None:
                raise ValueError(
                    f"a report grid finer than one period needs rejection times; the {self.engine} engine keeps none"
                )
            gone = ~np.isnan(self.rejection_time)
            rows = np.ceil(np.round(self.rejection_time[gone] * per, 9)).astype(np.int64)
            table["rejecters"] = np.cumsum(np.bincount(rows, minlength=slots + 1)[: slots + 1])
        return self._with_market(table)

    def _with_market(self, table: pd.DataFrame) -> pd.DataFrame:
        """A market that grows (``market.opens``): add the organisations in the market at each row's
        period (``market``), customers' share of it (``share_of_current_market``) and of the final
        market (``share_of_final_market``)."""
        if self.opens_at is None:
            return table
        size = self.market_size[table["period"].to_numpy()]
        table["market"] = size
        table["share_of_current_market"] = table["customers"] / np.maximum(size, 1)
        table["share_of_final_market"] = table["customers"] / self.n
        return table

    def to_frame(self, network: ReferralNetwork | None = None, attributes: pd.DataFrame | None = None) -> pd.DataFrame:
        """One row per organisation: who it is and how it became a customer.

        Parameters
        ----------
        network : ReferralNetwork, optional
            The network the run was on; its ``labels`` (the ids as given, e.g. an edge
            list's or a networkx graph's node ids) become ``id`` and ``referrer``. Without
            it, ids are 0..N−1.
        attributes : pandas.DataFrame, optional
            One row per organisation in network order (e.g.
            :func:`womlab.networks.given.node_attributes` of a networkx graph); its columns
            go after ``region``.

        Returns
        -------
        pandas.DataFrame
            ``id``, ``region`` (code), with segments ``segment`` and ``value_per_period``, in a
            market that grows ``opens_in_period``, the attributes, ``customer`` (at the horizon),
            ``initial``, ``adoption_period`` (period 0 for the initial customers; missing
            if never), ``adoption_time`` (NaN if never or not recorded), ``referrer`` (id
            of the satisfied customer whose word of mouth brought it in; missing for
            external influence, initial customers and non-customers), ``satisfied``, and
            ``referrals`` (how many organisations it brought in). With churn ``customer`` is
            whether it is still one at the horizon, and ``leave_period`` follows (missing if it
            did not leave); with warnings ``rejection_period`` and ``warned_by`` (the id of the
            warner its rejection is attributed to) follow (missing if it did not reject).

        Raises
        ------
        NetworkError
            If ``network`` or ``attributes`` has another number of organisations.

        Examples
        --------
        >>> import networkx as nx
        >>> from womlab import Scenario, run_one
        >>> from womlab.networks.given import as_network
        >>> net = as_network(nx.florentine_families_graph(), 15)
        >>> s = Scenario.from_dict({"market": {"organisations": 15, "initial_customers": 2}, "run": {"periods": 8}})
        >>> table = run_one(s, (0,), network=net).to_frame(net)
        >>> list(table.columns)
        ['id', 'region', 'customer', 'initial', 'adoption_period', 'adoption_time', 'referrer', 'satisfied', 'referrals']
        >>> int(table["initial"].sum()), table["id"].iloc[0]
        (2, 'Acciaiuoli')
        """
        n = self.n
        if network is not None and network.n != n:
            raise NetworkError(f"the network has {network.n} organisations but the run had {n}")
        ids = organisation_ids(network) if network is not None else np.arange(n)
        adopted = self.adoption_period >= 0
        referred = self.referrer >= 0
        initial = np.zeros(n, dtype=bool)
        initial[self.initial] = True
        referrer_ids = ids[np.where(referred, self.referrer, 0)]
        if ids.dtype.kind in "iu":  # whole-number ids: a nullable integer column
            referrer: Any = pd.array(referrer_ids, dtype="Int64")
            referrer[~referred] = pd.NA
        else:
            referrer = referrer_ids.astype(object)
            referrer[~referred] = None
        adoption_period = pd.array(np.where(adopted, self.adoption_period, 0), dtype="Int64")
        adoption_period[~adopted] = pd.NA
        columns: dict[str, Any] = {"id": ids, "region": self.region.astype(np.int64)}
        if self.segment is not None:  # segments ([segments] or a node file's column): name, and value per period
            columns["segment"] = np.array(self.segment_names, dtype=object)[self.segment]
        if self.value is not None:
            columns["value_per_period"] = self.value
        if self.opens_at is not None:
            columns["opens_in_period"] = self.opens_at.astype(np.int64)
        if attributes is not None:
            if len(attributes) != n:
                raise NetworkError(f"attributes has {len(attributes)} rows but the run had {n} organisations")
            for name in attributes.columns:
                if name not in ORGANISATION_COLUMNS:
                    columns[str(name)] = attributes[name].to_numpy()
        columns.update(
            {
                "customer": adopted,
                "initial": initial,
                "adoption_period": adoption_period,
                "adoption_time": (
                    np.full(n, np.nan) if self.adoption_time is None else np.where(adopted, self.adoption_time, np.nan)
                ),
                "referrer": referrer,
                "satisfied": self.satisfied & adopted,
                "referrals": np.bincount(self.referrer[referred], minlength=n)[:n],
            }
        )
        if self.leave_period is not None:  # churn
            left = self.leave_period >= 0
            columns["customer"] = adopted & ~left
            columns["leave_period"] = _with_missing(self.leave_period, left)
        if self.rejection_period is not None:  # warnings
            rejected = self.rejection_period >= 0
            columns["rejection_period"] = _with_missing(self.rejection_period, rejected)
            by = self.warned_by if self.warned_by is not None else np.full(n, -1)
            warner_ids = ids[np.where(rejected, by, 0)]
            if ids.dtype.kind in "iu":
                warned_by: Any = pd.array(warner_ids, dtype="Int64")
                warned_by[~rejected] = pd.NA
            else:
                warned_by = warner_ids.astype(object)
                warned_by[~rejected] = None
            columns["warned_by"] = warned_by
        return pd.DataFrame(columns)

    def region_curve(self) -> pd.DataFrame:
        """Long table: period, region, customers."""
        by = self.customers_by_region()
        periods, regions = np.meshgrid(np.arange(by.shape[0]), np.arange(by.shape[1]), indexing="ij")
        return pd.DataFrame({"period": periods.ravel(), "region": regions.ravel(), "customers": by.ravel()})


def to_networkx(
    result: RunResult, network: ReferralNetwork | None = None, attributes: pd.DataFrame | None = None
) -> nx.DiGraph:
    """The run as a directed graph: every organisation with its adoption, and the referral forest.

    Nodes are the organisations (by ``id`` as given when ``network`` has labels) with the
    columns of :meth:`RunResult.to_frame` as attributes (missing values left out), and
    ``start``, the adoption time, for customers. Each edge runs from a referrer to the
    organisation its word of mouth brought in, with that adoption's ``period`` and
    ``start``; the edges form a forest whose roots are the initial customers and those
    who came by external influence. Written with :func:`networkx.write_gexf`, the
    ``start`` times make a dynamic graph file that graph viewers replay as the spread.

    Parameters
    ----------
    result : RunResult
    network : ReferralNetwork, optional
        The network the run was on, for the ids as given.
    attributes : pandas.DataFrame, optional
        Node attributes in network order, as for :meth:`RunResult.to_frame`.

    Examples
    --------
    >>> import networkx as nx
    >>> from womlab import Scenario, run_one
    >>> s = Scenario.from_dict({"market": {"organisations": 300, "initial_customers": 3},
    ...                         "network": {"kind": "random", "mean_degree": 6}, "run": {"periods": 20}})
    >>> result = run_one(s, (0,))
    >>> forest = to_networkx(result)
    >>> nx.is_forest(forest), forest.number_of_edges() == int((result.referrer >= 0).sum())
    (True, True)
    """
    table = result.to_frame(network, attributes)
    graph = nx.DiGraph()
    records = table.to_dict("records")
    for row in records:
        data = {str(k): _plain(v) for k, v in row.items() if k != "id" and not _missing(v)}
        if not _missing(row["adoption_period"]) and not _missing(row["adoption_time"]):  # a customer at some time
            data["start"] = float(row["adoption_time"])
        graph.add_node(_plain(row["id"]), **data)
    for row in records:
        if not _missing(row["referrer"]):
            edge: dict[str, float] = {"period": int(row["adoption_period"])}
            if not _missing(row["adoption_time"]):
                edge["start"] = float(row["adoption_time"])
            graph.add_edge(_plain(row["referrer"]), _plain(row["id"]), **edge)
    return graph


def _with_missing(values: np.ndarray, present: np.ndarray) -> Any:
    out = pd.array(np.where(present, values, 0), dtype="Int64")
    out[~present] = pd.NA
    return out


def _missing(value: Any) -> bool:
    return value is None or value is pd.NA or (isinstance(value, float) and np.isnan(value))


def _plain(value: Any) -> Any:
    """numpy scalars as Python ones (graph files and viewers want plain types)."""
    return value.item() if isinstance(value, np.generic) else value
