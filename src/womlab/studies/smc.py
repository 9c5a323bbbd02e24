"""Sequential Monte Carlo for approximate Bayesian computation (ABC-SMC), with model choice.

A likelihood-free posterior: parameter sets are drawn, a series is simulated from each,
and a set is kept when its simulated series lies within a tolerance ε of the observed
one. The tolerance shrinks over generations; each generation proposes from the last
one's particles, moved by a Gaussian kernel, and reweights them so that the accepted
particles stay a sample of the ABC posterior π(θ | d(x, y) ≤ ε).

The algorithm (population Monte Carlo ABC, Beaumont et al. 2009, with the tolerance
chosen from the current population as in Del Moral et al. 2012, and a discrete model
index as in Toni et al. 2009):

1. Generation 0: draw ``particles`` parameter sets (and a model, uniformly) from the
   prior, simulate each, accept all; weights equal.
2. Generation t: ε_t is the ``quantile`` of generation t − 1's distances. Propose a
   model m from the last generation's model probabilities, moved to another model with
   probability 1 − ``stay`` (kernel KM); a particle j of that model drawn by weight; moved
   by a Gaussian kernel with the optimal local covariance of Filippi et al. (2013),
   Σ_j = Σ_k w_k (θ_k − θ_j)(θ_k − θ_j)ᵀ over the particles k already within ε_t (Beaumont
   et al. 2009 use twice the population's covariance for every particle; the local one
   accepts more proposals). Proposals outside the prior are redrawn before any simulation. Simulate in batches; accept d ≤ ε_t in proposal order until
   ``particles`` are accepted.
3. Weight of an accepted (m, θ):
   w ∝ π(m) π(θ) / ( Σ_m' p_{t−1}(m') KM(m | m') · Σ_{j: m_j = m} w̃_j N(θ | θ_j, Σ_j) ),
   w̃ the last generation's weights normalised within model m.
4. Stop after ``generations`` generations, when a generation accepts fewer than
   ``min_acceptance`` of its proposals, when the tolerance no longer shrinks, or when
   the simulation budget would run out; a generation cut short by the budget is kept if
   it accepted at least half of ``particles`` (its particles are draws at ε_t like any
   others, only fewer), else the previous one is the result.

Parameters live on a *working scale* (the logarithm for log-uniform priors), where the
kernel moves them and the prior density is evaluated. Randomness: the proposals of
generation g come from ``SeedSequence(seed, spawn_key=(FIT_KEY, g))`` in the calling
process, proposal j of generation g is simulated with spawn key ``(FIT_KEY, g, j)``, and
batch sizes depend only on earlier generations, so a result is the same bit for bit for
any number of workers.

References
----------
Beaumont, M. A., Cornuet, J.-M., Marin, J.-M. & Robert, C. P. (2009). Adaptive approximate
Bayesian computation. Biometrika 96(4), 983–990.
Del Moral, P., Doucet, A. & Jasra, A. (2012). An adaptive sequential Monte Carlo method for
approximate Bayesian computation. Statistics and Computing 22(5), 1009–1020.
Toni, T., Welch, D., Strelkowa, N., Ipsen, A. & Stumpf, M. P. H. (2009). Approximate
Bayesian computation scheme for parameter inference and model selection in dynamical
systems. Journal of the Royal Society Interface 6(31), 187–202.
Filippi, S., Barnes, C. P., Cornebise, J. & Stumpf, M. P. H. (2013). On optimality of
kernels for approximate Bayesian computation using sequential Monte Carlo. Statistical
Applications in Genetics and Molecular Biology 12(1), 87–107.
Kish, L. (1965). Survey Sampling. Wiley (effective sample size (Σw)² / Σw²).
"""

from __future__ import annotations

import math
import time
from collections.abc import Callable, Sequence
from dataclasses import dataclass, field

import numpy as np
from scipy import stats

__all__ = [
    "WorkingPrior",
    "Population",
    "SMCResult",
    "SMCSettings",
    "abc_smc",
    "weighted_quantile",
    "effective_sample_size",
    "FIT_KEY",
]

#: First element of every spawn key the fit uses ("FIT" in ASCII): batches use ``(r,)``,
#: sweeps ``(i, r)`` and their derived streams; no other study starts a key with it.
FIT_KEY = 0x464954


