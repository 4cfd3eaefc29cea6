"""What to make next: a batch of runs chosen by expected improvement of D.

After a study the next question is which few runs would make the next
recommendation better and surer. ``next_batch`` answers it by the expected
improvement (EI) of the overall desirability D over the best D predicted at
the runs made so far (Jones, Schonlau & Welch (1998), "Efficient global
optimization of expensive black-box functions", J. Global Optimization 13,
455-492, eq. 15):

    EI(x) = E[max(D(Y(x)) - D_best, 0)]

where Y(x) holds each goal response's mean at x, uncertain as the models say:
normal on the modelling scale with the SD of the mean (a polynomial model's
standard error of the fitted mean, a smooth model's posterior SD). D is not
linear in the responses, so EI is a seeded Monte Carlo average over common
random numbers (the same draws at every candidate, so candidates are compared
fairly and the same seed gives the same batch). For one response whose
desirability is linear where the predictive lies, it is the closed form
``(mu - best) Phi(u) + sd phi(u)``, ``u = (mu - best) / sd`` (``normal_ei``).

The batch is built one run at a time, each given the ones before it: an
earlier pick is added as if it had been measured at its predicted mean (the
"kriging believer" of Ginsbourger, Le Riche & Carraro (2010), "Kriging is
well-suited to parallelize optimization", in Computational Intelligence in
Expensive Optimization Problems, 131-162). That leaves the means unchanged,
shrinks the uncertainty near the pick (by the models' own covariance of the
mean, with one run's noise) and raises the best so far, so the next pick goes
elsewhere: the batch spreads out.

Candidates lie in the searched region (each numeric factor's search range,
every categorical level combination) and obey the study's rules; none lies
closer than ``min_distance`` coded units to a run already made or picked.

When no candidate's EI reaches ``NEGLIGIBLE_EI`` (a thousandth of the D scale),
a run chosen by EI would be chosen by noise: the pick goes instead where the
models are least sure (the largest variance of the mean relative to each goal's
width, among settings with D above 0), and the batch says so, naming
confirmation runs at the recommendation as the other sensible choice. A batch
whose runs share nearly one setting of a factor says so too (``NextBatch.notes``).
"""
from __future__ import annotations

import itertools
import math
from dataclasses import dataclass, field

import numpy as np
import pandas as pd

from ..cautions import FOOD_CAUTION, FOOD_CAUTIONS
from ..errors import SearchError
from ..study.coding import decode_values, level_codes
from ..study.constraints import rule_arrays
from .desirability import desirability
from .mixture import simplex_region
from .next_sheet import suggestion_sheet
from .next_words import NEGLIGIBLE_EI, _batch_notes, _summary, made_run_at

__all__ = ["NextBatch", "SuggestedRun", "next_batch", "normal_ei", "expected_improvement",
           "DEFAULT_MIN_DISTANCE", "NEGLIGIBLE_EI", "made_run_at"]

DEFAULT_MIN_DISTANCE = 0.3  # coded units: closer than this counts as repeating a run
_DRAWS = 512  # Monte Carlo draws of the models' means per candidate
_CANDIDATES = 2048  # Sobol candidates per level combination (a power of two)
_CHUNK = 256  # candidates scored per block (memory: chunk x draws x responses)
_REFINE = (0.1, 0.03)  # coded radii of the local refinement around each pick


def normal_ei(mu, sd, best) -> np.ndarray:
    """Expected improvement over ``best`` of a normal N(mu, sd^2), in closed form.

    ``(mu - best) Phi(u) + sd phi(u)`` with ``u = (mu - best) / sd`` (Jones,
    Schonlau & Welch 1998, eq. 15); ``max(mu - best, 0)`` where sd is 0.
    """
    from scipy.special import ndtr

    mu, sd = np.broadcast_arrays(np.asarray(mu, float), np.asarray(sd, float))
    gain = mu - best
    with np.errstate(divide="ignore", invalid="ignore"):
        u = np.where(sd > 0, gain / sd, 0.0)
    pdf = np.exp(-0.5 * u * u) / math.sqrt(2 * math.pi)
    return np.where(sd > 0, gain * ndtr(u) + sd * pdf, np.maximum(gain, 0.0))


