"""Shelf life, activation energy, Q10 and rate at a temperature as derived responses.

Every number is checked against an independent computation: statsmodels OLS
``get_prediction`` for one temperature, scipy ``curve_fit`` on the same
one-step Arrhenius model for several, and the closed forms.
"""
from __future__ import annotations

import math
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from scipy import stats
from scipy.optimize import curve_fit

from tradeoff.cautions import ACCELERATED_CAUTIONS
from tradeoff.derive.derived import DERIVED_COLUMNS, derivation_table
from tradeoff.derive.load import load_study
from tradeoff.errors import DataError, StudyError

R_GAS = 8.314462618   # J/(mol K), CODATA 2018 (exact)
DEMO = Path(__file__).resolve().parents[2] / "demo_data"

RUNS = "run,protein\nR1,20\nR2,30\nR3,25\n"
HEAD = """[study]
data = "runs.csv"
model = "main"
[storage]
data = "storage.csv"
time = "week"
temperature = "temp_c"
[[factors]]
name = "protein"
low = 20
high = 30
"""


def _storage(seed=1, ea=(70.0, 90.0, 60.0), temps=(20, 30, 40), weeks=(2, 4, 8, 12),
             noise=0.25) -> pd.DataFrame:
    """Zero-order rise from 20 with an Arrhenius rate (1 per week at 30 degC)."""
    rng = np.random.default_rng(seed)
    rows = []
    for run, e in zip(("R1", "R2", "R3"), ea):
        rows.append((run, 0, "", round(20 + rng.normal(0, noise), 3)))
        for T in temps:
            k = math.exp(-e * 1e3 / R_GAS * (1 / (T + 273.15) - 1 / 303.15))
            for w in weeks:
                rows.append((run, w, T, round(20 + k * w + rng.normal(0, noise), 3)))
    return pd.DataFrame(rows, columns=["run", "week", "temp_c", "value"]).assign(
        property="hardness")


def _load(tmp_path, responses, storage: pd.DataFrame | str, head=HEAD):
    (tmp_path / "runs.csv").write_text(RUNS)
    text = storage if isinstance(storage, str) else storage.to_csv(index=False)
    (tmp_path / "storage.csv").write_text(text)
    (tmp_path / "study.toml").write_text(head + responses)
    return load_study(tmp_path / "study.toml")


def _resp(name, kind, **keys):
    lines = [f'[[responses]]\nname = "{name}"\nderive = "{kind}"\nproperty = "hardness"']
    for k, v in keys.items():
        lines.append(f"{k} = {v!r}".replace("'", '"'))
    return "\n".join(lines) + "\n"


def _reference(frame, run):
    """scipy.optimize.curve_fit on a + k_30 exp(-Ea/R (1/T - 1/303.15)) t (reference)."""
    g = frame[frame["run"] == run]
    t = g["week"].to_numpy(float)
    T = pd.to_numeric(g["temp_c"], errors="coerce").fillna(30).to_numpy(float) + 273.15
    y = g["value"].to_numpy(float)

    def model(x, a, k30, b):
        return a + k30 * np.exp(-b * (1 / x[1] - 1 / 303.15)) * x[0]

    p, pcov = curve_fit(model, np.vstack([t, T]), y, p0=[20, 1, 9000])
    return p, pcov, len(y) - 3


SHELF = (_resp("life", "shelf_life", limit=28, direction="up", at_temperature=20)
         + _resp("life_mean", "shelf_life", limit=28, direction="up", at_temperature=20,
                 estimate="mean")
         + _resp("ea", "activation_energy")
         + _resp("q10", "q10", at_temperature=20)
         + _resp("k20", "rate_at", at_temperature=20))


