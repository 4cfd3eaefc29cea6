"""Panels shared by the views: a smooth model, the model comparison, "Make next",
and the one line a study without factors gets where models and searches would be.

Each panel runs like a view: read state -> widgets -> call the library (through
``cached``) -> show. No statistics here.
"""
from __future__ import annotations

import pandas as pd
import streamlit as st

from tradeoff import TradeoffError
from tradeoff_ui import cached, charts, text

__all__ = ["smooth_model", "model_comparison", "make_next", "stop_without_factors",
           "show_notices", "study_or_stop", "recipes_to_make", "sheet_for"]


def show_notices(texts, *, cautions=None, shown=()) -> list[str]:
    """Notes and warnings, one box per kind (``tradeoff.report.notices``).

    A kind of one sentence is one box; a kind of several says what they have in
    common and how many responses and runs they concern, with the sentences in an
    expander under it. Notes on how things were computed go in one collapsed
    expander each. Cautions are not shown here: they are returned (each once,
    without those in ``shown``) so the page states them in its one caution box;
    with ``cautions`` (a Streamlit placeholder) they are written there at once.
    """
    from tradeoff.report.notices import group_notices

    found = []
    for g in group_notices(texts):
        if g.kind == "caution":
            found += [c for c in g.items if c not in shown and not any(c in s for s in shown)]
            continue
        if g.kind == "info":
            with st.expander(text.plain(g.summary), icon=":material/info:"):
                st.markdown("\n".join(f"- {text.plain(i)}" for i in g.items))
            continue
        if len(g.items) == 1:
            st.warning(text.plain(g.items[0][:1].upper() + g.items[0][1:]),
                       icon=":material/warning:")
            continue
        st.warning(text.plain(g.summary), icon=":material/warning:")
        with st.expander(f"The {len(g.items)} notes of this kind"):
            st.markdown("\n".join(f"- {text.plain(i)}" for i in g.items))
    if cautions is not None and found:
        cautions.info(text.plain(" ".join([*shown, *found])), icon=":material/info:")
    return found


def study_or_stop(*, factors: bool = True):
    """The open study; a study that cannot be read stops the view with its one-line
    message, and (``factors``) so does a study that varies no factor."""
    try:
        study = cached.current_study()
    except TradeoffError as exc:
        st.error(text.plain(exc))
        st.stop()
    if factors:
        stop_without_factors(study)
    return study


def recipes_to_make(study) -> tuple[dict[str, dict], str | None]:
    """The recipes to make (label -> settings): those pinned, else the best balance
    (with a line saying so). A search that fails stops the view with its message."""
    if st.session_state["pins"]:
        return dict(st.session_state["pins"]), None
    try:
        best = cached.optimize(study, cached.fit(study)).best
    except TradeoffError as exc:
        st.error(text.plain(exc))
        st.stop()
    return {best.label: dict(best.settings)}, (
        f"No recipe pinned: the sheet is for the best balance, {text.plain(best.label)}. "
        "Pin others on Recommended settings to make them too.")


def sheet_for(study, recipes: dict[str, dict], choices: dict):
    """The batch sheet of ``recipes`` with the batch sheet view's choices
    (``st.session_state["batch"]``; tradeoff.study.session.BATCH_KEYS)."""
    from tradeoff.confirm.batch_sheet import batch_sheet, taken_run_ids

    made = {k: v for k, v in recipes.items() if k not in choices.get("left_out", [])}
    return batch_sheet(study, made, batch_g=float(choices.get("size_g", 1000.0)),
                       step_g=float(choices.get("step_g", 1.0)),
                       batches=int(choices.get("batches", 2)),
                       seed=int(choices.get("seed", study.seed)),
                       percent_factors=tuple(choices.get("percent", ())),
                       rest=choices.get("rest") or "rest of the recipe",
                       taken=taken_run_ids(study))


