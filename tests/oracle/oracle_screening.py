"""Definitive screening studies for the oracle: their runs, and the checks of
``plan --design definitive-screening`` and ``fit --screening`` on any study.

The runs are built here from a conference matrix written out independently of
the library: Paley's construction for a prime q (Paley 1933), Q[a, b] = the
Legendre symbol of a - b mod q, C = [[0, 1'], [+-1, Q]], folded over with a
centre run (Jones & Nachtsheim 2011). The checks compare the analysis's main
effects with least squares on all runs (main effects are orthogonal to
everything else in such a design) and its second-order terms with strong
heredity (Jones & Nachtsheim 2017).
"""
from __future__ import annotations

import numpy as np
import pandas as pd

__all__ = ["paley_definitive", "check_screening_fit", "check_screening_plan"]


def paley_definitive(m: int, extra_pairs: int = 0) -> np.ndarray:
    """Coded runs of a definitive screening design for m numeric factors (q prime)."""
    n = m + extra_pairs + (m + extra_pairs) % 2
    q = n - 1
    assert q in (3, 5, 7, 11, 13), "the oracle's own construction takes a prime q"
    squares = {(i * i) % q for i in range(1, q)}
    chi = [0] + [1 if a in squares else -1 for a in range(1, q)]
    C = np.zeros((n, n))
    C[0, 1:] = 1
    C[1:, 0] = 1 if q % 4 == 1 else -1
    for a in range(q):
        for b in range(q):
            C[1 + a, 1 + b] = chi[(a - b) % q]
    assert np.allclose(C.T @ C, (n - 1) * np.eye(n))
    C = C[:, :m]
    return np.vstack([C, -C, np.zeros((1, m))])


def check_screening_fit(generated, study, printed: dict, outcome) -> None:
    """Every response either screened (heredity, main effects as least squares) or
    fitted as usual with the reason it could not be screened."""
    num = [f.name for f in study.factors if not f.is_categorical]
    for name, entry in printed["responses"].items():
        s = entry.get("screening")
        if s is None:
            if not entry.get("screening_note"):
                outcome.fail("screening", "fit", f"'{name}': no screening and no reason")
            if "screening" in generated.features and "screening_broken" not in \
                    generated.features and not study.block_column:
                outcome.fail("screening", "fit", f"'{name}': a definitive screening "
                             f"design was not recognised: {entry.get('screening_note')}")
            continue
        active = set(s["active_main"])
        for term in s["active_second_order"]:
            parents = term.replace("^2", "").split(":")
            if not set(parents) <= active:
                outcome.fail("screening", "fit", f"'{name}': {term} breaks heredity "
                             f"(active main effects {sorted(active)})")
        if s["error_df"] < 0 or (s["error_sd"] is not None and s["error_sd"] < 0):
            outcome.fail("screening", "fit", f"'{name}': error {s['error_sd']} on "
                         f"{s['error_df']} df")
        X = study.coded()[num].to_numpy(float)
        y = study.runs[name].to_numpy(float)
        beta, *_ = np.linalg.lstsq(np.column_stack([np.ones(len(X)), X]), y, rcond=None)
        for j, f in enumerate(num):
            got = s["coefficients"].get(f)
            if got is not None and abs(got - beta[j + 1]) > 1e-4 * (1 + abs(beta[j + 1])):
                outcome.fail("screening", "fit", f"'{name}': main effect of {f} "
                             f"{got} but least squares gives {beta[j + 1]:.6g}")
        nxt = s.get("next", {})
        if active and "--keep" not in (nxt.get("command") or ""):
            outcome.fail("screening", "fit", f"'{name}': the next step keeps no runs")


def check_screening_plan(generated, study, sheet, outcome) -> None:
    """The planned runs: mirror pairs, a centre run, orthogonal main effects, three
    levels (Jones & Nachtsheim 2011)."""
    table = pd.read_csv(sheet)
    num = [f for f in study.factors if not f.is_categorical]
    X = np.column_stack([(table[f.name].to_numpy(float) - f.centre) / f.half_range
                         for f in num])
    X = np.round(X, 9)
    if not np.all(np.isin(X, (-1.0, 0.0, 1.0))):
        outcome.fail("plan", "plan", "a definitive screening run is off its three levels")
    centre = np.all(X == 0, axis=1)
    if not centre.any():
        outcome.fail("plan", "plan", "a definitive screening plan without a centre run")
    rows = {tuple(r) for r in X[~centre]}
    if any(tuple(-v for v in r) not in rows for r in rows):
        outcome.fail("plan", "plan", "a definitive screening run has no mirror image")
    G = X.T @ X
    if np.abs(G - np.diag(np.diag(G))).max() > 1e-9:
        outcome.fail("plan", "plan", "main effects of the definitive screening plan are "
                     "not orthogonal")