def test_three_temperatures_match_curve_fit_and_the_closed_forms(tmp_path):
    frame = _storage()
    study = _load(tmp_path, SHELF, frame)
    runs = study.runs.set_index("run")
    T20 = 293.15
    for run in ("R1", "R2", "R3"):
        p, pcov, df = _reference(frame, run)
        # Ea in kJ/mol and its standard error (scipy curve_fit covariance)
        assert runs.loc[run, "ea"] == pytest.approx(p[2] * R_GAS / 1e3, rel=1e-6)
        ea_tab = derivation_table(study, "ea").set_index("run")
        assert ea_tab.loc[run, "se"] == pytest.approx(math.sqrt(pcov[2, 2]) * R_GAS / 1e3,
                                                      rel=1e-4)
        # k at 20 degC: Arrhenius closed form from the reference parameters
        e = math.exp(-p[2] * (1 / T20 - 1 / 303.15))
        assert runs.loc[run, "k20"] == pytest.approx(p[1] * e, rel=1e-6)
        # Q10 = exp(10 Ea / (R T (T + 10))) (closed form of the Arrhenius law)
        assert runs.loc[run, "q10"] == pytest.approx(
            math.exp(10 * p[2] / (T20 * (T20 + 10))), rel=1e-6)
        # mean shelf life: where a + k20 t reaches 28
        t_mean = (28 - p[0]) / (p[1] * e)
        assert runs.loc[run, "life_mean"] == pytest.approx(t_mean, rel=1e-6)
        # bound: the one-sided 95 % delta-method bound (ICH Q1E 2003 practice) of
        # the mean curve, from curve_fit's covariance, equals 28 at that time
        t_b = runs.loc[run, "life"]
        grad = np.array([1.0, e * t_b, -p[1] * e * t_b * (1 / T20 - 1 / 303.15)])
        upper = p[0] + p[1] * e * t_b + stats.t.ppf(0.95, df) * math.sqrt(grad @ pcov @ grad)
        assert upper == pytest.approx(28.0, abs=1e-4)
        assert t_b < t_mean
    table = derivation_table(study, "life").set_index("run")
    assert list(derivation_table(study, "life").columns) == DERIVED_COLUMNS
    assert table.loc["R1", "lower"] == pytest.approx(runs.loc["R1", "life"])
    assert table.loc["R1", "upper"] > runs.loc["R1", "life_mean"]
    assert table.loc["R1", "per_temperature"] == "20 degC: 5; 30 degC: 5; 40 degC: 5"
    assert table.loc["R1", "points"] == 13
    notes = "\n".join(study.notes)
    for caution in ACCELERATED_CAUTIONS:
        assert notes.count(caution) == 1       # once per study
    assert "one-step Arrhenius fit quality R-squared" in notes


def test_one_temperature_bound_matches_statsmodels_get_prediction(tmp_path):
    # Reference library: statsmodels OLS get_prediction; lower one-sided 95 %
    # bound of the mean line (ICH Q1E, 2003, section 2.4) for a falling property.
    import statsmodels.api as sm
    rng = np.random.default_rng(8)
    weeks = np.array([0, 3, 6, 9, 12, 18, 24], float)
    rows = ["run,week,temp_c,property,value"]
    ys = {}
    for run, k in (("R1", -0.6), ("R2", -0.3), ("R3", -0.45)):
        ys[run] = 100 + k * weeks + rng.normal(0, 0.8, len(weeks))
        rows += [f"{run},{w:g},25,hardness,{y:.4f}" for w, y in zip(weeks, ys[run])]
    study = _load(tmp_path, _resp("life", "shelf_life", limit=92, direction="down")
                  + _resp("t", "time_to_limit", limit=92, direction="down"),
                  "\n".join(rows) + "\n")
    runs = study.runs.set_index("run")
    tab = derivation_table(study, "t").set_index("run")
    for run, y in ys.items():
        y = np.round(y, 4)
        res = sm.OLS(y, sm.add_constant(weeks)).fit()
        pred = res.get_prediction(np.array([[1.0, runs.loc[run, "life"]]]))
        assert pred.summary_frame(alpha=0.10)["mean_ci_lower"].iloc[0] == \
            pytest.approx(92.0, abs=1e-8)
        a, k = res.params
        assert runs.loc[run, "t"] == pytest.approx((92 - a) / k, rel=1e-10)
        # the mean time's delta-method standard error from statsmodels' covariance
        g = np.array([-1 / k, -(92 - a) / k ** 2])
        assert tab.loc[run, "se"] == pytest.approx(math.sqrt(g @ res.cov_params() @ g),
                                                   rel=1e-8)


def test_flags_extrapolation_in_time_and_temperature_and_unusual_ea(tmp_path):
    frame = _storage(ea=(70.0, 250.0, 60.0), temps=(30, 40, 50), weeks=(1, 2, 3))
    study = _load(tmp_path, _resp("life", "shelf_life", limit=24, direction="up",
                                  at_temperature=20, estimate="mean"), frame)
    notes = "\n".join(study.notes)
    assert "temperature extrapolated" in notes and "20 degC asked, tested 30, 50 degC" in notes
    assert "unusual activation energy outside 10 to 200 kJ/mol" in notes
    assert "R2 (25" in notes.split("unusual activation")[1].split("\n")[0]
    assert "extrapolated far beyond the data" in notes
    life = study.runs.set_index("run")["life"]
    assert (life > 1.5 * 3).all()


def test_limit_passed_at_start_is_zero_with_a_note(tmp_path):
    study = _load(tmp_path, _resp("life", "shelf_life", limit=15, direction="up",
                                  at_temperature=20), _storage())
    assert (study.runs["life"] == 0).all()
    assert any("at or past 15 from the start of the confidence bound, so set to 0" in n
               for n in study.notes)


