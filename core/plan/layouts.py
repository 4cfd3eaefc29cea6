"""Response-surface and optimal plans for a study: ``tradeoff plan --design``.

``plan_design`` is the one entry point for every design other than the
two-level factorial (``tradeoff.plan.designs.plan_runs``): a central composite
(:mod:`~tradeoff.plan.composite`), a Box-Behnken design
(:mod:`~tradeoff.plan.boxbehnken`) or an optimal design for any region
(:mod:`~tradeoff.plan.optimal`). Each returns the same ``Plan`` as the
factorial, so the run sheet, the run order and the evaluation are shared.
Categorical factors are crossed with central composite and Box-Behnken
designs (the design is run at every level combination); an optimal design
treats their levels as coordinates.

``prediction_figures`` judges any plan over the study's region (search ranges
and rules): D-efficiency, average and largest scaled prediction variance and
the fraction-of-design-space quantiles (:mod:`~tradeoff.plan.variance`).
"""
from __future__ import annotations

from dataclasses import replace
from itertools import product

import numpy as np
import pandas as pd

from ..errors import ModelError, PlanError
from .boxbehnken import box_behnken_points
from .composite import composite_points
from .designs import Plan, _finish, fractional_design
from .optimal import coordinate_exchange
from .region import study_region
from .variance import prediction_variance

__all__ = ["DESIGNS", "plan_design", "model_builder", "prediction_figures"]

DESIGNS = ("factorial", "central-composite", "box-behnken", "optimal",
           "definitive-screening")


def model_builder(study, model):
    """(function coded (m, k) -> model rows (m, p), the terms) for a study's model.

    ``model``: a model name or a list of term labels. Squares are made for
    every numeric factor (a plan decides the settings, so each has three or more).
    """
    from ..model.levels import factor_levels
    from ..model.terms import model_matrix, model_terms

    names = [f.name for f in study.factors]
    settings = [2 if f.is_categorical else 3 for f in study.factors]
    try:
        terms, _ = model_terms(model if isinstance(model, str) else list(model), names,
                               n_settings=settings, levels=factor_levels(study.factors))
    except ModelError as exc:
        raise PlanError(str(exc)) from None
    return (lambda X: model_matrix(X, terms)), terms


def _numeric(study) -> tuple[list[int], list[int]]:
    num = [j for j, f in enumerate(study.factors) if not f.is_categorical]
    cat = [j for j, f in enumerate(study.factors) if f.is_categorical]
    return num, cat


def _cross(study, coded_num: np.ndarray, point: list[str], block: np.ndarray):
    """Run a design of the numeric factors at every categorical level combination."""
    from ..study.coding import level_codes

    num, cat = _numeric(study)
    cells = list(product(*[level_codes(study.factors[j]) for j in cat])) or [()]
    rows, points, blocks = [], [], []
    for cell in cells:
        X = np.zeros((len(coded_num), len(study.factors)))
        X[:, num] = coded_num
        if cat:
            X[:, cat] = cell
        rows.append(X)
        points += point
        blocks.append(block)
    return np.vstack(rows), points, np.concatenate(blocks)


def _check_count(value, what: str, least: int) -> None:
    if value is not None and (not isinstance(value, (int, np.integer))
                              or isinstance(value, bool) or value < least):
        raise PlanError(f"{what} must be a whole number of at least {least}, found {value}")


def plan_design(study, design: str, *, alpha="rotatable", center: int | None = None,
                blocks: int = 1, runs: int | None = None, criterion: str = "d",
                model=None, keep: bool = False, seed: int | None = None,
                extra: int = 0) -> Plan:
    """Plan a central composite, Box-Behnken or optimal design for the study.

    Parameters
    ----------
    study : a Study (with its runs when ``keep``).
    design : ``central-composite``, ``box-behnken`` or ``optimal``.
    alpha : axial distance of a central composite (``face``, ``rotatable``,
        ``orthogonal`` or a number).
    center : centre runs (default 4 for a central composite, 3 for Box-Behnken;
        per block when blocked).
    blocks : 1; 2 for a central composite (factorial and axial blocks); the
        published blocks of a Box-Behnken design.
    runs : the factorial part's runs of a central composite (default the
        smallest fraction of resolution V or more); the number of new runs of
        an optimal design (required).
    criterion : ``d`` or ``i`` (optimal).
    model : the model an optimal design is built for (a name or term labels;
        default the study's model).
    keep : optimal augmentation: the study's measured runs stay and the new
        runs are chosen around them.
    seed : seed of the run order and of the optimal builder (default the study's).
    extra : definitive screening: runs added through fake factors (even).
    """
    seed = study.seed if seed is None else seed
    _check_count(center, "--center", 0)
    _check_count(blocks, "--blocks", 1)
    if design == "optimal":
        return _optimal(study, runs=runs, criterion=criterion, model=model, keep=keep,
                        seed=seed, blocks=blocks, center=center)
    if design == "definitive-screening" and not keep:
        from .definitive import plan_definitive

        return plan_definitive(study, extra=extra, blocks=blocks, center=center, runs=runs,
                               seed=seed)
    if extra:
        raise PlanError("--extra adds runs to a definitive screening design only: use "
                        "--design definitive-screening, or leave it out")
    if keep:
        raise PlanError("--keep chooses new runs around the measured ones, which only "
                        "--design optimal does: use --design optimal --keep")
    num, cat = _numeric(study)
    factors = study.factors
    if design == "central-composite":
        if not num:
            raise PlanError("a central composite design needs numeric factors, and every "
                            "factor here is categorical: use --design optimal")
        two = fractional_design(len(num), runs, 5 if runs is None else None)
        coded, point, block, a = composite_points(two.coded, alpha=alpha, center=center,
                                                  blocks=blocks)
        coded, point, block = _cross(study, coded, point, block)
        notes = []
        if a > 1:
            notes.append(f"axial runs go beyond low and high (alpha = {a:.4g}): "
                         + ", ".join(f"{factors[j].name} "
                                     f"{factors[j].centre - a * factors[j].half_range:g}.."
                                     f"{factors[j].centre + a * factors[j].half_range:g}"
                                     for j in num)
                         + "; check every setting can be made, or use --alpha face")
        kind = (f"central composite ({'full factorial' if two.is_full else 'fraction'} "
                f"of {two.runs} runs, alpha = {a:.4g})")
        return _plan(study, coded, point, block, seed, kind, notes, alpha=a)
    if design == "box-behnken":
        if runs is not None:
            raise PlanError("--runs is not used by a Box-Behnken design (its runs are "
                            "fixed by the number of factors): leave it out")
        coded, point, block = box_behnken_points(len(num), center=center, blocks=blocks)
        coded, point, block = _cross(study, coded, point, block)
        return _plan(study, coded, point, block, seed,
                     f"Box-Behnken design for {len(num)} factors", [])
    from ..errors import did_you_mean

    raise PlanError(f"design '{design}' is not one I know{did_you_mean(design, DESIGNS)}: "
                    f"use one of {', '.join(DESIGNS)} (lattice, centroid and vertices are "
                    "for studies with blend components)")


