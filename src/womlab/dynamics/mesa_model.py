"""The Mesa model: one agent per organisation, the textbook per-agent form of the rules.

This is the only module of womlab that imports Mesa, so that a change in Mesa's API
touches one file. It mirrors the array engine (:mod:`womlab.dynamics.array_engine`) rule for rule —
both call the formulas of :mod:`womlab.rules` — but decides one organisation at a time,
the way the rules are usually written down:

1. At the start of each step every potential customer sums what its neighbours put
   into its Tᵢ (:func:`~womlab.rules.talk_weight`: the talkers of satisfied customers;
   under ``cascade`` 1 for each neighbour satisfied within the last period) — read from
   its neighbours on Mesa's network space — and, with the summed talkers of all its
   neighbours (Dᵢ) and, under ``threshold``, its own threshold θᵢ
   (:func:`~womlab.rules.draw_thresholds`, drawn at creation), gets its rate from
   :func:`~womlab.rules.rate` and its step probability from
   :func:`~womlab.rules.probability` — the compiled formulas the array engine's step calls.
2. It draws its own uniform against that probability. An organisation that adopts
   draws its cause: external with probability :func:`~womlab.rules.external_part`,
   otherwise one satisfied-customer neighbour, chosen with probability proportional
   to its talkers (a roulette wheel walked over its neighbours).
3. Only when every potential customer has decided are the adoptions applied
   (compute-then-apply, a synchronous update): each new customer draws whether it is
   satisfied (:func:`~womlab.rules.draw_satisfied`) and, if so, starts talking in the
   next step.

The array engine instead draws one Exp(1) resistance per organisation and compares it
with the summed step hazard; the two methods have the same per-step probabilities, and
``tests/test_engines_agree.py`` holds their curves together statistically.

A referral programme (``[referral]``, :mod:`womlab.dynamics.programme`) is run by the same
:class:`~womlab.dynamics.programme.ProgrammeRun` as in the array engine, at the same two points:
at the start of each step it says which talkers count (boosted for enrolled satisfied
customers while it runs; each agent's ``counted``), and after the step's adoptions it
pays for the step's attributed referrals.

On the ``complete`` network no ties are materialised: organisations sit on an empty
network space and every organisation's neighbourhood is all the others, so Tᵢ and Dᵢ
come from model-level totals (the talk of all satisfied customers; all talkers but
one's own).

Randomness: every draw comes from one numpy stream, ``model.rng``, which is the
dynamics stream handed in (or the run's dynamics stream from
:func:`womlab.dynamics.streams`). Mesa's stdlib ``model.random`` is seeded from it but
never used for a draw.

Mesa versions. The model runs on Mesa 3.3 (the newest for Python 3.11) through 3.5 (Python
3.12 and newer); ``make test`` runs its tests on both. Three habits of Mesa are handled
here, each behind a check of the version or of the signature that has it:

- Mesa up to 3.4 forces the multiprocessing start method to ``spawn`` when
  ``mesa.batchrunner`` is imported; this module puts the previous setting back, so that
  importing womlab changes nothing outside it (3.5 sets it only inside ``batch_run``).
- Mesa up to 3.4 numbers agents in ``mesa.Agent._ids``, a class-level dict keyed by the
  model; :func:`run_mesa` drops the finished model's entry so that it can be freed.
- Mesa 3.5's ``discrete_space.Network`` lays the graph out with a spring layout unless
  told ``layout=None`` (11.7 s at 1,000 organisations); the model passes ``layout=None``
  wherever the space accepts it.

Mesa 3.5's ``Model`` has a ``scenario`` property of its own (Mesa's experiment
parameters), so womlab's scenario is kept as :attr:`ReferralModel.womlab_scenario`.
"""

from __future__ import annotations

import bisect
import copy
import dataclasses
import difflib
import inspect
import itertools
import math
import multiprocessing
import re
from collections.abc import Mapping, Sequence
from typing import Any

import networkx as nx
import numpy as np

_start_method = multiprocessing.get_start_method(allow_none=True)
import mesa  # noqa: E402
from mesa.agent import AgentSet  # noqa: E402
from mesa.discrete_space import FixedAgent, Network  # noqa: E402

#: The installed Mesa's (major, minor) version.
MESA_VERSION: tuple[int, ...] = tuple(int(part) for part in re.findall(r"\d+", mesa.__version__)[:2])

# Mesa <= 3.4: importing mesa.batchrunner forces the start method; put it back
if MESA_VERSION < (3, 5) and multiprocessing.get_start_method(allow_none=True) != _start_method:
    multiprocessing.set_start_method(_start_method, force=True)
del _start_method

# Mesa >= 3.5 lays a Network space out (spring layout) unless told layout=None
_SPACE_OPTIONS: dict[str, Any] = {"layout": None} if "layout" in inspect.signature(Network.__init__).parameters else {}
try:  # Mesa >= 3.5: its own experiment parameters, which its browser view passes back as `scenario=`
    from mesa.experimental.scenarios import Scenario as _MesaScenario  # noqa: E402
except ImportError:  # Mesa <= 3.4
    _MesaScenario = None

from womlab import rules  # noqa: E402
from womlab.dynamics.markets import market_inputs  # noqa: E402
from womlab.dynamics.programme import start_programme  # noqa: E402
from womlab.dynamics.references import with_references  # noqa: E402
from womlab.dynamics.run_result import RunResult  # noqa: E402
from womlab.dynamics.streams import CHURN_STREAM, WARNING_STREAM, mechanism_rng, streams  # noqa: E402
from womlab.errors import ScenarioError  # noqa: E402
from womlab.networks import ReferralNetwork, build_network  # noqa: E402
from womlab.networks.given import GivenNetwork, as_network  # noqa: E402
from womlab.scenario import SECTIONS, Scenario  # noqa: E402
from womlab.seeding import initial_customers  # noqa: E402

