"""Aliases with their signs and coefficients: the dropped column rebuilt exactly.

The layout is the N, P, K 2^3 factorial of Yates (1937), The Design and
Analysis of Factorial Experiments, as tabulated in Venables & Ripley, Modern
Applied Statistics with S, data set ``npk`` (from memory): the eight treatment
combinations run three times in six blocks of four plots, each block holding one
half of the 2^3 split by the sign of the N x P x K interaction, so that
interaction is confounded with blocks. The yields here are generated (seeded):
the check is on the model-matrix columns, which depend on the layout only.

Block columns are sum-to-zero (effects) coded: +1 in their block, -1 in the
first block, 0 elsewhere (common practice; the README's coding of blocks). The
rebuilt column is the text's and the JSON's combination of those columns and
must equal the N:P:K column to 1e-9.
"""
from __future__ import annotations

import itertools
import re

import numpy as np
import pandas as pd
import pytest

from tradeoff.derive.load import study_from_dict
from tradeoff.model.dependence import combination_text, find_aliases
from tradeoff.model.study_fit import fit_study
from tradeoff.report.fit_text import fit_text

# which half of the 2^3 (sign of N x P x K in -1/+1 coding) each block holds
BALANCED = {1: -1, 2: 1, 3: -1, 4: 1, 5: 1, 6: -1}
UNBALANCED = {1: -1, 2: -1, 3: -1, 4: 1, 5: -1, 6: 1}  # four blocks of one half


def _runs(halves: dict, seed: int = 1937) -> pd.DataFrame:
    corners = np.array(list(itertools.product([-1, 1], repeat=3)))
    sign = corners.prod(axis=1)
    rng = np.random.default_rng(seed)
    rows = []
    for block, half in halves.items():
        for n, p, k in corners[sign == half][rng.permutation(4)]:
            rows.append({"block": block, "N": int(n > 0), "P": int(p > 0),
                         "K": int(k > 0)})
    t = pd.DataFrame(rows)
    t["yield"] = (55 + 3 * t["N"] - 0.5 * t["P"] - 2 * t["K"]
                  + t["block"].map({b: rng.normal(0, 2) for b in halves})
                  + rng.normal(0, 1, len(t)))
    t.insert(0, "run", np.arange(1, len(t) + 1))
    return t


def _fit(t: pd.DataFrame):
    spec = {"study": {"name": "npk layout", "data": "runs.csv", "model": "full"},
            "factors": [{"name": n, "low": 0, "high": 1} for n in "NPK"],
            "responses": [{"name": "yield", "goal": "maximize", "lower": 50,
                           "upper": 65}]}
    study = study_from_dict(spec, data_bytes=t.to_csv(index=False).encode())
    return fit_study(study)


def _columns(t: pd.DataFrame) -> dict:
    """Model-matrix columns written out: coded factors, products, effect-coded blocks."""
    x = {n: 2.0 * t[n].to_numpy() - 1.0 for n in "NPK"}
    cols = {"intercept": np.ones(len(t)), **x}
    for r in (2, 3):
        for combo in itertools.combinations("NPK", r):
            cols[":".join(combo)] = np.prod([x[n] for n in combo], axis=0)
    first = t["block"].to_numpy() == 1
    for b in sorted(t["block"].unique())[1:]:
        col = (t["block"].to_numpy() == b).astype(float)
        col[first] = -1.0
        cols[f"block[{b}]"] = col
    return cols


def _parse(text: str) -> dict:
    """``block[2] - block[3] + 1/3*block[4]`` -> {label: coefficient}."""
    out = {}
    for sign, size, label in re.findall(r"([+-]?)\s*(?:([0-9./eE]+)\*)?([A-Za-z][^\s]*)",
                                        text):
        num, _, den = (size or "1").partition("/")
        out[label] = (-1.0 if sign == "-" else 1.0) * float(num) / float(den or 1)
    return out


@pytest.mark.parametrize("halves", [BALANCED, UNBALANCED])
def test_confounded_interaction_is_rebuilt_from_its_signed_combination(halves):
    t = _runs(halves)
    fit = _fit(t)
    report = fit.report()["responses"]["yield"]
    cols = _columns(t)
    target = cols["N:P:K"]
    # the JSON contract: {term: [{"term": ..., "coef": ...}]}
    pairs = report["aliases"]["N:P:K"]
    assert all(set(p) == {"term", "coef"} for p in pairs)
    rebuilt = sum(p["coef"] * cols[p["term"]] for p in pairs)
    np.testing.assert_allclose(rebuilt, target, atol=1e-9)
    # the printed combination rebuilds it too
    line = next(x for x in fit_text(fit.report()).splitlines() if "aliases" in x)
    printed = line.split("N:P:K = ", 1)[1].split(";")[0]
    rebuilt = sum(c * cols[label] for label, c in _parse(printed).items())
    np.testing.assert_allclose(rebuilt, target, atol=1e-9)
    assert "-" in printed  # the true relation has minus signs (issue 24)


def test_balanced_halves_give_plus_and_minus_one():
    # three blocks of each half: N:P:K = sum over blocks of its sign there, which in
    # effect coding is +-1 per block column (block 1's sign is minus their sum)
    fit = _fit(_runs(BALANCED))
    combo = fit.models["yield"].aliases_["N:P:K"]
    assert combo == {f"block[{b}]": float(s) for b, s in BALANCED.items() if b > 1}


def test_combination_text_signs_and_sizes():
    assert combination_text({"a": 1.0, "b": -1.0, "c": 0.5}) == "a - b + 1/2*c"
    assert combination_text({"a": -1.0, "b": 2.25}) == "-a + 9/4*b"
    assert combination_text({"a": -0.333333333333}) == "-1/3*a"
    assert combination_text({"a": 0.123456}) == "0.1235*a"
    assert combination_text({}) == "0"


def test_find_aliases_gives_coefficients_that_rebuild_any_dependent_column():
    # an independent check on generated columns: a column built as a known
    # combination of earlier ones comes back with those coefficients
    rng = np.random.default_rng(5)
    A = rng.normal(size=(12, 3))
    M = np.column_stack([A, A @ np.array([2.0, -0.5, 0.0]), rng.normal(size=12)])

    class T:
        def __init__(self, label):
            self.label = label

    terms = [T(x) for x in ("a", "b", "c", "d", "e")]
    keep, aliases = find_aliases(M, terms)
    assert keep.tolist() == [True, True, True, False, True]
    assert aliases == {"d": {"a": 2.0, "b": -0.5}}
