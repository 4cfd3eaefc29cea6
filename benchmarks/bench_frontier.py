"""Benchmark: the trade-off frontier on the demo study, against its 3 s target (issue 28).

Times ``frontier(study, between)`` on demo_data/snack_bar.toml for the pairs a
product team asks about (and one three-goal frontier), fit included and fit
apart, fastest of 3 runs (the machine may be shared), beside the plain
``optimize`` call as a baseline, and prints the number of points and the
additive epsilon indicator of the frontier against a dense grid of the two
goals' own frontier (Zitzler et al. 2003; goals scaled to their ranges; the
grid covers the numeric factors, each binder level).

    .venv/bin/python benchmarks/bench_frontier.py [--points 21]
"""
from __future__ import annotations

import argparse
import itertools
import time
from pathlib import Path

import numpy as np

from tradeoff.derive.load import load_study
from tradeoff.model.study_fit import fit_study
from tradeoff.search.frontier import _merit, frontier
from tradeoff.search.problem import _Problem
from tradeoff.search.search import optimize

DEMO = Path(__file__).resolve().parent.parent / "demo_data" / "snack_bar.toml"
PAIRS = (("liking", "cost"), ("protein", "hardness_12w"), ("liking", "hardness_12w"),
         ("liking", "cost", "hardness_12w"))


def fastest(call, repeat=3):
    best = np.inf
    for _ in range(repeat):
        t = time.perf_counter()
        out = call()
        best = min(best, time.perf_counter() - t)
    return best, out


def grid_epsilon(study, fit, front, n=41):
    """Additive epsilon indicator of the frontier against a dense grid's non-dominated set."""
    problem = _Problem(study, fit.models)
    names = problem.names()
    cols = [names.index(b) for b in front.between]
    axes = [np.linspace(lo, hi, n) for lo, hi in zip(problem.lo, problem.hi)]
    Z = np.array(list(itertools.product(*axes)))
    blocks = [problem.full(Z, np.repeat(np.array(c)[None, :], len(Z), axis=0))
              for c in itertools.product(*problem.cat_codes)]
    X = np.vstack(blocks)
    X = X[problem.feasible(X)]
    Y = problem.values(X)
    ok = (problem.score(Y)[1] > 0).all(axis=1)
    R = _merit(problem, cols, Y[ok])
    keep = [i for i in range(len(R))
            if not np.any(np.all(R >= R[i], axis=1) & np.any(R > R[i], axis=1))]
    R = R[keep]
    A = _merit(problem, cols, np.array([[p["predicted"].get(n, p["settings"].get(n))
                                         for n in names] for p in front.points]))
    span = np.where(np.ptp(R, axis=0) > 0, np.ptp(R, axis=0), 1.0)
    return float(np.max(np.min(np.max((R[:, None, :] - A[None]) / span, axis=2), axis=1)))


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--points", type=int, default=21)
    args = parser.parse_args()
    study = load_study(DEMO)
    fit = fit_study(study)
    t_opt, _ = fastest(lambda: optimize(study, fit=fit, top=1, seed=0))
    print(f"demo study: {DEMO.name}; target: frontier under 3 s (fit included)")
    print(f"{'between':<32} {'with fit s':>10} {'search s':>9} {'optimize s':>10} "
          f"{'points':>6} {'eps (grid)':>10}")
    for pair in PAIRS:
        t_all, _ = fastest(lambda: frontier(study, pair, points=args.points, seed=0))
        t_fr, front = fastest(lambda: frontier(study, pair, points=args.points, seed=0,
                                               fit=fit))
        eps = grid_epsilon(study, fit, front) if len(pair) == 2 else float("nan")
        print(f"{','.join(pair):<32} {t_all:>10.3f} {t_fr:>9.3f} {t_opt:>10.3f} "
              f"{len(front.points):>6} {eps:>10.3f}")


if __name__ == "__main__":
    main()
