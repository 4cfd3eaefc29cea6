"""Categorical factors with three or more levels: sum-to-zero coding, whole-term
tests, reduction, derived last levels, level means; checked against statsmodels
``C(x, Sum)`` and a published two-way ANOVA."""
from pathlib import Path

import numpy as np
import pandas as pd
import pytest

from tradeoff import fit_response, load_study, optimize
from tradeoff.errors import DataError, ModelError
from tradeoff.model.terms import model_matrix, model_terms

DATA = Path(__file__).resolve().parents[1] / "data"
WARP = DATA / "warp_breaks_1950.toml"


@pytest.fixture(scope="module")
def warp():
    return load_study(WARP)


@pytest.fixture(scope="module")
def reference(warp):
    import statsmodels.formula.api as smf
    from statsmodels.stats.anova import anova_lm

    data = warp.runs.copy()
    # the study's level order (patsy's Sum leaves out the last category)
    data["tension"] = pd.Categorical(data["tension"], categories=["L", "M", "H"])
    fit = smf.ols("breaks ~ C(wool, Sum) * C(tension, Sum)", data=data).fit()
    return fit, anova_lm(fit, typ=3)


def test_columns_are_sum_to_zero_and_labelled():
    # patsy's Sum contrast for levels L, M, H: L -> (1, 0), M -> (0, 1), H -> (-1, -1)
    terms, _ = model_terms("interactions", ["sugar", "flour"],
                           levels=[None, ("oat", "rice", "spelt")])
    assert [t.label for t in terms] == ["intercept", "sugar", "flour[oat]", "flour[rice]",
                                        "sugar:flour[oat]", "sugar:flour[rice]"]
    assert [t.group for t in terms[2:]] == ["flour", "flour", "sugar:flour", "sugar:flour"]
    X = np.array([[0.5, 0.0], [0.5, 1.0], [0.5, 2.0]])
    M = model_matrix(X, terms)
    assert M[:, 2:4].tolist() == [[1, 0], [0, 1], [-1, -1]]
    assert M[:, 4:].tolist() == [[0.5, 0], [0, 0.5], [-0.5, -0.5]]
    two, _ = model_terms(["flour:film"], ["flour", "film"],
                         levels=[("oat", "rice", "spelt"), ("pe", "pp", "pet")])
    assert [t.label for t in two[1:]] == ["flour[oat]:film[pe]", "flour[oat]:film[pp]",
                                          "flour[rice]:film[pe]", "flour[rice]:film[pp]"]
    with pytest.raises(ModelError, match="categorical, so it has no square"):
        model_terms(["flour^2"], ["flour"], levels=[("a", "b", "c")])
    with pytest.raises(ModelError, match="name the whole factor 'flour'"):
        model_terms(["flour[oat]"], ["flour"], levels=[("oat", "b", "c")])
    quad, _ = model_terms("quadratic", ["x", "flour"], n_settings=[3, 3],
                          levels=[None, ("a", "b", "c")])
    assert "flour^2" not in {t.label for t in quad} and "x^2" in {t.label for t in quad}


def test_fit_matches_statsmodels_sum_coding(warp, reference):
    fit, _ = reference
    model = fit_response(warp, "breaks")
    coef = dict(zip(model.terms_, model.coef_))
    se = dict(zip(model.terms_, model.std_errors_))
    T = "C(tension, Sum)"
    # wool is a two-level factor coded A = -1, B = +1; patsy's Sum codes A = +1,
    # so its columns change sign.
    pairs = {"intercept": ("Intercept", 1), "wool": ("C(wool, Sum)[S.A]", -1),
             "tension[L]": (f"{T}[S.L]", 1), "tension[M]": (f"{T}[S.M]", 1),
             "wool:tension[L]": (f"C(wool, Sum)[S.A]:{T}[S.L]", -1),
             "wool:tension[M]": (f"C(wool, Sum)[S.A]:{T}[S.M]", -1)}
    for ours, (theirs, sign) in pairs.items():
        assert coef[ours] == pytest.approx(sign * fit.params[theirs], abs=1e-10)
        assert se[ours] == pytest.approx(fit.bse[theirs], rel=1e-10)
    # the last level, derived: minus the sum of the others, with its own error
    derived = {d["term"]: d for d in model.derived_coefficients_}
    test = fit.t_test(f"-{T}[S.L] - {T}[S.M] = 0")
    assert derived["tension[H]"]["estimate"] == pytest.approx(float(test.effect[0]))
    assert derived["tension[H]"]["std_error"] == pytest.approx(float(test.sd[0, 0]))
    assert derived["tension[H]"]["p"] == pytest.approx(float(test.pvalue))


