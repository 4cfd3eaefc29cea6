"""Tidy tables for blends: response traces along Cox directions and ternary grids.

``mixture_trace``: how each response changes as one component is raised or
lowered from a reference blend while the others keep their ratios to each
other (Cox's direction; Cox 1971, Cornell (2002), Experiments with Mixtures,
3rd ed., sec. 5.8). ``mixture_effects`` sums each trace up: the change over the
component's whole feasible stretch (its total effect) and the slope at the
reference blend. ``ternary_grid``: predictions over every blend of three chosen
components, the others held at the reference blend, for a ternary map.

The reference blend is, by default, the centroid of the constrained region
(the mean of its extreme vertices); process factors sit at their centre
(categorical ones at their first level) unless ``settings`` says otherwise.
"""
from __future__ import annotations

import numpy as np
import pandas as pd

from ..errors import ModelError, StudyError
from ..study.mixture import components_of, process_factors_of

__all__ = ["reference_blend", "cox_direction", "cox_edit", "blend_on_total", "mixture_trace",
           "mixture_effects", "blend_effects", "blend_inside", "ternary_setup", "ternary_grid"]


def _require_components(study) -> list:
    comps = components_of(study)
    if not comps:
        raise StudyError(f"study '{study.name}' has no [[components]]: traces and ternary "
                         "maps are for blends")
    return comps


def reference_blend(study, reference: dict | None = None) -> dict:
    """The reference blend as component amounts: given, or the region's centroid."""
    from ..study.mixture_region import extreme_vertices

    comps = _require_components(study)
    total = comps[0].total
    if reference is None:
        V = extreme_vertices([c.low for c in comps], [c.high for c in comps], total)
        centre = V.mean(axis=0)
        return {c.name: float(v) for c, v in zip(comps, centre)}
    missing = [c.name for c in comps if c.name not in reference]
    if missing:
        raise StudyError(f"the reference blend has no amount for {', '.join(missing)}: "
                         "give every component")
    amounts = np.array([float(reference[c.name]) for c in comps])
    if abs(amounts.sum() - total) > 0.005 * total:
        raise StudyError(f"the reference blend adds up to {amounts.sum():.6g}, not the "
                         f"total {total:g}: adjust the amounts")
    amounts *= total / amounts.sum()
    return {c.name: float(v) for c, v in zip(comps, amounts)}


def _process_settings(study, settings: dict | None) -> dict:
    out = {}
    for f in process_factors_of(study):
        if settings is not None and f.name in settings:
            out[f.name] = settings[f.name]
        else:
            out[f.name] = f.levels[0] if f.is_categorical else f.centre
    return out


def _coded(study, table: pd.DataFrame) -> np.ndarray:
    from ..study.coding import to_coded

    return to_coded(study.factors, table)


def cox_direction(s: np.ndarray, i: int) -> np.ndarray:
    """Direction (q,) of Cox's effect of component i at the blend s (proportions):
    +1 for i, the others falling in proportion to their shares of the rest."""
    s = np.asarray(s, dtype=float)
    rest = 1.0 - s[i]
    if rest <= 0:
        raise StudyError("the reference blend is a pure component: Cox directions need "
                         "some of the others")
    a = -s / rest
    a[i] = 1.0
    return a


def cox_edit(study, amounts: dict, name: str, value: float, *,
             keep_total: bool = True) -> dict:
    """The blend after one component is set to ``value``: the others along Cox's direction.

    The other components share what is left of the total in the ratios they
    had (Cox 1971; Cornell (2002), Experiments with Mixtures, 3rd ed., sec.
    5.8): ``x_j' = x_j (total - value) / (total - x_i)``. When the others
    held nothing (a pure component), they share the rest in their ratios at
    the centre of the allowed blends. ``keep_total=False`` asks for the others
    to stay as they are and the total to change, which a study with a fixed
    total (every ``[mixture]``) refuses with a message.

    Returns the new amounts of every component (study units), adding up to the
    total exactly; raises StudyError when ``value`` cannot be part of a blend.
    """
    comps = _require_components(study)
    names = [c.name for c in comps]
    if name not in names:
        raise StudyError(f"'{name}' is not a component of the study: the components are "
                         f"{', '.join(names)}")
    comp = comps[names.index(name)]
    total = comp.total
    unit = f" {comp.unit}" if comp.unit else ""
    if not keep_total:
        raise StudyError(f"the study fixes the blend's total at {total:g}{unit} ([mixture] "
                         "total): the models know only blends of that total, so more of "
                         f"{comp.label} must come out of the others; they keep their ratios "
                         "to each other instead")
    value = float(value)
    if not np.isfinite(value) or value < 0 or value > total:
        raise StudyError(f"{comp.label} = {value:g}{unit} cannot be part of a blend that "
                         f"totals {total:g}{unit}: give an amount from 0 to {total:g}")
    others = [n for n in names if n != name]
    old = np.array([float(amounts[n]) for n in others])
    if old.sum() <= 1e-12 * total:  # a pure component: the others' ratios at the centre
        centre = reference_blend(study)
        old = np.array([centre[n] for n in others])
    new = dict(zip(others, old * (total - value) / old.sum()))
    new[name] = value
    return {n: float(new[n]) for n in names}


