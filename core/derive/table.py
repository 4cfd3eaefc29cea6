"""The per-run derivation table every derived response produces, and its notes."""
from __future__ import annotations

import numpy as np
import pandas as pd

__all__ = ["DERIVED_COLUMNS", "name_list", "flag_notes", "run_table"]

# The columns of every per-run derivation table. ``lower`` and ``upper`` bound
# the value where the derivation gives an interval; ``pieces`` describes several
# pieces measured at one time; ``per_temperature`` counts
# the storage times behind a fit at each storage temperature.
DERIVED_COLUMNS = ["run", "value", "points", "se", "r_squared", "flag", "pieces", "lower",
                   "upper", "per_temperature"]


def name_list(items) -> str:
    """Items joined by commas, at most 40 of them."""
    items = [str(i) for i in items]
    return ", ".join(items[:40]) + (f" and {len(items) - 40} more" if len(items) > 40
                                    else "")


def _flags(flag) -> list[tuple[str, str]]:
    return [flag] if isinstance(flag, tuple) else list(flag)


def flag_notes(name: str, flags: dict) -> list[str]:
    """One note per kind of flag, listing the runs it applies to.

    ``flags`` maps a run to one ``(kind, short)`` pair or a list of them.
    """
    kinds: dict[str, list[str]] = {}
    for run, flag in flags.items():
        for kind, short in _flags(flag):
            kinds.setdefault(kind, []).append(f"{run} ({short})" if short else str(run))
    return [f"response '{name}': {kind}: run(s) {name_list(runs)}"
            for kind, runs in kinds.items()]


def run_table(runs, values, flags, reasons, points, se, r2, pieces=None, *, lower=None,
              upper=None, per_temperature=None) -> pd.DataFrame:
    """One row per run with the columns of ``DERIVED_COLUMNS`` (dicts keyed by run)."""
    pieces, lower, upper = pieces or {}, lower or {}, upper or {}
    per_temperature = per_temperature or {}
    rows = []
    for run in runs:
        left_out = run in reasons
        if left_out:
            flag = "left out: " + reasons[run]
        else:
            flag = "; ".join(f"{k} ({s})" if s else k
                             for k, s in _flags(flags.get(run, [])))
        rows.append({"run": run, "value": np.nan if left_out else values.get(run, np.nan),
                     "points": points.get(run, 0), "se": se.get(run, np.nan),
                     "r_squared": r2.get(run, np.nan), "flag": flag,
                     "pieces": pieces.get(run, ""),
                     "lower": np.nan if left_out else lower.get(run, np.nan),
                     "upper": np.nan if left_out else upper.get(run, np.nan),
                     "per_temperature": per_temperature.get(run, "")})
    out = pd.DataFrame(rows, columns=DERIVED_COLUMNS)
    for col in ("value", "se", "r_squared", "lower", "upper"):
        out[col] = out[col].astype(float)
    return out
