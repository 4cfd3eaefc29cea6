"""Storage responses from the one-step Arrhenius fit: shelf life, activation energy,
Q10, the rate at a temperature and the time to a limit.

The fit itself lives in ``kinetics``; this module checks what the study asks
for against the storage table, leaves out runs that cannot answer (naming why),
computes each run's estimate with its interval, and writes the flags and notes.

Shelf life (``estimate = "bound"``) follows the practice of ICH Q1E, Evaluation
of stability data (2003), section 2.4: the time at which the one-sided
confidence bound of the mean curve (at the study's ``confidence``) reaches the
acceptance limit. ``estimate = "mean"`` is where the fitted mean reaches it.
"""
from __future__ import annotations

import math

import numpy as np
import pandas as pd

from ..cautions import ACCELERATED_CAUTIONS, SHELF_LIFE_CAUTION
from ..errors import DataError, StudyError
from .reach import STATED_MULTIPLE, stated_limit
from .kinetics import (KELVIN, fit_arrhenius, kelvin, q10, rate_at, time_to_bound,
                       time_to_limit_se)
from .table import flag_notes, name_list, run_table

__all__ = ["TEMPERATURE_KINDS", "ESTIMATES", "EA_TYPICAL", "FAR_BEYOND",
           "kinetic_options", "tested_temperatures", "rows_at_temperature",
           "derive_kinetic", "describe_kinetic", "ARRHENIUS_COLUMNS", "arrhenius_points"]

TEMPERATURE_KINDS = ("time_to_limit", "shelf_life", "activation_energy", "q10", "rate_at")
ESTIMATES = ("bound", "mean")
# Rule of thumb for chemical and quality changes in foods (common practice).
EA_TYPICAL = (10.0, 200.0)
# A shelf life beyond this multiple of the last storage time is flagged more strongly
# (and gets no chance: see reach.py).
FAR_BEYOND = STATED_MULTIPLE
_POOR_FIT_R2 = 0.8


def kinetic_options(ex: dict, kind: str, fname: str, what: str) -> dict:
    """Check ``at_temperature`` and ``estimate``; return them with defaults."""
    out = {}
    if "at_temperature" in ex:
        v = ex["at_temperature"]
        if isinstance(v, bool) or not isinstance(v, (int, float)) or not math.isfinite(v):
            raise StudyError(f"{fname}: {what}: at_temperature must be a number in degC, "
                             f"found {v!r}")
        if not -80 <= v <= 150:
            raise StudyError(f"{fname}: {what}: at_temperature = {v:g} is not a storage "
                             "temperature in degC (expected -80 to 150; a value in kelvin "
                             "needs 273.15 taken off)")
        out["at_temperature"] = float(v)
    if kind == "shelf_life":
        est = ex.get("estimate", "bound")
        if est not in ESTIMATES:
            raise StudyError(f"{fname}: {what}: estimate = {est!r} is not one I know: use "
                             "'bound' (the conservative shelf life, where the one-sided "
                             "confidence bound reaches the limit) or 'mean' (where the "
                             "fitted mean reaches it)")
        out["estimate"] = est
    return out


def tested_temperatures(sub: pd.DataFrame) -> np.ndarray:
    """The storage temperatures (degC) of the stored (time > 0) measurements, sorted."""
    stored = sub[(sub["time"] > 0) & sub["value"].notna()]
    return np.unique(stored["temperature"].dropna().to_numpy(float))


def _temps(values) -> str:
    return ", ".join(f"{v:g}" for v in values) + " degC"


def _study_file(study) -> str:
    return study.source.name if study.source is not None else "study"


def _no_column(sname, r) -> StudyError:
    return StudyError(f"{sname}: [[responses]] '{r.name}': at_temperature needs each "
                     "measurement's storage temperature: add temperature = \"<column>\" "
                     "to [storage]")


def rows_at_temperature(study, sub: pd.DataFrame, opts: dict, fname: str, r,
                        has_column: bool) -> pd.DataFrame:
    """For the kinds that read measured values (value_at, change, rate): the rows
    stored at ``at_temperature`` and the time-0 rows (time 0 is before storage)."""
    temps = tested_temperatures(sub)
    at = opts.get("at_temperature")
    sname = _study_file(study)
    if at is None:
        if len(temps) > 1:
            raise StudyError(f"{sname}: [[responses]] '{r.name}': '{opts['property']}' "
                             f"was stored at {_temps(temps)} ({fname}): add "
                             "at_temperature = ... to say which storage this response "
                             "reads")
        return sub
    if not has_column:
        raise _no_column(sname, r)
    if at not in temps:
        raise DataError(f"{fname}: response '{r.name}': derive = '{opts['kind']}' reads "
                        f"measured values, and nothing was stored at {at:g} degC (tested: "
                        f"{_temps(temps)}): use one of those, or derive = 'shelf_life' or "
                        "'rate_at', which predict between temperatures")
    return sub[(sub["time"] == 0) | (sub["temperature"] == at)]