def blend_on_total(study, amounts: dict) -> tuple[dict, float]:
    """(the blend scaled to the study's total, the sum it had): same shares.

    A blend is known by its shares of the total: 44 + 16.5 + 49.5 = 110 is the
    blend 40 + 15 + 45 = 100 made in a larger batch. Raises StudyError on a
    negative amount or a blend of nothing.
    """
    comps = _require_components(study)
    total = comps[0].total
    values = np.array([float(amounts[c.name]) for c in comps])
    for c, v in zip(comps, values):
        if not np.isfinite(v) or v < 0:
            raise StudyError(f"{c.label} = {v:g}: a component's amount cannot be below 0")
    s = float(values.sum())
    if s <= 0:
        raise StudyError("every component is 0: there is no blend to predict")
    return {c.name: float(v * total / s) for c, v in zip(comps, values)}, s


def _stretch(s, a, lo, hi) -> tuple[float, float]:
    """The deviations t with lo <= s + t a <= hi (proportions)."""
    t_lo, t_hi = -np.inf, np.inf
    for sc, ac, lc, hc in zip(s, a, lo, hi):
        if abs(ac) < 1e-15:
            continue
        b1, b2 = (lc - sc) / ac, (hc - sc) / ac
        t_lo, t_hi = max(t_lo, min(b1, b2)), min(t_hi, max(b1, b2))
    return float(t_lo), float(t_hi)


def _models(fit) -> dict:
    return dict(fit.models) if hasattr(fit, "models") else dict(fit)


def mixture_trace(study, fit, *, reference: dict | None = None,
                  settings: dict | None = None, steps: int = 41) -> pd.DataFrame:
    """Each response along each component's Cox direction through the reference blend.

    Returns
    -------
    pandas.DataFrame
        One row per response, component and step, columns: ``response``,
        ``component``, ``deviation`` (change of that component's proportion of
        the total from the reference blend; 0 at the reference), ``amount`` (its
        amount, study units), ``proportion`` (its proportion of the total),
        ``predicted``, ``ci_low``, ``ci_high`` (the mean's confidence interval),
        ``at_reference`` (True on the row of the reference blend itself).
        Each component's stretch runs over every deviation that keeps all
        components within their bounds.
    """
    comps = _require_components(study)
    models = _models(fit)
    if not models:
        raise ModelError("no fitted model to trace: fit the responses first")
    total = comps[0].total
    ref = reference_blend(study, reference)
    s = np.array([ref[c.name] for c in comps]) / total
    lo = np.array([c.low for c in comps]) / total
    hi = np.array([c.high for c in comps]) / total
    proc = _process_settings(study, settings)
    frames = []
    for i, c in enumerate(comps):
        a = cox_direction(s, i)
        t_lo, t_hi = _stretch(s, a, lo, hi)
        t = np.unique(np.concatenate([np.linspace(t_lo, t_hi, steps), [0.0]]))
        P = s[None, :] + t[:, None] * a[None, :]
        table = pd.DataFrame({cc.name: P[:, j] * total for j, cc in enumerate(comps)})
        for name, value in proc.items():
            table[name] = [value] * len(t)
        X = _coded(study, table)
        for rname, model in models.items():
            iv = model.intervals(X)
            frames.append(pd.DataFrame({
                "response": rname, "component": c.name, "deviation": t,
                "amount": P[:, i] * total, "proportion": P[:, i],
                "predicted": iv["predicted"].to_numpy(),
                "ci_low": iv["ci_low"].to_numpy(), "ci_high": iv["ci_high"].to_numpy(),
                "at_reference": np.abs(t) < 1e-12}))
    return pd.concat(frames, ignore_index=True)


