"""Blocks in the per-response models (core/models.py, core/anova.py, core/study.py).

References: statsmodels OLS with sum-to-zero (effects) coded blocks,
``C(block, Sum(omit=0))``, and its ``anova_lm`` (typ=1 with blocks first for
the sequential block sum of squares, typ=2 for the block sum of squares
adjusted for the factor terms); lack of fit against the cell-means model
(one mean per setting and block) compared with ``anova_lm`` of the two
nested fits. Independent checks: a constant shift added to one block
leaves every factor coefficient unchanged (common practice: that is what a
block term is for).
"""
from __future__ import annotations

import itertools
import json

import numpy as np
import pandas as pd
import pytest

from tradeoff.cli import main
from tradeoff.errors import DataError, ModelError, StudyError
from tradeoff.maps.tables import effect_table
from tradeoff.model.fit import ResponseModel
from tradeoff.model.study_fit import fit_response, fit_study
from tradeoff.derive.load import load_study

NAMES = ["a", "b", "c", "d"]
BLOCK = "C(block, Sum(omit=0))"  # omit the first level: columns block[2], ... as ours


def factorial(k: int) -> np.ndarray:
    return np.array(list(itertools.product([-1.0, 1.0], repeat=k)))[:, ::-1]


def blocked_factorial(centre: int = 2) -> tuple[np.ndarray, np.ndarray]:
    """2^4 in two blocks confounded with ABCD (Box, Hunter & Hunter 2005,
    blocking by the highest-order interaction), ``centre`` centre runs per block."""
    X = factorial(4)
    block = np.where(np.prod(X, axis=1) < 0, "1", "2")
    if centre:
        X = np.vstack([X, np.zeros((2 * centre, 4))])
        block = np.concatenate([block, ["1"] * centre + ["2"] * centre])
    return X, block


def face_ccd() -> tuple[np.ndarray, np.ndarray]:
    """Face-centred composite in 3 factors: 2^3 + 3 centre runs as block 1, the 6
    axial runs + 2 centre runs added later as block 2 (as ``--augment face`` does)."""
    first = np.vstack([factorial(3), np.zeros((3, 3))])
    axial = np.vstack([s * np.eye(3)[j] for j in range(3) for s in (-1.0, 1.0)])
    second = np.vstack([axial, np.zeros((2, 3))])
    return np.vstack([first, second]), np.array(["1"] * 11 + ["2"] * 8)


def frame(X, block, y, names):
    data = pd.DataFrame(X, columns=names)
    data["block"] = block
    data["y"] = y
    return data


def ref_name(label: str) -> str:
    if label == "intercept":
        return "Intercept"
    if label.startswith("block["):
        return f"{BLOCK}[S.{label[6:-1]}]"
    if label.endswith("^2"):
        return f"I({label[:-2]} ** 2)"
    return label


def check_against_statsmodels(m, data, formula, *, block_first_formula):
    import statsmodels.formula.api as smf
    from statsmodels.stats.anova import anova_lm

    ref = smf.ols(formula, data).fit()
    tol = dict(rtol=1e-8, atol=1e-10)
    names = [ref_name(t) for t in m.terms_]
    assert sorted(names) == sorted(ref.params.index)
    np.testing.assert_allclose(m.coef_, ref.params[names], **tol)
    np.testing.assert_allclose(m.std_errors_, ref.bse[names], **tol)
    np.testing.assert_allclose(m.p_values_, ref.pvalues[names], **tol)
    np.testing.assert_allclose(m.r2_, ref.rsquared, **tol)
    assert m.residual_df_ == ref.df_resid
    # block sum of squares adjusted for every factor term (typ=2) ...
    typ2 = anova_lm(ref, typ=2)
    np.testing.assert_allclose(m.blocks_["ss"], typ2.loc[BLOCK, "sum_sq"], **tol)
    np.testing.assert_allclose(m.blocks_["f"], typ2.loc[BLOCK, "F"], **tol)
    np.testing.assert_allclose(m.blocks_["p"], typ2.loc[BLOCK, "PR(>F)"], **tol)
    # ... and entered first (typ=1), as in the ANOVA rows that add up to the total
    typ1 = anova_lm(smf.ols(block_first_formula, data).fit(), typ=1)
    a = m.anova_
    np.testing.assert_allclose(a["blocks"]["ss"], typ1.loc[BLOCK, "sum_sq"], **tol)
    assert a["blocks"]["df"] == typ1.loc[BLOCK, "df"]
    np.testing.assert_allclose(a["model"]["ss"], typ1["sum_sq"].iloc[1:-1].sum(), **tol)
    np.testing.assert_allclose(a["residual"]["ss"], ref.ssr, **tol)
    np.testing.assert_allclose(a["blocks"]["ss"] + a["model"]["ss"] + a["residual"]["ss"],
                               a["total"]["ss"], **tol)
    # effects of every block (the first is minus the sum of the others) and their SEs
    levels = m.blocks_["levels"]
    L = np.vstack([-np.ones(len(levels) - 1), np.eye(len(levels) - 1)])
    cols = [f"{BLOCK}[S.{lev}]" for lev in levels[1:]]
    beta = ref.params[cols].to_numpy()
    cov = ref.cov_params().loc[cols, cols].to_numpy()
    np.testing.assert_allclose(list(m.blocks_["effects"].values()), L @ beta, **tol)
    np.testing.assert_allclose(list(m.blocks_["std_errors"].values()),
                               np.sqrt(np.diag(L @ cov @ L.T)), **tol)
    return ref


