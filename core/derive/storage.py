"""Storage studies: reduce a property measured at several storage times per run.

The storage table is in long form, one measurement a row: ``run``, a time
column (its name and unit are stated in the study file), ``property`` and
``value``. The functions here take plain arrays (run label, time, value) and
return one row per run, so they can be checked against closed forms.

Kinetics, per run, fitted by least squares on time ``t``:

- zero order (straight line): ``value = start + rate * t``; ``rate`` is in the
  property's unit per time unit;
- first order (log-linear): ``ln(value) = ln(start) + rate * t``, that is
  ``value = start * exp(rate * t)``; ``rate`` is per time unit, positive when the
  property rises. A falling property with ``rate = -k`` has half-life
  ``ln 2 / k`` (common practice; e.g. Atkins' Physical Chemistry, first-order
  integrated rate law).
"""
from __future__ import annotations

import math
from collections.abc import Iterable

import numpy as np
import pandas as pd

from ..cautions import SHELF_LIFE_CAUTION
from ..errors import DataError, where
from ..study.intake import RawTable, cell_text, parse_number

__all__ = [
    "SHELF_LIFE_CAUTION", "ORDERS", "DIRECTIONS", "read_storage", "interpolate_at",
    "fit_kinetics", "fitted_value", "time_to_limit", "piece_spread",
]


ORDERS = ("zero", "first")
DIRECTIONS = ("up", "down")


def read_storage(table: RawTable, *, time: str = "time", temperature: str | None = None,
                 run_ids: Iterable[str] | None = None) -> pd.DataFrame:
    """Check a long-form storage table and return it tidy.

    Parameters
    ----------
    table : RawTable
        As read by ``read_table``; needs columns ``run``, ``time`` (the name
        given), ``property`` and ``value``.
    time : str
        Name of the time column.
    temperature : str, optional
        Name of the storage-temperature column (degC); it may be blank at
        time 0 only (time 0 is before storage).
    run_ids : iterable of str, optional
        The study's run ids; a storage row for any other run is an error.

    Returns
    -------
    DataFrame
        Columns ``row`` (spreadsheet row), ``run``, ``time``, ``property``,
        ``value`` (NaN where the cell is blank), ``temperature`` (degC; NaN
        with no temperature column or a blank at time 0), in file order.
    """
    fname = table.source.name
    columns = {name: i for i, name in enumerate(table.header) if name}
    needed = ("run", time, "property", "value") + ((temperature,) if temperature else ())
    for name in needed:
        if name not in columns:
            hint = (" (the time column is named by time = \"...\" in [storage])"
                    if name == time else " (named by temperature = \"...\" in [storage])"
                    if name == temperature else "")
            raise DataError(f"{fname}: no column '{name}' in the storage table{hint}: "
                            f"expected columns {list(needed)}, found "
                            f"{[h for h in table.header if h]}")
    known = set(run_ids) if run_ids is not None else None
    rows, runs, times, props, values, temps = [], [], [], [], [], []
    for row, cells in table.rows:
        def cell(name):
            i = columns[name]
            return cells[i] if i < len(cells) else None

        run = cell("run")
        if run is None:
            raise DataError(f"{where(fname, row, 'run')}blank run id: every storage "
                            "row needs the id of its run")
        run = cell_text(run)
        if known is not None and run not in known:
            raise DataError(f"{where(fname, row, 'run')}run '{run}' is not in the runs "
                            "table: check the id, or add the run to the runs table")
        raw_time = cell(time)
        if raw_time is None:
            raise DataError(f"{where(fname, row, time)}blank storage time: every "
                            "measurement needs its time")
        t = parse_number(raw_time, decimal_comma=table.decimal_comma,
                         location=where(fname, row, time))
        if t < 0:
            raise DataError(f"{where(fname, row, time)}negative storage time "
                            f"({t:g}): times count from the start of storage, 0 or more")
        prop = cell("property")
        if prop is None:
            raise DataError(f"{where(fname, row, 'property')}blank property: name "
                            "what was measured, for example 'hardness'")
        prop = str(prop).strip()
        value = parse_number(cell("value"), decimal_comma=table.decimal_comma,
                             location=where(fname, row, "value"))
        # several rows for one run, time and property are pieces (packs pulled
        # together): kept as they are; value_at and change use their mean
        temp = _temperature(cell(temperature), t, table, where(fname, row, temperature)) \
            if temperature else math.nan
        rows.append(row)
        runs.append(run)
        times.append(t)
        props.append(prop)
        values.append(value)
        temps.append(temp)
    return pd.DataFrame({"row": np.array(rows, dtype=int), "run": runs,
                         "time": np.array(times, float), "property": props,
                         "value": np.array(values, float),
                         "temperature": np.array(temps, float)})


