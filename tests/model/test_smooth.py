"""The smooth (Gaussian-process) model against closed forms computed here in numpy.

Sources: Rasmussen & Williams (2006), Gaussian Processes for Machine Learning,
MIT Press: eqs. 2.25-2.26 (posterior mean and variance), eq. 4.17 (the Matern
kernel with nu = 5/2), eqs. 5.10-5.12 (leave-one-out predictions).
"""
from __future__ import annotations

import math

import numpy as np
import pytest
from scipy.special import ndtri

from tradeoff.errors import ModelError, StudyError
from tradeoff.model.smooth import LENGTH_BOUNDS, SmoothModel, smooth_min_runs


def _matern52(A, B, lengths, variance):
    """Matern nu = 5/2 with one length scale per column (R&W 2006, eq. 4.17)."""
    D = (A[:, None, :] - B[None, :, :]) / np.asarray(lengths)
    r = np.sqrt((D ** 2).sum(axis=2))
    s = math.sqrt(5.0) * r
    return variance * (1.0 + s + s ** 2 / 3.0) * np.exp(-s)


def _fixed_kernel(lengths, variance, noise):
    from sklearn.gaussian_process.kernels import ConstantKernel, Matern, WhiteKernel

    return (ConstantKernel(variance, "fixed")
            * Matern(length_scale=np.asarray(lengths, float), length_scale_bounds="fixed",
                     nu=2.5)
            + WhiteKernel(noise, "fixed"))


def _refit_without_each(X, y, lengths, variance, noise):
    """Each run predicted by the posterior mean refitted without it, the kernel fixed
    and the response scaled by all the runs' mean and SD (R&W 2006, eq. 2.25)."""
    m, s = y.mean(), y.std()
    zn = (y - m) / s
    loop = np.empty(len(y))
    for i in range(len(y)):
        keep = np.arange(len(y)) != i
        K = _matern52(X[keep], X[keep], lengths, variance) + (noise + 1e-10) * np.eye(
            keep.sum())
        k = _matern52(X[i:i + 1], X[keep], lengths, variance)
        loop[i] = m + s * (k @ np.linalg.solve(K, zn[keep]))[0]
    return loop


def _data(n=14, seed=3):
    rng = np.random.default_rng(seed)
    X = rng.uniform(-1, 1, (n, 2))
    y = 5 + 2 * np.sin(2 * X[:, 0]) - X[:, 1] ** 2 + rng.normal(0, 0.1, n)
    return X, y


def test_posterior_with_a_fixed_kernel_matches_the_closed_form():
    # Rasmussen & Williams (2006), eqs. 2.25-2.26, on the model's own scaling:
    # the response centred and divided by its (population) SD.
    X, y = _data()
    lengths, variance, noise = [0.7, 1.3], 1.6, 0.05
    model = SmoothModel(factor_names=["a", "b"], kernel=_fixed_kernel(lengths, variance,
                                                                      noise),
                        optimize=False).fit(X, y)
    Xs = np.array([[0.0, 0.0], [0.5, -0.9], [-1.0, 1.0], [0.93, 0.2]])
    m, s = y.mean(), y.std()
    zn = (y - m) / s
    K = _matern52(X, X, lengths, variance) + (noise + 1e-10) * np.eye(len(y))
    Ks = _matern52(Xs, X, lengths, variance)
    mean = m + s * Ks @ np.linalg.solve(K, zn)                       # eq. 2.25
    var = s ** 2 * (variance - np.einsum("ij,ji->i", Ks, np.linalg.solve(K, Ks.T)))  # 2.26
    got_mean, got_sd, sigma, df = model.predictive(Xs)
    np.testing.assert_allclose(got_mean, mean, rtol=1e-9)
    np.testing.assert_allclose(got_sd, np.sqrt(var), rtol=1e-7)
    assert sigma == pytest.approx(s * math.sqrt(noise), rel=1e-12)
    # intervals: normal quantiles, latent SD for the mean, plus the noise for one run
    q = ndtri(0.975)
    table = model.intervals(Xs)
    np.testing.assert_allclose(table["ci_high"] - table["predicted"], q * np.sqrt(var),
                               rtol=1e-7)
    np.testing.assert_allclose(table["pi_high"] - table["predicted"],
                               q * np.sqrt(var + s ** 2 * noise), rtol=1e-7)
    # the posterior covariance of the mean (R&W eq. 2.24)
    cov = s ** 2 * (_matern52(Xs, Xs, lengths, variance)
                    - Ks @ np.linalg.solve(K, Ks.T))
    np.testing.assert_allclose(model.mean_covariance(Xs, Xs), cov, rtol=1e-7, atol=1e-12)


def test_leave_one_out_closed_form_matches_a_manual_loop():
    # R&W (2006) eqs. 5.10-5.12 against refitting without each run in turn
    # (same kernel, same scaling of the response).
    X, y = _data(n=12, seed=5)
    lengths, variance, noise = [0.9, 0.6], 1.2, 0.02
    model = SmoothModel(factor_names=["a", "b"], kernel=_fixed_kernel(lengths, variance,
                                                                      noise),
                        optimize=False).fit(X, y)
    loop = _refit_without_each(X, y, lengths, variance, noise)
    np.testing.assert_allclose(model.loo_predictions_, loop, rtol=1e-8)
    r2 = 1 - np.sum((y - loop) ** 2) / np.sum((y - y.mean()) ** 2)
    assert model.loo_r2_ == pytest.approx(r2, rel=1e-9)
    assert model.pred_r2_ == model.loo_r2_
    assert model.residuals_.to_numpy() == pytest.approx(y - loop, rel=1e-8)


