"""How steady the recommendation is when the goals' weights and limits change.

``sensitivity(study)`` changes one thing at a time: each goal's weight is
halved and doubled, and each of its limits (``lower``, ``upper``) moves by
10 % of the goal's span (``upper - lower``) down and up. After each change the
best settings are found again, warm-started: the search's own optima (the
recommendation and its alternatives, so a change that makes another peak the
best is seen) are polished by the search's SLSQP step under the changed goals,
all starts of one change as one block-diagonal problem. Only when no start
keeps D > 0 under a change does the whole search run again for it.

Each change reports how far the best settings move (coded units, and each
factor in its own units), how much each response's prediction moves, and D
there. A goal *holds the recommendation in place* (it is binding) when one of
its own changes moves the settings by more than ``STILL`` coded units or to
another level of a categorical factor; a goal whose changes leave the
settings where they are (its d is 1 with room to spare, or its pull is
balanced by nothing) is not.
"""
from __future__ import annotations

import copy
import dataclasses
from dataclasses import dataclass, field

import numpy as np
import pandas as pd

from ..errors import SearchError
from .polish import _polish_d
from .problem import _Problem, _models_of, _no_goal_error

__all__ = ["sensitivity", "Sensitivity", "STILL", "MOVES", "WEIGHT_FACTORS", "LIMIT_SHIFT"]

STILL = 0.05  # coded units: a move smaller than this is no move at all
MOVES = 0.25  # coded units: a move this large is another recommendation (the search's min_distance)
WEIGHT_FACTORS = (0.5, 2.0)
LIMIT_SHIFT = 0.10  # share of the goal's span (upper - lower)
_JOINT = 30  # at most this many variables in one joint polish (as the search)


@dataclass(frozen=True)
class Sensitivity:
    """The recommendation under one-at-a-time changes of weights and limits.

    Attributes
    ----------
    study : str
    baseline : dict
        The best settings under the goals as written: ``settings``,
        ``coded``, ``predicted`` (every modelled response), ``D``.
    changes : pandas.DataFrame
        One row per change: ``goal``, ``what`` (``weight``, ``lower`` or
        ``upper``), ``old``, ``new``, ``words`` (the change in words),
        ``move`` (Euclidean distance of the numeric settings, coded units),
        ``levels_changed`` (categorical factors now at another level, joined
        by ``, ``), ``D`` (best D under the change; 0 when no setting meets
        every limit then), ``feasible``, then ``set:<factor>`` (the new
        setting), ``shift:<factor>`` (its move in the factor's units; numeric
        factors) and ``pred:<response>`` (the prediction's move).
    binding : tuple of str
        Goals one of whose changes moves the settings (see module text).
    sentence : str
        The steadiness in plain words.
    units : dict
        Factor and response name -> unit.
    seed : int
    """

    study: str
    baseline: dict
    changes: pd.DataFrame = field(compare=False, repr=False)
    binding: tuple
    sentence: str
    units: dict
    seed: int = 0

    def to_dict(self, digits: int = 6) -> dict:
        """The command line's ``--json`` block."""
        from .result import _rounder

        r = _rounder(digits)
        rows = []
        for row in self.changes.to_dict("records"):
            item = {k: row[k] for k in ("goal", "what", "words", "levels_changed")}
            item.update({k: r(row[k]) for k in ("old", "new", "move", "D")})
            item["feasible"] = bool(row["feasible"])
            item["settings"] = {c[4:]: (v if isinstance(v, str) else r(v))
                                for c, v in row.items() if c.startswith("set:")}
            item["shift"] = {c[6:]: r(v) for c, v in row.items() if c.startswith("shift:")}
            item["prediction_shift"] = {c[5:]: r(v) for c, v in row.items()
                                        if c.startswith("pred:")}
            rows.append(item)
        base = {"settings": {k: (v if isinstance(v, str) else r(v))
                             for k, v in self.baseline["settings"].items()},
                "coded": {k: r(v) for k, v in self.baseline["coded"].items()},
                "predicted": {k: r(v) for k, v in self.baseline["predicted"].items()},
                "D": r(self.baseline["D"])}
        return {"baseline": base, "changes": rows, "binding": list(self.binding),
                "sentence": self.sentence, "still": STILL, "moves": MOVES,
                "seed": self.seed}

    def text(self) -> str:
        """The steadiness for the terminal."""
        from .sensitivity_text import sensitivity_text

        return sensitivity_text(self, STILL=STILL, MOVES=MOVES, LIMIT_SHIFT=LIMIT_SHIFT)