@dataclass(frozen=True)
class WorkingPrior:
    """A prior on its working scale (log for ``log_uniform``).

    ``distribution`` is ``uniform``, ``log_uniform`` or ``normal`` (truncated to
    [``low``, ``high``], either bound may be infinite). ``whole``: the field is a whole
    number, so :meth:`value` rounds.
    """

    name: str
    distribution: str
    low: float
    high: float
    mean: float = 0.0
    sd: float = 1.0
    whole: bool = False

    def _bounds(self) -> tuple[float, float]:
        if self.distribution == "log_uniform":
            return math.log(self.low), math.log(self.high)
        return self.low, self.high

    def _truncnorm(self):  # noqa: ANN202
        a = (self.low - self.mean) / self.sd
        b = (self.high - self.mean) / self.sd
        return stats.truncnorm(a, b, loc=self.mean, scale=self.sd)

    def sample(self, rng: np.random.Generator, n: int) -> np.ndarray:
        """``n`` draws on the working scale."""
        if self.distribution == "normal":
            return self._truncnorm().rvs(size=n, random_state=rng)
        lo, hi = self._bounds()
        return rng.uniform(lo, hi, size=n)

    def log_density(self, u: np.ndarray) -> np.ndarray:
        """Log prior density on the working scale (−inf outside the support)."""
        u = np.asarray(u, dtype=float)
        lo, hi = self._bounds()
        inside = (u >= lo) & (u <= hi)
        if self.distribution == "normal":
            with np.errstate(divide="ignore"):
                return np.where(inside, self._truncnorm().logpdf(u), -np.inf)
        return np.where(inside, -math.log(hi - lo), -np.inf)

    def value(self, u: np.ndarray) -> np.ndarray:
        """The field's value for working-scale ``u`` (exp for log-uniform, rounded if whole)."""
        v = np.exp(u) if self.distribution == "log_uniform" else np.asarray(u, dtype=float)
        return np.round(v) if self.whole else v

    def spread(self) -> float:
        """A scale for the working axis: the support's width, or 2 sd when unbounded."""
        lo, hi = self._bounds()
        width = hi - lo
        return width if math.isfinite(width) else 2.0 * self.sd


@dataclass
class Population:
    """One generation's accepted particles.

    ``theta`` is on the working scale, one row per particle; ``model`` the model index;
    ``weights`` normalised; ``distances`` the accepted distances; ``keys`` the spawn key of
    the simulation that was accepted.
    """

    theta: np.ndarray
    model: np.ndarray
    weights: np.ndarray
    distances: np.ndarray
    keys: list[tuple[int, ...]]
    tolerance: float

    def model_probabilities(self, models: int) -> np.ndarray:
        return np.bincount(self.model, weights=self.weights, minlength=models)


@dataclass(frozen=True)
class SMCSettings:
    """Budget and tuning of :func:`abc_smc` (see :class:`womlab.scenario.FitSpec`)."""

    particles: int = 200
    generations: int = 10
    simulations: int = 6000
    quantile: float = 0.5
    min_acceptance: float = 0.03
    stay: float = 0.7


@dataclass
class SMCResult:
    """What :func:`abc_smc` returns.

    Attributes
    ----------
    populations : list of Population
        Generation 0 first; the last is the result.
    generations : list of dict
        Per generation: generation, tolerance, proposals, accepted, acceptance_rate,
        ess, simulations (so far), seconds, simulating_seconds (inside ``simulate``: the
        rest is the SMC's own work), and the model probabilities.
    simulations : int
        Simulations run in all (including proposals not accepted and any generation cut
        short by the budget).
    stopped : str
        Why the sequence stopped.
    """

    populations: list[Population]
    generations: list[dict]
    simulations: int
    stopped: str
    models: int = 1
    wall_time: float = 0.0
    extra: dict = field(default_factory=dict)

    @property
    def final(self) -> Population:
        return self.populations[-1]


def effective_sample_size(weights: np.ndarray) -> float:
    """Kish's effective sample size (Σw)² / Σw².

    Examples
    --------
    >>> effective_sample_size(np.ones(4))
    4.0
    """
    w = np.asarray(weights, dtype=float)
    s2 = float(np.sum(w**2))
    return float(np.sum(w) ** 2 / s2) if s2 > 0 else 0.0


