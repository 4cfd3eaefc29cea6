"""Independent reference computations for the oracle, written out from the published
formulas and never taken from tradeoff:

- ``d_reference``: the individual desirabilities of Derringer & Suich (1980),
  J. Quality Technology 12(4), 214-219: one-sided (maximize, minimize) with
  shape s, two-sided (target) with shapes s below and t above; a range goal
  is 1 inside lower..upper and 0 outside (common practice);
- ``D_reference``: the weighted geometric mean of the d's,
  D = (prod d_i^w_i)^(1 / sum w_i) (Derringer 1994, "A balancing act:
  optimizing a product's properties", Quality Progress 27(6), 51-58);
- ``shortfall_reference``: how far values lie outside their limits, each in
  widths of its lower..upper span, squared and weighted (the README's
  definition of the closest settings when no setting meets every limit);
- ``chance_reference``: the chance that one new observation lands within a
  goal's limits, when it is mean + sqrt(se^2 + s^2) * T with T a Student t on
  the model's residual degrees of freedom (the prediction-interval distribution
  of a linear model, Montgomery, Peck & Vining, Introduction to Linear
  Regression Analysis, sec. 3.5, from memory), taken through the response's
  transform;
- ``interval_reference``: the confidence and prediction intervals
  mean +- t * se and mean +- t * sqrt(se^2 + s^2) (same source), and the
  interval for the mean of m new runs, mean +- t * sqrt(s^2 / m + se^2)
  (same source, from memory);
- ``reml_reference``: the random-intercept model of runs sharing a batch,
  y = Xb + Zu + e, by REML written out densely: -2 l_R(g) = log|V| +
  log|X'V^-1 X| + (n - p) log s^2(g), V = I + g ZZ', minimised over g >= 0
  (Harville 1977; Searle, Casella & McCulloch, Variance Components, 1992,
  ch. 6), the fixed effects by generalised least squares;
- ``term_column``: a model column from its printed label, in coded units
  (products of coded factors; a two-level choice -1/+1; a level of a factor
  with three or more levels +1 there, -1 at the last level, 0 elsewhere, the
  sum-to-zero coding the README describes; a block +1 in that block, -1 in the
  first block).
"""
from __future__ import annotations

import math

import numpy as np
from scipy import stats

__all__ = ["d_reference", "D_reference", "shortfall_reference", "goal_limits",
           "chance_reference", "interval_reference", "term_column", "TermError",
           "reml_reference"]


def d_reference(y, goal: dict) -> np.ndarray:
    """Derringer & Suich (1980) desirability of values y for one goal (study-file keys)."""
    y = np.asarray(y, dtype=float)
    kind = goal["goal"]
    lo, hi = goal["lower"], goal["upper"]
    out = np.zeros_like(y)
    if kind == "maximize":
        s = goal.get("shape", 1.0)
        mid = (y > lo) & (y < hi)
        out[mid] = ((y[mid] - lo) / (hi - lo)) ** s
        out[y >= hi] = 1.0
    elif kind == "minimize":
        s = goal.get("shape", 1.0)
        mid = (y > lo) & (y < hi)
        out[mid] = ((hi - y[mid]) / (hi - lo)) ** s
        out[y <= lo] = 1.0
    elif kind == "target":
        t = goal["target"]
        s = goal.get("shape_below", goal.get("shape", 1.0))
        u = goal.get("shape_above", goal.get("shape", 1.0))
        below = (y >= lo) & (y <= t)
        above = (y > t) & (y <= hi)
        out[below] = ((y[below] - lo) / (t - lo)) ** s
        out[above] = ((hi - y[above]) / (hi - t)) ** u
    elif kind == "range":
        out[(y >= lo) & (y <= hi)] = 1.0
    else:
        raise ValueError(f"no desirability for goal {kind!r}")
    out[np.isnan(y)] = np.nan
    return out


def D_reference(d: np.ndarray, weights) -> np.ndarray:
    """Weighted geometric mean over the last axis (Derringer 1994); 0 if any d is 0."""
    d = np.atleast_2d(np.asarray(d, dtype=float))
    w = np.asarray(weights, dtype=float)
    out = np.ones(d.shape[0])
    for j in range(d.shape[1]):
        out = out * d[:, j] ** (w[j] / w.sum())
    return out


def goal_limits(goal: dict) -> tuple[float, float]:
    """The acceptable interval of a goal: above lower (maximize), below upper
    (minimize), lower..upper (target, range), as the README states."""
    if goal["goal"] == "maximize":
        return goal["lower"], math.inf
    if goal["goal"] == "minimize":
        return -math.inf, goal["upper"]
    return goal["lower"], goal["upper"]


def shortfall_reference(Y: np.ndarray, goals: list[dict]) -> np.ndarray:
    """sum_i w_i * (distance outside limits / (upper - lower))^2, (n,)."""
    Y = np.atleast_2d(Y)
    out = np.zeros(len(Y))
    for j, g in enumerate(goals):
        lo, hi = goal_limits(g)
        gap = np.maximum(np.maximum(lo - Y[:, j], Y[:, j] - hi), 0.0)
        out += g.get("weight", 1.0) * (gap / (g["upper"] - g["lower"])) ** 2
    return out


def _scale_limits(lo: float, hi: float, transform: str) -> tuple[float, float]:
    """The limits on the modelling scale (log, square root; both monotone)."""
    if transform == "log":
        return (math.log(lo) if lo > 0 else -math.inf,
                math.log(hi) if hi > 0 else -math.inf)
    if transform == "sqrt":  # back-transform max(z, 0)^2: z <= 0 means 0
        return (math.sqrt(lo) if lo > 0 else -math.inf,
                math.sqrt(hi) if hi >= 0 else -math.inf)
    return lo, hi


