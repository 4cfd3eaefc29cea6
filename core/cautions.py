"""The cautions every food recommendation carries, written once.

Results, reports, the workbook and the front end all show these same words.
"""
from __future__ import annotations

__all__ = ["FOOD_CAUTIONS", "FOOD_CAUTION", "SHELF_LIFE_CAUTION", "ACCELERATED_CAUTIONS",
           "PANEL_CAUTION", "BLEND_CAUTION"]

FOOD_CAUTIONS = (
    "A recommendation is a suggestion for what to make and test next, not a release "
    "decision: confirm it with real runs.",
    "Predictions hold only inside the tested region and are only as good as the runs "
    "behind them.",
    "Predicted storage behaviour (hardness after storage, water activity, a time to reach "
    "a limit) does not replace a shelf-life study, microbiological testing or challenge "
    "testing.",
    "Predicted panel liking does not replace sensory validation with a proper panel.",
    "Local food regulations, labelling rules and licensed practice (food safety plans, "
    "qualified persons) govern every product decision.",
)

# The same cautions as one paragraph, for a single line of text or a banner.
FOOD_CAUTION = " ".join(FOOD_CAUTIONS)

SHELF_LIFE_CAUTION = (
    "A time to reach a limit estimated from a storage study is not a safety "
    "determination and not a shelf life: microbiological shelf life, sensory "
    "validation and local food regulations govern, and any prediction must be "
    "confirmed by real storage tests.")

BLEND_CAUTION = (
    "A predicted blend says nothing about allergens, gluten or any other claim: such "
    "claims rest on verified ingredients, testing and local food regulations, not on a "
    "model; ingredient lots vary, so confirm a new blend with real batches.")

# Storage at several temperatures (accelerated shelf-life testing), every result.
ACCELERATED_CAUTIONS = (
    "A prediction across storage temperatures assumes the same mechanism at every "
    "temperature: melting of fats, a glass transition or moisture migration at the warmer "
    "temperatures can break it.",
    "It says nothing about microbial safety.",
    "It does not replace a real-time storage study at the temperature of use.",
    "Local regulations and qualified people decide date marking.",
)

PANEL_CAUTION = (
    "Panel scores from a development panel describe these samples only: they do not "
    "replace consumer testing or sensory validation of the final product.")
