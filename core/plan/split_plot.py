"""Plans for runs that share a batch: split-plot factorials, grouped run sheets,
and the judging of a split-plot plan under an assumed variance ratio.

With hard-to-change factors (``hard_to_change = true``) a plan is made in
whole plots: the whole-plot factors get a two-level factorial of their own (a
fraction with ``--whole-plots W``, its generators among whole-plot factors
only), replicated with ``--replicates``; the other factors get their own
factorial or fraction (``--runs`` runs per whole plot, generators among them
only), crossed within every whole plot. Keeping every generator within its
own kind of factor is the first rule of a split-plot fraction (Huang, Chen &
Voelkel 1998; Bingham & Sitter 1999); their minimum-aberration fractions with
generators that mix the two kinds are not offered here.

The run sheet lists the whole plots in random order and the runs within each
whole plot in random order, with a column naming each run's whole plot, so a
technician sets the hard-to-change factors once per group.

The judging: with ``V = s^2 (I + r Z Z')`` for the assumed ratio ``r =
s_wp^2 / s^2``, each coefficient's standard error (in units of ``s``) is from
``(X'V^-1 X)^-1``; a term changed only between whole plots is tested on the
whole-plot error df (whole plots less their terms), any other on the within
df (runs less whole plots less within terms), as in the classical split-plot
analysis (Cochran & Cox 1957, ch. 7; common practice).
"""
from __future__ import annotations

from itertools import product

import numpy as np
import pandas as pd

from ..errors import PlanError
from ..study.coding import level_codes, to_natural
from .designs import Plan, _centre_rows, _tidy, fractional_design
from .evaluation import effect_power

__all__ = ["hard_and_easy", "split_plot_factorial", "group_runs", "split_information",
           "split_plot_evaluation", "WHOLE_PLOT_COLUMN", "check_ratio"]

WHOLE_PLOT_COLUMN = "whole_plot"


def check_ratio(ratio) -> float:
    """The assumed variance ratio s_wp^2 / s^2: a positive number (default 1)."""
    if ratio is None:
        return 1.0
    try:
        value = float(ratio)
    except (TypeError, ValueError):
        value = float("nan")
    if not 0 < value < float("inf"):
        raise PlanError(f"--ratio must be a positive number (the variance between whole "
                        f"plots over the variance within them, such as 1), found {ratio}")
    return value


def hard_and_easy(study) -> tuple[list[int], list[int]]:
    """Positions of the hard-to-change factors and of the others."""
    hard = [j for j, f in enumerate(study.factors) if f.hard_to_change]
    easy = [j for j in range(len(study.factors)) if j not in hard]
    if hard and not easy:
        raise PlanError("every factor is hard to change, so no runs share a batch: plan "
                        "an ordinary design (remove hard_to_change) and make each run in "
                        "a batch of its own")
    return hard, easy


def _two_level_part(factors, idx, runs, resolution, what):
    """Coded rows of a factorial (or fraction) in the factors ``idx``: two-level
    ones by ``fractional_design``, those of three or more levels crossed."""
    two = [j for j in idx if not (factors[j].is_categorical and len(factors[j].levels) > 2)]
    multi = [j for j in idx if j not in two]
    design = None
    if two:
        try:
            design = fractional_design(len(two), runs, resolution)
        except PlanError as exc:
            raise PlanError(f"{what}: {exc}") from None
        base = design.coded
    else:
        if runs is not None:
            raise PlanError(f"{what}: {runs} runs asked for, but these factors have three "
                            "or more levels each and are crossed in full")
        base = np.zeros((1, 0))
    cells = list(product(*[level_codes(factors[j]) for j in multi])) or [()]
    rows = []
    for cell in cells:
        for x in base:
            row = np.zeros(len(factors))
            row[two] = x
            row[multi] = cell
            rows.append(row)
    return np.asarray(rows), design, [factors[j].name for j in two]


def group_runs(factors, coded: np.ndarray, plots: np.ndarray, point, seed: int,
               column: str = WHOLE_PLOT_COLUMN) -> tuple[pd.DataFrame, pd.DataFrame]:
    """Run tables grouped by whole plot: whole plots in random order, runs in
    random order within each; whole plots renamed W1, W2, ... in that order."""
    rng = np.random.default_rng([int(seed), 26])
    labels = np.unique(plots)
    order, names = [], []
    for number, p in enumerate(labels[rng.permutation(len(labels))], start=1):
        members = np.flatnonzero(plots == p)
        order.extend(members[rng.permutation(len(members))])
        names += [f"W{number}"] * len(members)
    order = np.asarray(order, dtype=int)
    n = len(order)
    natural = to_natural(factors, coded[order])
    for f in factors:
        if not f.is_categorical:
            natural[f.name] = _tidy(natural[f.name].to_numpy(float), f.half_range)
    table = pd.DataFrame({"run": [str(i) for i in range(1, n + 1)],
                          "std_order": np.arange(1, n + 1)[order],
                          "run_order": np.arange(1, n + 1), "block": np.ones(n, dtype=int),
                          column: names,
                          "point": np.asarray(point, dtype=object)[order]})
    table = pd.concat([table, natural.reset_index(drop=True)], axis=1)
    return table, pd.DataFrame(coded[order], columns=[f.name for f in factors])