def _asked_temperature(study, sub, opts, fname, r, has_column
                       ) -> tuple[float, np.ndarray]:
    """The temperature the response is about, checked against the table."""
    kind, temps = opts["kind"], tested_temperatures(sub)
    sname = _study_file(study)
    at = opts.get("at_temperature")
    if kind in ("activation_energy", "q10") and len(temps) < 2:
        found = (f"every measurement was stored at {_temps(temps)}" if len(temps) else
                 "the storage table has no temperatures ([storage] temperature = "
                 "\"<column>\" names them)")
        raise DataError(f"{fname}: response '{r.name}': derive = '{kind}' needs storage at "
                        f"two or more temperatures, but {found}")
    if at is None:
        if len(temps) > 1 and kind != "activation_energy":
            raise StudyError(f"{sname}: [[responses]] '{r.name}': '{opts['property']}' "
                             f"was stored at {_temps(temps)} ({fname}): add "
                             f"at_temperature = ... (degC) to say where derive = '{kind}' "
                             "applies")
        # activation energy: the middle of the tested range (it does not matter)
        return (float(np.mean(temps[[0, -1]])) if len(temps) else math.nan), temps
    if not has_column:
        raise _no_column(sname, r)
    if len(temps) == 1 and at != temps[0]:
        raise DataError(f"{fname}: response '{r.name}': every measurement was stored at "
                        f"{_temps(temps)}, so nothing can be said at {at:g} degC: store "
                        "at two or more temperatures, or ask at the one tested")
    return at, temps


def _counts(sub: pd.DataFrame, runs) -> dict:
    """Per run: {temperature: distinct storage times there, time 0 included}."""
    have = sub[sub["value"].notna()]
    zero = set(have.loc[have["time"] == 0, "run"])
    stored = have[have["time"] > 0]
    out = {}
    for run, g in stored.groupby("run", sort=False):
        per = g.groupby(g["temperature"].fillna(np.inf), sort=True)["time"].nunique()
        out[run] = {T: int(n) + (run in zero) for T, n in per.items()}
    for run in zero:
        out.setdefault(run, {})
    return out


