"""Plans for blend studies: the chosen mixture design crossed with the process factors.

``plan_mixture`` lays out a simplex-lattice, simplex-centroid or
extreme-vertices design (plan/mixture_designs.py) over the study's
components, crosses it with the two-level full factorial of the process
factors (every blend at every corner of the process factors: Cornell (2002),
Experiments with Mixtures, 3rd ed., ch. 7), adds replicates and centroid runs,
and randomises the run order. Amounts are in the study's units, rounded, and
add up exactly to the total: one stated component (the one with the widest
range) takes the rounding.
"""
from __future__ import annotations

import itertools
import math
from dataclasses import dataclass, field

import numpy as np
import pandas as pd

from ..errors import PlanError
from ..study.mixture import components_of, process_factors_of
from ..study.mixture_region import extreme_vertices, face_centroids
from .mixture_designs import (MIXTURE_DESIGNS, axial_blends, round_to_total,
                              simplex_centroid, simplex_lattice)

__all__ = ["MixturePlan", "plan_mixture", "mixture_plan_command", "mixture_route",
           "CENTROID_KINDS"]

CENTROID_KINDS = ("edges", "faces", "overall")
_DEGREE = {"linear": 1, "quadratic": 2, "special_cubic": 3, "cubic": 3}


@dataclass(frozen=True, eq=False)
class MixturePlan:
    """A planned blend study.

    ``runs``: the run sheet's table, columns ``run``, ``std_order``,
    ``run_order``, ``block``, ``point`` (vertex, edge, face, interior, centroid,
    axial), one column per component (amounts) and per process factor,
    rows in run order. ``coded``: the same rows in coded units.
    """

    factors: tuple
    runs: pd.DataFrame
    coded: pd.DataFrame
    kind: str
    balance: str
    notes: tuple[str, ...] = ()
    extra: dict = field(default_factory=dict)

    def summary(self) -> dict:
        counts = self.runs["point"].value_counts()
        comps = [f.name for f in self.factors if getattr(f, "is_component", False)]
        blends = len(np.unique(np.round(self.coded[comps].to_numpy(float), 9), axis=0))
        return {"design": self.kind, "total_runs": int(len(self.runs)),
                "distinct_blends": int(blends),
                "points": {str(k): int(v) for k, v in counts.items()},
                "components": comps, "balance_component": self.balance,
                "notes": list(self.notes)} | self.extra


def _pseudo_points(kind: str, q: int, degree: int | None) -> tuple[np.ndarray, str]:
    if kind == "lattice":
        m = degree or 2
        return simplex_lattice(q, m), f"simplex-lattice {{{q}, {m}}}"
    return simplex_centroid(q), f"simplex-centroid ({q} components)"


def _label(z: np.ndarray, centre: bool = False) -> str:
    n = int(np.count_nonzero(np.abs(z) > 1e-12))
    return {1: "vertex", 2: "edge"}.get(n, "centroid" if centre else "interior")


