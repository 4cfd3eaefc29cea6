"""Readable tables of fitted response models, printed by ``tradeoff fit``."""
from __future__ import annotations

from ..model.dependence import combination_text
from ..model.transforms import power_advice

__all__ = ["fit_text"]


def _f(v, fmt: str = ".4g") -> str:
    return "-" if v is None else format(v, fmt)


def _p(v) -> str:
    if v is None:
        return "-"
    return "<0.0001" if v < 1e-4 else f"{v:.4f}"


def _margins(r: dict) -> dict:
    """Term -> (its effect's margin alone, verdict), as the effects figure draws them
    (``tradeoff.maps.estimates``): t(1 - alpha/2, df) times the effect's standard
    error alone; the Sidak quantile over every effect shown for all terms together."""
    from scipy import stats

    df, level = r["residual_df"], r.get("confidence") or 0.95
    sized = {t: (abs(e / r["coefficients"][t]) * r["std_errors"][t], abs(e))
             for t, e in r["effects"].items()
             if e is not None and t in r["std_errors"] and r["std_errors"][t] is not None
             and r["coefficients"].get(t) not in (None, 0)}
    if not sized or not df:
        return {}
    from ..maps.estimates import term_df

    out = {}
    for t, (se, e) in sized.items():
        # runs sharing batches: a term's own df, the one its p-value used
        d = (term_df(r["t_values"][t], r["p_values"][t], df)
             if r.get("whole_plots") is not None else df)
        alone_q = stats.t.ppf(0.5 + level / 2, d)
        together_q = stats.t.ppf((1 + level ** (1 / len(sized))) / 2, d)
        out[t] = (alone_q * se, "stands out among all terms" if e > together_q * se else
                  "stands out alone" if e > alone_q * se else "")
    return out


def _anova_text(a: dict) -> list[str]:
    """The ANOVA of runs made independently: model, residual, lack of fit, whole terms."""
    out = []
    out.append(f"  {'source':<16}{'sum of squares':>16}{'df':>5}{'mean square':>14}"
               f"{'F':>10}{'p':>10}")
    names = {"blocks": "blocks", "model": "model", "residual": "residual",
             "lack_of_fit": "  lack of fit",
             "pure_error": "  pure error", "total": "total"}
    for key, label in names.items():
        row = a.get(key)
        if row is None:
            continue
        out.append(f"  {label:<16}{_f(row['ss']):>16}{row['df']:>5}{_f(row['ms']):>14}"
                   f"{_f(row['f'], '.3g'):>10}{_p(row['p']):>10}")
    whole = [(k, v) for k, v in (a.get("terms") or {}).items() if v["df"] > 1]
    for key, row in whole:  # terms of several columns, each tested as a whole
        out.append(f"  {key:<16}{_f(row['ss']):>16}{row['df']:>5}{_f(row['ms']):>14}"
                   f"{_f(row['f'], '.3g'):>10}{_p(row['p']):>10}   (whole term)")
    return out


def _whole_plot_text(r: dict) -> list[str]:
    """Runs sharing batches: both variances, and the ANOVA in two strata."""
    w, a = r["whole_plots"], r["anova"]

    def sd(key):
        low, high = w[key + "_interval"]
        if high is None:  # an SD estimated at 0 has no chi-square interval
            return f"{_f(w[key], '.4g')} (no interval)"
        return f"{_f(w[key], '.4g')} ({_f(low, '.3g')} to {_f(high, '.3g')})"
    level = f"{100 * w['confidence']:g}%"
    out = [f"  whole plots ({w['column']}): {w['count']}, {w['runs_per_plot']['min']} to "
           f"{w['runs_per_plot']['max']} runs each; SD between whole plots {sd('sd')}, "
           f"within {sd('residual_sd')} ({level} intervals)",
           f"  a new run in a new batch scatters with SD {_f(w['new_run_sd'])} "
           f"({_f(w['new_run_df'], '.3g')} df); {w['method']}", ""]
    out.append(f"  {'source':<22}{'sum of squares':>16}{'df':>5}{'mean square':>14}"
               f"{'F':>10}{'p':>10}")
    for stratum, label in (("whole plot", "between whole plots"),
                           ("within", "within whole plots")):
        part = a["strata"][stratum]
        out.append(f"  {label}")
        for key, row in part["terms"].items():
            out.append(f"    {key:<20}{_f(row['ss']):>16}{row['df']:>5}{_f(row['ms']):>14}"
                       f"{_f(row['f'], '.3g'):>10}{_p(row['p']):>10}")
        e = part["error"]
        out.append(f"    {'error':<20}{_f(e['ss']):>16}{e['df']:>5}{_f(e['ms']):>14}")
        if part.get("no_df"):
            out.append(f"    (no degrees of freedom in this stratum: "
                       f"{', '.join(part['no_df'])}; see the mixed-model tests)")
    out.append("  mixed-model tests (each term given all others):")
    for key, row in a["terms"].items():
        out.append(f"    {key:<20} F {_f(row['f'], '.3g')} on {row['df']} and "
                   f"{_f(row['df_denominator'], '.3g')} df, p {_p(row['p'])}"
                   f"  ({row['stratum']})")
    return out


