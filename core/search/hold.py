"""Settings that hold in production: the highest chance that a batch meets every limit.

The search works on a smooth stand-in for the production chance, then lets
the Monte Carlo chance itself (``tradeoff.production_chance``) decide:

- the stand-in: for each response with a goal, on its modelling scale, a
  production batch is taken as ``mean(x) + shift(x) + t_df * sqrt(se(x)^2 +
  sigma^2 + v(x))``, ``shift`` and ``v`` being the exact mean shift and
  transmitted variance of the polynomial model (``tradeoff.spread``); its
  chance of lying within the goal's limits (moved onto the modelling scale) is
  a Student t probability, and the stand-in is the product over responses.
  It is smooth in the settings, so the same steps as the search for D find
  its peaks: a Sobol batch over the whole region (every level combination,
  the rules), the best distinct points climbed together, then each polished
  by SLSQP on ``-log`` of it;
- the decision: the polished peaks and the best-balance settings are scored
  by the Monte Carlo production chance (shared draws), and the highest wins;
  ties (equal chances, as when several settings never fail) go to the higher
  D. The best-balance settings are among the candidates, so the answer's
  production chance is never below theirs.
"""
from __future__ import annotations

import itertools
import math

import numpy as np
from scipy import special

from ..errors import SearchError
from .candidates import _candidate_batch, _starts
from .climb import _climb
from .desirability import limits
from .problem import _rule_parts
from .production import production_chance
from .spread import coded_spread, model_polynomial, polynomial_moments

__all__ = ["HoldScore", "hold_search"]

_STEP = 1e-5  # central-difference step (coded units)
_MC_MOMENTS = 256  # draws for the moments of a model that is not a polynomial
_POLISHED = 6  # at most this many climbed peaks are polished
_JUDGED = 8  # at most this many peaks are judged by the Monte Carlo chance


def _on_scale(value: float, transform: str) -> float:
    """A limit in natural units moved onto the modelling scale (monotone transforms)."""
    if not np.isfinite(value) or transform in (None, "none"):
        return float(value)
    if transform == "log":
        return float(np.log(value)) if value > 0 else -np.inf
    if transform == "sqrt":
        return float(np.sqrt(value)) if value > 0 else -np.inf
    return float(value)


def _t_between(df, a, b) -> np.ndarray:
    """P(a <= T <= b) for Student t with df, accurate in both tails."""
    a, b = np.broadcast_arrays(a, b)
    upper = a > 0  # both in the upper tail: use survival functions
    p = np.where(upper, special.stdtr(df, -a) - special.stdtr(df, -b),
                 special.stdtr(df, b) - special.stdtr(df, a))
    return np.clip(p, 0.0, 1.0)


