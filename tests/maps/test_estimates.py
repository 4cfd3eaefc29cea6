"""Effects with their margins (the effects figure's table), checked against Lenth (1989)
worked by hand and against statsmodels' confidence intervals."""
from __future__ import annotations

import itertools

import numpy as np
import pytest
from scipy import stats

from tradeoff import load_study
from tradeoff.maps.estimates import VERDICTS, effect_estimates, effects_note
from tradeoff.model.fit import ResponseModel

from conftest import DEMO

# Montgomery, Design and Analysis of Experiments (Example 6.2, the unreplicated 2^4
# filtration-rate experiment), responses in standard order (from memory)
FILTRATION = [45, 71, 48, 65, 68, 60, 80, 65, 43, 100, 45, 104, 75, 86, 70, 96]


def _factorial(k: int) -> np.ndarray:
    # standard order: the first factor changes fastest
    return np.array([c[::-1] for c in itertools.product([-1.0, 1.0], repeat=k)])


def test_saturated_margins_are_lenths():
    m = ResponseModel(terms="full", factor_names=list("ABCD")).fit(_factorial(4),
                                                                   FILTRATION)
    est = effect_estimates(m).set_index("term")
    # Lenth (1989), by hand from the 15 effects: s0 = 1.5 median|c|, PSE = 1.5 median of
    # the |c| below 2.5 s0; alone t(0.975, m/3) PSE, together t((1 + 0.95^(1/m))/2, m/3) PSE
    c = np.abs(est["effect"].to_numpy())
    s0 = 1.5 * np.median(c)
    pse = 1.5 * np.median(c[c < 2.5 * s0])
    alone = stats.t.ppf(0.975, 15 / 3) * pse
    together = stats.t.ppf((1 + 0.95 ** (1 / 15)) / 2, 15 / 3) * pse
    assert np.allclose(est["alone_high"] - est["effect"], alone, rtol=1e-12)
    assert np.allclose(est["effect"] - est["together_low"], together, rtol=1e-12)
    # Montgomery reports PSE 2.625, ME 6.75 and SME 13.72 for these data (from memory)
    assert alone == pytest.approx(6.75, abs=0.005)
    assert together == pytest.approx(13.72, abs=0.03)
    # ... and finds A, C, D, AC and AD active (from memory): C (9.875) only alone
    standing = set(est.index[est["verdict"] != VERDICTS[2]])
    assert standing == {"A", "C", "D", "A:C", "A:D"}
    assert est.at["C", "verdict"] == "stands out alone"
    assert est.at["A", "verdict"] == "stands out among all terms"
    assert set(est["basis"]) == {"lenth"}
    assert list(est.index[:2]) == ["A", "A:C"]  # largest first: 21.625, -18.125


def test_margins_with_residual_df_are_statsmodels_intervals():
    import statsmodels.formula.api as smf

    study = load_study(DEMO)
    from tradeoff.model.study_fit import fit_study

    model = fit_study(study).models["liking"]
    frame = study.coded().copy()
    frame["y"] = study.runs["liking"].to_numpy(float)
    ols = smf.ols("y ~ (protein + glycerol + binder + mix_temp) ** 2", data=frame).fit()
    est = effect_estimates(model).set_index("term")
    ci = ols.conf_int(alpha=0.05)
    m = len(est)
    sidak = ols.conf_int(alpha=1 - 0.95 ** (1 / m))  # all m terms at once (Sidak)
    for term in est.index:
        # an effect is twice its coded coefficient (Box, Hunter & Hunter 2005, ch. 5),
        # so its interval is twice the coefficient's
        assert est.at[term, "alone_low"] == pytest.approx(2 * ci.at[term, 0], rel=1e-9)
        assert est.at[term, "alone_high"] == pytest.approx(2 * ci.at[term, 1], rel=1e-9)
        assert est.at[term, "together_low"] == pytest.approx(2 * sidak.at[term, 0],
                                                             rel=1e-9)
        excludes_zero = ci.at[term, 0] > 0 or ci.at[term, 1] < 0
        assert (est.at[term, "verdict"] != VERDICTS[2]) == excludes_zero
        # a term standing out alone has a p-value below 5 % (the same t test)
        assert excludes_zero == (ols.pvalues[term] < 0.05)
    assert set(est["basis"]) == {"t"}


def test_note_names_the_terms_that_stand_out():
    m = ResponseModel(terms="full", factor_names=list("ABCD")).fit(_factorial(4),
                                                                   FILTRATION)
    note = effects_note(effect_estimates(m), 0.95)
    assert "Lenth's 1989 method" in note and "all 15 terms" in note
    assert "only when looked at alone: C." in note
    # no margins are named with a two-letter code
    assert " ME" not in note and "SME" not in note


def test_left_out_terms_are_not_shown():
    m = ResponseModel(terms="full", factor_names=list("ABCD")).fit(_factorial(4),
                                                                   FILTRATION)
    est = effect_estimates(m, leave_out={"A"})
    assert "A" not in set(est["term"]) and len(est) == 14


def test_effects_are_named_by_their_labels():
    # common practice: an interaction reads as its factors joined by a times sign
    from tradeoff.maps.effects_picture import term_title

    labels = {"protein": "Protein content", "mix_temp": "Mixing temperature",
              "binder": "Binder type"}
    assert term_title("protein", labels) == "Protein content"
    assert term_title("protein:mix_temp", labels) == "Protein content \u00d7 Mixing temperature"
    assert term_title("protein^2", labels) == "Protein content\u00b2"
    assert term_title("binder[date paste]:protein", labels) == \
        "Binder type = date paste \u00d7 Protein content"
    assert term_title("other", labels) == "other"