def test_too_few_times_at_a_temperature_leaves_that_run_out_naming_it(tmp_path):
    frame = _storage()
    frame = frame[~((frame["run"] == "R2") & (frame["temp_c"] == 40) &
                    frame["week"].isin([4, 8, 12]))]
    study = _load(tmp_path, _resp("ea", "activation_energy"), frame)
    assert np.isnan(study.runs.set_index("run").loc["R2", "ea"])
    assert any("'ea': run R2 left out: at 40 degC only 2 storage time(s) (0, 2), 3 "
               "needed per temperature" in n for n in study.notes)


def test_measured_kinds_read_one_temperature(tmp_path):
    frame = _storage(noise=0.0)
    study = _load(tmp_path, _resp("h12", "value_at", at=12, at_temperature=40)
                  + _resp("rate30", "rate", at_temperature=30), frame)
    runs = study.runs.set_index("run")
    k40 = math.exp(-70e3 / R_GAS * (1 / 313.15 - 1 / 303.15))   # R1, Arrhenius
    assert runs.loc["R1", "h12"] == pytest.approx(20 + 12 * k40, abs=1e-3)
    assert runs.loc["R1", "rate30"] == pytest.approx(1.0, abs=1e-3)


def test_first_order_value_not_above_zero_names_the_row(tmp_path):
    frame = _storage()
    frame.loc[5, "value"] = 0.0
    with pytest.raises(DataError, match=r"storage\.csv, row 7, column 'value': response "
                       r"'ea' uses a first-order"):
        _load(tmp_path, _resp("ea", "activation_energy", order="first"), frame)


@pytest.mark.parametrize("responses, storage, head, pattern", [
    (_resp("ea", "activation_energy"), None, HEAD.replace('"temp_c"', '"temperature"'),
     r"storage\.csv: no column 'temperature' in the storage table \(named by temperature"),
    (_resp("ea", "activation_energy"), "R1,2,warm,21,hardness\n", HEAD,
     r"storage\.csv, row \d+, column 'temp_c': expected a number, found 'warm'"),
    (_resp("ea", "activation_energy"), "R1,2,,21,hardness\n", HEAD,
     r"storage\.csv, row \d+, column 'temp_c': blank storage temperature"),
    (_resp("life", "shelf_life", limit=28, direction="up"), None, HEAD,
     r"study\.toml: \[\[responses\]\] 'life': 'hardness' was stored at 20, 30, 40 degC "
     r"\(storage\.csv\): add at_temperature"),
    (_resp("life", "shelf_life", limit=28, direction="up", at_temperature=20,
           estimate="lowest"), None, HEAD,
     r"study\.toml: \[\[responses\]\] 'life': estimate = 'lowest' is not one I know"),
    (_resp("q", "q10"), None, HEAD, r"derive = 'q10' needs at_temperature"),
])
def test_bad_input_one_line(tmp_path, responses, storage, head, pattern):
    frame = _storage()
    text = frame.to_csv(index=False)
    if storage:
        text = text + storage
    with pytest.raises((DataError, StudyError), match=pattern):
        _load(tmp_path, responses, text, head=head)


def test_activation_energy_with_one_temperature_is_refused(tmp_path):
    frame = _storage(temps=(30,))
    with pytest.raises(DataError, match=r"derive = 'activation_energy' needs storage at "
                       r"two or more temperatures, but every measurement was stored at "
                       r"30 degC"):
        _load(tmp_path, _resp("ea", "activation_energy"), frame)


def test_cli_check_exits_2_and_leaves_files_unchanged(tmp_path, capsys):
    from tradeoff.cli import main
    _load(tmp_path, _resp("ea", "activation_energy"), _storage())  # writes the files
    (tmp_path / "study.toml").write_text(HEAD + _resp("life", "shelf_life", limit=28,
                                                      direction="up"))
    before = {p.name: p.read_bytes() for p in tmp_path.iterdir()}
    assert main(["check", str(tmp_path / "study.toml")]) == 2
    err = capsys.readouterr().err
    assert err.startswith("error: study.toml: [[responses]] 'life': 'hardness' was stored "
                          "at 20, 30, 40 degC")
    assert len(err.strip().splitlines()) == 1
    assert {p.name: p.read_bytes() for p in tmp_path.iterdir()} == before


def test_demo_shelf_study_derives_and_carries_a_goal():
    study = load_study(DEMO / "snack_bar_shelf.toml")
    r = study.response("shelf_life_20C")
    assert r.goal is not None and r.goal.kind == "maximize"
    runs = study.runs.set_index("run")
    for name in ("shelf_life_20C", "shelf_life_20C_mean", "activation_energy", "q10_20C",
                 "hardening_rate_20C"):
        assert runs[name].notna().all(), name
    assert (runs["shelf_life_20C"] < runs["shelf_life_20C_mean"]).all()
