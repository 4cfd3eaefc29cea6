"""Why fewer solutions are listed than were asked for.

Check: the alternatives are distinct peaks of D, at least ``min_distance`` coded
units apart (common practice: one solution per peak). The distances are computed
here from the solutions' coded settings, independently of the search.
"""
from __future__ import annotations

from itertools import combinations
from pathlib import Path

import numpy as np

from tradeoff import load_study, optimize
from tradeoff.search.result import fewer_solutions_text

DEMO = Path(__file__).resolve().parents[2] / "demo_data" / "snack_bar.toml"


def test_fewer_solutions_are_explained_and_truly_distinct():
    result = optimize(load_study(DEMO), top=10, seed=0)
    n = len(result.solutions)
    names = list(result.solutions[0].coded)
    points = [np.array([float(s.coded[k]) for k in names]) for s in result.solutions]
    for a, b in combinations(points, 2):
        assert np.linalg.norm(a - b) >= 0.25 - 1e-9
    text = fewer_solutions_text(result, 10)
    if n < 10:
        assert text.startswith("10 solutions were asked for")
        assert ("one setting stands" in text) if n == 1 else (f"{n} distinct settings" in text)
    else:
        assert text == ""
    # Asking for no more than were found needs no explanation.
    assert fewer_solutions_text(result, n) == ""
