"""Study and runs: open a study, see its factors, responses and runs."""
from __future__ import annotations

import hashlib
import re

import pandas as pd
import streamlit as st

from tradeoff import ACCELERATED_CAUTIONS, TradeoffError
from tradeoff.study.demo import demo_study_path
from tradeoff.inputs import DATA_SUFFIXES
from tradeoff.report.unused import unused_columns
from tradeoff.study.draft import guess_draft
from tradeoff_ui import cached, charts, panels, state, text
from tradeoff_ui.shown import NARROW_PX, blank_none, significant, table_px, text_px

ss = st.session_state

# -- widgets: opening -------------------------------------------------------
st.title("Study and runs")
with st.expander("Open another study", expanded=False):
    st.write("Upload a study file (.toml) together with its data file, or a data "
             "file (.csv or .xlsx) on its own and say what each column is on "
             "'New study'.")
    uploads = st.file_uploader("Study and data files", accept_multiple_files=True,
                               type=["toml", *[s.lstrip(".") for s in DATA_SUFFIXES]],
                               key="upload_widget")
    demo = st.button("Open the invented demo study", key="demo_button")

if demo:
    try:
        origin = {"kind": "path", "path": str(demo_study_path())}
        state.open_origin(origin, "demo: snack bar", cached.base_study(origin))
        ss["open_error"], ss["draft"] = None, None
    except TradeoffError as exc:
        ss["open_error"] = str(exc)

if not uploads and ss["upload_digest"] is not None:
    # the user removed the files: forget them and the error they caused
    ss["upload_digest"], ss["open_error"], ss["draft"] = None, None, None
if uploads:
    files = {u.name: u.getvalue() for u in uploads}
    digest = hashlib.sha256(b"".join(n.encode() + b"\0" + hashlib.sha256(b).digest()
                                     for n, b in sorted(files.items()))).hexdigest()
    if digest != ss["upload_digest"]:
        ss["upload_digest"], ss["open_error"], ss["draft"] = digest, None, None
        try:
            if any(n.lower().endswith(".toml") for n in files):
                origin = {"kind": "files", "files": files}
                state.open_origin(origin, ", ".join(sorted(files)),
                                  cached.base_study(origin))
            elif len(files) == 1:
                (name, data), = files.items()
                # read it here so an empty or damaged table is named on this page, in
                # the one line the new-study view would give
                guess_draft(name, data)
                ss["draft"] = {"name": name, "data": data}
            else:
                ss["open_error"] = ("several data files and no study file: upload one "
                                    "data file, or a study file (.toml) with its data")
        except TradeoffError as exc:
            ss["open_error"] = str(exc)

if ss["draft"] is not None:
    # a bare table: its columns are declared on the new-study view, which picks it up
    st.info(text.plain(f"{ss['draft']['name']} is a data table without a study file: say "
                       "what each column is (factors, blend parts, results, goals) on "
                       "'New study'."), icon=":material/info:")
    st.page_link("views/new_study.py", label="Declare its columns on 'New study'",
                 icon=":material/note_add:")

if ss["open_error"]:
    st.error(f"Could not open the files: {text.plain(ss['open_error'])}. The study below is "
             "still the one in use.")

# -- call the library ---------------------------------------------------------
try:
    study = cached.current_study()
except TradeoffError as exc:
    st.error(text.plain(exc))
    st.stop()
try:
    # with the models, unusual results are marked exactly as the report marks them
    fitted = cached.fit(study)
except TradeoffError:
    fitted = None  # the runs still show, marked for the box and blanks only
try:
    table = cached.runs_table(study, fitted)
    kinetics = cached.kinetics(study)
except TradeoffError as exc:
    st.error(text.plain(exc))
    st.stop()

# -- show ---------------------------------------------------------------------
st.header(text.plain(study.name))
if study.description:
    st.caption(text.plain(study.description))
# one box per kind of note, the cautions once (panels.show_notices)
panels.show_notices(study.notes, cautions=st.empty())
_unused = unused_columns(study)
if _unused:  # one box for all of them (a batch or day column often marks blocks)
    _names = ", ".join(f"'{c['column']}'" for c in _unused)
    st.info(text.plain(f"{len(_unused)} column(s) of the data file are kept but not "
                       f"used: {_names}."))
    with st.expander("What each unused column might be"):
        for col in _unused:  # 'might_be' already says how to use it
            st.markdown("- " + text.plain(f"'{col['column']}': {col['might_be']}."))

