"""Two-level factorial plans: full and fractional factorials, centre points,
replicates, blocks, fold-over, and axial runs that turn a two-level study into
a central composite design.

Fractions come from a table of minimum-aberration generators (``GENERATOR_TABLE``);
the aliases they imply are computed in :mod:`tradeoff.aliases` from the
defining words, and the plan is judged in :mod:`tradeoff.evaluation` from its
model matrix. ``plan_runs`` is the one entry point for a new plan,
``augment_study`` the one for adding axial runs to runs already made.
"""
from __future__ import annotations

import math
from dataclasses import dataclass, field
from itertools import combinations, product
from typing import Sequence

import numpy as np
import pandas as pd

from .aliases import (LETTERS, alias_structure, confounded_terms, defining_subgroup,
                      generators_in_letters, parse_word, resolution, word_length,
                      word_length_pattern, word_letters, word_term)
from ..study.coding import level_codes, to_natural
from ..errors import PlanError

__all__ = [
    "GENERATOR_TABLE", "GENERATOR_SOURCE", "MAX_FACTORS", "MAX_RUNS",
    "TwoLevelDesign", "Plan", "available_designs", "choose_design",
    "fractional_design", "fold_over", "choose_block_words", "plan_runs",
]

GENERATOR_SOURCE = (
    "minimum-aberration 2^(k-p) generators as tabulated in Montgomery, Design and "
    "Analysis of Experiments, appendix table of selected fractional factorial designs "
    "(from memory); each entry's word length pattern is checked against an "
    "exhaustive search in tests/test_designs.py")

# (factors k, runs) -> generators, letters A.. for the factors in study order,
# no I. Source: Montgomery, Design and Analysis of Experiments, appendix table
# of 2^(k-p) fractional factorial designs (from memory). The same fractions
# (up to relabelling) are in Box, Hunter & Hunter (2005) Table 6.22.
GENERATOR_TABLE: dict[tuple[int, int], tuple[str, ...]] = {
    (3, 4): ("C = AB",),
    (4, 8): ("D = ABC",),
    (5, 8): ("D = AB", "E = AC"),
    (5, 16): ("E = ABCD",),
    (6, 8): ("D = AB", "E = AC", "F = BC"),
    (6, 16): ("E = ABC", "F = BCD"),
    (6, 32): ("F = ABCDE",),
    (7, 8): ("D = AB", "E = AC", "F = BC", "G = ABC"),
    (7, 16): ("E = ABC", "F = BCD", "G = ACD"),
    (7, 32): ("F = ABCD", "G = ABDE"),
    (7, 64): ("G = ABCDEF",),
    (8, 16): ("E = BCD", "F = ACD", "G = ABC", "H = ABD"),
    (8, 32): ("F = ABC", "G = ABD", "H = BCDE"),
    (8, 64): ("G = ABCD", "H = ABEF"),
    (8, 128): ("H = ABCDEFG",),
    (9, 16): ("E = ABC", "F = BCD", "G = ACD", "H = ABD", "J = ABCD"),
    (9, 32): ("F = BCDE", "G = ACDE", "H = ABDE", "J = ABCE"),
    (9, 64): ("G = ABCD", "H = ACEF", "J = CDEF"),
    (9, 128): ("H = ACDFG", "J = BCEFG"),
    (10, 16): ("E = ABC", "F = BCD", "G = ACD", "H = ABD", "J = ABCD", "K = AB"),
    (10, 32): ("F = ABCD", "G = ABCE", "H = ABDE", "J = ACDE", "K = BCDE"),
    (10, 64): ("G = BCDF", "H = ACDF", "J = ABDE", "K = ABCE"),
    (10, 128): ("H = ABCG", "J = BCDE", "K = ACDF"),
    (11, 16): ("E = ABC", "F = BCD", "G = ACD", "H = ABD", "J = ABCD", "K = AB",
               "L = AC"),
    (11, 32): ("F = ABC", "G = BCD", "H = CDE", "J = ACD", "K = ADE", "L = BDE"),
    (11, 64): ("G = CDE", "H = ABCD", "J = ABF", "K = BDEF", "L = ADEF"),
    (11, 128): ("H = ABCG", "J = BCDE", "K = ACDF", "L = ABCDEFG"),
}

MAX_FACTORS = 11
MAX_RUNS = 128  # largest two-level part offered (full factorials up to 2^7)
MAX_BLOCKS = 8


