"""The page's sections about the answer: summary, recommendation, alternatives,
confirmation runs and targets.

``_Sections`` holds what every section reads (the study, ``report_data``'s
dict) and the small helpers they share; ``_AnswerSections`` renders the
sections about the recommendation. ``esc`` escapes user text and ``_table``
builds an HTML table.
"""
from __future__ import annotations

import html
import json

from .charts import _chart_div, _curve_chart
from .data import _g, _goal_rows, _pct

__all__ = ["esc", "_table", "_cards", "_Sections", "_AnswerSections"]


def esc(value) -> str:
    """Any user-supplied text, escaped for HTML."""
    return html.escape("" if value is None else str(value), quote=True)


class _Sections:
    """What every section of the page reads, and the helpers they share."""

    def __init__(self, study, data: dict):
        self.study = study
        self.data = data
        self.res = data["result"]
        self.pct = f"{study.confidence:.0%}"
    def _item(self, name: str):
        if name in self.study.response_names:
            return self.study.response(name)
        return self.study.factor(name)

    def _setting(self, name: str, value) -> str:
        if isinstance(value, str):
            return value
        f = self.study.factor(name)
        return f"{_g(value)} {f.unit}".strip()

    @staticmethod
    def _goal_text(goal) -> str:
        if goal.kind == "maximize":
            return f"maximize ({_g(goal.lower)} .. {_g(goal.upper)})"
        if goal.kind == "minimize":
            return f"minimize ({_g(goal.lower)} .. {_g(goal.upper)})"
        if goal.kind == "target":
            return f"target {_g(goal.target)} ({_g(goal.lower)} .. {_g(goal.upper)})"
        if goal.kind == "range":
            return f"within {_g(goal.lower)} .. {_g(goal.upper)}"
        return "none"

    @staticmethod
    def _shape_text(g: dict) -> str:
        if g["goal"] == "target":
            return f"below {_g(g['shape below'], 3)}, above {_g(g['shape above'], 3)}"
        if g["goal"] in ("maximize", "minimize"):
            return _g(g["shape"], 3)
        return "step"