@dataclass(frozen=True)
class SuggestedRun:
    """One suggested run.

    Attributes
    ----------
    settings : dict
        Factor name -> natural value (level name for a categorical factor).
    coded : dict
        Factor name -> coded value.
    expected_improvement : float
        EI of D when it was picked (given the earlier picks).
    predicted : dict
        Response name -> predicted mean (natural units), every modelled response.
    desirability : float
        D at the predicted means.
    interval : dict
        Response name -> (low, high): confidence interval of the mean.
    nearest : float
        Coded distance to the nearest run made or picked before it.
    why : str
        Why this run, in a sentence.
    purpose : str
        ``improve`` (chosen for its expected improvement) or ``learn`` (no
        setting is expected to improve D: chosen where the models are least sure).
    """

    settings: dict
    coded: dict
    expected_improvement: float
    predicted: dict
    desirability: float
    interval: dict
    nearest: float
    why: str
    purpose: str = "improve"


@dataclass(frozen=True)
class NextBatch:
    """What ``next_batch`` suggests.

    Attributes
    ----------
    study : str
    runs : tuple of SuggestedRun
        In the order they were picked.
    best_so_far : dict
        ``{"desirability", "run", "settings"}``: the best D predicted at a run made.
    seed, draws : int
    min_distance : float
    warnings : tuple of str
    sheet : pandas.DataFrame
        The run sheet: the data file's columns, responses blank, ``point`` =
        ``suggested``.
    summary : str
        What the batch is for, in a sentence or two: improving D, or (where no
        setting is expected to improve it) learning where the models are least
        sure, with confirmation runs as the other choice.
    notes : tuple of str
        What a reader may wonder about the batch (runs sharing nearly one
        setting of a factor, and why).
    """

    study: str
    runs: tuple
    best_so_far: dict
    seed: int
    draws: int
    min_distance: float
    warnings: tuple = ()
    sheet: pd.DataFrame = field(default=None, compare=False, repr=False)
    summary: str = ""
    notes: tuple = ()

    def to_dict(self, digits: int = 6) -> dict:
        """The JSON of ``tradeoff next --json``."""
        r = _rounder(digits)
        return {
            "runs": [{"settings": {k: (v if isinstance(v, str) else r(v))
                                   for k, v in s.settings.items()},
                      "coded": {k: r(v) for k, v in s.coded.items()},
                      "expected_improvement": r(s.expected_improvement),
                      "predicted": {k: r(v) for k, v in s.predicted.items()},
                      "desirability": r(s.desirability),
                      "ci": {k: [r(a), r(b)] for k, (a, b) in s.interval.items()},
                      "nearest": r(s.nearest),
                      "why": s.why, "purpose": s.purpose} for s in self.runs],
            "summary": self.summary, "notes": list(self.notes),
            "best_so_far": {"desirability": r(self.best_so_far["desirability"]),
                            "run": self.best_so_far["run"],
                            "settings": {k: (v if isinstance(v, str) else r(v))
                                         for k, v in self.best_so_far["settings"].items()}},
            "study": self.study, "seed": self.seed, "draws": self.draws,
            "min_distance": self.min_distance,
            "warnings": list(self.warnings), "cautions": list(FOOD_CAUTIONS),
        }

    def text(self) -> str:
        """A readable list for the terminal."""
        b = self.best_so_far
        lines = [f"Best so far: run {b['run']}, predicted D = {b['desirability']:.3f}"
                 if b["desirability"] > 0 else "Best so far: no run made has D above 0 "
                 "(each misses the limit of some goal)",
                 self.summary,
                 f"Next {len(self.runs)} run(s), each chosen given the ones before it "
                 f"(none closer than {self.min_distance:g} coded units to another):"]
        for i, s in enumerate(self.runs, start=1):
            gain = (f"expected improvement of D {s.expected_improvement:.4f}"
                    if s.purpose == "improve" else "to learn (no gain in D expected)")
            lines.append(f"\nN{i}: {gain}, predicted D {s.desirability:.3f}")
            for name, value in s.settings.items():
                if isinstance(value, str):  # a level is its name: no coded number
                    lines.append(f"  {name:<18} {value:>12}")
                    continue
                lines.append(f"  {name:<18} {value:>12.4g}   (coded {s.coded[name]:+.3f})")
            for name, value in s.predicted.items():
                lo, hi = s.interval[name]
                lines.append(f"  {name:<18} predicted {value:.4g} (mean {lo:.4g} .. "
                             f"{hi:.4g})")
            lines.append(f"  why: {s.why}")
        for w in (*self.notes, *self.warnings):
            lines.append(f"note: {w}")
        lines.append("cautions: " + FOOD_CAUTION)
        return "\n".join(lines)


