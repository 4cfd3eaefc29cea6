"""The page's sections about the evidence: each response's model and the runs.

``_EvidenceSections`` renders "What drives each response" (fit statistics,
effects chart, clear terms, tests, flagged runs) and "The runs (design)".
"""
from __future__ import annotations

import pandas as pd

from ..model.terms import model_label
from ..model.transforms import power_advice
from .charts import _arrhenius_chart, _chart_div, _effects_chart
from .data import _g, _get, _is_clear, _p, _pure_component, _r2
from .sections import _Sections, _table, esc

__all__ = ["_EvidenceSections"]


class _EvidenceSections(_Sections):
    """The sections about the models and the runs, rendered from ``report_data``'s dict."""

    def models(self) -> str:
        out = [f"<p>For each response: which terms matter (effects), how well the model "
               f"fits, and whether anything looks off. A term is <b>clear</b> when its "
               f"p-value is below {_g(1 - self.study.confidence, 2)} (or, with no "
               "residual degrees of freedom, when its effect passes the margin worked out "
               "from the smaller effects, Lenth's 1989 method).</p>"]
        alpha = 1 - self.study.confidence
        for r in self.study.responses:
            out.append(f'<div class="response"><h3>{esc(r.display())}</h3>')
            if r.name in self.data["skipped"]:
                out.append(f"<p>No model: {esc(self.data['skipped'][r.name])}</p></div>")
                continue
            if r.name not in self.data["models"]:
                out.append("<p>Not modelled.</p></div>")
                continue
            rep = self.data["models"][r.name]
            if rep["model"] == "category":  # the scores' cumulative logit: no effects chart
                out.append(_category_section(rep))
                out.extend(f'<p class="note">Note: {esc(w)}</p>' for w in rep["warnings"])
                out.append("</div>")
                continue
            if rep["model"] == "smooth":
                out.append(_smooth_section(rep))
                out.append(self._flagged(r.name, rep))
                out.extend(f'<p class="note">Note: {esc(w)}</p>' for w in rep["warnings"])
                out.append("</div>")
                continue
            out.append(self._fit_stats(rep))
            if rep.get("mixture_scale") is not None and hasattr(self, "blend_model"):
                # a blend's terms are not effects: Cox directions instead
                out.append(self.blend_model(r, rep))
            else:
                out.append(_effects_chart(r, self.data["fitted"][r.name], leave_out={
                    f.name for f in self.study.factors if getattr(f, "is_component", False)},
                    labels={f.name: f.label for f in self.study.factors}))
            out.append(self.interaction_chart(r.name, rep, alpha))
            out.append(self._terms_table(rep, alpha))
            out.append(self._tests(rep))
            out.append(self._flagged(r.name, rep))
            for w in rep.get("warnings", []):
                out.append(f'<p class="note">Note: {esc(w)}</p>')
            out.append("</div>")
        return "".join(out)

    def kinetics(self) -> str:
        """Each response fitted across storage temperatures: its per-run table and,
        once per property, the Arrhenius chart."""
        from ..derive.derived import describe_derivation

        out = ["<p>Each run's storage measurements at every temperature are fitted at "
               "once, with a rate that follows the Arrhenius law. Lower and upper give "
               "each estimate's interval; the counts are storage times per temperature, "
               "time 0 included. The charts show ln k against 1000 / T per run: dots "
               "are each temperature's own straight-line rate, the line is the one-step "
               "fit, the diamond the temperature asked for; bars and the band are their "
               f"{self.pct} intervals.</p>"]
        charted = set()
        # without factors the per-run values head the page already: charts only
        factors = bool(self.study.factors)
        for name, k in self.data["kinetics"].items():
            r = self.study.response(name)
            key = (r.extra.get("property"), r.extra.get("order", "zero"))
            if not factors and key in charted:
                continue
            out.append(f'<div class="response"><h3>{esc(r.display())}</h3>'
                       f'<p class="note">{esc(describe_derivation(self.study, r))}</p>'
                       if factors else '<div class="response">')
            rows = [[esc(t["run"]), _g(t["value"]), _g(t["lower"]), _g(t["upper"]),
                     _g(t["se"]), _g(t["r_squared"], 3), esc(t["per_temperature"]),
                     esc(t["flag"])] for _, t in k["table"].iterrows()]
            if factors:
                out.append(f"<details><summary>Per-run values ({len(rows)} runs)</summary>"
                           '<div class="scroll">' + _table(
                               ["run", "value", "lower", "upper", "standard error", "R2",
                                "storage times per temperature", "flag"], rows,
                               numeric={1, 2, 3, 4, 5}) + "</div></details>")
            if key not in charted:
                charted.add(key)
                out.append(_chart_div(_arrhenius_chart(
                    f"Arrhenius chart: {key[0]} ({key[1]} order)", k["points"])))
            out.append("</div>")
        return "".join(out)

    def _fit_stats(self, rep: dict) -> str:
        scale = {"log": " on the log scale", "sqrt": " on the square-root scale"}.get(
            rep["transform"], "")
        model = rep["model"]
        if not isinstance(model, str):  # a list of terms: name the model, not every term
            model = (next(x["model"] for x in self.data["study"]["responses"]
                          if x["name"] == rep["response"]) if self.study.mixture is not None
                     else f"own choice of {len(model)} terms")
        rows = [["model", esc(model_label(model)) + esc(scale)],
                ["runs used", str(rep["n"])],
                ["terms", str(len(rep["terms"]))],
                ["residual degrees of freedom", str(rep["residual_df"])],
                ["R2 (share of variation explained)", _r2(rep["r2"])],
                ["adjusted R2", _r2(rep["adj_r2"])],
                ["predicted R2 (how well it predicts runs left out)",
                 _r2(rep["pred_r2"])],
                ["residual standard deviation", _g(rep["residual_sd"])]]
        pc = rep.get("pieces")
        if pc:
            # several pieces per batch (model/pieces.py): the run mean is the unit
            rows += [["runs measured in several pieces",
                      f"{pc['runs_with_several']} ({pc['pieces']} pieces)"],
                     ["SD of pieces within a batch", _g(pc["within_sd"])],
                     ["SD from batch to batch", _g(pc["batch_sd"])],
                     ["pieces or batches?", esc(pc["summary"])]]
        wp = rep.get("whole_plots")
        if wp:
            # runs sharing a batch (model/wholeplot.py): both variances and the method
            def sd(key):
                low, high = wp[key + "_interval"]
                if high is None:  # an SD estimated at 0 has no chi-square interval
                    return f"{_g(wp[key])} (no interval)"
                return f"{_g(wp[key])} ({_g(low)} to {_g(high)})"
            level = f"{100 * wp['confidence']:g}%"
            rows += [["whole plots (runs sharing a batch)",
                      f"{wp['count']} ({esc(wp['column'])})"],
                     [f"SD between whole plots ({level} interval)", sd("sd")],
                     [f"SD within whole plots ({level} interval)", sd("residual_sd")],
                     ["SD of a new run in a new batch", _g(wp["new_run_sd"])],
                     ["how fitted", esc(wp["method"])]]
        red = rep.get("reduction")
        if red and red.get("dropped"):
            rows.append(["terms dropped by reduction",
                         esc(", ".join(red["dropped"]))])
        return _table(["fit statistic", "value"], rows, raw=True, numeric={1})

    def _terms_table(self, rep: dict, alpha: float) -> str:
        rows = []
        blocks = set((rep.get("blocks") or {}).get("terms", ()))
        shown = 0
        for term in rep["terms"]:
            clear = _is_clear(rep, term, alpha)
            pure = _pure_component(rep, term)  # a blend's component alone: no test
            if term in blocks or (term != "intercept" and not pure and not clear):
                continue
            rows.append([esc(term), _g(_get(rep["coefficients"], term)),
                         _g(_get(rep["effects"], term)),
                         _g(_get(rep["std_errors"], term)),
                         "-" if pure else _p(_get(rep["p_values"], term))])
            shown += 1
        # the last level of a factor of three or more levels has no column of its
        # own: its deviation is minus the sum of the others (model/levels.py)
        derived = rep.get("derived_coefficients") or []
        for d in derived:
            if d.get("p") is not None and d["p"] < alpha:
                rows.append([esc(d["term"]) + " (last level)", _g(d.get("estimate")),
                             _g(d.get("effect", d.get("estimate"))),
                             _g(d.get("std_error")), _p(d["p"])])
        hidden = len(rep["terms"]) - shown
        note = (f'<p class="note">{hidden} other term(s) are within the noise; all terms '
                "are in the workbook's terms sheet.</p>" if hidden else "")
        levels = ("; the last level, which has no column of its own, is minus the sum "
                  "of the others" if derived else "")
        head = ("<p><b>Clear terms</b> (coefficients in coded units; effect = change from "
                "the low to the high setting; for a level alone, such as flour[oat], its "
                f"deviation from the average over the levels{levels})</p>")
        if rep.get("mixture_scale") is not None:  # a blend: no coded effects
            head = ("<p><b>Clear terms</b> (coefficients as fitted, the components as "
                    "shares of what their lows leave; a component alone is the prediction "
                    "for that pure component, not an effect, so it has no p-value"
                    f"{levels})</p>")
        return (head
                + _table(["term", "coefficient", "effect", "std error", "p"], rows,
                         numeric={1, 2, 3, 4}) + note)

    def _tests(self, rep: dict) -> str:
        anova = rep.get("anova") or {}
        lines = []
        lof = anova.get("lack_of_fit")
        pe = anova.get("pure_error")
        if lof and lof.get("p") is not None:
            verdict = ("the model misses a pattern the repeated runs show" if lof["p"] < 0.05
                       else "no sign that the model misses a pattern")
            lines.append(f"Lack of fit: F = {_g(lof['f'], 3)} on {lof['df']} and "
                         f"{pe['df'] if pe else '?'} degrees of freedom, p = {_p(lof['p'])}: "
                         f"{verdict}.")
        else:
            lines.append("Lack of fit: not tested (it needs repeated runs at the same "
                         "settings and spare degrees of freedom).")
        curv = anova.get("curvature")
        if curv and curv.get("p") is not None:
            verdict = ("the centre points sit off the plane of the corner runs: the "
                       "response bends" if curv["p"] < 0.05 else "no sign of curvature")
            lines.append(f"Curvature: centre mean {_g(curv['centre_mean'])} against corner "
                         f"mean {_g(curv['factorial_mean'])}, F = {_g(curv['f'], 3)}, "
                         f"p = {_p(curv['p'])}: {verdict}.")
        else:
            lines.append("Curvature: not tested (it needs centre points and corner runs, "
                         "and a model without squared terms).")
        lenth = rep.get("lenth")
        if lenth:
            lines.append(f"No run is left over to measure the scatter, so the margins come "
                         f"from the smaller effects themselves (Lenth 1989): a term looked at "
                         f"alone stands out beyond {_g(lenth['me'])}, among all "
                         f"{lenth['effects']} terms beyond {_g(lenth['sme'])} (an effect's "
                         f"noise estimated at {_g(lenth['pse'])}).")
        bc = rep.get("box_cox")
        if bc is not None:
            sentence, helps = power_advice(bc, rep["transform"])
            if not helps:  # a scale that would help is a note of its own below
                lines.append(f"Scale: {sentence}.")
        return "<ul>" + "".join(f"<li>{esc(x)}</li>" for x in lines) + "</ul>"

    def _flagged(self, name: str, rep: dict) -> str:
        flagged = rep.get("flagged_runs") or []
        if not flagged:
            return '<p class="small">Flagged runs: none.</p>'
        model = self.data["fitted"].get(name)
        diag = getattr(model, "diagnostics_", None)
        rows = []
        for run in flagged:
            value = None
            if isinstance(diag, pd.DataFrame) and "studentized_deleted" in diag and \
                    run in diag.index:
                value = diag.loc[run, "studentized_deleted"]
            rows.append([esc(run), _g(value, 3)])
        return ("<p><b>Flagged runs</b> (studentized deleted residual beyond +-3: check "
                "them for a recording or making error)</p>"
                + _table(["run", "studentized residual"], rows, numeric={1}))

    def design(self) -> str:
        s = self.data["study"]
        rows = []
        for f in s["factors"]:
            if f["kind"] == "categorical":
                counts = f["levels"]
                names = list(counts)
                if len(names) == 2:
                    a, b = names
                    rows.append([esc(f["label"]), esc(f["name"]), "categorical", "",
                                 f"{esc(a)} (-1)", f"{esc(b)} (+1)",
                                 f"{counts[a]} / {counts[b]} runs", "both levels"])
                else:
                    rows.append([esc(f["label"]), esc(f["name"]),
                                 f"categorical, {len(names)} levels", "", "-", "-",
                                 esc(", ".join(f"{lv}: {n}" for lv, n in counts.items()))
                                 + " runs", "every level"])
            else:
                rows.append([esc(f["label"]), esc(f["name"]), esc(f["kind"]), esc(f["unit"]),
                             f"{_g(f['low'])} (-1)", f"{_g(f['high'])} (+1)",
                             f"{_g(f['tested'][0])} .. {_g(f['tested'][1])} (coded "
                             f"{f['coded_tested'][0]:+.3g} .. {f['coded_tested'][1]:+.3g})",
                             f"{_g(f['search'][0])} .. {_g(f['search'][1])}"])
        many = any(f["kind"] == "categorical" and len(f["levels"]) > 2 for f in s["factors"])
        out = ["<p>Coded units put every factor on the same scale: -1 at its low "
               "setting, +1 at its high, 0 at the centre."
               + (" A categorical factor of three or more levels enters the models as "
                  "sum-to-zero columns, one per level but the last: each level's "
                  "coefficient is its deviation from the average over levels." if many
                  else "") + "</p>",
               _table(["factor", "name", "kind", "unit", "low", "high", "tested",
                       "searched"], rows, raw=True)]
        if self.study.constraints:
            out.append("<p>Rules limiting the searched region: " + "; ".join(
                esc(c["label"]) for c in self.study.constraints) + "</p>")
        runs = self.data["runs"]
        # Coded settings are in the workbook's runs sheet; here they would make the
        # table too wide to read (the coded ranges are in the table above).
        cols = (["run"] + self.study.factor_names
                + [r for r in self.study.response_names if r in runs] + ["marks"])
        numeric = {i for i, c in enumerate(cols)
                   if c not in ("run", "marks") and pd.api.types.is_numeric_dtype(runs[c])}
        rows = [[esc(_g(v) if not isinstance(v, str) else v) for v in rec]
                for rec in runs[cols].itertuples(index=False)]
        head = [esc(c) for c in cols]
        out.append(f"<h3>{len(runs)} runs, in the order of the data file</h3>")
        out.append('<div class="scroll">' + _table(head, rows, numeric=numeric,
                                                    cls="runs") + "</div>")
        return "".join(out)