def _response_text(r: dict) -> list[str]:
    out = []
    model = r["model"] if isinstance(r["model"], str) else "listed terms"
    blend = r.get("mixture_scale")
    if blend is not None:  # Scheffe blending terms, no intercept (model/scheffe.py)
        model = ("for a blend (Scheffe, no intercept; coefficients for "
                 + ("proportions of the total)" if blend == "proportion"
                    else "L-pseudo-components)"))
    scale = "" if r["transform"] == "none" else f", modelled as {r['transform']}(response)"
    wp = r.get("whole_plots")
    out.append(f"{r['response']}: model {model}{scale}; {r['n']} runs, " + (
        f"{r['residual_df']} residual degrees of freedom" if wp is None else
        f"in {wp['count']} whole plots (runs sharing a batch)"))
    out.append(f"  R2 {_f(r['r2'], '.4f')}   adjusted R2 {_f(r['adj_r2'], '.4f')}   "
               f"predicted R2 {_f(r['pred_r2'], '.4f')}   residual SD {_f(r['residual_sd'])}")
    out.append("")
    levels = [t for t in r["terms"] if not t.startswith("block[")
              and all("[" in part for part in t.split(":"))]
    if levels:
        out.append("  effect: change from the low to the high setting (twice the "
                   f"coefficient); for a level alone ({levels[0]}),")
        out.append("  its deviation from the average over the levels (the coefficient)")
    head = f"  {'term':<28}{'coef' if blend else 'coef (coded)':>14}{'effect':>12}"
    saturated = r["p_values"] is None
    margins = {} if saturated else _margins(r)
    if not saturated:
        head += f"{'std error':>12}{'t':>9}{'p':>10}"
        if margins:
            head += f"  {'effect margin':>13}"
    out.append(head)
    for term in r["terms"]:
        line = (f"  {term:<28}{_f(r['coefficients'][term]):>14}"
                f"{_f(r['effects'].get(term)):>12}")
        if not saturated and blend is not None and ":" not in term:
            # a component alone: its coefficient is the pure component's prediction, not
            # an effect, so a test of it against 0 says nothing about the blend
            line += f"{_f(r['std_errors'][term]):>12}{'-':>9}{'-':>10}"
        elif not saturated:
            line += (f"{_f(r['std_errors'][term]):>12}{_f(r['t_values'][term], '.3g'):>9}"
                     f"{_p(r['p_values'][term]):>10}")
            if term in margins:
                line = (line + f"  {'+-' + format(margins[term][0], '.3g'):>13}  "
                        f"{margins[term][1]}").rstrip()
        elif r["lenth"] is not None and r["effects"].get(term) is not None:
            e = abs(r["effects"][term])
            mark = "stands out among all terms" if e > r["lenth"]["sme"] else \
                "stands out alone" if e > r["lenth"]["me"] else ""
            line += f"  {mark}"
        out.append(line)
    if blend is not None and not saturated:
        out.append("  a component alone has no t or p: its coefficient is the prediction for "
                   "that pure component, not an effect (effects of a blend: along Cox "
                   "directions)")
    for d in r.get("derived_coefficients") or []:
        line = f"  {d['term']:<28}{_f(d['estimate']):>14}{_f(d.get('effect')):>12}"
        if not saturated:
            line += (f"{_f(d['std_error']):>12} {_f(d['t'], '.3g'):>8}{_p(d['p']):>10}")
        out.append(line + "  (last level: minus the sum of the others)")
    if r["lenth"] is not None:
        le = r["lenth"]
        out.append(f"  margins from the smaller effects (no run left over; Lenth 1989): a "
                   f"term alone stands out beyond {_f(le['me'])}, among all {le['effects']} "
                   f"terms beyond {_f(le['sme'])}; an effect's noise {_f(le['pse'])}")
    a = r["anova"]
    out.append("")
    if r.get("whole_plots") is not None:
        out += _whole_plot_text(r)
    else:
        out += _anova_text(a)
    means = [m for m in r.get("level_means") or []]
    if any(sum(1 for m in means if m["factor"] == f) > 2 for f in {m["factor"] for m in means}) \
            or any(m.get("not_estimable") for m in means):
        out.append("  level means (other factors in the middle): " + "; ".join(
            f"{m['factor']} {m['level']} not estimable ({m['not_estimable']})"
            if m.get("not_estimable") else
            f"{m['factor']} {m['level']} {_f(m['predicted'])} "
            f"({_f(m['ci_low'])} to {_f(m['ci_high'])})" for m in means))
    c = a.get("curvature")
    if c is not None:
        out.append(f"  curvature: centre average {_f(c['centre_mean'])} vs factorial "
                   f"average {_f(c['factorial_mean'])} (difference "
                   f"{_f(c['difference'])}), F {_f(c['f'], '.3g')}, p {_p(c['p'])}")
    b = r.get("blocks")
    if b is not None:
        shifts = ", ".join(f"{lev} {v:+.4g}" if v is not None else f"{lev} -"
                           for lev, v in b["effects"].items())
        out.append(f"  blocks ({b['column']}, {len(b['levels'])}): shift from the average "
                   f"block {shifts}; adjusted sum of squares {_f(b['ss'])} on {b['df']} df"
                   + (f", F {_f(b['f'], '.3g')}, p {_p(b['p'])}" if b["p"] is not None
                      else "") + "; predictions are for the average block")
        if b["confounded"]:
            out.append("  confounded with blocks (left out): "
                       + ", ".join(b["confounded"]))
    if r["aliases"]:
        out.append("  aliases (in these runs): " + "; ".join(
            f"{k} = {combination_text({p['term']: p['coef'] for p in v})}"
            for k, v in r["aliases"].items()))
    nat = r.get("natural_coefficients")
    if nat:
        lhs = r["response"] if r["transform"] == "none" else f"{r['transform']}({r['response']})"
        parts = [f"{_f(v)}" if k == "intercept" else f"{v:+.4g}*{k}"
                 for k, v in nat.items() if v is not None]
        out.append(f"  natural units: {lhs} = " + " ".join(parts))
    props = r.get("proportion_coefficients")
    if props and blend == "pseudo":
        lhs = r["response"] if r["transform"] == "none" else f"{r['transform']}({r['response']})"
        out.append(f"  in proportions of the total: {lhs} = " + " ".join(
            f"{v:+.4g}*{k}" for k, v in props.items() if v))
    red = r.get("reduction")
    if red is not None:
        dropped = ", ".join(f"{k} ({v})" for k, v in red["dropped"].items())
        out.append(f"  reduced: dropped {dropped or 'nothing'}")
    bc = r.get("box_cox")
    if bc is not None:  # the same sentence as the workbench and the report
        out.append(f"  scale: {power_advice(bc, r['transform'])[0]}")
    pc = r.get("pieces")
    if pc is not None:
        out.append(f"  pieces: {pc['runs_with_several']} runs measured in several pieces "
                   f"({pc['pieces']} pieces); SD within a batch {_f(pc['within_sd'], '.3g')} "
                   f"({pc['within_df']} df), batch to batch {_f(pc['batch_sd'], '.3g')}")
        out.append(f"  {pc['summary']}")
    for w in r["warnings"]:
        out.append(f"  warning: {w}")
    return out


