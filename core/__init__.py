"""tradeoff: find the factor settings that best balance several responses.

The package root re-exports the public API; each name lives in one module of
one stage folder (see DEVELOPERS.md). Names resolve on first use (PEP 562), so
``import tradeoff`` and ``tradeoff --help`` load neither pandas nor scipy.
"""
from __future__ import annotations

import importlib

__version__ = "0.1.0"

# public name -> the module (under tradeoff) that defines it
_HOME = {
    "TradeoffError": "errors", "StudyError": "errors", "DataError": "errors",
    "ModelError": "errors", "SearchError": "errors", "PlanError": "errors",
    "Factor": "study.spec", "Goal": "study.spec", "Response": "study.spec",
    "Study": "study.spec",
    "load_study": "derive.load", "study_from_dict": "derive.load",
    "to_coded": "study.coding", "to_natural": "study.coding",
    "LinearRule": "study.constraints", "parse_rule": "study.constraints",
    "rule_arrays": "study.constraints", "study_rules": "study.constraints",
    "SHELF_LIFE_CAUTION": "cautions", "PANEL_CAUTION": "cautions",
    "fit_kinetics": "derive.storage", "interpolate_at": "derive.storage",
    "read_storage": "derive.storage", "time_to_limit": "derive.storage",
    "ACCELERATED_CAUTIONS": "cautions", "ArrheniusFit": "derive.kinetics",
    "fit_arrhenius": "derive.kinetics",
    "adjusted_means": "derive.panel", "assessor_agreement": "derive.panel",
    "read_panel": "derive.panel", "run_means": "derive.panel",
    "DERIVE_KINDS": "derive.derived", "add_derived_responses": "derive.derived",
    "derivation_table": "derive.derived", "describe_derivation": "derive.derived",
    "ResponseModel": "model.fit", "StudyFit": "model.study_fit",
    "SmoothModel": "model.smooth", "ModelComparison": "model.compare",
    "compare_models": "model.compare",
    "NextBatch": "search.next_batch", "SuggestedRun": "search.next_batch",
    "next_batch": "search.next_batch", "normal_ei": "search.next_batch",
    "fit_response": "model.study_fit", "fit_study": "model.study_fit",
    "GENERATOR_TABLE": "plan.designs", "Plan": "plan.designs",
    "TwoLevelDesign": "plan.designs", "augment_study": "plan.augment",
    "available_designs": "plan.designs", "fold_over": "plan.designs",
    "fractional_design": "plan.designs", "plan_runs": "plan.designs",
    "alias_structure": "plan.aliases",
    "DesignEvaluation": "plan.evaluation", "effect_power": "plan.evaluation",
    "evaluate_design": "plan.evaluation", "evaluate_plan": "plan.evaluation",
    "evaluate_study": "plan.evaluation",
    "plan_design": "plan.layouts", "prediction_figures": "plan.layouts",
    "coordinate_exchange": "plan.optimal", "Region": "plan.region",
    "study_region": "plan.region", "prediction_variance": "plan.variance",
    "PredictionVariance": "plan.variance",
    "run_sheet": "plan.runsheet", "write_run_sheet": "plan.runsheet",
    "combine_desirability": "search.desirability", "desirability": "search.desirability",
    "limits": "search.desirability", "shortfall": "search.desirability",
    "ChanceEstimate": "search.chance", "chance_in_limits": "search.chance",
    "production_chance": "search.production",
    "chance_all_production": "search.production",
    "TransmittedSpread": "search.spread", "transmitted_spread": "search.spread",
    "polynomial_moments": "search.spread", "coded_spread": "search.spread",
    "OptimizationResult": "search.result", "ResponseOutcome": "search.result",
    "Solution": "search.result", "goal_columns": "search.problem",
    "optimize": "search.search", "overall_desirability": "search.problem",
    "ConfirmationCheck": "confirm.check", "check_confirmations": "confirm.check",
    "confirmation_runs": "confirm.check",
    "provenance": "report.provenance",
    "build_report_html": "report.html", "build_workbook": "report.workbook",
    "report_data": "report.data",
    # blends (issue 14)
    "Component": "study.mixture", "Mixture": "study.mixture",
    "extreme_vertices": "study.mixture_region", "face_centroids": "study.mixture_region",
    "simplex_lattice": "plan.mixture_designs", "simplex_centroid": "plan.mixture_designs",
    "plan_mixture": "plan.mixture_plan",
    "mixture_trace": "maps.mixture_tables", "mixture_effects": "maps.mixture_tables",
    "ternary_grid": "maps.mixture_tables", "write_report": "report.write",
    "chance_text": "search.chance",
    "contour_lines": "maps.contours", "limits_map": "maps.contours",
    "LimitsMap": "maps.contours", "slices": "maps.slices",
    "model_interaction": "maps.slices",
    "ternary_lines": "maps.ternary", "ternary_limits": "maps.ternary",
    "TernaryLimits": "maps.ternary", "ternary_region": "maps.ternary",
    # the trade-off frontier and the recommendation's steadiness (issue 28)
    "frontier": "search.frontier", "Frontier": "search.frontier_result",
    "sensitivity": "search.sensitivity", "Sensitivity": "search.sensitivity",
    "goal_conflicts": "search.conflict",
}

__all__ = ["__version__", *_HOME]


def __getattr__(name: str):
    try:
        home = _HOME[name]
    except KeyError:
        raise AttributeError(f"module 'tradeoff' has no attribute {name!r}") from None
    value = getattr(importlib.import_module(f"{__name__}.{home}"), name)
    globals()[name] = value  # later look-ups skip this function
    return value


def __dir__():
    return sorted(set(globals()) | set(__all__))