def _category_section(rep: dict) -> str:
    """A category response: its effects and thresholds on the latent scale."""
    what = {"expected": "the expected category",
            "top_box": f"the percent of scores in the top {rep['boxes']} categories",
            "bottom_box": f"the percent of scores in the bottom {rep['boxes']} categories"}
    lo, hi = rep["scale"]
    rows = [["model", "cumulative logit (proportional odds) of the scores"
             + ("; assessors as fixed effects" if rep["assessor"] == "fixed" else "")],
            ["predicts", what[rep["summary"]] + f" (category scale {lo:g} to {hi:g})"],
            ["scores used", f"{rep['n']} over {rep['n_runs']} runs"],
            ["R2 of the run values", _r2(rep["r2"])],
            ["a new run's panel scatter (SD)", _g(rep["residual_sd"])],
            ["intervals", esc(rep["interval_method"])]]
    effects = [[esc(e["term"]), _g(e["estimate"]), _g(e["se"]), _g(e["z"]),
                _g(e["p"])] for e in rep["effects"] + rep["assessors"]]
    cuts = [[esc(t["between"]), _g(t["estimate"]), _g(t["se"])] for t in rep["thresholds"]]
    return (_table(["fit statistic", "value"], rows, raw=True, numeric={1})
            + "<p><b>Effects on the latent scale</b>, per coded unit: a positive effect "
              "moves scores up the scale.</p>"
            + _table(["term", "estimate", "standard error", "z", "p"], effects,
                     numeric={1, 2, 3, 4})
            + "<p><b>Thresholds</b> between neighbouring categories (latent scale).</p>"
            + _table(["between", "estimate", "standard error"], cuts, numeric={1, 2}))


def _smooth_section(rep: dict) -> str:
    """A smooth model: its fit statistics and length scales (it has no terms)."""
    rows = [["model", "smooth (Gaussian process: no terms, effects or p-values)"],
            ["runs used", str(rep["n"])],
            ["R2 (share of variation explained)", _r2(rep["r2"])],
            ["leave-one-out R2 (how well it predicts runs left out)", _r2(rep["loo_r2"])],
            ["leave-one-out RMSE", _g(rep["loo_rmse"])],
            ["noise standard deviation", _g(rep["noise_sd"])]]
    scales = sorted(rep["length_scales"].items(), key=lambda kv: kv[1] or 0.0)
    lengths = [[esc(f), _g(v), _g(rep["length_scales_natural"].get(f))] for f, v in scales]
    return (_table(["fit statistic", "value"], rows, raw=True, numeric={1})
            + "<p><b>Length scales</b>: how far (coded units, and in the factor's own "
              "units) a factor must move before the response changes appreciably; short "
              "= it matters a lot, long = it hardly matters.</p>"
            + _table(["factor", "length scale (coded)", "in its units"], lengths,
                     numeric={1, 2}))
