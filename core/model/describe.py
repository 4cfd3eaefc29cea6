"""A fitted response model as plain, JSON-ready data (``tradeoff fit --json``)."""
from __future__ import annotations

import math

import numpy as np

from .levels import level_means


__all__ = ["response_report", "clean_json", "finite_or_none"]


def response_report(model) -> dict:
    """The JSON-ready summary printed by ``tradeoff fit --json`` for this response."""
    model._check_fitted()
    labels = model.terms_
    saturated = model.residual_df_ == 0

    def per_term(values, skip_intercept=False):
        if values is None:
            return None
        return {lab: finite_or_none(v) for lab, v in zip(labels, values)
                if not (skip_intercept and lab == "intercept")}

    out = {
        "response": model.name,
        "transform": model.transform,
        "model": model.terms if isinstance(model.terms, str) else list(model.terms),
        "n": model.n_,
        "terms": list(labels),
        "coefficients": per_term(model.coef_),
        "effects": per_term(model.effects_, skip_intercept=True),
        "std_errors": None if saturated else per_term(model.std_errors_),
        "t_values": None if saturated else per_term(model.t_values_),
        "p_values": None if saturated else per_term(model.p_values_),
        "sums_of_squares": per_term(model.sum_squares_, skip_intercept=True),
        "residual_df": model.residual_df_,
        "r2": finite_or_none(model.r2_), "adj_r2": finite_or_none(model.adj_r2_),
        "pred_r2": finite_or_none(model.pred_r2_), "residual_sd": finite_or_none(model.residual_sd_),
        "lenth": None if model.lenth_ is None else {
            "pse": finite_or_none(model.lenth_.pse), "me": finite_or_none(model.lenth_.me),
            "sme": finite_or_none(model.lenth_.sme), "df": finite_or_none(model.lenth_.df),
            "effects": model.lenth_.m},
        "half_normal": None if model.half_normal_ is None else [
            {"term": r.term, "effect": finite_or_none(r.effect), "quantile": finite_or_none(r.quantile)}
            for r in model.half_normal_.itertuples()],
        # each dropped column as the signed combination of kept columns it equals
        "aliases": {k: [{"term": t, "coef": c} for t, c in v.items()]
                    for k, v in model.aliases_.items()},
        "blocks": clean_json(model.blocks_),
        "anova": clean_json(model.anova_),
        "natural_coefficients": clean_json(model.natural_coefficients_),
        # last levels of factors with three or more levels (minus the sum of the others)
        "derived_coefficients": clean_json(model.derived_coefficients_),
        "level_means": clean_json(level_means(model)),
        "box_cox": clean_json(model.box_cox_),
        "reduction": None if model.reduction_ is None else {
            "from": list(model.requested_terms_), "dropped": dict(model.reduction_)},
        "flagged_runs": list(model.flagged_runs_),
        "confidence": model.confidence,
        "warnings": list(model.warnings_),
        # measurement noise against batch noise (model/pieces.py), set by fit_response
        "pieces": clean_json(getattr(model, "pieces_", None)),
    }
    return out


def _blank(value) -> bool:
    if value is None:
        return True
    if isinstance(value, (float, np.floating)):
        return not math.isfinite(value)
    return isinstance(value, str) and not value.strip()


def finite_or_none(v):
    if v is None:
        return None
    v = float(v)
    return v if math.isfinite(v) else None


def clean_json(obj):
    """NaN and infinities -> None, numpy scalars -> Python, recursively (valid JSON)."""
    if isinstance(obj, dict):
        return {k: clean_json(v) for k, v in obj.items()}
    if isinstance(obj, (list, tuple)):
        return [clean_json(v) for v in obj]
    if isinstance(obj, (bool, np.bool_)):
        return bool(obj)
    if isinstance(obj, (int, np.integer)):
        return int(obj)
    if isinstance(obj, (float, np.floating)):
        return finite_or_none(obj)
    return obj