def test_blocked_factorial_matches_statsmodels():
    X, block = blocked_factorial(centre=2)
    rng = np.random.default_rng(11)
    y = (20 + X @ [3.0, -2.0, 1.0, 0.5] + 1.5 * X[:, 0] * X[:, 1]
         + np.where(block == "2", 2.5, 0.0) + rng.normal(0, 0.8, len(X)))
    m = ResponseModel(terms="interactions", factor_names=NAMES).fit(X, y, block=block)
    assert m.terms_[:2] == ["intercept", "block[2]"]
    pairs = " + ".join(f"{p}:{q}" for p, q in itertools.combinations(NAMES, 2))
    formula = f"y ~ {BLOCK} + a + b + c + d + {pairs}"
    check_against_statsmodels(m, frame(X, block, y, NAMES), formula,
                              block_first_formula=formula)
    # orthogonal blocking: the adjusted and the sequential block SS agree
    np.testing.assert_allclose(m.blocks_["ss"], m.anova_["blocks"]["ss"], rtol=1e-10)
    # pure error within blocks: the 2 centre runs of each block, 1 df each
    pe = sum(np.var(y[(block == b) & (X[:, 0] == 0)], ddof=0) * 2 for b in "12")
    np.testing.assert_allclose(m.anova_["pure_error"]["ss"], pe, rtol=1e-10)
    assert m.anova_["pure_error"]["df"] == 2
    assert "blocks" in m.report() and m.report()["blocks"]["confounded"] == {}
    # blocks are not factor effects: not in the effect table nor effects_
    assert "block[2]" not in set(effect_table(m)["term"])
    assert np.isnan(m.effects_[m.terms_.index("block[2]")])


def test_face_centred_ccd_as_second_block_matches_statsmodels():
    import statsmodels.formula.api as smf
    from statsmodels.stats.anova import anova_lm

    names = ["a", "b", "c"]
    X, block = face_ccd()
    rng = np.random.default_rng(5)
    y = (50 + X @ [4.0, -3.0, 2.0] - 5 * X[:, 0] ** 2 - 2 * X[:, 2] ** 2
         + 2 * X[:, 0] * X[:, 1] + np.where(block == "2", -3.0, 0.0)
         + rng.normal(0, 1.0, len(X)))
    m = ResponseModel(terms="quadratic", factor_names=names).fit(X, y, block=block)
    body = "a + b + c + a:b + a:c + b:c + I(a ** 2) + I(b ** 2) + I(c ** 2)"
    data = frame(X, block, y, names)
    ref = check_against_statsmodels(m, data, f"y ~ {BLOCK} + {body}",
                                    block_first_formula=f"y ~ {BLOCK} + {body}")
    # Lack of fit against the cell-means model, one mean per (settings, block):
    # centre runs of different blocks are not replicates of each other.
    data["cell"] = [f"{tuple(x)}|{b}" for x, b in zip(X, block)]
    cells = smf.ols("y ~ C(cell)", data).fit()
    lof_ref = anova_lm(ref, cells)
    lof, pe = m.anova_["lack_of_fit"], m.anova_["pure_error"]
    assert pe["df"] == 2 + 1 == cells.df_resid
    np.testing.assert_allclose(pe["ss"], cells.ssr, rtol=1e-9)
    assert lof["df"] == lof_ref["df_diff"].iloc[1]
    np.testing.assert_allclose(lof["f"], lof_ref["F"].iloc[1], rtol=1e-8)
    np.testing.assert_allclose(lof["p"], lof_ref["Pr(>F)"].iloc[1], rtol=1e-8)
    assert m.anova_["curvature"] is None  # axial runs: not a two-level design


