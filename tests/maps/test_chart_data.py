"""Chart data written by our fast path equals Altair's own data step.

Reference: Altair's ``default_data_transformer`` (the library's own cleaning
of a DataFrame into records), applied to the same tables.
"""
import json

import numpy as np
import pandas as pd
import pytest
from altair.vegalite.data import default_data_transformer

from tradeoff.maps.chart_data import records, use_records


def _same(frame):
    ours = records(frame)
    theirs = default_data_transformer(frame)
    assert json.dumps(ours, sort_keys=True) == json.dumps(theirs, sort_keys=True)


def test_numbers_text_flags_and_gaps_match_altair():
    frame = pd.DataFrame({
        "x": [0.5, np.nan, np.inf, -2.0],
        "n": np.array([1, 2, 3, 4], dtype=np.int64),
        "ok": [True, False, True, False],
        "name": ["a", None, "c", "d"],
        "mixed": [np.float64(1.5), np.nan, "text", np.int64(3)],
    })
    _same(frame)


def test_empty_table_matches_altair():
    _same(pd.DataFrame({"x": pd.Series([], dtype=float), "name": pd.Series([], dtype=object)}))


def test_unusual_columns_go_through_altair():
    frame = pd.DataFrame({"when": pd.to_datetime(["2026-01-01", "2026-02-01"]),
                          "kind": pd.Categorical(["a", "b"])})
    _same(frame)


def test_a_chart_written_in_the_context_is_the_same_spec():
    import altair as alt

    frame = pd.DataFrame({"x": [1.0, 2.0, np.nan], "y": [3, 4, 5], "g": ["a", "b", "a"]})
    chart = alt.Chart(frame).mark_line().encode(x=alt.X("x:Q"), y=alt.Y("y:Q"),
                                                detail=alt.Detail("g:N"))
    plain = chart.to_dict(validate=False)
    with use_records():
        fast = chart.to_dict(validate=False)
    assert fast == plain
    assert alt.data_transformers.active != "tradeoff_records"  # the context ends


def test_non_text_column_names_are_refused_as_altair_refuses_them():
    bad = pd.DataFrame({1: [1.0]})
    with pytest.raises(ValueError, match="column name"):
        default_data_transformer(bad)
    with pytest.raises(ValueError, match="column name"):
        records(bad)


def test_limits_legend_spells_out_each_response_title():
    # the map's lines keep short names; the legend under them shows the titles,
    # quotes and all (drawn by the SVG renderer, so the label expression runs)
    import altair as alt
    import vl_convert

    from tradeoff.maps.pictures import titles_expr

    frame = pd.DataFrame({"x": [0.0, 1.0, 0.0, 1.0], "y": [0.0, 1.0, 1.0, 0.0],
                          "name": ["aw", "aw", "cost", "cost"]})
    titles = {"aw": 'Water activity "aw"', "cost": "Cost per bar (EUR)"}
    chart = alt.Chart(frame).mark_line().encode(
        x=alt.X("x:Q"), y=alt.Y("y:Q"),
        color=alt.Color("name:N", legend=alt.Legend(labelExpr=titles_expr(titles))))
    svg = vl_convert.vegalite_to_svg(chart.to_json())
    assert "Water activity &quot;aw&quot;" in svg or 'Water activity "aw"' in svg
    assert "Cost per bar (EUR)" in svg