def _smooth_text(r: dict) -> list[str]:
    """A smooth model's block: length scales and leave-one-out R2 (no effects)."""
    scale = "" if r["transform"] == "none" else f", modelled as {r['transform']}(response)"
    out = [f"{r['response']}: smooth model (Gaussian process){scale}; {r['n']} runs",
           f"  R2 {_f(r['r2'], '.4f')}   leave-one-out R2 {_f(r['loo_r2'], '.4f')}   "
           f"leave-one-out RMSE {_f(r['loo_rmse'])}   noise SD {_f(r['noise_sd'])}", "",
           f"  {'factor':<28}{'length scale (coded)':>22}{'in its units':>16}"]
    order = sorted(r["length_scales"], key=lambda f: r["length_scales"][f] or 0.0)
    for f in order:
        out.append(f"  {f:<28}{_f(r['length_scales'][f]):>22}"
                   f"{_f(r['length_scales_natural'].get(f)):>16}")
    out.append("  a short length scale: the response changes quickly along that factor; "
               "a long one: it hardly changes")
    out.append(f"  share of the variation in the noise term {_f(r['noise_share'], '.2f')}; "
               f"hyperparameters from {r['restarts'] + 1} seeded starts (seed {r['seed']})")
    for w in r["warnings"]:
        out.append(f"  warning: {w}")
    return out


