"""The ``[fit]`` section: which scenario fields a fit to an observed series may move, and how.

A fit (:func:`womlab.fit_observed`) treats some numeric scenario fields as unknown and
learns them from an observed adoption series by approximate Bayesian computation. This
section names those fields (``free``), gives each a prior (``[fit.priors]``, keyed by the
dotted field, like sweep axes) and sets the sequential Monte Carlo's budget::

    [fit]
    free = ["adoption.external", "adoption.word_of_mouth", "market.organisations"]
    particles = 200             # accepted parameter sets per generation
    generations = 10            # at most this many generations after the first
    simulations = 6000          # at most this many simulations in all
    quantile = 0.5              # each tolerance: this quantile of the last generation's distances
    min_acceptance = 0.03       # stop once fewer than this share of proposals is accepted
    network_kinds = ["random", "small_world"]   # optional: the network kind is free too
    [fit.priors]
    "adoption.external" = { distribution = "log_uniform", low = 0.0001, high = 0.1 }
    "adoption.word_of_mouth" = { distribution = "normal", mean = 0.4, sd = 0.2, low = 0.01, high = 2 }

A free field without a prior of its own gets a default where womlab has one
(:data:`DEFAULT_PRIORS`; the market size's default is set from the data at fit time)
and is refused otherwise. Every prior's bounds are checked against what the field
allows by building the scenario at those bounds, so ``satisfied_share`` cannot be given a
prior reaching 1.2.
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import dataclass
from pathlib import Path
from typing import Any, ClassVar

from womlab.errors import ScenarioError
from womlab.scenario.checks import coerce, fail, in_unit, one_of, positive_int, unknown_field
from womlab.scenario.sections import NETWORK_KINDS
from womlab.scenario.sweep_spec import field_type_in

__all__ = ["Prior", "FitSpec", "PRIOR_DISTRIBUTIONS", "DEFAULT_PRIORS", "DEFAULT_FREE", "parse_priors"]

PRIOR_DISTRIBUTIONS = ("uniform", "log_uniform", "normal")

#: Fields a fit frees when ``fit.free`` is not given (the market size only when the data do
#: not give it).
DEFAULT_FREE = ("adoption.external", "adoption.word_of_mouth", "market.organisations")


@dataclass(frozen=True, kw_only=True)
class Prior:
    """The prior of one free scenario field.

    ``uniform`` on [``low``, ``high``]; ``log_uniform`` (uniform in the logarithm, for scale
    parameters that may range over orders of magnitude) on [``low``, ``high``] with
    ``low`` > 0; ``normal`` (``mean``, ``sd``) truncated to [``low``, ``high``], either bound
    optional. Whole-number fields (``market.organisations``) take the draw rounded.
    """

    name: str
    distribution: str = "uniform"
    low: float | None = None
    high: float | None = None
    mean: float | None = None
    sd: float | None = None

    def to_table(self) -> dict[str, Any]:
        """The prior as written in a scenario file."""
        table: dict[str, Any] = {"distribution": self.distribution}
        for key in ("low", "high", "mean", "sd"):
            if getattr(self, key) is not None:
                table[key] = getattr(self, key)
        return table

    def describe(self) -> str:
        """One line, e.g. ``log_uniform [0.0001, 0.1]``."""
        if self.distribution == "normal":
            bounds = (
                f" on [{_fmt(self.low)}, {_fmt(self.high)}]" if self.low is not None or self.high is not None else ""
            )
            return f"normal (mean {self.mean:g}, sd {self.sd:g}){bounds}"
        return f"{self.distribution} [{self.low:g}, {self.high:g}]"

    def check(self, where: str) -> None:
        one_of(f"{where}.distribution", self.distribution, PRIOR_DISTRIBUTIONS)
        for key in ("low", "high", "mean", "sd"):
            value = getattr(self, key)
            if value is not None and not math.isfinite(value):
                fail(f"{where}.{key}", value, "a finite number")
        if self.distribution in ("uniform", "log_uniform"):
            for key in ("low", "high"):
                if getattr(self, key) is None:
                    raise ScenarioError(f"{where}.{key} is required for distribution = {self.distribution!r}")
            if self.distribution == "log_uniform" and self.low <= 0:
                fail(f"{where}.low", self.low, "> 0 for distribution = 'log_uniform'")
            for key in ("mean", "sd"):
                if getattr(self, key) is not None:
                    raise ScenarioError(
                        f"{where}.{key} belongs to distribution = 'normal', "
                        f"not {self.distribution!r}; got {getattr(self, key)!r}"
                    )
        else:
            for key in ("mean", "sd"):
                if getattr(self, key) is None:
                    raise ScenarioError(f"{where}.{key} is required for distribution = 'normal'")
            if self.sd <= 0:
                fail(f"{where}.sd", self.sd, "> 0")
        if self.low is not None and self.high is not None and self.low >= self.high:
            fail(f"{where}.high", self.high, f"> {where}.low = {self.low:g}")

    def bounds(self) -> tuple[float, float]:
        """The support: (low, high), infinite where a normal prior has no bound."""
        return (-math.inf if self.low is None else self.low, math.inf if self.high is None else self.high)


def _fmt(value: float | None) -> str:
    return "unbounded" if value is None else f"{value:g}"


#: Priors a free field gets when ``[fit.priors]`` gives none. The external influence p and
#: the word-of-mouth strength q range over orders of magnitude around the values Bass-model
#: meta-analyses report (mean p ≈ 0.03, q ≈ 0.38 per year in Sultan, Farley & Lehmann 1990,
#: "A meta-analysis of applications of diffusion models", Journal of Marketing Research
#: 27(1), 70–77); a period may be shorter than a year, so the ranges are wide. The satisfied
#: share is anything in [0, 1]. The market size's default (from the largest count observed
#: to ten times it, log-uniform) is set from the data when the fit starts.
DEFAULT_PRIORS: dict[str, Prior] = {
    "adoption.external": Prior(name="adoption.external", distribution="log_uniform", low=1e-4, high=0.2),
    "adoption.word_of_mouth": Prior(name="adoption.word_of_mouth", distribution="log_uniform", low=0.01, high=3.0),
    "adoption.satisfied_share": Prior(name="adoption.satisfied_share", distribution="uniform", low=0.0, high=1.0),
}


@dataclass(frozen=True, kw_only=True)
class FitSpec:
    """How a fit to an observed series runs (:func:`womlab.fit_observed`).

    Parameters
    ----------
    free : list of str, optional
        Dotted numeric scenario fields to learn. Default: the fields with a prior in
        ``[fit.priors]``, else ``adoption.external``, ``adoption.word_of_mouth`` and (when
        the data do not give the market size) ``market.organisations``.
    priors : tuple of Prior
        Read from ``[fit.priors]``: dotted field = ``{distribution, low, high, mean, sd}``.
    particles : int
        Accepted parameter sets per generation of the sequential Monte Carlo.
    generations : int
        At most this many generations after the first (drawn from the prior).
    simulations : int
        Budget: at most this many simulations in all; a generation that cannot finish
        within it is not started.
    quantile : float
        Each generation's tolerance is this quantile of the previous generation's
        distances (Beaumont et al. 2009; Del Moral et al. 2012).
    min_acceptance : float
        Stop once a generation accepts fewer than this share of its proposals.
    network_kinds : list of str
        Network kinds to choose among (empty: the scenario's own kind only). The fit then
        reports posterior probabilities of the kinds.
    data_path : str, optional
        The observed series to fit (a CSV, :func:`womlab.read_observed`), relative to the
        scenario file; ``womlab fit --data`` or ``fit_observed(observed=...)`` overrides it.
    """

    section: ClassVar[str] = "fit"
    free: tuple[str, ...] | None = None
    priors: tuple[Prior, ...] = ()
    particles: int = 200
    generations: int = 10
    simulations: int = 6000
    quantile: float = 0.5
    min_acceptance: float = 0.03
    network_kinds: tuple[str, ...] = ()
    data_path: str | None = None

    def check(self, scenario: Any) -> None:
        if self.data_path is not None and not Path(self.data_path).is_file():
            fail("fit.data_path", self.data_path, "an existing CSV file (period and new_customers or customers)")
        positive_int("fit.particles", self.particles)
        if self.particles < 10:
            fail("fit.particles", self.particles, "a whole number >= 10 (a population needs a spread to move)")
        positive_int("fit.generations", self.generations)
        if self.simulations < 2 * self.particles:
            fail("fit.simulations", self.simulations, f"at least 2 x fit.particles = {2 * self.particles}")
        if not 0.0 < self.quantile < 1.0:
            fail("fit.quantile", self.quantile, "strictly between 0 and 1")
        in_unit("fit.min_acceptance", self.min_acceptance)
        names = self.free_fields()
        if len(set(names)) != len(names):
            fail("fit.free", list(names), "a list without repeated fields")
        for i, name in enumerate(names):
            where = "fit.free" if self.free is None else f"fit.free[{i}]"
            _check_numeric(name, where, type(scenario))
        for prior in self.priors:
            where = f"fit.priors.{prior.name!r}"
            if prior.name not in names:
                raise ScenarioError(f"{where}: {prior.name} is not a free field (fit.free = {list(names)})")
            prior.check(where)
        if len({p.name for p in self.priors}) != len(self.priors):
            fail("fit.priors", [p.name for p in self.priors], "one prior per field")
        for i, kind in enumerate(self.network_kinds):
            one_of(f"fit.network_kinds[{i}]", kind, NETWORK_KINDS)
        if len(set(self.network_kinds)) != len(self.network_kinds):
            fail("fit.network_kinds", list(self.network_kinds), "a list without repeated kinds")
        if "network.kind" in names:
            raise ScenarioError(
                "fit.free: network.kind is not a number; list the kinds to choose among in fit.network_kinds"
            )
        replace = getattr(scenario, "replace", None)
        if replace is None:  # pragma: no cover - a Scenario always has replace
            return
        plain = {"fit.free": [], "fit.priors": {}, "fit.network_kinds": []}
        for prior in self.priors:
            where = f"fit.priors.{prior.name!r}"
            for key in ("low", "high", "mean"):
                value = getattr(prior, key)
                if value is None:
                    continue
                kind = field_type_in(type(scenario), prior.name)
                try:
                    replace({**plain, prior.name: int(round(value)) if kind is int else value})
                except ScenarioError as exc:
                    raise ScenarioError(
                        f"{where}.{key} = {value:g} is outside what {prior.name} allows: {exc}"
                    ) from None
        for i, kind in enumerate(self.network_kinds):
            try:
                replace({**plain, "network.kind": kind})
            except ScenarioError as exc:
                raise ScenarioError(f"fit.network_kinds[{i}] = {kind!r} does not suit this scenario: {exc}") from None

    def free_fields(self) -> tuple[str, ...]:
        """The free fields as given (``free``, else those with priors); the data-dependent
        default is settled by :func:`womlab.fit_observed`."""
        if self.free is not None:
            return tuple(self.free)
        return tuple(p.name for p in self.priors)

    def prior(self, name: str) -> Prior | None:
        """The prior given for ``name`` in ``[fit.priors]``, or None."""
        for p in self.priors:
            if p.name == name:
                return p
        return None

    def to_table(self) -> dict[str, Any]:
        """The section as written in a scenario file (priors keyed by dotted field)."""
        table: dict[str, Any] = {
            "particles": self.particles,
            "generations": self.generations,
            "simulations": self.simulations,
            "quantile": self.quantile,
            "min_acceptance": self.min_acceptance,
            "network_kinds": list(self.network_kinds),
            "priors": {p.name: p.to_table() for p in self.priors},
        }
        if self.free is not None:
            table["free"] = list(self.free)
        return table


def _check_numeric(name: str, where: str, root: type) -> None:
    if (
        name == "seed"
        or name.startswith(("fit.", "sweep.", "study.", "run."))
        or name in ("fit", "sweep", "study", "run")
    ):
        raise ScenarioError(
            f"{where}: {name!r} cannot be fitted; free fields describe the market, network, "
            "adoption, seeding or referral programme"
        )
    try:
        kind = field_type_in(root, name)
    except ScenarioError as exc:
        raise ScenarioError(f"{where}: {exc}") from None
    if kind not in (int, float):
        raise ScenarioError(f"{where}: {name} is {kind.__name__}, not a number; only numeric fields can be fitted")


def parse_priors(value: Any, dotted: str) -> tuple[Prior, ...]:
    """Parse ``[fit.priors]``: dotted field → ``{distribution, low, high, mean, sd}``."""
    if isinstance(value, (list, tuple)) and all(isinstance(p, Prior) for p in value):
        return tuple(value)
    if not isinstance(value, Mapping):
        raise ScenarioError(
            f"[{dotted}] must be a table of dotted field = {{ distribution, low, high }}, got {value!r}"
        )
    priors = []
    known = ["distribution", "low", "high", "mean", "sd"]
    for name, spec in value.items():
        where = f"{dotted}.{name!r}"
        if not isinstance(spec, Mapping):
            raise ScenarioError(f"{where} must be a table {{ distribution, low, high }} (or mean, sd), got {spec!r}")
        for key in spec:
            if key not in known:
                unknown_field(f"{where}.{key}", known)
        priors.append(
            Prior(
                name=str(name),
                distribution=coerce(spec.get("distribution", "uniform"), str, f"{where}.distribution"),
                **{key: coerce(spec.get(key), float | None, f"{where}.{key}") for key in ("low", "high", "mean", "sd")},
            )
        )
    return tuple(priors)