def test_shift_in_one_block_leaves_factor_coefficients_unchanged():
    """Independent check: adding c to every run of block 2 moves only the block
    effects (by +-c/2 with two blocks) and the average block (the intercept, by
    c/2), not the factor terms nor the residuals."""
    X, block = face_ccd()
    rng = np.random.default_rng(8)
    y = 10 + X @ [1.0, 2.0, -1.0] + X[:, 1] ** 2 + rng.normal(0, 0.3, len(X))
    fit = lambda v: ResponseModel(terms="quadratic", factor_names=["a", "b", "c"]).fit(
        X, v, block=block)
    m0, m1 = fit(y), fit(y + np.where(block == "2", 7.0, 0.0))
    factor = [i for i, t in enumerate(m0.terms_) if t != "intercept" and "[" not in t]
    assert len(factor) == 9
    np.testing.assert_allclose(m1.coef_[factor], m0.coef_[factor], atol=1e-10)
    np.testing.assert_allclose(m1.coef_[0] - m0.coef_[0], 3.5, atol=1e-10)
    np.testing.assert_allclose(m1.residuals_, m0.residuals_, atol=1e-10)
    shift = np.array(list(m1.blocks_["effects"].values())) - \
        np.array(list(m0.blocks_["effects"].values()))
    np.testing.assert_allclose(shift, [-3.5, 3.5], atol=1e-10)
    Xn = np.random.default_rng(1).uniform(-1, 1, (7, 3))
    np.testing.assert_allclose(m1.predict(Xn) - m0.predict(Xn), 3.5, atol=1e-10)


def test_predictions_are_for_the_average_block():
    """predict / intervals / predictive take (n, k) settings; the block columns are 0:
    the mean of the per-block predictions, with statsmodels' interval for that row."""
    import statsmodels.api as sm
    X, block = face_ccd()
    rng = np.random.default_rng(2)
    y = 3 + X @ [1.0, -1.0, 0.5] - X[:, 0] ** 2 + np.where(block == "2", 1.0, -0.2) \
        + rng.normal(0, 0.2, len(X))
    m = ResponseModel(terms="quadratic", factor_names=["a", "b", "c"]).fit(X, y, block=block)
    bcol = m.terms_.index("block[2]")

    def columns(Z, b):
        full = np.column_stack([np.ones(len(Z)), Z, Z[:, 0] * Z[:, 1], Z[:, 0] * Z[:, 2],
                                Z[:, 1] * Z[:, 2], Z ** 2])
        return np.insert(full, bcol, b, axis=1)

    code = np.where(block == "2", 1.0, -1.0)
    ref = sm.OLS(y, columns(X, code)).fit()
    np.testing.assert_allclose(m.coef_, ref.params, rtol=1e-9, atol=1e-12)
    Z = np.random.default_rng(4).uniform(-1, 1, (9, 3))
    frame_ = ref.get_prediction(columns(Z, 0.0)).summary_frame(alpha=0.05)
    table = m.intervals(Z)
    np.testing.assert_allclose(table["predicted"], frame_["mean"], rtol=1e-9)
    np.testing.assert_allclose(table["ci_low"], frame_["mean_ci_lower"], rtol=1e-9)
    np.testing.assert_allclose(table["pi_high"], frame_["obs_ci_upper"], rtol=1e-9)
    per_block = [ref.predict(columns(Z, s)) for s in (-1.0, 1.0)]
    np.testing.assert_allclose(m.predict(Z), np.mean(per_block, axis=0), rtol=1e-9)
    mean, se, sigma, df = m.predictive(Z)
    assert mean.shape == se.shape == (9,) and df == ref.df_resid
    np.testing.assert_allclose(se, frame_["mean_se"], rtol=1e-9)
    np.testing.assert_allclose(m.predict(Z[0]), frame_["mean"].iloc[:1], rtol=1e-9)


