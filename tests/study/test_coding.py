"""Coded units: -1 at low, +1 at high, 0 at the centre (common practice)."""
from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from hypothesis import given, settings, strategies as st

from tradeoff import Factor, to_coded, to_natural
from tradeoff.study.coding import code_values

PROTEIN = Factor(name="protein", label="protein", low=20.0, high=30.0)
BINDER = Factor(name="binder", label="binder", levels=("rice syrup", "date paste"))


def test_known_values():
    assert list(code_values(PROTEIN, [20, 25, 30, 35])) == [-1.0, 0.0, 1.0, 2.0]
    assert list(code_values(BINDER, ["rice syrup", "date paste"])) == [-1.0, 1.0]


def test_unknown_level_is_named():
    with pytest.raises(Exception, match=r"'oat syrup' is not one of its levels"):
        code_values(BINDER, ["oat syrup"])


@settings(max_examples=200, deadline=None)
@given(low=st.floats(-1e6, 1e6), width=st.floats(1e-3, 1e6),
       values=st.lists(st.floats(-3, 3), min_size=1, max_size=20))
def test_round_trip(low, width, values):
    factor = Factor(name="x", label="x", low=low, high=low + width)
    natural = to_natural([factor], np.array(values)[:, None])
    back = to_coded([factor], natural)[:, 0]
    assert np.allclose(back, values, atol=1e-6 * max(1.0, abs(low) / width))


@settings(max_examples=50, deadline=None)
@given(st.lists(st.sampled_from(["rice syrup", "date paste"]), min_size=1, max_size=10))
def test_categorical_round_trip(levels):
    table = pd.DataFrame({"protein": [25.0] * len(levels), "binder": levels})
    coded = to_coded([PROTEIN, BINDER], table)
    assert list(to_natural([PROTEIN, BINDER], coded)["binder"]) == levels