class HoldScore:
    """The smooth stand-in for the production chance, batched over settings.

    ``HoldScore(study, models)(X)`` returns (n,) values in [0, 1] for coded
    settings X (n, k). Responses with a goal and an estimate of run-to-run
    error take part; ``unknown`` names those without one.
    """

    def __init__(self, study, models: dict):
        self.spread = coded_spread(study)
        self.parts = []
        self.unknown = []
        rng = np.random.default_rng(16)
        self._E = rng.standard_normal((_MC_MOMENTS, len(self.spread))) * self.spread
        # factor goals' limits in coded units: (column, low, high)
        self.factor_limits = []
        for j, f in enumerate(study.factors):
            if not f.is_categorical and f.goal.active:
                lo, hi = limits(f.goal)
                self.factor_limits.append((j, (lo - f.centre) / f.half_range,
                                           (hi - f.centre) / f.half_range))
        for r in study.responses:
            if not (r.goal.active and r.name in models):
                continue
            model = models[r.name]
            _, _, sigma, df = model.predictive(np.zeros((1, len(self.spread))))
            sigma, df = float(np.ravel(sigma)[0]), float(np.ravel(df)[0])
            if not (np.isfinite(sigma) and np.isfinite(df) and df > 0):
                self.unknown.append(r.name)
                continue
            lo, hi = limits(r.goal)
            tr = getattr(model, "transform", "none")
            if tr == "sqrt" and hi < 0:
                lo_s, hi_s = np.inf, np.inf  # never within limits
            elif tr == "log" and hi <= 0:
                lo_s, hi_s = np.inf, np.inf
            else:
                lo_s, hi_s = _on_scale(lo, tr), _on_scale(hi, tr)
            poly = model_polynomial(model)
            self.parts.append((model, poly, sigma, df, lo_s, hi_s))

    def moments(self, model, poly, X):
        """Mean shift and transmitted variance on the modelling scale (n,)."""
        if not np.any(self.spread > 0):
            return np.zeros(len(X)), np.zeros(len(X))
        if poly is not None:
            return polynomial_moments(poly[0], poly[1], X, self.spread, gates=poly[2])
        # Not a polynomial: a small Monte Carlo on common draws (smooth in X).
        n, k = X.shape
        mean, _, _, _ = model.predictive((X[:, None, :] + self._E[None]).reshape(-1, k))
        mean = np.asarray(mean, dtype=float).reshape(n, -1)
        centre = np.asarray(model.predictive(X)[0], dtype=float)
        return mean.mean(axis=1) - centre, mean.var(axis=1, ddof=1)

    def __call__(self, X) -> np.ndarray:
        X = np.atleast_2d(np.asarray(X, dtype=float))
        out = np.ones(len(X))
        for model, poly, sigma, df, lo, hi in self.parts:
            mean, se, _, _ = model.predictive(X)
            shift, var = self.moments(model, poly, X)
            scale = np.sqrt(np.asarray(se, dtype=float) ** 2 + sigma ** 2 + var)
            centre = np.asarray(mean, dtype=float) + shift
            out *= _t_between(df, (lo - centre) / scale, (hi - centre) / scale)
        for j, lo, hi in self.factor_limits:
            # a factor with a goal must land within the goal's limits too; with a
            # production spread that is a normal chance (smooth), without it a yes/no
            x = X[:, j]
            if self.spread[j] > 0:
                s = self.spread[j]
                out *= np.clip(special.ndtr((hi - x) / s) - special.ndtr((lo - x) / s),
                               0.0, 1.0)
            else:
                out *= ((x >= lo) & (x <= hi)).astype(float)
        return out


class _HoldProblem:
    """A search problem whose 'D' is the stand-in chance (for the shared climb)."""

    def __init__(self, problem, score: HoldScore):
        self._problem = problem
        self._score = score

    def __getattr__(self, name):
        return getattr(self._problem, name)

    def values(self, X):
        X = np.atleast_2d(X)
        self._problem.evaluations += len(X)
        return self._score(X)[:, None]

    def score(self, Y):
        return Y[:, 0], Y


def _polish(problem, score: HoldScore, z0, cat_values):
    """SLSQP on -log(stand-in) over the numeric factors, from z0."""
    from scipy.optimize import minimize

    p = len(z0)
    steps = np.vstack([np.zeros(p), _STEP * np.eye(p), -_STEP * np.eye(p)])
    cache = {}

    def at(z):
        key = z.tobytes()
        if key not in cache:
            cache.clear()
            pts = problem.full(np.clip(z, problem.lo, problem.hi)[None, :] + steps,
                               np.tile(cat_values, (len(steps), 1)))
            v = -np.log(np.maximum(score(pts), 1e-300))
            problem.evaluations += len(pts)
            cache[key] = (v[0], (v[1:p + 1] - v[p + 1:]) / (2 * _STEP))
        return cache[key]

    A_num, b_eff = _rule_parts(problem, cat_values)
    constraints = []
    if A_num is not None:
        constraints = [{"type": "ineq", "fun": lambda z: b_eff - A_num @ z,
                        "jac": lambda z: -A_num}]
    res = minimize(lambda z: at(z)[0], z0, jac=lambda z: at(z)[1], method="SLSQP",
                   bounds=list(zip(problem.lo, problem.hi)), constraints=constraints,
                   options={"maxiter": 100, "ftol": 1e-10})
    return np.clip(res.x, problem.lo, problem.hi)


