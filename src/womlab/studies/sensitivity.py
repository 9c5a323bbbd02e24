"""Global sensitivity of sweep outcomes: Sobol indices and Morris screening.

Both work on the unit cube: a design is a matrix of points in [0, 1]^k, mapped onto the
sweep's axes by :mod:`womlab.studies.sweep`, and the outcome of each point (the mean over its
replicates) comes back as a vector. The functions here know nothing of scenarios; they
are checked on functions whose indices are known in closed form.

Sobol indices. :func:`saltelli_design` draws two independent matrices A and B (the two
halves of a scrambled Sobol' sequence of dimension 2k, :class:`scipy.stats.qmc.Sobol`)
and the k matrices AB_i (A with column i taken from B): N (k + 2) points for base
sample N. The N rows of A (and of B, AB_i) come from :func:`sobol_scrambles` independent
scrambles of N / m points each, stacked in order. :func:`sobol_indices` estimates, with
f centred on its mean over A and B (Sobol' & Levitan 1999) and V its variance there,

* first order (Saltelli et al. 2010, Table 2 (b)):
  S_i = (1/N) Σ_j f(B)_j (f(AB_i)_j − f(A)_j) / V
* total (Jansen 1999; Saltelli et al. 2010, Table 2 (f)):
  S_Ti = (1/2N) Σ_j (f(A)_j − f(AB_i)_j)² / V

through :func:`scipy.stats.sobol_indices` (its ``saltelli_2010`` estimator) on each of the
m independent scrambles; the index is the mean of the m estimates and its standard error
their spread, sd / √m (randomised quasi-Monte Carlo with independent replicates: Owen 1997;
L'Ecuyer & Lemieux 2002): over 200 independent designs at N = 2^11 the reported standard
errors matched the real spread of the estimates within 7 % for every index of the Ishigami
function, and at N = 2^14 within 15 % over 100 designs. A bootstrap over the rows would treat
scrambled Sobol' points as independent draws and overstate the error four to six times for this
design (0.0107 against a real spread of 0.0021 for S1 of x1 at N = 2^14;
``experiments/literature/sobol_errors.py``), about ten times against a single scramble of 2^14
points. Rows whose output is NaN (a point whose runs never reach a level) are left
out of the index they belong to, with their A and B partners; a base sample that is then
no longer a power of 2 is estimated with the same formulas written out here. With a small
N an index can fall outside [0, 1]; the table's ``note`` says so.

Morris screening. :func:`morris_design` builds r trajectories of k + 1 points on a grid
of p levels, each moving one input at a time by Δ = p / (2 (p − 1)) (Morris 1991,
the matrix B*). :func:`morris_effects` returns, per input, the mean μ, the mean
absolute value μ* (Campolongo, Cariboni & Saltelli 2007) and the standard deviation σ
of its elementary effects EE_i = (f(x + Δ e_i) − f(x)) / Δ. A large μ* marks an
influential input, a large σ one that acts through interactions or non-linearly.

References
----------
Sobol', I. M. (1993). Sensitivity estimates for nonlinear mathematical models.
Mathematical Modelling and Computational Experiments 1, 407–414.
Saltelli, A. (2002). Making best use of model evaluations to compute sensitivity
indices. Computer Physics Communications 145, 280–297.
Saltelli, A., Annoni, P., Azzini, I., Campolongo, F., Ratto, M., Tarantola, S. (2010).
Variance based sensitivity analysis of model output. Design and estimator for the total
sensitivity index. Computer Physics Communications 181, 259–270.
Jansen, M. J. W. (1999). Analysis of variance designs for model output. Computer
Physics Communications 117, 35–43.
Sobol', I. M. & Levitan, Y. L. (1999). On the use of variance reducing multipliers in
Monte Carlo computations of a global sensitivity index. Computer Physics Communications
117, 52–61.
Owen, A. B. (1997). Scrambled net variance for integrals of smooth functions. Annals of
Statistics 25, 1541–1562.
L'Ecuyer, P. & Lemieux, C. (2002). Recent advances in randomized quasi-Monte Carlo
methods. In Modeling Uncertainty, 419–474. Kluwer.
Morris, M. D. (1991). Factorial sampling plans for preliminary computational
experiments. Technometrics 33, 161–174.
Campolongo, F., Cariboni, J., Saltelli, A. (2007). An effective screening design for
sensitivity analysis of large models. Environmental Modelling & Software 22, 1509–1518.
"""

