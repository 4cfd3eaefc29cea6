"""Definitive screening designs: many factors, three levels, few runs.

A definitive screening design (Jones & Nachtsheim 2011, J. Quality
Technology) for m numeric factors is a conference matrix C folded over (the
runs C, then -C) plus a centre run: 2n + 1 runs with n = m for even m, and for
odd m the design of the next even order with a column left over (Xiao, Lin &
Bai 2012; from memory). Published properties, each checked in tests/plan:

- every factor at three levels (-1, 0, +1);
- main effects orthogonal to each other, and to every two-factor interaction
  and square (fold-over: a main-effect column is odd, a second-order column even);
- no two second-order columns fully aliased (correlation below 1).

``extra`` runs come from fake factors: columns of a larger conference matrix
given to no factor (Jones & Nachtsheim 2017, Technometrics, recommend 4 or
more extra runs so the analysis has an error estimate free of second-order
terms). Columns left over for odd m are fake factors too.

Two-level categorical factors (Jones & Nachtsheim 2013, J. Quality Technology;
the construction from memory, its properties checked directly): the
categorical column's two zeros become +1 in both runs of that fold-over pair,
and two centre runs with the categorical factors at -1 replace the one centre
run, so each categorical column is balanced and orthogonal to every numeric
main effect.

Blocks keep each fold-over pair together and give each block one centre run,
so every numeric main effect sums to zero within every block: the blocks are
orthogonal to the main effects (common practice for fold-over designs;
checked directly).
"""
from __future__ import annotations

from itertools import combinations

import numpy as np

from ..errors import PlanError
from .conference import LARGEST_ORDER, conference_matrix, conference_order

__all__ = ["definitive_points", "plan_definitive", "screening_properties",
           "DESIGN_NAME", "SCREENING_LIMIT"]

DESIGN_NAME = "definitive-screening"
SCREENING_LIMIT = LARGEST_ORDER


def definitive_points(numeric: int, categorical: int = 0, *, extra: int = 0,
                      blocks: int = 1, centre: int | None = None):
    """The coded runs of a definitive screening design.

    Parameters
    ----------
    numeric, categorical : numbers of numeric and two-level categorical factors.
    extra : runs added through fake factors (even, 0 or more).
    blocks : blocks of whole fold-over pairs, each with one centre run.
    centre : centre runs without blocks (default 1; 2 with categorical factors).

    Returns
    -------
    coded : (N, numeric + categorical), numeric columns first.
    point : ``fold-over`` or ``centre`` per run.
    pair : (N,) the fold-over pair of each run (0 for centre runs).
    block : (N,) block numbers from 1.
    order : the conference matrix's order n (n - numeric - categorical fake factors).
    """
    if numeric < 3:
        raise PlanError(f"a definitive screening design needs at least 3 numeric factors, "
                        f"and the study has {numeric}: use a factorial plan")
    if isinstance(extra, bool) or not isinstance(extra, (int, np.integer)) or extra < 0 \
            or extra % 2:
        raise PlanError(f"--extra must be an even number of runs, 0 or more (each fake "
                        f"factor adds 2), found {extra}")
    k = numeric + categorical
    if k > SCREENING_LIMIT:
        raise PlanError(f"{k} factors are more than the definitive screening designs here "
                        f"cover (up to {SCREENING_LIMIT}): screen in two groups, or use a "
                        "two-level fraction")
    wanted = k + extra // 2
    if wanted > SCREENING_LIMIT:
        raise PlanError(f"{k} factors with --extra {extra} need a conference matrix of "
                        f"order {wanted}, more than the {SCREENING_LIMIT} covered here: "
                        "ask for fewer extra runs")
    n = conference_order(wanted)
    C = np.array(conference_matrix(n))[:, :k]
    if blocks < 1 or blocks > n:
        raise PlanError(f"--blocks must be from 1 to {n} (one fold-over pair at least in "
                        f"each block), found {blocks}")
    if categorical and blocks != 1:
        raise PlanError("blocks with categorical factors are not planned here: leave out "
                        "--blocks, or make the categorical factor a block")
    top, bottom = C.copy(), -C
    for j in range(numeric, k):  # categorical columns: the pair's zero becomes +1 twice
        top[j, j] = bottom[j, j] = 1.0
    pair_ids = np.arange(1, n + 1)
    if blocks > 1:
        if centre not in (None, blocks):
            raise PlanError("with --blocks each block gets one centre run: leave out --center")
        block_of = (pair_ids - 1) % blocks + 1
        rows, points, pairs, block = [], [], [], []
        for b in range(1, blocks + 1):
            mine = np.flatnonzero(block_of == b)
            rows += [top[mine], bottom[mine], np.zeros((1, k))]
            points += ["fold-over"] * (2 * len(mine)) + ["centre"]
            pairs += list(pair_ids[mine]) * 2 + [0]
            block += [b] * (2 * len(mine) + 1)
        return (np.vstack(rows), points, np.array(pairs), np.array(block), n)
    default = 2 if categorical else 1
    centre = default if centre is None else centre
    if centre < default:
        raise PlanError(f"a definitive screening design needs at least {default} centre "
                        f"run{'s' if default > 1 else ''} (the squares cannot be told from "
                        f"the mean without), found --center {centre}")
    middle = np.zeros((centre, k))
    middle[:, numeric:] = -1.0 if categorical else 0.0
    if categorical and centre % 2:
        middle[-1, numeric:] = 1.0  # an odd count keeps the balance as close as it goes
    coded = np.vstack([top, bottom, middle])
    points = ["fold-over"] * (2 * n) + ["centre"] * centre
    pairs = np.concatenate([pair_ids, pair_ids, np.zeros(centre, dtype=int)])
    return coded, points, pairs, np.ones(len(coded), dtype=int), n


