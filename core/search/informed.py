"""Which levels of each categorical factor the search may choose among.

A level choice is informed by the data only where the models can tell the
levels apart. When the runs cannot (the factor is confounded with the blocks,
or made at one level only: ``tradeoff.model.levels.unjudged_factors``), the
models' figures for its levels are an artefact of the coding, so the search
does not choose: it holds the factor at the level the study names (``hold =
"level"`` under the factor) or else at its first level, and says so. A level
at which no run was made is left out of the search, since nothing was
measured there.
"""
from __future__ import annotations

import numpy as np

from ..model.levels import unjudged_factors
from ..study.coding import level_codes

__all__ = ["level_choices"]


def _involves(model, name: str) -> bool:
    """True when some column the model kept involves the factor."""
    labels = getattr(model, "terms_", None)
    if labels is None:  # a model without terms (smooth) reads every factor
        return True
    return any(name in {part.partition("[")[0].split("^")[0] for part in label.split(":")}
               for label in labels)


def level_choices(study, models: dict, responses) -> tuple[list[np.ndarray], list[dict]]:
    """The coded levels to search for every categorical factor, and why any are not.

    Parameters
    ----------
    study : Study (its runs give the levels at which runs were made).
    models : dict of response name -> fitted model.
    responses : the names of the responses whose goals take part in D.

    Returns
    -------
    codes : per categorical factor (study order), the coded levels searched.
    not_informed : one dict per factor the search does not choose freely:
        ``factor``, ``why``, ``held_at`` (the level held, or None) and
        ``left_out`` (levels not searched).
    """
    used = [models[n] for n in responses if n in models]
    runs = getattr(study, "runs", None)
    codes, notes = [], []
    for f in study.factors:
        if not f.is_categorical:
            continue
        all_codes = level_codes(f)
        why = None
        judged = False
        for m in used:
            reason = unjudged_factors(m).get(f.name) if getattr(m, "factors", None) \
                else None
            if reason:
                why = why or reason
            elif _involves(m, f.name):
                judged = True
        if why and not judged:
            held = f.hold if f.hold is not None else f.levels[0]
            at = f.levels.index(held)
            codes.append(all_codes[at:at + 1])
            notes.append({"factor": f.name, "why": why, "held_at": held,
                          "left_out": [v for v in f.levels if v != held]})
            continue
        made = set() if runs is None or f.name not in runs else set(
            runs[f.name].astype(str))
        empty = [v for v in f.levels if runs is not None and v not in made]
        if empty and len(empty) < len(f.levels):
            keep = [i for i, v in enumerate(f.levels) if v not in empty]
            codes.append(all_codes[keep])
            notes.append({"factor": f.name,
                          "why": "no runs at " + ", ".join(f"'{v}'" for v in empty),
                          "held_at": None, "left_out": empty})
            continue
        codes.append(all_codes)
    return codes, notes