def _category_text(r: dict) -> list[str]:
    """A category response's block: effects and thresholds on the latent scale."""
    what = {"expected": "expected category",
            "top_box": f"percent of scores in the top {r['boxes']} categories",
            "bottom_box": f"percent of scores in the bottom {r['boxes']} categories"}
    lo, hi = r["scale"]
    by = "; assessors as fixed effects" if r["assessor"] == "fixed" else ""
    out = [f"{r['response']}: category model (cumulative logit, proportional odds) of "
           f"{r['n']} scores over {r['n_runs']} runs, scale {_f(lo)} to {_f(hi)}{by}",
           f"  predicts the {what[r['summary']]}; R2 of the run values "
           f"{_f(r['r2'], '.4f')}, predicted R2 (each run left out) "
           f"{_f(r['pred_r2'], '.4f')}; a new run's panel scatter SD {_f(r['residual_sd'])} "
           f"(about {_f(r['scores_per_run'])} scores per run)", "",
           "  effects on the latent scale, per coded unit (positive: scores move up the "
           "scale)",
           f"  {'term':<28}{'estimate':>12}{'std error':>12}{'z':>9}{'p':>10}"]
    for e in r["effects"]:
        out.append(f"  {e['term']:<28}{_f(e['estimate']):>12}{_f(e['se']):>12}"
                   f"{_f(e['z'], '.2f'):>9}{_p(e['p']):>10}")
    out += ["", "  thresholds between neighbouring categories (latent scale)",
            f"  {'between':<28}{'estimate':>12}{'std error':>12}"]
    for t in r["thresholds"]:
        out.append(f"  {t['between']:<28}{_f(t['estimate']):>12}{_f(t['se']):>12}")
    if r["assessors"]:
        shown = ", ".join(f"{a['term'][9:-1]} {_f(a['estimate'], '+.2f')}"
                          for a in r["assessors"])
        out.append(f"  assessor effects (sum to zero; the first is minus the rest): {shown}")
    out.append(f"  intervals: {r['interval_method']}")
    for w in r["warnings"]:
        out.append(f"  warning: {w}")
    return out


def fit_text(report: dict) -> str:
    """Text tables of ``StudyFit.report()``: one block per response, then skipped ones."""
    lines: list[str] = []
    for r in report["responses"].values():
        lines += (_smooth_text(r) if r["model"] == "smooth" else _category_text(r)
                  if r["model"] == "category" else _response_text(r))
        lines.append("")
    for name, reason in report.get("skipped", {}).items():
        lines.append(f"{name}: no model: {reason}")
    return "\n".join(lines).rstrip() + "\n"