def plan_mixture(study, design: str, *, degree: int | None = None,
                 centroids=("overall",), axial: bool = False, center: int = 0,
                 replicates: int = 1, seed: int | None = None) -> MixturePlan:
    """Plan a mixture design for the study's components, crossed with its process factors.

    Parameters
    ----------
    design : ``lattice`` (with ``degree`` m, default the [mixture] model's
        degree), ``centroid`` or ``vertices``.
    centroids : for ``vertices``: which centroids to add, any of ``edges``,
        ``faces`` (two-dimensional faces) and ``overall``.
    axial : add check blends half-way between the overall centroid and each
        vertex (lattice and centroid designs: each pure blend).
    center : extra runs at the overall centroid (process factors at their
        centre), to measure run-to-run variation.
    replicates : make every blend (at every process corner) this many times.
    """
    comps = components_of(study)
    if not comps:
        raise PlanError(f"design '{design}' is a mixture design, but study '{study.name}' "
                        "has no [[components]]: add the components and a [mixture] "
                        "section, or choose a factorial plan")
    if design not in ("lattice", "centroid", "vertices"):
        raise PlanError(f"'{design}' is not a mixture design I can build: use lattice, "
                        "centroid or vertices")
    if degree is not None and design != "lattice":
        raise PlanError("--degree is for --design lattice only")
    if degree is not None and not 1 <= degree <= 6:
        raise PlanError(f"--degree must be 1 to 6, found {degree}")
    bad = [c for c in centroids if c not in CENTROID_KINDS]
    if bad:
        raise PlanError(f"centroids '{bad[0]}' is not one I know: use "
                        f"{', '.join(CENTROID_KINDS)}")
    if replicates < 1 or center < 0:
        raise PlanError("replicates must be 1 or more and centre runs 0 or more")
    seed = study.seed if seed is None else seed
    q = len(comps)
    total = comps[0].total
    lows = np.array([c.low for c in comps])
    highs = np.array([c.high for c in comps])
    scale = comps[0].half_range
    notes = []
    V = extreme_vertices(lows, highs, total)
    overall = V.mean(axis=0)
    if design == "vertices":
        kind = "extreme vertices"
        parts = [(V, "vertex")]
        if "edges" in centroids and q >= 3:
            parts.append((face_centroids(V, lows, highs, total, 1), "edge"))
        if "faces" in centroids and q >= 4:
            parts.append((face_centroids(V, lows, highs, total, 2), "face"))
        if "overall" in centroids:
            parts.append((overall[None, :], "centroid"))
        if axial:
            parts.append((axial_blends(V, overall), "axial"))
        amounts = np.vstack([p for p, _ in parts])
        labels = [lab for p, lab in parts for _ in range(len(p))]
    else:
        if degree is None and design == "lattice":
            degree = _DEGREE[study.mixture.model]
        Z, kind = _pseudo_points(design, q, degree)
        if axial:
            Z = np.vstack([Z, (np.eye(q) + 1.0 / q) / 2])
        labels = [_label(z, centre=(design == "centroid" and
                                    np.allclose(z, 1.0 / q))) for z in Z]
        if axial:
            labels[-q:] = ["axial"] * q
        amounts = lows + Z * scale
        outside = np.any((amounts > highs + 1e-9 * total), axis=1)
        if outside.any():
            raise PlanError(f"the {kind} puts {int(outside.sum())} blend(s) above a "
                            "component's high (the highs cut into the simplex of the "
                            "lows): use --design vertices for this constrained region")
        if np.any(lows > 0):
            notes.append("laid out in L-pseudo-components: the lattice spans the smaller "
                         "simplex above every component's low")
    # the process factors' full factorial, every blend at every corner: a numeric
    # factor at its low and high, a categorical one at each of its levels (coded as
    # tradeoff.study.coding does: -1/+1 for two, the position 0, 1, 2 ... for more)
    procs = process_factors_of(study)
    corners = np.array(list(itertools.product(*[_settings(f) for f in procs]))) \
        if procs else np.zeros((1, 0))
    balance = int(np.argmax(highs - lows))
    decimals = max(0, 4 - int(math.floor(math.log10(total))))
    amounts = round_to_total(amounts, total, balance, decimals)
    over = np.any((amounts < lows - 10 ** -decimals) | (amounts > highs + 10 ** -decimals),
                  axis=1)
    if over.any():  # pragma: no cover - rounding is far below any bound's scale
        notes.append("rounding put a blend a hair outside a bound: check the sheet")
    rows_a, rows_p, point = [], [], []
    for _ in range(replicates):
        for a, lab in zip(amounts, labels):
            for c in corners:
                rows_a.append(a)
                rows_p.append(c)
                point.append(lab)
    if center:
        cen = round_to_total(overall[None, :], total, balance, decimals)[0]
        cats = [j for j, f in enumerate(procs) if f.is_categorical]
        cells = list(itertools.product(*[_settings(procs[j]) for j in cats])) or [()]
        for i in range(center):
            p = np.zeros(len(procs))
            for j, lev in zip(cats, cells[i % len(cells)]):
                p[j] = lev
            rows_a.append(cen)
            rows_p.append(p)
            point.append("centroid")
    A = np.array(rows_a)
    Pc = np.array(rows_p).reshape(len(A), len(procs))
    n = len(A)
    order = np.random.default_rng([int(seed), 14]).permutation(n)
    table = pd.DataFrame({"run": [str(i) for i in range(1, n + 1)],
                          "std_order": np.arange(1, n + 1)[order],
                          "run_order": np.arange(1, n + 1), "block": 1,
                          "point": np.asarray(point, dtype=object)[order]})
    for j, c in enumerate(comps):
        table[c.name] = A[order, j]
    from ..study.coding import decode_values

    for j, f in enumerate(procs):
        values = decode_values(f, Pc[order, j])
        table[f.name] = values if f.is_categorical else np.round(values, 6) + 0.0
    factors = tuple(comps) + tuple(procs)
    coded = pd.DataFrame(
        np.hstack([(A[order] - lows) / scale, Pc[order]]),
        columns=[f.name for f in factors])
    # column order as the study lists its factors
    table = table[["run", "std_order", "run_order", "block", "point"]
                  + [f.name for f in study.factors]]
    coded = coded[[f.name for f in study.factors]]
    notes.append(f"amounts are rounded to {decimals} decimal place(s); "
                 f"'{comps[balance].name}' takes the rounding so every run adds up "
                 f"exactly to {total:g}")
    if procs:
        notes.append(f"every blend is made at each of the {len(corners)} combinations of "
                     f"the process factors' lows and highs (every level of a categorical "
                     f"one) ({', '.join(f.name for f in procs)})")
    return MixturePlan(factors=tuple(study.factors), runs=table, coded=coded, kind=kind,
                       balance=comps[balance].name, notes=tuple(notes))


def _settings(factor) -> np.ndarray:
    """A process factor's coded settings in the plan: low and high, or every level."""
    from ..study.coding import level_codes

    return level_codes(factor) if factor.is_categorical else np.array([-1.0, 1.0])