from __future__ import annotations

from collections.abc import Sequence

import numpy as np
import pandas as pd
from scipy import stats
from scipy.stats import qmc

__all__ = ["saltelli_design", "sobol_indices", "sobol_scrambles", "morris_design", "morris_effects", "SOBOL_SCRAMBLES"]

#: Most independent scrambles a Sobol' design is made of (their spread gives the standard errors).
SOBOL_SCRAMBLES = 8


def sobol_scrambles(n: int) -> int:
    """Independent scrambles m in a base sample of ``n``: min(8, n / 4), at least 1, so that each
    scramble has at least 4 points (n / m, a power of 2, keeps the Sobol' balance).

    Examples
    --------
    >>> [sobol_scrambles(n) for n in (2, 8, 16, 64, 2**14)]
    [1, 2, 4, 8, 8]
    """
    return max(1, min(SOBOL_SCRAMBLES, n // 4))


def saltelli_design(n: int, k: int, rng: np.random.Generator) -> np.ndarray:
    """Saltelli's sampling scheme: rows A (n), B (n), then AB_1 .. AB_k (n each).

    A and B are made of :func:`sobol_scrambles` (n) independent scrambles of a Sobol'
    sequence of dimension 2k, n / m points each, stacked in order (rows of scramble j are
    j n/m .. (j + 1) n/m − 1 in every block).

    Parameters
    ----------
    n : int
        Base sample size N, a power of 2 (balance of the Sobol' sequence).
    k : int
        Number of inputs.
    rng : numpy.random.Generator
        Drives the scrambling of the Sobol' sequences.

    Returns
    -------
    numpy.ndarray
        Shape (n (k + 2), k), points in [0, 1)^k.

    Examples
    --------
    >>> import numpy as np
    >>> saltelli_design(8, 3, np.random.default_rng(1)).shape
    (40, 3)
    """
    if n < 2 or n & (n - 1):
        raise ValueError(f"n must be a power of 2 >= 2, got {n}")
    if k < 1:
        raise ValueError(f"k must be >= 1, got {k}")
    m = sobol_scrambles(n)
    base = np.vstack([qmc.Sobol(d=2 * k, scramble=True, rng=rng).random(n // m) for _ in range(m)])
    a, b = base[:, :k], base[:, k:]
    blocks = [a, b]
    for i in range(k):
        ab = a.copy()
        ab[:, i] = b[:, i]
        blocks.append(ab)
    return np.vstack(blocks)


def _indices(fa: np.ndarray, fb: np.ndarray, fab: np.ndarray) -> tuple[float, float]:
    """First-order and total index from finite rows; NaN with fewer than 2 rows or no variance."""
    n = fa.size
    if n < 2 or not np.var(np.concatenate([fa, fb])) > 0:
        return float("nan"), float("nan")
    if n & (n - 1) == 0:
        # one output given twice: scipy squeezes a single input and output to a scalar it cannot index
        two = {"f_A": np.vstack([fa, fa]), "f_B": np.vstack([fb, fb]), "f_AB": np.stack([fab, fab])[None]}
        res = stats.sobol_indices(func=two, n=n)
        return float(np.ravel(res.first_order)[0]), float(np.ravel(res.total_order)[0])
    # filtered rows: scipy needs a power of 2, so its saltelli_2010 estimator, written out
    mean = np.mean(np.concatenate([fa, fb]))
    fa, fb, fab = fa - mean, fb - mean, fab - mean
    variance = np.var(np.concatenate([fa, fb]))
    return float(np.mean(fb * (fab - fa)) / variance), float(0.5 * np.mean((fa - fab) ** 2) / variance)


def sobol_indices(
    y: np.ndarray,
    k: int,
    *,
    names: Sequence[str] | None = None,
    scrambles: int | None = None,
) -> pd.DataFrame:
    """First-order and total Sobol indices from outputs on a :func:`saltelli_design`.

    Parameters
    ----------
    y : array of shape (N (k + 2),)
        Model outputs in the row order of :func:`saltelli_design`. Rows whose value is
        NaN are left out of the index they belong to (with their A and B partners).
    k : int
        Number of inputs.
    names : sequence of str, optional
        Input names; default ``x1 .. xk``.
    scrambles : int, optional
        Independent scrambles the design is made of; default :func:`sobol_scrambles` (N),
        as :func:`saltelli_design` makes it.

    Returns
    -------
    pandas.DataFrame
        One row per input: ``input``, ``S1``, ``ST`` (means over the scrambles), ``S1_se``,
        ``ST_se`` (their standard errors from the spread over the scrambles, NaN with one
        scramble), ``rows`` (the N used),
        ``scrambles`` and ``note`` (says when an index lies outside [0, 1], which only a
        small sample's error can do).

    Examples
    --------
    >>> import numpy as np
    >>> x = saltelli_design(1024, 2, np.random.default_rng(0))
    >>> t = sobol_indices(x[:, 0] + 0.0 * x[:, 1], 2)   # only x1 matters
    >>> float(round(t.loc[0, "S1"], 2)), float(round(t.loc[1, "ST"], 2))
    (1.0, 0.0)
    """
    y = np.asarray(y, dtype=float)
    if y.ndim != 1 or y.size % (k + 2):
        raise ValueError(f"y must have N (k + 2) = N x {k + 2} values, got shape {y.shape}")
    n = y.size // (k + 2)
    m = sobol_scrambles(n) if scrambles is None else int(scrambles)
    if m < 1 or n % m:
        raise ValueError(f"scrambles must divide the base sample N = {n}, got {m}")
    names = [f"x{i + 1}" for i in range(k)] if names is None else list(names)
    if len(names) != k:
        raise ValueError(f"names has {len(names)} entries, k = {k}")
    fa, fb = y[:n], y[n : 2 * n]
    block = np.arange(n) // (n // m)
    rows = []
    for i in range(k):
        fab = y[(2 + i) * n : (3 + i) * n]
        ok = np.isfinite(fa) & np.isfinite(fb) & np.isfinite(fab)
        se1 = se_t = float("nan")
        if m == 1:
            s1, st = _indices(fa[ok], fb[ok], fab[ok])
        else:
            per = np.array(
                [_indices(fa[ok & (block == j)], fb[ok & (block == j)], fab[ok & (block == j)]) for j in range(m)]
            )
            good = np.isfinite(per).all(axis=1)
            s1, st = per[good].mean(axis=0) if good.any() else (float("nan"), float("nan"))
            if good.sum() > 1:
                se1, se_t = per[good].std(axis=0, ddof=1) / np.sqrt(good.sum())
        outside = [f"{label} = {v:.3g}" for label, v in (("S1", s1), ("ST", st)) if np.isfinite(v) and not 0 <= v <= 1]
        note = (
            f"{', '.join(outside)} outside [0, 1]: sampling error of a small base sample (N = {int(ok.sum())})"
            if outside
            else ""
        )
        rows.append(
            {
                "input": names[i],
                "S1": float(s1),
                "S1_se": float(se1),
                "ST": float(st),
                "ST_se": float(se_t),
                "rows": int(ok.sum()),
                "scrambles": m,
                "note": note,
            }
        )
    return pd.DataFrame(rows)


def morris_design(k: int, trajectories: int, levels: int, rng: np.random.Generator) -> np.ndarray:
    """Morris trajectories on a grid of ``levels`` levels in [0, 1]^k.

    Each trajectory is Morris's (1991) randomised matrix
    B* = (J x* + (Δ/2) [(2B − J) D* + J]) P*, with B strictly lower triangular ones,
    D* a random diagonal of ±1, P* a random permutation and x* a random base point on
    the levels {0, 1/(p−1), …, 1 − Δ}, Δ = p / (2 (p − 1)).

    Returns
    -------
    numpy.ndarray
        Shape (trajectories (k + 1), k); consecutive rows of a trajectory differ in
        exactly one input, by ±Δ.

    Examples
    --------
    >>> import numpy as np
    >>> x = morris_design(3, 2, 4, np.random.default_rng(0))
    >>> x.shape, sorted(set(np.round(np.abs(np.diff(x[:4], axis=0)).sum(axis=1), 6).tolist()))
    ((8, 3), [0.666667])
    """
    if levels < 2 or levels % 2:
        raise ValueError(f"levels must be an even whole number >= 2, got {levels}")
    delta = levels / (2 * (levels - 1))
    b = np.tril(np.ones((k + 1, k)), -1)
    j = np.ones((k + 1, k))
    base_levels = np.arange(levels // 2) / (levels - 1)
    out = []
    for _ in range(trajectories):
        x_star = rng.choice(base_levels, size=k)
        d_star = np.diag(rng.choice([-1.0, 1.0], size=k))
        p_star = np.eye(k)[rng.permutation(k)]
        out.append((x_star[None, :] + (delta / 2) * ((2 * b - j) @ d_star + j)) @ p_star)
    return np.vstack(out)


def morris_effects(
    unit: np.ndarray, y: np.ndarray, trajectories: int, *, names: Sequence[str] | None = None
) -> pd.DataFrame:
    """μ, μ* and σ of the elementary effects on a :func:`morris_design`.

    Parameters
    ----------
    unit : array (trajectories (k + 1), k)
        The points in unit coordinates (after any rounding of whole-number inputs, so
        that Δ is the change actually made).
    y : array (trajectories (k + 1),)
        Outputs. A step whose two outputs are not both finite, or which changes no
        input (rounding), gives no elementary effect.
    trajectories : int

    Returns
    -------
    pandas.DataFrame
        One row per input: ``input``, ``mu``, ``mu_star``, ``sigma``, ``effects`` (how
        many elementary effects were measured), sorted by ``mu_star``, largest first.

    Examples
    --------
    >>> import numpy as np
    >>> x = morris_design(2, 10, 4, np.random.default_rng(0))
    >>> morris_effects(x, 3 * x[:, 0], 10)[["input", "mu"]].round(6).values.tolist()
    [['x1', 3.0], ['x2', 0.0]]
    """
    unit = np.asarray(unit, dtype=float)
    y = np.asarray(y, dtype=float)
    rows_per, k = unit.shape[0] // trajectories, unit.shape[1]
    if rows_per != k + 1 or unit.shape[0] != trajectories * (k + 1) or y.shape != (unit.shape[0],):
        raise ValueError(f"unit must be ({trajectories} x {k + 1}, k) and y match it; got {unit.shape}, {y.shape}")
    names = [f"x{i + 1}" for i in range(k)] if names is None else list(names)
    effects: list[list[float]] = [[] for _ in range(k)]
    for t in range(trajectories):
        u = unit[t * (k + 1) : (t + 1) * (k + 1)]
        f = y[t * (k + 1) : (t + 1) * (k + 1)]
        for s in range(k):
            du = u[s + 1] - u[s]
            moved = np.flatnonzero(np.abs(du) > 1e-12)
            if moved.size == 0 or not (np.isfinite(f[s]) and np.isfinite(f[s + 1])):
                continue
            if moved.size > 1:
                raise ValueError(f"trajectory {t}, step {s}: {moved.size} inputs change at once; not a Morris design")
            i = int(moved[0])
            effects[i].append((f[s + 1] - f[s]) / du[i])
    rows = []
    for i in range(k):
        e = np.asarray(effects[i])
        rows.append(
            {
                "input": names[i],
                "mu": float(e.mean()) if e.size else float("nan"),
                "mu_star": float(np.abs(e).mean()) if e.size else float("nan"),
                "sigma": float(e.std(ddof=1)) if e.size > 1 else float("nan"),
                "effects": int(e.size),
            }
        )
    return pd.DataFrame(rows).sort_values("mu_star", ascending=False, kind="stable").reset_index(drop=True)
