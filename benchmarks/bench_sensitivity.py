"""Benchmark: the recommendation's steadiness on the demo study (issue 28).

Times ``sensitivity(study, result=..., fit=...)`` on demo_data/snack_bar.toml
(every weight halved and doubled, every limit moved 10 % of its span, the best
settings found again after each by the warm-started polish), fastest of 3 runs
(the machine may be shared), beside the plain ``optimize`` call it follows and
beside the same changes each searched from scratch (the whole search per
change, the baseline the warm start replaces). Prints how many changes ended
apart from the from-scratch answer (more than 0.01 coded units).

    .venv/bin/python benchmarks/bench_sensitivity.py
"""
from __future__ import annotations

import time
from pathlib import Path

import numpy as np

from tradeoff.derive.load import load_study
from tradeoff.model.study_fit import fit_study
from tradeoff.search.problem import _Problem
from tradeoff.search.search import _search, optimize
from tradeoff.search.sensitivity import _changes, _varied, sensitivity

DEMO = Path(__file__).resolve().parent.parent / "demo_data" / "snack_bar.toml"


def fastest(call, repeat=3):
    best = np.inf
    for _ in range(repeat):
        t = time.perf_counter()
        out = call()
        best = min(best, time.perf_counter() - t)
    return best, out


def main() -> None:
    study = load_study(DEMO)
    fit = fit_study(study)
    t_opt, result = fastest(lambda: optimize(study, fit=fit, top=3, seed=0))
    t_warm, steady = fastest(lambda: sensitivity(study, result=result, fit=fit, seed=0))
    problem = _Problem(study, fit.models)

    def scratch():
        out = []
        for i, g in enumerate(problem.goals):
            for _, goal, _, _ in _changes(g):
                X, _, _ = _search(study, _varied(problem, i, goal), top=1, seed=0)
                out.append(X[0])
        return np.array(out)

    t_cold, cold = fastest(scratch, repeat=1)
    warm = np.array([[row[f"set:{f.name}"] if not f.is_categorical else 0.0
                      for f in study.factors] for row in steady.changes.to_dict("records")])
    numeric = [j for j, f in enumerate(study.factors) if not f.is_categorical]
    half = np.array([study.factors[j].half_range for j in numeric])
    centre = np.array([study.factors[j].centre for j in numeric])
    apart = np.sqrt((((warm[:, numeric] - centre) / half - cold[:, numeric]) ** 2)
                    .sum(axis=1)) > 0.01
    print(f"demo study: {DEMO.name}; {len(steady.changes)} changes")
    print(f"{'optimize s':>10} {'steadiness s':>12} {'from scratch s':>14} {'apart':>6}")
    print(f"{t_opt:>10.3f} {t_warm:>12.3f} {t_cold:>14.3f} {int(apart.sum()):>6}")


if __name__ == "__main__":
    main()