def sensitivity(study, *, result=None, fit=None, seed: int | None = None) -> Sensitivity:
    """How far the best settings move when one weight or one limit changes.

    Parameters
    ----------
    study : Study
    result : OptimizationResult, optional
        The search's result whose solutions warm-start every change (the
        search runs here, three solutions, when omitted).
    fit : StudyFit, optional
        Fitted models (fitted here when omitted).
    seed : int, optional
        Seed of the search when it runs here (default: the study's seed).

    Returns
    -------
    Sensitivity
    """
    from .search import _one_blas_thread, optimize

    seed = study.seed if seed is None else seed
    if fit is None:
        from ..model.study_fit import fit_study

        fit = fit_study(study)
    with _one_blas_thread():
        if result is None:
            result = optimize(study, top=3, seed=seed, fit=fit, draws=200)
        return _sensitivity(study, fit, result, seed)


def _sensitivity(study, fit, result, seed) -> Sensitivity:
    models = _models_of(fit)
    problem = _Problem(study, models)
    if not problem.columns:
        raise _no_goal_error(study, fit)
    starts = np.array([[s.coded[f.name] for f in study.factors] for s in result.solutions],
                      dtype=float)
    x0, d0 = _best(problem, starts)
    if not d0 > 0:
        raise SearchError("no setting meets every goal's limits, so there is no "
                          "recommendation whose steadiness could be judged: relax the "
                          "limits first (optimize names the goals that cannot be met)")
    starts = np.vstack([x0, starts])
    rows = []
    for i, g in enumerate(problem.goals):
        for what, new_goal, old, new in _changes(g):
            varied = _varied(problem, i, new_goal)
            x, d = _best(varied, starts)
            if not d > 0:  # the warm starts lost every limit: search the whole region
                x, d = _searched(study, varied, seed)
            rows.append(_row(study, problem, models, x0, x, d, problem.names()[i], what,
                             old, new))
    changes = pd.DataFrame(rows)
    binding = tuple(n for n in problem.names()
                    if _moved(changes[changes["goal"] == n]).any())
    units = {f.name: f.unit or "" for f in study.factors}
    units.update({r.name: r.unit or "" for r in study.responses})
    baseline = _describe(study, problem, models, x0) | {"D": float(d0)}
    return Sensitivity(study=study.name, baseline=baseline, changes=changes,
                       binding=binding, sentence=_sentence(study, changes, baseline, units),
                       units=units, seed=seed)


def _changes(g):
    """(what, changed goal, old value, new value) for each one-at-a-time change."""
    out = [("weight", dataclasses.replace(g, weight=g.weight * f), g.weight, g.weight * f)
           for f in WEIGHT_FACTORS]
    span = g.upper - g.lower
    for what in ("lower", "upper"):
        old = getattr(g, what)
        for sign in (-1.0, 1.0):
            new = old + sign * LIMIT_SHIFT * span
            lo, hi = (new, g.upper) if what == "lower" else (g.lower, new)
            if g.kind == "target" and not lo < g.target < hi:
                continue  # the target must stay between its limits
            out.append((what, dataclasses.replace(g, **{what: new}), old, new))
    return out


def _varied(problem, i, goal):
    """A copy of the problem with goal i replaced (its arrays rebuilt)."""
    out = copy.copy(problem)
    out.goals = list(problem.goals)
    out.goals[i] = goal
    out.weights = np.array([g.weight for g in out.goals])
    out._goal_arrays()
    return out


