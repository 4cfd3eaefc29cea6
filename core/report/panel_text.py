"""The panel analysis as plain text: the ``tradeoff panel`` printout."""
from __future__ import annotations

import math

__all__ = ["panel_text", "retrain_lines", "group_lines"]


def _num(x, fmt=".3g") -> str:
    return "-" if x is None or (isinstance(x, float) and not math.isfinite(x)) \
        else format(x, fmt)


def _p(p) -> str:
    if p is None or not math.isfinite(p):
        return "-"
    return "<0.001" if p < 0.001 else f"{p:.3f}"


def retrain_lines(res: dict) -> list[str]:
    """One plain sentence per assessor who needs attention."""
    return [f"{a['assessor']} " + "; ".join(a["retrain"])
            for a in res["assessors"] if a["retrain"]]


def group_lines(res: dict) -> list[str]:
    """Each set of runs that do not differ, highest mean first."""
    return ["{" + ", ".join(g) + "}" for g in res["groups"]]


def _attribute(name: str, res: dict) -> list[str]:
    lo, hi = res["scale"]
    kind = "category points" if res["kind"] == "category" else "line"
    sess = (f", {len(res['sessions'])} sessions" if res["sessions"] else "")
    out = [f"== {name}  ({kind} {lo:g} to {hi:g}; {res['n_scores']} scores, "
           f"{res['n_runs']} runs, {res['n_assessors']} assessors{sess})", ""]
    out.append(f"  {'source':<16}{'df':>5}{'mean square':>14}{'F':>9}{'p':>9}  tested against")
    for key, row in res["anova"].items():
        if key == "residual":
            out.append(f"  {key:<16}{row['df']:>5}{_num(row['ms'], '.4g'):>14}")
            continue
        out.append(f"  {key:<16}{row['df']:>5}{_num(row['ms'], '.4g'):>14}{_num(row['f']):>9}"
                   f"{_p(row['p']):>9}  {row['tested_against']} "
                   f"({row['df_denominator']} df)")
    run = res["anova"]["run"]
    verdict = ("the runs differ" if run["p"] is not None and math.isfinite(run["p"])
               and run["p"] < res["alpha"] else "no difference between runs shown")
    out += ["", f"  {verdict} (F {_num(run['f'])} on {run['df']} and "
            f"{run['df_denominator']} df, p {_p(run['p'])})", ""]
    alike = {}
    for k, g in enumerate(res["groups"]):
        for r in g:
            alike.setdefault(r, []).append(str(k + 1))
    out.append(f"  {'run':<12}{'LS mean':>10}{'SE':>9}{'scores':>8}  alike-set")
    for m in sorted(res["means"], key=lambda m: -m["mean"]):
        out.append(f"  {m['run']:<12}{_num(m['mean'], '.2f'):>10}{_num(m['se']):>9}"
                   f"{m['n']:>8}  {' '.join(alike.get(m['run'], []))}")
    pct = f"{100 * (1 - res['alpha']):g}%"
    out += ["", f"  runs sharing an alike-set number do not differ (Tukey-Kramer, family "
            f"confidence {pct})"]
    differ = [p for p in res["pairs"] if p["differ"]]
    out.append(f"  pairs that differ: {len(differ)} of {len(res['pairs'])}")
    for p in sorted(differ, key=lambda p: p["p"])[:12]:
        out.append(f"    {p['a']} - {p['b']}: {p['diff']:+.3g} (SE {_num(p['se'])}, "
                   f"p {_p(p['p'])})")
    if len(differ) > 12:
        out.append(f"    ... {len(differ) - 12} more (--json lists every pair)")
    out += ["", f"  {'assessor':<12}{'own F':>8}{'p':>8}{'agree r':>9}{'repeat SD':>11}"
            f"{'centre':>9}{'range':>8}"]
    for a in res["assessors"]:
        out.append(f"  {a['assessor']:<12}{_num(a['f_runs']):>8}{_p(a['p_runs']):>8}"
                   f"{_num(a['agreement'], '.2f'):>9}{_num(a['repeat_sd']):>11}"
                   f"{_num(a['centre']):>9}{_num(a['range']):>8}")
    lines = retrain_lines(res)
    out.append("")
    if lines:
        out.append("  to retrain or check:")
        out += [f"    {line}" for line in lines]
    else:
        out.append("  every assessor scores in line with the panel")
    if not res["replicated"]:
        out.append("  (one session: own F and repeatability need repeated sessions)")
    return out + [""]


def panel_text(result: dict) -> str:
    """Every attribute's panel analysis, in table order."""
    lines = [f"Panel analysis of {result['source']} (assessors random)", ""]
    for name, res in result["attributes"].items():
        lines += _attribute(name, res)
    return "\n".join(lines).rstrip() + "\n"