def plan_definitive(study, *, extra: int = 0, blocks: int = 1, center: int | None = None,
                    runs: int | None = None, seed: int = 0):
    """A definitive screening design for the study's factors, as a Plan."""
    from .designs import Plan, _finish

    if runs is not None:
        raise PlanError("--runs is not used by a definitive screening design (its runs "
                        "follow from the factors; add runs with --extra): leave it out")
    num = [j for j, f in enumerate(study.factors) if not f.is_categorical]
    cat = [j for j, f in enumerate(study.factors) if f.is_categorical]
    wide = [study.factors[j].name for j in cat if len(study.factors[j].levels) != 2]
    if wide:
        raise PlanError(f"categorical factor '{wide[0]}' has more than two levels: a "
                        "definitive screening design takes two-level categorical factors "
                        "only; use --design optimal")
    if study.constraints:
        raise PlanError("the study has rules that cut the region, and a definitive "
                        "screening design uses the whole box: use --design optimal")
    coded_nc, point, pair, block, n = definitive_points(
        len(num), len(cat), extra=extra, blocks=blocks, centre=center)
    coded = np.zeros((len(coded_nc), len(study.factors)))
    coded[:, num + cat] = coded_nc
    fake = n - len(num) - len(cat)
    notes = [f"conference matrix of order {n}"
             + (f"; {fake} column{'s' if fake > 1 else ''} given to no factor (fake "
                f"factor{'s' if fake > 1 else ''}): they estimate the run-to-run error "
                "free of second-order terms" if fake else "")]
    if extra == 0:
        notes.append("--extra 4 adds 4 runs (2 fake factors) so the screening analysis "
                     "has an error estimate of its own (Jones & Nachtsheim 2017)")
    if 2 * n > 2 * (len(num) + len(cat)) + extra:
        notes.append(f"{2 * n - 2 * (len(num) + len(cat)) - extra} more runs than 2 per "
                     "factor plus --extra: conference matrices come in even orders (none of "
                     "order 22)")
    kind = (f"definitive screening design, {len(num) + len(cat)} factors: {n} fold-over "
            f"pairs + {point.count('centre')} centre")
    table, coded_df = _finish(tuple(study.factors), coded, np.asarray(block), point, seed)
    plan = Plan(factors=tuple(study.factors), runs=table, coded=coded_df, design=None,
                blocks=[], notes=tuple(notes), kind=kind)
    # the pair each run belongs to, in run order (std_order counts from 1)
    plan.runs.insert(plan.runs.columns.get_loc("point") + 1, "pair",
                     [int(pair[s - 1]) or None for s in plan.runs["std_order"]])
    plan.runs["pair"] = plan.runs["pair"].astype("Int64")
    return plan


