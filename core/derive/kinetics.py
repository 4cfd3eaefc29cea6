"""Storage kinetics across temperatures: one-step Arrhenius fits and honest bounds.

One model per run and property, fitted to every measurement of the run at once:

- zero order: ``value = v0 + k(T) * t``;
- first order: ``ln(value) = ln(v0) + k(T) * t``;
- ``k(T) = k_ref * exp(-Ea / R * (1/T - 1/T_ref))``, ``T`` in kelvin.

There is one ``v0`` per run, shared by its temperatures: time 0 is one
measurement of one batch, before storage, so its temperature does not enter
the model (``k(T) * 0 = 0``). The fit is least squares over every point at once
(``scipy.optimize.least_squares``), on ``ln(value)`` for first order. With one
temperature the model is the ordinary straight line in time and is solved in
closed form.

The parameters are ``(a, k_c, b)``: ``a`` the fitted start on the fit scale,
``k_c`` the rate at the centre temperature ``T_c`` (the harmonic mean of the
tested temperatures in kelvin, which keeps ``k_c`` and ``b`` nearly
uncorrelated), ``b = Ea / R`` in kelvin. Rates and bounds at any other
temperature follow from them and their covariance ``s^2 (J'J)^-1`` (the usual
least-squares covariance, as ``scipy.optimize.curve_fit`` returns it).

At a fixed temperature the fitted mean is straight in time, ``m(t) = a + K t``,
and its variance is a quadratic in time, ``A + 2 B t + C t^2``. The time at
which a one-sided confidence bound of the mean curve reaches a limit (ICH Q1E,
Evaluation of stability data, 2003, section 2.4) is then a root of a quadratic,
found exactly for every run at once.
"""
from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
import pandas as pd

__all__ = ["R_GAS", "KELVIN", "kelvin", "ArrheniusFit", "fit_arrhenius", "rate_at", "q10",
           "mean_curve", "time_to_bound", "time_to_limit_se", "per_temperature_rates"]

R_GAS = 8.314462618        # J/(mol K), CODATA 2018 exact value
KELVIN = 273.15            # 0 degC in kelvin


@dataclass(frozen=True)
class ArrheniusFit:
    """Per-run results of :func:`fit_arrhenius`; every array has one entry per run.

    Attributes
    ----------
    runs : (m,) object
        Run labels, first-seen order.
    order : str
        ``'zero'`` or ``'first'``.
    params : (m, 3)
        ``a`` (start on the fit scale), ``k_c`` (rate at ``t_centre``),
        ``b = Ea / R`` in kelvin (NaN with one temperature).
    cov : (m, 3, 3)
        Their covariance (``b`` rows and columns 0 with one temperature).
    t_centre : (m,)
        The centre temperature in kelvin.
    n_points, n_temperatures, df : (m,) int
        Points used, temperatures tested, residual degrees of freedom.
    sse, r_squared : (m,)
        Residual sum of squares and R-squared on the fit scale.
    last_time : (m,)
        The last storage time of the run.
    ok : (m,) bool
        The fit exists (enough points, parameters estimable). With no residual
        degrees of freedom (two points on one temperature) the estimates exist
        but their covariance is NaN, and so are the bounds.
    """

    runs: np.ndarray
    order: str
    params: np.ndarray
    cov: np.ndarray
    t_centre: np.ndarray
    n_points: np.ndarray
    n_temperatures: np.ndarray
    df: np.ndarray
    sse: np.ndarray
    r_squared: np.ndarray
    last_time: np.ndarray
    ok: np.ndarray

    @property
    def start(self) -> np.ndarray:
        """The fitted value at time 0, on the property's own scale."""
        a = self.params[:, 0]
        return np.exp(a) if self.order == "first" else a

    @property
    def ea(self) -> np.ndarray:
        """Activation energy in kJ/mol (NaN with one temperature)."""
        return self.params[:, 2] * R_GAS / 1000.0

    @property
    def ea_se(self) -> np.ndarray:
        """Standard error of the activation energy in kJ/mol."""
        return np.sqrt(self.cov[:, 2, 2]) * R_GAS / 1000.0 * np.where(
            self.n_temperatures > 1, 1.0, np.nan)


def kelvin(temperature_c) -> np.ndarray:
    """degC to kelvin."""
    return np.asarray(temperature_c, float) + KELVIN