def _hold_peaks(problem, score: HoldScore, X_batch, *, n_starts: int, radius: float):
    """Peaks of the stand-in chance from a batch of candidates: polished and climbed."""
    P = score(X_batch)
    problem.evaluations += len(X_batch)
    chosen = _starts(X_batch, P, n_starts, radius)
    if problem.cat:
        # every level combination gets its best point, as in the search for D
        seen = {tuple(X_batch[i, problem.cat]) for i in chosen}
        for i in np.argsort(-P, kind="stable").tolist():
            key = tuple(X_batch[i, problem.cat])
            if key not in seen:
                seen.add(key)
                chosen.append(i)
    hold = _HoldProblem(problem, score)
    Xc, Pc, _ = _climb(hold, X_batch[chosen], P[chosen], P[chosen][:, None])
    if not problem.num:
        return Xc
    # polish the best climbed starts that lie apart (same peak: polish once)
    reps = _starts(Xc, Pc, _POLISHED, 0.05)
    polished = []
    for x in Xc[reps]:
        z = _polish(problem, score, x[problem.num], x[problem.cat])
        polished.append(problem.full(z[None, :], x[problem.cat][None, :])[0])
    polished = np.array(polished)
    return np.vstack([polished[problem.feasible(polished)], Xc[reps]])


def hold_search(study, problem, models: dict, X_balance, *, seed: int, draws: int,
                n_starts: int, min_distance: float) -> np.ndarray:
    """The setting (k,) with the highest chance that a production batch meets every limit.

    ``X_balance`` (c, k): the best-balance settings, which compete too (so the
    answer is never less likely to hold than they are). Ties go to D.
    """
    score = HoldScore(study, models)
    if not score.parts:
        names = ", ".join(f"'{n}'" for n in score.unknown) or "none"
        raise SearchError("no response with a goal has an estimate of run-to-run error "
                          f"(responses: {names}), so no chance in production can be given: "
                          "add replicate runs or a smaller model")
    rng = np.random.default_rng(seed)
    combos = [np.array(v) for v in itertools.product([-1.0, 1.0], repeat=len(problem.cat))]
    X_batch = _candidate_batch(study, problem, combos, rng)
    radius = max(min_distance, 0.35 * math.sqrt(max(len(problem.num), 1)))
    peaks = _hold_peaks(problem, score, X_batch, n_starts=n_starts, radius=radius)
    # the Monte Carlo chance decides, on the best distinct peaks and the balance optima
    order = _starts(peaks, score(peaks), _JUDGED, 1e-3)
    pool = np.vstack([peaks[order], np.atleast_2d(X_balance)])
    chance = np.nan_to_num(production_chance(study, models, pool, draws=draws,
                                             seed=seed).all, nan=-1.0)
    D = problem.score(problem.values(pool))[0]
    return pool[_pick(chance, D, len(order), draws)]


def _pick(chance, D, balance: int, draws: int) -> int:
    """The most likely to hold; ties (within Monte Carlo resolution) go to the higher D.

    Settings with D = 0 fail some goal outright and are passed over whenever
    another has D > 0. A chance within two standard errors of the highest
    counts as a tie, but never one below the best balance's own chance (row
    ``balance``), so the answer is never less likely to hold than the best
    balance.
    """
    ok = D > 0 if (D > 0).any() else np.ones(len(D), dtype=bool)
    top = chance[ok].max()
    tol = 2 * math.sqrt(max(top * (1 - top), 0.0) / draws)
    floor = chance[balance] if ok[balance] else -np.inf
    tied = ok & (chance >= top - tol) & (chance >= floor)
    if not tied.any():
        tied = ok & (chance >= top)
    return int(np.flatnonzero(tied)[np.argmax(D[tied])])