def derive_kinetic(study, r, opts: dict, sec: dict, fname: str,
                   sub: pd.DataFrame) -> tuple[pd.DataFrame, list[str]]:
    """Derive one temperature-aware storage response for every run.

    ``sub`` holds the property's rows of the tidy storage table (with its
    ``temperature`` column, NaN where no temperature was given). Returns the
    derivation table (``table.DERIVED_COLUMNS``) and the notes.
    """
    from scipy import stats

    kind, order, tname = opts["kind"], opts["order"], sec["time"]
    has_column = sec.get("temperature") is not None
    at, temps = _asked_temperature(study, sub, opts, fname, r, has_column)
    runs = list(study.runs["run"])
    counts = _counts(sub, runs)
    fit = fit_arrhenius(sub["run"], sub["time"], sub["temperature"], sub["value"],
                        order=order)
    index = {run: i for i, run in enumerate(fit.runs)}
    at_eval = at if math.isfinite(at) else 25.0       # one temperature: any value
    conf = study.confidence
    with np.errstate(invalid="ignore"):
        df = np.where(fit.df > 0, fit.df, np.nan)
        c1 = stats.t.ppf(conf, df)                     # one-sided bound
        c2 = stats.t.ppf((1 + conf) / 2, df)           # two-sided interval
    estimate = {}
    if kind in ("shelf_life", "time_to_limit"):
        lim, way = opts["limit"], opts["direction"]
        mean = time_to_bound(fit, at_eval, lim, direction=way, c=0.0)
        low = time_to_bound(fit, at_eval, lim, direction=way, c=c1)
        high = time_to_bound(fit, at_eval, lim, direction=way, c=-c1)
        se = time_to_limit_se(fit, at_eval, lim)
        bound = kind == "shelf_life" and opts["estimate"] == "bound"
        estimate = {"value": low if bound else mean, "se": se, "lower": low, "upper": high}
    elif kind == "activation_energy":
        ea, se = fit.ea, fit.ea_se
        estimate = {"value": ea, "se": se, "lower": ea - c2 * se, "upper": ea + c2 * se}
    elif kind == "q10":
        q, se = q10(fit, at)
        T = kelvin(at)
        b, sb = fit.params[:, 2], np.sqrt(fit.cov[:, 2, 2])
        factor = 10.0 / (T * (T + 10.0))
        # the exact image of the Ea interval (Q10 rises with Ea)
        estimate = {"value": q, "se": se, "lower": np.exp(factor * (b - c2 * sb)),
                    "upper": np.exp(factor * (b + c2 * sb))}
    else:  # rate_at
        k, se = rate_at(fit, at_eval)
        estimate = {"value": k, "se": se, "lower": k - c2 * se, "upper": k + c2 * se}

    values, flags, reasons, points, ses, r2 = {}, {}, {}, {}, {}, {}
    lower, upper, per_temp = {}, {}, {}
    many = len(temps) > 1
    for run in runs:
        if run not in counts:
            reasons[run] = "no rows in the storage table"
            continue
        mine = counts[run]
        i = index[run]
        points[run] = int(fit.n_points[i])
        per_temp[run] = "; ".join(
            f"{T:g} degC: {n}" if math.isfinite(T) else f"{n} times"
            for T, n in mine.items())
        why = _left_out(run, mine, opts, at, many, fit, i, tname, estimate, sub)
        if why:
            reasons[run] = why
            continue
        values[run] = float(estimate["value"][i])
        ses[run] = float(estimate["se"][i])
        lower[run] = float(estimate["lower"][i])
        upper[run] = float(estimate["upper"][i])
        r2[run] = float(fit.r_squared[i])
        flags[run] = _flags(run, mine, opts, at, many, fit, i, tname, values[run], sub,
                            sec.get("time_unit", ""))
    flags = {run: fl for run, fl in flags.items() if fl and run not in reasons}
    notes = flag_notes(r.name, flags) + _fit_notes(r.name, r2, order, many)
    if kind in ("shelf_life", "time_to_limit") and values:
        how = (f"the one-sided {conf:.0%} confidence bound of the mean curve"
               if kind == "shelf_life" and opts["estimate"] == "bound"
               else "the fitted mean curve")
        notes.append(f"response '{r.name}': {how} reaches {opts['limit']:g}; lower and "
                     f"upper in the derivation table are where the one-sided {conf:.0%} "
                     "bounds on either side reach it (together a "
                     f"{2 * conf - 1:.0%} interval; upper blank when the optimistic bound "
                     "never reaches the limit)")
    if many:  # once per study: the caller drops repeated notes
        notes += [f"storage at several temperatures: {c}" for c in ACCELERATED_CAUTIONS]
    if kind in ("shelf_life", "time_to_limit"):
        notes.append(f"response '{r.name}': {SHELF_LIFE_CAUTION}")
    table = run_table(runs, values, flags, reasons, points, ses, r2, lower=lower,
                      upper=upper, per_temperature=per_temp)
    return table, notes


def _left_out(run, mine, opts, at, many, fit, i, tname, estimate, sub) -> str:
    """Why a run cannot give this response ('' when it can)."""
    need = opts["min_points"]
    short = {T: n for T, n in mine.items() if n < need}
    if not mine:
        return "no storage time after 0"
    if short:
        T, n = next(iter(short.items()))
        times = sorted(set(sub.loc[(sub["run"] == run) & sub["value"].notna() & (
            (sub["time"] == 0) | (sub["temperature"] == T) if math.isfinite(T)
            else True), "time"]))
        where = f"at {T:g} degC " if math.isfinite(T) else ""
        return (f"{where}only {n} storage time(s) ({', '.join(f'{t:g}' for t in times)}), "
                f"{need} needed {'per temperature ' if where else ''}for a fitted line "
                "(min_points)")
    run_temps = [T for T in mine if math.isfinite(T)]
    kind = opts["kind"]
    if kind in ("activation_energy", "q10") and len(run_temps) < 2:
        return (f"stored at one temperature only ({_temps(run_temps)}): an activation "
                "energy needs two or more")
    if many and len(run_temps) == 1 and at != run_temps[0]:
        return (f"stored at {_temps(run_temps)} only, so nothing can be said at "
                f"{at:g} degC")
    if not fit.ok[i]:
        return ("its rate cannot be told apart at the tested temperatures (the property "
                "hardly changes, or too few points for the one-step fit)")
    v = estimate["value"][i]
    if np.isnan(v):
        bound = kind in ("activation_energy", "q10") or (
            kind == "shelf_life" and opts["estimate"] == "bound")
        if bound and fit.df[i] <= 0:
            return ("as many fitted constants as points, so no confidence bound: add "
                    "storage times")
        if kind in ("shelf_life", "time_to_limit"):
            k = rate_at(fit, at if math.isfinite(at) else 25.0)[0][i]
            return (f"its fitted {opts['property']} moves away from {opts['limit']:g} "
                    f"(rate {k:.3g} per {tname}), so it never reaches the limit")
        return "the estimate could not be computed"
    return ""


