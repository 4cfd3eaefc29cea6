"""One-step Arrhenius storage fits against closed forms, statsmodels and scipy."""
from __future__ import annotations

import math

import numpy as np
import pytest

from tradeoff.derive.kinetics import (KELVIN, R_GAS, fit_arrhenius, per_temperature_rates,
                                      q10, rate_at, time_to_bound, time_to_limit_se)

WEEKS = np.array([0.0, 2.0, 4.0, 6.0, 8.0, 12.0])


def _arrhenius(k_ref, ea_kj, T_c, T_ref_c):
    """Closed form k(T) = k_ref exp(-Ea/R (1/T - 1/T_ref)) (Arrhenius 1889; common
    practice)."""
    return k_ref * np.exp(-ea_kj * 1e3 / R_GAS * (1 / (T_c + KELVIN) - 1 / (T_ref_c + KELVIN)))


def _three_temps(seed=3, runs=("a",), ea=80.0, noise=0.15, order="zero"):
    rng = np.random.default_rng(seed)
    out = {"run": [], "time": [], "temp": [], "value": []}
    for r in runs:
        v0 = 20.0
        out["run"].append(r); out["time"].append(0.0); out["temp"].append(np.nan)
        out["value"].append(v0 + rng.normal(0, noise))
        for T in (20.0, 30.0, 40.0):
            k = _arrhenius(0.3, ea, T, 30.0)
            for w in WEEKS[1:]:
                y = v0 + k * w if order == "zero" else v0 * math.exp(0.01 * k * w)
                out["run"].append(r); out["time"].append(w); out["temp"].append(T)
                out["value"].append(y + rng.normal(0, noise))
    return {k: np.array(v, dtype=object if k == "run" else float) for k, v in out.items()}


def test_noise_free_data_recover_arrhenius_and_q10_closed_forms():
    d = _three_temps(noise=0.0, ea=85.0)
    fit = fit_arrhenius(d["run"], d["time"], d["temp"], d["value"])
    assert fit.ea[0] == pytest.approx(85.0, rel=1e-8)
    k20, _ = rate_at(fit, 20.0)
    assert k20[0] == pytest.approx(_arrhenius(0.3, 85.0, 20.0, 30.0), rel=1e-8)
    # Q10 = exp(10 Ea / (R T (T + 10))) (closed form from the Arrhenius law;
    # e.g. Labuza, Shelf-life dating of foods, 1982, from memory)
    q, _ = q10(fit, 20.0)
    T = 20.0 + KELVIN
    assert q[0] == pytest.approx(math.exp(10 * 85e3 / (R_GAS * T * (T + 10))), rel=1e-8)
    assert q[0] == pytest.approx(rate_at(fit, 30.0)[0][0] / k20[0], rel=1e-8)


def test_one_step_fit_matches_scipy_curve_fit_parameters_and_covariance():
    # Reference library: scipy.optimize.curve_fit on the same one-step model.
    from scipy.optimize import curve_fit
    d = _three_temps(seed=11, noise=0.3)
    fit = fit_arrhenius(d["run"], d["time"], d["temp"], d["value"])
    Tk = d["temp"] + KELVIN
    tc = fit.t_centre[0]
    x = np.vstack([d["time"], np.where(d["time"] > 0, 1 / np.nan_to_num(Tk, nan=1.0) - 1 / tc, 0)])

    def model(x, a, kc, b):
        return a + kc * np.exp(-b * x[1]) * x[0]

    p, pcov = curve_fit(model, x, d["value"], p0=[20, 0.3, 9000])
    assert fit.params[0] == pytest.approx(p, rel=1e-6)
    assert fit.cov[0] == pytest.approx(pcov, rel=1e-5)
    assert fit.df[0] == len(d["value"]) - 3