def _temperature(raw, t: float, table: RawTable, location: str) -> float:
    """A storage temperature in degC: blank only at time 0 (before storage)."""
    if raw is None:
        if t > 0:
            raise DataError(f"{location}blank storage temperature: every measurement "
                            "after time 0 needs the temperature it was stored at (degC)")
        return math.nan
    temp = parse_number(raw, decimal_comma=table.decimal_comma, location=location)
    if not -80 <= temp <= 150:
        raise DataError(f"{location}storage temperature {temp:g} is not in degC (expected "
                        "-80 to 150; a value in kelvin needs 273.15 taken off)")
    return temp


def _groups(run) -> tuple[np.ndarray, np.ndarray]:
    codes, labels = pd.factorize(pd.Series(run, dtype=object), sort=False)
    return codes, np.asarray(labels, dtype=object)


def interpolate_at(run, time, value, at: float) -> pd.DataFrame:
    """Each run's value at time ``at``, linear between measured times.

    Blank (NaN) values are ignored; several values of one run at one time
    (pieces) enter as their mean, and ``n_points`` counts measured times. Never extrapolates: a run whose
    measurements do not reach ``at`` gets NaN and status ``before_first`` or
    ``after_last``.

    Returns
    -------
    DataFrame
        One row per run (first-seen order): ``run``, ``value``, ``status``
        (``measured``, ``interpolated``, ``before_first``, ``after_last``,
        ``no_data``), ``time_before``, ``time_after`` (the measured times used),
        ``first_time``, ``last_time``, ``n_points``.
    """
    time = np.asarray(time, float)
    value = np.asarray(value, float)
    codes, labels = _groups(run)
    out = []
    for g, label in enumerate(labels):
        keep = (codes == g) & ~np.isnan(value)
        # pieces at one time (several packs) enter as their mean
        t, inverse = np.unique(time[keep], return_inverse=True)
        y = (np.bincount(inverse, value[keep], len(t))
             / np.bincount(inverse, minlength=len(t)))
        rec = {"run": label, "value": math.nan, "status": "no_data",
               "time_before": math.nan, "time_after": math.nan,
               "first_time": t[0] if len(t) else math.nan,
               "last_time": t[-1] if len(t) else math.nan, "n_points": int(len(t))}
        if len(t):
            exact = np.flatnonzero(t == at)
            if len(exact):
                rec.update(value=float(y[exact[0]]), status="measured",
                           time_before=at, time_after=at)
            elif at < t[0]:
                rec["status"] = "before_first"
            elif at > t[-1]:
                rec["status"] = "after_last"
            else:
                hi = int(np.searchsorted(t, at))
                rec.update(value=float(np.interp(at, t, y)), status="interpolated",
                           time_before=float(t[hi - 1]), time_after=float(t[hi]))
        out.append(rec)
    return pd.DataFrame(out, columns=["run", "value", "status", "time_before",
                                      "time_after", "first_time", "last_time",
                                      "n_points"])


def fit_kinetics(run, time, value, *, order: str = "zero") -> pd.DataFrame:
    """Per-run least-squares kinetic fit (zero or first order).

    Blank (NaN) values are ignored; several values at one time (pieces) each
    enter the fit, so ``n_points`` counts pieces and ``rate_se`` uses the pieces'
    scatter around the run's line. First order fits ``ln(value)`` and needs
    values above 0 (raises ``DataError`` otherwise). Runs with fewer than two
    distinct times get NaN estimates.

    Returns
    -------
    DataFrame
        One row per run (first-seen order): ``run``, ``n_points``,
        ``first_time``, ``last_time``, ``start`` (fitted value at time 0),
        ``rate``, ``rate_se`` (standard error of the rate, NaN with 2 points),
        ``r_squared`` (of the fitted line, on the log scale for first order;
        NaN when the values do not vary), ``residual_sd`` (same scale).
    """
    if order not in ORDERS:
        raise DataError(f"order '{order}' is not one I know: use 'zero' or 'first'")
    time = np.asarray(time, float)
    value = np.asarray(value, float)
    codes, labels = _groups(run)
    keep = ~np.isnan(value)
    if order == "first":
        if (value[keep] <= 0).any():
            raise DataError("a first-order (log-linear) fit needs values above 0: use "
                            "order = 'zero' or check the data")
        y_all = np.log(np.where(keep, value, 1.0))
    else:
        y_all = value
    c, t, y = codes[keep], time[keep], y_all[keep]
    m = len(labels)
    # Closed-form simple regression per group from grouped sums (no loop).
    n = np.bincount(c, minlength=m).astype(float)
    with np.errstate(invalid="ignore", divide="ignore"):
        tbar = np.bincount(c, t, m) / n
        ybar = np.bincount(c, y, m) / n
        dt, dy = t - tbar[c], y - ybar[c]
        sxx = np.bincount(c, dt * dt, m)
        sxy = np.bincount(c, dt * dy, m)
        syy = np.bincount(c, dy * dy, m)
        ok = sxx > 0
        slope = np.where(ok, sxy / np.where(ok, sxx, 1.0), np.nan)
        intercept = ybar - slope * tbar
        sse = np.clip(syy - slope * sxy, 0.0, None)
        df = n - 2
        resid_sd = np.where(ok & (df > 0), np.sqrt(sse / np.where(df > 0, df, 1.0)), np.nan)
        rate_se = resid_sd / np.sqrt(np.where(ok, sxx, np.nan))
        r2 = np.where(ok & (syy > 0), 1.0 - sse / np.where(syy > 0, syy, 1.0), np.nan)
    first = np.full(m, np.nan)
    last = np.full(m, np.nan)
    if len(c):
        np.fmin.at(first, c, t)
        np.fmax.at(last, c, t)
    start = np.exp(intercept) if order == "first" else intercept
    return pd.DataFrame({"run": labels, "n_points": n.astype(int), "first_time": first,
                         "last_time": last, "start": start, "rate": slope,
                         "rate_se": rate_se, "r_squared": r2, "residual_sd": resid_sd})