def _generator_words(generators: Sequence[str]) -> list[int]:
    words = []
    for g in generators:
        lhs, _, rhs = g.partition("=")
        words.append(parse_word(lhs) ^ parse_word(rhs))
    return words


@dataclass(frozen=True, eq=False)
class TwoLevelDesign:
    """A regular two-level design: its runs (coded, standard order) and words.

    ``subgroup`` holds the defining words (identity first); ``coded`` is the
    (runs, k) array of -1/+1 in standard order (the first factor alternates
    fastest). ``fold_word`` is set for a folded design: the contrast that
    separates the original runs from their mirror images.
    """

    k: int
    coded: np.ndarray
    subgroup: tuple[int, ...]
    source: str = ""
    fold_word: int | None = None

    @property
    def runs(self) -> int:
        return int(self.coded.shape[0])

    @property
    def resolution(self) -> int | None:
        return resolution(self.subgroup)

    @property
    def is_full(self) -> bool:
        return len(self.subgroup) == 1

    @property
    def generators(self) -> list[tuple[int, int]]:
        """``(factor index, word)`` pairs: factor = word."""
        return generators_in_letters(self.subgroup, self.k)

    def generator_text(self) -> list[str]:
        return [f"{LETTERS[i]} = {word_letters(w)}" for i, w in self.generators]

    def generator_names(self, names: Sequence[str]) -> list[str]:
        return [f"{names[i]} = {word_term(w, names)}" for i, w in self.generators]

    def defining_relation(self) -> str:
        words = sorted((w for w in self.subgroup if w), key=lambda w: (word_length(w), w))
        return "I" + "".join(f" = {word_letters(w)}" for w in words)

    def word_length_pattern(self) -> tuple[int, ...]:
        return word_length_pattern(self.subgroup, self.k)

    def aliases(self, names: Sequence[str], max_order: int = 2) -> dict[str, list[str]]:
        return alias_structure(self.subgroup, names, max_order)


def available_designs(k: int) -> list[tuple[int, int | None]]:
    """``(runs, resolution)`` of every two-level design offered for k factors.

    Resolution is ``None`` for the full factorial (nothing aliased).
    """
    out = []
    for (kk, runs), gens in sorted(GENERATOR_TABLE.items()):
        if kk == k:
            out.append((runs, resolution(defining_subgroup(_generator_words(gens)))))
    if 2 ** k <= MAX_RUNS:
        out.append((2 ** k, None))
    return out


def _describe(options: list[tuple[int, int | None]]) -> str:
    return ", ".join(f"{n} ({'full factorial' if r is None else 'resolution ' + _roman(r)})"
                     for n, r in options)


def _roman(r: int | None) -> str:
    return "full" if r is None else ("I", "II", "III", "IV", "V", "VI", "VII", "VIII",
                                     "IX", "X", "XI")[r - 1]


def choose_design(k: int, runs: int | None = None,
                  resolution_: int | None = None) -> tuple[int, tuple[str, ...]]:
    """Pick the two-level design for k factors by run count and/or resolution.

    With neither, the smallest design of resolution V or more (main effects and
    two-factor interactions all clear of each other). Returns ``(runs,
    generators)``; no generators means the full factorial.
    """
    if k < 1:
        raise PlanError("a plan needs at least one factor: add [[factors]] to the study")
    if k > MAX_FACTORS:
        raise PlanError(f"{k} factors: the table of fractions covers 2 to {MAX_FACTORS} "
                        f"factors; screen fewer factors at a time (keep the "
                        f"{MAX_FACTORS} most likely to matter) or fix some at one setting")
    options = available_designs(k)
    possible = _describe(options)
    if runs is not None:
        if runs < 2 or runs & (runs - 1):
            raise PlanError(f"{runs} runs is not possible for a two-level design: the "
                            f"run count is a power of two; for {k} factors: {possible}")
        if runs <= k:
            raise PlanError(f"{runs} runs cannot separate {k} factors (it needs more runs "
                            f"than factors): for {k} factors: {possible}")
        if runs > 2 ** k:
            raise PlanError(f"{runs} runs is more than the full factorial of {k} factors "
                            f"({2 ** k} runs): plan {2 ** k} runs and use --replicates for "
                            "more")
        match = [o for o in options if o[0] == runs]
        if not match:
            raise PlanError(f"{runs} runs for {k} factors is not in the table of "
                            f"fractions: for {k} factors: {possible}")
        found = match[0][1]
        if resolution_ is not None and found is not None and found < resolution_:
            better = [o for o in options if o[1] is None or o[1] >= resolution_]
            hint = (f"the smallest with resolution {_roman(resolution_)} or more has "
                    f"{better[0][0]} runs" if better else "no design in the table reaches it")
            raise PlanError(f"resolution {_roman(resolution_)} cannot be reached with "
                            f"{k} factors in {runs} runs (that fraction has resolution "
                            f"{_roman(found)}): {hint}; for {k} factors: {possible}")
    else:
        wanted = 5 if resolution_ is None else resolution_
        if resolution_ is not None and not 3 <= resolution_ <= 11:
            raise PlanError(f"resolution {resolution_} is not one a plan can ask for: "
                            "use 3 (main effects clear of each other), 4 (main effects "
                            "clear of two-factor interactions) or 5 (two-factor "
                            "interactions clear of each other)")
        match = [o for o in options if o[1] is None or o[1] >= wanted]
        if not match:
            raise PlanError(f"resolution {_roman(wanted)} is not reachable for {k} factors "
                            f"within {MAX_RUNS} runs: for {k} factors: {possible}")
        runs = match[0][0]
    return runs, GENERATOR_TABLE.get((k, runs), ())


