"""Per-run diagnostics of a least-squares fit: leverage, studentized residuals,
Cook's distance.

Leverage h is how much a run pulls the fit towards itself (the diagonal of
the hat matrix). The studentized residual divides a residual by its own
standard error, s * sqrt(1 - h). The deleted (externally) studentized
residual uses s from a fit without that run, so one wild run cannot hide by
inflating s; runs beyond +-3 on it are flagged. Cook's distance measures
how much all fitted values move when the run is left out.
"""
from __future__ import annotations

import numpy as np
import pandas as pd

__all__ = ["diagnostic_arrays", "run_diagnostics", "OUTLIER_LIMIT"]

OUTLIER_LIMIT = 3.0  # |deleted studentized residual| beyond which a run is flagged (common practice)


def diagnostic_arrays(y: np.ndarray, fitted: np.ndarray, leverage: np.ndarray,
                      df_resid: int, n_terms: int) -> dict[str, np.ndarray]:
    """Per-run arrays: observed, fitted, residual, leverage, studentized,
    studentized_deleted, cooks_distance, flagged.

    Values that do not exist (no residual degrees of freedom, leverage 1)
    are NaN.
    """
    e = y - fitted
    sse = float(e @ e)
    h = np.clip(leverage, 0.0, 1.0)
    with np.errstate(divide="ignore", invalid="ignore"):
        one_minus = np.where(h < 1 - 1e-10, 1 - h, np.nan)
        if df_resid > 0 and sse > 0:
            s2 = sse / df_resid
            r = e / np.sqrt(s2 * one_minus)
            if df_resid > 1:
                # deleted variance from the identity (n-p-1) s2_(i) = SSE - e_i^2/(1-h_i)
                s2_del = (sse - e ** 2 / one_minus) / (df_resid - 1)
                t = e / np.sqrt(np.where(s2_del > 0, s2_del, np.nan) * one_minus)
            else:
                t = np.full_like(e, np.nan)
            cook = r ** 2 * h / (n_terms * one_minus)
        else:
            r = t = cook = np.full_like(e, np.nan)
    flagged = np.abs(np.nan_to_num(t, nan=0.0)) > OUTLIER_LIMIT
    return {"observed": y, "fitted": fitted, "residual": e, "leverage": h,
            "studentized": r, "studentized_deleted": t, "cooks_distance": cook,
            "flagged": flagged}


def run_diagnostics(run_ids, arrays: dict[str, np.ndarray]) -> pd.DataFrame:
    """The table of ``diagnostic_arrays`` indexed by run id."""
    return pd.DataFrame(arrays, index=pd.Index(
        np.asarray([str(i) for i in run_ids], dtype=object), dtype=object, name="run"))