def _line(t, y):
    """Closed-form straight line y = a + k t: (a, k, cov 2x2, sse, df)."""
    n = len(t)
    tbar, ybar = t.mean(), y.mean()
    sxx = float(((t - tbar) ** 2).sum())
    k = float(((t - tbar) * (y - ybar)).sum()) / sxx
    a = ybar - k * tbar
    sse = float(((y - a - k * t) ** 2).sum())
    df = n - 2
    s2 = sse / df if df > 0 else math.nan
    cov = s2 * np.array([[1.0 / n + tbar ** 2 / sxx, -tbar / sxx],
                         [-tbar / sxx, 1.0 / sxx]])
    return a, k, cov, sse, df


def _one_step(t, y, d, start):
    """Least squares of y = a + k_c exp(-b d) t over (a, k_c, b), d = 1/T - 1/T_c."""
    from scipy.optimize import least_squares

    def resid(p):
        return p[0] + p[1] * np.exp(-p[2] * d) * t - y

    def jac(p):
        e = np.exp(-p[2] * d)
        return np.column_stack([np.ones_like(t), e * t, -p[1] * e * t * d])

    res = least_squares(resid, start, jac=jac, method="lm", x_scale="jac", xtol=1e-15,
                        ftol=1e-15, gtol=1e-15, max_nfev=5000)
    return res.x, res.fun, jac(res.x)


def _start_values(t, y, d):
    """Profile the straight-line fit over a grid of b = Ea / R, keep the best."""
    # Ea from -50 to 300 kJ/mol: beyond what foods show, so the optimum is inside.
    grid = np.linspace(-50e3, 300e3, 141) / R_GAS
    x = np.exp(-np.outer(grid, d)) * t                   # (g, n)
    xbar = x.mean(axis=1, keepdims=True)
    ybar = y.mean()
    sxx = ((x - xbar) ** 2).sum(axis=1)
    with np.errstate(invalid="ignore", divide="ignore"):
        k = ((x - xbar) * (y - ybar)).sum(axis=1) / sxx
    a = ybar - k * xbar[:, 0]
    sse = ((y - a[:, None] - k[:, None] * x) ** 2).sum(axis=1)
    best = int(np.nanargmin(np.where(np.isfinite(sse), sse, np.nan)))
    return np.array([a[best], k[best], grid[best]])


def fit_arrhenius(run, time, temperature, value, *, order: str = "zero") -> ArrheniusFit:
    """One-step least-squares fit of every run across its storage temperatures.

    Parameters
    ----------
    run, time, temperature, value : array-like, same length
        One measurement a row. ``temperature`` in degC; it is ignored at time 0
        (may be NaN there). Blank (NaN) values are skipped. First order needs
        values above 0 (the caller checks and names the row).
    order : {'zero', 'first'}

    Returns
    -------
    ArrheniusFit
        ``ok`` is False where a run has fewer than three points, no time after 0,
        or (several temperatures) a rate that does not change with temperature
        in an estimable way.
    """
    codes, labels = pd.factorize(pd.Series(run, dtype=object), sort=False)
    labels = np.asarray(labels, dtype=object)
    time = np.asarray(time, float)
    temp = np.asarray(temperature, float)
    value = np.asarray(value, float)
    m = len(labels)
    params = np.full((m, 3), np.nan)
    cov = np.full((m, 3, 3), np.nan)
    t_centre = np.full(m, np.nan)
    n_pts = np.zeros(m, int)
    n_temp = np.zeros(m, int)
    dfs = np.zeros(m, int)
    sse = np.full(m, np.nan)
    r2 = np.full(m, np.nan)
    last = np.full(m, np.nan)
    ok = np.zeros(m, bool)
    for g in range(m):
        keep = (codes == g) & ~np.isnan(value)
        t, y, T = time[keep], value[keep], temp[keep]
        if order == "first":
            y = np.log(y)
        stored = t > 0
        temps = np.unique(T[stored & ~np.isnan(T)])
        n_pts[g], n_temp[g] = len(t), len(temps)
        if len(t):
            last[g] = t.max()
        if len(t) < 2 or not stored.any() or np.ptp(t) == 0:
            continue
        if len(temps) <= 1:
            a, k, c2, s, df = _line(t, y)
            params[g] = (a, k, math.nan)
            cov[g] = 0.0
            cov[g, :2, :2] = c2
            t_centre[g] = kelvin(temps[0]) if len(temps) else math.nan
        else:
            if len(t) < 4:
                continue
            Tk = kelvin(T)
            tc = 1.0 / np.mean(1.0 / kelvin(temps))
            d = np.where(stored, 1.0 / np.where(stored, Tk, 1.0) - 1.0 / tc, 0.0)
            p, res, J = _one_step(t, y, d, _start_values(t, y, d))
            df = len(t) - 3
            s = float(res @ res)
            # columns scaled to unit length, so the check sees collinearity
            # (a rate that does not depend on temperature), not units
            norm = np.linalg.norm(J, axis=0)
            if not np.all(norm > 0):
                continue
            jtj = (J / norm).T @ (J / norm)
            if np.linalg.cond(jtj) > 1e12:
                continue
            params[g] = p
            cov[g] = s / df * np.linalg.inv(jtj) / np.outer(norm, norm)
            t_centre[g] = tc
        dfs[g], sse[g] = df, s
        syy = float(((y - y.mean()) ** 2).sum())
        r2[g] = 1.0 - s / syy if syy > 0 else math.nan
        ok[g] = True
    return ArrheniusFit(labels, order, params, cov, t_centre, n_pts, n_temp, dfs, sse,
                        r2, last, ok)