def fractional_design(k: int, runs: int | None = None,
                      resolution_: int | None = None) -> TwoLevelDesign:
    """The two-level design (full or fraction) for k factors, in standard order."""
    runs, gens = choose_design(k, runs, resolution_)
    q = runs.bit_length() - 1
    words = _generator_words(gens)
    rows = np.arange(runs)[:, None]
    base = np.where((rows >> np.arange(q)) & 1, 1.0, -1.0)  # first factor fastest
    coded = np.empty((runs, k))
    coded[:, :q] = base
    for w in words:
        target = w.bit_length() - 1
        rest = w ^ (1 << target)
        cols = [j for j in range(q) if rest >> j & 1]
        coded[:, target] = np.prod(base[:, cols], axis=1)
    source = "full factorial" if not gens else GENERATOR_SOURCE
    return TwoLevelDesign(k=k, coded=coded, subgroup=tuple(defining_subgroup(words)),
                          source=source)


def fold_over(design: TwoLevelDesign) -> TwoLevelDesign:
    """The design plus its mirror image (every sign reversed).

    Only the even-length defining words survive, so no main effect stays
    aliased with a two-factor interaction.
    """
    odd = [w for w in design.subgroup if word_length(w) % 2]
    if design.is_full:
        raise PlanError("a full factorial has no aliases to separate, so a fold-over "
                        "would only repeat it: use --replicates to repeat runs")
    if not odd:
        raise PlanError(f"every defining word of this fraction ({design.defining_relation()})"
                        " has even length, so its mirror image is the same runs again: "
                        f"to separate two-factor interactions plan more runs (--runs "
                        f"{2 * design.runs}) instead of --foldover")
    even = tuple(w for w in design.subgroup if word_length(w) % 2 == 0)
    return TwoLevelDesign(k=design.k, coded=np.vstack([design.coded, -design.coded]),
                          subgroup=even, source=design.source + "; folded over",
                          fold_word=min(odd, key=lambda w: (word_length(w), w)))