def screening_properties(study, coded: np.ndarray, *, subsets_limit: int = 5000) -> dict:
    """What a screening design's second-order terms do (JSON-ready).

    ``main_vs_second_order``: the largest |correlation| between a main effect
    and a square or two-factor interaction (0 for a definitive screening
    design); ``second_order``: the largest |correlation| among second-order
    columns, and how many pairs are fully aliased (|r| = 1);
    ``quadratic_in_three``: the share of sets of three numeric factors whose
    full quadratic model can be fitted from the runs.
    """
    num = [j for j, f in enumerate(study.factors) if not f.is_categorical]
    names = [f.name for f in study.factors]
    X = np.asarray(coded, dtype=float)
    main = {names[j]: X[:, j] for j in range(X.shape[1])}
    second = {f"{names[j]}^2": X[:, j] ** 2 for j in num}
    for a, b in combinations(range(X.shape[1]), 2):
        second[f"{names[a]}:{names[b]}"] = X[:, a] * X[:, b]

    def corr(u, v):
        u, v = u - u.mean(), v - v.mean()
        d = np.linalg.norm(u) * np.linalg.norm(v)
        return 0.0 if d == 0 else float(u @ v / d)

    me_so = max((abs(corr(u, v)) for u in main.values() for v in second.values()),
                default=0.0)
    labels = list(second)
    S = np.column_stack([second[t] for t in labels])
    S = S - S.mean(axis=0)
    norms = np.linalg.norm(S, axis=0)
    norms[norms == 0] = 1.0
    R = (S / norms).T @ (S / norms)
    iu = np.triu_indices(len(labels), 1)
    r = np.abs(R[iu])
    full = [f"{labels[i]} = {labels[j]}" for i, j, v in zip(*iu, r) if v > 1 - 1e-9]
    sets = list(combinations(num, 3))
    fitted = 0
    for trio in sets[:subsets_limit]:
        cols = [np.ones(len(X))] + [X[:, j] for j in trio] + [X[:, j] ** 2 for j in trio]
        cols += [X[:, a] * X[:, b] for a, b in combinations(trio, 2)]
        M = np.column_stack(cols)
        fitted += int(np.linalg.matrix_rank(M) == M.shape[1])
    checked = min(len(sets), subsets_limit)
    return {"main_vs_second_order": round(me_so, 6),
            "second_order": {"largest_correlation": round(float(r.max()) if len(r) else 0.0,
                                                          4),
                             "pairs": int(len(r)),
                             "fully_aliased": full,
                             "share_uncorrelated": round(float(np.mean(r < 1e-9))
                                                         if len(r) else 1.0, 4)},
            "quadratic_in_three": {"sets": checked, "fittable": fitted,
                                   "share": round(fitted / checked, 4) if checked else None}}


def screening_lines(props: dict) -> list[str]:
    """The screening properties in words, for the plan's text."""
    so = props["second_order"]
    q3 = props["quadratic_in_three"]
    lines = ["Second-order terms (squares and two-factor interactions):",
             f"  on the main effects: largest correlation {props['main_vs_second_order']:.3g}"
             + (" (none: main effects are clear of them)"
                if props["main_vs_second_order"] < 1e-6 else ""),
             f"  among themselves: largest correlation {so['largest_correlation']:.3g}; "
             + (f"{len(so['fully_aliased'])} pairs fully aliased: "
                + ", ".join(so["fully_aliased"][:5]) if so["fully_aliased"]
                else "no pair fully aliased")]
    if q3["sets"]:
        lines.append(f"  models that can be fitted: main effects of every factor; the full "
                     f"quadratic model in {q3['fittable']} of {q3['sets']} sets of three "
                     "numeric factors")
    return lines
