"""Pieces per batch in the models: the fit is ordinary least squares on run means,
and the measurement noise is split from the batch-to-batch noise.

Reference points, named beside each check:
- statsmodels OLS on the run means (coefficients, standard errors, residual and
  pure-error sums of squares);
- the two-stage nested design's ANOVA estimators, Montgomery, Design and Analysis
  of Experiments, chapter on nested and split-plot designs (two-stage nested
  design, E(MS_B(A)) = sigma^2 + n sigma_beta^2, E(MS_E) = sigma^2) (from memory);
  Searle, Casella & McCulloch (1992), Variance Components, ch. 3, balanced
  one-way classification (ANOVA estimators) (from memory);
- statsmodels MixedLM (REML) on a balanced set: with balanced data and a positive
  estimate, REML equals the ANOVA (method-of-moments) estimate (Searle, Casella &
  McCulloch (1992), ch. 6, from memory).
"""
from __future__ import annotations

import json
import math

import numpy as np
import pandas as pd
import pytest

from tradeoff.cli import main
from tradeoff.derive.load import load_study
from tradeoff.model.pieces import batch_variance, piece_components, within_batch
from tradeoff.model.study_fit import fit_response

STUDY = """\
[study]
name = "bars"
data = "runs.csv"
model = "interactions"

[[factors]]
name = "protein"
unit = "%"
low = 20
high = 30

[[factors]]
name = "glycerol"
unit = "%"
low = 2
high = 6

[[responses]]
name = "hardness"
unit = "N"
goal = "minimize"
lower = 15
upper = 35
"""


def _pieces_csv(settings, k, seed, batch_sd, within_sd):
    """A runs table with k pieces per batch, generated with a seed (invented data)."""
    rng = np.random.default_rng(seed)
    rows, frame = ["run,protein,glycerol,hardness"], []
    for i, (p, g) in enumerate(settings, start=1):
        batch = 20 + 0.8 * (p - 25) - 1.5 * (g - 4) + 0.3 * (p - 25) * (g - 4) \
            + rng.normal(0, batch_sd)
        for _ in range(k):
            y = round(batch + rng.normal(0, within_sd), 3)
            rows.append(f"B{i},{p},{g},{y}")
            frame.append({"run": f"B{i}", "protein": p, "glycerol": g, "y": y,
                          "cell": f"{p}/{g}"})
    return "\n".join(rows) + "\n", pd.DataFrame(frame)


CORNERS = [(20, 2), (30, 2), (20, 6), (30, 6)]


def _run_means(frame):
    return frame.groupby("run", sort=False).agg(
        protein=("protein", "first"), glycerol=("glycerol", "first"),
        y=("y", "mean"), cell=("cell", "first")).reset_index()


def test_fit_equals_ols_on_run_means(write_study):
    import statsmodels.api as sm
    import statsmodels.formula.api as smf
    settings = CORNERS + [(25, 4)] * 3  # three replicate centre batches
    csv, frame = _pieces_csv(settings, 3, seed=11, batch_sd=0.8, within_sd=1.2)
    model = fit_response(load_study(write_study(STUDY, csv)), "hardness")
    means = _run_means(frame)
    x1 = (means["protein"] - 25) / 5
    x2 = (means["glycerol"] - 4) / 2
    X = sm.add_constant(np.column_stack([x1, x2, x1 * x2]))
    ols = sm.OLS(means["y"].to_numpy(), X).fit()
    np.testing.assert_allclose(model.coef_, ols.params, rtol=1e-10, atol=1e-12)
    np.testing.assert_allclose(model.std_errors_, ols.bse, rtol=1e-10)
    assert model.n_ == 7 and model.residual_df_ == 3  # runs, not 21 pieces
    anova = model.anova_
    assert anova["residual"]["ss"] == pytest.approx(ols.ssr, rel=1e-10)
    # pure error from the replicate runs only: the residual of a cell-means model
    # on the run means (2 df from three centre batches), never from pieces
    cells = smf.ols("y ~ C(cell)", data=means).fit()
    assert anova["pure_error"]["df"] == 2
    assert anova["pure_error"]["ss"] == pytest.approx(cells.ssr, rel=1e-10)
    assert anova["lack_of_fit"]["df"] == 1