def choose_block_words(subgroup: Sequence[int], k: int, n_blocks: int) -> list[int]:
    """Block generators for ``n_blocks`` (2, 4 or 8) blocks of a regular design.

    Every product of block generators is a block contrast; none may be a main
    effect (or an alias of one). Among the allowed choices the one confounding
    the fewest two-factor interactions, then three-factor ones, ... is taken
    (block minimum aberration, counted over each contrast's alias set).
    """
    b = int(round(math.log2(n_blocks)))
    if n_blocks < 2 or 2 ** b != n_blocks or n_blocks > MAX_BLOCKS:
        raise PlanError(f"{n_blocks} blocks is not possible: a two-level plan splits "
                        "into 2, 4 or 8 blocks")
    sub = np.asarray(list(subgroup), dtype=np.int64)
    words = np.arange(2 ** k, dtype=np.int64)
    rep = (words[:, None] ^ sub[None, :]).min(axis=1)  # coset representative
    reps, rep_index = np.unique(rep, return_inverse=True)
    lengths = np.array([word_length(int(w)) for w in words])
    counts = np.zeros((len(reps), k + 1), dtype=np.int64)
    np.add.at(counts, (rep_index, lengths), 1)
    cand = np.flatnonzero((reps != 0) & (counts[:, 1] == 0))
    if len(cand) < b:
        combos = np.empty((0, b), dtype=np.int64)
    else:
        combos = np.array(list(combinations(cand, b)), dtype=np.int64).reshape(-1, b)
    best = None
    chunk = 100_000
    for start in range(0, len(combos), chunk):
        c = reps[combos[start:start + chunk]]  # (m, b) words
        span = np.zeros((len(c), 1), dtype=np.int64)
        for j in range(b):
            span = np.concatenate([span, span ^ c[:, j:j + 1]], axis=1)
        idx = rep_index[span]  # coset of each block contrast
        is_id = reps[idx] == 0
        # Independent generators: every product falls in a different coset.
        distinct = (np.diff(np.sort(idx, axis=1), axis=1) != 0).all(axis=1)
        ok = (~is_id[:, 1:]).all(axis=1) & distinct
        ok &= (counts[idx][:, :, 1].sum(axis=1) == 0)
        if not ok.any():
            continue
        total = counts[idx].sum(axis=1)  # (m, k+1) alias words per length
        order = np.lexsort(total[:, ::-1].T)
        order = order[ok[order]]
        key = tuple(total[order[0]])
        if best is None or key < best[0]:
            best = (key, [int(w) for w in c[order[0]]])
    if best is None:
        raise PlanError(f"these runs cannot be split into {n_blocks} blocks without "
                        f"mixing up a main effect with the block differences: use fewer "
                        "blocks or more runs")
    return best[1]


def _contrast(coded: np.ndarray, word: int) -> np.ndarray:
    cols = [j for j in range(coded.shape[1]) if word >> j & 1]
    return np.prod(coded[:, cols], axis=1)


def _block_numbers(coded: np.ndarray, words: Sequence[int]) -> np.ndarray:
    """Block 1, 2, ... from the signs of the block contrasts."""
    number = np.zeros(coded.shape[0], dtype=int)
    for j, w in enumerate(words):
        number += (_contrast(coded, w) > 0).astype(int) << j
    return number + 1


@dataclass(frozen=True, eq=False)
class Plan:
    """A plan: its runs in natural and coded units, and what it can estimate.

    ``runs`` is the run sheet's table: columns ``run`` (id, text), ``std_order``,
    ``run_order``, ``block``, ``point`` (factorial, centre, axial), then one per
    factor in natural units (level names for categorical factors), rows in run
    order. ``coded`` has the same rows, one column per factor in coded units.
    """

    factors: tuple
    runs: pd.DataFrame
    coded: pd.DataFrame
    design: TwoLevelDesign | None
    blocks: list[dict] = field(default_factory=list)
    notes: tuple[str, ...] = ()
    alpha: float | None = None
    kind: str = ""
    # the factors the two-level design is written in (letters, generators,
    # aliases), when some factor (three or more levels) is crossed with it
    design_names: tuple | None = None
    # coded runs already made that the plan's runs were chosen around (--keep)
    kept: np.ndarray | None = None

    @property
    def names(self) -> list[str]:
        return list(self.design_names) if self.design_names is not None else \
            [f.name for f in self.factors]

    def summary(self) -> dict:
        """JSON-ready description (runs, resolution, generators, aliases, blocks)."""
        d = self.design
        names = self.names
        counts = self.runs["point"].value_counts()
        out: dict = {
            "design": self.kind,
            "runs": int(d.runs) if d is not None else 0,
            "total_runs": int(len(self.runs)),
            "factorial_runs": int(counts.get("factorial", 0)),
            "centre_runs": int(counts.get("centre", 0)),
            "axial_runs": int(counts.get("axial", 0)),
            "blocks_count": int(self.runs["block"].nunique()),
            "resolution": d.resolution if d is not None else None,
            "generators": d.generator_text() if d is not None else [],
            "generators_named": d.generator_names(names) if d is not None else [],
            "letters": {LETTERS[i]: n for i, n in enumerate(names)},
            "defining_relation": d.defining_relation() if d is not None else None,
            "aliases": d.aliases(names) if d is not None else {},
            "blocks": self.blocks,
            "notes": list(self.notes),
        }
        if self.alpha is not None:
            out["alpha"] = self.alpha
        return out