# a blend's components are amounts that add up, never coded -1/+1: a table of their own
_comps = [f for f in study.factors if getattr(f, "is_component", False)]
_process = [f for f in study.factors if not getattr(f, "is_component", False)]
if _comps:
    st.subheader("Blend components (what the blend is made of)")
    _total, _unit = _comps[0].total, _comps[0].unit
    _u = f" {_unit}" if _unit else ""
    _sums = study.runs[[c.name for c in _comps]].sum(axis=1) if study.runs is not None \
        else pd.Series(dtype=float)
    _range = (f"{_sums.min():.6g}{_u}" if abs(_sums.max() - _sums.min()) < 1e-9 * _total
              else f"{_sums.min():.6g} to {_sums.max():.6g}{_u}") if len(_sums) else ""
    st.write(text.plain(
        f"The {len(_comps)} components add up to {_total:g}{_u} in every run"
        + (f" (in these runs: {_range}; each is checked to within 0.5 % of the total)"
           if _range else "") + ": more of one means less of the others. Each stays "
        "between its lowest and highest amount."))
    _shares = not (_unit == "%" and _total == 100)  # amounts in % are the shares already
    _crows = []
    for f in _comps:
        _row = {"component": f.name, "label": f.label, "unit": f.unit or "",
                "lowest": f"{f.low:g}", "highest": f"{f.high:g}"}
        if _shares:
            _row["share of the blend"] = f"{f.low / _total:.0%} .. {f.high / _total:.0%}"
        _given = [f"{w} {g:g} cannot be reached" for w, g, now in
                  (("low", f.given_low, f.low), ("high", f.given_high, f.high))
                  if g is not None and abs(g - now) > 1e-9 * _total]
        _row["note"] = "; ".join(_given) + (" (see above)" if _given else "")
        _crows.append(_row)
    st.dataframe(blank_none(pd.DataFrame(_crows)), hide_index=True)
st.subheader("Process factors (what you set)" if _comps else "Factors (what you set)")
_many = any(f.is_categorical and len(f.levels) > 2 for f in _process)
_rows = []
for f in _process:
    _two = f.is_categorical and len(f.levels) == 2
    _row = {"factor": f.name, "label": f.label, "unit": f.unit or "",
            "coded -1": f.levels[0] if _two else "-" if f.is_categorical else f"{f.low:g}",
            "coded +1": f.levels[1] if _two else "-" if f.is_categorical else f"{f.high:g}"}
    if _many:  # a factor of three or more levels lists them in a column of its own
        _row["levels"] = ", ".join(f.levels) if f.is_categorical else "-"
    _rows.append(_row)
if _rows:
    st.dataframe(blank_none(pd.DataFrame(_rows)), hide_index=True)
elif _comps:
    st.caption("None: only the blend is varied.")
else:
    st.caption("None: nothing is varied between the products, so there is nothing to "
               "model or search; the results are each product's derived values below.")
st.subheader("Responses (what you measured)")
st.dataframe(blank_none(pd.DataFrame(
    [{"response": r.name, "label": r.label, "unit": r.unit or "", "goal": r.goal.kind,
      "measured runs": int(study.runs[r.name].notna().sum()) if r.name in study.runs else 0}
     for r in study.responses])), hide_index=True)


def _short(marks: str) -> str:
    """One word per kind of mark; the full text is listed under the table."""
    kinds = {"unusual" if m.startswith("unusual") else "outside the box"
             if m.startswith("outside") else "extrapolated" if m.startswith("extrapolated")
             else "blank" for m in marks.split("; ") if m}
    return ", ".join(sorted(kinds))


st.subheader(f"The {len(table)} runs")
marked = table[table["marks"] != ""]
st.write("Settings as made and responses as measured. "
         + (f"**{len(marked)} run(s) carry a mark**, listed under the table."
            if len(marked) else "No run is outside the tested box, has a blank result "
            "or an unusual one."))
factors = [f.name for f in study.factors]
responses = [r.name for r in study.responses if r.name in table]
# the mark next to the run id: a wide table must not hide it off to the right
main = significant(table[["run"]].assign(mark=table["marks"].map(_short)).join(
    table[[*factors, *responses]]))