def _rounder(digits):
    def r(x):
        if x is None:
            return None
        x = float(x)
        return float(f"{x:.{digits}g}") if math.isfinite(x) else None
    return r


class _Goals:
    """Each goal response's mean and SD, and D over draws, for batches of points."""

    def __init__(self, study, models):
        from .problem import goal_columns

        cols = goal_columns(study, models)
        if not cols:
            raise SearchError("no response or factor has a goal: 'next' picks runs that "
                              "raise the overall desirability, so give at least one a "
                              "goal (maximize, minimize, target or range) in the study file")
        self.study = study
        self.responses = [n for kind, n in cols if kind == "response"]
        self.models = [models[n] for n in self.responses]
        self.goals = [study.response(n).goal for n in self.responses]
        self.fgoals = [(study.factor_names.index(n), study.factor(n))
                       for kind, n in cols if kind == "factor"]
        w = [g.weight for g in self.goals] + [f.goal.weight for _, f in self.fgoals]
        self.w = np.asarray(w, float) / float(np.sum(w))

    def moments(self, X):
        """(n, m) means and SDs of each goal response's mean, modelling scale."""
        n = len(X)
        mu, sd = np.empty((n, len(self.models))), np.empty((n, len(self.models)))
        for i, m in enumerate(self.models):
            mean, se, _, _ = m.predictive(X)
            mu[:, i] = mean
            sd[:, i] = np.nan_to_num(np.asarray(se, float), nan=0.0)
        return mu, sd

    def log_factor_d(self, X):
        """(n,) weighted log desirability of the factor goals (-inf where one is 0)."""
        out = np.zeros(len(X))
        for i, (j, f) in enumerate(self.fgoals, start=len(self.models)):
            value = f.centre + f.half_range * X[:, j]
            with np.errstate(divide="ignore"):
                out += self.w[i] * np.log(desirability(value, f.goal))
        return out

    def D(self, Y, log_fd):
        """Overall D of natural response values Y (..., m) given factor log-terms."""
        total = np.broadcast_to(log_fd, Y.shape[:-1]).copy()
        for i, g in enumerate(self.goals):
            with np.errstate(divide="ignore"):
                total = total + self.w[i] * np.log(desirability(Y[..., i], g))
        return np.where(np.isfinite(total), np.exp(total), 0.0)

    def natural(self, Z):
        """Modelling scale (..., m) -> natural units, response by response."""
        out = np.empty_like(Z)
        for i, m in enumerate(self.models):
            out[..., i] = m.inverse_transform(Z[..., i])
        return out


def expected_improvement(goals: _Goals, X, mu, sd, best, E) -> np.ndarray:
    """Monte Carlo EI of D over ``best`` at points X (n,) with common draws E (draws, m)."""
    log_fd = goals.log_factor_d(X)
    out = np.empty(len(X))
    for a in range(0, len(X), _CHUNK):
        b = slice(a, a + _CHUNK)
        Z = mu[b, None, :] + sd[b, None, :] * E[None, :, :]
        D = goals.D(goals.natural(Z), log_fd[b, None])
        out[b] = np.maximum(D - best, 0.0).mean(axis=1)
    return out