def fitted_value(start, rate, t, *, order: str = "zero") -> np.ndarray:
    """The fitted kinetic curve at time ``t`` (arrays broadcast)."""
    start, rate, t = (np.asarray(a, float) for a in (start, rate, t))
    if order == "first":
        return start * np.exp(rate * t)
    if order == "zero":
        return start + rate * t
    raise DataError(f"order '{order}' is not one I know: use 'zero' or 'first'")


def time_to_limit(start, rate, limit: float, *, order: str = "zero",
                  direction: str = "up") -> np.ndarray:
    """Time at which the fitted curve reaches ``limit``.

    ``direction = 'up'``: the property rises to the limit (a ceiling);
    ``'down'``: it falls to it (a floor). Where the fitted value at time 0 is
    already at or past the limit the time is 0; where the fit moves away from
    the limit (or is flat) it never reaches it and the time is NaN.
    Zero order: ``(limit - start) / rate``; first order:
    ``ln(limit / start) / rate`` (so a falling property reaches half its
    start at ``ln 2 / k``, the first-order half-life).
    """
    if direction not in DIRECTIONS:
        raise DataError(f"direction '{direction}' is not one I know: use 'up' or 'down'")
    start, rate = np.asarray(start, float), np.asarray(rate, float)
    if order == "first":
        if limit <= 0:
            raise DataError("a first-order time to a limit needs a limit above 0")
        with np.errstate(divide="ignore", invalid="ignore"):
            gap = np.log(limit) - np.log(start)
    elif order == "zero":
        gap = limit - start
    else:
        raise DataError(f"order '{order}' is not one I know: use 'zero' or 'first'")
    sign = 1.0 if direction == "up" else -1.0
    # gap * sign <= 0: already at or past the limit; rate * sign <= 0: moving away.
    with np.errstate(divide="ignore", invalid="ignore"):
        t = gap / rate
    out = np.where(sign * gap <= 0, 0.0, np.where(sign * rate > 0, t, np.nan))
    return np.where(np.isnan(start) | np.isnan(rate), np.nan, out)


def piece_spread(run, time, value, temperature=None) -> pd.DataFrame:
    """Pieces at each run and time: their number, mean and SD (blanks left out).

    With ``temperature`` (degC per row), pieces share a run, a time and a
    storage temperature: the same week at two temperatures is two
    measurements, not two pieces (time 0, before storage, counts once
    whatever its temperature cell says).

    Returns
    -------
    DataFrame
        One row per run, temperature and time (first-seen run order, times
        ascending): ``run``, ``time``, ``pieces``, ``mean``, ``sd`` (NaN with
        one piece).
    """
    time = np.asarray(time, float)
    temp = (np.zeros(len(time)) if temperature is None else
            np.where(time == 0, np.nan, np.asarray(temperature, float)))
    frame = pd.DataFrame({"run": pd.Series(run, dtype=object).to_numpy(),
                          "time": time, "temperature": temp,
                          "value": np.asarray(value, float)}).dropna(subset=["value"])
    order = {r: i for i, r in enumerate(pd.unique(frame["run"]))}
    out = (frame.groupby(["run", "temperature", "time"], sort=False, dropna=False)["value"]
           .agg(pieces="count", mean="mean", sd="std").reset_index())
    out["pieces"] = out["pieces"].astype(int)
    out = out.assign(_o=out["run"].map(order)).sort_values(["_o", "time"], kind="stable")
    return out.drop(columns=["_o", "temperature"]).reset_index(drop=True)