def split_plot_factorial(study, *, runs=None, resolution=None, whole_plots=None,
                         replicates: int = 1, center: int = 0, seed=None
                         ) -> tuple[Plan, dict]:
    """A split-plot two-level plan for the study's hard-to-change and other factors.

    ``whole_plots``: whole plots per replicate (a power of two; default the full
    factorial of the whole-plot factors); ``runs``: runs of the other factors'
    two-level part in each whole plot (default: resolution V or full);
    ``center``: centre runs of the other factors' numeric part in each whole plot.
    Returns the plan and the whole-plot design's summary (JSON-ready).
    """
    factors = tuple(study.factors)
    hard, easy = hard_and_easy(study)
    seed = study.seed if seed is None else seed
    for value, what, least in ((center, "--center", 0), (replicates, "--replicates", 1)):
        if not isinstance(value, (int, np.integer)) or value < least:
            raise PlanError(f"{what} must be a whole number of at least {least}, "
                            f"found {value}")
    wp, wp_design, wp_names = _two_level_part(factors, hard, whole_plots, None,
                                              "the whole plots (hard-to-change factors)")
    sp, sp_design, sp_names = _two_level_part(factors, easy, runs, resolution,
                                              "the runs within a whole plot")
    within = sp[:, easy]
    if center:
        centre = _centre_rows(tuple(factors[j] for j in easy), center, "per whole plot")
        within = np.vstack([within, centre])
    point_within = ["factorial"] * len(sp) + ["centre"] * center
    rows, plots, point = [], [], []
    for rep in range(replicates):
        for i, setting in enumerate(wp):
            for x, kind in zip(within, point_within):
                row = setting.copy()
                row[easy] = x
                rows.append(row)
                plots.append(rep * len(wp) + i)
                point.append(kind)
    coded = np.asarray(rows)
    column = study.whole_plot or WHOLE_PLOT_COLUMN
    table, coded_df = group_runs(factors, coded, np.asarray(plots), point, seed, column)
    notes = [f"split plot: {len(wp) * replicates} whole plots of {len(within)} runs; set "
             f"{', '.join(factors[j].name for j in hard)} once per whole plot (column "
             f"'{column}'), make its runs in the order listed"]
    if replicates == 1:
        notes.append("one replicate of the whole plots: nothing is left to estimate the "
                     "variation between whole plots, so the hard-to-change factors cannot "
                     "be tested: use --replicates 2 or more")
    if study.whole_plot is None:
        notes.append(f"add whole_plot = \"{column}\" under [study] to analyse the runs "
                     "with their whole plots")
    kind = (f"split plot: {_name(wp_design)} in the whole plots x {_name(sp_design)} "
            "within")
    plan = Plan(factors=factors, runs=table, coded=coded_df, design=sp_design,
                notes=tuple(notes), kind=kind,
                design_names=tuple(sp_names) if sp_design is not None else None)
    return plan, _design_summary(wp_design, wp_names, len(wp) * replicates)


def _design_summary(design, names, count) -> dict:
    if design is None:
        return {"design": "all level combinations", "whole_plots": count}
    return {"design": _name(design), "whole_plots": count,
            "generators": design.generator_names(names),
            "aliases": design.aliases(names)}


def _name(design) -> str:
    if design is None:
        return "all level combinations"
    if design.is_full:
        return "full factorial"
    q = design.runs.bit_length() - 1
    return f"2^({design.k}-{design.k - q}) fraction"


def split_information(F: np.ndarray, codes: np.ndarray, ratio: float) -> np.ndarray:
    """X'V^-1 X for V = I + ratio Z Z' (in units of the within variance)."""
    sizes = np.bincount(codes)
    sums = np.zeros((sizes.size, F.shape[1]))
    np.add.at(sums, codes, F)
    c = ratio / (1.0 + ratio * sizes)
    return F.T @ F - (sums * c[:, None]).T @ sums


def split_plot_evaluation(study, coded: np.ndarray, plots, model, *, ratio: float,
                          effect=None, sd=None, alpha: float = 0.05) -> dict:
    """Each term's stratum, standard error and power under the assumed ratio (JSON-ready)."""
    from .layouts import model_builder

    matrix, terms = model_builder(study, model)
    F = np.asarray(matrix(np.asarray(coded, dtype=float)), dtype=float)
    labels = np.asarray([str(p) for p in plots], dtype=object)
    _, codes = np.unique(labels, return_inverse=True)
    G = int(codes.max()) + 1
    M = split_information(F, codes, ratio)
    if np.linalg.matrix_rank(M) < F.shape[1]:
        raise PlanError("the split-plot plan cannot estimate every term of the model: "
                        "add whole plots or runs, or use a smaller model")
    C = np.linalg.inv(M)
    whole = []
    for j in range(F.shape[1]):
        col = F[:, j]
        lo = np.full(G, np.inf)
        hi = np.full(G, -np.inf)
        np.minimum.at(lo, codes, col)
        np.maximum.at(hi, codes, col)
        whole.append(bool(np.all(hi - lo < 1e-9)))
    n_wp_terms = int(np.linalg.matrix_rank(F[:, whole]))
    n_within = int(np.linalg.matrix_rank(F)) - n_wp_terms
    df = {"whole plot": G - n_wp_terms, "within": len(F) - G - n_within}
    rows = {}
    for j, t in enumerate(terms):
        if t.is_intercept:
            continue
        stratum = "whole plot" if whole[j] else "within"
        se = float(np.sqrt(C[j, j]))
        row = {"stratum": stratum, "std_error": round(se, 6), "error_df": df[stratum]}
        if effect is not None and sd is not None:
            power = effect_power(np.array([se]), df[stratum], effect=effect, sd=sd,
                                 alpha=alpha)[0]
            row["power"] = None if np.isnan(power) else round(float(power), 4)
        rows[t.label] = row
    return {"ratio": ratio, "whole_plots": G, "runs": int(len(F)), "error_df": df,
            "terms": rows}
