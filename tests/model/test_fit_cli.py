"""The ``tradeoff fit`` command: readable tables, the JSON shape, errors."""
from __future__ import annotations

import json

import numpy as np
import pytest

from tradeoff.cli import main

from test_fit import RUNS, STUDY

REQUIRED = {"n", "terms", "coefficients", "effects", "std_errors", "p_values",
            "residual_df", "r2", "adj_r2", "pred_r2", "lenth", "aliases", "warnings"}


def test_fit_json_has_the_documented_shape(write_study, capsys):
    path = write_study(STUDY, RUNS)
    assert main(["fit", str(path), "--json"]) == 0
    out = json.loads(capsys.readouterr().out)
    assert set(out["responses"]) == {"hardness", "aw"}
    r = out["responses"]["hardness"]
    assert REQUIRED <= set(r)
    assert r["n"] == 14 and r["terms"][0] == "intercept"
    assert r["lenth"] is None and set(r["p_values"]) == set(r["terms"])
    assert "intercept" not in r["effects"]
    assert r["effects"]["protein"] == pytest.approx(2 * r["coefficients"]["protein"])
    assert out["skipped"]["flat"].startswith("response 'flat' is 5 in every run")


def test_fit_text_and_reduce(write_study, capsys):
    path = write_study(STUDY, RUNS)
    assert main(["fit", str(path), "--response", "hardness", "--reduce"]) == 0
    text = capsys.readouterr().out
    assert text.startswith("hardness: model interactions; 14 runs")
    assert "predicted R2" in text and "lack of fit" in text and "reduced: dropped" in text


def test_saturated_model_reports_lenth_not_p_values(tmp_path, capsys):
    (tmp_path / "runs.csv").write_text(
        "run,A,B,C,y\n" + "\n".join(
            f"{i + 1},{a},{b},{c},{v}" for i, ((c, b, a), v) in enumerate(zip(
                [(c, b, a) for c in (-1, 1) for b in (-1, 1) for a in (-1, 1)],
                [60, 72, 54, 68, 52, 83, 45, 80]))) + "\n", encoding="utf-8")
    (tmp_path / "s.toml").write_text(
        '[study]\nname = "pilot"\ndata = "runs.csv"\nmodel = "full"\n'
        + "".join(f'[[factors]]\nname = "{f}"\nlow = -1\nhigh = 1\n' for f in "ABC")
        + '[[responses]]\nname = "y"\n', encoding="utf-8")
    assert main(["fit", str(tmp_path / "s.toml"), "--json"]) == 0
    r = json.loads(capsys.readouterr().out)["responses"]["y"]
    # Box, Hunter & Hunter (2005) pilot plant: T effect 23 (from memory)
    assert r["effects"]["A"] == pytest.approx(23.0)
    assert r["std_errors"] is None and r["p_values"] is None and r["residual_df"] == 0
    assert set(r["lenth"]) >= {"pse", "me", "sme", "effects"} and r["lenth"]["effects"] == 7
    # the text says the same in words: Lenth (1989) worked by hand on the 7 effects
    from scipy import stats

    c = np.abs([r["effects"][t] for t in r["terms"] if t != "intercept"])
    s0 = 1.5 * np.median(c)
    pse = 1.5 * np.median(c[c < 2.5 * s0])
    me = stats.t.ppf(0.975, 7 / 3) * pse
    sme = stats.t.ppf((1 + 0.95 ** (1 / 7)) / 2, 7 / 3) * pse
    assert main(["fit", str(tmp_path / "s.toml")]) == 0
    text = capsys.readouterr().out
    assert (f"a term alone stands out beyond {me:.4g}, among all 7 terms beyond {sme:.4g}"
            in text)
    for term, effect in r["effects"].items():
        if effect is None:
            continue
        row = next(line for line in text.splitlines() if line.startswith(f"  {term} "))
        want = ("stands out among all terms" if abs(effect) > sme else
                "stands out alone" if abs(effect) > me else "")
        assert row.rstrip().endswith(want) if want else "stands out" not in row


def test_fit_errors_exit_2(write_study, capsys):
    path = write_study(STUDY, RUNS)
    assert main(["fit", str(path), "--response", "flat"]) == 2
    err = capsys.readouterr().err
    assert err.startswith("error: response 'flat' is 5 in every run") and "Traceback" not in err
    assert main(["fit", str(path), "--response", "nope"]) == 2
    assert "no response named 'nope'" in capsys.readouterr().err
