"""The study drafted in the workbench, checked on every generated study.

For each study the generator writes, a draft is declared as the study file
declares it (each column's role, ranges, levels, labels, units, goals, the
blend's total and model, the batch and block columns); its text
(tradeoff.study.draft.draft_text), read by the library's own loader, must give
the same factors, components, responses and runs, and its problem list must be
empty. A blend's components must be the columns ``guess_draft`` offers as
components: they add up to the same total in every run (common practice).
"""
from __future__ import annotations

import tomllib
from pathlib import Path

__all__ = ["check_draft"]


def _draftable(study) -> bool:
    """Studies a draft can declare: one CSV runs table, measured responses, no rules."""
    spec = study.spec
    return (study.data_path is not None and study.sheet is None
            and study.data_path.suffix.lower() == ".csv"
            and not any(k in spec for k in ("storage", "panel", "confirmations",
                                            "constraints"))
            and all(not r.extra for r in study.responses))


def _factor_keys(f) -> tuple:
    return (f.name, f.label, f.unit, f.low, f.high, f.levels,
            bool(getattr(f, "hard_to_change", False)))


def _response_keys(r) -> tuple:
    g = r.goal
    if g.kind == "none":
        return (r.name, r.label, r.unit, "none")
    return (r.name, r.label, r.unit, g.kind, g.lower, g.upper,
            g.target if g.kind == "target" else None, g.weight)


def _declared(study, data: bytes):
    from tradeoff.study.draft import Draft, DraftColumn, guess_draft

    guessed = guess_draft(study.data_path.name, data)
    by_name = {}
    for f in study.factors:
        is_comp = getattr(f, "is_component", False)
        by_name[f.name] = DraftColumn(
            f.name, role="component" if is_comp else "factor", label=f.label, unit=f.unit,
            low=None if f.is_categorical else (f.given_low if is_comp and f.given_low
                                               is not None else f.low),
            high=None if f.is_categorical else (f.given_high if is_comp and f.given_high
                                                is not None else f.high),
            levels=list(f.levels) if f.is_categorical else None,
            hard_to_change=bool(getattr(f, "hard_to_change", False)))
    for r in study.responses:
        g = r.goal
        by_name[r.name] = DraftColumn(r.name, role="response", label=r.label, unit=r.unit,
                                      goal=g.kind, lower=g.lower, upper=g.upper,
                                      target=g.target, weight=g.weight)
    for column, role in ((study.whole_plot, "batch"), (study.blocks, "block"),
                         ("run", "run")):
        if column:
            by_name.setdefault(column, DraftColumn(column, role=role))
    columns = [by_name.get(c.column, DraftColumn(c.column, role="notes"))
               for c in guessed.columns]
    mixture = study.mixture
    draft = Draft(name=study.name, data=study.data_path.name, description=study.description,
                  model=study.model, columns=columns,
                  total=mixture.total if mixture is not None else None,
                  mixture_model=mixture.model if mixture is not None else "quadratic",
                  process=mixture.process if mixture is not None else "linear")
    return draft, guessed


def check_draft(study, outcome) -> None:
    """The drafted study file loads as the generated one does."""
    import tradeoff
    from tradeoff.study.draft import draft_problems, draft_text

    if not _draftable(study):
        return
    data = Path(study.data_path).read_bytes()
    try:
        draft, guessed = _declared(study, data)
    except tradeoff.TradeoffError as exc:
        outcome.fail("draft", "api", f"guess_draft refused a table the study reads: {exc}")
        return
    problems = draft_problems(draft, data, study_file="drafted.toml")
    if problems:
        outcome.fail("draft", "api", f"a draft declared as the study file is refused: "
                     f"{problems}")
        return
    spec = tomllib.loads(draft_text(draft))
    try:
        again = tradeoff.study_from_dict(spec, source=study.data_path.with_name(
            "drafted.toml"), data_bytes=data)
    except tradeoff.TradeoffError as exc:
        outcome.fail("draft", "api", f"the drafted text does not load: {exc}")
        return
    # what a draft declares (shapes, steps, spreads and per-response models are set
    # elsewhere in the workbench, so they are left out of the comparison)
    pairs = {"factors": ([_factor_keys(f) for f in again.factors],
                         [_factor_keys(f) for f in study.factors]),
             "responses": ([_response_keys(r) for r in again.responses],
                           [_response_keys(r) for r in study.responses])}
    pairs.update({k: (getattr(again, k), getattr(study, k))
                  for k in ("mixture", "model", "whole_plot", "blocks")})
    for what, (ours, theirs) in pairs.items():
        if ours != theirs:
            outcome.fail("draft", "api", f"the drafted study's {what} differ from the "
                         "study file's")
    if not again.runs.equals(study.runs):
        outcome.fail("draft", "api", "the drafted study's runs differ")
    comps = [f.name for f in study.factors if getattr(f, "is_component", False)]
    if comps and [c.column for c in guessed.of_role("component")] != comps:
        outcome.fail("draft", "api", f"the blend's components {comps} were not offered as "
                     f"components: {[c.column for c in guessed.of_role('component')]}")
