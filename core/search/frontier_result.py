"""The frontier's result: its points, the knee, the exchange rate, the D optimum's place.

``Frontier`` is what ``tradeoff.search.frontier.frontier`` returns. Each point
carries what a solution of ``optimize`` carries (settings, predictions with
prediction intervals, every d, D, the chance of meeting every limit), built by
the search's own result assembly. The knee is the point of greatest curvature
(Menger curvature through each point and its neighbours, goals scaled to their
frontier ranges); with three goals, the point farthest beyond the plane
through the three ends (the "bulge"). The exchange rate is what each step
along the frontier gives up in the second goal per unit gained in the first.
"""
from __future__ import annotations

import dataclasses
import math
from dataclasses import dataclass, field

import numpy as np
import pandas as pd

from ..cautions import FOOD_CAUTION, FOOD_CAUTIONS
from .result import _result, _rounder

__all__ = ["Frontier", "knee_index", "exchange_table", "nice_step", "goal_sense"]


@dataclass(frozen=True)
class Frontier:
    """The non-dominated settings between two or three goals.

    Attributes
    ----------
    study : str
    between : tuple of str
        The goals traded, in the order asked.
    units : dict
        Goal name -> its unit ('' when none).
    senses : dict
        Goal name -> ``maximize``, ``minimize`` or ``target``.
    points : tuple of dict
        Best first goal first; each with ``settings``, ``coded``,
        ``predicted`` and ``pi`` (every modelled response), ``d`` (every goal),
        ``D`` and ``chance_all``.
    d_optimum : dict
        The settings of greatest D, in the same shape, with ``nearest`` (index
        of the closest frontier point, goals scaled to their ranges),
        ``on_frontier`` (no frontier point is as good on every goal traded and
        better on one) and
        ``position`` (0 at the first goal's best end, 1 at the other end).
    knee : dict or None
        The knee point (with its ``index``), None with fewer than 3 points.
    exchange : pandas.DataFrame
        One row per step between neighbouring points (two-goal frontier, or
        the first two goals' own frontier among the points): ``from_a``,
        ``to_a``, ``from_b``, ``to_b`` (natural units), ``gain_a`` (how much
        closer to the first goal's aim), ``loss_b`` (how much farther from
        the second's), ``rate`` (loss_b per unit of gain_a), ``mid_a``.
    seed : int
    warnings : tuple of str
    solutions : tuple of Solution
        Each point as the search's ``Solution`` (labelled ``F0``, ``F1``, ... in
        frontier order), for a front end that makes a point the chosen solution.
    """

    study: str
    between: tuple
    units: dict
    senses: dict
    points: tuple
    d_optimum: dict
    knee: dict | None
    exchange: pd.DataFrame = field(compare=False, repr=False)
    seed: int = 0
    warnings: tuple = ()
    solutions: tuple = field(default=(), compare=False, repr=False)

    def to_dict(self, digits: int = 6) -> dict:
        """The command line's ``--json``."""
        r = _rounder(digits)
        ex = [{k: r(v) for k, v in row.items()} for row in self.exchange.to_dict("records")]
        return {"between": list(self.between), "points": [_rounded(p, r) for p in self.points],
                "d_optimum": _rounded(self.d_optimum, r),
                "knee": None if self.knee is None else _rounded(self.knee, r),
                "exchange": ex, "units": dict(self.units), "senses": dict(self.senses),
                "study": self.study, "seed": self.seed, "warnings": list(self.warnings),
                "cautions": list(FOOD_CAUTIONS)}

    def table(self) -> pd.DataFrame:
        """Tidy table, one row per point: ``point``, each traded goal's value, ``D``,
        ``chance_all``, ``knee`` and ``nearest_optimum`` (booleans), then the settings."""
        rows = []
        k = None if self.knee is None else self.knee["index"]
        for i, p in enumerate(self.points):
            row = {"point": i}
            row.update({g: _value(p, g) for g in self.between})
            row.update({"D": p["D"], "chance_all": p["chance_all"], "knee": i == k,
                        "nearest_optimum": i == self.d_optimum["nearest"]})
            row.update(p["settings"])
            rows.append(row)
        return pd.DataFrame(rows)

    def exchange_words(self, rows: int = 4, labels: dict | None = None) -> list[str]:
        """The exchange rate in sentences, for at most ``rows`` stretches of the frontier.

        ``labels`` (name -> label) names the two goals as the lab does; by default
        by their names.
        """
        a, b = self.between[:2]
        la, lb = (labels or {}).get(a, a), (labels or {}).get(b, b)
        ex = self.exchange
        # a step that gains next to nothing (a near-vertical stretch, often at a seam
        # or an end) has a rate that is mostly rounding: it is not worth a sentence
        reach = float(ex["gain_a"].sum()) if len(ex) else 0.0
        ex = ex[ex["gain_a"] >= 0.01 * reach]
        if not len(ex):
            return []
        step = nice_step(abs(ex["to_a"].iloc[-1] - ex["from_a"].iloc[0]) / 5)
        values_b = [_value(p, b) for p in self.points]
        span_b = max(float(np.ptp(values_b)), 1e-300) if values_b else 1.0
        pick = np.unique(np.linspace(0, len(ex) - 1, min(rows, len(ex))).round().astype(int))
        out = []
        for i in pick.tolist():
            row = ex.iloc[i]
            verb = "costs" if row["rate"] >= 0 else "also gains"
            gain = {"maximize": f"each further {step:g} {_unit(self.units[a])}of {la}",
                    "minimize": f"each {step:g} {_unit(self.units[a])}less {la}",
                    }.get(self.senses[a], f"each {step:g} {_unit(self.units[a])}closer "
                          f"to the target of {la}")
            worse = {"maximize": "of", "minimize": "more"}.get(
                self.senses[b], "farther from the target of") if row["rate"] >= 0 else \
                {"maximize": "more", "minimize": "less"}.get(self.senses[b],
                                                             "closer to the target of")
            amount = abs(row["rate"]) * step
            if amount < 1e-6 * span_b:  # rounding dust: b does not move along this stretch
                out.append(f"from {la} {row['from_a']:.4g} to {row['to_a']:.4g}: {gain} "
                           f"costs next to nothing in {lb}")
                continue
            out.append(f"from {la} {row['from_a']:.4g} to {row['to_a']:.4g}: {gain} {verb} "
                       f"{_plain(amount)} {_unit(self.units[b])}{worse} {lb}")
        return out

    def text(self) -> str:
        """A readable frontier for the terminal."""
        g = self.between
        k = None if self.knee is None else self.knee["index"]
        aims = ", ".join(f"{n} ({self.senses[n]})" for n in g)
        lines = [f"Trade-off frontier between {aims}: {len(self.points)} settings where "
                 "no goal can gain without another losing; every goal stays within its "
                 "limits.", ""]
        head = f"  {'#':>3} " + "".join(f"{n[:14]:>15}" for n in g) + \
            f" {'D':>7} {'chance':>7}  note"
        lines.append(head)
        for i, p in enumerate(self.points):
            notes = []
            if i == k:
                notes.append("knee")
            if i == self.d_optimum["nearest"]:
                notes.append("nearest the D optimum")
            ch = "-" if p["chance_all"] is None else f"{p['chance_all']:.0%}"
            lines.append(f"  {i:>3} " + "".join(f"{_value(p, n):>15.4g}" for n in g)
                         + f" {p['D']:>7.3f} {ch:>7}  " + ", ".join(notes))
        o = self.d_optimum
        where = "on the frontier" if o["on_frontier"] else "inside the frontier (a " \
            "frontier point does as well on the goals traded and better on one, at the " \
            "cost of other goals)"
        pos = "" if o.get("position") is None else \
            f", {o['position']:.0%} of the way from the {g[0]} end"
        lines += ["", f"D optimum (D = {o['D']:.3f}): " + ", ".join(
            f"{n} {_value(o, n):.4g}" for n in g) + f"; {where}; nearest point "
            f"#{o['nearest']}{pos}"]
        if self.knee is not None:
            lines.append(f"knee: point #{k} (" + ", ".join(
                f"{n} {_value(self.knee, n):.4g}" for n in g) + "), where the frontier "
                "bends most")
        words = self.exchange_words()
        if words:
            lines.append("exchange rate along the frontier:")
            lines += [f"  {w}" for w in words]
        if len(g) == 3:
            lines.append(f"(three goals: the exchange rate is read between {g[0]} and "
                         f"{g[1]} among the points, {g[2]} varying)")
        first = self.points[0]["settings"]
        lines += ["", "settings of each point:"]
        lines.append(f"  {'#':>3} " + "".join(f"{n[:12]:>13}" for n in first))
        for i, p in enumerate(self.points):
            lines.append(f"  {i:>3} " + "".join(
                f"{v:>13}" if isinstance(v, str) else f"{v:>13.4g}"
                for v in p["settings"].values()))
        lines += [f"note: {w}" for w in self.warnings]
        lines.append("cautions: " + FOOD_CAUTION)
        return "\n".join(lines)


