"""The report's trade-off sections: the pair in greatest conflict, its frontier, and
the recommendation's steadiness, checked against computations written out here.

Sources:
- Spearman's rank correlation: scipy.stats.spearmanr is the reference; here the
  pair is recomputed as the Pearson correlation of ranks (Spearman 1904, common
  practice) with scipy.stats.rankdata, over the same settings.
- Overall desirability: tests/reference_desirability.py (Derringer & Suich 1980).
"""
from __future__ import annotations

import itertools
from pathlib import Path

import numpy as np
import pytest
from scipy.stats import rankdata

import tradeoff
from reference_desirability import study_d
from tradeoff.model.study_fit import fit_study
from tradeoff.report.data import report_data
from tradeoff.report.html import build_report_html
from tradeoff.search.conflict import goal_conflicts

DEMO = Path(__file__).resolve().parents[2] / "demo_data" / "snack_bar.toml"


@pytest.fixture(scope="module")
def demo():
    study = tradeoff.load_study(DEMO)
    fit = fit_study(study)
    data = report_data(study, top=2, seed=0, fit=fit)
    return study, fit, data, build_report_html(study, data=data).decode("utf-8")


def test_pair_is_the_most_negative_rank_correlation(demo):
    study, fit, data, _ = demo
    from tradeoff.search.candidates import _candidate_batch
    from tradeoff.search.problem import _Problem

    # the same settings the tool ranks over: the search's batch inside the rules
    problem = _Problem(study, fit.models)
    combos = [np.array(v) for v in itertools.product(*problem.cat_codes)]
    X = _candidate_batch(study, problem, combos, np.random.default_rng(0))
    X = X[problem.feasible(X)]
    names, d = study_d(study, fit, X)  # the published formulas, not the tool's
    ok = (d > 0).all(axis=1)
    best = None
    for i, j in itertools.combinations(range(len(names)), 2):
        ri, rj = rankdata(d[ok, i]), rankdata(d[ok, j])
        if np.ptp(ri) == 0 or np.ptp(rj) == 0:
            continue
        rho = np.corrcoef(ri, rj)[0, 1]
        if best is None or rho < best[0]:
            best = (rho, {names[i], names[j]})
    pair = data["trade"]["pair"]
    assert {pair["a"], pair["b"]} == best[1]
    assert pair["rho"] == pytest.approx(best[0], abs=1e-9)
    table = goal_conflicts(study, fit=fit, seed=0)
    assert (np.diff(table["rho"]) >= 0).all()


def test_page_shows_frontier_and_steadiness(demo):
    study, fit, data, page = demo
    assert '<section id="frontier">' in page and '<section id="steadiness">' in page
    pair = data["trade"]["pair"]
    assert f"<b>{pair['a']}</b> and <b>{pair['b']}</b>" in page
    assert f"{pair['rho']:.2f}" in page
    front = data["trade"]["frontier"]
    assert tuple(front.between) == (pair["a"], pair["b"])
    s = data["trade"]["steadiness"]
    import html

    assert html.escape(s.sentence, quote=True) in page
    # the frontier's points all keep every goal within its limits (published d > 0)
    X = np.array([[p["coded"][f.name] for f in study.factors] for p in front.points])
    _, d = study_d(study, fit, X)
    assert (d > 0).all()
    assert page.count("<svg") >= 2
