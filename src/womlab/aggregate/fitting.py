"""Effective parameters: the aggregate model that best reproduces a network curve.

A network run is summarised by the Bass parameters (p, Q and, where the horizon does not
reach saturation, the market size m) that fit its cumulative share best, by nonlinear
least squares (``scipy.optimize.least_squares``, trust-region reflective, with bounds
that keep every parameter positive). The ratio Q_eff / Q_mapped of fitted to mapped
word-of-mouth strength says how much word of mouth the network "loses" to clustering,
local saturation and degree heterogeneity.

Every fitted curve is the closed form :func:`womlab.aggregate.bass_share` (which handles
an initial share F₀), the Bass difference form :func:`womlab.aggregate.bass_difference`
in a run's own step (``time_step``, ``form``), or :func:`womlab.aggregate.capped_bass_difference`
for the fit of the capped Bass difference model: the formulas live in :mod:`womlab.aggregate` alone.

Fit a run in its own step. A run of the array engine with step Δt moves by the
difference form, not the ODE; the closed form fitted to it absorbs the step's own bias
into Q (on the complete network at step 0.25 the closed form gave Q_eff / Q_mapped = 0.984
where the network has lost no word of mouth). :func:`fit_bass` with ``time_step`` fits the
difference form in that step and step form, so Q_eff is measured on the scale of the
model that generated the run; runs on the continuous clock are fitted with the closed form.

Models
------
Cumulative share (network curves): S(t) = m·F(t; p, Q, F₀ = S(0)/m), so S(0) is matched
exactly and m ≤ 1 is the share of the market that would ever adopt.

Sales per period (market data): ``density`` sales(t) = m·f(t), f = dF/dt, or
``difference`` sales(t) = m·(F(t) − F(t − 1)), with F(0) = 0.

References
----------
Bass, F. M. (1969). A new product growth for model consumer durables. Management
Science 15(5), 215–227.
Srinivasan, V. & Mason, C. H. (1986). Nonlinear least squares estimation of new product
diffusion models. Marketing Science 5(2), 169–178.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import asdict, dataclass, field

import numpy as np
import pandas as pd
from scipy.optimize import least_squares

from womlab.aggregate.models import bass_density, bass_difference, bass_share, capped_bass_difference
from womlab.errors import WomlabError

__all__ = [
    "BassFit",
    "StockFlowFit",
    "fit_bass",
    "fit_bass_sales",
    "fit_replicates",
    "fit_capped_bass_difference",
    "fit_stock_and_flow",
]

_P_BOUNDS = (1e-9, 5.0)
_Q_BOUNDS = (1e-9, 20.0)
_STARTS_P = (1e-3, 1e-2, 5e-2)
_STARTS_Q = (0.1, 0.4, 1.2)


@dataclass(frozen=True)
class BassFit:
    """A Bass fit and how it went.

    Attributes
    ----------
    p, Q : float
        Fitted external influence and word-of-mouth strength, per period.
    m : float
        Fitted (or fixed) market size: a share of the market for share data, a count for
        sales data.
    market_fitted : bool
        Whether m was fitted (False: fixed).
    initial_share : float
        S(0) of the data (share fits); 0 for sales fits.
    success : bool
        ``least_squares`` reported convergence.
    message : str
        Its message.
    nfev : int
        Residual evaluations used (best start).
    rmse : float
        Root mean square residual at the fit.
    stderr : dict
        Asymptotic standard errors from the Jacobian, s²·(JᵀJ)⁻¹ (NaN where singular);
        they assume independent errors, which cumulative curves do not have.
    data : str
        ``share``, ``density`` or ``difference``.
    time_step : float or None
        None: the closed form was fitted; else the Bass difference form in this step
        (share fits on periods 0..T).
    form : str
        Step form of the difference form (``exponential`` or ``linear``).
    """

    p: float
    Q: float
    m: float
    market_fitted: bool
    initial_share: float
    success: bool
    message: str
    nfev: int
    rmse: float
    stderr: dict = field(default_factory=dict)
    data: str = "share"
    time_step: float | None = None
    form: str = "linear"

    def share(self, t: np.ndarray | float) -> np.ndarray:
        """The fitted cumulative curve S(t) = m·F(t) (share fits) or m·F(t) (sales fits).

        A difference-form fit is defined on whole periods: ``t`` must be whole numbers."""
        f0 = self.initial_share / self.m if self.m > 0 else 0.0
        if self.time_step is None:
            return self.m * bass_share(t, self.p, self.Q, f0)
        t = np.asarray(t, dtype=float)
        k = np.rint(t).astype(int)
        if not np.allclose(t, k) or (k < 0).any():
            raise WomlabError("a difference-form Bass fit is defined on whole periods 0, 1, 2, …")
        curve = bass_difference(int(k.max(initial=0)), self.p, self.Q, f0, time_step=self.time_step, form=self.form)
        return self.m * curve[k]

    def as_dict(self) -> dict:
        """Flat dict (standard errors as ``se_p``, ``se_Q``, ``se_m``)."""
        d = asdict(self)
        se = d.pop("stderr")
        d.update({f"se_{k}": v for k, v in se.items()})
        return d


def _best_fit(residual, starts: Sequence[np.ndarray], lower: np.ndarray, upper: np.ndarray):  # noqa: ANN001, ANN202
    best = None
    for x0 in starts:
        x0 = np.clip(np.asarray(x0, dtype=float), lower + 1e-12 * (upper - lower), upper - 1e-12 * (upper - lower))
        res = least_squares(
            residual,
            x0,
            bounds=(lower, upper),
            method="trf",
            x_scale="jac",
            xtol=1e-12,
            ftol=1e-12,
            gtol=1e-12,
            max_nfev=2000,
        )
        if best is None or res.cost < best.cost - 1e-15 or (not best.success and res.success):
            best = res
    return best


def _stderr(res, names: Sequence[str], n: int) -> dict[str, float]:  # noqa: ANN001
    k = len(res.x)
    out = {name: float("nan") for name in names}
    if n <= k:
        return out
    s2 = 2 * res.cost / (n - k)
    try:
        cov = np.linalg.inv(res.jac.T @ res.jac) * s2
    except np.linalg.LinAlgError:
        return out
    diag = np.diag(cov)
    return {name: float(np.sqrt(v)) if v >= 0 else float("nan") for name, v in zip(names, diag)}


def _check_curve(values: np.ndarray, name: str) -> np.ndarray:
    values = np.asarray(values, dtype=float).ravel()
    if values.size < 3:
        raise WomlabError(f"{name} needs at least 3 points to fit, got {values.size}")
    if not np.all(np.isfinite(values)):
        raise WomlabError(f"{name} must be finite numbers, got a NaN or infinity")
    return values


def fit_bass(
    share: np.ndarray,
    times: np.ndarray | None = None,
    *,
    market: float | str | None = "auto",
    saturation: float = 0.95,
    start: tuple[float, float, float] | None = None,
    time_step: float | None = None,
    form: str = "linear",
) -> BassFit:
    """Fit the Bass model S(t) = m·F(t; p, Q, S(0)/m) to a cumulative share curve.

    Parameters
    ----------
    share : array
        Cumulative share of the market on ``times`` (the first point is the initial state).
    times : array, optional
        Defaults to 0, 1, …, periods.
    market : "auto", None or float
        ``"auto"``: fit m when the horizon does not reach saturation (final share below
        ``saturation``), else fix m = 1; ``None``: always fit m; a number: fix m to it.
        A fitted m lies between the largest observed share and 1.
    saturation : float
        Final share at or above which ``"auto"`` treats the horizon as saturated.
    start : (p, Q, m), optional
        Start from this point only (e.g. a previous fit); by default a small grid of
        starts is tried and the best kept.
    time_step : float, optional
        Fit the Bass difference form :func:`womlab.aggregate.bass_difference` in this step
        (a run's ``run.time_step``) instead of the closed form; the curve must be on
        periods 0..T (``times`` not given). Without ``start`` the closed-form fit is the
        starting point.
    form : str
        The difference form's step form (a run's ``run.step_probability``).

    Returns
    -------
    BassFit

    Raises
    ------
    WomlabError
        If the curve has fewer than 3 points or non-finite values, or ``times`` is given
        with ``time_step``.

    Examples
    --------
    >>> import numpy as np
    >>> from womlab import bass_share
    >>> t = np.arange(31.0)
    >>> fit = fit_bass(bass_share(t, 0.02, 0.4, 0.01), t)
    >>> round(fit.p, 6), round(fit.Q, 6), fit.market_fitted
    (0.02, 0.4, False)
    """
    s = _check_curve(share, "share")
    if time_step is not None:
        if times is not None:
            raise WomlabError("a difference-form fit (time_step) needs the curve on periods 0..T; do not pass times")
        if start is None:
            closed = fit_bass(s, market=market, saturation=saturation)
            start = (closed.p, closed.Q, closed.m)
            market = None if closed.market_fitted else closed.m
    t = np.arange(s.size, dtype=float) if times is None else np.asarray(times, dtype=float) - float(times[0])
    s0, top = float(s[0]), float(s.max())
    periods = s.size - 1
    body = t[1:], s[1:]

    def curve(p: float, q: float, m: float) -> np.ndarray:
        if time_step is None:
            return m * bass_share(body[0], p, q, s0 / m)
        return m * bass_difference(periods, p, q, s0 / m, time_step=time_step, form=form)[1:]

    if market == "auto":
        fit_m = s[-1] < saturation
        m_fixed = 1.0
    elif market is None:
        fit_m, m_fixed = True, 1.0
    else:
        fit_m, m_fixed = False, float(market)
    if fit_m and top >= 1.0 - 1e-9:
        fit_m, m_fixed = False, 1.0

    if fit_m:
        lower = np.array([_P_BOUNDS[0], _Q_BOUNDS[0], max(top, 1e-9)])
        upper = np.array([_P_BOUNDS[1], _Q_BOUNDS[1], 1.0])

        def residual(x: np.ndarray) -> np.ndarray:
            return curve(x[0], x[1], x[2]) - body[1]

        m_starts = (min(1.0, 1.05 * top + 1e-6), 1.0)
        starts = (
            [np.array(start)]
            if start
            else [np.array([p, q, m]) for p in _STARTS_P for q in _STARTS_Q for m in m_starts]
        )
        names = ("p", "Q", "m")
    else:
        lower = np.array([_P_BOUNDS[0], _Q_BOUNDS[0]])
        upper = np.array([_P_BOUNDS[1], _Q_BOUNDS[1]])

        def residual(x: np.ndarray) -> np.ndarray:
            return curve(x[0], x[1], m_fixed) - body[1]

        starts = [np.array(start[:2])] if start else [np.array([p, q]) for p in _STARTS_P for q in _STARTS_Q]
        names = ("p", "Q")
    res = _best_fit(residual, starts, lower, upper)
    m = float(res.x[2]) if fit_m else m_fixed
    if fit_m and m > 1.0 - 1e-9:
        m = 1.0  # the solver stays strictly inside its bounds; a fit on the bound m = 1 is m = 1
    se = _stderr(res, names, body[0].size)
    se.setdefault("m", 0.0)
    return BassFit(
        p=float(res.x[0]),
        Q=float(res.x[1]),
        m=m,
        market_fitted=bool(fit_m),
        initial_share=s0,
        success=bool(res.success),
        message=str(res.message),
        nfev=int(res.nfev),
        rmse=float(np.sqrt(np.mean(res.fun**2))),
        stderr=se,
        data="share",
        time_step=time_step,
        form=form,
    )


def fit_bass_sales(
    sales: np.ndarray,
    times: np.ndarray | None = None,
    *,
    form: str = "density",
    start: tuple[float, float, float] | None = None,
) -> BassFit:
    """Fit p, Q and the market size m to sales per period.

    Parameters
    ----------
    sales : array
        Sales (new customers) in each period.
    times : array, optional
        The periods, default 1, 2, …, n (sales of period t over (t − 1, t]).
    form : str
        ``density``: sales(t) = m·f(t), f = dF/dt (:func:`womlab.aggregate.bass_density`);
        ``difference``: sales(t) = m·(F(t) − F(t − 1)).
    start : (p, Q, m), optional
        Start from this point only (e.g. a previous fit, for bootstrap refits); by default
        a small grid of starts is tried and the best kept.

    Returns
    -------
    BassFit
        ``m`` in the units of ``sales``; ``initial_share`` 0.

    Examples
    --------
    >>> import numpy as np
    >>> from womlab import bass_share
    >>> t = np.arange(1.0, 16.0)
    >>> sales = 5000 * (bass_share(t, 0.01, 0.5) - bass_share(t - 1, 0.01, 0.5))
    >>> fit = fit_bass_sales(sales, form="difference")
    >>> round(fit.m), round(fit.p, 6), round(fit.Q, 6)
    (5000, 0.01, 0.5)
    """
    y = _check_curve(sales, "sales")
    t = np.arange(1, y.size + 1, dtype=float) if times is None else np.asarray(times, dtype=float)
    total = float(y.sum())
    if total <= 0:
        raise WomlabError(f"sales must sum to more than 0, got {total}")
    # m is searched as a multiple of the sales so far (well scaled, and m >= total sales)
    if form == "density":

        def model(x: np.ndarray) -> np.ndarray:
            return x[2] * total * bass_density(t, x[0], x[1])
    elif form == "difference":

        def model(x: np.ndarray) -> np.ndarray:
            return x[2] * total * (bass_share(t, x[0], x[1]) - bass_share(t - 1, x[0], x[1]))
    else:
        raise WomlabError(f"form must be density or difference, got {form!r}")
    scale = max(float(y.max()), 1e-300)
    lower = np.array([_P_BOUNDS[0], _Q_BOUNDS[0], 1.0 - 1e-9])
    upper = np.array([_P_BOUNDS[1], _Q_BOUNDS[1], 1e3])
    starts = (
        [np.array([start[0], start[1], start[2] / total])]
        if start
        else [np.array([p, q, f]) for p in _STARTS_P for q in _STARTS_Q for f in (1.2, 2.0, 5.0)]
    )
    res = _best_fit(lambda x: (model(x) - y) / scale, starts, lower, upper)
    rmse = float(np.sqrt(np.mean((model(res.x) - y) ** 2)))
    se = _stderr(res, ("p", "Q", "m"), y.size)
    # residuals were divided by `scale`, which s²(JᵀJ)⁻¹ does not see; m was searched / total
    se["m"] *= total
    res.x[2] *= total
    return BassFit(
        p=float(res.x[0]),
        Q=float(res.x[1]),
        m=float(res.x[2]),
        market_fitted=True,
        initial_share=0.0,
        success=bool(res.success),
        message=str(res.message),
        nfev=int(res.nfev),
        rmse=rmse,
        stderr=se,
        data=form,
    )


def fit_replicates(
    shares: np.ndarray,
    *,
    market: float | str | None = "auto",
    saturation: float = 0.95,
    start: tuple[float, float, float] | None = None,
    time_step: float | None = None,
    form: str = "linear",
) -> pd.DataFrame:
    """Fit Bass to each replicate's curve: one row per replicate.

    Columns ``replicate``, ``p``, ``Q``, ``m``, ``market_fitted``, ``success``, ``rmse``,
    ``nfev``. ``shares`` is an array (replicates, T + 1). With ``start`` (e.g. the fit
    of the mean curve) each fit starts there, and falls back to the grid of starts if
    it does not converge. ``time_step`` and ``form`` as in :func:`fit_bass`.
    """
    rows = []
    for r, s in enumerate(np.atleast_2d(shares)):
        f = fit_bass(s, market=market, saturation=saturation, start=start, time_step=time_step, form=form)
        if start is not None and not f.success:
            f = fit_bass(s, market=market, saturation=saturation, time_step=time_step, form=form)
        rows.append(
            {
                "replicate": r,
                "p": f.p,
                "Q": f.Q,
                "m": f.m,
                "market_fitted": f.market_fitted,
                "success": f.success,
                "rmse": f.rmse,
                "nfev": f.nfev,
            }
        )
    return pd.DataFrame(rows)


@dataclass(frozen=True)
class StockFlowFit:
    """A fit of the capped Bass difference model's slope and cap (:func:`fit_capped_bass_difference`).

    Attributes
    ----------
    slope : float
        Buying per potential customer per talker in the market, per period.
    cap : float or None
        Fitted ceiling on the buying rate (None when not fitted).
    success, message, nfev, rmse
        As for :class:`BassFit`.
    """

    slope: float
    cap: float | None
    success: bool
    message: str
    nfev: int
    rmse: float


def fit_capped_bass_difference(
    share: np.ndarray,
    *,
    organisations: int,
    satisfied_share: float,
    talkers_per_customer: float,
    external: float,
    time_step: float = 1.0,
    form: str = "linear",
    fit_cap: bool = True,
) -> StockFlowFit:
    """Fit the slope (and cap) of :func:`womlab.aggregate.capped_bass_difference` to a share curve on periods 0..T.

    The external influence, satisfied share and talkers are held at the given values;
    the slope is searched as the Bass-like strength slope·N·s·τ̄ (so the search is well
    scaled), the cap in (0, 1].
    """
    s = _check_curve(share, "share")
    periods = s.size - 1
    n = int(organisations)
    per_q = n * satisfied_share * talkers_per_customer
    if per_q <= 0:
        raise WomlabError("fit_capped_bass_difference needs organisations × satisfied share × talkers > 0")

    def curve(x: np.ndarray) -> np.ndarray:
        c = capped_bass_difference(
            periods,
            n,
            s[0] * n,
            slope=x[0] / per_q,
            satisfied_share=satisfied_share,
            talkers_per_customer=talkers_per_customer,
            external=external,
            cap=float(x[1]) if fit_cap else None,
            time_step=time_step,
            form=form,
        )
        return c[1:] / n

    if fit_cap:
        lower, upper = np.array([_Q_BOUNDS[0], 1e-9]), np.array([_Q_BOUNDS[1], 1.0])
        starts = [np.array([q, c]) for q in _STARTS_Q for c in (0.05, 0.2, 1.0)]
    else:
        lower, upper = np.array([_Q_BOUNDS[0]]), np.array([_Q_BOUNDS[1]])
        starts = [np.array([q]) for q in _STARTS_Q]
    res = _best_fit(lambda x: curve(x) - s[1:], starts, lower, upper)
    return StockFlowFit(
        slope=float(res.x[0] / per_q),
        cap=float(res.x[1]) if fit_cap else None,
        success=bool(res.success),
        message=str(res.message),
        nfev=int(res.nfev),
        rmse=float(np.sqrt(np.mean(res.fun**2))),
    )


#: Former name of :func:`fit_capped_bass_difference`, kept so that code written for it keeps working.
fit_stock_and_flow = fit_capped_bass_difference