def stop_without_factors(study) -> None:
    """A study without factors (products stored or tasted, nothing varied): say in one
    line that there is nothing to model or search here, and stop the view."""
    if study.factors:
        return
    st.info("This study varies no factor, so there is nothing to model or search. Each "
            "product's derived values (shelf life with its bounds, activation energy, "
            "panel means ...) are on 'Study and runs' and in the report.",
            icon=":material/info:")
    st.stop()


def smooth_model(study, response, model, report: dict) -> None:
    """A smooth model's figures: fit, length scales, runs predicted from the others."""
    cols = st.columns(4)
    cols[0].metric("Runs used", report["n"])
    for col, key, title in ((cols[1], "r2", "R²"), (cols[2], "loo_r2", "Leave-one-out R²"),
                            (cols[3], "noise_sd", "Noise SD")):
        value = report[key]
        col.metric(title, "-" if value is None else (f"{value:.3f}" if key != "noise_sd"
                                                     else f"{value:.3g}"))
    st.caption("A smooth model (Gaussian process) predicts each setting from the runs near "
               "it. It has no terms, so no effects or p-values. Leave-one-out R² is how "
               "well each run is predicted by the model refitted without it: the honest "
               "figure, and the same one the model comparison shows.")
    show_notices(report["warnings"])
    left, right = st.columns([1, 1])
    with left:
        st.subheader("Length scales, shortest first")
        st.caption("How far a factor must move before the response changes appreciably: "
                   "short = it matters a lot, long = it hardly matters.")
        charts.show(charts.length_scale_chart, model.length_scale_table(),
                    width="stretch")
    with right:
        st.subheader("Each run predicted from the others")
        st.caption("Points near the line: the model predicts runs it has not seen. Dark "
                   "points are runs more than 3 standard deviations off.")
        charts.show(charts.loo_chart, model.diagnostics_.reset_index(),
                    charts.titled(response.label, response.unit),
                    width="stretch")


def model_comparison(study, name: str) -> None:
    """The cross-validated comparison of one response's models, with a switch."""
    ss = st.session_state
    st.subheader("Which model predicts best")
    st.caption("Each run is predicted by each model fitted without it (ten folds above "
               "50 runs); R² and RMSE of those predictions, best first. The model in use "
               "shows the very figure its fit reports above. Prefer the simpler model when "
               "the figures are close.")
    if name not in ss["compare_shown"]:
        if not st.button("Compare the models", key=f"m_compare.{name}"):
            return
        ss["compare_shown"] = ss["compare_shown"] | {name}
    try:
        comparison = cached.compare(study, name)
    except TradeoffError as exc:
        st.info(text.plain(f"Not compared: {exc}"))
        return
    current = study.model_for(study.response(name))
    table = pd.DataFrame(comparison.to_list())
    unit = study.response(name).unit
    table = pd.DataFrame({
        "model": table["model"],
        "in use": ["yes" if m == current else "" for m in table["model"]],
        "leave-one-out R²" if comparison.method == "leave-one-out" else
        "cross-validated R²": table["loo_r2"],
        f"RMSE ({unit})" if unit else "RMSE": table["rmse"],
        "ranked": ["no: its squares are confounded" if c else "yes"
                   for c in table["confounded"]]})
    st.dataframe(table, hide_index=True, key=f"m_compare_table.{name}",
                 column_config={table.columns[2]: st.column_config.NumberColumn(
                     format="%.3f"), table.columns[3]: st.column_config.NumberColumn(
                     format="%.4g")})
    st.caption(f"Method: {comparison.method}. Best: **{comparison.best}**."
               + text.plain("".join(f" {n}." for n in comparison.notes)))
    models = [r["model"] for r in comparison.rows]
    if not models:
        return
    left, right = st.columns([2, 1])
    choice = left.selectbox("Use this model for the response", models, index=0,
                            key=f"m_compare_pick.{name}")
    right.button("Use it", key=f"m_compare_use.{name}", disabled=choice == current,
                 on_click=_use_model, args=(name, choice))