def _best(problem, X):
    """The best of the starts X (coded, (n, k)) after a joint polish: (x, D)."""
    p = len(problem.num)
    X = problem.tidy(np.array(X, dtype=float))
    if p:
        per = max(1, _JOINT // (p + len(problem.goals)))
        Z = np.vstack([_polish_d(problem, X[j:j + per][:, problem.num],
                                 X[j:j + per][:, problem.cat])[0]
                       for j in range(0, len(X), per)])
        polished = X.copy()
        polished[:, problem.num] = Z
        polished = problem.tidy(polished)
        X = np.vstack([X, polished])  # a start the polish made worse keeps its place
    D = problem.score(problem.values(X))[0]
    D[~problem.feasible(X)] = -1.0
    j = int(np.argmax(D))
    return X[j], float(max(D[j], 0.0))


def _searched(study, problem, seed):
    from .search import _search

    X, feasible, _ = _search(study, problem, top=1, seed=seed)
    D = problem.score(problem.values(X[:1]))[0][0] if feasible else 0.0
    return X[0], float(D)


def _describe(study, problem, models, x) -> dict:
    """Settings (natural, coded) and every modelled response's prediction at x."""
    from ..study.coding import to_natural

    natural = to_natural(study.factors, x[None, :]).iloc[0]
    settings = {f.name: (str(natural[f.name]) if f.is_categorical else float(natural[f.name]))
                for f in study.factors}
    coded = {f.name: float(x[j]) for j, f in enumerate(study.factors)}
    X = x[None, :]
    predicted = {r.name: float(np.asarray(models[r.name].predict(X), dtype=float).ravel()[0])
                 for r in study.responses if r.name in models}
    return {"settings": settings, "coded": coded, "predicted": predicted}


def _row(study, problem, models, x0, x, d, goal, what, old, new) -> dict:
    base = _describe(study, problem, models, x0)
    now = _describe(study, problem, models, x)
    numeric = [j for j, f in enumerate(study.factors) if not f.is_categorical]
    move = float(np.sqrt(((x[numeric] - x0[numeric]) ** 2).sum()))
    levels = [f.name for f in study.factors
              if f.is_categorical and now["settings"][f.name] != base["settings"][f.name]]
    row = {"goal": goal, "what": what, "old": float(old), "new": float(new),
           "words": _words(_label(study, goal), what, old, new), "move": move,
           "levels_changed": ", ".join(levels), "D": d, "feasible": d > 0}
    for f in study.factors:
        row[f"set:{f.name}"] = now["settings"][f.name]
    for f in study.factors:
        if not f.is_categorical:
            row[f"shift:{f.name}"] = now["settings"][f.name] - base["settings"][f.name]
    for n, v in now["predicted"].items():
        row[f"pred:{n}"] = v - base["predicted"][n]
    return row


def _label(study, name: str) -> str:
    """A goal's response or factor as the lab calls it (its label)."""
    for item in (*study.responses, *study.factors):
        if item.name == name:
            return item.label or name
    return name


def _words(goal, what, old, new) -> str:
    """The change in words, ``goal`` being the response's (or factor's) label."""
    if what == "weight":
        return f"the weight of {goal} is {'doubled' if new > old else 'halved'}"
    verb = "raised" if new > old else "lowered"
    return f"the {what} limit of {goal} is {verb} by {LIMIT_SHIFT:.0%} of its span"


def _moved(changes) -> np.ndarray:
    return ((changes["move"] > STILL) | (changes["levels_changed"] != "")).to_numpy()


def _sentence(study, changes, baseline, units) -> str:
    """The steadiness in one or two plain sentences."""
    if not len(changes):
        return "nothing to change: no goal has a weight or limits"
    lost = changes[~changes["feasible"]]
    big = changes[changes["feasible"] & ((changes["move"] > MOVES)
                                         | (changes["levels_changed"] != ""))]
    big = big.sort_values("move", ascending=False, kind="stable")
    tail = ""
    if len(lost):
        tail = (" No setting meets every limit when " + _join(lost["words"].tolist())
                + ".")
    if not len(big):
        worst = changes[changes["feasible"]].sort_values("move", ascending=False,
                                                         kind="stable")
        if not len(worst) or worst["move"].iloc[0] <= STILL:
            return ("The recommendation stays where it is under every change tried (each "
                    "weight from half to double, each limit moved by 10 % of its span)."
                    + tail)
        row = worst.iloc[0]
        return ("The recommendation barely moves: the largest shift, when "
                f"{row['words']}, is {row['move']:.2f} coded units "
                f"({_shifts(study, row, baseline, units)})." + tail)
    if len(big) <= 3:
        row = big.iloc[0]
        return ("The recommendation barely moves unless " + _join(big["words"].tolist(), "or")
                + f"; the largest shift ({row['words'].split(' is ')[0]} changed) is "
                f"{_shifts(study, row, baseline, units)}." + tail)
    goals = list(dict.fromkeys(_label(study, g) for g in big["goal"]))
    return (f"The recommendation is sensitive: {len(big)} of {len(changes)} changes move it "
            f"by more than {MOVES} coded units or to another level, through the weights or "
            "limits of " + _join(goals) + "; settle those goals with the team before "
            "trusting one setting." + tail)


def _shifts(study, row, baseline, units) -> str:
    """The factors that move, old -> new in their units, largest coded move first."""
    parts = []
    for f in study.factors:
        old, new = baseline["settings"][f.name], row[f"set:{f.name}"]
        if f.is_categorical:
            if new != old:
                parts.append((np.inf, f"{f.label} {old} -> {new}"))
            continue
        coded = abs(new - old) / f.half_range
        if coded > STILL / 2:
            u = f" {units[f.name]}" if units.get(f.name) else ""
            parts.append((coded, f"{f.label} {old:.4g} -> {new:.4g}{u}"))
    parts.sort(key=lambda t: -t[0])
    return ", ".join(p for _, p in parts[:3]) or "no factor moves visibly"


def _join(items, word="and") -> str:
    items = list(items)
    if len(items) <= 1:
        return "".join(items)
    return ", ".join(items[:-1]) + f" {word} " + items[-1]