__all__ = ["ReferralModel", "Organisation", "run_mesa", "FLAT_PARAMETERS", "MESA_VERSION", "flat_parameters"]

# these describe batches, studies and sweeps, not one model run
_NOT_FLAT_SECTIONS = {"study", "sweep"}
_NOT_FLAT = {("run", "replicates"), ("run", "engine"), ("run", "jobs")}


def _flat_parameters() -> tuple[dict[str, str], dict[str, list[str]]]:
    fields = [
        (section, f.name)
        for section, cls in SECTIONS.items()
        if section not in _NOT_FLAT_SECTIONS and not hasattr(cls, "from_table")
        for f in dataclasses.fields(cls)
        if (section, f.name) not in _NOT_FLAT
    ]
    flat = {"name": "name", "seed": "seed"}
    # a section with a file form of its own (segments, campaigns) is one parameter, in that form
    flat.update({section: section for section, cls in SECTIONS.items() if hasattr(cls, "from_table")})
    flat.update({f"{section}_{name}": f"{section}.{name}" for section, name in fields})
    owners: dict[str, list[str]] = {}
    for section, name in fields:
        owners.setdefault(name, []).append(f"{section}_{name}")
    ambiguous = {name: spelled for name, spelled in owners.items() if len(spelled) > 1}
    for section, name in fields:
        if name not in ambiguous and name not in flat:
            flat[name] = f"{section}.{name}"
    return flat, ambiguous


#: Flat keyword parameter of :class:`ReferralModel` → the dotted scenario field it sets.
#: Every field is ``<section>_<field>`` (``adoption_word_of_mouth``); a field whose name
#: is used by no other section is also its bare name (``word_of_mouth``).
FLAT_PARAMETERS, _AMBIGUOUS = _flat_parameters()


def flat_parameters(scenario: Scenario) -> dict[str, Any]:
    """The flat keyword parameters of :class:`ReferralModel` that rebuild ``scenario``.

    Every field that describes one run, as ``<section>_<field>`` (plus ``name`` and
    ``seed``), in its file form: what Mesa's batch runner and browser view pass back to
    the model.

    Examples
    --------
    >>> s = Scenario.from_dict({"market": {"organisations": 120, "regions": 3}, "network": {"kind": "regional"},
    ...                         "adoption": {"talkers_per_customer": {"distribution": "poisson", "mean": 2}}})
    >>> flat = flat_parameters(s)
    >>> flat["adoption_talkers_per_customer"], "run_replicates" in flat
    ({'distribution': 'poisson', 'mean': 2.0}, False)
    >>> ReferralModel(**flat).womlab_scenario == s
    True
    """
    out: dict[str, Any] = {}
    for key, value in scenario.to_dict().items():
        if key in SECTIONS and hasattr(SECTIONS[key], "from_table"):
            if value:
                out[key] = value
        elif isinstance(value, dict) and key in SECTIONS:
            out.update({f"{key}_{k}": v for k, v in value.items() if f"{key}_{k}" in FLAT_PARAMETERS})
        elif key in FLAT_PARAMETERS:
            out[key] = value
    return out


def _scenario_from_flat(scenario: Scenario | None, parameters: Mapping[str, Any]) -> Scenario:
    """The scenario a model is built from: ``scenario`` (or the defaults) with the flat parameters set."""
    for key in parameters:
        if key in _AMBIGUOUS:
            raise ScenarioError(
                f"ReferralModel parameter {key!r} is a field of more than one section; "
                f"give one of {', '.join(_AMBIGUOUS[key])}"
            )
        if key not in FLAT_PARAMETERS:
            close = difflib.get_close_matches(key, list(FLAT_PARAMETERS), n=1)
            hint = f"; did you mean {close[0]!r}?" if close else ""
            raise ScenarioError(
                f"unknown ReferralModel parameter {key!r}{hint} (known: {', '.join(sorted(FLAT_PARAMETERS))})"
            )
    if scenario is not None:
        if not parameters:
            return scenario
        return scenario.replace({FLAT_PARAMETERS[k]: v for k, v in parameters.items()})
    nested: dict[str, Any] = {}
    for key, value in parameters.items():
        dotted = FLAT_PARAMETERS[key]
        if "." in dotted:
            section, name = dotted.split(".")
            nested.setdefault(section, {})[name] = value
        else:
            nested[dotted] = value
    return Scenario.from_dict(nested)