def test_effects_column_agrees_with_its_wording(warp, reference):
    # statsmodels C(tension, Sum) (levels L, M, H): [S.L] is L's deviation from the
    # average over tensions. The effect of a level alone is that deviation (the
    # coefficient); wool's effect is the B - A change (twice its coefficient); a
    # level crossed with wool is how much wool's B - A change at that tension
    # differs from its average over tensions (twice the coefficient).
    fit, _ = reference
    model = fit_response(warp, "breaks")
    eff = dict(zip(model.terms_, model.effects_))
    T, W = "C(tension, Sum)", "C(wool, Sum)[S.A]"
    assert eff["tension[L]"] == pytest.approx(fit.params[f"{T}[S.L]"], abs=1e-10)
    assert eff["tension[M]"] == pytest.approx(fit.params[f"{T}[S.M]"], abs=1e-10)
    assert eff["wool"] == pytest.approx(-2 * fit.params[W], abs=1e-10)
    assert eff["wool:tension[L]"] == pytest.approx(-2 * fit.params[f"{W}:{T}[S.L]"],
                                                   abs=1e-10)
    # the same, written out from the cell means of the balanced layout (pandas)
    cells = warp.runs.groupby(["wool", "tension"])["breaks"].mean()
    level = warp.runs.groupby("tension")["breaks"].mean()
    swing = cells["B"] - cells["A"]  # wool's B - A change at each tension
    assert eff["tension[L]"] == pytest.approx(level["L"] - level.mean(), abs=1e-10)
    assert eff["wool"] == pytest.approx(swing.mean(), abs=1e-10)
    assert eff["wool:tension[L]"] == pytest.approx(swing["L"] - swing.mean(), abs=1e-10)
    derived = {d["term"]: d for d in model.derived_coefficients_}
    assert derived["tension[H]"]["effect"] == pytest.approx(level["H"] - level.mean())
    assert derived["wool:tension[H]"]["effect"] == pytest.approx(swing["H"] - swing.mean(),
                                                                 abs=1e-10)


def test_anova_tests_each_term_as_a_whole(warp, reference):
    _, table = reference
    rows = fit_response(warp, "breaks").anova_["terms"]
    T = "C(tension, Sum)"
    for ours, theirs in (("wool", "C(wool, Sum)"), ("tension", T),
                         ("wool:tension", f"C(wool, Sum):{T}")):
        assert rows[ours]["df"] == table.loc[theirs, "df"]
        assert rows[ours]["ss"] == pytest.approx(table.loc[theirs, "sum_sq"])
        assert rows[ours]["f"] == pytest.approx(table.loc[theirs, "F"])
        assert rows[ours]["p"] == pytest.approx(table.loc[theirs, "PR(>F)"])
    # the published two-way ANOVA of these data (balanced): F = 3.765 (wool),
    # 8.498 (tension), 4.189 (interaction) (from memory)
    assert [round(rows[t]["f"], 3) for t in ("wool", "tension", "wool:tension")] == \
        [3.765, 8.498, 4.189]


def test_reduction_removes_a_term_as_a_whole(warp):
    model = fit_response(warp, "breaks", reduce=True, alpha=0.01)
    # p = 0.021 for the interaction and then 0.058 for wool, both above 0.01
    assert list(model.reduction_) == ["wool:tension", "wool"]
    assert model.terms_ == ["intercept", "tension[L]", "tension[M]"]
    kept = fit_response(warp, "breaks", reduce=True, alpha=0.01, keep=["wool:tension"])
    assert kept.reduction_ == {}
    assert "wool:tension[M]" in kept.terms_


def test_level_means_are_the_cell_average(warp):
    # balanced layout: each tension's mean at the average wool is its plain mean
    # (independent computation with pandas)
    model = fit_response(warp, "breaks")
    means = {(r["factor"], r["level"]): r for r in model.report()["level_means"]}
    plain = warp.runs.groupby("tension")["breaks"].mean()
    for level in ("L", "M", "H"):
        assert means[("tension", level)]["predicted"] == pytest.approx(plain[level])
        assert means[("tension", level)]["ci_low"] < plain[level] < \
            means[("tension", level)]["ci_high"]


def test_search_tries_every_level(warp):
    # fewest breaks: the best cell of the interaction model is its best cell mean
    result = optimize(warp, top=1, seed=1)
    cells = warp.runs.groupby(["wool", "tension"])["breaks"].mean()
    wool, tension = cells.idxmin()
    assert result.best.settings == {"wool": wool, "tension": tension}
    assert result.best.predictions["breaks"] == pytest.approx(cells.min())
    # a level prints as its name, with no coded number (coded +2 meant nothing)
    lines = result.text().splitlines()
    assert f"  tension{'':<11} {tension:>12}" in lines
    assert f"  wool{'':<14} {wool:>12}" in lines
    assert not any("coded" in line for line in lines if line.startswith("  tension"))


