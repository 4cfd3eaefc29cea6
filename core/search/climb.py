"""Climbing: pattern steps on D from every start at once, and one start per hill.

``_climb`` moves all starts together (one batch per round); ``_one_per_hill``
drops a climbed start from which D rises all the way to a better one, so each
peak is polished once.
"""
from __future__ import annotations

import itertools

import numpy as np

__all__ = ["_climb", "_one_per_hill"]

_ROUNDS = 20  # at most this many compass rounds (4 or more numeric factors)
_DIAGONAL = 3  # up to this many numeric factors the climb steps along diagonals too
_ROUNDS_DIAGONAL = 8  # at most this many rounds then (each round tries more directions)
_SETTLE = 2e-3  # a start whose compass step is below this (coded) has settled


def _climb(problem, X, D, Y, step: float = 0.1, settle: float = _SETTLE):
    """Pattern search on D from every start at once (one batch per round).

    Each start tries a step along every direction of its pattern, moves to its
    best feasible neighbour when that improves D, and shrinks its step
    otherwise; starts whose step has fallen below ``settle`` (coded units)
    stop, and the polish takes them the rest of the way. With up to 3 numeric
    factors the pattern holds the diagonals too (8 or 26 directions), so a
    start can follow a ridge of D that runs across the axes in a few rounds;
    above that it is the compass (up and down each factor), and the rounds are
    more. Returns the climbed points, their D and their goal values.
    """
    X, D, Y = X.copy(), D.copy(), Y.copy()
    p, k = len(problem.num), problem.k
    steps = np.full(len(X), step * float(np.max(problem.hi - problem.lo)) / 2)
    if p <= _DIAGONAL:
        directions = np.array([v for v in itertools.product((-1.0, 0.0, 1.0), repeat=p)
                               if any(v)])
        rounds, shrink = _ROUNDS_DIAGONAL, 1 / 3
    else:
        directions = np.vstack([np.eye(p), -np.eye(p)])
        rounds, shrink = _ROUNDS, 1 / 2
    moves = np.zeros((len(directions), k))
    moves[:, problem.num] = directions
    ruled = len(problem.b) > 0
    for _ in range(rounds):
        live = np.flatnonzero(steps >= settle)
        if not len(live):
            break
        trial = X[live, None, :] + steps[live, None, None] * moves  # (s, directions, k)
        np.clip(trial, problem.lo_k, problem.hi_k, out=trial)
        flat = trial.reshape(-1, k)
        Yt = problem.values(flat)
        Dt = problem.score(Yt)[0]
        if ruled:
            Dt[~problem.feasible(flat)] = -1.0
        Dt = Dt.reshape(len(live), len(moves))
        Yt = Yt.reshape(len(live), len(moves), -1)
        best = Dt.argmax(axis=1)
        rows = np.arange(len(live))
        gain = Dt[rows, best] > D[live]
        up = live[gain]
        X[up] = trial[rows[gain], best[gain]]
        D[up] = Dt[rows[gain], best[gain]]
        Y[up] = Yt[rows[gain], best[gain]]
        steps[live[~gain]] *= shrink
    return X, D, Y


def _one_per_hill(problem, X, D, reps):
    """Drop a climbed start from which D rises all the way to a better one.

    Starts that stall apart on one curved ridge (a pattern step cannot follow
    it) would each be polished to the same peak. For every pair (better a,
    worse b, same categorical levels) D is sampled at a quarter, half and three
    quarters of the way from b to a, all pairs in one batch; when D never falls
    along the way, b lies on a's slope and only a is polished. A start with a
    dip between it and every better one keeps its own polish.
    """
    if len(reps) < 2:
        return reps
    pairs = [(a, b) for i, a in enumerate(reps) for b in reps[i + 1:]
             if np.array_equal(X[a, problem.cat], X[b, problem.cat])]
    if not pairs:
        return reps
    a, b = np.array(pairs).T
    fractions = np.array([0.25, 0.5, 0.75])
    path = X[b][:, None, :] + fractions[:, None] * (X[a] - X[b])[:, None, :]
    Dpath = problem.score(problem.values(path.reshape(-1, problem.k)))[0].reshape(-1, 3)
    profile = np.column_stack([D[b], Dpath, D[a]])
    rising = (np.diff(profile, axis=1) >= 0).all(axis=1)
    uphill = {}
    for (i, j), r in zip(pairs, rising.tolist()):
        uphill.setdefault(j, []).append((i, r))
    kept = []
    for j in reps:  # best first: a start is dropped only for a kept better one
        if any(r and i in kept for i, r in uphill.get(j, [])):
            continue
        kept.append(j)
    return kept