def mixture_effects(study, fit, *, reference: dict | None = None,
                    settings: dict | None = None) -> pd.DataFrame:
    """Cox effects of each component on each response at the reference blend.

    Columns: ``response``, ``component``, ``low_amount`` and ``high_amount``
    (the ends of the component's feasible stretch along its Cox direction),
    ``effect`` (predicted at the high end minus at the low end: the total
    effect), ``slope`` (change of the prediction per unit of proportion at the
    reference blend, by central differences).
    """
    trace = mixture_trace(study, fit, reference=reference, settings=settings, steps=3)
    comps = components_of(study)
    total = comps[0].total
    ref = reference_blend(study, reference)
    s = np.array([ref[c.name] for c in comps]) / total
    proc = _process_settings(study, settings)
    models = _models(fit)
    rows = []
    h = 1e-5
    for i, c in enumerate(comps):
        a = cox_direction(s, i)
        P = np.vstack([s + h * a, s - h * a])
        table = pd.DataFrame({cc.name: P[:, j] * total for j, cc in enumerate(comps)})
        for name, value in proc.items():
            table[name] = [value] * 2
        X = _coded(study, table)
        for rname, model in models.items():
            part = trace[(trace.response == rname) & (trace.component == c.name)]
            ends = part.sort_values("deviation")
            pred = np.asarray(model.predict(X), dtype=float)
            rows.append({"response": rname, "component": c.name,
                         "low_amount": float(ends["amount"].iloc[0]),
                         "high_amount": float(ends["amount"].iloc[-1]),
                         "effect": float(ends["predicted"].iloc[-1]
                                         - ends["predicted"].iloc[0]),
                         "slope": float((pred[0] - pred[1]) / (2 * h))})
    return pd.DataFrame(rows, columns=["response", "component", "low_amount",
                                       "high_amount", "effect", "slope"])