def _at(fit: ArrheniusFit, temperature_c):
    """Rate K at the temperature, and the gradient of K over (a, k_c, b)."""
    T = kelvin(temperature_c)
    a, kc, b = fit.params.T
    one = fit.n_temperatures <= 1
    d = np.where(one, 0.0, 1.0 / T - 1.0 / fit.t_centre)
    e = np.exp(-np.where(one, 0.0, b) * d)
    K = kc * e
    grad = np.column_stack([np.zeros_like(K), e, -kc * e * d])
    return K, grad


def rate_at(fit: ArrheniusFit, temperature_c) -> tuple[np.ndarray, np.ndarray]:
    """k at the temperature (per time unit) and its delta-method standard error.

    With one temperature the rate is the straight line's slope whatever the
    temperature asked for; the caller refuses another temperature.
    """
    K, grad = _at(fit, temperature_c)
    var = np.einsum("mi,mij,mj->m", grad, fit.cov, grad)
    return K, np.where(fit.ok, np.sqrt(var), np.nan)


def q10(fit: ArrheniusFit, temperature_c) -> tuple[np.ndarray, np.ndarray]:
    """Q10 = k(T + 10) / k(T) = exp(10 Ea / (R T (T + 10))) and its standard error."""
    T = kelvin(temperature_c)
    factor = 10.0 / (T * (T + 10.0))          # per kelvin, times b = Ea / R
    b, var_b = fit.params[:, 2], fit.cov[:, 2, 2]
    q = np.exp(b * factor)
    return q, q * factor * np.sqrt(var_b)


def mean_curve(fit: ArrheniusFit, temperature_c):
    """The mean line at the temperature: (a, K, A, B, C) with var = A + 2Bt + Ct^2."""
    K, grad = _at(fit, temperature_c)
    cov = fit.cov
    u = np.zeros_like(grad)
    u[:, 0] = 1.0
    A = cov[:, 0, 0]
    B = np.einsum("mi,mij,mj->m", u, cov, grad)
    C = np.einsum("mi,mij,mj->m", grad, cov, grad)
    return fit.params[:, 0], K, A, B, C


def _fit_scale(fit: ArrheniusFit, limit: float) -> float:
    return math.log(limit) if fit.order == "first" else float(limit)