def test_confounded_term_found_and_blocks_kept_out_of_lenth():
    """Unreplicated 2^4 in two blocks, 'full' model: a:b:c:d is the block contrast
    (Box, Hunter & Hunter 2005), so it is left out and named; the 14 other
    effects go to Lenth's method and the half-normal plot, the block does not."""
    from tradeoff.model.lenth import lenth

    X, block = blocked_factorial(centre=0)
    rng = np.random.default_rng(3)
    y = 5 + 2 * X[:, 0] - X[:, 2] + np.where(block == "2", 4.0, 0.0) + rng.normal(0, .3, 16)
    m = ResponseModel(terms="full", factor_names=NAMES).fit(X, y, block=block)
    assert m.blocks_["confounded"] == {"a:b:c:d": ["block[2]"]}
    assert "a:b:c:d" not in m.terms_ and "block[2]" in m.terms_
    assert any("'a:b:c:d' is confounded with the blocks" in w for w in m.warnings_)
    assert m.residual_df_ == 0 and m.lenth_.m == 14
    assert "block[2]" not in set(m.half_normal_["term"])
    effects = [2 * b for t, b in zip(m.terms_, m.coef_) if t not in ("intercept", "block[2]")]
    assert m.lenth_.pse == pytest.approx(lenth(effects).pse, rel=1e-12)
    # the block shift is recovered: block 2 sits 4 above block 1 (effects -2, +2),
    # blurred only by the noise
    assert list(m.blocks_["effects"]) == ["1", "2"]
    assert m.blocks_["effects"]["2"] == pytest.approx(2.0, abs=0.3)
    # reduction never drops the block, even when it is within Lenth's noise
    r = ResponseModel(terms="full", factor_names=NAMES, reduce=True).fit(
        X, y - np.where(block == "2", 4.0, 0.0), block=block)
    assert "block[2]" in r.terms_ and "block[2]" not in (r.reduction_ or {})
    with pytest.raises(ModelError, match="'block\\[2\\]' is a block term: blocks are always"):
        ResponseModel(terms="interactions", factor_names=NAMES, drop=["block[2]"]).fit(
            X, y, block=block)


def test_backward_elimination_keeps_the_blocks():
    X, block = blocked_factorial(centre=2)
    rng = np.random.default_rng(9)
    y = 1 + 3 * X[:, 0] + rng.normal(0, 1, len(X))  # no block shift at all
    m = ResponseModel(terms="interactions", factor_names=NAMES, reduce=True).fit(
        X, y, block=block)
    assert m.terms_[:2] == ["intercept", "block[2]"] and "a" in m.terms_
    assert len(m.reduction_) >= 5 and "block[2]" not in m.reduction_


def test_one_block_means_no_block_terms_and_no_message():
    X, _ = blocked_factorial(centre=2)
    y = np.random.default_rng(0).normal(size=len(X)) + X[:, 0]
    m = ResponseModel(terms="main", factor_names=NAMES).fit(X, y, block=["1"] * len(X))
    base = ResponseModel(terms="main", factor_names=NAMES).fit(X, y)
    assert m.terms_ == base.terms_ and m.blocks_ is None and "blocks" not in m.anova_
    np.testing.assert_allclose(m.coef_, base.coef_)
    assert m.warnings_ == base.warnings_
    with pytest.raises(ModelError, match="run 3 has no block"):
        ResponseModel(terms="main", factor_names=NAMES).fit(
            X, y, block=["1", "2", None] + ["1"] * (len(X) - 3))