class Organisation(FixedAgent):
    """One organisation, fixed to its cell of the referral network.

    Attributes
    ----------
    organisation : int
        Its id on the referral network, 0..N−1 (Mesa's ``unique_id`` is that plus one).
    talkers : float
        How many people there would talk about the product once it is a satisfied
        customer, drawn at creation by :func:`womlab.rules.draw_talkers`.
    customer : bool
        Whether it is a customer.
    satisfied : bool
        Whether it is a satisfied customer (drawn at adoption).
    threshold : float or None
        Its own threshold θᵢ (``threshold`` rule only), drawn at creation by
        :func:`womlab.rules.draw_thresholds`.
    talk : float
        What it puts into its neighbours' Tᵢ now (:func:`womlab.rules.talk_weight`):
        ``talkers`` if a satisfied customer, else 0; under ``cascade`` 1 in the step that
        ends one period after it became a satisfied customer (its one attempt), else 0.
    counted : float
        The talkers that count this step: ``talk``, boosted while a referral programme
        in which it is enrolled runs.
    former : bool
        Whether it was a customer and left (churn); it then neither talks nor adopts again.
    leave_step : int
        Churn: the step in which it left, −1 if it has not.
    rejecter : bool
        Warnings: whether it was warned off the product; it never adopts.
    warn : float
        Warnings: what it puts into its neighbours' warning exposure Wᵢ now
        (:func:`womlab.rules.warn_weight`).
    adoption_period : int
        Period in which it became a customer (0 for initial customers), −1 if not yet.
    adoption_step : int
        Step in which it became a customer (0 for initial customers), −1 if not yet; its
        adoption time is the end of that step, ``adoption_step * run.time_step``.
    referrer : int
        Id of the satisfied customer whose word of mouth caused its adoption; −1 for
        external influence, initial customers and potential customers.
    neighbours : list of Organisation
        Its neighbours on the network space (empty on the complete network, where
        every other organisation is a neighbour and the model supplies totals).

    Subclass it to give organisations attributes or a decision of their own, and hand the
    subclass to :class:`ReferralModel` as ``agent_class``: it is created as
    ``agent_class(model, cell, organisation)``; :meth:`decide` sets ``adopting`` (and
    the cause) from the state at the start of the step, :meth:`adopt` applies it.

    Examples
    --------
    >>> from womlab.dynamics.mesa_model import ReferralModel
    >>> model = ReferralModel(organisations=50, initial_customers=5, kind="ring", mean_degree=4)
    >>> sorted(other.organisation for other in model.organisation(0).neighbours)
    [1, 2, 48, 49]
    >>> model.organisation(0).talkers
    1.0
    """

    def __init__(self, model: ReferralModel, cell: Any, organisation: int) -> None:
        super().__init__(model)
        self.cell = cell
        self.organisation = organisation
        spec = model.womlab_scenario.adoption.talkers_per_customer
        market = model.market  # segments and calendar (dynamics.markets); None fields without them
        own = None if market.talkers is None else market.talkers[organisation : organisation + 1]
        self.talkers = float(rules.draw_talkers(spec, 1, model.rng, own)[0])
        adoption = model.womlab_scenario.adoption
        self.satisfied_share = (
            adoption.satisfied_share if market.satisfied_share is None else float(market.satisfied_share[organisation])
        )
        self.word_of_mouth_weight = (
            1.0 if market.word_of_mouth_weight is None else float(market.word_of_mouth_weight[organisation])
        )
        self.threshold = (
            float(rules.draw_thresholds(adoption.threshold, 1, model.rng)[0]) if adoption.rule == "threshold" else None
        )
        self.fresh_until = -1  # under cascade: the step of its one attempt, one period after it adopted
        self.customer = False
        self.former = False
        self.leave_step = -1
        self.rejecter = False
        self.rejecting = False
        self.rejection_step = -1
        self.warned_by = -1
        self.warn = 0.0
        self.warn_since = -1
        self.satisfied = False
        self.talk = 0.0
        self.counted = 0.0
        self.adoption_period = -1
        self.adoption_step = -1
        self.referrer = -1
        self.neighbours: list[Organisation] = []
        self.neighbour_talkers = 0.0
        self.adopting = False
        self._cause = -1

    def meet_neighbours(self) -> None:
        """Read its neighbours off the network space (once; the network does not change).

        From the cell's ``connections``, not ``cell.neighborhood``: in Mesa 3.3 the latter
        goes through a class-level cache that keeps every cell — and so every model —
        alive for the life of the process.
        """
        self.neighbours = [agent for cell in self.cell.connections.values() for agent in cell.agents]
        self.neighbour_talkers = float(sum(n.talkers for n in self.neighbours))

    def decide(self) -> None:
        """Compute phase: from the neighbours' state at the start of the step, draw whether to adopt."""
        model = self.model
        opens_at = model.market.opens_at
        if opens_at is not None and opens_at[self.organisation] > model.period:
            return  # its part of the market has not opened: it feels nothing
        if model.complete:
            talking = model.talk_total  # a potential customer's own talk is 0
            total = model.talkers_total - self.talkers
        else:
            talking = 0.0
            for other in self.neighbours:
                talking += other.counted
            total = self.neighbour_talkers
        probability, external = model.chances(talking, total, self.threshold, organisation=self.organisation)
        rng = model.rng
        self.adopting = bool(rng.random() < probability)
        if model.warn_rng is not None and self._warned(probability, total):  # ---- warnings
            self.adopting = False
            return
        if not self.adopting:
            return
        if rng.random() < external:
            self._cause = -1
            return
        # word of mouth: a roulette wheel over the talking neighbours, slots sized by their talk
        if model.complete:
            speakers, cumulative = model.talking_now()
            pick = bisect.bisect_right(cumulative, rng.random() * cumulative[-1])
            self._cause = speakers[min(pick, len(speakers) - 1)].organisation
            return
        left = rng.random() * talking
        for other in self.neighbours:
            if other.counted > 0:
                self._cause = other.organisation
                left -= other.counted
                if left < 0:
                    break

    def _warned(self, probability: float, total: float) -> bool:
        """Warnings, compute phase: whether it becomes a rejecter in this step. Its own uniform from
        the warning stream against the step probability of :func:`womlab.rules.step_rejection_hazard`;
        where adoption came too, the earlier of the two within the step wins
        (:func:`womlab.rules.crossing_fraction`, :func:`womlab.rules.rejects_first`). A rejection
        is attributed to a warning neighbour ∝ its weight, with one more uniform."""
        model = self.model
        warned = model.warn_total if model.complete else sum(other.warn for other in self.neighbours)
        if warned == 0.0:
            return False
        rule = model._rule[0]
        theta = 0.0 if self.threshold is None else float(self.threshold)
        a = model.womlab_scenario.adoption
        h_r = rules.step_rejection_hazard(
            rule, float(warned), float(total), theta, float(a.warning), model.time_step, model._form
        )
        wrng = model.warn_rng
        if not wrng.random() < -math.expm1(-h_r):
            return False
        if self.adopting:
            h_a = -math.log1p(-probability) if probability < 1.0 else math.inf
            if not rules.rejects_first(
                rules.crossing_fraction(h_a, wrng.random()), 1.0, rules.crossing_fraction(h_r, wrng.random()), 1.0
            ):
                return False
        # who warned: a roulette wheel over the warners, slots sized by their weight
        warners = model.warners_now() if model.complete else [o for o in self.neighbours if o.warn > 0]
        left = wrng.random() * sum(o.warn for o in warners)
        for other in warners:
            self.warned_by = other.organisation
            left -= other.warn
            if left < 0:
                break
        self.rejecting = True
        return True

    def reject(self) -> None:
        """Warnings, apply phase: become a rejecter (warning others from the next step where rejecters warn)."""
        self.rejecting = False
        self.rejecter = True
        self.rejection_step = self.model.step_count
        if self.model.womlab_scenario.adoption.rejecters_warn:
            self.warn_since = self.model.step_count

    def adopt(self, period: int) -> None:
        """Apply phase: become a customer in ``period`` and draw whether satisfied."""
        model = self.model
        self.customer = True
        self.adopting = False
        self.adoption_period = period
        self.adoption_step = model.step_count
        self.referrer = self._cause
        self.satisfied = bool(rules.draw_satisfied(self.satisfied_share, 1, model.rng)[0])
        self.fresh_until = model.step_count + model.steps_per_period  # cascade: its attempt, one period on
        self.talk = self.counted = model.talk_weight(self)
        if not self.satisfied:  # warnings: a dissatisfied customer warns from now
            self.warn_since = model.step_count

    def leave(self) -> None:
        """Churn, apply phase: stop being a customer (a former customer, silent from the next step)."""
        self.customer = False
        self.former = True
        self.leave_step = self.model.step_count
        self.talk = self.counted = 0.0
        if self.warn_since < 0 and self.model.womlab_scenario.adoption.former_warn:
            self.warn_since = self.model.step_count