def _flags(run, mine, opts, at, many, fit, i, tname, value, sub, unit="") -> list:
    out = []
    kind = opts["kind"]
    run_temps = [T for T in mine if math.isfinite(T)]
    if math.isfinite(at) and run_temps and kind != "activation_energy" and many and \
            not min(run_temps) <= at <= max(run_temps):
        out.append(("temperature extrapolated: at_temperature is outside the temperatures "
                    "the run was stored at, so the Arrhenius law is assumed to hold there",
                    f"{at:g} degC asked, tested {_temps([min(run_temps), max(run_temps)])}"))
    if many:
        ea = fit.ea[i]
        lo, hi = EA_TYPICAL
        if not lo <= ea <= hi:
            out.append((f"unusual activation energy outside {lo:g} to {hi:g} kJ/mol (a rule "
                        "of thumb for chemical and quality changes in foods): check the "
                        "data, and whether one mechanism holds at every temperature",
                        f"{ea:.3g} kJ/mol"))
    if kind in ("shelf_life", "time_to_limit"):
        lim = opts["limit"]
        what = ("the confidence bound" if kind == "shelf_life" and opts["estimate"] == "bound"
                else "the fitted curve")
        here = sub[(sub["run"] == run) & sub["value"].notna() & (
            (sub["temperature"] == at) | (sub["time"] == 0))] if at in mine else None
        last = float(here["time"].max()) if here is not None and len(here) else \
            float(fit.last_time[i])
        if value == 0:
            out.append((f"at or past {lim:g} from the start of {what}, so set to 0", ""))
        elif value > stated_limit(last, unit):
            out.append((f"extrapolated far beyond the data: {what} reaches {lim:g} after "
                        f"{stated_limit(last, unit):.3g}, the longest the storage supports "
                        f"({FAR_BEYOND:g} times the last measured {tname}); no chance is "
                        "stated for it: treat it as a rough guide and extend the storage "
                        "study", f"{tname} {value:.3g}, measured to {last:g}"))
        elif value > last:
            out.append((f"extrapolated: {what} reaches {lim:g} after the last measured "
                        f"{tname} (the further beyond, the less trustworthy)",
                        f"{tname} {value:.3g}, measured to {last:g}"))
    return out


def _fit_notes(name, r2, order, many) -> list[str]:
    vals = np.array([v for v in r2.values() if not np.isnan(v)])
    if not len(vals):
        return []
    model = "one-step Arrhenius" if many else f"{order}-order"
    scale = " (on the log scale)" if order == "first" else ""
    notes = [f"response '{name}': {model} fit quality R-squared{scale} {vals.min():.3f} "
             f"to {vals.max():.3f} (median {np.median(vals):.3f}) over {len(vals)} runs"]
    poor = [run for run, v in r2.items() if v < _POOR_FIT_R2]
    if poor:
        notes.append(f"response '{name}': poor {model} fit (R-squared below "
                     f"{_POOR_FIT_R2}) for run(s) {name_list(poor)}: look at the curves; "
                     "the other order may fit better, or the property may hardly change")
    return notes