def _region(study, seed: int):
    """Seeded Sobol candidates over the searched region, every level combination,
    inside the rules; returns (X candidates, box lows, box highs, rule arrays)."""
    from scipy.stats import qmc

    factors = study.factors
    num = [j for j, f in enumerate(factors) if not f.is_categorical]
    cat = [j for j, f in enumerate(factors) if f.is_categorical]
    lo = np.full(len(factors), -1.0)
    hi = np.full(len(factors), 1.0)
    for j in num:
        f = factors[j]
        a, b = f.search_range
        lo[j], hi[j] = (a - f.centre) / f.half_range, (b - f.centre) / f.half_range
    blocks = []
    base = (qmc.Sobol(d=len(num), scramble=True, seed=seed).random(_CANDIDATES)
            if num else np.zeros((1, 0)))
    for combo in itertools.product(*[level_codes(factors[j]) for j in cat]):
        block = np.empty((len(base), len(factors)))
        block[:, num] = lo[num] + base * (hi[num] - lo[num])
        block[:, cat] = combo
        blocks.append(block)
    X = np.vstack(blocks)
    A, bvec = rule_arrays(study, coded=True)
    region = simplex_region(study)
    if region is not None:
        # a blend: one component makes up the rest, and the components must add up
        # (coded shares sum to 1), which also keeps the refinement's moves on the simplex
        X = region.complete(X)
        A_dep, b_dep = region.rules(len(factors))
        total = np.zeros((2, len(factors)))
        total[0, region.comp], total[1, region.comp] = 1.0, -1.0
        A = np.vstack([A, A_dep, total])
        bvec = np.concatenate([bvec, b_dep, [1.0, -1.0]])
    return X[_allowed(X, A, bvec)], lo, hi, (A, bvec)


def _allowed(X, A, b):
    if len(b) == 0:
        return np.ones(len(X), dtype=bool)
    return np.all(X @ A.T - b <= 1e-9 * np.maximum(1.0, np.abs(b)), axis=1)


def _distance_to(X, P):
    """(n,) Euclidean distance from each row of X to the nearest row of P (coded)."""
    if len(P) == 0:
        return np.full(len(X), np.inf)
    d2 = (np.einsum("ij,ij->i", X, X)[:, None] - 2 * X @ P.T
          + np.einsum("ij,ij->i", P, P)[None, :])
    return np.sqrt(np.maximum(d2, 0.0)).min(axis=1)


def _fantasy_sd(goals, sd0, X, picks):
    """SDs of the means at X after the picks were 'measured' at their means.

    var(x | picks) = var(x) - c(x, P) (C_PP + s^2 I)^-1 c(P, x), the normal
    update of the models' own covariance of the mean (s = one run's noise).
    """
    if not picks:
        return sd0
    P = np.array(picks)
    sd = sd0.copy()
    for i, m in enumerate(goals.models):
        sigma = float(m.predictive(P[:1])[2])
        if not np.isfinite(sigma):
            continue
        C_xp = m.mean_covariance(X, P)
        C_pp = m.mean_covariance(P, P) + sigma ** 2 * np.eye(len(P))
        reduction = np.einsum("ij,ij->i", C_xp, np.linalg.solve(C_pp, C_xp.T).T)
        sd[:, i] = np.sqrt(np.maximum(sd0[:, i] ** 2 - reduction, 0.0))
    return sd


