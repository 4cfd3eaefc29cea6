"""The results view's frontier panel, driven headless (AppTest) on the demo study.

The frontier's numbers are checked in tests/search/test_frontier.py; here: the
panel opens on the pair in greatest conflict (recomputed with the library's
goal_conflicts, itself checked against ranks in tests/report), reads out the
knee, the best D and the exchange rate, and follows a pair the user picks.
A click on a point is checked in a real browser (the report of this change).
"""
from __future__ import annotations

from conftest import reopened
from test_ui_views import start


def test_frontier_panel_opens_on_the_most_conflicting_pair_and_follows_a_pick():
    from tradeoff import load_study
    from tradeoff.search.conflict import goal_conflicts

    at = start("results")
    assert "What one goal costs in another" in [s.value for s in at.subheader]
    across = next(s for s in at.selectbox if s.label == "Across")
    up = next(s for s in at.selectbox if s.label == "Up")
    study = load_study(at.session_state["origin"]["path"])
    first = goal_conflicts(study, seed=study.seed).iloc[0]
    assert {across.value, up.value} == {first["a"], first["b"]}
    text = "\n".join(m.value for m in at.markdown)
    assert "**Knee**" in text and "**Best D**" in text
    assert "Exchange rate along the frontier" in text
    across.set_value("liking").run()
    up = next(s for s in at.selectbox if s.label == "Up")
    up.set_value("cost").run()
    assert not at.exception and not at.error
    text = "\n".join(m.value for m in at.markdown)
    # the exchange rate in the pair's units, the goals by their labels
    assert "points of Overall liking (9-point hedonic) costs" in text


def test_the_pair_chosen_survives_a_reload():
    """The two goals the user drew the frontier between are drawn again in a new
    browser session at the same address (the session file keeps them)."""
    at = start("results")
    next(s for s in at.selectbox if s.label == "Across").set_value("liking").run()
    next(s for s in at.selectbox if s.label == "Up").set_value("cost").run()
    assert at.session_state["frontier_pair"] == ["liking", "cost"]
    again = reopened(at, "results")
    # the frontier's pair is the first "Across" and "Up" (the maps' axes follow)
    assert [next(s.value for s in again.selectbox if s.label == label)
            for label in ("Across", "Up")] == ["liking", "cost"]
    assert not again.error
    assert [w.value for w in again.warning] == [w.value for w in at.warning]