def test_within_and_batch_sd_match_the_nested_anova_closed_forms(write_study):
    import statsmodels.formula.api as smf
    # 2x2 corners, 3 batches at each, 4 pieces per batch: the interactions model
    # fits every cell, so its residual is the batches-within-cells stratum
    settings = [s for s in CORNERS for _ in range(3)]
    n = 4
    csv, frame = _pieces_csv(settings, n, seed=5, batch_sd=1.5, within_sd=1.0)
    model = fit_response(load_study(write_study(STUDY, csv)), "hardness")
    block = model.pieces_
    # two-stage nested ANOVA on the pieces by statsmodels: SS_E is the residual of
    # the batch-means model, SS_B(A) what the cell-means model leaves beyond it
    by_batch = smf.ols("y ~ C(run)", data=frame).fit()
    by_cell = smf.ols("y ~ C(cell)", data=frame).fit()
    assert by_batch.df_resid == 36 and by_cell.df_resid - by_batch.df_resid == 8
    ms_e = by_batch.ssr / by_batch.df_resid
    ms_b = (by_cell.ssr - by_batch.ssr) / (by_cell.df_resid - by_batch.df_resid)
    # sigma^2 = MS_E; sigma_beta^2 = (MS_B(A) - MS_E) / n (Montgomery, two-stage nested)
    assert block["within_sd"] == pytest.approx(math.sqrt(ms_e), rel=1e-10)
    assert block["within_df"] == 36
    assert block["batch_sd"] == pytest.approx(math.sqrt((ms_b - ms_e) / n), rel=1e-10)
    assert block["runs_with_several"] == 12 and block["pieces"] == 48
    assert block["pieces_per_run"] == pytest.approx(4.0)


def test_batch_sd_agrees_with_mixed_model_reml_when_balanced(write_study):
    import statsmodels.formula.api as smf
    settings = [s for s in CORNERS for _ in range(3)] + [(25, 4)] * 3
    csv, frame = _pieces_csv(settings, 3, seed=8, batch_sd=2.0, within_sd=1.0)
    model = fit_response(load_study(write_study(STUDY, csv)), "hardness")
    block = model.pieces_
    frame["x1"] = (frame["protein"] - 25) / 5
    frame["x2"] = (frame["glycerol"] - 4) / 2
    mixed = smf.mixedlm("y ~ x1 * x2", frame, groups=frame["run"]).fit(reml=True)
    assert block["batch_sd"] > 0
    # REML = ANOVA estimates for balanced data with a positive estimate (optimizer
    # tolerance only)
    assert block["within_sd"] ** 2 == pytest.approx(mixed.scale, rel=1e-4)
    assert block["batch_sd"] ** 2 == pytest.approx(float(mixed.cov_re.iloc[0, 0]),
                                                   rel=1e-3)
    # the fixed effects agree too: OLS on run means is GLS when balanced
    np.testing.assert_allclose(model.coef_, mixed.fe_params.to_numpy(), rtol=1e-4)


def test_within_batch_by_hand():
    # runs a: 1, 2, 3 (mean 2, SS 2); b: 5, 7 (mean 6, SS 2); c: 4 (one piece, adds nothing)
    sd, df = within_batch([1, 2, 3, 5, 7, 4], ["a", "a", "a", "b", "b", "c"])
    assert df == 3 and sd == pytest.approx(math.sqrt(4 / 3))
    assert within_batch([1, 2], ["a", "b"])[1] == 0


def test_batch_variance_is_floored_at_zero():
    assert batch_variance(0.5, 3.0, 3) == 0.0
    assert batch_variance(2.0, 3.0, 3) == pytest.approx(1.0)


def test_unequal_pieces_use_the_harmonic_mean():
    # runs with 2 and 4 pieces: Var(run mean) averages within^2/2 and within^2/4,
    # that is within^2 / (harmonic mean 8/3)
    block = piece_components([1, 3, 2, 4, 6, 4], ["a", "a", "b", "b", "b", "b"],
                             ["a", "b"], residual_sd=2.0, residual_df=1)
    sd, _ = within_batch([1, 3, 2, 4, 6, 4], ["a", "a", "b", "b", "b", "b"])
    assert block["pieces_per_run"] == pytest.approx(8 / 3)
    assert block["batch_sd"] == pytest.approx(math.sqrt(4.0 - sd ** 2 * 3 / 8))