def _unit(u: str) -> str:
    return f"{u} " if u else ""


def _value(point: dict, goal: str) -> float:
    return point["predicted"][goal] if goal in point["predicted"] else \
        point["settings"][goal]


def _rounded(p: dict, r) -> dict:
    out = {}
    for key, v in p.items():
        if isinstance(v, dict):
            out[key] = {n: (x if isinstance(x, (str, int)) and not isinstance(x, bool)
                            else [r(x[0]), r(x[1])] if isinstance(x, (list, tuple))
                            else r(x)) for n, x in v.items()}
        elif isinstance(v, bool) or isinstance(v, int) or v is None:
            out[key] = v
        else:
            out[key] = r(v)
    return out


def goal_sense(goal):
    """The frontier's direction of a goal: (+1 maximise, -1 minimise, 0 target)."""
    return {"maximize": 1.0, "minimize": -1.0, "target": 0.0}[goal.kind]


def _merit(problem, cols, Y):
    """(n, len(cols)) goal values in their directions (larger is better)."""
    out = np.empty((len(Y), len(cols)))
    for j, i in enumerate(cols):
        g = problem.goals[i]
        s = goal_sense(g)
        out[:, j] = s * Y[:, i] if s else -np.abs(Y[:, i] - g.target)
    return out


def _non_dominated(F, tol=1e-9) -> np.ndarray:
    """Indices of rows of F (larger is better) no other row dominates, duplicates once."""
    order = np.lexsort(F.T[::-1])[::-1]  # best first goal first
    keep = []
    for i in order.tolist():
        f = F[i]
        if any(np.all(F[j] >= f - tol) for j in keep):
            continue  # dominated by (or the same as) a kept point
        keep = [j for j in keep if not np.all(f >= F[j] - tol)]
        keep.append(i)
    return np.array(sorted(keep, key=lambda j: tuple(-F[j])), dtype=int)