def weighted_quantile(values: np.ndarray, weights: np.ndarray, q: float | Sequence[float]) -> np.ndarray:
    """Quantiles of a weighted sample (inverse of the weighted empirical distribution,
    interpolated at the midpoints of each value's weight; common practice).

    ``values`` may be 2-d (particles, k): quantiles are taken along the first axis.

    Examples
    --------
    >>> float(weighted_quantile(np.array([1.0, 2.0, 3.0]), np.ones(3), 0.5))
    2.0
    """
    v = np.asarray(values, dtype=float)
    w = np.asarray(weights, dtype=float)
    qs = np.atleast_1d(np.asarray(q, dtype=float))
    flat = v.ndim == 1
    v2 = v[:, None] if flat else v
    out = np.empty((qs.size, v2.shape[1]))
    for k in range(v2.shape[1]):
        col = v2[:, k]
        ok = np.isfinite(col) & (w > 0)
        if not ok.any():
            out[:, k] = np.nan
            continue
        order = np.argsort(col[ok], kind="stable")
        x, wk = col[ok][order], w[ok][order]
        cum = (np.cumsum(wk) - 0.5 * wk) / wk.sum()
        out[:, k] = np.interp(qs, cum, x)
    if flat:
        out = out[:, 0]
    return out[0] if np.ndim(q) == 0 else out


class _Kernel:
    """Gaussian kernels of one model, one per particle, with the optimal local covariance
    of Filippi et al. (2013): for particle j, Σ_j = Σ_k ŵ_k (θ_k − θ_j)(θ_k − θ_j)ᵀ over the
    model's particles k whose distance is already within the new tolerance (ŵ their
    weights, normalised). Proposals then move each particle towards where the next
    generation will be accepted."""

    def __init__(
        self, theta: np.ndarray, weights: np.ndarray, distances: np.ndarray, tolerance: float, floor: np.ndarray
    ) -> None:
        n, d = theta.shape
        w = weights / weights.sum()
        near = distances <= tolerance
        if near.sum() < 2:  # too few within the tolerance: the nearest half (at least two)
            near = distances <= np.quantile(distances, 0.5)
            if near.sum() < 2:
                near = np.ones(n, dtype=bool)
        tn, wn = theta[near], w[near] / w[near].sum()
        mean = wn @ tn
        spread = (tn - mean).T @ ((tn - mean) * wn[:, None])  # Σ_k ŵ_k (θ_k − m)(θ_k − m)ᵀ
        offset = mean[None, :] - theta  # Σ_j = spread + (m − θ_j)(m − θ_j)ᵀ
        cov = spread[None, :, :] + offset[:, :, None] * offset[:, None, :] + np.diag(floor**2)[None, :, :]
        self.chol = np.linalg.cholesky(cov)
        self.inv_chol = np.linalg.inv(self.chol)
        self.log_norm = -0.5 * d * math.log(2 * math.pi) - np.sum(
            np.log(np.diagonal(self.chol, axis1=1, axis2=2)), axis=1
        )
        self.theta = theta
        self.weights = w

    def move(self, picks: np.ndarray, rng: np.random.Generator) -> np.ndarray:
        """New points around the particles ``picks`` (indices into this model's particles)."""
        z = rng.standard_normal((picks.size, self.theta.shape[1]))
        return self.theta[picks] + np.einsum("nij,nj->ni", self.chol[picks], z)

    def mixture_density(self, x: np.ndarray) -> np.ndarray:
        """Σ_j w_j N(x | θ_j, Σ_j) for each row of x."""
        out = np.zeros(x.shape[0])
        for lo in range(0, x.shape[0], 128):
            diff = x[lo : lo + 128, None, :] - self.theta[None, :, :]
            z = np.einsum("nij,mnj->mni", self.inv_chol, diff)
            out[lo : lo + 128] = np.exp(self.log_norm[None, :] - 0.5 * np.sum(z**2, axis=2)) @ self.weights
        return out


Simulate = Callable[[np.ndarray, np.ndarray, list], np.ndarray]
Report = Callable[[dict], None]


