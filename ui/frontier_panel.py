"""The results view's trade-off frontier: any two goals, a click picks a point.

Runs like a view: read state -> widgets -> call the library (through
``cached``) -> show. The chart is ``tradeoff.maps.frontier_picture`` (the
report draws the same); the knee, the D optimum and the exchange rate are read
out beside it. Clicking a point makes that point the chosen solution for the
rest of the page (the maps, the traces, the what-if) until another solution is
chosen above or "Back" is pressed.
"""
from __future__ import annotations

import dataclasses

import streamlit as st

from tradeoff import TradeoffError
from tradeoff_ui import cached, charts, text

__all__ = ["frontier_panel"]


def _tradable(study, fitted) -> list[str]:
    """Goals with a direction (maximize, minimize, target) that take part in D."""
    out = [r.name for r in study.responses
           if r.goal.kind in ("maximize", "minimize", "target") and r.name in fitted.models]
    out += [f.name for f in study.factors if not f.is_categorical
            and f.goal.kind in ("maximize", "minimize", "target")]
    return out


def _most_conflicting(study, fitted, goals) -> tuple[str, str]:
    """The pair the chart opens on: the two goals in greatest conflict (the report's)."""
    try:
        table = cached.conflicts(study, fitted)
    except TradeoffError:
        return goals[0], goals[1]
    for row in table.itertuples():
        if row.a in goals and row.b in goals:
            return row.a, row.b
    return goals[0], goals[1]


def _display(study, name: str) -> str:
    thing = study.response(name) if name in study.response_names else study.factor(name)
    return thing.display()


def _label(study, name: str) -> str:
    thing = study.response(name) if name in study.response_names else study.factor(name)
    return thing.label or name


def _value(point: dict, name: str) -> float:
    return point["predicted"][name] if name in point["predicted"] else point["settings"][name]


def frontier_panel(study, fitted, result, chosen):
    """Draw the frontier; return the solution the rest of the page looks at."""
    from tradeoff.maps.frontier_picture import frontier_frame, frontier_note

    ss = st.session_state
    goals = _tradable(study, fitted)
    if not result.feasible or len(goals) < 2:
        return chosen
    st.subheader("What one goal costs in another")
    epoch = ss.get("epoch", 0)
    # the pair the user chose last (kept through a reload), else the worst conflict
    kept = ss["frontier_pair"]
    first = kept if len(kept) == 2 and set(kept) <= set(goals) and kept[0] != kept[1] \
        else _most_conflicting(study, fitted, goals)
    c1, c2, _ = st.columns([2, 2, 3])
    a = c1.selectbox("Across", goals, index=goals.index(first[0]), key=f"r_front_a_{epoch}",
                     format_func=lambda n: _display(study, n))
    rest = [g for g in goals if g != a]
    b = c2.selectbox("Up", rest, index=rest.index(first[1]) if first[1] in rest else 0,
                     key=f"r_front_b_{epoch}", format_func=lambda n: _display(study, n))
    ss["frontier_pair"] = [a, b]
    try:
        front = cached.frontier(study, fitted, (a, b))
    except TradeoffError as exc:
        st.error(text.plain(exc))
        return chosen
    if ss["frontier_seen"] is not None and ss["frontier_seen"] != chosen.label:
        ss["frontier_nonce"] += 1  # another solution chosen above: drop the pick
        ss["frontier_seen"] = None
    table = frontier_frame(front, study)
    titles = tuple((n, _display(study, n)) for n in front.between)
    left, right = st.columns([3, 2])
    event = charts.show(charts.frontier_chart, table, front.d_optimum, tuple(front.between),
                        titles, where=left, on_select="rerun", selection_mode="pick",
                        key=f"r_front_{epoch}_{a}_{b}_{ss['frontier_nonce']}")
    left.caption(text.plain(frontier_note(front)) + " Click a square to look closer at "
                 "that setting below. The chart opens on the two goals in greatest "
                 "conflict (their desirabilities rank most against each other over the "
                 "region).")
    picked = None
    try:
        rows = event.selection["pick"]
        picked = int(rows[0]["point"]) if rows else None
    except (AttributeError, KeyError, IndexError, TypeError, ValueError):
        picked = None
    _readout(right, study, front, picked)
    if picked is None or picked >= len(front.solutions):
        return chosen
    if ss["frontier_seen"] is None:
        ss["frontier_seen"] = chosen.label
    if right.button(f"Back to {text.plain(ss['frontier_seen'])}", key="r_front_back"):
        ss["frontier_nonce"] += 1
        ss["frontier_seen"] = None
        st.rerun()
    return dataclasses.replace(front.solutions[picked],
                               label=f"frontier point #{picked}")


def _with_unit(value: float, unit: str) -> str:
    return text.plain(f"{value:.4g} {unit}".strip())


def _readout(where, study, front, picked) -> None:
    """The knee, the D optimum and the exchange rate beside the chart."""
    a, b = front.between
    unit = front.units
    lines = []
    o = front.d_optimum
    la, lb = _label(study, a), _label(study, b)
    lines.append(f"**Best D** ({o['D']:.3f} before rounding to the steps): {text.plain(la)} "
                 f"{_with_unit(_value(o, a), unit[a])}, {text.plain(lb)} "
                 f"{_with_unit(_value(o, b), unit[b])}; "
                 + ("on the frontier" if o["on_frontier"] else
                    "inside it (better on the other goals)")
                 + f", nearest point #{o['nearest']}.")
    if front.knee is not None:
        k = front.knee
        lines.append(f"**Knee**, point #{k['index']}: {text.plain(la)} {_value(k, a):.4g}, "
                     f"{text.plain(lb)} {_value(k, b):.4g}, D {k['D']:.3f}: where the "
                     "frontier bends most.")
    if picked is not None and picked < len(front.points):
        p = front.points[picked]
        lines.append(f"**Picked**, point #{picked}: {text.plain(la)} {_value(p, a):.4g}, "
                     f"{text.plain(lb)} {_value(p, b):.4g}, D {p['D']:.3f}.")
    where.markdown("\n\n".join(lines))
    words = front.exchange_words(rows=4, labels={a: la, b: lb})
    if words:
        where.markdown("**Exchange rate along the frontier**\n\n"
                       + "\n".join(f"- {text.plain(w)}" for w in words))
