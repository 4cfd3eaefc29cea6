"""Adding runs to a study already measured: axial runs (and centre points) that
turn a two-level study into a central composite design, with new run ids that
continue the study's own.
"""
from __future__ import annotations


import numpy as np
import pandas as pd

from ..errors import PlanError

from .designs import Plan, _categorical_cells, _centre_rows, _finish

__all__ = ["augment_study", "axial_distance"]


def _next_ids(ids: list[str]) -> tuple[int, str, int]:
    """Where new run ids continue: (first number, prefix, zero-padding width).

    Ids such as ``R01 .. R20`` continue as ``R21``; plain numbers continue after
    the largest; anything else gets ``aug1, aug2, ...``.
    """
    import re

    parts = [re.fullmatch(r"(\D*)(\d+)", i) for i in ids]
    if parts and all(parts) and len({m.group(1) for m in parts}) == 1:
        prefix = parts[0].group(1)
        digits = [m.group(2) for m in parts]
        padded = all(d.startswith("0") or len(d) == len(digits[0]) for d in digits) \
            and len({len(d) for d in digits}) == 1 and len(digits[0]) > 1
        return max(int(d) for d in digits) + 1, prefix, len(digits[0]) if padded else 0
    prefix = "aug"
    while any(i.startswith(prefix) for i in ids):
        prefix = "x" + prefix
    return 1, prefix, 0


def axial_distance(kind: str, n_factorial: float) -> float:
    """Axial distance in coded units: 1 (face-centred) or n_factorial ** (1/4).

    The rotatable distance makes the prediction variance depend only on the
    distance from the centre (Box & Hunter 1957; common practice).
    """
    if kind == "face":
        return 1.0
    if kind == "rotatable":
        return float(n_factorial) ** 0.25
    raise PlanError(f"augmentation '{kind}' is not one I know: use 'face' (axial runs "
                    "at low and high, three settings per factor) or 'rotatable' "
                    "(axial runs beyond low and high)")


def augment_study(study, kind: str = "face", *, center: int | None = None,
                  replicates: int = 1, seed: int | None = None) -> Plan:
    """The axial and centre runs that turn a two-level study into a central composite.

    The new runs form a new block. Each numeric factor gets two axial runs (at
    -alpha and +alpha coded, every other numeric factor at its centre), repeated
    at every level combination of the categorical factors; ``center`` centre
    runs (default 2 per categorical level combination) are added to the block.

    Returns
    -------
    Plan with only the new runs; ``Plan.design`` is None.
    """
    axial_distance(kind, 1)  # an unknown kind is refused before anything else
    if study.runs is None:
        raise PlanError("augmentation adds runs to measured ones: the study's data file "
                        "is needed (check [study] data = ...)")
    factors = tuple(study.factors)
    numeric = [j for j, f in enumerate(factors) if not f.is_categorical]
    if not numeric:
        raise PlanError("axial runs set numeric factors beyond low and high, and every "
                        "factor here is categorical: nothing to augment")
    seed = study.seed if seed is None else seed
    if not isinstance(replicates, (int, np.integer)) or replicates < 1:
        raise PlanError(f"--replicates must be a whole number of at least 1, found "
                        f"{replicates}")
    coded = study.coded().to_numpy(float)
    rows = study.runs.index.to_numpy()
    for j in numeric:
        col = coded[:, j]
        off = ~(np.isclose(col, -1, atol=1e-6) | np.isclose(col, 1, atol=1e-6)
                | np.isclose(col, 0, atol=1e-6))
        if off.any():
            i = int(np.flatnonzero(off)[0])
            f = factors[j]
            raise PlanError(
                f"augmentation starts from a two-level study (settings at low, high and "
                f"centre), but factor '{f.name}' is {study.runs[f.name].iloc[i]:g} at row "
                f"{rows[i]}, which is none of {f.low:g}, {f.high:g}, {f.centre:g}: is it "
                "already a response-surface study?")
    corner = np.all(np.abs(coded[:, numeric]) > 0.5, axis=1)
    if not corner.any():
        raise PlanError("the study has no runs with every numeric factor at low or high: "
                        "axial runs complete a two-level factorial, plan that first")
    cells = _categorical_cells(factors)
    n_fact = corner.sum() / len(cells)
    alpha = axial_distance(kind, n_fact / replicates)
    cat_cols = [j for j, f in enumerate(factors) if f.is_categorical]
    axial = []
    for cell in cells:
        for j in numeric:
            for sign in (-1.0, 1.0):
                row = np.zeros(len(factors))
                row[j] = sign * alpha
                row[cat_cols] = cell
                axial.append(row)
    axial = np.vstack([np.asarray(axial)] * replicates)
    if center is None:
        center = 2 * len(cells)
    centre = _centre_rows(factors, center, "in the new block")
    coded_new = np.vstack([axial, centre])
    point = ["axial"] * len(axial) + ["centre"] * len(centre)
    block_no = 2
    if study.block_column is not None:  # [study] blocks, or a column named 'block'
        existing = pd.to_numeric(study.runs[study.block_column], errors="coerce")
        if existing.notna().all() and len(existing):
            block_no = int(existing.max()) + 1
    first, prefix, width = _next_ids(study.runs["run"].astype(str).tolist())
    table, coded_df = _finish(factors, coded_new, np.full(len(coded_new), block_no),
                              point, seed, first_id=first, id_prefix=prefix)
    if width:
        table["run"] = [f"{prefix}{int(r[len(prefix):]):0{width}d}" for r in table["run"]]
    notes = []
    if alpha > 1:
        outside = ", ".join(
            f"{factors[j].name} {factors[j].centre - alpha * factors[j].half_range:g}.."
            f"{factors[j].centre + alpha * factors[j].half_range:g}" for j in numeric)
        notes.append(f"rotatable axial runs go beyond low and high (alpha = {alpha:.4g}): "
                     f"{outside}; check every setting can be made, or use 'face'")
        for j in numeric:
            f = factors[j]
            if f.low >= 0 and f.centre - alpha * f.half_range < 0:
                notes.append(f"factor '{f.name}': the low axial setting is below 0; "
                             "use 'face' if a negative setting is impossible")
    if center == 0:
        notes.append("no centre points in the new block: add some (--center) so a "
                     "shift between blocks can be told apart from curvature")
    return Plan(factors=factors, runs=table, coded=coded_df, design=None,
                blocks=[{"generator": f"block {block_no}",
                         "word": "", "confounded_with": ["added axial and centre runs"]}],
                notes=tuple(notes), alpha=alpha,
                kind=f"{'face-centred' if kind == 'face' else 'rotatable'} axial block")