def blend_effects(study, fit, response: str, *, reference: dict | None = None,
                  settings: dict | None = None, level: float | None = None) -> pd.DataFrame:
    """What each component and each process factor does to one response, with intervals.

    A blend's coefficients are not effects (a Scheffe coefficient is the
    prediction at a pure component, usually far outside the blends tried), so a
    component's effect is read along its Cox direction through the reference
    blend: from the lowest to the highest amount the bounds allow while the
    others keep their ratios (Cornell (2002), Experiments with Mixtures, 3rd
    ed., sec. 5.8). A numeric process factor goes from its low to its high, a
    categorical one from the level held to each other level, at the reference
    blend. Each effect is a difference of two predicted means, so its interval
    is ``t(df) * sqrt(v11 + v22 - 2 v12)`` from the covariance of the two
    means (``model.mean_covariance``); for a transformed response the effect is
    in natural units and no interval is given (NaN).

    Returns
    -------
    pandas.DataFrame
        One row per component and process change, largest size first. Columns
        ``term`` (factor name), ``what`` (the change in words: "Rice flour 40 % ->
        70 %"), ``kind`` (``component`` or ``process``),
        ``start`` and ``end`` (amounts, settings or level names of the two
        ends), ``effect`` (predicted at the end minus at the start, natural
        units), ``ci_low``, ``ci_high`` (NaN without an error estimate).
    """
    from scipy import stats

    comps = _require_components(study)
    model = _models(fit).get(response)
    if model is None:
        raise ModelError(f"no fitted model for '{response}': fit it first")
    level = model.confidence if level is None else float(level)
    total = comps[0].total
    ref = reference_blend(study, reference)
    s = np.array([ref[c.name] for c in comps]) / total
    lo = np.array([c.low for c in comps]) / total
    hi = np.array([c.high for c in comps]) / total
    proc = _process_settings(study, settings)
    pairs = []  # (term, kind, start, end, start table row, end table row)
    for i, c in enumerate(comps):
        a = cox_direction(s, i)
        t_lo, t_hi = _stretch(s, a, lo, hi)
        ends = [s + t * a for t in (t_lo, t_hi)]
        rows = [{**{cc.name: e[j] * total for j, cc in enumerate(comps)}, **proc}
                for e in ends]
        pairs.append((c.name, "component", rows[0][c.name], rows[1][c.name], *rows))
    for f in process_factors_of(study):
        base = {**ref, **proc}
        if f.is_categorical:
            for other in f.levels:
                if other != proc[f.name]:
                    pairs.append((f.name, "process", proc[f.name], other, base,
                                  {**base, f.name: other}))
        else:
            pairs.append((f.name, "process", f.low, f.high, {**base, f.name: f.low},
                          {**base, f.name: f.high}))
    out = []
    for term, kind, start, end, r0, r1 in pairs:
        X = _coded(study, pd.DataFrame([r0, r1]))
        pred = np.asarray(model.predict(X), dtype=float)
        effect = float(pred[1] - pred[0])
        low = high = np.nan
        if getattr(model, "transform", "none") == "none":
            V = np.asarray(model.mean_covariance(X, X), dtype=float)
            _, _, sigma, df = model.predictive(X[:1])
            var = V[0, 0] + V[1, 1] - 2 * V[0, 1]
            if df > 0 and np.isfinite(var) and sigma == sigma:
                half = float(stats.t.ppf(0.5 + level / 2, df) * np.sqrt(max(var, 0.0)))
                low, high = effect - half, effect + half
        f = study.factor(term)
        unit = f" {f.unit}" if f.unit and not f.is_categorical else ""
        ends = [v if isinstance(v, str) else f"{v:.4g}{unit}" for v in (start, end)]
        out.append({"term": term, "what": f"{f.label} {ends[0]} \u2192 {ends[1]}",
                    "kind": kind, "start": start, "end": end,
                    "effect": effect, "ci_low": low, "ci_high": high})
    table = pd.DataFrame(out, columns=["term", "what", "kind", "start", "end", "effect",
                                       "ci_low", "ci_high"])
    order = np.argsort(-np.abs(table["effect"].to_numpy(float)), kind="stable")
    return table.iloc[order].reset_index(drop=True)


def blend_inside(study, amounts: np.ndarray, X: np.ndarray) -> np.ndarray:
    """(m,) booleans: every component within its bounds (amounts (m, q), study
    order) and every rule of the study met (coded settings X)."""
    from ..study.constraints import rules_satisfied

    comps = components_of(study)
    lo = np.array([c.low for c in comps])
    hi = np.array([c.high for c in comps])
    tol = 1e-9 * comps[0].total
    inside = np.all((amounts >= lo - tol) & (amounts <= hi + tol), axis=1)
    return inside & rules_satisfied(study, X)


def ternary_setup(study, components=None, reference: dict | None = None,
                  zoom: bool = False) -> dict:
    """What a ternary map of three components stands on (checked).

    Returns a dict: ``names`` (every component), ``components`` (the three
    mapped), ``held`` (amounts of the others, at the reference blend),
    ``rest`` (what the three split between them), ``lows`` (the three's
    smallest shares of ``rest`` the map spans: their lows / rest with
    ``zoom``, else zeros) and ``room`` (1 - sum of ``lows``: the share of
    ``rest`` that each side of the map spans).
    """
    comps = _require_components(study)
    names = [c.name for c in comps]
    if components is None:
        if len(comps) < 3:
            raise StudyError("a ternary map needs three components; this study has "
                             f"{len(comps)}")
        components = names[:3]
    components = list(components)
    if len(components) != 3 or len(set(components)) != 3:
        raise StudyError(f"a ternary map needs three different components, found "
                         f"{components}")
    for n in components:
        if n not in names:
            from ..errors import did_you_mean

            raise StudyError(f"'{n}' is not a component of the study"
                             f"{did_you_mean(n, names)}: the components are {names}")
    total = comps[0].total
    ref = reference_blend(study, reference)
    held = {n: ref[n] for n in names if n not in components}
    rest = total - sum(held.values())
    if rest <= 1e-9 * abs(total):
        raise StudyError("the other components take up the whole total at the reference "
                         "blend: nothing is left for the three mapped ones")
    lows = np.zeros(3)
    if zoom:
        by_name = {c.name: c for c in comps}
        lows = np.array([max(by_name[n].low, 0.0) for n in components]) / rest
    room = 1.0 - float(lows.sum())
    if room <= 1e-9:
        raise StudyError("the three components' lows take up all that the others leave: "
                         "there is no blend to map; hold the others lower")
    return {"names": names, "components": components, "held": held, "rest": rest,
            "lows": lows, "room": room}


