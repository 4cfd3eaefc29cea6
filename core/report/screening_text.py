"""The screening analysis in words: what is active, the error it was judged
against, and the next step (the factors to carry into a response-surface round
and the command that adds runs around the ones made)."""
from __future__ import annotations

import shlex
from itertools import combinations

__all__ = ["screening_text", "screening_report", "next_round"]


def next_round(study_path: str, screening: dict) -> dict:
    """The factors to carry on and the augmenting command (JSON-ready)."""
    carry = list(screening["active_main"])
    if not carry:
        return {"carry": [], "command": None}
    terms = carry + [f"{a}:{b}" for a, b in combinations(carry, 2)] + [f"{f}^2" for f in carry]
    runs = max(4, len(terms) // 2 + 2)
    command = (f"tradeoff plan {shlex.quote(str(study_path))} --design optimal --keep "
               f"--model {','.join(terms)} --runs {runs} --out next_runs.csv")
    return {"carry": carry, "model_terms": terms, "runs": runs, "command": command}


def screening_text(report: dict) -> str:
    """``tradeoff fit --screening`` for the terminal."""
    lines = []
    for name, entry in report["responses"].items():
        s = entry.get("screening")
        lines.append(f"Response '{name}'")
        if s is None:
            lines.append(f"  screening analysis does not apply: {entry['screening_note']}; "
                         "the study's ordinary model was fitted instead (tradeoff fit "
                         "shows it)")
            lines.append(f"  R2 {entry.get('r2', float('nan')):.3g}" if isinstance(
                entry.get("r2"), (int, float)) else "  (see tradeoff fit)")
            continue
        err = ("not estimable" if s["error_sd"] is None
               else f"{s['error_sd']:.4g} on {s['error_df']} df")
        lines.append(f"  {s['pairs']} fold-over pairs, {s['centre_runs']} centre run(s); "
                     f"error SD {err} (from {s['error_source']})")
        lines.append("  active main effects: " + (", ".join(s["active_main"]) or "none"))
        lines.append("  active second-order terms: "
                     + (", ".join(s["active_second_order"]) or "none"))
        coefs = s["coefficients"]
        lines.append("  coefficients (coded units): "
                     + ", ".join(f"{t} {v:+.4g}" for t, v in coefs.items()))
        nxt = s["next"]
        if nxt["carry"]:
            lines.append(f"  next: carry {', '.join(nxt['carry'])} into a response-surface "
                         "round; keep the runs made and add new ones around them:")
            lines.append(f"    {nxt['command']}")
            lines.append("    (the plan also sets the factors left behind: hold them at one "
                         "setting in the sheet, or take them out of the study file first)")
        else:
            lines.append("  next: no factor stood out from the error; check the range of "
                         "each factor, or add runs (--extra) before screening again")
    for name, why in report.get("skipped", {}).items():
        lines.append(f"Response '{name}' not modelled: {why}")
    lines.append("Screening after Jones & Nachtsheim (2017): main effects from the "
                 "fold-over differences, second-order terms from the rest (only among "
                 "active factors).")
    return "\n".join(lines) + "\n"


def screening_report(study, study_path, *, responses=None, reduce=False) -> dict:
    """Every measured response screened, or fitted as usual where screening does not
    apply (the reason kept under ``screening_note``)."""
    from ..errors import TradeoffError
    from ..model.screening_selection import screen_response
    from ..model.study_fit import fit_response

    names = list(dict.fromkeys(responses)) if responses else [
        r.name for r in study.responses]
    out = {"responses": {}, "skipped": {}}
    for name in names:
        found = screen_response(study, name)
        if isinstance(found, str):
            try:
                entry = fit_response(study, name, reduce=reduce).report()
            except TradeoffError as exc:
                why = f"screening does not apply ({found}), and the study's model: {exc}"
                if responses:  # asked for by name: an error, as for tradeoff fit
                    raise type(exc)(why) from None
                out["skipped"][name] = why
                continue
            entry["screening"] = None
            entry["screening_note"] = found
        else:
            found["next"] = next_round(study_path, found)
            entry = {"screening": found}
        out["responses"][name] = entry
    if not out["responses"]:
        raise TradeoffError("no response could be modelled: "
                            + "; ".join(out["skipped"].values()))
    return out