def chance_reference(mean, se, sigma, df, goal: dict, transform: str = "none") -> np.ndarray:
    """P(lower <= back-transform(mean + sqrt(se^2 + sigma^2) T) <= upper), T ~ t(df)."""
    mean, se = np.asarray(mean, float), np.asarray(se, float)
    lo, hi = _scale_limits(*goal_limits(goal), transform)
    scale = np.sqrt(se ** 2 + sigma ** 2)
    dist = stats.t(df) if df and math.isfinite(df) else stats.norm()
    upper = dist.cdf((hi - mean) / scale) if hi < math.inf else 1.0
    lower = dist.cdf((lo - mean) / scale) if lo > -math.inf else 0.0
    return np.maximum(upper - lower, 0.0)


def storage_reach_reference(storage_csv: bytes, at_temperature=None) -> float:
    """The longest shelf life a storage study supports, in its weeks: 1.5 times the
    last storage week at the temperature asked, and at most 12 months beyond it
    (our rule, stricter than ICH Q1E (2003) 2.4.1.2: up to twice, at most 12 months
    beyond). A month is a twelfth of 365.2425 days (common practice)."""
    import io

    import pandas as pd

    table = pd.read_csv(io.BytesIO(storage_csv))
    table = table[table["value"].notna()]
    if at_temperature is not None and "temp_c" in table:
        at = pd.to_numeric(table["temp_c"], errors="coerce")
        if (at == at_temperature).any():
            table = table[at == at_temperature]
    last = float(table["week"].max())
    return min(1.5 * last, last + 12 * (365.2425 / 12) / 7)


def _back(z, transform):
    z = np.asarray(z, dtype=float)
    if transform == "log":
        return np.exp(z)
    if transform == "sqrt":
        return np.maximum(z, 0.0) ** 2
    return z


def interval_reference(mean, se, sigma, df, level, transform="none", m: int | None = None):
    """(ci_low, ci_high, pi_low, pi_high) in natural units; with m, the interval for
    the mean of m new runs in place of the prediction interval."""
    q = (stats.t.ppf(0.5 + level / 2, df) if df and math.isfinite(df)
         else stats.norm.ppf(0.5 + level / 2))
    mean, se = np.asarray(mean, float), np.asarray(se, float)
    spread = np.sqrt(se ** 2 + sigma ** 2) if m is None else np.sqrt(sigma ** 2 / m + se ** 2)
    return (_back(mean - q * se, transform), _back(mean + q * se, transform),
            _back(mean - q * spread, transform), _back(mean + q * spread, transform))


def reml_reference(X: np.ndarray, y: np.ndarray, groups) -> tuple[np.ndarray, float, float]:
    """(GLS coefficients, s^2, s_wp^2) of the REML random-intercept fit, densely."""
    from scipy import optimize

    labels = np.asarray([str(g) for g in groups], dtype=object)
    Z = (labels[:, None] == np.unique(labels)[None, :]).astype(float)
    n, p = X.shape

    def parts(g):
        V = np.eye(n) + g * Z @ Z.T
        Vi = np.linalg.inv(V)
        A = X.T @ Vi @ X
        b = np.linalg.solve(A, X.T @ Vi @ y)
        r = y - X @ b
        s2 = float(r @ Vi @ r) / (n - p)
        crit = (np.linalg.slogdet(V)[1] + np.linalg.slogdet(A)[1]
                + (n - p) * math.log(s2))
        return crit, b, s2

    grid = np.linspace(math.log(1e-8), math.log(1e8), 65)
    values = [parts(math.exp(t))[0] for t in grid]
    i = int(np.argmin(values))
    res = optimize.minimize_scalar(lambda t: parts(math.exp(t))[0], method="bounded",
                                   bounds=(grid[max(i - 1, 0)], grid[min(i + 1, 64)]),
                                   options={"xatol": 1e-12})
    g = math.exp(res.x)
    if parts(0.0)[0] <= res.fun:
        g = 0.0
    _, b, s2 = parts(g)
    return b, s2, g * s2


class TermError(ValueError):
    """A term label the reference cannot build (it names nothing of the study)."""


def term_column(label: str, table, factors: dict, blocks=None) -> np.ndarray:
    """The model column of a term label at the runs of ``table`` (coded units).

    ``factors``: name -> generated Factor (oracle_data.Factor); ``blocks``: each
    run's block label, when the study has blocks.
    """
    n = len(table)
    col = np.ones(n)
    if label == "intercept":
        return col
    for part in label.split(":"):
        power = 1
        if part.endswith("^2"):
            part, power = part[:-2], 2
        if part.startswith("block[") and part.endswith("]"):
            if blocks is None:
                raise TermError(f"no blocks for {part}")
            labels = np.asarray([str(b) for b in blocks], dtype=object)
            levels = sorted(set(labels), key=lambda s: (0, float(s), "") if _number(s)
                            else (1, 0.0, s))
            level = part[len("block["):-1]
            col = col * np.where(labels == level, 1.0, np.where(labels == levels[0], -1.0, 0.0))
            continue
        name, level = part, None
        if part.endswith("]") and "[" in part:
            name, level = part[:-1].split("[", 1)
        f = factors.get(name)
        if f is None:
            raise TermError(f"term '{label}' names no factor '{name}'")
        values = table[name].to_numpy()
        if f.kind == "categorical":
            if level is None:  # a two-level choice: first level -1, second +1
                x = np.where(values == f.levels[0], -1.0, 1.0)
            else:
                x = np.where(values == level, 1.0,
                             np.where(values == f.levels[-1], -1.0, 0.0))
        else:
            x = f.coded(values.astype(float))
        col = col * x ** power
    return col


def _number(s: str) -> bool:
    try:
        float(s)
    except ValueError:
        return False
    return True
