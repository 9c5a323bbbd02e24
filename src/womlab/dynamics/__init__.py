"""The dynamics layer: one seeded run of a scenario, by any of three engines.

Knows the rules, seeding, networks and the scenario (below); nothing of studies, files or
figures (above). ``array_engine`` (numpy over CSR, the default), ``event_engine`` (the
continuous clock) and ``mesa_model`` (one Mesa agent per organisation; the only module
of womlab that imports mesa) know nothing of each other; ``engines`` picks one by name.
They share ``programme`` (a referral programme's hooks inside a run), ``run_result``
(:class:`RunResult`, what every engine returns) and ``streams`` (a run's random
streams). The Mesa model loads only when asked for (``womlab.ReferralModel``).

Importing this package registers the array engine as the simulator that seeding
strategies which simulate (``greedy``) use when their caller gives none.
"""

from __future__ import annotations

from womlab.dynamics.array_engine import run_array
from womlab.dynamics.engines import ENGINES, Engine, engine_for
from womlab.dynamics.event_engine import run_events
from womlab.dynamics.programme import (
    ENROLMENT_STREAM,
    PROGRAMME_ENGINES,
    ProgrammeRun,
    enrolled_organisations,
    enrolment_rng,
    start_programme,
)
from womlab.dynamics.run_result import (
    CHURN_COLUMNS,
    CURVE_COLUMNS,
    ORGANISATION_COLUMNS,
    WARNING_COLUMNS,
    RunResult,
    to_networkx,
)
from womlab.dynamics.streams import Streams, streams
from womlab.seeding import register_simulator

register_simulator(run_array)

__all__ = [
    "ENGINES",
    "Engine",
    "engine_for",
    "run_array",
    "run_events",
    "RunResult",
    "CURVE_COLUMNS",
    "CHURN_COLUMNS",
    "WARNING_COLUMNS",
    "ORGANISATION_COLUMNS",
    "to_networkx",
    "Streams",
    "streams",
    "ENROLMENT_STREAM",
    "PROGRAMME_ENGINES",
    "ProgrammeRun",
    "enrolment_rng",
    "enrolled_organisations",
    "start_programme",
]