def test_curvature_compares_centre_and_corners_within_blocks():
    """Two blocks each with their factorial half and their own centre runs: a block
    shift must not pose as curvature. Reference: OLS of y on the block indicators
    and a centre-run indicator (statsmodels), whose coefficient is the difference."""
    import statsmodels.api as sm
    X, block = blocked_factorial(centre=3)
    X, block = X[:-1], block[:-1]  # 3 centre runs in block 1, 2 in block 2: unbalanced
    rng = np.random.default_rng(6)
    y = 10 + X[:, 0] + np.where(block == "2", 5.0, 0.0) + rng.normal(0, 0.2, len(X))
    m = ResponseModel(terms="main", factor_names=NAMES).fit(X, y, block=block)
    centre = np.all(X == 0, axis=1).astype(float)
    B = np.column_stack([block == "1", block == "2"]).astype(float)
    ref = sm.OLS(y, np.column_stack([B, centre])).fit()
    c = m.anova_["curvature"]
    np.testing.assert_allclose(c["difference"], ref.params[-1], rtol=1e-9)
    assert abs(c["difference"]) < 1.0  # the 5-unit block shift is not in it


# ------------------------------------------------------------- study round trip


def _study(tmp_path, *, data="runs.csv", extra=""):
    text = (f'[study]\nname = "blocks"\ndata = "{data}"\nmodel = "interactions"\n{extra}'
            + "".join(f'[[factors]]\nname = "{c}"\nlow = 10\nhigh = 20\n' for c in NAMES)
            + '[[responses]]\nname = "y"\n')
    path = tmp_path / "blocks.toml"
    path.write_text(text, encoding="utf-8")
    return path


def _fill(sheet_path, truth, shift):
    sheet = pd.read_csv(sheet_path)
    coded = (sheet[NAMES].to_numpy(float) - 15.0) / 5.0
    sheet["y"] = truth(coded) + np.where(sheet["block"].astype(str) == "2", shift, 0.0)
    sheet.to_csv(sheet_path, index=False)
    return sheet


def test_round_trip_plan_in_two_blocks_recovers_the_shift(tmp_path, capsys):
    study_path = _study(tmp_path)
    assert main(["plan", str(study_path), "--blocks", "2", "--center", "2", "--seed", "4",
                 "--out", str(tmp_path / "runs.csv")]) == 0
    capsys.readouterr()
    rng = np.random.default_rng(12)
    truth = lambda Z: 30 + Z @ [2.0, -1.0, 0.5, 0.0] + 0.8 * Z[:, 0] * Z[:, 1] \
        + rng.normal(0, 0.05, len(Z))
    sheet = _fill(tmp_path / "runs.csv", truth, shift=6.0)
    assert sorted(sheet["block"].unique()) == [1, 2]
    study = load_study(study_path)
    assert study.block_column == "block"
    assert list(study.block_labels()) == [str(b) for b in sheet["block"]]
    m = fit_study(study).models["y"]
    assert m.blocks_["effects"]["2"] - m.blocks_["effects"]["1"] == pytest.approx(6.0,
                                                                              abs=0.1)
    coef = dict(zip(m.terms_, m.coef_))
    assert coef["a"] == pytest.approx(2.0, abs=0.05)
    assert coef["a:b"] == pytest.approx(0.8, abs=0.05)
    assert coef["intercept"] == pytest.approx(33.0, abs=0.05)  # the average block
    # the CLI reports the blocks in text and JSON
    assert main(["fit", str(study_path), "--json"]) == 0
    report = json.loads(capsys.readouterr().out)["responses"]["y"]
    assert report["blocks"]["levels"] == ["1", "2"] and "blocks" in report["anova"]
    assert main(["fit", str(study_path)]) == 0
    text = capsys.readouterr().out
    assert "  blocks  " in text and "blocks (block, 2): shift from the average block" in text


def test_round_trip_augment_as_new_block_recovers_the_shift(tmp_path, capsys):
    """A two-level study measured first, then ``--augment face`` adds axial and centre
    runs as block 2 made on another day 4 units higher; the quadratic fit with
    blocks recovers the shift and the curvature (no noise: exact)."""
    study_path = _study(tmp_path, extra='seed = 3\n')
    truth = lambda Z: 30 + Z @ [2.0, -1.0, 0.5, 1.0] - 3 * Z[:, 0] ** 2 + Z[:, 1] * Z[:, 2]
    assert main(["plan", str(study_path), "--center", "2", "--runs", "8",
                 "--out", str(tmp_path / "runs.csv")]) == 0
    first = _fill(tmp_path / "runs.csv", truth, shift=0.0)
    assert main(["plan", str(study_path), "--augment", "face",
                 "--out", str(tmp_path / "axial.csv")]) == 0
    capsys.readouterr()
    second = _fill(tmp_path / "axial.csv", truth, shift=4.0)
    assert set(second["block"]) == {2}
    pd.concat([first, second]).to_csv(tmp_path / "runs.csv", index=False)
    study = load_study(study_path)
    m = fit_response(study, "y", terms=["a", "b", "c", "d", "b:c", "a^2"])
    np.testing.assert_allclose(list(m.blocks_["effects"].values()), [-2.0, 2.0],
                               atol=1e-9)
    coef = dict(zip(m.terms_, m.coef_))
    np.testing.assert_allclose([coef["a"], coef["a^2"], coef["b:c"], coef["intercept"]],
                               [2.0, -3.0, 1.0, 32.0], atol=1e-9)