def test_a_cell_that_is_not_a_level_names_row_and_nearest(tmp_path):
    text = WARP.read_text().replace('data = "warp_breaks_1950.csv"', 'data = "runs.csv"')
    (tmp_path / "s.toml").write_text(text)
    rows = (DATA / "warp_breaks_1950.csv").read_text().splitlines()
    rows[4] = rows[4].replace(",L,", ",l,")
    (tmp_path / "runs.csv").write_text("\n".join(rows) + "\n")
    with pytest.raises(DataError, match=r"row 5, column 'tension': found 'l', expected "
                                        r"one of the levels \['L', 'M', 'H'\] "
                                        r"\(nearest: 'L'\)"):
        load_study(tmp_path / "s.toml")


def test_fit_text_shows_whole_terms_last_levels_and_means(capsys):
    from tradeoff.cli import main

    assert main(["fit", str(WARP)]) == 0
    text = capsys.readouterr().out
    assert "tension[H]" in text and "(last level: minus the sum of the others)" in text
    row = next(line for line in text.splitlines() if "(whole term)" in line
               and line.strip().startswith("tension "))
    assert "8.5" in row  # F = 8.498 on 2 df (the published two-way ANOVA, from memory)
    assert "tension L 36.39" in text  # plain mean of the 18 low-tension looms
    # the effect column's wording above its header
    assert "for a level alone (tension[L]),\n  its deviation from the average over the " \
        "levels" in text


def test_check_lists_each_level(capsys):
    from tradeoff.cli import main

    assert main(["check", str(WARP)]) == 0
    text = capsys.readouterr().out
    assert "tension              categorical: L (18 runs), M (18 runs), H (18 runs)" in text
    assert "A (coded -1, 27 runs)" in text


def test_level_means_of_a_blend_hold_it_at_its_centroid():
    # The flour demo: three flours (40-70, 15-45, 10-45 % after tightening, total
    # 100), a Scheffe quadratic crossed with bake temperature and a three-level
    # hydrocolloid. Each level's mean is the prediction at the overall centroid
    # of the extreme vertices (McLean & Anderson (1966); common practice), bake
    # temperature mid-way. Reference: statsmodels OLS on the columns written out.
    import itertools

    import statsmodels.formula.api as smf

    from tradeoff.study.demo import demo_study_path

    study = load_study(demo_study_path().with_name("flour_blend.toml"))
    model = fit_response(study, "specific_volume")
    lows, highs, total = np.array([40.0, 15.0, 10.0]), np.array([70.0, 45.0, 45.0]), 100.0
    vertices = set()
    for free in range(3):  # two components at a bound, the third makes up the rest
        others = [j for j in range(3) if j != free]
        for a, b in itertools.product(*[(lows[j], highs[j]) for j in others]):
            x = np.empty(3)
            x[others] = a, b
            x[free] = total - a - b
            if lows[free] - 1e-9 <= x[free] <= highs[free] + 1e-9:
                vertices.add(tuple(np.round(x, 9)))
    centroid = np.mean(sorted(vertices), axis=0)

    runs = study.runs.copy()
    scale = total - lows.sum()
    for name, low in zip(("rice_flour", "sorghum_flour", "tapioca_starch"), lows):
        runs[name[0]] = (runs[name] - low) / scale  # L-pseudo-component shares
    runs["temp"] = (runs["bake_temp"] - 190.0) / 15.0
    runs["h"] = pd.Categorical(runs["hydrocolloid"], categories=["psyllium", "xanthan", "guar"])
    fit = smf.ols("specific_volume ~ 0 + r + s + t + r:s + r:t + s:t + r:temp + s:temp"
                  " + t:temp + r:C(h, Sum) + s:C(h, Sum) + t:C(h, Sum)", data=runs).fit()
    at = pd.DataFrame({"r": (centroid[0] - 40) / scale, "s": (centroid[1] - 15) / scale,
                       "t": (centroid[2] - 10) / scale, "temp": 0.0,
                       "h": pd.Categorical(["psyllium", "xanthan", "guar"],
                                           categories=["psyllium", "xanthan", "guar"])})
    expected = fit.get_prediction(at).summary_frame(alpha=0.05)
    means = [r for r in model.report()["level_means"] if r["factor"] == "hydrocolloid"]
    assert [r["level"] for r in means] == ["psyllium", "xanthan", "guar"]
    assert np.allclose([r["predicted"] for r in means], expected["mean"], rtol=1e-9)
    assert np.allclose([r["ci_low"] for r in means], expected["mean_ci_lower"], rtol=1e-9)