rows = min(len(main), 40)  # up to 40 runs show whole; longer tables scroll
_help = {**{f.name: f.display() for f in study.factors},
         **{r.name: r.display() for r in study.responses}}
_config = {"mark": st.column_config.TextColumn("mark", width=text_px(["mark", *main["mark"]])),
           **{c: st.column_config.Column(c, help=text.plain(_help[c])) for c in [*factors, *responses]}}
# too wide for a laptop's column: the settings, then the responses, each whole
_parts = ([main] if table_px(main) <= NARROW_PX else
          [main[["run", "mark", *factors]], main[["run", *responses]]])
for _i, _part in enumerate(_parts):
    st.dataframe(_part, hide_index=True, height=35 * (rows + 1) + 3,
                 key="s_runs" if _i == 0 else f"s_runs_{_i}",
                 column_config={k: v for k, v in _config.items() if k in _part})
# the marks name responses and factors as the data file does: say them by their labels
_named = sorted(_help, key=len, reverse=True)
_by_label = re.compile(r"\b(" + "|".join(map(re.escape, _named)) + r")\b") if _named else None
for _, row in marked.iterrows():
    _marks = _by_label.sub(lambda m: study.factor(m.group(1)).label
                           if m.group(1) in study.factor_names
                           else study.response(m.group(1)).label, row["marks"]) \
        if _by_label else row["marks"]
    st.markdown(f"- **{text.plain(row['run'])}**: {text.plain(_marks)}")
# a factor of three or more levels is coded by position, a number that means nothing
# to a reader: its level names in the table above say it all
# components too: they are amounts (above), never -1/+1
_coded = [f.name for f in _process if not (f.is_categorical and len(f.levels) > 2)]
if _coded:
    with st.expander("The same runs in coded units (-1 low, +1 high, 0 centre)"
                     + (", process factors" if _comps else "")):
        coded = table[["run", *[f"{f} coded" for f in _coded]]]
        st.dataframe(coded, hide_index=True, height=35 * (rows + 1) + 3,
                     column_config={f"{f} coded": st.column_config.NumberColumn(
                         format="%+.2f") for f in _coded})

if kinetics:
    st.subheader("Storage kinetics")
    st.write("Each run's storage measurements at every temperature are fitted at once, "
             "with a rate that follows the Arrhenius law. Lower and upper give each "
             "estimate's interval; the counts are storage times per temperature, time 0 "
             "included.")
    if not any(c in n for n in study.notes for c in ACCELERATED_CAUTIONS):
        st.info(" ".join(ACCELERATED_CAUTIONS))  # not among the page's cautions above
    name = st.selectbox("Response", list(kinetics), key=f"kinetics_response_{ss['epoch']}",
                        format_func=lambda n: study.response(n).display())
    # the flag in a few words beside each run, its full wording once under the table
    _kt = significant(kinetics[name]["table"])
    _why = {}  # the few words -> the wording (the week differs from run to run)
    for _f in _kt["flag"]:
        if _f:
            _why.setdefault("far beyond the storage" if _f.startswith("extrapolated far")
                            else "beyond the storage" if _f.startswith("extrapolated")
                            else _f.split(":")[0], _f.split(" (week")[0])
    _kt = _kt.assign(flag=_kt["flag"].map(
        lambda f: next((k for k, v in _why.items() if f and f.startswith(v)), "")))
    _krows = min(len(_kt), 40)
    st.dataframe(_kt[["run", "value", "lower", "upper", "se", "r_squared", "points",
                      "per_temperature", "flag"]], hide_index=True,
                 height=35 * (_krows + 1) + 3,
                 column_config={"r_squared": st.column_config.NumberColumn("R2", format="%.3f"),
                                "se": st.column_config.NumberColumn("standard error"),
                                "per_temperature": st.column_config.TextColumn(
                                    "storage times per temperature"),
                                "flag": st.column_config.TextColumn(
                                    "flag", width=text_px(["flag", *_kt["flag"]]))})
    for _short_flag, _wording in _why.items():
        st.caption(text.plain(f"{_short_flag}: {_wording}."))
    st.write("ln k against 1000 / T for each run: dots are each temperature's own "
             "straight-line rate, the line is the one-step fit, the diamond the "
             "temperature asked for.")
    charts.show(charts.arrhenius_chart, kinetics[name]["points"])