def _plan(study, coded, point, block, seed, kind, notes, alpha=None, first_id=1,
          prefix="") -> Plan:
    if study.constraints:
        from ..study.constraints import rules_satisfied

        outside = ~rules_satisfied(study, coded)
        if outside.any():
            notes = list(notes) + [
                f"{int(outside.sum())} of the {len(coded)} runs break the study's rules "
                f"({'; '.join(c['rule'] for c in study.constraints)}): this layout "
                "ignores rules; --design optimal plans inside them"]
    table, coded_df = _finish(tuple(study.factors), coded, np.asarray(block), point, seed,
                              first_id=first_id, id_prefix=prefix)
    return Plan(factors=tuple(study.factors), runs=table, coded=coded_df, design=None,
                blocks=[], notes=tuple(notes), alpha=alpha, kind=kind)


def _optimal(study, *, runs, criterion, model, keep, seed, blocks, center) -> Plan:
    if runs is None:
        raise PlanError("--design optimal needs the number of runs to plan: add --runs N")
    _check_count(runs, "--runs", 1)
    if center:
        raise PlanError("--center is not used by an optimal design (the builder places "
                        "every run): leave it out, or ask for more --runs")
    if blocks != 1:
        raise PlanError("--blocks is not used by an optimal design: leave it out")
    fixed = None
    if keep:
        if study.runs is None or study.data_path is None:
            raise PlanError("--keep keeps the study's measured runs, but the study names "
                            "no data file ([study] data = ...): add it, or leave out --keep")
        fixed = study.coded().to_numpy(float)
    spec = model if model is not None else (study.terms if study.terms is not None
                                             else study.model)
    matrix, terms = model_builder(study, spec)
    region = study_region(study)
    result = coordinate_exchange(matrix, region, runs, criterion=criterion, fixed=fixed,
                                 seed=seed)
    label = {"d": "D-optimal", "i": "I-optimal"}[result.criterion]
    notes = [f"{label} for {len(terms)} model terms; the best of "
             f"{len(result.start_values)} random starts"]
    if fixed is None:
        return _plan(study, result.coded, ["optimal"] * runs, np.ones(runs, dtype=int),
                     seed, f"{label} design, {runs} runs", notes)
    from .augment import _next_ids

    first, prefix, width = _next_ids(study.runs["run"].astype(str).tolist())
    block_no = 2
    if study.block_column is not None:
        existing = pd.to_numeric(study.runs[study.block_column], errors="coerce")
        if existing.notna().all() and len(existing):
            block_no = int(existing.max()) + 1
    plan = _plan(study, result.coded, ["optimal"] * runs, np.full(runs, block_no), seed,
                 f"{label} augmentation: {runs} runs added to {len(fixed)} kept", notes,
                 first_id=first, prefix=prefix)
    if width:
        plan.runs["run"] = [f"{prefix}{int(r[len(prefix):]):0{width}d}"
                            for r in plan.runs["run"]]
    return replace(plan, kept=fixed)


def prediction_figures(study, plan, model, *, kept: np.ndarray | None = None,
                       seed: int = 0) -> dict:
    """The plan's prediction-variance figures over the study's region (JSON-ready).

    ``kept`` (coded) are runs already made that count with the plan's runs.
    Returns {} when the plan cannot estimate the model (the evaluation says why).
    """
    matrix, _ = model_builder(study, model)
    region = study_region(study)
    coded = plan.coded.to_numpy(float)
    if kept is not None:
        coded = np.vstack([kept, coded])
    try:
        pv = prediction_variance(matrix, coded, region, seed=seed)
    except PlanError:
        return {}
    out = pv.summary()
    fraction, spv = pv.curve
    pick = np.linspace(0, len(spv) - 1, 21).astype(int)
    out["fds_curve"] = {"fraction": [round(float(f), 4) for f in fraction[pick]],
                        "spv": [round(float(v), 4) for v in spv[pick]]}
    return out