def _use_model(name: str, model: str) -> None:
    """Switch a response's model (a callback: it runs before the page, so the
    model selector shows the new choice too)."""
    ss = st.session_state
    ss["models"] = {**ss["models"], name: model}
    ss[f"m_model.{name}"] = model


def make_next(study, fitted, recommended=None) -> None:
    """Suggested next runs by expected improvement of D, with their run sheet.

    ``recommended``: the solution the page recommends; when it repeats a run
    already made, the panel says so (a confirmation run is then the next step).
    """
    from tradeoff.search.next_batch import made_run_at

    ss = st.session_state
    st.subheader("Make next")
    st.caption("Runs chosen one at a time for their expected improvement of D over the "
               "best run made so far, each given the runs picked before it, so the batch "
               "spreads out. Where no setting is expected to improve D, a run goes where "
               "the models are least sure instead, and the list says so. Settings lie in "
               "the searched region and obey the rules.")
    if recommended is not None:
        same = made_run_at(study, recommended.coded)
        if same is not None:
            st.info(text.plain(
                f"The recommendation {recommended.label} is run {same}, already made: "
                "the sensible next run is a confirmation at those settings (made again, "
                "to see whether the result repeats)."), icon=":material/replay:")
    c1, c2, c3 = st.columns([1, 1, 1])
    runs = c1.number_input("Runs to suggest", 1, 12, value=int(ss["next_runs"] or 4),
                           key="r_next_n")
    distance = c2.number_input("Keep apart by (coded units)", 0.05, 1.0, value=0.3,
                               step=0.05, key="r_next_gap",
                               help="No suggestion lies closer than this to a run made or "
                                    "another suggestion (distance over all factors in "
                                    "coded units, -1 to +1 across each tested range).")
    c3.write("")
    if c3.button("Suggest runs", key="r_next_go"):
        ss["next_runs"] = int(runs)
    if not ss["next_runs"]:
        return
    try:
        batch = cached.next_batch(study, fitted, int(runs), float(distance))
    except TradeoffError as exc:
        st.error(text.plain(exc))
        return
    best = batch.best_so_far
    if best["desirability"] > 0:
        st.markdown(f"Best run made so far: **{text.plain(best['run'])}**, predicted D = "
                    f"{best['desirability']:.3f}.")
    else:
        st.markdown("No run made so far has D above 0: each misses the limit of some "
                    "goal, so every suggestion is measured against 0.")
    learn = any(s.purpose == "learn" for s in batch.runs)
    (st.info if learn else st.caption)(text.plain(batch.summary))
    ids = [str(v) for v in batch.sheet["run"]]  # the ids the run sheet gives them
    rows = []
    for rid, s in zip(ids, batch.runs):
        row = {"run": rid, "expected gain in D": (f"{s.expected_improvement:.3f}"
                                                  if s.purpose == "improve" else
                                                  "none: to learn"),
               "predicted D": s.desirability}
        for f in study.factors:
            v = s.settings[f.name]
            # as the library rounded it (to a lab's precision): the D beside it is for
            # exactly these settings, so the row is one recipe
            row[f.display()] = v
        rows.append(row)
    st.dataframe(pd.DataFrame(rows), hide_index=True, key="r_next_table",
                 column_config={"predicted D": st.column_config.NumberColumn(format="%.3f")})
    # the reasons are sentences: listed below the table, where they are not cut off
    st.markdown("\n".join(f"- **{text.plain(rid)}**: {text.plain(s.why)}"
                           for rid, s in zip(ids, batch.runs)))
    show_notices([*batch.notes, *batch.warnings])
    st.download_button("Run sheet of these runs (.csv)",
                       batch.sheet.to_csv(index=False).encode("utf-8"),
                       file_name="next_runs.csv", mime="text/csv", key="r_next_sheet")
