"""The command line for smooth models: fit, fit --compare and their errors."""
from __future__ import annotations

import hashlib
import json

from conftest import PEAKED_STUDY, peaked_runs
from tradeoff.cli import main


def _digest(path):
    return hashlib.sha256(path.read_bytes()).hexdigest()


def test_fit_smooth_prints_length_scales_and_leave_one_out_r2(write_study, capsys):
    path = write_study(PEAKED_STUDY.format(model="smooth"), peaked_runs())
    assert main(["fit", str(path), "--json"]) == 0
    r = json.loads(capsys.readouterr().out)["responses"]["liking"]
    assert r["model"] == "smooth" and r["n"] == 25
    assert set(r["length_scales"]) == {"sugar", "acid"}
    # natural units: coded length times half the range (sugar 2 g, acid 0.2 g)
    assert abs(r["length_scales_natural"]["sugar"] - 2 * r["length_scales"]["sugar"]) < 1e-9
    assert 0.5 < r["loo_r2"] <= 1
    assert main(["fit", str(path)]) == 0
    text = capsys.readouterr().out
    assert text.startswith("liking: smooth model (Gaussian process); 25 runs")
    assert "leave-one-out R2" in text and "length scale (coded)" in text


def test_fit_compare_json_and_text_name_the_best(write_study, capsys):
    path = write_study(PEAKED_STUDY.format(model="quadratic"), peaked_runs())
    assert main(["fit", str(path), "--compare", "--json"]) == 0
    r = json.loads(capsys.readouterr().out)["responses"]["liking"]
    rows = r["comparison"]
    assert {row["model"] for row in rows} == {"main", "interactions", "quadratic", "smooth"}
    assert all(set(row) == {"model", "loo_r2", "rmse", "confounded"} for row in rows)
    assert r["best_model"] == rows[0]["model"] == "smooth"
    assert r["comparison_method"] == "leave-one-out"
    assert main(["fit", str(path), "--compare"]) == 0
    text = capsys.readouterr().out
    assert "best: smooth" in text


def test_compare_skips_a_constant_response_with_a_note(write_study, capsys):
    study = PEAKED_STUDY.format(model="main") + '\n[[responses]]\nname = "flat"\n'
    runs = peaked_runs().splitlines()
    runs = [runs[0] + ",flat"] + [line + ",5" for line in runs[1:]]
    path = write_study(study, "\n".join(runs) + "\n")
    assert main(["fit", str(path), "--compare", "--json"]) == 0
    out = json.loads(capsys.readouterr().out)
    assert "comparison" in out["responses"]["liking"]
    assert "is 5 in every run" in out["not_compared"]["flat"]
    assert main(["fit", str(path), "--compare"]) == 0
    assert "flat: not compared: response 'flat' is 5 in every run" in capsys.readouterr().out


def test_smooth_with_too_few_runs_is_one_line_and_exit_2(write_study, capsys):
    runs = "\n".join(peaked_runs().splitlines()[:7]) + "\n"  # 6 runs, 2 factors: needs 7
    path = write_study(PEAKED_STUDY.format(model="smooth"), runs)
    data = path.parent / "runs.csv"
    before = _digest(data)
    for command in (["fit", str(path)], ["optimize", str(path)],
                    ["next", str(path), "--runs", "2"]):
        assert main(command) == 2
        err = capsys.readouterr().err
        assert err.count("\n") == 1 and "Traceback" not in err
        assert "model = 'smooth' needs at least 2 runs per factor plus 3 (7 for 2 " \
               "factors), found 6" in err
    assert _digest(data) == before
