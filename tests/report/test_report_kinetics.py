"""The report's storage-kinetics section, workbook sheet and Arrhenius table."""
from __future__ import annotations

import io
import math

import numpy as np
import pandas as pd
import pytest

from tradeoff.cautions import ACCELERATED_CAUTIONS
from tradeoff.derive.derived import arrhenius_table
from tradeoff.derive.load import load_study
from tradeoff.report.data import report_data
from tradeoff.report.html import build_report_html
from tradeoff.report.workbook import build_workbook

R_GAS = 8.314462618   # J/(mol K), CODATA 2018 (exact)
STUDY = """[study]
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
[[responses]]
name = "life"
derive = "shelf_life"
property = "hardness"
limit = 30
direction = "up"
at_temperature = 20
[[responses]]
name = "ea"
derive = "activation_energy"
property = "hardness"
"""


def _arrhenius_k(ea_kj, T_c):
    """k(T) = exp(-Ea/R (1/T - 1/303.15)): 1 per week at 30 degC (Arrhenius law)."""
    return math.exp(-ea_kj * 1e3 / R_GAS * (1 / (T_c + 273.15) - 1 / 303.15))


@pytest.fixture(scope="module")
def study(tmp_path_factory):
    folder = tmp_path_factory.mktemp("kinetics")
    rows = []
    for run, ea in (("R1", 60.0), ("R2", 80.0), ("R3", 70.0), ("R4", 90.0)):
        rows.append(f"{run},0,,hardness,20")
        for T in (20, 30, 40):
            rows += [f"{run},{w},{T},hardness,{20 + _arrhenius_k(ea, T) * w:.10f}"
                     for w in (2, 4, 8)]
    (folder / "storage.csv").write_text("run,week,temp_c,property,value\n"
                                        + "\n".join(rows) + "\n")
    (folder / "runs.csv").write_text("run,protein\nR1,20\nR2,30\nR3,20\nR4,30\n")
    (folder / "study.toml").write_text(STUDY)
    return load_study(folder / "study.toml")


def test_arrhenius_table_matches_the_closed_form(study):
    points = arrhenius_table(study, "life")
    for (run, ea) in (("R1", 60.0), ("R2", 80.0)):
        mine = points[points["run"] == run]
        for _, p in mine.iterrows():
            # noise-free data: every series lies on ln k = ln k(T) (closed form)
            assert p["ln_rate"] == pytest.approx(math.log(_arrhenius_k(ea, p["temperature"])),
                                                 abs=1e-6)
            assert p["inv_temperature"] == pytest.approx(1000 / (p["temperature"] + 273.15))
        assert sorted(mine["series"].unique()) == ["asked", "one-step fit", "own line"]
        assert mine.loc[mine["series"] == "asked", "temperature"].tolist() == [20]


def test_report_has_the_kinetics_section_chart_and_cautions(study):
    data = report_data(study, top=1, seed=1)
    assert set(data["kinetics"]) == {"life", "ea"}
    assert data["cautions"][-len(ACCELERATED_CAUTIONS):] == list(ACCELERATED_CAUTIONS)
    page = build_report_html(study, data=data).decode()
    assert '<section id="kinetics"><h2>Storage kinetics</h2>' in page
    section = page.split('id="kinetics"')[1].split("</section>")[0]
    assert section.count('<div class="chart"><svg') == 1      # one chart per property
    assert "Arrhenius chart: hardness (zero order)" in section
    assert "says nothing about microbial safety" in page.split('id="cautions"')[1]
    sheets = pd.read_excel(io.BytesIO(build_workbook(study, data=data)), sheet_name=None)
    kin = sheets["storage kinetics"]
    assert len(kin) == 8 and set(kin["response"]) == {"life", "ea"}
    ea = kin[kin["response"] == "ea"].set_index("run")["value"]
    assert ea["R2"] == pytest.approx(80.0, rel=1e-6)    # noise-free: the Ea put in
