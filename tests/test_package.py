"""The package root: every public name, and an import that stays light.

``import tradeoff`` resolves its public names on first use (PEP 562), so the
command line starts without pandas, scipy.stats or any front end (house style).
"""
from __future__ import annotations

import subprocess
import sys

import pytest

# Every name importable from ``tradeoff``; the list is the public interface
# and changes only on purpose (add a name here when you add it to the root).
PUBLIC_NAMES = sorted([
    "__version__",
    "TradeoffError", "StudyError", "DataError", "ModelError", "SearchError", "PlanError",
    "Factor", "Goal", "Response", "Study", "load_study", "study_from_dict",
    "to_coded", "to_natural",
    "ResponseModel", "StudyFit", "fit_response", "fit_study",
    "plan_design", "prediction_figures", "coordinate_exchange", "Region", "study_region",
    "prediction_variance", "PredictionVariance",
    "SHELF_LIFE_CAUTION", "fit_kinetics", "interpolate_at", "read_storage",
    "time_to_limit", "PANEL_CAUTION", "adjusted_means", "assessor_agreement",
    "read_panel", "run_means", "DERIVE_KINDS", "add_derived_responses",
    "derivation_table", "describe_derivation",
    "ACCELERATED_CAUTIONS", "ArrheniusFit", "fit_arrhenius",
    "GENERATOR_TABLE", "Plan", "TwoLevelDesign", "augment_study",
    "available_designs", "fold_over", "fractional_design", "plan_runs",
    "alias_structure", "DesignEvaluation", "effect_power", "evaluate_design",
    "evaluate_plan", "evaluate_study", "run_sheet", "write_run_sheet",
    "combine_desirability", "desirability", "limits", "shortfall",
    "LinearRule", "parse_rule", "rule_arrays", "study_rules",
    "ChanceEstimate", "chance_in_limits", "production_chance", "chance_all_production",
    "TransmittedSpread", "transmitted_spread", "polynomial_moments", "coded_spread",
    "OptimizationResult", "ResponseOutcome", "Solution", "goal_columns", "optimize",
    "overall_desirability",
    "provenance", "ConfirmationCheck", "check_confirmations", "confirmation_runs",
    "build_report_html", "build_workbook", "report_data", "write_report",
    # smooth models, the model comparison and the next batch (issue 17)
    "SmoothModel", "ModelComparison", "compare_models", "NextBatch", "SuggestedRun",
    "next_batch", "normal_ei",
    # blends (issue 14)
    "Component", "Mixture", "extreme_vertices", "face_centroids", "simplex_lattice",
    "simplex_centroid", "plan_mixture", "mixture_trace", "mixture_effects", "ternary_grid",
    "chance_text", "contour_lines", "limits_map", "LimitsMap", "slices",
    "model_interaction",
    # ternary maps (issue 18)
    "ternary_lines", "ternary_limits", "TernaryLimits", "ternary_region",
    # the trade-off frontier and the recommendation's steadiness (issue 28)
    "frontier", "Frontier", "sensitivity", "Sensitivity", "goal_conflicts",
])


def _run(code: str) -> str:
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True)
    assert out.returncode == 0, out.stderr
    return out.stdout.strip()


def test_every_public_name_is_listed_and_importable():
    import tradeoff

    assert sorted(tradeoff.__all__) == PUBLIC_NAMES
    for name in PUBLIC_NAMES:
        assert getattr(tradeoff, name) is not None, name
    # the star import sees the same names
    namespace: dict = {}
    exec("from tradeoff import *", namespace)
    assert set(PUBLIC_NAMES) <= set(namespace)


def test_each_name_is_defined_in_the_module_the_root_names():
    # a name must resolve on its own, not only after another name loaded its
    # module: its home module itself must define it
    import importlib

    import tradeoff

    for name, home in tradeoff._HOME.items():
        module = importlib.import_module(f"tradeoff.{home}")
        assert name in vars(module), f"tradeoff.{home} does not define {name}"


def test_import_leaves_front_end_and_heavy_libraries_out():
    bad = _run("import sys, tradeoff; print([m for m in ('streamlit', 'altair', "
               "'statsmodels', 'sklearn', 'pandas', 'scipy.stats') if m in sys.modules])")
    assert bad == "[]"


def test_command_line_help_loads_no_pandas():
    bad = _run("import sys; from tradeoff.cli import build_parser; build_parser(); "
               "print([m for m in ('pandas', 'scipy', 'numpy') if m in sys.modules])")
    assert bad == "[]"


def test_unknown_name_is_an_attribute_error():
    import tradeoff

    with pytest.raises(AttributeError, match="no attribute 'optimise'"):
        tradeoff.optimise
