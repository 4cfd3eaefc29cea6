"""What a batch of next runs says about itself: its purpose, a batch that holds a
factor nearly alike, and a recommendation that repeats a run already made.

Split from ``next_batch`` (which chooses the runs); the sentences here read the
chosen runs only.
"""
from __future__ import annotations

import numpy as np

__all__ = ["NEGLIGIBLE_EI", "made_run_at"]

NEGLIGIBLE_EI = 1e-3  # an expected gain in D below this is noise, not a reason for a run
_NARROW = 0.1  # a batch within this share of a factor's searched range "holds" it


def _summary(out, best_so_far) -> str:
    """What the batch is for: improving D, or learning where no gain is expected."""
    learn = [i for i, s in enumerate(out, start=1) if s.purpose == "learn"]
    if not learn:
        return "Each run is expected to raise D above the best run made so far."
    confirm = ("Confirmation runs at the recommended settings are the other sensible "
               "choice: they test the recommendation itself.")
    if len(learn) == len(out):
        return (f"No setting is expected to raise D by {NEGLIGIBLE_EI:g} or more over the "
                f"best run made ({best_so_far['run']}, D {best_so_far['desirability']:.3f}): "
                "the models already point at the best they can find. These runs go where "
                "the models are least sure (the largest variance of the predicted mean), "
                "so the next fit is surer. " + confirm)
    first = f"N{learn[0]}" + (f" to N{learn[-1]}" if len(learn) > 1 else "")
    return (f"After the runs expected to raise D, no setting is expected to raise it by "
            f"{NEGLIGIBLE_EI:g} or more: {first} go{'es' if len(learn) == 1 else ''} where "
            "the models are least sure (the largest variance of the predicted mean), so "
            "the next fit is surer. " + confirm)


def _batch_notes(study, out, min_distance) -> list[str]:
    """Why a batch may look near-identical: factors every run holds nearly alike."""
    if len(out) < 3:
        return []
    held = []
    for f in study.factors:
        if f.is_categorical:
            continue
        values = np.array([s.settings[f.name] for s in out], float)
        a, b = f.search_range
        if b > a and np.ptp(values) < _NARROW * (b - a):
            u = f" {f.unit}" if f.unit else ""
            held.append(f"'{f.name}' ({values.min():.4g} to {values.max():.4g}{u})")
    if not held:
        return []
    why = ("that is where D is expected to rise most" if all(
        s.purpose == "improve" for s in out) else "that is where the models expect the "
        "best D, and where what they do not know yet matters most")
    names = held[0] if len(held) == 1 else ", ".join(held[:-1]) + " and " + held[-1]
    return [f"all {len(out)} runs hold {names} nearly alike, each within "
            f"{_NARROW:.0%} of its searched range: {why}; the runs differ in the other "
            f"factors, each at least {min_distance:g} coded units (over all factors) from "
            "every other and from the runs made"]


def made_run_at(study, coded: dict, tol: float = 1e-3) -> str | None:
    """The id of a run already made at these coded settings (within ``tol`` coded
    units), or None: a recommendation that repeats a run made is a confirmation."""
    if study.runs is None or not len(study.runs):
        return None
    x = np.array([float(coded[f.name]) for f in study.factors])
    made = study.coded().to_numpy(float)
    d = np.sqrt(((made - x[None, :]) ** 2).sum(axis=1))
    i = int(np.argmin(d))
    return str(study.runs["run"].iloc[i]) if d[i] <= tol else None