def abc_smc(
    priors: Sequence[WorkingPrior],
    simulate: Simulate,
    *,
    seed: int,
    settings: SMCSettings = SMCSettings(),
    models: int = 1,
    report: Report | None = None,
) -> SMCResult:
    """Run ABC-SMC (see the module docstring) and return every generation.

    Parameters
    ----------
    priors : sequence of WorkingPrior
        One per free parameter, the same for every model.
    simulate : callable
        ``simulate(models, theta, keys) -> distances``: for proposal i, the model index
        ``models[i]``, working-scale parameters ``theta[i]`` and spawn key ``keys[i]``; returns
        the distance of each simulated series to the observed one (inf for a simulation
        that cannot be compared). It is called once per batch, so it can run the batch in
        parallel.
    seed : int
        Root seed of the proposals' streams.
    settings : SMCSettings
    models : int
        Number of models (a uniform prior over them).
    report : callable, optional
        Called with a dict after every batch (``event`` = ``batch``) and generation
        (``event`` = ``generation``): generation, tolerance, proposals, accepted,
        acceptance_rate, simulations, and at generation end ess and seconds.

    Returns
    -------
    SMCResult

    Examples
    --------
    A normal mean with a flat prior: the ABC posterior centres on the observation.

    >>> prior = [WorkingPrior("mu", "uniform", -5.0, 5.0)]
    >>> def simulate(models, theta, keys):
    ...     noise = np.array([np.random.default_rng(k[1:]).normal() for k in keys])
    ...     return np.abs(theta[:, 0] + noise - 1.0)
    >>> res = abc_smc(prior, simulate, seed=1, settings=SMCSettings(particles=100, generations=4, simulations=5000))
    >>> round(float(np.average(res.final.theta[:, 0], weights=res.final.weights)), 1)
    1.0
    """
    start_time = time.perf_counter()
    n = settings.particles
    d = len(priors)
    floor = np.array([1e-6 * p.spread() for p in priors])
    used = 0
    history: list[Population] = []
    table: list[dict] = []
    stopped = f"reached {settings.generations} generations after the first"
    acceptance = settings.quantile
    for g in range(settings.generations + 1):
        t0 = time.perf_counter()
        rng = np.random.default_rng(np.random.SeedSequence(seed, spawn_key=(FIT_KEY, g)))
        prev = history[-1] if history else None
        if prev is None:
            tolerance = math.inf
        else:
            tolerance = float(np.quantile(prev.distances, settings.quantile))
            if len(history) > 1 and tolerance >= 0.995 * history[-1].tolerance:
                stopped = f"the tolerance stopped shrinking at generation {g} ({tolerance:.4g})"
                break
            if tolerance <= 0:
                stopped = "the tolerance reached 0"
                break
        remaining = settings.simulations - used
        if prev is not None and remaining < n:
            stopped = f"the simulation budget ({settings.simulations}) left too few simulations for generation {g}"
            break
        proposer = None if prev is None else _Proposer(prev, priors, models, settings.stay, floor, tolerance)
        thetas, mods, dists, keys = [], [], [], []
        proposals = 0
        sim_seconds = 0.0
        while len(dists) < n and proposals < remaining:
            need = n - len(dists)
            if prev is None:
                batch = min(need, remaining - proposals)
            else:
                batch = int(math.ceil(1.15 * need / max(acceptance, 0.01))) + 2
                batch = max(need, min(batch, 10 * n, remaining - proposals))
                batch = min(batch, remaining - proposals)
            if prev is None:
                m = rng.integers(0, models, size=batch) if models > 1 else np.zeros(batch, dtype=np.int64)
                th = np.column_stack([p.sample(rng, batch) for p in priors]) if d else np.zeros((batch, 0))
            else:
                m, th = proposer.propose(rng, batch)
            batch_keys = [(FIT_KEY, g, proposals + i) for i in range(batch)]
            s0 = time.perf_counter()
            dist = np.asarray(simulate(m, th, batch_keys), dtype=float)
            sim_seconds += time.perf_counter() - s0
            proposals += batch
            ok = np.flatnonzero(np.isfinite(dist) & (dist <= tolerance))[:need]
            thetas.append(th[ok])
            mods.append(m[ok])
            dists.extend(dist[ok].tolist())
            keys.extend(batch_keys[i] for i in ok)
            if report is not None:
                report(
                    {
                        "event": "batch",
                        "generation": g,
                        "tolerance": tolerance,
                        "accepted": len(dists),
                        "particles": n,
                        "proposals": proposals,
                        "simulations": used + proposals,
                        "acceptance_rate": len(dists) / proposals,
                    }
                )
        used += proposals
        accepted = len(dists)
        theta = np.vstack(thetas) if thetas else np.zeros((0, d))
        model = np.concatenate(mods).astype(np.int64) if mods else np.zeros(0, dtype=np.int64)
        short = accepted < n
        if accepted == 0 or (short and accepted < max(2, n // 2)):
            stopped = (
                f"the simulation budget ({settings.simulations}) ran out in generation {g} "
                f"({accepted} of {n} accepted, not kept)"
            )
            if not history:
                raise RuntimeError(f"no simulation could be compared with the data in generation 0 ({stopped})")
            break
        weights = np.full(accepted, 1.0) if prev is None else proposer.weights(theta, model)
        weights = weights / weights.sum()
        pop = Population(
            theta=theta, model=model, weights=weights, distances=np.asarray(dists), keys=keys, tolerance=tolerance
        )
        history.append(pop)
        acceptance = accepted / proposals
        row = {
            "generation": g,
            "tolerance": tolerance,
            "proposals": proposals,
            "accepted": accepted,
            "acceptance_rate": acceptance,
            "ess": effective_sample_size(weights),
            "simulations": used,
            "seconds": time.perf_counter() - t0,
            "simulating_seconds": sim_seconds,
        }
        probs = pop.model_probabilities(models)
        for k in range(models):
            row[f"model_{k}"] = float(probs[k])
        table.append(row)
        if report is not None:
            report({"event": "generation", **row})
        if short:
            stopped = (
                f"the simulation budget ({settings.simulations}) ran out in generation {g} "
                f"({accepted} of {n} accepted, kept)"
            )
            break
        if prev is not None and acceptance < settings.min_acceptance:
            stopped = f"acceptance fell to {acceptance:.3g} < {settings.min_acceptance:g} in generation {g}"
            break
    return SMCResult(
        populations=history,
        generations=table,
        simulations=used,
        stopped=stopped,
        models=models,
        wall_time=time.perf_counter() - start_time,
    )


class _Proposer:
    """Proposals from the last population, and the importance weights of accepted ones."""

    def __init__(
        self,
        prev: Population,
        priors: Sequence[WorkingPrior],
        models: int,
        stay: float,
        floor: np.ndarray,
        tolerance: float,
    ) -> None:
        self.prev = prev
        self.priors = priors
        self.models = models
        self.stay = stay if models > 1 else 1.0
        self.p_model = prev.model_probabilities(models)
        self.alive = np.flatnonzero(self.p_model > 0)
        self.kernels: dict[int, _Kernel] = {}
        self.members: dict[int, np.ndarray] = {}
        for m in self.alive:
            idx = np.flatnonzero(prev.model == m)
            self.members[int(m)] = idx
            self.kernels[int(m)] = _Kernel(prev.theta[idx], prev.weights[idx], prev.distances[idx], tolerance, floor)

    def _model_kernel(self, to: np.ndarray, frm: int) -> np.ndarray:
        if self.models == 1:
            return np.ones(to.shape)
        return np.where(to == frm, self.stay, (1.0 - self.stay) / (self.models - 1))

    def log_prior(self, theta: np.ndarray) -> np.ndarray:
        out = np.zeros(theta.shape[0])
        for j, p in enumerate(self.priors):
            out += p.log_density(theta[:, j])
        return out

    def propose(self, rng: np.random.Generator, size: int) -> tuple[np.ndarray, np.ndarray]:
        models = np.empty(size, dtype=np.int64)
        theta = np.empty((size, len(self.priors)))
        todo = np.arange(size)
        for _ in range(10_000):
            k = todo.size
            m = rng.choice(self.models, size=k, p=self.p_model)
            if self.models > 1:
                move = rng.random(k) >= self.stay
                shift = rng.integers(1, self.models, size=k)
                m = np.where(move, (m + shift) % self.models, m)
            th = np.full((k, len(self.priors)), np.nan)
            for mm in np.unique(m):
                rows = np.flatnonzero(m == mm)
                if int(mm) not in self.kernels:
                    continue  # a model with no particles left: redrawn
                kern = self.kernels[int(mm)]
                pick = rng.choice(self.members[int(mm)].size, size=rows.size, p=kern.weights)
                th[rows] = kern.move(pick, rng)
            ok = np.isfinite(th).all(axis=1)
            ok[ok] = np.isfinite(self.log_prior(th[ok]))
            models[todo[ok]] = m[ok]
            theta[todo[ok]] = th[ok]
            todo = todo[~ok]
            if todo.size == 0:
                return models, theta
        raise RuntimeError("could not propose parameters inside the prior in 10,000 rounds")

    def weights(self, theta: np.ndarray, model: np.ndarray) -> np.ndarray:
        w = np.zeros(theta.shape[0])
        prior = self.log_prior(theta)
        for mm in np.unique(model):
            rows = np.flatnonzero(model == mm)
            model_mix = sum(self.p_model[m2] * self._model_kernel(np.array([mm]), int(m2))[0] for m2 in self.alive)
            dens = self.kernels[int(mm)].mixture_density(theta[rows])  # proposals never land on an empty model
            with np.errstate(divide="ignore", invalid="ignore"):
                w[rows] = np.exp(prior[rows]) * (1.0 / self.models) / (model_mix * dens)
        w[~np.isfinite(w)] = 0.0
        return w