def _categorical_cells(factors) -> list[tuple[float, ...]]:
    """Every combination of coded levels of the categorical factors."""
    return [tuple(c) for c in product(*[level_codes(f) for f in factors
                                        if f.is_categorical])]


def _centre_rows(factors, n: int, what: str) -> np.ndarray:
    """``n`` centre runs: numeric factors at 0, spread evenly over categorical levels."""
    if n == 0:
        return np.empty((0, len(factors)))
    numeric = [f for f in factors if not f.is_categorical]
    cats = [f for f in factors if f.is_categorical]
    if not numeric:
        raise PlanError("centre points need a numeric factor, and every factor here is "
                        f"categorical ({', '.join(f.name for f in cats)}): leave out "
                        "--center and use --replicates to repeat runs, which also "
                        "measures the run-to-run variation")
    cells = _categorical_cells(factors)
    if n % len(cells):
        names = ", ".join(f.name for f in cats)
        raise PlanError(f"{n} centre points {what} cannot be spread evenly over the "
                        f"{len(cells)} level combinations of the categorical factor(s) "
                        f"{names}: ask for a multiple of {len(cells)}, such as "
                        f"{len(cells)} or {2 * len(cells)}")
    rows = np.zeros((n, len(factors)))
    cat_cols = [j for j, f in enumerate(factors) if f.is_categorical]
    for i in range(n):
        for j, level in zip(cat_cols, cells[i % len(cells)]):
            rows[i, j] = level
    return rows


def _finish(factors, coded: np.ndarray, block: np.ndarray, point: list[str],
            seed: int, first_id: int = 1, id_prefix: str = "") -> tuple[pd.DataFrame,
                                                                          pd.DataFrame]:
    """Randomise within blocks (blocks in order) and build the run tables.

    Each block is shuffled with its own generator seeded by (seed, block), so a
    block's order does not change when later blocks are added (a fold-over or
    axial block planned afterwards leaves the first block's order as it was).
    """
    n = coded.shape[0]
    std = np.arange(1, n + 1)
    order = []
    for b in np.unique(block):
        members = np.flatnonzero(block == b)
        rng = np.random.default_rng([int(seed), int(b)])
        order.extend(members[rng.permutation(len(members))])
    order = np.asarray(order, dtype=int)
    natural = to_natural(factors, coded[order]) if n else pd.DataFrame(
        {f.name: [] for f in factors})
    for j, f in enumerate(factors):
        if not f.is_categorical:
            natural[f.name] = _tidy(natural[f.name].to_numpy(float), f.half_range)
    ids = [f"{id_prefix}{first_id + i}" for i in range(n)]
    table = pd.DataFrame({"run": ids, "std_order": std[order],
                          "run_order": np.arange(1, n + 1), "block": block[order],
                          "point": np.asarray(point, dtype=object)[order]})
    table = pd.concat([table, natural.reset_index(drop=True)], axis=1)
    coded_df = pd.DataFrame(coded[order], columns=[f.name for f in factors])
    return table, coded_df


def _tidy(values: np.ndarray, half_range: float) -> np.ndarray:
    """Round natural settings to a precision that still resolves the coded scale."""
    decimals = max(0, 4 - int(math.floor(math.log10(half_range))))
    return np.round(values, decimals) + 0.0