class _AnswerSections(_Sections):
    """The sections about the answer, rendered from ``report_data``'s dict."""

    def summary(self) -> str:
        s = self.data["study"]
        study = self.study
        parts = []
        if study.description:
            parts.append(f"<p>{esc(study.description)}</p>")
        parts.append(
            f"<p>{s['runs']} runs varied {len(study.factors)} factor(s) "
            f"({esc(', '.join(f.label for f in study.factors))}) and measured "
            f"{len(study.responses)} response(s) "
            f"({esc(', '.join(r.label for r in study.responses))}). Each response was "
            "fitted with its own model; each goal became a desirability between 0 "
            "(unacceptable) and 1 (ideal); the search looked for the settings with the "
            "highest overall desirability D.</p>")
        cards = []
        if self.res is not None:
            best = self.res["best"]
            settings = ", ".join(f"{esc(k)} {esc(self._setting(k, v))}"
                                 for k, v in best["settings"].items())
            parts.append(f'<p class="lead"><b>Recommendation ({esc(best["label"])}):</b> '
                         f"{settings}.</p>")
            cards.append(("overall desirability D", _g(best["desirability"], 3),
                          "0 = some goal unmet, 1 = every goal ideal"))
            if best["chance_all"] is not None:
                cards.append(("chance every response within limits",
                              _pct(best["chance_all"]),
                              "for one batch made at these settings"))
            elif _withheld(best):
                cards.append(("chance every response within limits", "not stated",
                              "a predicted time lies past what the storage study "
                              "supports: see Recommended settings"))
            if not self.res["feasible"]:
                parts.append('<p><span class="tag bad">no setting meets every goal</span> '
                             "the settings shown come closest.</p>")
        else:
            parts.append(f"<p>No search was made: {esc(self.data['search_note'])}</p>")
        check = self.data["confirmation"]
        if check is not None:
            counts = check.verdicts["verdict"].value_counts()
            cards.append(("confirmation runs", f"{len(check.runs)}",
                          f"{counts.get('confirmed', 0)} response(s) confirmed, "
                          f"{counts.get('not confirmed', 0)} not confirmed"))
        else:
            cards.append(("confirmation runs", "none yet", "see Confirmation runs"))
        cards.append(("warnings", str(len(self.data["warnings"])), "see Warnings"))
        parts.append(_cards(cards))
        parts.append('<p class="note">Predictions are suggestions for what to make and '
                     'test next; read the <a href="#cautions">cautions</a>.</p>')
        return "".join(parts)

    def recommended(self) -> str:
        if self.res is None:
            return f"<p>No recommendation: {esc(self.data['search_note'])}</p>"
        best = self.res["best"]
        out = [f"<p>Best compromise found ({esc(best['label'])}): overall desirability "
               f"D = <b>{_g(best['desirability'], 3)}</b>"
               + (f", chance that every response lands within its limits "
                  f"<b>{_pct(best['chance_all'])}</b>" if best["chance_all"] is not None
                  else ", chance that every response lands within its limits <b>not "
                  "stated</b> (a predicted time lies past what the storage study "
                  "supports: see the note below)" if _withheld(best) else "") + ".</p>"]
        rows = []
        for f in self.study.factors:
            value = best["settings"][f.name]
            rows.append([esc(f.label), esc(f.name), esc(self._setting(f.name, value)),
                         esc(f.unit),
                         # a level is its name: no coded number
                         "-" if f.is_categorical else _g(_clean(best["coded"][f.name]), 3)])
        out.append(_table(["factor", "name", "setting", "unit", "coded"], rows,
                          numeric={4}))
        steps = self.res.get("steps") or {}
        if steps:
            listed = ", ".join(esc(f"{self._item(n).label} {self._setting(n, v)}")
                               for n, v in steps.items())
            out.append(f'<p class="note">Settings are rounded to steps a lab can weigh or '
                       f"set ({listed}); every figure on this page is for the rounded "
                       f"recipe. The search's own optimum had D = "
                       f"{_g(best['found']['desirability'], 3)}.</p>")
        out.append(self._predictions(best))
        out.append(f'<p class="note">Prediction interval: where one new batch made at these '
                   f"settings should land, {self.pct} of the time. Mean interval: where the "
                   "long-run average should lie. Chance: Monte Carlo estimate that one "
                   "batch meets the goal's limits. d: the response's desirability.</p>")
        out.append(self._production(best))
        for w in best["warnings"]:
            if w not in self.res["warnings"]:
                out.append(f'<p class="note">Note: {esc(w)}</p>')
        return "".join(out)

    def _production(self, sol: dict) -> str:
        """Spread and chance in production, when some factor has a production SD."""
        spread = self.res.get("production_sd") or {}
        if not spread:
            return ""
        listed = ", ".join(f"{esc(k)} {_g(v)}" for k, v in spread.items())
        rows = [[esc(self.study.response(name).label), esc(self.study.response(name).unit),
                 _chance_cell(o, "chance_in_production",
                              self.study.response(name).unit),
                 _g(o.get("transmitted_sd")), _g(o.get("mean_shift"))]
                for name, o in sol["responses"].items()]
        # a factor's own goal counts in the chance of all at once: its row says how
        # often the factor itself strays out of its limits
        rows += [[esc(self.study.factor(name).label) + " (factor goal)",
                  esc(self.study.factor(name).unit), _pct(p), "-", "-"]
                 for name, p in (sol.get("factor_chance_production") or {}).items()]
        return (f"<h3>In production</h3><p>Each factor strays from its setting with the "
                f"standard deviation given ({listed}). Chance that one production batch "
                f"meets every limit: <b>{_pct(sol.get('chance_all_production'))}</b>; "
                "each row gives its own share of that.</p>"
                + _table(["response", "unit", "chance within limits in production",
                          "spread SD", "mean shift"], rows, numeric={2, 3, 4}))

    def _predictions(self, sol: dict) -> str:
        rows = []
        for name, o in sol["responses"].items():
            r = self.study.response(name)
            rows.append([esc(r.label), esc(r.unit), esc(self._goal_text(r.goal)),
                         _g(o["predicted"]),
                         f"{_g(o['pi'][0])} .. {_g(o['pi'][1])}",
                         f"{_g(o['ci'][0])} .. {_g(o['ci'][1])}",
                         _g(o["desirability"], 3),
                         _chance_cell(o, "chance_in_limits", r.unit)])
        for name, d in sol["factor_desirability"].items():
            f = self.study.factor(name)
            rows.append([esc(f.label) + " (factor goal)", esc(f.unit),
                         esc(self._goal_text(f.goal)), _g(sol["settings"][name]), "-",
                         "-", _g(d, 3), _pct(1.0 if d > 0 else 0.0)])
        return _table(["response", "unit", "goal", "predicted",
                       f"{self.pct} prediction interval", f"{self.pct} mean interval",
                       "d", "chance within limits"], rows, numeric={3, 6, 7})

    def alternatives(self) -> str:
        if self.res is None:
            return "<p>No alternatives: there is no recommendation.</p>"
        sols = self.res["solutions"]
        if len(sols) < 2:
            return ("<p>The search found no other distinct good setting: the best one "
                    "stands alone in the searched region.</p>")
        factors = self.study.factors
        head = ["", "rank", "D", "chance all"] + [esc(f.name) for f in factors]
        rows = [[esc(s["label"]), str(s["rank"]), _g(s["desirability"], 3),
                 "not stated" if _withheld(s) else _pct(s["chance_all"])]
                + [esc(self._setting(f.name, s["settings"][f.name])) for f in factors]
                for s in sols]
        out = ["<p>Other settings that score well, at least a little apart from each "
               "other. Useful when the best one is awkward to make or cost-sensitive.</p>",
               _table(head, rows, numeric={1, 2, 3})]
        names = list(sols[0]["responses"])
        head = ["response"] + [esc(s["label"]) for s in sols]
        rows = []
        for name in names:
            row = [esc(name)]
            for s in sols:
                o = s["responses"][name]
                row.append(f"{_g(o['predicted'])}<br><span class='small'>"
                           f"{_g(o['pi'][0])} .. {_g(o['pi'][1])}; "
                           f"{_pct(o['chance_in_limits'])}</span>")
            rows.append(row)
        out.append("<h3>Predicted responses at each solution</h3>"
                   f"<p class='note'>Each cell: predicted value, then its {self.pct} "
                   "prediction interval and the chance of meeting the goal's limits.</p>")
        out.append('<div class="scroll">' + _table(head, rows, raw=True) + "</div>")
        return "".join(out)

    def confirmation(self) -> str:
        check = self.data["confirmation"]
        if check is None:
            return self._no_confirmation()
        out = [f"<p>{len(check.runs)} confirmation run(s) were made at chosen settings. "
               "Each measured value (or the mean of the runs at the same settings) is "
               f"compared with the model's {check.confidence:.0%} prediction interval "
               "for that many new runs. Inside the interval: the model predicted what "
               "was made. Outside: the model misses something there.</p>"]
        rows = []
        for _, v in check.verdicts.iterrows():
            cls = {"confirmed": "good", "not confirmed": "bad"}.get(v["verdict"], "none")
            rows.append([esc(v["label"]), f'<span class="tag {cls}">{esc(v["verdict"])}'
                         "</span>", f"{v['inside']} of {v['checked']}", esc(v["advice"])])
        out.append(_table(["response", "verdict", "inside", "what it means"], rows,
                          raw=True))
        names = [c for c in check.table.columns if c in self.study.factor_names]
        rows = []
        for _, row in check.table.iterrows():
            if row["predicted"] != row["predicted"]:
                inside = '<span class="tag none">no model</span>'
            elif row["pi_low"] != row["pi_low"]:
                inside = '<span class="tag none">no interval</span>'
            elif row["inside"]:
                inside = '<span class="tag good">inside</span>'
            else:
                inside = '<span class="tag bad">outside</span>'
            settings = ", ".join(f"{esc(n)} {esc(self._setting(n, row[n]))}"
                                 for n in names)
            rows.append([esc(row["group"]), esc(row["runs"]), settings,
                         esc(row["response"]), str(row["m"]), _g(row["measured"]),
                         _g(row["predicted"]),
                         f"{_g(row['pi_low'])} .. {_g(row['pi_high'])}", inside
                         + (' <span class="small">outside the tested region</span>'
                            if row["outside_region"] else "")])
        out.append("<h3>Each comparison</h3>")
        out.append('<div class="scroll">' + _table(
            ["group", "runs", "settings", "response", "runs averaged", "measured",
             "predicted", "prediction interval", ""], rows, raw=True,
            numeric={4, 5, 6}) + "</div>")
        out.append(f'<p class="note">Interval: {esc(_formula())}. With many comparisons, '
                   f"about one in {round(1 / (1 - check.confidence))} falls outside by "
                   "chance alone.</p>")
        return "".join(out)

    def _no_confirmation(self) -> str:
        out = ["<p>No confirmation runs are recorded yet. Before relying on the "
               "recommendation, make two or three batches at the recommended settings, "
               "measure them, and add them to the study file; the next report compares "
               "them with the predictions. For example:</p>"]
        if self.res is not None:
            settings = ", ".join(f"{k} = {json.dumps(v)}"
                                 for k, v in self.res["best"]["settings"].items())
            measured = ", ".join(f"{name} = ..." for name in self.res["best"]["responses"])
            snippet = ("[[confirmations]]\nrun = \"C1\"\n"
                       f"settings = {{ {settings} }}\nmeasured = {{ {measured} }}")
            out.append(f"<pre>{esc(snippet)}</pre>")
        return "".join(out)

    def targets(self) -> str:
        curves = self.data["curves"]
        if curves.empty:
            return "<p>No response or factor has a goal yet.</p>"
        out = ["<p>Each goal turned into a desirability curve: 1 where the value is "
               "ideal, 0 where it is unacceptable. The dot marks the best settings' "
               "prediction. Weights say how much each goal counts in D.</p>"]
        rows = []
        for g in _goal_rows(self.study):
            rows.append([esc(g["label"]), esc(g["kind"]), esc(g["goal"]),
                         _g(g["lower"]), _g(g["target"]), _g(g["upper"]),
                         _g(g["weight"], 3), esc(self._shape_text(g))])
        out.append(_table(["goal for", "kind", "goal", "lower", "target", "upper",
                           "weight", "curve shape"], rows, numeric={3, 4, 5, 6}))
        charts = []
        best = self.res["best"] if self.res is not None else None
        for name, part in curves.groupby("name", sort=False):
            marker = None
            if best is not None:
                if name in best["responses"]:
                    o = best["responses"][name]
                    marker = (o["predicted"], o["desirability"])
                elif name in best["factor_desirability"]:
                    marker = (best["settings"][name], best["factor_desirability"][name])
            charts.append(_chart_div(_curve_chart(self._item(name), part, marker)))
        out.append('<div class="charts">' + "".join(charts) + "</div>")
        return "".join(out)


