"""Local polish: SLSQP from the best climbed starts.

``_polish_d`` maximises D through its smooth equivalent (``sum w_i log t_i``
with each desirability piece at least ``t_i``), several peaks at once as one
block-diagonal problem; ``_polish_shortfall`` minimises the weighted squared
shortfall when D is 0 everywhere.
"""
from __future__ import annotations

import numpy as np

from .desirability import limits
from .problem import _rule_parts

__all__ = ["_polish_d", "_polish_shortfall", "_Local"]

_STEP = 1e-5  # central-difference step in coded units (models are smooth polynomials)
_FTOL = 1e-6  # SLSQP stops when sum(w log t) (log D) changes less than this per peak
# A range goal's d steps from 1 to 0 at its limits. SLSQP meets a constraint only to
# within its tolerance, so a peak on a range limit could end a hair outside it, where
# D is 0; the polish aims this far inside (in goal widths) instead.
_INSIDE = 1e-8


class _Local:
    """Values and their derivatives at one point, by one batched evaluation."""

    def __init__(self, problem, cat_values):
        self.p = problem
        self.cat_values = cat_values
        self.key = None

    def at(self, z):
        key = z.tobytes()
        if key != self.key:
            p = len(z)
            steps = np.vstack([np.zeros(p), _STEP * np.eye(p), -_STEP * np.eye(p)])
            Y = self.p.values(self.p.full(z[None, :] + steps, self.cat_values))
            self.y = Y[0]
            self.J = (Y[1:p + 1] - Y[p + 1:]) / (2 * _STEP)  # (p, m)
            self.key = key
        return self.y, self.J


