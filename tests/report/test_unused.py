"""``check`` names the data columns the study does not use, and what they might be.

What a column called batch, day, replicate or notes usually holds in a lab's
run table, and that a batch or day is taken out of the models as blocks, is
common practice (a fact of the trade); the test checks that every unused
column is named, that every used one is not, and that the key offered is the
one the study file reads.
"""
from __future__ import annotations

import json

import numpy as np

from tradeoff import load_study
from tradeoff.cli import main
from tradeoff.report.summary import study_summary, summary_text

STUDY = """\
[study]
name = "bars with extra columns"
data = "runs.csv"
model = "main"

[[factors]]
name = "protein"
low = 20
high = 30

[[responses]]
name = "hardness"
goal = "minimize"
lower = 10
upper = 30
columns = ["hard_1", "hard_2"]

[[responses]]
name = "aw"
"""


def _runs() -> str:
    rng = np.random.default_rng(7)
    rows = ["run,std_order,protein,hard_1,hard_2,aw,replicate,batch,day,whole_plot,"
            "notes,colour_L,site_code"]
    for i in range(8):
        p = (20, 30)[i % 2]
        rows.append(f"R{i + 1},{i + 1},{p},{0.8 * p + rng.normal():.2f},"
                    f"{0.8 * p + rng.normal():.2f},{0.6 + 0.01 * i:.3f},{i // 4 + 1},"
                    f"B{i // 2 + 1},{i // 4 + 1},{i // 2 + 1},"
                    f"{'crumbly edge' if i == 3 else ''},{60 + 3 * rng.normal():.1f},"
                    f"{('north', 'south')[i // 4]}")
    return "\n".join(rows) + "\n"


def test_every_unused_column_is_named_with_a_guess_and_a_key(write_study):
    study = load_study(write_study(STUDY, _runs()))
    unused = {u["column"]: u for u in study_summary(study)["unused_columns"]}
    # used: factor, responses (aw by name, hardness through its piece columns), run id
    assert not {"run", "protein", "hard_1", "hard_2", "aw"} & set(unused)
    assert list(unused) == ["std_order", "replicate", "batch", "day", "whole_plot",
                            "notes", "colour_L", "site_code"]
    assert all(set(u) == {"column", "might_be", "key"} for u in unused.values())
    assert unused["batch"]["key"] == 'blocks = "batch" under [study]'
    assert unused["day"]["key"] == 'blocks = "day" under [study]'
    assert unused["replicate"]["key"] == 'blocks = "replicate" under [study]'
    assert unused["replicate"]["might_be"].startswith("a replicate number")
    # the models now analyse whole plots (core/study/whole_plots.py)
    assert unused["whole_plot"]["key"] == 'whole_plot = "whole_plot" under [study]'
    assert unused["whole_plot"]["might_be"].startswith("a whole plot")
    assert unused["notes"] == {"column": "notes", "key": None,
                               "might_be": "notes or text: kept, not modelled"}
    assert unused["std_order"]["key"] is None
    assert unused["colour_L"]["key"] == '[[responses]] name = "colour_L"'
    # named by its cells only: two sites, four runs each -> a grouping
    assert unused["site_code"]["key"] == 'blocks = "site_code" under [study]'


def test_the_offered_key_uses_the_column(write_study):
    # following the hint: blocks = "day" makes day the blocks column, no longer unused
    text = STUDY.replace('model = "main"', 'model = "main"\nblocks = "day"')
    study = load_study(write_study(text, _runs()))
    assert study.block_column == "day"
    assert "day" not in {u["column"] for u in study_summary(study)["unused_columns"]}
    assert study.block_labels() is not None


def test_check_prints_and_gives_json(write_study, capsys):
    path = write_study(STUDY, _runs())
    assert main(["check", str(path)]) == 0
    text = capsys.readouterr().out
    assert "Columns not used (kept in the table, not in any model)" in text
    line = next(x for x in text.splitlines() if x.strip().startswith("batch"))
    assert "might be a batch or day" in line and 'to use it: blocks = "batch"' in line
    assert main(["check", str(path), "--json"]) == 0
    out = json.loads(capsys.readouterr().out)
    assert {"column": "notes", "might_be": "notes or text: kept, not modelled",
            "key": None} in out["unused_columns"]


def test_no_section_when_every_column_is_used(write_study):
    study = load_study(write_study())  # the basic study uses every column
    summary = study_summary(study)
    assert summary["unused_columns"] == []
    assert "Columns not used" not in summary_text(summary)