def _clean(x: float) -> float:
    """A coded setting with rounding noise (4e-16 for a component at its low) shown as 0."""
    return 0.0 if abs(x) < 1e-9 else x


def _formula() -> str:
    from ..confirm.check import INTERVAL_FORMULA

    return INTERVAL_FORMULA


def _cards(cards: list[tuple[str, str, str]]) -> str:
    """Key figures as cards: (what it is, the figure, a line under it), user text escaped."""
    return ('<div class="cards">' + "".join(
        f'<div class="card"><div class="what">{esc(a)}</div><div class="big">'
        f'{esc(b)}</div><div class="what">{esc(c)}</div></div>'
        for a, b, c in cards) + "</div>")


def _table(head: list[str], rows: list[list[str]], *, numeric: set[int] = frozenset(),
           raw: bool = False, cls: str = "") -> str:
    """An HTML table. Cells must already be escaped (``raw`` cells may hold markup)."""
    th = "".join(f'<th class="num">{h}</th>' if i in numeric else f"<th>{h}</th>"
                 for i, h in enumerate(head))
    body = "".join(
        "<tr>" + "".join(f'<td class="num">{c}</td>' if i in numeric else f"<td>{c}</td>"
                         for i, c in enumerate(row)) + "</tr>"
        for row in rows)
    klass = f' class="{cls}"' if cls else ""
    return f"<table{klass}><thead><tr>{th}</tr></thead><tbody>{body}</tbody></table>"


def _chance_cell(o: dict, key: str, unit: str = "") -> str:
    """A response's chance, or why none is stated (a time past the storage study)."""
    if o.get("extrapolated") == "far" and o.get("goal") != "none":
        return (f"not stated (store to {_g(o.get('storage_needed'))} {esc(unit)})"
                .replace(" )", ")") if o.get("storage_needed") is not None
                else "not stated")
    return _pct(o.get(key))


def _withheld(sol: dict) -> bool:
    """True when a goal's predicted time lies past what the storage supports."""
    return any(o.get("extrapolated") == "far" and o.get("goal") != "none"
               for o in sol["responses"].values())