class ReferralModel(mesa.Model):
    """Word-of-mouth adoption on a referral network, one Mesa agent per organisation.

    Each call to :meth:`step` is one step of length ``run.time_step``: every potential
    customer decides from its neighbours' state at the start of the step, then all
    adoptions are applied at once (see :mod:`womlab.dynamics.mesa_model`). With ``time_step`` = 1/n
    there are n steps per period, and an organisation adopting in step s gets the
    adoption period ⌈s / n⌉.

    Parameters
    ----------
    scenario : Scenario, optional
        The scenario to run; defaults to womlab's defaults. Only its ``market``,
        ``network``, ``adoption`` and ``run`` (periods, time_step, step_probability)
        sections are used.
    network : ReferralNetwork, networkx.Graph or pandas.DataFrame, optional
        The referral network: arrays, a networkx graph (any node ids, optional integer
        ``region`` attribute; read, never changed) or an edge table (columns ``source``,
        ``target``), read by :func:`womlab.networks.given.as_network`; its size must be
        ``market.organisations``. By default the network is built from the run's network
        stream, exactly as :func:`womlab.run_one` builds it.
    initial : sequence of int, optional
        Ids of the customers at period 0; by default drawn from the run's seeding
        stream, as :func:`womlab.run_one` draws them.
    rng : numpy.random.Generator or int, optional
        The dynamics stream (an int seeds a new Generator); by default the run's
        dynamics stream. Every draw of the model comes from it.
    replicate : int
        The replicate whose streams (``SeedSequence(seed, spawn_key=(replicate,))``)
        supply the defaults above, so ``ReferralModel(..., replicate=r)`` is replicate
        r of :func:`womlab.run_replicates` with ``engine = "mesa"``. Give Mesa's batch
        runner ``"replicate": range(R)`` for R different replicates (its
        ``iterations`` repeat the same seeded run).
    agent_class : type, optional
        The agents' class: :class:`Organisation` or a subclass of it with attributes or
        a decision of its own. Created as ``agent_class(model, cell, organisation)``.
    agent_reporters : mapping, optional
        Mesa agent reporters (column name → attribute name or function of an agent),
        collected every step beside the model reporters
        (``model.datacollector.get_agent_vars_dataframe()``).
    **kwargs
        Flat scenario fields, for Mesa's batch runner and browser view (which needs the
        catch-all to be called ``kwargs``): each name in
        :data:`FLAT_PARAMETERS` sets one dotted field. Every field of a section that
        describes one run is ``<section>_<field>`` (``adoption_word_of_mouth``), and
        also its bare name where no other section uses that name — ``name``, ``seed``;
        market: ``organisations``, ``initial_customers``, ``initial_share``,
        ``regions``; network: ``kind``, ``mean_degree``, ``rewiring``,
        ``within_region_share``, ``path``, ``nodes_path``; adoption: ``rule``,
        ``external``, ``word_of_mouth``, ``satisfied_share``, ``talkers_per_customer``,
        ``cap``, ``threshold``; run: ``periods``, ``time_step``, ``step_probability``;
        and the ``seeding`` and ``referral`` fields (``seeding_strategy`` and
        ``referral_strategy``, ``seeding_budget`` and ``referral_budget``: names two
        sections share are given with their section). ``run.replicates``,
        ``run.engine``, ``run.jobs`` and the ``study`` and ``sweep`` sections describe
        batches, not one run, and are not parameters. Without ``scenario`` the
        parameters build ``Scenario.from_dict`` of the nested sections; with
        ``scenario`` they are applied by ``Scenario.replace``. Either way the result
        is validated.

    Attributes
    ----------
    womlab_scenario : Scenario
        The scenario as run. (Not ``scenario``: from Mesa 3.5 that is Mesa's own
        experiment-parameter object; a Mesa scenario handed in as ``scenario=``, as
        Mesa's browser view does on reset, gives its parameters as flat parameters.)
    network : ReferralNetwork
        The referral network as arrays.
    space : mesa.discrete_space.Network
        Mesa's network space, one cell per organisation (no ties on the complete network).
    datacollector : mesa.DataCollector
        One row per step (row 0: the seeded state): ``step``, ``period``, ``time``,
        ``customers``, ``new_customers`` (in that step), ``satisfied_customers``.
    running : bool
        Turns False on the first :meth:`step` past the horizon, so that Mesa's batch
        runner (which reports the collector's row ``model.steps − 1``) reports the
        state at the horizon.

    Raises
    ------
    ScenarioError
        For an unknown flat parameter (with a did-you-mean), an invalid value, initial
        customers that are not distinct ids of the network, or an agent class that is
        not an :class:`Organisation`.
    NetworkError
        For a network whose size is not ``market.organisations``.

    Notes
    -----
    Mesa up to 3.4 keeps a reference to every model it has numbered agents for
    (``mesa.Agent._ids``), so a model built by hand lives until the process ends;
    :func:`run_mesa`, which the batches use, drops that reference after each run.

    Examples
    --------
    >>> from womlab.dynamics.mesa_model import ReferralModel
    >>> model = ReferralModel(organisations=200, initial_customers=4, kind="random", mean_degree=6, periods=10)
    >>> model.run_model()
    >>> table = model.datacollector.get_model_vars_dataframe()
    >>> len(table), int(table["customers"].iloc[-1]) == int(model.result().customers[-1])
    (11, True)

    With Mesa's own batch runner::

        import mesa
        rows = mesa.batch_run(ReferralModel, parameters={"organisations": 200, "kind": "random",
                              "word_of_mouth": [0.2, 0.4], "replicate": range(10)},
                              number_processes=1, display_progress=False)
    """

    def __init__(
        self,
        scenario: Scenario | None = None,
        *,
        network: GivenNetwork | None = None,
        initial: Sequence[int] | np.ndarray | None = None,
        rng: np.random.Generator | int | None = None,
        replicate: int = 0,
        agent_class: type[Organisation] | None = None,
        agent_reporters: Mapping[str, Any] | None = None,
        **kwargs: Any,
    ) -> None:
        if _MesaScenario is not None and isinstance(scenario, _MesaScenario):
            # Mesa's own experiment parameters (its browser view passes a fresh one on reset)
            given = {k: v for k, v in scenario.to_dict().items() if k not in ("rng", "model", "_scenario_id")}
            if rng is None:
                rng = scenario.rng
            scenario, kwargs = None, {**given, **kwargs}
        if scenario is not None and not isinstance(scenario, Scenario):
            raise ScenarioError(f"scenario must be a womlab Scenario, got {type(scenario).__name__}")
        agent_class = Organisation if agent_class is None else agent_class
        if not (isinstance(agent_class, type) and issubclass(agent_class, Organisation)):
            raise ScenarioError(f"agent_class must be womlab's Organisation or a subclass of it, got {agent_class!r}")
        scenario = _scenario_from_flat(scenario, kwargs)
        st = streams(scenario.seed, (replicate,))
        if network is None:
            network = build_network(scenario, np.random.default_rng(st.network))
        else:
            network = as_network(network, scenario.market.organisations)
        if initial is None:
            initial = initial_customers(scenario, network, np.random.default_rng(st.seeding))
        initial = np.asarray(initial, dtype=np.int64).ravel()
        if initial.size and (
            initial.min() < 0 or initial.max() >= network.n or np.unique(initial).size != initial.size
        ):
            raise ScenarioError(
                f"initial customers must be distinct organisation ids in 0..{network.n - 1}, got {initial.tolist()[:10]}"
            )
        if rng is None:
            rng = np.random.default_rng(st.dynamics)
        elif not isinstance(rng, np.random.Generator):
            rng = np.random.default_rng(rng)
        fresh = copy.deepcopy(rng)  # the stream as it starts, for [[reference]]'s look at the run without it
        super().__init__(rng=rng)  # model.rng is the dynamics stream itself
        # None without a programme; enrolment has its own stream, model.rng is not advanced
        self.programme = start_programme(scenario, network, self.rng)
        # segments and the campaign calendar: their own stream too (dynamics.markets)
        self.market = market_inputs(scenario, network, self.rng)
        # reference customers won in a period: written into that calendar (dynamics.references)
        self.market, self.reference_ids = with_references(
            scenario, network, initial, fresh, self.market, simulate=run_mesa
        )
        if self.market.opens_at is not None:  # markets that grow: a seed in a part not yet open is left out
            initial = initial[self.market.opens_at[initial] == 0]
        # churn: a stream of its own (model.rng is not advanced), one uniform per customer per step
        adoption = scenario.adoption
        self.churn_rng = mechanism_rng(self.rng, CHURN_STREAM) if adoption.churns else None
        self._churn = (float(adoption.churn), float(adoption.dissatisfied_churn))
        self.former_customers = 0
        # warnings: a stream of their own too
        self.warn_rng = mechanism_rng(self.rng, WARNING_STREAM) if adoption.warns else None
        self.warn_total = 0.0
        self.rejecters = 0
        self._warners_now: list[Organisation] | None = None

        self.womlab_scenario = scenario  # not `scenario`: Mesa 3.5's Model.scenario is its own
        self.network = network
        self.complete = network.complete
        run = scenario.run
        self.time_step = run.time_step
        self.steps_per_period = run.steps_per_period
        self.horizon_steps = run.periods * run.steps_per_period
        self.step_count = 0
        self.period = 0
        self._chances: dict[tuple[float, float], tuple[float, float]] = {}
        adoption = scenario.adoption  # the rule as the compiled formulas of womlab.rules take it
        self._rule = (
            rules.rule_code(adoption.rule),
            float(adoption.external),
            float(adoption.word_of_mouth),
            float(adoption.cap),
        )
        self._form = rules.form_code(run.step_probability)

        graph = nx.empty_graph(network.n) if network.complete else _graph_of(network)
        self.space = Network(graph, random=self.random, **_SPACE_OPTIONS)
        cells = [self.space[i] for i in range(network.n)]
        organisations = [agent_class(self, cells[i], i) for i in range(network.n)]
        self._by_id = organisations
        for agent in organisations:
            agent.meet_neighbours()
        self.talkers_total = float(sum(a.talkers for a in organisations))

        # successive product generations (dynamics.products in the array engine): the same rules, per agent
        self.generations = scenario.product.generations(scenario.adoption) if scenario.product.active else None
        for agent in organisations:
            agent.generation = 0
            agent.product_start = [-1] * (0 if self.generations is None else len(self.generations))
        for i in initial.tolist():
            organisations[i].adopt(0)
            if self.generations is not None:
                organisations[i].generation = 1
                organisations[i].product_start[0] = 0
        self.initial = np.sort(initial).astype(np.int32)
        self.potential = AgentSet([a for a in organisations if not a.customer], random=self.random)
        self.customers = int(initial.size)
        self.new_customers = int(initial.size)
        self.satisfied_customers = sum(1 for i in initial.tolist() if organisations[i].satisfied)
        self.talk_total = 0.0
        self._talking_now: tuple[list[Organisation], list[float]] | None = None

        reporters: dict[str, Any] = {
            "step": "step_count",
            "period": "period",
            "time": lambda m: m.step_count * m.time_step,
            "customers": "customers",
            "new_customers": "new_customers",
            "satisfied_customers": "satisfied_customers",
        }
        if self.churn_rng is not None:
            reporters["former_customers"] = "former_customers"
        if self.warn_rng is not None:
            reporters["rejecters"] = "rejecters"
        self.datacollector = mesa.DataCollector(
            model_reporters=reporters,
            agent_reporters=dict(agent_reporters) if agent_reporters else None,
        )
        self.datacollector.collect(self)

    # ------------------------------------------------------------------ helpers
    def organisation(self, organisation: int) -> Organisation:
        """The agent of organisation ``organisation`` (0..N−1)."""
        return self._by_id[organisation]

    def chances(
        self, talking: float, total: float, threshold: float | None = None, *, organisation: int | None = None
    ) -> tuple[float, float]:
        """Step probability and external share for a potential customer with T = ``talking``, D = ``total``.

        Straight from :mod:`womlab.rules`; remembered per (T, D, p, q) — the formulas are
        pure functions and most organisations share a few values — except under
        ``threshold``, where each organisation's own θᵢ enters. With segments or a campaign
        calendar, ``organisation`` gives its own p (this period's) and q.
        """
        rule, p, q, cap = self._rule
        if organisation is not None and (self.market.external is not None or self.market.external_weight is not None):
            p = self.market.external_rate(self.period, organisation, p)
        if organisation is not None and self.market.word_of_mouth_weight is not None:
            q = q * float(self.market.word_of_mouth_weight[organisation])
        key = (talking, total, p, q)
        found = self._chances.get(key) if threshold is None else None
        if found is None:
            theta = 0.0 if threshold is None else float(threshold)
            t, d = float(talking), float(total)
            dt, form = self.time_step, self._form
            found = (
                rules.step_adoption_probability(rule, t, d, theta, p, q, cap, dt, form),
                rules.step_external_part(rule, t, d, theta, p, q, dt, form),
            )
            if threshold is None:
                self._chances[key] = found
        return found

    def talk_weight(self, agent: Organisation, step: int | None = None) -> float:
        """What ``agent`` puts into its neighbours' Tᵢ in ``step`` (default: the coming one;
        :func:`womlab.rules.talk_weight`)."""
        step = self.step_count + 1 if step is None else step
        weight = rules.talk_weight(
            self._rule[0], np.float32(agent.talkers), agent.customer and agent.satisfied, agent.fresh_until == step
        )
        return float(weight)

    def _refresh_cascade_talk(self) -> None:
        """``cascade``: a satisfied customer counts in its neighbours' Tᵢ only in the step of its one
        attempt, the step that ends one period after it adopted."""
        for agent in self.agents.select(lambda a: a.talk > 0 or a.fresh_until == self.step_count):
            agent.talk = agent.counted = self.talk_weight(agent, self.step_count)

    def talking_now(self) -> tuple[list[Organisation], list[float]]:
        """Complete network: every organisation whose talk counts now, and the running sum of it."""
        if self._talking_now is None:
            speakers = list(self.agents.select(lambda a: a.counted > 0))
            self._talking_now = (speakers, list(itertools.accumulate(a.counted for a in speakers)))
        return self._talking_now

    def _count_talk(self) -> None:
        """Programme: set every agent's ``counted`` talkers for this step."""
        agents = self._by_id
        talk = np.array([a.talk for a in agents], dtype=np.float32)
        talking_customer = np.array([a.customer and a.satisfied for a in agents], dtype=bool)
        counted = self.programme.talk(talk, talking_customer, self.period)
        for agent, value in zip(agents, counted.tolist()):
            agent.counted = value

    # ------------------------------------------------------------------ dynamics
    def step(self) -> None:
        """One step: every potential customer decides, then every adoption is applied."""
        if self.step_count >= self.horizon_steps:
            self.running = False
            return
        self.step_count += 1
        self.period = -(-self.step_count // self.steps_per_period)
        if self.generations is not None:  # successive product generations ([[product]])
            self._products_step()
            return
        if self.womlab_scenario.adoption.rule == "cascade":
            self._refresh_cascade_talk()
        if self.programme is not None:
            self._count_talk()
        if self.complete:
            self.talk_total = float(self.agents.agg("counted", sum))
            self._talking_now = None
        if self.warn_rng is not None:
            self._refresh_warnings()
        self.potential.do("decide")
        adopters = self.potential.select(lambda a: a.adopting)
        if self.warn_rng is not None:  # ---- warnings: rejections apply with the adoptions
            rejecting = self.potential.select(lambda a: a.rejecting)
            rejecting.do("reject")
            for agent in rejecting:
                self.potential.remove(agent)
            self.rejecters += len(rejecting)
        if self.churn_rng is not None:
            self._churn_step()
        adopters.do("adopt", self.period)
        if self.programme is not None:  # pay for this step's attributed referrals (ids ascending)
            referred = [a for a in adopters if a.referrer >= 0]
            self.programme.settle(
                self.period,
                np.array([a.organisation for a in referred], dtype=np.int64),
                np.array([a.referrer for a in referred], dtype=np.int64),
            )
        for agent in adopters:
            self.potential.remove(agent)
        self.new_customers = len(adopters)
        self.customers += self.new_customers
        self.satisfied_customers += sum(1 for a in adopters if a.satisfied)
        self.datacollector.collect(self)

    def _product_record(self) -> dict:
        """The product generations' record (as :func:`womlab.dynamics.products.run_products` gives it)."""
        if self.generations is None:
            return {}
        spp = self.steps_per_period
        steps = np.array([a.product_start for a in self._by_id], dtype=np.int64)
        return {
            "product_start": np.where(steps >= 0, (steps + spp - 1) // spp, -1).astype(np.int32),
            "product_names": tuple(g.name for g in self.generations),
            "product_values": np.array([g.value_per_period for g in self.generations]),
        }

    def _heard(self, agent: Organisation, totals: np.ndarray) -> np.ndarray:
        """Tᵍ for every generation g (index g − 1): talkers of the agent's satisfied neighbours on it."""
        if self.complete:
            heard = totals.copy()
            if agent.generation > 0 and agent.satisfied:
                heard[agent.generation - 1] -= agent.talkers
            return heard
        heard = np.zeros(totals.size)
        for other in agent.neighbours:
            if other.generation > 0 and other.satisfied:
                heard[other.generation - 1] += other.talkers
        return heard

    def _products_step(self) -> None:
        """One step with product generations: entry by word of mouth about any generation, taking
        what talking neighbours use; upgrades at :func:`womlab.rules.upgrade_rate`; all moves at once
        (the rules of :mod:`womlab.dynamics.products`, drawn as the Mesa model draws: a fresh uniform
        per decision)."""
        gens, rng, agents = self.generations, self.rng, self._by_id
        newest = sum(1 for g in gens if g.launch <= self.period)
        share = rules.rule_code("share")
        totals = np.zeros(len(gens))
        if self.complete:
            for a in agents:
                if a.generation > 0 and a.satisfied:
                    totals[a.generation - 1] += a.talkers
        moves = []
        for agent in agents:
            g = agent.generation
            if g == newest and g > 0:
                continue
            heard = self._heard(agent, totals)
            if g == 0:
                total = self.talkers_total - agent.talkers if self.complete else agent.neighbour_talkers
                r = rules.rate(
                    share, float(heard.sum()), float(total), 0.0, gens[0].external, gens[0].word_of_mouth, 0.0
                )
                options, fallback = heard[:newest], newest
            else:
                newer = float(heard[g:].sum())
                r = rules.upgrade_rate(gens[g].external, gens[g].word_of_mouth, newer, newer + float(heard[g - 1]))
                options, fallback = heard[g:newest], g + 1
            if rng.random() >= rules.probability(r, self.time_step, self._form):
                continue
            chosen = fallback
            if options.sum() > 0:
                goal = rng.random() * options.sum()
                chosen = (newest - options.size) + 1 + int(np.searchsorted(np.cumsum(options), goal, side="right"))
                chosen = min(chosen, newest)
            moves.append((agent, chosen))
        self.new_customers = 0
        for agent, chosen in moves:
            if agent.generation == 0:
                agent.customer = True
                agent.adoption_period = self.period
                agent.adoption_step = self.step_count
                self.potential.remove(agent)
                self.new_customers += 1
            agent.generation = chosen
            agent.product_start[chosen - 1] = self.step_count
            agent.satisfied = bool(rules.draw_satisfied(gens[chosen - 1].satisfied_share, 1, rng)[0])
        self.customers += self.new_customers
        self.satisfied_customers = sum(1 for a in agents if a.customer and a.satisfied)
        self.datacollector.collect(self)

    def _refresh_warnings(self) -> None:
        """Warnings: every organisation's weight in its neighbours' Wᵢ this step (:func:`womlab.rules.warns`,
        :func:`womlab.rules.warn_weight`)."""
        a = self.womlab_scenario.adoption
        rule, step = self._rule[0], self.step_count
        for agent in self._by_id:
            if agent.customer or agent.former or agent.rejecter:
                warner = rules.warns(
                    agent.customer, agent.satisfied, agent.former, agent.rejecter, a.former_warn, a.rejecters_warn
                )
                agent.warn = float(
                    rules.warn_weight(
                        rule, np.float32(agent.talkers), warner, agent.warn_since + self.steps_per_period == step
                    )
                )
        if self.complete:
            self.warn_total = float(sum(agent.warn for agent in self._by_id))
        self._warners_now = None

    def warners_now(self) -> list[Organisation]:
        """Complete network: every organisation whose warning counts now."""
        if self._warners_now is None:
            self._warners_now = [agent for agent in self._by_id if agent.warn > 0]
        return self._warners_now

    def _churn_step(self) -> None:
        """Churn: every customer of the start of the step (ids ascending) leaves with the step
        probability of its churn rate (:func:`womlab.rules.churn_rate`), one fresh uniform each
        from the churn stream; the departures apply at the end of the step, with the adoptions."""
        churn, churn_dissatisfied = self._churn
        paid = None if self.programme is None else self.programme.rewarded  # paid referrals churn at the multiplier
        multiplier = self.womlab_scenario.referral.churn_multiplier
        leaving = []
        for agent in self._by_id:
            if agent.customer:
                m = multiplier if paid is not None and paid[agent.organisation] else 1.0
                rate = rules.churn_rate(agent.satisfied, churn, churn_dissatisfied, m)
                if self.churn_rng.random() < rules.probability(rate, self.time_step, self._form):
                    leaving.append(agent)
        for agent in leaving:
            agent.leave()
        self.customers -= len(leaving)
        self.satisfied_customers -= sum(1 for a in leaving if a.satisfied)
        self.former_customers += len(leaving)

    def result(self) -> RunResult:
        """The run so far as a :class:`~womlab.dynamics.RunResult` (the same object the array engine returns).

        Per-organisation vectors are read off the agents; ``periods`` is the
        scenario's horizon; ``adoption_time`` is the end of the step of adoption, as in
        the array engine.
        """
        agents = self._by_id
        step = np.array([a.adoption_step for a in agents], dtype=np.int64)
        customer = step >= 0  # became a customer (with churn it may have left since)
        run = self.womlab_scenario.run
        churn: dict[str, Any] = {}
        if self.churn_rng is not None:
            leave = np.array([a.leave_step for a in agents], dtype=np.int64)
            spp = run.steps_per_period
            churn["leave_period"] = np.where(leave >= 0, (leave + spp - 1) // spp, -1).astype(np.int32)
            churn["leave_time"] = np.where(leave >= 0, leave / spp, np.nan)
        if self.warn_rng is not None:
            rejected = np.array([a.rejection_step for a in agents], dtype=np.int64)
            spp = run.steps_per_period
            churn["rejection_period"] = np.where(rejected >= 0, (rejected + spp - 1) // spp, -1).astype(np.int32)
            churn["warned_by"] = np.array([a.warned_by for a in agents], dtype=np.int32)
            churn["rejection_time"] = np.where(rejected >= 0, rejected / spp, np.nan)
        return RunResult(
            periods=run.periods,
            adoption_period=np.array([a.adoption_period for a in agents], dtype=np.int32),
            referrer=np.array([a.referrer for a in agents], dtype=np.int32),
            satisfied=customer & np.array([a.satisfied for a in agents], dtype=bool),
            region=np.asarray(self.network.region, dtype=np.int32).copy(),
            initial=self.initial.copy(),
            engine="mesa",
            adoption_time=np.where(step >= 0, step / run.steps_per_period, np.nan),
            report_every=run.report_every,
            extra={
                **(self.programme.record() if self.programme is not None else self._product_record()),
                **({"references": self.reference_ids} if self.reference_ids else {}),
            },
            segment=self.market.segment,
            segment_names=self.market.segment_names,
            value=self.market.value,
            opens_at=self.market.opens_at,
            **churn,
        )


def _graph_of(network: ReferralNetwork) -> nx.Graph:
    """A fresh networkx graph of the network's ties, for Mesa's network space."""
    graph = nx.empty_graph(network.n)
    rows = np.repeat(np.arange(network.n), np.diff(network.indptr))
    upper = rows < network.indices
    graph.add_edges_from(zip(rows[upper].tolist(), network.indices[upper].tolist()))
    return graph


def run_mesa(scenario: Scenario, network: ReferralNetwork, initial: np.ndarray, rng: np.random.Generator) -> RunResult:
    """One run of the scenario on the Mesa model: the ``"mesa"`` engine of :data:`womlab.dynamics.ENGINES`.

    Parameters
    ----------
    scenario : Scenario
        Supplies the adoption rule and the run's horizon, step and step form.
    network : ReferralNetwork
        The referral network (read, never changed).
    initial : numpy.ndarray
        Ids of the customers at period 0.
    rng : numpy.random.Generator
        The dynamics stream; every draw of the run comes from it.

    Returns
    -------
    RunResult
        The same object as :func:`womlab.dynamics.array_engine.run_array` returns.

    Examples
    --------
    >>> import numpy as np
    >>> from womlab import Scenario, build_network
    >>> from womlab.dynamics.mesa_model import run_mesa
    >>> s = Scenario.from_dict({"market": {"organisations": 100}, "network": {"kind": "ring", "mean_degree": 4},
    ...                         "run": {"periods": 5}})
    >>> net = build_network(s, np.random.default_rng(1))
    >>> run_mesa(s, net, np.array([0, 50]), np.random.default_rng(2)).customers.shape
    (6,)
    """
    model = ReferralModel(scenario, network=network, initial=initial, rng=rng)
    model.run_model()
    result = model.result()
    _forget(model)
    return result


def _forget(model: mesa.Model) -> None:
    """Drop Mesa's class-level reference to a finished model, so that it can be freed.

    Mesa up to 3.4 numbers agents per model in ``mesa.Agent._ids``, a dict keyed by the
    model itself, and never removes the entry: without this every model of a batch — and
    all its agents — would stay in memory until the worker exits. Mesa 3.5 numbers agents
    on the model and keeps no such dict.
    """
    if MESA_VERSION >= (3, 5):
        return
    ids = getattr(mesa.Agent, "_ids", None)
    if isinstance(ids, dict):
        ids.pop(model, None)
