"""The one rounding rule for chances (percent, one decimal, never 'certain')."""
from __future__ import annotations

import pytest

from tradeoff import chance_text
from tradeoff.search.chance import CHANCE_RULE


@pytest.mark.parametrize("p, shown", [
    (0.12345, "12.3 %"), (0.5, "50.0 %"), (0.9984, "99.8 %"),
    # a Monte Carlo estimate is never a certainty: the ends say so (common practice
    # for reporting simulated probabilities)
    (0.99951, "> 99.9 %"), (1.0, "> 99.9 %"), (0.0004, "< 0.1 %"), (0.0, "< 0.1 %"),
    (0.0005, "0.1 %"), (None, "-"), (float("nan"), "-")])
def test_one_rule_for_every_chance(p, shown):
    assert chance_text(p) == shown


def test_the_rule_is_stated():
    assert "one decimal" in CHANCE_RULE and "> 99.9 %" in CHANCE_RULE