def describe_kinetic(opts: dict, sec: dict) -> str:
    """One sentence saying how a temperature-aware storage response is computed."""
    t, unit, src, p = sec["time"], sec["time_unit"], sec["data"].name, opts["property"]
    order = ("zero-order (straight-line)" if opts["order"] == "zero"
             else "first-order (log-linear)")
    at = opts.get("at_temperature")
    where = f" at {at:g} degC" if at is not None else ""
    fit = (f"a {order} fit per run in {src}, one least-squares fit over every storage "
           "temperature with an Arrhenius rate (at least "
           f"{opts['min_points']} {unit} per temperature, time 0 shared)")
    kind = opts["kind"]
    if kind == "activation_energy":
        return (f"activation energy (kJ/mol) of the rate of change of {p} from {fit}, "
                "with its standard error")
    if kind == "q10":
        return (f"Q10{where}: how many times faster {p} changes 10 degC warmer, "
                f"k(T + 10) / k(T), from {fit}")
    if kind == "rate_at":
        per = (f"{p} units per {t}" if opts["order"] == "zero" else f"per {t} on the log "
               "scale")
        return f"rate of change of {p}{where} ({per}) from {fit}"
    verb = "rises" if opts["direction"] == "up" else "falls"
    if kind == "shelf_life" and opts["estimate"] == "bound":
        what = (f"{unit}{where} until the one-sided confidence bound of the mean "
                f"{p} {verb} to {opts['limit']:g} (the conservative shelf life of ICH Q1E, the "
                "guideline on evaluating stability data)")
    else:
        what = f"{unit}{where} until the fitted mean {p} {verb} to {opts['limit']:g}"
    return (f"{what}, from {fit}; 0 when already past at the start, left out when it "
            f"never reaches it, flagged beyond the last measured {t}; not a safety "
            "determination")


ARRHENIUS_COLUMNS = ["run", "series", "temperature", "inv_temperature", "ln_rate", "rate",
                     "ln_low", "ln_high"]
# points along the one-step fit's line, so its (curved) confidence band is drawn smooth
_LINE_POINTS = 13


def arrhenius_points(sub: pd.DataFrame, opts: dict, *, confidence: float = 0.95
                     ) -> pd.DataFrame:
    """The tidy table behind the Arrhenius chart: ln k against 1000 / T per run.

    ``series`` is ``"own line"`` (each tested temperature's own straight-line
    rate, time 0 shared), ``"one-step fit"`` (the fitted Arrhenius line, from
    the lowest to the highest temperature tested or asked) or ``"asked"`` (the
    fit at ``at_temperature``). ``inv_temperature`` is 1000 / T in 1/kK (T in
    kelvin), ``ln_rate`` is ln |k| (a falling property has k < 0; rates of the
    other sign are left out of the log). ``ln_low`` and ``ln_high`` bound ln |k|
    at ``confidence`` (two-sided): ln |k| -+ t(df) se(k) / |k| (the delta
    method), with the own line's residual degrees of freedom (points less 2)
    or the one-step fit's (points less 3); NaN without a standard error.
    """
    from scipy import stats

    from .kinetics import per_temperature_rates

    order = opts["order"]
    own = per_temperature_rates(sub["run"], sub["time"], sub["temperature"], sub["value"],
                                order=order)
    fit = fit_arrhenius(sub["run"], sub["time"], sub["temperature"], sub["value"],
                        order=order)
    at = opts.get("at_temperature")

    def t(df):
        return float(stats.t.ppf(0.5 + confidence / 2, df)) if df > 0 else math.nan

    rows = [{"run": r["run"], "series": "own line", "temperature": r["temperature"],
             "rate": r["rate"], "half": t(r["rate_df"]) * r["rate_se"]}
            for _, r in own.iterrows()]
    for i, run in enumerate(fit.runs):
        temps = own.loc[own["run"] == run, "temperature"].to_numpy(float)
        if not fit.ok[i] or fit.n_temperatures[i] < 2:
            continue
        ends = [temps.min(), temps.max()] + ([at] if at is not None else [])
        q = t(int(fit.df[i]))
        # evenly spaced in 1 / T, where the fitted line is straight
        inv = np.linspace(1 / kelvin(min(ends)), 1 / kelvin(max(ends)), _LINE_POINTS)
        for T in 1 / inv - KELVIN:  # back to degC
            k, se = rate_at(fit, float(T))
            rows.append({"run": run, "series": "one-step fit", "temperature": float(T),
                         "rate": float(k[i]), "half": q * float(se[i])})
        if at is not None:
            k, se = rate_at(fit, at)
            rows.append({"run": run, "series": "asked", "temperature": at,
                         "rate": float(k[i]), "half": q * float(se[i])})
    out = pd.DataFrame(rows, columns=["run", "series", "temperature", "rate", "half"])
    sign = np.sign(np.nanmedian(out["rate"])) if len(out) else 1.0
    size = np.where(sign * out["rate"] > 0, np.abs(out["rate"]), np.nan)
    with np.errstate(invalid="ignore", divide="ignore"):
        out["ln_rate"] = np.log(size)
        spread = out["half"].to_numpy(float) / size
    out["ln_low"], out["ln_high"] = out["ln_rate"] - spread, out["ln_rate"] + spread
    out["inv_temperature"] = 1000.0 / kelvin(out["temperature"].to_numpy(float))
    return out[ARRHENIUS_COLUMNS]
