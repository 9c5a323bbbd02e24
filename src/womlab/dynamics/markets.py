"""Who differs and when marketing runs, as the engines take it: segments and a campaign calendar.

:func:`market_inputs` turns a scenario's ``[segments]`` and ``[[campaign]]`` sections (and an
edge list's node-file columns ``segment``, ``size``, ``external``, ``word_of_mouth``) into the
per-organisation arrays the array engine's kernel and the Mesa model read:

* ``segment``: each organisation's segment code. For a generated network the counts are the
  shares of N rounded by largest remainder (so a share of 0.1 of 500 is exactly 50), placed by a
  random permutation drawn from a stream of its own (:func:`segment_rng`, derived from the
  dynamics stream without advancing it, as the referral programme's enrolment is), so that adding
  segments leaves every other draw of the run untouched; for an edge list, the node file's column.
* ``external_weight`` and ``word_of_mouth_weight``: multipliers of p and q (the segment's, times the
  node file's own columns);
* ``satisfied_share`` and ``talkers``: per organisation, the segment's or the ``[adoption]`` value;
* ``value``: value per period of each organisation as a customer (segment value × node ``size``);
* ``external`` and ``group``: the calendar, p per period and group (``external[period, group]``),
  a group being a (region, segment) pair when a campaign names one, else one group.

Without either section every field is None and the engines run exactly as before, bit for bit.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from womlab.errors import ScenarioError
from womlab.networks import ReferralNetwork
from womlab.networks.edgelist import read_node_traits
from womlab.scenario import Scenario
from womlab.scenario.markets import opening_period, openings

__all__ = [
    "MarketInputs",
    "market_inputs",
    "opening_periods",
    "segment_rng",
    "segment_counts",
    "campaign_table",
    "SEGMENT_STREAM",
]

#: Last element of the spawn key of the stream that places organisations in segments
#: (the dynamics stream's key extended by it; "SEGM" in ASCII).
SEGMENT_STREAM = 0x5345474D


@dataclass(frozen=True, eq=False)
class MarketInputs:
    """Per-organisation inputs of one run; None where the mechanism is off (the ``[adoption]`` values).

    Attributes
    ----------
    segment : numpy.ndarray or None
        int32 segment code per organisation (names in ``segment_names``).
    segment_names : tuple of str
    external_weight, word_of_mouth_weight : numpy.ndarray or None
        float64 multipliers of p and q per organisation.
    satisfied_share : numpy.ndarray or None
        Probability per organisation that it is satisfied once a customer.
    talkers : numpy.ndarray or None
        Mean talkers per customer, per organisation.
    value : numpy.ndarray or None
        Value per period of each organisation as a customer.
    external : numpy.ndarray or None
        p per period and group, shape (periods + 1, groups); row 0 unused.
    group : numpy.ndarray or None
        int32 column of ``external`` per organisation.
    opens_at : numpy.ndarray or None
        int32 period in which each organisation enters the market (``market.opens``; 0 = from
        the start): the latest opening that names its region or its segment.
    """

    segment: np.ndarray | None = None
    segment_names: tuple[str, ...] = ()
    external_weight: np.ndarray | None = None
    word_of_mouth_weight: np.ndarray | None = None
    satisfied_share: np.ndarray | None = None
    talkers: np.ndarray | None = None
    value: np.ndarray | None = None
    external: np.ndarray | None = None
    group: np.ndarray | None = None
    opens_at: np.ndarray | None = None

    def external_rate(self, period: int, organisation: int, base: float) -> float:
        """p of ``organisation`` in ``period`` (calendar, then its multiplier), as the kernel computes it."""
        p = (
            base
            if self.external is None
            else float(self.external[period, 0 if self.group is None else self.group[organisation]])
        )
        if self.external_weight is not None:
            p *= float(self.external_weight[organisation])
        return p


def segment_rng(rng: np.random.Generator) -> np.random.Generator:
    """The segment-placement stream of a run whose dynamics stream is ``rng`` (``rng`` is not advanced)."""
    seq = rng.bit_generator.seed_seq
    if not isinstance(seq, np.random.SeedSequence):
        raise TypeError("the dynamics generator must be seeded from a numpy SeedSequence")
    child = np.random.SeedSequence(seq.entropy, spawn_key=(*seq.spawn_key, SEGMENT_STREAM), pool_size=seq.pool_size)
    return np.random.default_rng(child)


def segment_counts(shares: list[float], n: int) -> np.ndarray:
    """Organisations per segment: ``shares`` × ``n`` rounded by largest remainder (summing to ``n``).

    Examples
    --------
    >>> segment_counts([0.1, 0.9], 507).tolist()
    [51, 456]
    >>> segment_counts([1 / 3, 1 / 3, 1 / 3], 10).tolist()
    [4, 3, 3]
    """
    exact = np.asarray(shares, dtype=float) * n
    counts = np.floor(exact).astype(np.int64)
    left = n - int(counts.sum())
    order = np.argsort(-(exact - counts), kind="stable")
    counts[order[:left]] += 1
    return counts


def market_inputs(scenario: Scenario, network: ReferralNetwork, rng: np.random.Generator) -> MarketInputs:
    """The per-organisation inputs of one run whose dynamics stream is ``rng`` (not advanced).

    Examples
    --------
    >>> import numpy as np
    >>> from womlab import Scenario, build_network
    >>> s = Scenario.from_dict({"market": {"organisations": 100}, "network": {"kind": "ring", "mean_degree": 4},
    ...     "segments": {"few": {"share": 0.2, "word_of_mouth": 3}, "many": {"share": 0.8}}})
    >>> m = market_inputs(s, build_network(s, np.random.default_rng(1)),
    ...                   np.random.default_rng(np.random.SeedSequence(5)))
    >>> np.bincount(m.segment).tolist(), float(m.word_of_mouth_weight[m.segment == 0][0])
    ([20, 80], 3.0)
    """
    segments, n = scenario.segments, network.n
    traits = (
        read_node_traits(scenario.network.nodes_path)
        if (scenario.network.kind == "edgelist" and scenario.network.nodes_path is not None)
        else None
    )
    segment, names = None, segments.names
    if traits is not None and "segment" in traits:
        values = traits["segment"].astype(str).to_numpy()
        if segments.active:
            unknown = sorted(set(values) - set(names))
            if unknown:
                raise ScenarioError(
                    f"network.nodes_path {scenario.network.nodes_path!r}: column 'segment' has values "
                    f"not in [segments]: {', '.join(unknown[:5])}; allowed: {', '.join(names)}"
                )
        else:
            names = tuple(sorted(set(values)))
        segment = np.array([names.index(v) for v in values], dtype=np.int32)
    elif segments.active:
        if scenario.network.kind == "edgelist":
            raise ScenarioError(
                f"[segments] with an edge-list network needs a node file (network.nodes_path) with a "
                f"column 'segment' naming each organisation's segment, got "
                f"{scenario.network.nodes_path!r}"
            )
        counts = segment_counts([float(g.share or 0.0) for g in segments.groups], n)
        segment = np.repeat(np.arange(len(counts), dtype=np.int32), counts)[segment_rng(rng).permutation(n)]
        segment = np.ascontiguousarray(segment)

    def per_segment(attribute: str, default: float | None) -> np.ndarray | None:
        if segment is None or not segments.active:
            return None
        values = [getattr(g, attribute) for g in segments.groups]
        if all(v is None for v in values) or (default is not None and all(v == default for v in values)):
            return None
        a = scenario.adoption
        fallback = {"satisfied_share": a.satisfied_share, "talkers": a.talkers_per_customer.mean}.get(attribute, 1.0)
        table = np.array([fallback if v is None else float(v) for v in values])
        return table[segment]

    def times(a: np.ndarray | None, column: str) -> np.ndarray | None:
        if traits is None or column not in traits:
            return a
        own = traits[column].to_numpy(dtype=float)
        return own if a is None else a * own

    external_weight = times(per_segment("external", 1.0), "external")
    wom_weight = times(per_segment("word_of_mouth", 1.0), "word_of_mouth")
    value = times(per_segment("value_per_period", 1.0), "size")
    table, group = campaign_table(scenario, network, segment)
    return MarketInputs(
        segment=segment,
        segment_names=names if segment is not None else (),
        external_weight=external_weight,
        word_of_mouth_weight=wom_weight,
        satisfied_share=per_segment("satisfied_share", None),
        talkers=per_segment("talkers", None),
        value=value,
        external=table,
        group=group,
        opens_at=opening_periods(scenario, network, segment),
    )


def opening_periods(scenario: Scenario, network: ReferralNetwork, segment: np.ndarray | None) -> np.ndarray | None:
    """The period in which each organisation enters the market (0 = from the start); None without
    ``market.opens``. An organisation named by two openings (its region and its segment) enters at
    the later one."""
    entries = openings(scenario.market)
    if not entries:
        return None
    out = np.zeros(network.n, dtype=np.int32)
    for i, o in enumerate(entries):
        if o.region is not None:
            members = network.region == _region_code(o.region, network, f"market.opens[{i}].region")
        else:
            members = segment == scenario.segments.code(o.segment, f"market.opens[{i}].segment")
        out[members] = np.maximum(out[members], opening_period(o, scenario.run.periods))
    return out


def campaign_table(
    scenario: Scenario, network: ReferralNetwork, segment: np.ndarray | None
) -> tuple[np.ndarray | None, np.ndarray | None]:
    """The calendar as ``external[period, group]`` and each organisation's group; (None, None) without one.

    A group is a region when a campaign names a region, a segment when one names a segment,
    and a (region, segment) pair when both kinds are named; otherwise the market is one group.
    Periods without a campaign keep ``adoption.external``.

    Examples
    --------
    >>> import numpy as np
    >>> from womlab import Scenario, build_network
    >>> s = Scenario.from_dict({"market": {"organisations": 10}, "network": {"kind": "complete"},
    ...     "run": {"periods": 4}, "campaign": [{"from": 2, "to": 3, "multiplier": 5}]})
    >>> table, group = campaign_table(s, build_network(s, np.random.default_rng(1)), None)
    >>> table[:, 0].round(3).tolist(), group
    ([0.01, 0.01, 0.05, 0.05, 0.01], None)
    """
    campaigns = scenario.campaign.entries
    if not campaigns:
        return None, None
    T, base = scenario.run.periods, float(scenario.adoption.external)
    by_region = any(c.region is not None for c in campaigns)
    by_segment = any(c.segment is not None for c in campaigns)
    regions = network.regions if by_region else 1
    nseg = len(scenario.segments.names) if by_segment else 1
    region_of = network.region if by_region else np.zeros(network.n, dtype=np.int32)
    segment_of = segment if (by_segment and segment is not None) else np.zeros(network.n, dtype=np.int32)
    group = (region_of.astype(np.int32) * nseg + segment_of).astype(np.int32)
    table = np.full((T + 1, regions * nseg), base)
    for i, c in enumerate(campaigns):
        columns = np.ones((regions, nseg), dtype=bool)
        if c.region is not None:
            columns[:] = False
            columns[_region_code(c.region, network, f"campaign[{i}].region"), :] = True
        if c.segment is not None:
            columns[:] = False
            columns[:, scenario.segments.code(c.segment, f"campaign[{i}].segment")] = True
        table[c.first : c.last + 1, columns.ravel()] = c.p(base)
    return np.ascontiguousarray(table), (None if table.shape[1] == 1 else np.ascontiguousarray(group))


def _region_code(region: object, network: ReferralNetwork, where: str) -> int:
    if network.region_names is not None:
        names = [str(v) for v in network.region_names]
        if str(region) in names:
            return names.index(str(region))
        raise ScenarioError(f"{where} must be one of the network's regions ({', '.join(names[:10])}), got {region!r}")
    if isinstance(region, int) and 0 <= region < network.regions:
        return region
    raise ScenarioError(f"{where} must be a region code between 0 and {network.regions - 1}, got {region!r}")