def next_batch(study, *, runs: int = 4, seed: int | None = None, fit=None,
               min_distance: float = DEFAULT_MIN_DISTANCE,
               draws: int = _DRAWS) -> NextBatch:
    """Suggest ``runs`` new runs that most raise the chance of a better D.

    Parameters
    ----------
    study : Study
        A loaded study with runs and at least one goal.
    runs : int
        How many runs to suggest (1 or more).
    seed : int, optional
        Seed of the candidates and the draws (default: the study's seed).
    fit : StudyFit, optional
        Already fitted models (default: ``fit_study(study)``).
    min_distance : float
        No suggestion lies closer than this (coded units) to a run made or
        another suggestion.
    draws : int
        Monte Carlo draws of the models' means per candidate.
    """
    if isinstance(runs, bool) or not isinstance(runs, (int, np.integer)) or runs < 1:
        raise SearchError(f"the number of runs to suggest must be a whole number, 1 or "
                          f"more, found {runs!r}")
    if not min_distance > 0:
        raise SearchError(f"the minimum distance must be above 0 coded units, found "
                          f"{min_distance!r}")
    seed = study.seed if seed is None else int(seed)
    if fit is None:
        from ..model.study_fit import fit_study

        fit = fit_study(study)
    models = dict(fit.models)
    goals = _Goals(study, models)
    warnings = [f"response '{n}' has a goal but no model, so it takes no part: {why}"
                for n, why in getattr(fit, "skipped", {}).items()
                if study.response(n).goal.active]
    for name, m in zip(goals.responses, goals.models):
        if not np.isfinite(float(m.predictive(np.zeros((1, len(study.factors))))[2])):
            warnings.append(f"the model of '{name}' has no estimate of run-to-run error: "
                            "its uncertainty is left out of the choice")

    made = study.coded().to_numpy()
    from .problem import overall_desirability

    D_made = overall_desirability(study, fit, made)[0]
    i_best = int(np.argmax(D_made))
    best = float(D_made[i_best])
    best_so_far = {"desirability": best, "run": str(study.runs["run"].iloc[i_best]),
                   "settings": _settings(study, made[i_best])}

    X, lo, hi, (A, b) = _region(study, seed)
    X = X[_distance_to(X, made) >= min_distance]
    if not len(X):
        raise SearchError("every setting in the searched region lies within "
                          f"{min_distance:g} coded units of a run already made: widen a "
                          "search range or lower the minimum distance")
    rng = np.random.default_rng(seed)
    E = rng.standard_normal((draws, len(goals.models)))
    mu, sd0 = goals.moments(X)
    num = [j for j, f in enumerate(study.factors) if not f.is_categorical]

    picks, chosen, levels = [], [], best
    for _ in range(runs):
        P = np.vstack([made] + ([np.array(picks)] if picks else []))
        ok = _distance_to(X, np.array(picks)) >= min_distance if picks else \
            np.ones(len(X), dtype=bool)
        if not ok.any():
            warnings.append(f"only {len(picks)} run(s) fit in the region at least "
                            f"{min_distance:g} coded units apart from the runs made")
            break
        sd = _fantasy_sd(goals, sd0, X, picks)
        ei = expected_improvement(goals, X, mu, sd, levels, E)
        ei[~ok] = -1.0
        if ei.max() >= NEGLIGIBLE_EI:
            i = int(np.argmax(ei))
            x, value = _refine(goals, X[i], ei[i], num, lo, hi, A, b, P, picks,
                               min_distance, levels, E, rng)
            explore = False
        else:
            # No candidate is expected to beat the best by more than noise: go
            # where the models are least sure instead (the variance of the mean
            # relative to each goal's width), among settings worth making (D > 0)
            spread = ((sd / _widths(goals)) ** 2).sum(axis=1)
            worth = goals.D(goals.natural(mu), goals.log_factor_d(X)) > 0
            spread[~ok] = -1.0
            if (worth & ok).any():
                spread[~worth] = -1.0
            i = int(np.argmax(spread))
            x, value, explore = X[i], float(max(ei[i], 0.0)), True
        x = _rounded(study, x, A, b, lo, hi, P, min_distance)
        mu_x, sd_x = goals.moments(x[None, :])
        nat = goals.natural(mu_x)
        D_x = float(goals.D(nat, goals.log_factor_d(x[None, :]))[0])
        nearest = float(_distance_to(x[None, :], P)[0])
        chosen.append((x, value, D_x, nearest, explore, levels))
        picks.append(x)
        levels = max(levels, D_x)  # the believer: the pick 'measured' at its mean

    out = []
    for x, value, D_x, nearest, explore, level in chosen:
        out.append(_suggestion(study, models, goals, x, value, D_x, nearest, best,
                               level, explore))
    return NextBatch(study=study.name, runs=tuple(out), best_so_far=best_so_far,
                     seed=seed, draws=draws, min_distance=float(min_distance),
                     warnings=tuple(warnings), sheet=suggestion_sheet(study, out),
                     summary=_summary(out, best_so_far),
                     notes=tuple(_batch_notes(study, out, min_distance)))


def _widths(goals):
    """A natural scale per goal response for comparing SDs (its goal's width)."""
    return np.array([g.upper - g.lower for g in goals.goals], float)


def _refine(goals, x0, ei0, num, lo, hi, A, b, P, picks, min_distance, best, E, rng):
    """A few seeded clouds of points around x0 (numeric factors only), keeping the best EI."""
    x, value = x0, ei0
    if not num:
        return x, value
    for radius in _REFINE:
        cloud = np.repeat(x[None, :], 64, axis=0)
        cloud[:, num] += radius * rng.standard_normal((64, len(num)))
        cloud[:, num] = np.clip(cloud[:, num], lo[num], hi[num])
        keep = _allowed(cloud, A, b) & (_distance_to(cloud, P) >= min_distance)
        cloud = cloud[keep]
        if not len(cloud):
            continue
        mu, sd = goals.moments(cloud)
        sd = _fantasy_sd(goals, sd, cloud, picks)
        ei = expected_improvement(goals, cloud, mu, sd, best, E)
        j = int(np.argmax(ei))
        if ei[j] > value:
            x, value = cloud[j], float(ei[j])
    return x, value


