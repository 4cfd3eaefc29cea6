"""How far a storage study reaches: the longest time a shelf life may be stated for.

A time derived from a storage study (a shelf life, a time to a limit) beyond the
last storage time is an extrapolation of the fitted curve. ICH Q1E, Evaluation of
stability data (2003), section 2.4.1.2, allows a proposed shelf life up to twice
the period covered by the long-term data, and not more than 12 months beyond it,
when the data support it statistically. This tool is stricter: it states a time
up to ``STATED_MULTIPLE`` (1.5) times the last storage time, and never more than
12 months beyond it where the time unit is known. Beyond that it states no chance
for the response and names the storage time that would support the figure.

``StorageReach`` holds one response's reach; ``add_derived_responses`` stores one
per time-valued storage response in ``study.reach``, and the models, the search,
the chances and the report read it from there.
"""
from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

__all__ = ["STATED_MULTIPLE", "Q1E_MULTIPLE", "Q1E_MONTHS", "TIME_KINDS", "StorageReach",
           "months_per_unit", "stated_limit", "storage_needed", "storage_reach",
           "goal_warnings"]

STATED_MULTIPLE = 1.5   # our rule: at most 1.5 times the last storage time
Q1E_MULTIPLE = 2.0      # ICH Q1E (2003) 2.4.1.2: up to twice the period covered ...
Q1E_MONTHS = 12.0       # ... and not more than 12 months beyond it
TIME_KINDS = ("shelf_life", "time_to_limit")  # derived kinds whose value is a time

# A month is a twelfth of a mean Gregorian year (365.2425 days; common practice).
_DAYS_PER_MONTH = 365.2425 / 12
_UNITS = {"day": 1 / _DAYS_PER_MONTH, "d": 1 / _DAYS_PER_MONTH,
          "week": 7 / _DAYS_PER_MONTH, "wk": 7 / _DAYS_PER_MONTH,
          "month": 1.0, "mo": 1.0, "year": 12.0, "yr": 12.0, "y": 12.0}


def months_per_unit(unit: str) -> float | None:
    """Months in one ``unit`` (days, weeks, months, years; plural or not), else None."""
    u = str(unit or "").strip().lower()
    if u.endswith("s") and u[:-1] in _UNITS:
        u = u[:-1]
    return _UNITS.get(u)


def stated_limit(last: float, unit: str = "") -> float:
    """The longest time stated from a storage study that ran to ``last``.

    ``STATED_MULTIPLE`` times ``last``, and at most ``Q1E_MONTHS`` beyond it when
    ``unit`` is a known time unit.
    """
    limit = STATED_MULTIPLE * float(last)
    months = months_per_unit(unit)
    if months is not None:
        limit = min(limit, float(last) + Q1E_MONTHS / months)
    return limit


def storage_needed(value: float, unit: str = "") -> float:
    """The shortest storage time whose reach covers ``value``, rounded up to a whole unit.

    The inverse of ``stated_limit``: ``value / 1.5``, or ``value`` less 12 months
    when that is longer.
    """
    need = float(value) / STATED_MULTIPLE
    months = months_per_unit(unit)
    if months is not None:
        need = max(need, float(value) - Q1E_MONTHS / months)
    return float(math.ceil(need - 1e-9))