def plan_runs(study, *, runs: int | None = None, resolution: int | None = None,
              center: int = 0, replicates: int = 1, blocks: int = 1,
              foldover: bool = False, seed: int | None = None) -> Plan:
    """Plan a two-level factorial (or fraction) for the study's factors.

    Parameters
    ----------
    study : a Study (its runs are not needed).
    runs : run count of the two-level part (a power of two); None to choose by
        ``resolution``.
    resolution : the least resolution wanted (3, 4, 5, ...); with ``runs`` too it
        is checked, alone it picks the smallest such fraction. Neither: the
        smallest plan of resolution V or more.
    center : centre points in each block (numeric factors at their centre,
        spread evenly over the levels of categorical factors).
    replicates : how many times the two-level part is run.
    blocks : 1, 2, 4 or 8 blocks, confounded with high-order interactions.
    foldover : add the mirror image of the fraction as further block(s).
    seed : seed of the random run order (default: the study's seed).

    Returns
    -------
    Plan
    """
    factors = tuple(study.factors)
    # Factors of three or more levels are crossed with the two-level design of
    # the others: the design is run at every combination of their levels.
    multi = [j for j, f in enumerate(factors) if f.is_categorical and len(f.levels) > 2]
    two_idx = [j for j in range(len(factors)) if j not in multi]
    names = [factors[j].name for j in two_idx]
    k = len(two_idx)
    seed = study.seed if seed is None else seed
    for value, what, least in ((center, "--center", 0), (replicates, "--replicates", 1),
                               (blocks, "--blocks", 1)):
        if not isinstance(value, (int, np.integer)) or value < least:
            raise PlanError(f"{what} must be a whole number of at least {least}, "
                            f"found {value}")
    if multi and not k:
        raise PlanError("every factor here is categorical with three or more levels, so "
                        "there is no two-level design to make: use --design optimal")
    design = fractional_design(k, runs, resolution)
    notes: list[str] = []
    # Block words are chosen in the design as run (before any fold-over).
    block_words = choose_block_words(design.subgroup, k, blocks) if blocks > 1 else []
    base_block = _block_numbers(design.coded, block_words)
    block_report = []
    if foldover:
        folded = fold_over(design)
        f = folded.fold_word
        # In the folded design an odd block word changes sign with the mirror
        # image; times the fold word it gives the same grouping there.
        words = [w if word_length(w) % 2 == 0 else w ^ f for w in block_words]
        two = folded.coded
        block = np.concatenate([base_block, base_block + blocks])
        report_words = [f] + words
        labels = ["fold-over (original runs vs mirror image)"] + \
            [f"block generator {i + 1}" for i in range(len(words))]
        report_sub = folded.subgroup
        design_used = folded
    else:
        two = design.coded
        block = base_block
        report_words = block_words
        labels = [f"block generator {i + 1}" for i in range(len(block_words))]
        report_sub = design.subgroup
        design_used = design
    # Each block contrast: every generator, then every product of generators.
    for r in range(1, len(report_words) + 1):
        for combo in combinations(range(len(report_words)), r):
            w = 0
            for i in combo:
                w ^= report_words[i]
            conf = confounded_terms(w, report_sub, names)
            short = [t for t in conf if t.count(":") <= 2] or conf[:1]
            label = labels[combo[0]] if r == 1 else \
                " x ".join(labels[i].split(" (")[0] for i in combo)
            block_report.append({"generator": label, "word": word_letters(w),
                                 "confounded_with": short})
    if any(":" in t and t.count(":") == 1 for b in block_report
           for t in b["confounded_with"]):
        notes.append("a two-factor interaction is confounded with the block differences: "
                     "it cannot be told apart from a shift between blocks")
    if multi:
        cells = list(product(*[level_codes(factors[j]) for j in multi]))
        parts = []
        for cell in cells:
            rows = np.zeros((two.shape[0], len(factors)))
            rows[:, two_idx] = two
            rows[:, multi] = cell
            parts.append(rows)
        two = np.vstack(parts)
        block = np.tile(block, len(cells))
        notes.append("the two-level design is run at each of the "
                     f"{len(cells)} level combinations of "
                     f"{', '.join(factors[j].name for j in multi)}")
    n_two = two.shape[0]
    coded = np.vstack([two] * replicates)
    block_all = np.concatenate([block] * replicates)
    point = ["factorial"] * (n_two * replicates)
    n_blocks = int(block.max())
    if center:
        centre = [_centre_rows(factors, center, "per block") for _ in range(n_blocks)]
        coded = np.vstack([coded] + centre)
        block_all = np.concatenate([block_all] + [np.full(center, b + 1)
                                                  for b in range(n_blocks)])
        point += ["centre"] * (center * n_blocks)
    table, coded_df = _finish(factors, coded, block_all, point, seed)
    if design_used.resolution == 3:
        notes.append("resolution III: main effects are aliased with two-factor "
                     "interactions; fold the plan over (--foldover) to separate them")
    elif design_used.resolution == 4:
        notes.append("resolution IV: main effects are clear, but two-factor "
                     "interactions are aliased in pairs (see aliases)")
    if center == 0 and replicates == 1:
        notes.append("no centre points and no replicates: the run-to-run variation "
                     "and curvature cannot be checked; consider --center 4")
    kind = ("full factorial" if design.is_full else
            f"2^({k}-{k - (design.runs.bit_length() - 1)}) fraction")
    if foldover:
        kind += " with its fold-over"
    return Plan(factors=factors, runs=table, coded=coded_df, design=design_used,
                blocks=block_report, notes=tuple(notes), kind=kind,
                design_names=tuple(names) if multi else None)
