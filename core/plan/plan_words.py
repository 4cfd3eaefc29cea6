"""A plan's evaluation in plain words: what can be estimated, how precisely,
what is aliased with what, and the power to find an effect.

Reads the report of ``tradeoff plan --json`` (any design), so the words say
exactly what the command's figures say.
"""
from __future__ import annotations

__all__ = ["plan_words", "plan_measures", "VIF_WORRY"]

# A variance inflation factor above 5 is commonly read as a worrying correlation
# between terms (common practice; some texts use 10).
VIF_WORRY = 5.0


def _num(x: float) -> str:
    return f"{x:.3g}"


def plan_measures(report: dict) -> dict:
    """The figures a plan is judged by, from its report (None when the plan has none).

    Keys: ``runs``, ``blocks``, ``terms``, ``estimable``, ``not_estimable``,
    ``error_df``, ``largest_vif``, ``resolution``, ``aliased_pairs``,
    ``lowest_power``, ``i_average``, ``g_largest``, ``d_efficiency``.
    """
    model = report.get("model") or {}
    estimable = list(model.get("estimable") or [])
    not_estimable = dict(model.get("not_estimable") or {})
    vif = [v for v in (model.get("vif") or {}).values() if v is not None]
    power = model.get("power") or {}
    powers = [p for p in (power.get("by_term") or {}).values() if p is not None]
    pv = report.get("prediction_variance") or {}
    runs = report.get("total_runs", report.get("runs"))
    return {
        "runs": None if runs is None else int(runs),
        "blocks": report.get("blocks_count"),
        "terms": len(estimable) + len(not_estimable),
        "estimable": len(estimable),
        "not_estimable": len(not_estimable),
        "error_df": model.get("error_df"),
        "largest_vif": max(vif) if vif else None,
        "resolution": report.get("resolution"),
        "aliased_pairs": sum(len(v) for v in (report.get("aliases") or {}).values()),
        "lowest_power": min(powers) if powers else None,
        "i_average": pv.get("i_average_spv"),
        "g_largest": pv.get("g_max_spv"),
        "d_efficiency": pv.get("d_efficiency"),
    }


def plan_words(report: dict) -> list[str]:
    """The plan's evaluation as short sentences, one per question a developer asks."""
    m = plan_measures(report)
    model = report.get("model") or {}
    name = model.get("model", "the")
    lines = []
    blocks = m["blocks"] or 1
    lines.append(f"Runs: {m['runs']} to make"
                 + (f", in {blocks} blocks (days or batches)" if blocks > 1 else "") + ".")
    if m["not_estimable"] == 0:
        lines.append(f"What can be estimated: all {m['estimable']} terms of the {name} model.")
    else:
        missing = "; ".join(f"{t} (aliased with {', '.join(w) or 'earlier terms'})"
                            for t, w in (model.get("not_estimable") or {}).items())
        lines.append(f"What can be estimated: {m['estimable']} of the {m['terms']} terms of "
                     f"the {name} model. Not estimable: {missing}.")
    df = m["error_df"]
    if df is not None and df < 1:
        lines.append("Precision: no run is left over to estimate the run-to-run variation, "
                     "so no effect can be tested: add centre points or replicates.")
    elif df is not None:
        lines.append(f"Precision: {df} run{'s' if df != 1 else ''} left over to estimate "
                     "the run-to-run variation"
                     + (" (few: tests will be weak; 5 or more is better)" if df < 5 else "")
                     + ".")
    if m["largest_vif"] is not None:
        worry = m["largest_vif"] > VIF_WORRY
        lines.append(f"Terms {'are tangled' if worry else 'stand apart'}: the largest "
                     f"variance inflation factor is {_num(m['largest_vif'])} "
                     f"({'above' if worry else 'at or below'} {VIF_WORRY:g}; 1 means the "
                     "term is estimated as if alone).")
    aliases = report.get("aliases") or {}
    if m["resolution"] is not None or aliases:
        if aliases:
            pairs = "; ".join(f"{k} with {', '.join(v)}" for k, v in aliases.items())
            lines.append(f"Aliased (cannot be told apart from these runs): {pairs}.")
        else:
            lines.append("Aliased: nothing, up to two-factor interactions.")
    power = model.get("power")
    if power:
        by = {t: p for t, p in (power.get("by_term") or {}).items() if p is not None}
        if by:
            low = min(by, key=by.get)
            lines.append(f"Power: the chance of finding a change of {power['effect']:g} "
                         f"(low to high) when the run-to-run SD is {power['sd']:g} is at "
                         f"least {by[low]:.0%} (lowest for {low}), at the "
                         f"{power['alpha']:.2g} level.")
        else:
            lines.append("Power: none, as no run is left over to test an effect.")
    elif "components" not in report:  # a blend's plan is judged without power: ask nothing
        lines.append("Power: give the smallest change worth finding and the expected "
                     "run-to-run SD to see it.")
    if m["i_average"] is not None:
        lines.append(f"Prediction over the region: average scaled variance "
                     f"{_num(m['i_average'])}, largest {_num(m['g_largest'])} (smaller "
                     f"is better); D-efficiency {m['d_efficiency']:.3g} %.")
    return lines