# ------------------------------------------------------------------ bad input


def _write(tmp_path, rows, *, header="run,block,a,b,c,d,y", extra=""):
    (tmp_path / "runs.csv").write_text(header + "\n" + "\n".join(rows) + "\n",
                                       encoding="utf-8")
    return _study(tmp_path, extra=extra)


# A 2^(4-1) fraction (d = abc) in standard order, a fastest: the first four runs
# (c low) in block 1, the last four (c high) in block 2, so c is confounded with
# the blocks on purpose.
ROWS = [f"{i + 1},{1 + (i >= 4)},{15 + 5 * a:g},{15 + 5 * b:g},{15 + 5 * c:g},"
        f"{15 + 5 * a * b * c:g},{i * i}" for i, (a, b, c) in enumerate(factorial(3))]


def test_blank_block_cell_names_file_row_and_column(tmp_path):
    rows = list(ROWS)
    rows[4] = rows[4].replace(",2,", ",,", 1)
    path = _write(tmp_path, rows)
    with pytest.raises(DataError, match=r"^runs.csv, row 6, column 'block': blank block: "
                                        r"every run needs its block"):
        load_study(path)


def test_blocks_key_names_the_column(tmp_path):
    rows = [r.replace(",1,", ",Mon,", 1).replace(",2,", ",Tue,", 1) for r in ROWS]
    path = _write(tmp_path, rows, header="run,day,a,b,c,d,y", extra='blocks = "day"\n')
    study = load_study(path)
    assert study.block_column == "day"
    assert list(study.block_labels()) == ["Mon"] * 4 + ["Tue"] * 4
    m = fit_study(study).models["y"]
    assert m.terms_[1] == "block[Tue]" and m.blocks_["column"] == "day"
    from tradeoff.study.writer import study_to_dict

    assert study_to_dict(study)["study"]["blocks"] == "day"
    with pytest.raises(DataError, match=r"no column 'day' for the blocks \(\[study\] blocks\)"):
        load_study(_write(tmp_path, ROWS, extra='blocks = "day"\n'))
    with pytest.raises(StudyError, match=r"\[study\] blocks = 'a' is a factor or response"):
        load_study(_write(tmp_path, ROWS, extra='blocks = "a"\n'))
    with pytest.raises(StudyError, match=r"\[study\] blocks must be the name of the data"):
        load_study(_write(tmp_path, ROWS, extra='blocks = 2\n'))


def test_check_summary_and_design_evaluation_use_the_named_block_column(tmp_path):
    from tradeoff.plan.evaluation import evaluate_study
    from tradeoff.report.summary import study_summary, summary_text

    rows = [r.replace(",1,", ",Mon,", 1).replace(",2,", ",Tue,", 1) for r in ROWS]
    study = load_study(_write(tmp_path, rows, header="run,day,a,b,c,d,y",
                              extra='blocks = "day"\n'))
    text = summary_text(study_summary(study))
    assert "Blocks (column 'day'): Mon: 4 runs, Tue: 4 runs" in text
    # the days follow factor c (see ROWS): both the design check and the model say so
    ev = evaluate_study(study, "main")
    assert "block Tue" in ev.aliased["c"]
    m = fit_study(study, responses=["y"]).models["y"]
    assert m.blocks_["confounded"] == {"c": ["block[Tue]"]}
    assert m.terms_ == ["intercept", "block[Tue]", "a", "b", "d", "a:b", "a:c", "a:d"]