def nice_step(x: float) -> float:
    """x rounded down to 1, 2 or 5 times a power of ten (a readable step)."""
    if not x > 0 or not math.isfinite(x):
        return 1.0
    power = 10 ** math.floor(math.log10(x))
    return max(m for m in (1, 2, 5) if m * power <= x) * power


def knee_index(F, pieces=None) -> int | None:
    """The knee of a frontier F (n, q), larger better, rows in frontier order.

    Two goals: the interior point of greatest Menger curvature (4 x triangle
    area / product of its sides) through it and its neighbours, goals scaled
    to their ranges. Three goals: the point farthest beyond the plane through
    the points best in each goal.

    ``pieces`` (n labels, optional) names the connected piece each point lies
    on (its categorical levels). A frontier made of pieces jumps where one
    piece hands over to another (say one binder to the other). That jump is
    not a bend a team can sit on, and neither is the last stretch of a piece
    before it (where the piece runs steeply into the hand-over, beaten just
    beyond by the other piece). So with two goals the knee is sought among
    points whose two neighbours lie on the same piece, neither of them a
    point next to a seam (any point, when no such triple exists).
    """
    F = np.asarray(F, dtype=float)
    if len(F) < 3:
        return None
    span = np.ptp(F, axis=0)
    G = (F - F.min(axis=0)) / np.where(span > 0, span, 1.0)
    if G.shape[1] == 2:
        a, b, c = G[:-2], G[1:-1], G[2:]
        cross = np.abs((b[:, 0] - a[:, 0]) * (c[:, 1] - a[:, 1])
                       - (b[:, 1] - a[:, 1]) * (c[:, 0] - a[:, 0]))
        sides = (np.linalg.norm(b - a, axis=1) * np.linalg.norm(c - b, axis=1)
                 * np.linalg.norm(c - a, axis=1))
        kappa = np.where(sides > 0, 2 * cross / np.where(sides > 0, sides, 1.0), 0.0)
        if pieces is not None:
            lab = list(pieces)
            n = len(lab)
            # a point next to a seam gets a label of its own, so no triple holds it
            lab = [("seam", i) if (i > 0 and lab[i - 1] != lab[i])
                   or (i < n - 1 and lab[i + 1] != lab[i]) else lab[i] for i in range(n)]
            whole = np.array([lab[i] == lab[i + 1] == lab[i + 2] for i in range(n - 2)])
            if whole.any():
                kappa = np.where(whole, kappa, -1.0)
        return int(np.argmax(kappa)) + 1
    ends = G[[int(np.argmax(G[:, j])) for j in range(3)]]
    normal = np.cross(ends[1] - ends[0], ends[2] - ends[0])
    if np.linalg.norm(normal) == 0:
        return int(np.argmax(G.sum(axis=1)))
    normal /= np.linalg.norm(normal)
    if normal.sum() < 0:
        normal = -normal  # pointing toward better on every goal
    return int(np.argmax((G - ends[0]) @ normal))