def _polish_d(problem, Z0, cats):
    """SLSQP on the smooth form of max D, from several points at once.

    ``Z0`` (c, p) numeric starts and ``cats`` (c, n_cat) their categorical
    values. The c problems are independent; solving them as one block-diagonal
    problem evaluates every block in one batch per iteration. Returns the
    polished settings (c, p) and the goal values there (c, m).
    """
    from scipy.optimize import Bounds, minimize

    Z0 = np.atleast_2d(Z0)
    c, p = Z0.shape
    goals = problem.goals
    tcols = [i for i, g in enumerate(goals) if g.kind in ("maximize", "minimize", "target")]
    q = len(tcols)
    wt = problem.weights[tcols] / problem.weights.sum()
    steps = np.vstack([np.zeros(p), _STEP * np.eye(p), -_STEP * np.eye(p)])  # (2p+1, p)
    cats = np.asarray(cats, dtype=float).reshape(c, -1)
    cat_rows = np.repeat(cats, 2 * p + 1, axis=0)
    last = [None, None]  # the settings last evaluated and (y, J) there

    def at(v):
        key = v[:c * p].tobytes()  # the values depend on the settings only, not on t
        if key != last[0]:
            Z = v[:c * p].reshape(c, p)
            pts = (Z[:, None, :] + steps[None]).reshape(-1, p)
            Y = problem.values(problem.full(pts, cat_rows)).reshape(c, 2 * p + 1, -1)
            last[:] = key, (Y[:, 0], (Y[:, 1:p + 1] - Y[:, p + 1:]) / (2 * _STEP))
        return last[1]  # y (c, m), J (c, p, m)

    # Each piece: coefficient on y (scaled), constant, t index (-1 for none), exponent.
    pieces = []
    for i, g in enumerate(goals):
        ti = tcols.index(i) if i in tcols else -1
        width = g.upper - g.lower
        if g.kind == "maximize":
            pieces.append((i, 1 / width, -g.lower / width, ti, 1 / g.shape))
        elif g.kind == "minimize":
            pieces.append((i, -1 / width, g.upper / width, ti, 1 / g.shape))
        elif g.kind == "target":
            below, above = g.target - g.lower, g.upper - g.target
            pieces.append((i, 1 / below, -g.lower / below, ti, 1 / g.shape_below))
            pieces.append((i, -1 / above, g.upper / above, ti, 1 / g.shape_above))
        elif g.kind == "range":
            pieces.append((i, 1 / width, -g.lower / width - _INSIDE, -1, 1.0))
            pieces.append((i, -1 / width, g.upper / width - _INSIDE, -1, 1.0))
    col = np.array([pc[0] for pc in pieces])
    a = np.array([pc[1] for pc in pieces])
    const = np.array([pc[2] for pc in pieces])
    tix = np.array([pc[3] for pc in pieces])
    ex = np.array([pc[4] for pc in pieces])
    rows_t = np.flatnonzero(tix >= 0)
    r = len(pieces)
    rules = [_rule_parts(problem, cats[b]) for b in range(c)]
    n_rules = 0 if rules[0][0] is None else len(rules[0][1])

    # Each t is solved for as its start value times a factor S (t = T0 S), and each of
    # its pieces divided by T0^ex: a d of 1e-7 at the start (a hair inside a limit)
    # then moves on the same scale as a d of 0.5, which SLSQP's absolute tolerances
    # need to take it the rest of the way.
    def cons(v):
        y, _ = at(v)
        S = v[c * p:].reshape(c, q)
        g = a * y[:, col] + const
        g[:, rows_t] = g[:, rows_t] / scale - S[:, tix[rows_t]] ** ex[rows_t]
        out = [g.ravel()]
        if n_rules:
            Z = v[:c * p].reshape(c, p)
            out += [rules[b][1] - rules[b][0] @ Z[b] for b in range(c)]
        return np.concatenate(out)

    # Where each block's entries sit in the block-diagonal constraint Jacobian.
    blocks = np.arange(c)
    z_rows = (blocks[:, None] * r + np.arange(r))[:, :, None]  # (c, r, 1)
    z_cols = (blocks[:, None] * p + np.arange(p))[:, None, :]  # (c, 1, p)
    t_rows = blocks[:, None] * r + rows_t  # (c, rt)
    t_cols = c * p + blocks[:, None] * q + tix[rows_t]  # (c, rt)
    G_rules = np.zeros((c * n_rules, c * (p + q)))
    for b in range(c):
        if n_rules:
            G_rules[b * n_rules:(b + 1) * n_rules, b * p:(b + 1) * p] = -rules[b][0]

    def cons_jac(v):
        _, J = at(v)
        S = v[c * p:].reshape(c, q)
        G = np.zeros((c * r, c * (p + q)))
        piece = (J[:, :, col] * a).transpose(0, 2, 1)  # (c, r, p)
        piece[:, rows_t, :] /= scale[:, :, None]
        G[z_rows, z_cols] = piece
        G[t_rows, t_cols] = -ex[rows_t] * S[:, tix[rows_t]] ** (ex[rows_t] - 1)
        return np.vstack([G, G_rules]) if n_rules else G

    def fun(v):
        return -float(np.log(v[c * p:]).reshape(c, q).sum(axis=0) @ wt)

    def jac(v):
        return np.concatenate([np.zeros(c * p), -(wt[None, :] / v[c * p:].reshape(c, q)).ravel()])

    y0, _ = at(np.concatenate([Z0.ravel(), np.ones(c * q)]))
    d0 = problem.score(y0)[1]
    T0 = np.clip(d0[:, tcols] * (1 - 1e-9), 1e-12, 1.0)
    scale = T0[:, tix[rows_t]] ** ex[rows_t]  # (c, rt)
    bounds = Bounds(np.concatenate([np.tile(problem.lo, c), (1e-12 / T0).ravel()]),
                    np.concatenate([np.tile(problem.hi, c), (1.0 / T0).ravel()]))
    res = minimize(fun, np.concatenate([Z0.ravel(), np.ones(c * q)]), jac=jac, method="SLSQP",
                   bounds=bounds, constraints=[{"type": "ineq", "fun": cons, "jac": cons_jac}],
                   options={"maxiter": 100, "ftol": _FTOL * c})
    Z = np.clip(res.x[:c * p].reshape(c, p), problem.lo, problem.hi)
    y, _ = at(np.concatenate([Z.ravel(), res.x[c * p:]]))  # usually the last evaluation
    return Z, y


def _polish_shortfall(problem, z0, cat_values):
    """SLSQP on the weighted squared shortfall from z0 (when D is 0 everywhere)."""
    from scipy.optimize import minimize

    local = _Local(problem, cat_values)
    goals = problem.goals
    w = problem.weights
    bounds_lh = [limits(g) for g in goals]
    lo = np.array([b[0] for b in bounds_lh])
    hi = np.array([b[1] for b in bounds_lh])
    width = np.array([g.upper - g.lower for g in goals])
    A_num, b_eff = _rule_parts(problem, cat_values)

    def parts(z):
        y, J = local.at(z)
        below = np.maximum(lo - y, 0.0) / width
        above = np.maximum(y - hi, 0.0) / width
        return below, above, J

    def fun(z):
        below, above, _ = parts(z)
        return float(w @ (below + above) ** 2)

    def jac(z):
        below, above, J = parts(z)
        grad_y = 2 * w * (above - below) / width
        return J @ grad_y

    constraints = []
    if A_num is not None:
        constraints = [{"type": "ineq", "fun": lambda z: b_eff - A_num @ z,
                        "jac": lambda z: -A_num}]
    res = minimize(fun, z0, jac=jac, method="SLSQP",
                   bounds=list(zip(problem.lo, problem.hi)), constraints=constraints,
                   options={"maxiter": 200, "ftol": 1e-14})
    return np.clip(res.x, problem.lo, problem.hi)