def test_one_temperature_bound_matches_statsmodels_get_prediction():
    # Reference library: statsmodels OLS get_prediction (mean confidence bound);
    # one-sided 95 % bound of the mean curve as in ICH Q1E (2003), section 2.4.
    import statsmodels.api as sm
    rng = np.random.default_rng(5)
    t = np.repeat([0.0, 3, 6, 9, 12, 18], 2)
    y = 100 - 1.1 * t + rng.normal(0, 1.0, len(t))
    fit = fit_arrhenius(["r"] * len(t), t, np.full(len(t), 25.0), y)
    res = sm.OLS(y, sm.add_constant(t)).fit()
    limit = 90.0
    from scipy import stats
    c = stats.t.ppf(0.95, res.df_resid)
    tb = time_to_bound(fit, 25.0, limit, direction="down", c=c)[0]
    # the statsmodels lower one-sided 95 % bound (two-sided 90 %) equals the limit there
    pred = res.get_prediction(np.array([[1.0, tb]])).summary_frame(alpha=0.10)
    assert pred["mean_ci_lower"].iloc[0] == pytest.approx(limit, abs=1e-9)
    assert tb < (limit - res.params[0]) / res.params[1]   # earlier than the mean
    # mean crossing (c = 0) is (L - a) / k
    tm = time_to_bound(fit, 25.0, limit, direction="down", c=0.0)[0]
    assert tm == pytest.approx((limit - res.params[0]) / res.params[1], rel=1e-12)
    # optimistic bound (c < 0): the upper one-sided bound reaches it later
    to = time_to_bound(fit, 25.0, limit, direction="down", c=-c)[0]
    pred = res.get_prediction(np.array([[1.0, to]])).summary_frame(alpha=0.10)
    assert pred["mean_ci_upper"].iloc[0] == pytest.approx(limit, abs=1e-9)
    # delta-method se of (L - a)/k from statsmodels' covariance
    g = np.array([-1 / res.params[1], -tm / res.params[1]])
    se = math.sqrt(g @ res.cov_params() @ g)
    assert time_to_limit_se(fit, 25.0, limit)[0] == pytest.approx(se, rel=1e-10)


def test_several_temperature_bound_is_the_delta_method_bound_at_that_time():
    # Delta method on scipy.optimize.curve_fit's covariance (reference library):
    # the conservative one-sided bound equals the limit at the returned time.
    from scipy import stats
    from scipy.optimize import curve_fit
    d = _three_temps(seed=2, noise=0.3)
    fit = fit_arrhenius(d["run"], d["time"], d["temp"], d["value"])
    tc = fit.t_centre[0]
    x = np.vstack([d["time"], np.where(d["time"] > 0, 1 / (np.nan_to_num(d["temp"]) + KELVIN) - 1 / tc, 0)])
    p, pcov = curve_fit(lambda x, a, kc, b: a + kc * np.exp(-b * x[1]) * x[0], x, d["value"],
                        p0=[20, 0.3, 9000])
    c = stats.t.ppf(0.95, len(d["value"]) - 3)
    limit = 25.0
    tb = time_to_bound(fit, 20.0, limit, direction="up", c=c)[0]
    dd = 1 / (20 + KELVIN) - 1 / tc
    e = math.exp(-p[2] * dd)
    mean = p[0] + p[1] * e * tb
    grad = np.array([1.0, e * tb, -p[1] * e * tb * dd])
    assert mean + c * math.sqrt(grad @ pcov @ grad) == pytest.approx(limit, abs=1e-6)
    tm = time_to_bound(fit, 20.0, limit, direction="up", c=0.0)[0]
    assert tm == pytest.approx((limit - p[0]) / (p[1] * e), rel=1e-6)
    assert 0 < tb < tm


def test_first_order_fits_log_values():
    from scipy.optimize import curve_fit
    d = _three_temps(seed=4, noise=0.05, order="first")
    fit = fit_arrhenius(d["run"], d["time"], d["temp"], d["value"], order="first")
    tc = fit.t_centre[0]
    x = np.vstack([d["time"], np.where(d["time"] > 0, 1 / (np.nan_to_num(d["temp"]) + KELVIN) - 1 / tc, 0)])
    p, _ = curve_fit(lambda x, a, kc, b: a + kc * np.exp(-b * x[1]) * x[0], x,
                     np.log(d["value"]), p0=[3, 0.003, 9000])
    assert fit.params[0] == pytest.approx(p, rel=1e-6)
    assert fit.start[0] == pytest.approx(math.exp(p[0]))
    # mean time to 1.05 x start, first order: ln(L / v0) / k
    k20 = rate_at(fit, 20.0)[0][0]
    tm = time_to_bound(fit, 20.0, 21.0, direction="up", c=0.0)[0]
    assert tm == pytest.approx(math.log(21.0 / fit.start[0]) / k20, rel=1e-9)


def test_limit_passed_at_start_gives_zero_and_moving_away_gives_nan():
    d = _three_temps(noise=0.1)
    fit = fit_arrhenius(d["run"], d["time"], d["temp"], d["value"])
    assert time_to_bound(fit, 20.0, 15.0, direction="up", c=1.7)[0] == 0.0
    assert math.isnan(time_to_bound(fit, 20.0, 15.0, direction="down", c=0.0)[0])


def test_per_temperature_rates_share_time_zero():
    d = _three_temps(noise=0.0)
    tab = per_temperature_rates(d["run"], d["time"], d["temp"], d["value"])
    assert list(tab["temperature"]) == [20.0, 30.0, 40.0]
    assert list(tab["n_times"]) == [6, 6, 6]
    for T, k in zip(tab["temperature"], tab["rate"]):
        assert k == pytest.approx(_arrhenius(0.3, 80.0, T, 30.0), rel=1e-10)
