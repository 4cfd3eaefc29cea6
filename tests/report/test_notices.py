"""Notes sorted into kinds: nothing lost, each caution once, counts that match the
derivation tables they summarise."""
from __future__ import annotations

from pathlib import Path

import pytest

from tradeoff.cautions import ACCELERATED_CAUTIONS, SHELF_LIFE_CAUTION
from tradeoff.report.notices import group_notices, is_caution

DEMO = Path(__file__).resolve().parents[2] / "demo_data"


@pytest.mark.parametrize("name", ["snack_bar_shelf", "snack_bar_raw", "flour_blend"])
def test_every_note_lands_in_one_group_and_each_caution_once(name):
    import tradeoff

    study = tradeoff.load_study(DEMO / f"{name}.toml")
    groups = group_notices(study.notes)
    items = [i for g in groups if g.kind != "caution" for i in g.items]
    plain = [n for n in dict.fromkeys(study.notes) if not is_caution(n)]
    assert sorted(items) == sorted(plain)        # nothing lost, nothing twice
    cautions = [c for g in groups if g.kind == "caution" for c in g.items]
    assert len(cautions) == len(set(cautions))
    assert [g.kind for g in groups] == sorted(
        (g.kind for g in groups), key=["caution", "info", "warning"].index)


def test_shelf_demo_counts_runs_and_responses_as_the_derivation_tables_do():
    import tradeoff
    from tradeoff.derive.derived import derivation_table

    study = tradeoff.load_study(DEMO / "snack_bar_shelf.toml")
    groups = {g.headline: g for g in group_notices(study.notes)}
    far_runs, beyond_runs = set(), set()
    for r in ("shelf_life_20C", "shelf_life_20C_mean"):
        t = derivation_table(study, r)
        far_runs |= set(t.loc[t["flag"].str.startswith("extrapolated far"), "run"])
        beyond_runs |= set(t.loc[t["flag"].str.startswith("extrapolated:"), "run"])
    far = groups["Extrapolated far beyond the data"]
    assert set(far.runs) == far_runs and set(far.subjects) == {"shelf_life_20C",
                                                               "shelf_life_20C_mean"}
    assert far.summary == f"Extrapolated far beyond the data (2 responses, {len(far_runs)} runs)"
    assert set(groups["Extrapolated"].runs) == beyond_runs
    cautions = groups["Cautions"].items
    # the storage cautions, once each, however many responses repeat them
    assert set(ACCELERATED_CAUTIONS) | {SHELF_LIFE_CAUTION} == set(cautions)
    info = groups["How each derived response is computed"]
    assert info.kind == "info" and len(info.items) == 5 and not info.runs


def test_edge_warnings_of_two_factors_are_one_kind():
    texts = ["'glycerol' sits at the high edge of the searched region (10 %) and D would "
             "still rise beyond it: extend the range",
             "'mix_temp' sits at the low edge of the searched region (40 degC) and D would "
             "still rise beyond it: extend the range",
             "EXTRAPOLATED: something shouted"]
    groups = group_notices(texts)
    assert [g.headline for g in groups] == ["Settings at the edge of the searched region",
                                            "Extrapolated"]
    assert groups[0].summary == "Settings at the edge of the searched region (2 notes)"