def _evaluate(study, plan: MixturePlan) -> dict:
    """Which terms of the study's mixture model the plan can estimate, and error df."""
    from ..model.levels import factor_levels
    from ..model.scheffe import mixture_model_terms
    from ..model.dependence import find_aliases
    from ..model.terms import model_matrix

    comps = components_of(study)
    X = plan.coded.to_numpy(float)
    Xs = np.sort(np.round(X, 9), axis=0)
    n_settings = (1 + np.count_nonzero(np.diff(Xs, axis=0), axis=0)).tolist()
    terms = mixture_model_terms(study.factor_names, len(comps), study.mixture.model,
                                study.mixture.process, process_model=study.model,
                                n_settings=n_settings, levels=factor_levels(study.factors))
    M = model_matrix(X, terms)
    keep, aliases = find_aliases(M, terms)
    p = int(keep.sum())
    return {"model": f"{study.mixture.model} mixture"
            + ("" if study.mixture.process == "none" else
               f" x process ({study.mixture.process})"),
            "terms": len(terms), "estimable": [t.label for t, k in zip(terms, keep) if k],
            "not_estimable": {k: list(v) for k, v in aliases.items()},
            "error_df": int(len(X) - p)}


def mixture_route(args) -> tuple[dict, str] | None:
    """``tradeoff plan`` for a study with components: (report, text), else None.

    A mixture design asked for a study without components is an error; so is a
    factorial plan asked for a blend. Without ``--design`` a blend gets the
    simplex-lattice of its model's degree when no bound cuts into the simplex
    of the lows, else the extreme vertices.
    """
    from ..derive.load import load_study

    design = getattr(args, "design", None)
    study = load_study(args.study, with_data=False)
    if study.mixture is None:
        # optimal is also the plan for independent factors (plan/layouts.py)
        if design in MIXTURE_DESIGNS and design != "optimal":
            plan_mixture(study, design)  # raises: no components
        return None
    comps = components_of(study)
    if design is None:
        free = all(abs(c.high - c.low - c.half_range) <= 1e-9 * c.total for c in comps)
        design = "lattice" if free else "vertices"
        args.design = design
    if design == "optimal":
        raise PlanError("an optimal design on the constrained simplex is not available yet: "
                        "use --design vertices (with --centroids edges,overall) or lattice")
    if design not in MIXTURE_DESIGNS:
        raise PlanError(f"'{design}' is a plan for independent factors, but this study's "
                        "components add up to a whole: use --design lattice, centroid or "
                        "vertices")
    report, _, text = mixture_plan_command(args, study)
    return report, text


def mixture_plan_command(args, study) -> tuple[dict, pd.DataFrame, str]:
    """``tradeoff plan --design lattice|centroid|vertices``: report, sheet, text."""
    from .runsheet import run_sheet, write_run_sheet

    for flag, given in (("--runs", getattr(args, "runs", None) is not None),
                        ("--resolution", getattr(args, "resolution", None) is not None),
                        ("--blocks", getattr(args, "blocks", 1) != 1),
                        ("--foldover", getattr(args, "foldover", False)),
                        ("--augment", getattr(args, "augment", None) is not None)):
        if given:
            raise PlanError(f"{flag} is for factorial plans; a mixture design takes "
                            "--degree, --centroids, --axial, --center and --replicates")
    centroids = tuple(c.strip() for c in (getattr(args, "centroids", None) or "overall")
                      .split(",") if c.strip())
    plan = plan_mixture(study, args.design, degree=getattr(args, "degree", None),
                        centroids=centroids, axial=bool(getattr(args, "axial", False)),
                        center=args.center or 0, replicates=args.replicates,
                        seed=args.seed)
    sheet = run_sheet(plan, study)
    path = write_run_sheet(sheet, args.out, study=study)
    report = plan.summary()
    report["model"] = _evaluate(study, plan)
    report["run_sheet"] = str(path)
    return report, sheet, _text(report, sheet, path)


def _text(report: dict, sheet: pd.DataFrame, path) -> str:
    pts = ", ".join(f"{n} {k}" for k, n in report["points"].items())
    m = report["model"]
    lines = [f"Plan: {report['design']}: {report['total_runs']} runs, "
             f"{report['distinct_blends']} different blends ({pts})",
             f"Model '{m['model']}': {len(m['estimable'])} of {m['terms']} terms "
             f"estimable, {m['error_df']} run(s) left to estimate the run-to-run "
             "variation"]
    for term, with_ in m["not_estimable"].items():
        lines.append(f"  not estimable: {term} (aliased with {', '.join(with_) or '-'})")
    if report["notes"]:
        lines.append("Notes:")
        lines += [f"  - {n}" for n in report["notes"]]
    lines.append(f"Run sheet: {path} ({len(sheet)} runs in run order). Weigh each blend "
                 "as listed, fill in the response columns, and use the file as the "
                 "study's data file.")
    return "\n".join(lines)
