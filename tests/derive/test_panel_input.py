"""Panel tables as labs lay them out: mapped columns, wide layout, per-attribute
scales and kinds, sessions, and the refusals of bad input (one line, exit 2)."""
from __future__ import annotations

import json

import numpy as np
import pandas as pd
import pytest

from tradeoff.cli.entry import main
from tradeoff.derive.load import load_study
from tradeoff.derive.panel_study import panel_scores

HEAD = """[study]
data = "runs.csv"
model = "main"
[[factors]]
name = "sugar"
low = 0
high = 1
[[responses]]
name = "sweet"
derive = "panel_adjusted"
attribute = "sweetness"
goal = "maximize"
lower = 0
upper = 100
"""
RUNS = "run,sugar\nB1,0\nB2,1\nB3,0\nB4,1\n"


def _long_rows():
    rng = np.random.default_rng(4)
    rows = []
    for s in ("1", "2"):
        for j in range(5):
            for i, b in enumerate(["B1", "B2", "B3", "B4"]):
                rows.append({"bottle": b, "judge": f"J{j}", "sitting": s,
                             "what": "sweetness",
                             "mark": round(float(30 + 20 * (i % 2) + rng.normal(0, 5)), 1)})
                rows.append({"bottle": b, "judge": f"J{j}", "sitting": s, "what": "bitter",
                             "mark": int(rng.integers(1, 6))})
    return pd.DataFrame(rows)


def _write(tmp_path, panel_section, table: pd.DataFrame):
    (tmp_path / "runs.csv").write_text(RUNS)
    table.to_csv(tmp_path / "panel.csv", index=False)
    path = tmp_path / "s.toml"
    path.write_text(HEAD + panel_section)
    return path


MAPPED = """[panel]
data = "panel.csv"
columns = {run = "bottle", assessor = "judge", attribute = "what", score = "mark", session = "sitting"}
[[panel.attributes]]
name = "sweetness"
scale = [0, 100]
[[panel.attributes]]
name = "bitter"
scale = [1, 5]
kind = "category"
labels = ["none", "slight", "moderate", "strong", "very strong"]
"""


def test_mapped_long_and_wide_tables_read_the_same_scores(tmp_path):
    long = _long_rows()
    study = load_study(_write(tmp_path, MAPPED, long))
    sec, frame = panel_scores(study)
    assert sec["attributes"]["bitter"]["kind"] == "category"
    wide = long.pivot_table(index=["bottle", "judge", "sitting"], columns="what",
                            values="mark").reset_index()
    section = MAPPED.replace(', attribute = "what", score = "mark"', "") \
        .replace('data = "panel.csv"', 'data = "panel.csv"\nlayout = "wide"')
    study2 = load_study(_write(tmp_path, section, wide))
    _, frame2 = panel_scores(study2)
    key = ["run", "assessor", "attribute", "session"]
    a = frame.sort_values(key).reset_index(drop=True)
    b = frame2.sort_values(key).reset_index(drop=True)
    assert (a[key] == b[key]).all().all()
    assert np.allclose(a["score"], b["score"])
    assert study2.runs["sweet"].notna().all()


def test_panel_command_json_has_the_promised_shape(tmp_path, capsys):
    path = _write(tmp_path, MAPPED, _long_rows())
    assert main(["panel", str(path), "--json"]) == 0
    out = json.loads(capsys.readouterr().out)
    sweet = out["attributes"]["sweetness"]
    assert {"run", "assessor", "run x assessor"} <= set(sweet["anova"])
    assert {"f", "df", "df_denominator", "p"} <= set(sweet["anova"]["run"])
    assert sweet["anova"]["run"]["tested_against"] == "run x assessor"
    assert {"run", "mean", "se"} <= set(sweet["means"][0])
    assert {"a", "b", "diff", "se", "p"} <= set(sweet["pairs"][0])
    assert len(sweet["pairs"]) == 6
    assert out["attributes"]["bitter"]["kind"] == "category"
    assert main(["panel", str(path)]) == 0
    text = capsys.readouterr().out
    assert "sweetness" in text and "run x assessor" in text and "alike-set" in text


@pytest.mark.parametrize("change, pattern", [
    (lambda s, t: (s.replace('session = "sitting"', 'session = "visit"'), t),
     r"^panel\.csv: no column 'visit' in the panel table \(columns = \{session"),
    (lambda s, t: (s, t.assign(mark=t["mark"].where(t.index != 7, 7))),
     r"^panel\.csv, row 9, column 'mark': bitter score 7 is outside its scale 1 to 5"),
    (lambda s, t: (s, t.assign(mark=t["mark"].where(t.index != 7, 2.5))),
     r"^panel\.csv, row 9, column 'mark': bitter score 2.5 is not a point of its "
     r"category scale"),
    (lambda s, t: (s, t.assign(sitting="1").drop_duplicates(["bottle", "judge", "what"])),
     r"^panel\.csv: column 'sitting' holds one session only"),
])
def test_bad_panel_input_is_one_line_and_exit_2(tmp_path, capsys, change, pattern):
    section, table = change(MAPPED, _long_rows())
    path = _write(tmp_path, section, table)
    before = (tmp_path / "panel.csv").read_bytes()
    assert main(["panel", str(path)]) == 2
    err = capsys.readouterr().err.strip()
    assert err.count("\n") == 0 and "Traceback" not in err
    import re
    assert re.match(pattern, err.removeprefix("error: ")), err
    assert (tmp_path / "panel.csv").read_bytes() == before


def test_wide_table_without_the_response_attribute(tmp_path, capsys):
    long = _long_rows()
    wide = long.pivot_table(index=["bottle", "judge", "sitting"], columns="what",
                            values="mark").reset_index().drop(columns="sweetness")
    section = MAPPED.replace(', attribute = "what", score = "mark"', "") \
        .replace('data = "panel.csv"', 'data = "panel.csv"\nlayout = "wide"')
    path = _write(tmp_path, section, wide)
    before = (tmp_path / "panel.csv").read_bytes()
    assert main(["check", str(path)]) == 2
    err = capsys.readouterr().err.strip()
    assert err.count("\n") == 0 and "Traceback" not in err
    assert "no column 'sweetness' in the wide panel table for response 'sweet'" in err
    assert (tmp_path / "panel.csv").read_bytes() == before


@pytest.mark.parametrize("extra, pattern", [
    ('fit_on = "score"\n', r"fit_on = 'score': use \"runs\""),
])
def test_fit_on_is_checked_when_the_study_loads(tmp_path, capsys, extra, pattern):
    import re

    path = _write(tmp_path, MAPPED, _long_rows())
    path.write_text(path.read_text().replace('upper = 100\n', 'upper = 100\n' + extra))
    assert main(["check", str(path)]) == 2
    assert re.search(pattern, capsys.readouterr().err)


def test_fit_on_only_with_a_panel_response(tmp_path, capsys):
    path = _write(tmp_path, MAPPED + '[[responses]]\nname = "x"\nfit_on = "scores"\n',
                  _long_rows())
    assert main(["check", str(path)]) == 2
    assert "'fit_on' is only used with derive" in capsys.readouterr().err
