"""A ``derive = "panel_category"`` response's printed fit, judged independently.

- the printed log-likelihood is the maximum: statsmodels OrderedModel (logit)
  on the same columns (the printed terms by the README's coding, plus
  sum-to-zero assessor columns when ``assessor = "fixed"``) reaches no higher
  (McCullagh 1980; reference library);
- the printed effects and thresholds rebuild the model's prediction at every
  run: ``S = sum_k w_k P_k`` with ``P(score <= k) = 1 / (1 + exp(-(theta_k - x'b)))``
  written out here, ``w_k`` the category value or 100 inside the boxes.
"""
from __future__ import annotations

import numpy as np
import pandas as pd

from oracle_derive import panel_long
from oracle_reference import TermError, term_column

__all__ = ["check_category", "category_scale"]


def category_scale(rep: dict) -> tuple[float, float]:
    """The bounds of a category summary (the scale, or 0..100 percent)."""
    return tuple(rep["scale"]) if rep["summary"] == "expected" else (0.0, 100.0)


def check_category(generated, study, fit, name: str, rep: dict, outcome) -> None:
    def fail(message):
        outcome.fail("category", "fit", f"'{name}': {message}")

    spec = next(r for r in generated.spec["responses"] if r["name"] == name)
    panel = panel_long(generated)
    part = panel[panel["attribute"] == spec["attribute"]].copy()
    part = part[part["score"].astype(str) != ""]
    part["score"] = part["score"].astype(float)
    factors = {f.name: f for f in generated.region.factors}
    runs = study.runs.groupby("run", sort=False).first()
    part = part[part["run"].isin(runs.index)]
    terms = [e["term"] for e in rep["effects"]]
    try:
        cols = np.column_stack([term_column(t, runs.reset_index(), factors) for t in terms])
    except TermError as exc:
        fail(str(exc))
        return
    at = {r: i for i, r in enumerate(runs.index)}
    X = cols[part["run"].map(at).to_numpy(int)]
    if rep["assessor"] == "fixed":
        codes, names = pd.factorize(part["assessor"], sort=False)
        A = np.zeros((len(part), len(names) - 1))
        for j in range(1, len(names)):
            A[codes == j, j - 1] = 1.0
        A[codes == 0] = -1.0
        X = np.column_stack([X, A])
    from statsmodels.miscmodels.ordinal_model import OrderedModel
    import warnings

    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        try:
            ref = OrderedModel(part["score"].to_numpy(), X, distr="logit").fit(
                method="bfgs", disp=False, maxiter=5000, gtol=1e-9)
        except Exception:  # noqa: BLE001 - a reference that cannot fit judges nothing
            ref = None
    if ref is not None and np.isfinite(ref.llf) and \
            rep["log_likelihood"] < ref.llf - 1e-4 * max(1.0, abs(ref.llf)):
        fail(f"log-likelihood {rep['log_likelihood']} below OrderedModel's {ref.llf}")
    b = np.array([e["estimate"] for e in rep["effects"]], float)
    theta = np.array([t["estimate"] for t in rep["thresholds"]], float)
    cats = np.array(rep["categories"], float)
    lo, hi = rep["scale"]
    w = (cats if rep["summary"] == "expected" else
         100.0 * (cats >= hi - rep["boxes"] + 1) if rep["summary"] == "top_box" else
         100.0 * (cats <= lo + rep["boxes"] - 1))
    eta = cols @ b
    cum = 1.0 / (1.0 + np.exp(-(theta[None, :] - eta[:, None])))
    P = np.diff(np.column_stack([np.zeros(len(eta)), cum, np.ones(len(eta))]), axis=1)
    want = P @ w
    from tradeoff.study.coding import to_coded

    got = np.asarray(fit.models[name].predict(to_coded(study.factors, runs.reset_index())))
    if not np.allclose(got, want, rtol=1e-6, atol=1e-6 * max(1.0, hi)):
        fail(f"predictions at the runs {got[:3]} differ from the printed effects and "
             f"thresholds' {want[:3]}")