def _rounded(study, x, A, b, lo, hi, P, min_distance):
    """x with numeric settings on each factor's step (``Factor.lab_step``, as the
    recommendation is rounded: tradeoff.search.rounding), a blend's components to a
    thousandth of their range (so they keep their total).

    Among the steps just below and above each setting inside the searched range,
    the nearest recipe that keeps the rules and stays ``min_distance`` from the
    runs made and picked (``P``); else, as before steps, every numeric setting to a
    thousandth of its range (printed whole, and within a thousandth of the distance);
    x as found when that breaks a rule.
    """
    from .rounding import _combinations, _neighbours

    def thousandth(f, value):
        return round(value, max(0, -math.floor(math.log10((f.high - f.low) / 1000))))

    choices, cols, fine = [], [], x.copy()
    for j, f in enumerate(study.factors):
        if f.is_categorical:
            continue
        value = f.centre + f.half_range * x[j]
        fine[j] = (thousandth(f, value) - f.centre) / f.half_range
        if getattr(f, "is_component", False) or not f.lab_step:
            near = [thousandth(f, value)]
        else:
            near = _neighbours(value, f.lab_step, f.centre + f.half_range * lo[j],
                               f.centre + f.half_range * hi[j])
        choices.append([(v - f.centre) / f.half_range for v in near])
        cols.append(j)
    if not cols:
        return x
    fine = fine if _allowed(fine[None, :], A, b)[0] else x
    combos = _combinations(choices)
    C = np.repeat(x[None, :], len(combos), axis=0)
    C[:, cols] = combos
    C = C[np.argsort(((C - x) ** 2).sum(axis=1), kind="stable")]
    C = C[_allowed(C, A, b)]
    apart = _distance_to(C, P) >= min_distance - 1e-9 if len(C) else np.zeros(0, bool)
    return C[int(np.argmax(apart))] if apart.any() else fine


def _settings(study, x) -> dict:
    out = {}
    for j, f in enumerate(study.factors):
        if f.is_categorical:
            out[f.name] = str(decode_values(f, x[j:j + 1])[0])
        else:
            out[f.name] = float(f.centre + f.half_range * x[j])
    return out


def _suggestion(study, models, goals, x, value, D_x, nearest, best, level, explore):
    """One SuggestedRun; ``level`` is the best D when it was picked (the best
    run made, raised by earlier picks taken at their predicted means)."""
    predicted, interval = {}, {}
    for r in study.responses:
        if r.name not in models:
            continue
        row = models[r.name].intervals(x[None, :], level=study.confidence).iloc[0]
        predicted[r.name] = float(row["predicted"])
        interval[r.name] = (float(row["ci_low"]), float(row["ci_high"]))
    parts = [f"predicted D {D_x:.3f} against {best:.3f} at the best run made"]
    if explore:
        parts.append("no setting is expected to raise D by more than noise, so this run "
                     "goes where the models are least sure")
    elif goals.responses and max(D_x - level, 0.0) < 0.5 * value:
        # most of the expected gain comes from what the models do not know yet
        # (with goals on factors only, nothing is uncertain to name)
        _, sd = goals.moments(x[None, :])
        name = goals.responses[int(np.argmax(sd[0] / _widths(goals)))]
        lo, hi = interval[name]
        parts.append(f"'{name}' is uncertain here (mean {lo:.4g} .. {hi:.4g}), so a run "
                     "here may reveal a better balance")
    parts.append(f"{nearest:.2f} coded units from the nearest run made or suggested")
    why = "; ".join(parts)
    coded = {f.name: float(x[j]) for j, f in enumerate(study.factors)}
    return SuggestedRun(settings=_settings(study, x), coded=coded,
                        expected_improvement=float(value), predicted=predicted,
                        desirability=D_x, interval=interval, nearest=nearest, why=why,
                        purpose="learn" if explore else "improve")
