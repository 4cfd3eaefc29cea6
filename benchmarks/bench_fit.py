"""Benchmark: fit one response model, 10 factors, 'interactions' (56 terms), 1,024 runs.

Prints the median wall time of ``ResponseModel.fit`` (which also computes the
ANOVA, pure error, diagnostics, PRESS and the Box-Cox suggestion) side by side
with statsmodels OLS on the same model matrix (fit plus reading its standard
errors, p-values, R2 and F), and the time to predict with intervals at
100,000 points. Run: .venv/bin/python benchmarks/bench_fit.py

Both sides run in turn in the same loop (so a busy machine slows both alike),
with one BLAS thread unless OPENBLAS_NUM_THREADS / OMP_NUM_THREADS say otherwise.
The Box-Cox suggestion and the diagnostics table are computed on first use,
not in fit; their cost is printed separately.
"""
from __future__ import annotations

import os

for _var in ("OPENBLAS_NUM_THREADS", "OMP_NUM_THREADS", "MKL_NUM_THREADS"):
    os.environ.setdefault(_var, "1")  # before numpy loads its BLAS

import itertools
import statistics
import time

import numpy as np

from tradeoff.model.fit import ResponseModel
from tradeoff.model.terms import model_matrix, model_terms


def median_time(fn, repeat: int = 25) -> float:
    return median_times([fn], repeat)[0]


def median_times(fns, repeat: int = 25) -> list[float]:
    """Median time of each function, calling them in turn ``repeat`` times."""
    for fn in fns:
        fn()  # warm up
    times = [[] for _ in fns]
    for _ in range(repeat):
        for fn, bucket in zip(fns, times):
            t0 = time.perf_counter()
            fn()
            bucket.append(time.perf_counter() - t0)
    return [statistics.median(b) for b in times]


def main() -> None:
    import statsmodels.api as sm

    k = 10
    names = [f"x{i}" for i in range(1, k + 1)]
    X = np.array(list(itertools.product([-1.0, 1.0], repeat=k)))  # 2^10 = 1,024 runs
    rng = np.random.default_rng(0)
    y = 50 + X @ rng.normal(size=k) + 0.5 * X[:, 0] * X[:, 1] + rng.normal(0, 1, len(X))
    y = y - y.min() + 1  # positive, so the Box-Cox suggestion is computed too

    def ours():
        ResponseModel(terms="interactions", factor_names=names).fit(X, y)

    def reference():
        # statsmodels gets the model matrix ready-made (its build is not timed)
        res = sm.OLS(y, M).fit()
        return res.params, res.bse, res.pvalues, res.rsquared, res.rsquared_adj, res.fvalue

    terms, _ = model_terms("interactions", names)
    M = model_matrix(X, terms)
    model = ResponseModel(terms="interactions", factor_names=names).fit(X, y)
    assert len(model.terms_) == 56
    def extras():
        m = ResponseModel(terms="interactions", factor_names=names).fit(X, y)
        t0 = time.perf_counter()
        m.box_cox_, m.diagnostics_
        return time.perf_counter() - t0

    t_ours, t_ref = median_times([ours, reference], repeat=51)
    t_extra = statistics.median(extras() for _ in range(11))
    Xp = rng.uniform(-1, 1, (100_000, k))
    t_pred = median_time(lambda: model.intervals(Xp), repeat=7)
    t_mean = median_time(lambda: model.predict(Xp), repeat=7)
    print("fit, 10 factors, interactions model (56 terms), 1,024 runs; median of 51; "
          f"BLAS threads {os.environ['OPENBLAS_NUM_THREADS']}")
    print(f"  tradeoff ResponseModel.fit                {t_ours * 1e3:8.2f} ms")
    print(f"  statsmodels OLS fit + statistics          {t_ref * 1e3:8.2f} ms")
    print(f"  ratio statsmodels / tradeoff              {t_ref / t_ours:8.2f}x")
    print(f"  tradeoff Box-Cox + diagnostics table, on first use {t_extra * 1e3:8.2f} ms")
    print(f"predict, mean only, 100,000 points          {t_mean * 1e3:8.2f} ms")
    print(f"predict with intervals, 100,000 points      {t_pred * 1e3:8.2f} ms")


if __name__ == "__main__":
    main()
