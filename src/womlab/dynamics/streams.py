"""The random streams of one run, split by purpose from the scenario's root seed.

Replicate r of a batch uses ``SeedSequence(seed, spawn_key=(r,))`` (a sweep point i uses
``spawn_key=(i, r)``), split by :func:`streams` into three child streams: network,
seeding and dynamics. A run's result therefore depends only on the scenario, the root
seed and its key — not on the number of workers, the backend or the order in which runs
finish — and two variants run on the same key see the same network and the same draws
(common random numbers).

A mechanism that is switched on or off (a referral programme's enrolment, churn,
warnings) draws from a stream of its own, :func:`mechanism_rng`: derived from the dynamics
SeedSequence by extending its spawn key with the mechanism's word, without advancing or
spawning from the dynamics stream. Switching a mechanism on therefore leaves every other
draw of the run as it was, and two variants of one replicate share the mechanism's draws.
"""

from __future__ import annotations

from typing import NamedTuple

import numpy as np

__all__ = ["Streams", "streams", "mechanism_rng", "CHURN_STREAM", "WARNING_STREAM"]

#: Spawn-key word of the churn stream ("CHRN" in ASCII; far above any child index spawning
#: would produce, like the programme's enrolment stream "REFR").
CHURN_STREAM = 0x4348524E
#: Spawn-key word of the warning (negative word of mouth) stream ("WARN" in ASCII).
WARNING_STREAM = 0x5741524E


class Streams(NamedTuple):
    """The three child SeedSequences of one run."""

    network: np.random.SeedSequence
    seeding: np.random.SeedSequence
    dynamics: np.random.SeedSequence


def streams(seed: int, key: tuple[int, ...]) -> Streams:
    """Network, seeding and dynamics streams of the run with spawn key ``key``.

    Examples
    --------
    >>> s = streams(7, (0,))
    >>> s.dynamics.spawn_key
    (0, 2)
    """
    root = np.random.SeedSequence(seed, spawn_key=tuple(int(k) for k in key))
    return Streams(*root.spawn(3))


def mechanism_rng(rng: np.random.Generator, word: int) -> np.random.Generator:
    """The stream of one mechanism of a run whose dynamics stream is ``rng``.

    A SeedSequence with ``rng``'s entropy and spawn key extended by ``word``; ``rng`` itself
    is neither advanced nor spawned from, so a run's other draws do not depend on whether
    the mechanism is on.

    Examples
    --------
    >>> dynamics = np.random.default_rng(np.random.SeedSequence(7, spawn_key=(0, 2)))
    >>> mechanism_rng(dynamics, CHURN_STREAM).bit_generator.seed_seq.spawn_key == (0, 2, CHURN_STREAM)
    True
    """
    seq = rng.bit_generator.seed_seq
    if not isinstance(seq, np.random.SeedSequence):
        raise TypeError("the dynamics generator must be seeded from a numpy SeedSequence")
    child = np.random.SeedSequence(seq.entropy, spawn_key=(*seq.spawn_key, int(word)), pool_size=seq.pool_size)
    return np.random.default_rng(child)