def test_unequal_pieces_through_the_whole_fit(write_study):
    # Batches of 1, 2, 3 and 6 pieces. A run mean of k_i pieces carries
    # batch^2 + within^2 / k_i; averaged over the runs, the residual variance of
    # the model on run means estimates batch^2 + within^2 * mean(1 / k_i) (the
    # unweighted moment equation of the two-stage nested design, Searle, Casella &
    # McCulloch (1992), ch. 3, from memory), so batch^2 = s^2 - within^2 * mean(1/k).
    # Residual variance from statsmodels OLS on the run means; within-batch
    # variance pooled here with pandas.
    import statsmodels.api as sm

    settings = [s for s in CORNERS for _ in range(2)] + [(25, 4)] * 3
    counts = [1, 6, 2, 3, 6, 1, 3, 2, 6, 2, 3]
    rng = np.random.default_rng(21)
    rows, frame = ["run,protein,glycerol,hardness"], []
    for i, ((p, g), k) in enumerate(zip(settings, counts), start=1):
        batch = 20 + 0.8 * (p - 25) - 1.5 * (g - 4) + rng.normal(0, 2.0)
        for _ in range(k):
            y = round(batch + rng.normal(0, 1.0), 3)
            rows.append(f"B{i},{p},{g},{y}")
            frame.append({"run": f"B{i}", "protein": p, "glycerol": g, "y": y})
    frame = pd.DataFrame(frame)
    model = fit_response(load_study(write_study(STUDY, "\n".join(rows) + "\n")),
                         "hardness")
    block = model.pieces_
    groups = frame.groupby("run", sort=False)["y"]
    k = groups.size().to_numpy(float)
    within_var = float((groups.var(ddof=1).fillna(0) * (k - 1)).sum() / (k - 1).sum())
    means = _run_means(frame.assign(cell=""))
    x1, x2 = (means["protein"] - 25) / 5, (means["glycerol"] - 4) / 2
    ols = sm.OLS(means["y"].to_numpy(), sm.add_constant(np.column_stack(
        [x1, x2, x1 * x2]))).fit()
    assert block["within_sd"] ** 2 == pytest.approx(within_var, rel=1e-10)
    assert block["pieces_per_run"] == pytest.approx(1 / np.mean(1 / k), rel=1e-12)
    assert block["pieces_per_run"] != pytest.approx(k.mean(), rel=0.05)  # not arithmetic
    batch_var = ols.scale - within_var * np.mean(1 / k)
    assert batch_var > 0
    assert block["batch_sd"] == pytest.approx(math.sqrt(batch_var), rel=1e-9)


@pytest.mark.parametrize("residual_sd, words", [
    (3.0, "the batch-to-batch part dominates"),
    (0.7, "the measurement part dominates"),
    (0.5, "no batch-to-batch part is seen"),
])
def test_the_plain_words_line(residual_sd, words):
    values = [10, 12, 11, 20, 22, 21, 30, 32, 31]
    runs = list("aaabbbccc")
    block = piece_components(values, runs, ["a", "b", "c"], residual_sd=residual_sd,
                             residual_df=2, unit="N")
    assert block["summary"].startswith("measuring 5 pieces instead of 3 would shrink the "
                                       "run-mean SD from ")
    assert words in block["summary"] and " N" in block["summary"]
    # Var(run mean) = batch^2 + within^2 / k
    b, w = block["batch_sd"], block["within_sd"]
    now = math.sqrt(b * b + w * w / 3)
    assert f"from {now:.2g}" in block["summary"] or f"from {now:.3g}" in block["summary"]


def test_no_residual_df_gives_within_only():
    block = piece_components([1, 2, 3, 4], list("aabb"), ["a", "b"],
                             residual_sd=float("nan"), residual_df=0)
    assert block["batch_sd"] is None and block["within_sd"] == pytest.approx(math.sqrt(0.5))
    assert "cannot be separated" in block["summary"]


def test_fit_json_pieces_block(write_study, capsys):
    csv, _ = _pieces_csv(CORNERS + [(25, 4)] * 3, 3, seed=2, batch_sd=1.0, within_sd=1.0)
    path = write_study(STUDY, csv)
    assert main(["fit", str(path), "--json"]) == 0
    block = json.loads(capsys.readouterr().out)["responses"]["hardness"]["pieces"]
    assert {"runs_with_several", "pieces", "within_sd", "within_df",
            "batch_sd"} <= set(block)
    assert block["runs_with_several"] == 7 and block["pieces"] == 21
    assert block["within_df"] == 14 and block["summary"].startswith("measuring 5 pieces")
    assert main(["fit", str(path)]) == 0
    assert "SD within a batch" in capsys.readouterr().out


def test_no_pieces_block_without_pieces(write_study, capsys):
    from conftest import BASIC_STUDY, BASIC_RUNS

    assert main(["fit", str(write_study(BASIC_STUDY, BASIC_RUNS)), "--json"]) == 0
    assert json.loads(capsys.readouterr().out)["responses"]["hardness"]["pieces"] is None


def test_a_pieces_study_optimizes(write_study):
    from tradeoff import optimize

    csv, _ = _pieces_csv(CORNERS + [(25, 4)] * 3, 3, seed=4, batch_sd=0.5, within_sd=1.0)
    result = optimize(load_study(write_study(STUDY, csv)), seed=1)
    best = result.best
    assert 20 <= best.settings["protein"] <= 30 and math.isfinite(best.predictions["hardness"])


def test_the_report_carries_the_pieces_line(write_study):
    from tradeoff.report.data import report_data
    from tradeoff.report.html import build_report_html

    csv, _ = _pieces_csv(CORNERS + [(25, 4)] * 3, 3, seed=2, batch_sd=1.0, within_sd=1.0)
    study = load_study(write_study(STUDY, csv))
    page = build_report_html(study, data=report_data(study, top=1, seed=0)).decode("utf-8")
    summary = fit_response(study, "hardness").pieces_["summary"]
    assert "SD of pieces within a batch" in page and "runs measured in several pieces" in page
    assert summary.split(";")[0] in page
