"""tradeoff: find the factor settings that best balance several responses.

The package root re-exports the public API; each name lives in one module.
"""
from __future__ import annotations

__version__ = "0.1.0"

from .errors import (DataError, ModelError, PlanError, SearchError, StudyError,
                     TradeoffError)
from .study import Factor, Goal, Response, Study, load_study, study_from_dict
from .coding import to_coded, to_natural
from .models import ResponseModel, StudyFit, fit_response, fit_study
from .storage import (SHELF_LIFE_CAUTION, fit_kinetics, interpolate_at, read_storage,
                      time_to_limit)
from .panel import (PANEL_CAUTION, adjusted_means, assessor_agreement, read_panel,
                    run_means)
from .derived import (DERIVE_KINDS, add_derived_responses, derivation_table,
                      describe_derivation)
from .designs import (GENERATOR_TABLE, Plan, TwoLevelDesign, augment_study,
                      available_designs, fold_over, fractional_design, plan_runs)
from .aliases import alias_structure
from .evaluation import (DesignEvaluation, effect_power, evaluate_design, evaluate_plan,
                         evaluate_study)
from .runsheet import run_sheet, write_run_sheet
from .desirability import combine_desirability, desirability, limits, shortfall
from .constraints import LinearRule, parse_rule, rule_arrays, study_rules
from .chance import ChanceEstimate, chance_in_limits
from .search import (OptimizationResult, ResponseOutcome, Solution, goal_columns,
                     optimize, overall_desirability)
from .provenance import provenance
from .confirm import ConfirmationCheck, check_confirmations, confirmation_runs
from .report import build_report_html, build_workbook, report_data, write_report

__all__ = [
    "__version__",
    "TradeoffError", "StudyError", "DataError", "ModelError", "SearchError",
    "PlanError",
    "Factor", "Goal", "Response", "Study", "load_study", "study_from_dict",
    "to_coded", "to_natural",
    "ResponseModel", "StudyFit", "fit_response", "fit_study",
    "SHELF_LIFE_CAUTION", "fit_kinetics", "interpolate_at", "read_storage",
    "time_to_limit", "PANEL_CAUTION", "adjusted_means", "assessor_agreement",
    "read_panel", "run_means", "DERIVE_KINDS", "add_derived_responses",
    "derivation_table", "describe_derivation",
    "GENERATOR_TABLE", "Plan", "TwoLevelDesign", "augment_study",
    "available_designs", "fold_over", "fractional_design", "plan_runs",
    "alias_structure", "DesignEvaluation", "effect_power", "evaluate_design",
    "evaluate_plan", "evaluate_study", "run_sheet", "write_run_sheet",
    "combine_desirability", "desirability", "limits", "shortfall",
    "LinearRule", "parse_rule", "rule_arrays", "study_rules",
    "ChanceEstimate", "chance_in_limits",
    "OptimizationResult", "ResponseOutcome", "Solution", "goal_columns", "optimize",
    "overall_desirability",
    "provenance", "ConfirmationCheck", "check_confirmations", "confirmation_runs",
    "build_report_html", "build_workbook", "report_data", "write_report",
]