def ternary_grid(study, fit, components=None, *, reference: dict | None = None,
                 settings: dict | None = None, steps: int = 30,
                 zoom: bool = False) -> pd.DataFrame:
    """Predictions over every blend of three components, the others held fixed.

    Parameters
    ----------
    study, fit : the mixture study and its fitted models (StudyFit or dict).
    components : three component names (default: the study's first three).
    reference : component amounts of the reference blend (default: the
        centroid of the constrained region); the components not mapped keep
        their reference amounts, and the three share what is left.
    settings : process factor settings (default: centre, first level).
    steps : grid lines per side: (steps + 1)(steps + 2)/2 blends.
    zoom : when True the grid spans only the blends where each of the three
        is at least its low (the smaller triangle of L-pseudo-components,
        which holds every blend the study allows); default the whole triangle.

    Returns
    -------
    pandas.DataFrame
        One row per blend and response, columns: ``point`` (blend number),
        ``first_share``, ``second_share``, ``third_share`` (the three mapped
        components' shares of what they split between them; they add up to 1:
        the ternary coordinates), one column per component with its amount
        (study units), ``inside`` (True when every component is within its
        bounds and every rule of the study holds), ``response``, ``predicted``,
        ``desirability`` (the response's own desirability, NaN when it has no
        goal) and ``D`` (overall desirability, NaN when no goal takes part).
        ``attrs["components"]`` holds the three names in the order of the
        share columns, ``attrs["held"]`` the amounts of the others,
        ``attrs["lows"]``, ``attrs["room"]`` and ``attrs["rest"]`` as in
        ``ternary_setup`` (shares = lows + room * the grid's own coordinates).
    """
    setup = ternary_setup(study, components, reference, zoom)
    comps = components_of(study)
    names, components = setup["names"], setup["components"]
    if not isinstance(steps, int) or steps < 1:
        raise StudyError(f"steps must be a whole number of at least 1, found {steps!r}")
    models = _models(fit)
    total = comps[0].total
    held, rest = setup["held"], setup["rest"]
    grid = np.array([(i, j, steps - i - j) for i in range(steps + 1)
                     for j in range(steps + 1 - i)], dtype=float) / steps
    grid = setup["lows"] + setup["room"] * grid
    table = pd.DataFrame({n: np.full(len(grid), held[n]) if n in held
                          else grid[:, components.index(n)] * rest for n in names})
    proc = _process_settings(study, settings)
    for name, value in proc.items():
        table[name] = [value] * len(grid)
    X = _coded(study, table)
    inside = blend_inside(study, table[names].to_numpy(float), X)
    D = np.full(len(grid), np.nan)
    dcols: dict[str, np.ndarray] = {}
    from ..search.problem import goal_columns, overall_desirability

    cols = goal_columns(study, models)
    if cols:
        D, d = overall_desirability(study, models, X)
        dcols = {n: d[:, i] for i, (kind, n) in enumerate(cols) if kind == "response"}
    base = pd.DataFrame({"point": np.arange(len(grid)), "first_share": grid[:, 0],
                         "second_share": grid[:, 1], "third_share": grid[:, 2]})
    for n in names:
        base[n] = table[n].to_numpy(float)
    base["inside"] = inside
    frames = []
    for rname, model in models.items():
        part = base.copy()
        part["response"] = rname
        part["predicted"] = np.asarray(model.predict(X), dtype=float)
        part["desirability"] = dcols.get(rname, np.full(len(grid), np.nan))
        part["D"] = D
        frames.append(part)
    out = pd.concat(frames, ignore_index=True) if frames else base.assign(
        response=pd.Series(dtype=object), predicted=np.nan, desirability=np.nan, D=np.nan)
    out.attrs["components"] = tuple(components)
    out.attrs["held"] = dict(held)
    out.attrs.update(lows=tuple(float(v) for v in setup["lows"]), room=setup["room"],
                     rest=rest)
    return out