def time_to_bound(fit: ArrheniusFit, temperature_c, limit: float, *, direction: str,
                  c) -> np.ndarray:
    """First time at which ``mean + side * c * sd(mean)`` reaches the limit.

    ``direction = 'up'`` (the property rises to a ceiling) or ``'down'`` (it falls
    to a floor). ``c`` is the multiplier (a t quantile; 0 gives the mean curve,
    ``c > 0`` the conservative one-sided bound, ``c < 0`` the optimistic one).
    The limit is on the property's own scale (its log is taken for first order).
    Returns 0 where the curve is already at or past the limit at time 0 and NaN
    where it never reaches it.
    """
    a, K, A, B, C = mean_curve(fit, temperature_c)
    c = np.broadcast_to(np.asarray(c, float), a.shape)
    s = 1.0 if direction == "up" else -1.0
    L = _fit_scale(fit, limit)
    # h(t) = s (m(t) - L) + c sd(t) reaches 0 from below when the curve meets
    # the limit. Squaring D0 - kk t = c sd(t) gives a quadratic in t; a root is
    # a crossing when D0 - kk t has the sign of c.
    D0 = s * (L - a)                           # > 0: the mean starts short of it
    kk = s * K                                 # > 0: the mean moves towards it
    h0 = -D0 + c * np.sqrt(np.clip(A, 0, None))
    qa = kk ** 2 - c ** 2 * C
    qb = -2.0 * (D0 * kk + c ** 2 * B)
    qc = D0 ** 2 - c ** 2 * A
    with np.errstate(invalid="ignore", divide="ignore", over="ignore"):
        arg = qb ** 2 - 4 * qa * qc
        disc = np.sqrt(np.where((arg < 0) & (arg > -1e-12 * qb ** 2), 0.0, arg))
        lin = qa == 0
        # the stable pair of quadratic roots (no cancellation)
        q = -0.5 * (qb + np.copysign(disc, qb))
        r1 = np.where(lin, -qc / qb, q / qa)
        r2 = np.where(lin, np.nan, qc / q)
        roots = np.stack([r1, r2])
        gap = D0 - kk * roots
        tol = 1e-9 * (np.abs(D0) + np.abs(kk * roots))
        good = (roots > 0) & np.isfinite(roots) & np.where(c >= 0, gap >= -tol,
                                                            gap <= tol)
        best = np.where(good, roots, np.inf).min(axis=0)
    out = np.where(np.isfinite(best), best, np.nan)
    out = np.where(h0 >= 0, 0.0, out)
    # The mean curve itself (c = 0) in closed form; it needs no covariance.
    with np.errstate(invalid="ignore", divide="ignore"):
        mean = np.where(D0 <= 0, 0.0, np.where(kk > 0, D0 / kk, np.nan))
    out = np.where(c == 0, mean, out)
    return np.where(fit.ok & np.isfinite(a) & np.isfinite(K), out, np.nan)


def time_to_limit_se(fit: ArrheniusFit, temperature_c, limit: float) -> np.ndarray:
    """Delta-method standard error of the mean time (L - a) / K to the limit.

    ``L`` is the limit on the fit scale (its log for first order).
    """
    a, K, A, B, C = mean_curve(fit, temperature_c)
    with np.errstate(invalid="ignore", divide="ignore"):
        t = (_fit_scale(fit, limit) - a) / K
    # var((L - a)/K) with grad over (a, K): (-1/K, -t/K); var(a) = A,
    # cov(a, K) = B, var(K) = C (the t^1 and t^2 coefficients of var(m(t))).
    with np.errstate(invalid="ignore", divide="ignore"):
        var = (A + 2 * t * B + t ** 2 * C) / K ** 2
    return np.where(fit.ok, np.sqrt(np.clip(var, 0, None)), np.nan)


def per_temperature_rates(run, time, temperature, value, *, order: str = "zero"
                          ) -> pd.DataFrame:
    """Each run's own straight-line rate at each temperature, for the Arrhenius chart.

    Each temperature's line uses that temperature's stored points and the run's
    time-0 points. Returns one row per run and temperature: ``run``,
    ``temperature`` (degC), ``rate``, ``rate_se``, ``n_times`` (distinct times,
    time 0 included).
    """
    frame = pd.DataFrame({"run": pd.Series(run, dtype=object),
                          "time": np.asarray(time, float),
                          "temperature": np.asarray(temperature, float),
                          "value": np.asarray(value, float)}).dropna(subset=["value"])
    if order == "first":
        frame = frame.assign(value=np.log(frame["value"]))
    rows = []
    for r, g in frame.groupby("run", sort=False):
        zero = g[g["time"] == 0]
        stored = g[(g["time"] > 0) & g["temperature"].notna()]
        for T, s in stored.groupby("temperature", sort=True):
            pts = pd.concat([zero, s])
            t, y = pts["time"].to_numpy(), pts["value"].to_numpy()
            n_times = len(np.unique(t))
            rate = se = math.nan
            df = 0
            if len(t) >= 2 and np.ptp(t) > 0:
                _, rate, c2, _, df = _line(t, y)
                se = math.sqrt(c2[1, 1]) if df > 0 else math.nan
            rows.append({"run": r, "temperature": float(T), "rate": rate,
                         "rate_se": se, "rate_df": int(max(df, 0)), "n_times": n_times})
    return pd.DataFrame(rows, columns=["run", "temperature", "rate", "rate_se", "rate_df",
                                       "n_times"])
