"""Plan the runs: any design the plan command offers, judged in plain words, two
candidates side by side, the run sheet and its study file to download."""
from __future__ import annotations

import re
from pathlib import Path

import pandas as pd
import streamlit as st

from tradeoff import TradeoffError
from tradeoff.plan.plan_compare import compare_plans
from tradeoff.plan.plan_request import design_choices, plan_study_file
from tradeoff.plan.plan_words import plan_words
from tradeoff_ui import cached, remembered, text

ss = st.session_state

# -- read state ---------------------------------------------------------------
st.title("Plan the runs")
try:
    study = cached.current_study()
except TradeoffError as exc:
    st.error(text.plain(exc))
    st.stop()
if not study.factors:
    st.info("This study varies no factor, so there are no runs to plan. Declare the "
            "factors (or blend components) on the study view first.")
    st.stop()

DESIGN_WORDS = {
    "factorial": "two-level factorial or fraction",
    "central-composite": "central composite (curvature: factorial + axial + centre runs)",
    "box-behnken": "Box-Behnken (curvature on three levels, no corners)",
    "optimal": "optimal (as many runs as you choose, for the model you choose)",
    "definitive-screening": "definitive screening (many factors, 2 runs per factor + 1)",
    "lattice": "simplex lattice (blends in even steps)",
    "centroid": "simplex centroid (pure, half-and-half, ... blends)",
    "vertices": "extreme vertices (corners of the allowed blends)",
}
MODEL_WORDS = {"": "the design's own", "main": "main effects", "interactions":
               "main effects and two-factor interactions", "quadratic":
               "quadratic (curvature)", "full": "every interaction"}
epoch = ss.get("epoch", 0)
choices = design_choices(study)
blend = study.mixture is not None


def _kept(draw, name: str, *args, **options):
    """A plan widget whose value is kept across views and reloads (ss["plan"])."""
    return remembered.widget(draw, "plan", name, *args, **options)


def _options(column, tag: str, default: str) -> dict:
    """One candidate plan's widgets; returns the plan command's options."""
    key = f"p{tag}_{epoch}"
    design = _kept(column.selectbox, f"{tag}_design", "Design", choices,
                   index=choices.index(default), format_func=lambda d: DESIGN_WORDS.get(d, d),
                   key=f"{key}_design")
    options: dict = {"design": design}
    if design == "factorial":
        runs = _kept(column.selectbox, f"{tag}_runs", "Runs in the two-level part",
                     ["all combinations", 4, 8, 16, 32, 64], key=f"{key}_runs",
                     help="Fewer runs give a fraction: some effects are then aliased "
                          "(cannot be told apart).")
        if runs != "all combinations":
            options["runs"] = int(runs)
        blocks = _kept(column.selectbox, f"{tag}_blk", "Blocks (days or batches)",
                       [1, 2, 4, 8], key=f"{key}_blk")
        if blocks != 1:
            options["blocks"] = int(blocks)
    if design == "central-composite":
        options["alpha"] = _kept(
            column.selectbox, f"{tag}_alpha", "Axial distance",
            ["rotatable", "face", "orthogonal"], key=f"{key}_alpha",
            help="face keeps every run inside low..high; rotatable goes beyond them.")
    if design == "optimal":
        options["runs"] = int(_kept(column.number_input, f"{tag}_n", "Runs", 4, 200,
                                    value=16, key=f"{key}_n"))
        options["criterion"] = _kept(
            column.radio, f"{tag}_crit", "Make precise", ["d", "i"], horizontal=True,
            key=f"{key}_crit", format_func={"d": "the coefficients",
                                            "i": "the predictions"}.get)
    if design == "lattice":
        options["degree"] = int(_kept(column.number_input, f"{tag}_deg",
                                      "Steps of the lattice (1/m)", 1, 6, value=2,
                                      key=f"{key}_deg"))
    if design == "vertices":
        cents = _kept(column.multiselect, f"{tag}_cent", "Centroids to add",
                      ["edges", "faces", "overall"],
                      default=["overall"] if tag == "a" else ["edges", "overall"],
                      key=f"{key}_cent")
        if cents:
            options["centroids"] = ",".join(cents)
    if blend and _kept(column.checkbox, f"{tag}_ax",
                       "Add check blends (half-way to each vertex)", key=f"{key}_ax"):
        options["axial"] = True
    if design != "definitive-screening":
        centre = int(_kept(column.number_input, f"{tag}_c", "Centre points", 0, 20,
                           value=0, key=f"{key}_c"))
        if centre:
            options["center"] = centre
    if design == "definitive-screening":
        extra = int(_kept(column.number_input, f"{tag}_x", "Extra runs for the error (even)",
                          0, 12, value=4, step=2, key=f"{key}_x"))
        if extra:
            options["extra"] = extra
    return options


# -- widgets ----------------------------------------------------------------------
st.caption("The same plans as `tradeoff plan`: with the same options and seed, the run "
           "sheet is the same file.")
shared = st.columns(4)
model = "" if blend else _kept(
    shared[0].selectbox, "model", "Judge both plans for", list(MODEL_WORDS),
    format_func=MODEL_WORDS.get, key=f"p_model_{epoch}",
    help="The model the plans are judged for: what can be estimated, precision, power.")
seed = int(_kept(shared[1 if not blend else 0].number_input, "seed", "Seed of the run order",
                 0, 2**31 - 1, value=int(study.seed), key=f"p_seed_{epoch}"))
