"""The random streams of one run, split by purpose from the scenario's root seed.

Replicate r of a batch uses ``SeedSequence(seed, spawn_key=(r,))`` (a sweep point i uses
``spawn_key=(i, r)``), split by :func:`streams` into three child streams: network,
seeding and dynamics. A run's result therefore depends only on the scenario, the root
seed and its key — not on the number of workers, the backend or the order in which runs
finish — and two variants run on the same key see the same network and the same draws
(common random numbers).
"""

from __future__ import annotations

from typing import NamedTuple

import numpy as np

__all__ = ["Streams", "streams"]


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
