"""Charts of a blend's model in the workbench: the library's drawings stretched to their
column (``tradeoff.maps.blend_pictures``). Drawing only."""
from __future__ import annotations

import pandas as pd

from tradeoff_ui.charts import fit_width

__all__ = ["blend_effects_chart", "cox_trace_chart"]


def blend_effects_chart(table: pd.DataFrame, x_title: str):
    """Effects along Cox directions: a dot and its interval per change, zero line."""
    from tradeoff.maps.blend_pictures import blend_effects_picture

    return fit_width(blend_effects_picture(table, x_title))


def cox_trace_chart(trace: pd.DataFrame, y_title: str, x_title: str):
    """Cox traces: one line per component, a dot at the reference blend."""
    from tradeoff.maps.blend_pictures import cox_trace_picture

    return fit_width(cox_trace_picture(trace, y_title, x_title))