def test_hyperparameter_search_is_seeded_and_reports_length_scales():
    X, y = _data(n=16)
    a = SmoothModel(factor_names=["a", "b"], restarts=2, seed=4).fit(X, y)
    b = SmoothModel(factor_names=["a", "b"], restarts=2, seed=4).fit(X, y)
    assert a.length_scales_ == b.length_scales_
    report = a.report()
    assert report["model"] == "smooth"
    assert set(report["length_scales"]) == {"a", "b"}
    assert report["loo_r2"] == pytest.approx(a.loo_r2_)
    # the response curves faster along 'a' (sin 2a) than along 'b' (b^2): common practice
    assert report["length_scales"]["a"] < report["length_scales"]["b"]


def test_a_factor_with_no_effect_gets_a_long_length_scale_and_a_warning():
    rng = np.random.default_rng(2)
    X = rng.uniform(-1, 1, (16, 2))
    y = 3 * X[:, 0] ** 2 + rng.normal(0, 0.01, 16)  # nothing along 'b'
    model = SmoothModel(factor_names=["a", "b"], restarts=2).fit(X, y)
    table = model.length_scale_table()
    assert table.iloc[-1]["factor"] == "b"
    assert model.length_scales_["b"] > 20 * model.length_scales_["a"]
    if model.length_scales_["b"] >= LENGTH_BOUNDS[1] / 1.02:
        assert any("'b' sits at its upper bound" in w for w in model.warnings_)


def test_pure_noise_warns_that_the_noise_term_takes_the_variation():
    rng = np.random.default_rng(8)
    X = rng.uniform(-1, 1, (20, 2))
    y = rng.normal(0, 1, 20)
    model = SmoothModel(factor_names=["a", "b"], restarts=2).fit(X, y)
    assert model.noise_share_ > 0.9
    assert any("noise term takes" in w for w in model.warnings_)


def test_too_few_runs_is_a_study_error_naming_the_rule():
    X, y = _data(n=smooth_min_runs(2) - 1)
    with pytest.raises(StudyError, match=r"needs at least 2 runs per factor plus 3 \(7 "
                                         r"for 2 factors\), found 6"):
        SmoothModel(factor_names=["a", "b"], name="liking").fit(X, y)


def test_the_fewest_runs_fit_and_score_with_the_whole_data_settings_held():
    # At exactly the fewest runs (2 per factor plus 3) the model fits; leaving a run
    # out would leave too few to refit it, so its leave-one-out score is the closed
    # form with the fitted kernel held (R&W 2006 eqs. 5.10-5.12), checked here
    # against refitting without each run with that kernel fixed in numpy.
    X, y = _data(n=smooth_min_runs(2), seed=9)
    model = SmoothModel(factor_names=["a", "b"], name="liking").fit(X, y)
    assert model.loo_refit_ is None
    assert any("leaving one out leaves too few" in w for w in model.warnings_)
    lengths = [model.length_scales_["a"], model.length_scales_["b"]]
    kernel = model.kernel_
    variance = float(kernel.k1.k1.constant_value)
    noise = float(kernel.k2.noise_level)
    loop = _refit_without_each(X, y, lengths, variance, noise)
    r2 = 1 - np.sum((y - loop) ** 2) / np.sum((y - y.mean()) ** 2)
    assert model.loo_r2_ == pytest.approx(r2, rel=1e-6)


def test_constant_response_and_unfitted_model_are_model_errors():
    X, _ = _data(n=10)
    with pytest.raises(ModelError, match="is 4 in every run"):
        SmoothModel(factor_names=["a", "b"]).fit(X, np.full(10, 4.0))
    with pytest.raises(ModelError, match="not fitted yet"):
        SmoothModel(factor_names=["a", "b"]).predict(np.zeros((1, 2)))


def test_log_transform_predicts_in_natural_units():
    X, y = _data(n=14)
    model = SmoothModel(factor_names=["a", "b"], transform="log", restarts=1).fit(X, y)
    mean, _, _, _ = model.predictive(X[:3])
    np.testing.assert_allclose(model.predict(X[:3]), np.exp(mean))


def test_optimizing_a_smooth_model_finds_the_invented_peak(write_study):
    # The invented peak sits at coded (0.3, -0.2): sugar 4.6 g, acid 0.26 g.
    from conftest import PEAKED_STUDY, peaked_runs
    from tradeoff import load_study, optimize

    study = load_study(write_study(PEAKED_STUDY.format(model="smooth"), peaked_runs()))
    best = optimize(study, top=1, draws=2000).best
    assert best.settings["sugar"] == pytest.approx(4.6, abs=0.15)
    assert best.settings["acid"] == pytest.approx(0.26, abs=0.015)
    # no run lies on the peak (the nearest grid run measured 6.88): the model
    # predicts above every run there, short of the true 8 (it smooths between runs)
    assert study.runs["liking"].max() < best.predictions["liking"] < 8.0
    low, high = best.responses["liking"].pi
    assert low < best.predictions["liking"] < high