def exchange_table(values_a, values_b, merit_a, merit_b) -> pd.DataFrame:
    """What each step between neighbouring frontier points gives up, per unit gained.

    Rows run from the second goal's best end toward the first goal's best end.
    ``gain_a`` is the step's gain in the first goal's direction, ``loss_b``
    the second goal's loss, ``rate = loss_b / gain_a``.
    """
    order = np.argsort(merit_a, kind="stable")
    va, vb = np.asarray(values_a)[order], np.asarray(values_b)[order]
    ma, mb = np.asarray(merit_a)[order], np.asarray(merit_b)[order]
    gain, loss = np.diff(ma), -np.diff(mb)
    ok = gain > 1e-12 * max(1.0, float(np.abs(ma).max()))
    return pd.DataFrame({
        "from_a": va[:-1][ok], "to_a": va[1:][ok], "from_b": vb[:-1][ok], "to_b": vb[1:][ok],
        "gain_a": gain[ok], "loss_b": loss[ok], "rate": loss[ok] / gain[ok],
        "mid_a": ((va[:-1] + va[1:]) / 2)[ok]})


def _assemble(study, problem, models, fit, cols, X, x_opt, seed, draws) -> Frontier:
    """The Frontier of the chosen points X (coded, frontier order) and the D optimum."""
    names = problem.names()
    between = tuple(names[i] for i in cols)
    Xall = np.vstack([X, x_opt[None, :]])
    res = _result(study, problem, models, fit, Xall, len(Xall), seed, "desirability",
                  True, (), draws, as_given=True)  # frontier order, the points as found
    dicts = [_point(s) for s in res.solutions]
    F = _merit(problem, cols, problem.values(Xall))
    Ff, fo = F[:-1], F[-1]
    span = np.ptp(Ff, axis=0)
    scale = np.where(span > 0, span, 1.0)
    dist = np.sqrt((((Ff - fo) / scale) ** 2).sum(axis=1))
    nearest = int(np.argmin(dist))
    # beaten: a point as good on every goal traded and better on one (past the
    # solver's dust, a millionth of each goal's range)
    tol = 1e-6 * scale
    beaten = bool(np.any(np.all(Ff >= fo - tol, axis=1) & np.any(Ff > fo + tol, axis=1)))
    opt = dicts[-1] | {"nearest": nearest, "on_frontier": not beaten, "position": None}
    if len(cols) == 2 and len(Ff) > 1:
        step = np.sqrt(((np.diff(Ff, axis=0) / scale) ** 2).sum(axis=1))
        s = np.concatenate([[0.0], np.cumsum(step)])
        opt["position"] = float(s[nearest] / s[-1]) if s[-1] > 0 else 0.0
    # a point's piece: its levels of the categorical factors (the seams between them
    # are jumps, not bends: see knee_index)
    k = knee_index(Ff, [tuple(x) for x in X[:, problem.cat].round(9).tolist()])
    knee = None if k is None else dicts[k] | {"index": k}
    pair = _non_dominated(Ff[:, :2])
    va = problem.values(X)[:, cols[0]]
    vb = problem.values(X)[:, cols[1]]
    exchange = exchange_table(va[pair], vb[pair], Ff[pair, 0], Ff[pair, 1])
    units = {}
    for n in between:
        thing = study.response(n) if n in study.response_names else study.factor(n)
        units[n] = thing.unit or ""
    senses = {n: problem.goals[i].kind for n, i in zip(between, cols)}
    return Frontier(study=study.name, between=between, units=units, senses=senses,
                    points=tuple(dicts[:-1]), d_optimum=opt, knee=knee, exchange=exchange,
                    seed=seed, warnings=res.warnings,
                    solutions=tuple(dataclasses.replace(s, label=f"F{i}", rank=i + 1)
                                    for i, s in enumerate(res.solutions[:-1])))


def _point(s) -> dict:
    """One solution of the search's result in the frontier's shape."""
    d = {n: o.desirability for n, o in s.responses.items() if o.desirability is not None}
    d.update(s.factor_desirability)
    return {"settings": dict(s.settings), "coded": dict(s.coded),
            "predicted": {n: o.predicted for n, o in s.responses.items()},
            "pi": {n: [o.pi[0], o.pi[1]] for n, o in s.responses.items()},
            "d": d, "D": s.desirability, "chance_all": s.chance_all}


def _plain(x: float) -> str:
    """Three significant digits without an exponent (0.0000159, not 1.59e-05): a lab
    reads an amount, not a power of ten."""
    if x == 0 or 1e-4 <= abs(x) < 1e6:
        return f"{x:.3g}"
    return np.format_float_positional(x, precision=3, unique=False, fractional=False,
                                      trim="-")
