"""The what-if invariant of the oracle's battery: one recipe per answer.

At every solution of the search, ``tradeoff.maps.tables.what_if`` answers with
predictions equal to the models' at the recipe it names, each d equal to
Derringer & Suich (1980) at that prediction (oracle_reference.d_reference), D the
weighted geometric mean of those d's (Derringer 1994) and equal to the
solution's own D. For a blend, the same blend typed 10 % larger is named as
off its total and answered with the figures of its shares (a blend is its
proportions, Cornell (2002), sec. 2.1); moving one component along Cox's
direction keeps the total and the others' ratios (Cornell (2002), sec. 5.8).
"""
from __future__ import annotations

import math

import numpy as np
import pandas as pd

from oracle_reference import D_reference, d_reference

__all__ = ["check_what_if"]


def _close(a, b, rel=1e-9) -> bool:
    a, b = float(a), float(b)
    if math.isnan(a) or math.isnan(b):
        return math.isnan(a) and math.isnan(b)
    return abs(a - b) <= rel * (abs(a) + abs(b) + 1.0)


def check_what_if(generated, study, fit, result, goals, outcome) -> None:
    from tradeoff import to_coded
    from tradeoff.maps.mixture_tables import cox_edit
    from tradeoff.maps.tables import what_if

    weights = [g.get("weight", 1.0) for _, _, g in goals]
    comps = [c.name for c in generated.region.components]
    for s in result.solutions[:2]:
        where = f"what-if at {s.label}"
        answer = what_if(study, fit, dict(s.settings), draws=500)
        if answer.notes:
            outcome.fail("what_if", "api", f"{where}: a note at a recipe of the search: "
                         f"{answer.notes}")
        X = to_coded(study.factors, pd.DataFrame([answer.settings]))
        rows = answer.table.set_index("response")
        ds = []
        for kind, name, g in goals:
            if kind == "response":
                p = float(np.asarray(fit.models[name].predict(X)).ravel()[0])
                if not _close(rows.loc[name, "predicted"], p):
                    outcome.fail("what_if", "api", f"{where}: '{name}' predicted "
                                 f"{rows.loc[name, 'predicted']}, the model {p}")
                d = float(rows.loc[name, "desirability"])
                y = p
            else:
                y = float(answer.settings[name])
                d = float(d_reference(np.array([y]), g)[0])
            ref = float(d_reference(np.array([y]), g)[0])
            if abs(d - ref) > 1e-7:
                outcome.fail("what_if", "api", f"{where}: d of '{name}' is {d} at {y}, "
                             f"Derringer-Suich gives {ref}")
            ds.append(d)
        if goals:
            D = float(D_reference(np.array([ds]), weights)[0])
            if not _close(answer.desirability, D, 1e-9):
                outcome.fail("what_if", "api", f"{where}: D = {answer.desirability}, the "
                             f"weighted geometric mean of its d's is {D}")
            if not _close(answer.desirability, s.desirability, 1e-7):
                outcome.fail("what_if", "api", f"{where}: D = {answer.desirability}, the "
                             f"search says {s.desirability} at the same settings")
        if not comps:
            continue
        total = generated.region.total
        bigger = {k: (v * 1.1 if k in comps else v) for k, v in s.settings.items()}
        scaled = what_if(study, fit, bigger, draws=500)
        if len(scaled.notes) != 1 or not _close(scaled.desirability, answer.desirability,
                                                1e-9):
            outcome.fail("what_if", "api", f"{where}: the blend typed 10 % larger gives "
                         f"D = {scaled.desirability} (notes {scaled.notes}), its shares "
                         f"{answer.desirability}")
        first = comps[0]
        amounts = {c: float(s.settings[c]) for c in comps}
        value = 0.5 * amounts[first] + 0.25 * total  # somewhere between it and a half
        moved = cox_edit(study, amounts, first, value)
        rest = total - amounts[first]
        for c in comps[1:]:
            # a blend all of one component (to rounding dust) has no Cox direction: the edit
            # then shares the rest out, which the formula cannot judge
            want = amounts[c] * (total - value) / rest if rest > 1e-6 * total else None
            if want is not None and not _close(moved[c], want, 1e-9):
                outcome.fail("what_if", "api", f"{where}: moving '{first}' to {value} put "
                             f"'{c}' at {moved[c]}, Cox's direction gives {want}")
        if not _close(sum(moved.values()), total, 1e-12):
            outcome.fail("what_if", "api", f"{where}: after a Cox move the blend adds up "
                         f"to {sum(moved.values())}, not {total}")