@dataclass(frozen=True)
class StorageReach:
    """How far one time-valued storage response may be stated.

    Attributes
    ----------
    response : str
        The derived response.
    time : str
        The storage table's time column (``week``).
    unit : str
        Its unit (``weeks``).
    last : float
        The last storage time of any run at the temperature the response is about.
    stated_to : float
        The longest time stated (``stated_limit(last, unit)``).
    beyond : tuple of str
        Runs whose value lies beyond ``last`` (within ``stated_to``).
    far : tuple of str
        Runs whose value lies beyond ``stated_to``.
    """

    response: str
    time: str
    unit: str
    last: float
    stated_to: float
    beyond: tuple = ()
    far: tuple = ()

    def status(self, value) -> np.ndarray:
        """Per value: ``""`` within the storage, ``"beyond"`` past the last storage
        time, ``"far"`` past ``stated_to`` (no chance stated there)."""
        v = np.atleast_1d(np.asarray(value, dtype=float))
        out = np.full(v.shape, "", dtype=object)
        out[v > self.last] = "beyond"
        out[v > self.stated_to] = "far"
        return out

    def needed(self, value: float) -> float:
        """The storage time that would support ``value`` (``storage_needed``)."""
        return storage_needed(value, self.unit)

    def sentence(self, value: float, what: str | None = None) -> str:
        """What a reader needs to know about ``value`` of this response ('' within)."""
        what = what or f"'{self.response}'"
        state = self.status(value)[0]
        u = f" {self.unit}" if self.unit else ""
        if state == "far":
            return (f"{what} of {value:.3g}{u} lies beyond {self.stated_to:.3g}{u}, the "
                    f"longest this storage study (to {self.last:g}{u}) can support "
                    f"({STATED_MULTIPLE:g} times its last {self.time}): no chance is "
                    f"stated for it; store to at least {self.needed(value):g}{u} to "
                    "support it")
        if state == "beyond":
            return (f"{what} of {value:.3g}{u} lies beyond the last storage {self.time} "
                    f"({self.last:g}{u}): an extrapolation of the fitted curve, to be "
                    "confirmed by real storage")
        return ""

    def model_note(self, n_runs: int) -> str:
        """One sentence for the response's model ('' when no run is beyond)."""
        if not self.beyond and not self.far:
            return ""
        u = f" {self.unit}" if self.unit else ""
        k = len(self.beyond) + len(self.far)
        far = (f", {len(self.far)} of them beyond {self.stated_to:.3g}{u} "
               f"({STATED_MULTIPLE:g} times; {', '.join(self.far)})" if self.far else "")
        return (f"{k} of {n_runs} runs have a value beyond the last storage {self.time} "
                f"({self.last:g}{u}){far}: the model is fitted partly to extrapolated "
                "values, and its predictions there are extrapolated too")

    def goal_warning(self, goal, what: str | None = None) -> str:
        """A warning for a goal whose limit lies beyond what this storage can support
        (``what`` names the goal: default "The goal of '<response>'")."""
        limits = [v for v in (goal.lower, goal.upper, getattr(goal, "target", None))
                  if v is not None and np.isfinite(v)]
        if not goal.active or not limits:
            return ""
        far = [v for v in limits if v > self.stated_to]
        if not far:
            return ""
        u = f" {self.unit}" if self.unit else ""
        return (f"{what or f'The goal of {self.response!r}'} names {max(far):g}{u}, beyond "
                f"{self.stated_to:.3g}{u}, the longest this storage study (to "
                f"{self.last:g}{u}) can support ({STATED_MULTIPLE:g} times its last "
                f"{self.time}): shelf lives there get no chance; store to at least "
                f"{self.needed(max(far)):g}{u}, or bring the limit within reach")

    def to_dict(self) -> dict:
        return {"response": self.response, "time": self.time, "unit": self.unit,
                "last": self.last, "stated_to": self.stated_to,
                "beyond": list(self.beyond), "far": list(self.far)}


def storage_reach(name: str, sub, opts: dict, sec: dict, values: dict) -> StorageReach:
    """The reach of one time-valued storage response.

    ``sub`` is the property's tidy storage rows (``run``, ``time``, ``value`` and
    ``temperature`` when given); ``values`` maps a run to its derived value.
    The last storage time is the longest at the temperature asked
    (``at_temperature``), or over the whole table when the response names none
    or nothing was stored at it.
    """
    have = sub[sub["value"].notna()]
    at = opts.get("at_temperature")
    if at is not None and "temperature" in have and (have["temperature"] == at).any():
        have = have[have["temperature"] == at]
    last = float(have["time"].max()) if len(have) else math.nan
    unit = str(sec.get("time_unit") or "")
    to = stated_limit(last, unit)
    beyond = tuple(str(r) for r, v in values.items() if np.isfinite(v) and last < v <= to)
    far = tuple(str(r) for r, v in values.items() if np.isfinite(v) and v > to)
    return StorageReach(response=name, time=str(sec["time"]), unit=unit, last=last,
                        stated_to=to, beyond=beyond, far=far)


def goal_warnings(study, what: str | None = None) -> dict:
    """Response name -> a warning, for each goal naming a time past its storage's reach
    (``what``: how the warning names the goal, as in ``StorageReach.goal_warning``)."""
    out = {}
    for name, reach in (getattr(study, "reach", {}) or {}).items():
        text = reach.goal_warning(study.response(name).goal, what)
        if text:
            out[name] = text
    return out