effect = sd = 0.0
if not blend:  # the blend plans are judged without power (plan/mixture_plan.py)
    effect = _kept(shared[2].number_input, "effect", "Smallest change worth finding", 0.0,
                   value=0.0, key=f"p_effect_{epoch}",
                   help="From a factor's low to its high, in the response's units; with "
                        "the SD it gives the power.")
    sd = _kept(shared[3].number_input, "sd", "Expected run-to-run SD", 0.0, value=0.0,
               key=f"p_sd_{epoch}")
common: dict = {"seed": seed}
if model:
    common["model"] = model
if effect > 0 and sd > 0:
    common.update(effect=float(effect), sd=float(sd))
compare = _kept(st.toggle, "compare", "Compare with a second plan", key=f"p_compare_{epoch}")
# one plan keeps to three fifths of the page: full-width number boxes read badly
columns = st.columns(2) if compare else [st.columns([3, 2])[0]]
# the second candidate: a response surface beside a factorial; for a blend the same
# design with more centroids (another blend design may not fit a bounded region)
second = choices[0] if blend else next(
    (d for d in ("central-composite", "box-behnken") if d in choices), choices[0])
asked = [_options(columns[0], "a", choices[0])]
if compare:
    asked.append(_options(columns[1], "b", second))

# -- call the library --------------------------------------------------------------
plans, errors = [], []
for options in asked:
    try:
        plans.append(cached.plan(study, {**common, **options}))
        errors.append(None)
    except TradeoffError as exc:
        plans.append(None)
        # the command's option names read as the workbench's choices
        errors.append(text.plain(re.sub(r"--design (\S+)", r"the design '\1'",
                                        str(exc)).replace("--", "")))

# -- show ------------------------------------------------------------------------------
stem = Path(study.source.name if study.source else "study").stem
for i, (column, planned, error) in enumerate(zip(columns, plans, errors)):
    name = "first" if i == 0 else "second"
    with column:
        if error is not None:
            st.error(error)
            continue
        st.subheader(planned.report.get("design", "plan").capitalize())
        st.markdown("\n".join(f"- {text.plain(line)}" for line in plan_words(planned.report)))
        notes = planned.report.get("notes", []) + (planned.report.get("model") or {}).get(
            "notes", [])
        if notes:
            with st.expander(f"Notes ({len(notes)})"):
                st.markdown("\n".join(f"- {text.plain(n)}" for n in notes))
        with st.expander("As the plan command prints it"):
            st.code(planned.text, language=None)
        sheet_name = f"{stem}_plan_{name}"
        places = st.columns(3) if not compare else [st.container()] * 3
        places[0].download_button("Run sheet (.csv)", planned.csv,
                                  file_name=f"{sheet_name}.csv", mime="text/csv",
                                  key=f"p_csv_{i}")
        places[1].download_button("Run sheet (.xlsx)", planned.xlsx,
                                  file_name=f"{sheet_name}.xlsx", key=f"p_xlsx_{i}",
                                  mime="application/vnd.openxmlformats-officedocument."
                                       "spreadsheetml.sheet")
        places[2].download_button("Its study file (.toml)",
                                  plan_study_file(study, f"{sheet_name}.csv"),
                                  file_name=f"{sheet_name}.toml", mime="application/toml",
                                  key=f"p_toml_{i}",
                                  help="Keep it beside the run sheet: fill in the response "
                                       "columns and open it here to analyse the runs.")

# the run sheets full width, every run in view: the response columns are left out
# here (they are empty, to be filled in on the downloaded sheet)
measured = [r.name for r in study.responses if not r.is_derived]
ready = [(i, p) for i, p in enumerate(plans) if p is not None]
if ready:
    st.subheader("Run sheet" + ("s" if len(ready) > 1 else ""))
    st.caption("In the order to make the runs, settings in natural units. The downloaded "
               "sheet adds one empty column per response to fill in.")
    places = st.tabs([("First" if i == 0 else "Second") + " plan" for i, _ in ready]) \
        if len(ready) > 1 else [st.container()]
    for place, (i, planned) in zip(places, ready):
        runs = planned.sheet.drop(columns=[c for c in measured if c in planned.sheet])
        place.dataframe(runs, hide_index=True, height=35 * (len(runs) + 1) + 3,
                        key=f"p_sheet_{i}")

if compare and all(p is not None for p in plans):
    st.subheader("Side by side")
    table = compare_plans(plans[0].report, plans[1].report)
    shown = pd.DataFrame({
        "measure": table["measure"],
        "first": table["first"].map(lambda v: "-" if v is None or pd.isna(v) else f"{v:.4g}"),
        "second": table["second"].map(lambda v: "-" if v is None or pd.isna(v)
                                      else f"{v:.4g}"),
        "better": table["better"].map({"first": "first", "second": "second",
                                       "same": "same", "": "-"})})

    def _mark(row):
        colour = "background-color: #d9f2d9"
        return ["", colour if row["better"] == "first" else "",
                colour if row["better"] == "second" else "", ""]

    if not model and not blend:
        st.caption("Each plan is judged here for its own model (a factorial for "
                   "interactions, a response surface for curvature): choose one model in "
                   "'Judge both plans for' to compare like with like.")
    st.dataframe(shown.style.apply(_mark, axis=1), hide_index=True,
                 width="stretch")
    st.caption("The better figure on each measure is shaded. Scaled prediction variance "
               "charges a plan for its size, so plans of different sizes compare fairly on "
               "it; fewer runs is still cheaper.")
