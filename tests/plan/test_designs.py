"""Two-level plans: published fractions, balance, aliases from the design matrix,
blocks, centre points, fold-over, axial augmentation and the bad-input messages."""
from __future__ import annotations

import itertools
from math import comb

import numpy as np
import pytest

from tradeoff import PlanError, load_study
from tradeoff.plan.aliases import (LETTERS, alias_chains, defining_subgroup, parse_word,
                              resolution, word_length_pattern)
from tradeoff.plan.designs import GENERATOR_TABLE, choose_block_words, fold_over, fractional_design, plan_runs
from tradeoff.plan.augment import augment_study
from tradeoff.plan.evaluation import evaluate_design

from conftest import DEMO


def _words(gens):
    out = []
    for g in gens:
        lhs, _, rhs = g.partition("=")
        out.append(parse_word(lhs) ^ parse_word(rhs))
    return out


def _study(tmp_path, factors: str, data: str | None = None, name="s.toml"):
    text = '[study]\nname = "t"\ndata = "runs.csv"\n' + factors + \
        '[[responses]]\nname = "y"\n'
    path = tmp_path / name
    path.write_text(text, encoding="utf-8")
    if data is not None:
        (tmp_path / "runs.csv").write_text(data, encoding="utf-8")
    return path


def _numeric(names, low=0, high=10):
    return "".join(f'[[factors]]\nname = "{n}"\nlow = {low}\nhigh = {high}\n'
                   for n in names)


# Resolutions of the minimum-aberration fractions: Box, Hunter & Hunter (2005)
# Table 6.22 and Montgomery, Design and Analysis of Experiments, appendix table
# of 2^(k-p) designs (from memory).
PUBLISHED_RESOLUTION = {
    (3, 4): 3, (4, 8): 4, (5, 8): 3, (5, 16): 5, (6, 8): 3, (6, 16): 4, (6, 32): 6,
    (7, 8): 3, (7, 16): 4, (7, 32): 4, (7, 64): 7, (8, 16): 4, (8, 32): 4, (8, 64): 5,
    (8, 128): 8, (9, 16): 3, (9, 32): 4, (9, 64): 4, (9, 128): 6, (10, 16): 3,
    (10, 32): 4, (10, 64): 4, (10, 128): 5, (11, 16): 3, (11, 32): 4, (11, 64): 4,
    (11, 128): 5,
}


@pytest.mark.parametrize("key", sorted(GENERATOR_TABLE))
def test_table_resolution_matches_published(key):
    design = fractional_design(*key)
    assert design.runs == key[1]
    assert design.resolution == PUBLISHED_RESOLUTION[key]


def test_table_covers_three_to_eleven_factors():
    for k in range(3, 12):
        assert any(kk == k for kk, _ in GENERATOR_TABLE)


@pytest.mark.parametrize("key, generators, wlp", [
    # Montgomery appendix table (from memory); word counts by length from the
    # defining relations given there, e.g. 2^(6-2): I = ABCE = BCDF = ADEF.
    ((6, 16), ["E = ABC", "F = BCD"], {4: 3}),
    ((7, 16), ["E = ABC", "F = BCD", "G = ACD"], {4: 7}),
    ((8, 16), ["E = BCD", "F = ACD", "G = ABC", "H = ABD"], {4: 14, 8: 1}),
    ((5, 16), ["E = ABCD"], {5: 1}),
    ((7, 8), ["D = AB", "E = AC", "F = BC", "G = ABC"], {3: 7, 4: 7, 7: 1}),
])
def test_published_generators_and_word_counts(key, generators, wlp):
    design = fractional_design(*key)
    assert design.generator_text() == generators
    pattern = design.word_length_pattern()
    assert {i + 1: c for i, c in enumerate(pattern) if c} == wlp


def _exhaustive_best_pattern(k: int, runs: int) -> tuple[int, ...]:
    """Minimum aberration by brute force: every choice of p generator columns
    among the interactions of the q = log2(runs) base factors (independent of the
    table)."""
    q = runs.bit_length() - 1
    p = k - q
    cands = np.array([m for m in range(1, 2 ** q) if bin(m).count("1") >= 2])
    combos = np.array(list(itertools.combinations(range(len(cands)), p)))
    masks = cands[combos]
    coefs = np.array([[c >> j & 1 for j in range(p)] for c in range(1, 2 ** p)])
    base = np.zeros((len(masks), len(coefs)), dtype=np.int64)
    for j in range(p):
        base ^= np.where(coefs[:, j][None, :] == 1, masks[:, j:j + 1], 0)
    bits = np.zeros_like(base)
    b = base.copy()
    while b.any():
        bits += b & 1
        b >>= 1
    lengths = bits + coefs.sum(axis=1)[None, :]
    pattern = np.stack([(lengths == L).sum(axis=1) for L in range(1, k + 1)], axis=1)
    best = pattern[np.lexsort(pattern.T[::-1])[0]]
    return tuple(int(x) for x in best)


SMALL_ENOUGH = [key for key in sorted(GENERATOR_TABLE)
                if comb(2 ** (key[1].bit_length() - 1) - key[1].bit_length(),
                        key[0] - key[1].bit_length() + 1) <= 250_000]


@pytest.mark.parametrize("key", SMALL_ENOUGH)
def test_table_entry_is_minimum_aberration(key):
    """The recalled generators reach the smallest word length pattern that an
    exhaustive search finds (the definition of minimum aberration,
    Fries & Hunter 1980)."""
    design = fractional_design(*key)
    assert design.word_length_pattern() == _exhaustive_best_pattern(*key)


@pytest.mark.parametrize("key", sorted(GENERATOR_TABLE) + [(k, 2 ** k) for k in range(1, 8)])
def test_every_design_is_balanced_and_orthogonal(key):
    X = fractional_design(*key).coded
    n, k = X.shape
    assert set(np.unique(X)) == {-1.0, 1.0}
    assert np.all(X.sum(axis=0) == 0)           # each level n/2 times
    assert np.array_equal(X.T @ X, n * np.eye(k))  # main effects orthogonal
    assert len({tuple(r) for r in X}) == n      # no run twice


def _model_columns(X, max_order=2):
    k = X.shape[1]
    cols, labels = [], []
    for order in range(1, max_order + 1):
        for combo in itertools.combinations(range(k), order):
            cols.append(np.prod(X[:, combo], axis=1))
            labels.append(sum(1 << j for j in combo))
    return np.column_stack(cols), labels


@pytest.mark.parametrize("key", [key for key in sorted(GENERATOR_TABLE) if key[1] <= 64])
def test_aliases_agree_with_the_design_matrix(key):
    """Aliases from the words equal the pairs of model-matrix columns that are
    perfectly correlated; every other pair is uncorrelated (regular fraction)."""
    design = fractional_design(*key)
    M, labels = _model_columns(design.coded)
    corr = (M.T @ M) / M.shape[0]
    aliased = {frozenset((labels[i], labels[j]))
               for i, j in zip(*np.nonzero(np.triu(np.abs(corr) > 0.999, 1)))}
    assert np.all((np.abs(corr) < 1e-12) | (np.abs(corr) > 0.999))
    from_words = set()
    for chain in alias_chains(design.subgroup, design.k, 2):
        for a, b in itertools.combinations(chain, 2):
            from_words.add(frozenset((a, b)))
    assert aliased == from_words


def test_issue_example_aliases_in_factor_names():
    names = list("abcdef")
    design = fractional_design(6, 16)
    assert design.aliases(names)["a:b"] == ["c:e"]
    assert design.generator_names(names) == ["e = a:b:c", "f = b:c:d"]
    assert design.defining_relation() == "I = ABCE = BCDF = ADEF"


def test_standard_order_first_factor_fastest():
    X = fractional_design(3, 8).coded
    assert X[:4].tolist() == [[-1, -1, -1], [1, -1, -1], [-1, 1, -1], [1, 1, -1]]


# --- bad input -------------------------------------------------------------

def test_more_factors_than_table(tmp_path):
    with pytest.raises(PlanError, match=r"12 factors: the table of fractions covers 2 to 11"):
        fractional_design(12)


def test_run_count_not_a_power_of_two():
    with pytest.raises(PlanError, match=r"12 runs is not possible.*power of two; for 5 "
                                        r"factors: 8 \(resolution III\), 16"):
        fractional_design(5, 12)


def test_too_few_runs_for_factors():
    with pytest.raises(PlanError, match=r"4 runs cannot separate 6 factors.*8 \("):
        fractional_design(6, 4)


def test_more_runs_than_full_factorial():
    with pytest.raises(PlanError, match=r"more than the full factorial of 3 factors "
                                        r"\(8 runs\).*--replicates"):
        fractional_design(3, 16)


def test_resolution_not_reachable_in_runs():
    with pytest.raises(PlanError, match=r"resolution V cannot be reached with 6 factors in "
                                        r"16 runs.*smallest with resolution V or more has "
                                        r"32 runs"):
        fractional_design(6, 16, 5)


def test_resolution_picks_smallest():
    assert fractional_design(7, resolution_=4).runs == 16
    assert fractional_design(8, resolution_=5).runs == 64
    assert fractional_design(4).runs == 16  # default: resolution V or more
    assert fractional_design(5).runs == 16


def test_resolution_out_of_range():
    with pytest.raises(PlanError, match=r"resolution 2 is not one a plan can ask for"):
        fractional_design(5, resolution_=2)


# --- blocks ----------------------------------------------------------------

# Block confounding of full factorials, Montgomery, Design and Analysis of
# Experiments, table of suggested blocking arrangements (from memory):
# 2^4 in 4 blocks: ABC, ACD (BD); 2^5 in 4: ABC, CDE (ABDE); 2^5 in 8: ABE,
# BCE, CDE; 2^6 in 8: ABEF, ABCD, ACE. Compared by the lengths of the
# confounded effects (ties between equivalent choices are allowed).
@pytest.mark.parametrize("k, blocks, published", [
    (3, 2, ["ABC"]), (3, 4, ["AB", "AC"]), (4, 2, ["ABCD"]), (4, 4, ["ABC", "ACD"]),
    (5, 2, ["ABCDE"]), (5, 4, ["ABC", "CDE"]), (5, 8, ["ABE", "BCE", "CDE"]),
    (6, 4, ["ABCF", "CDEF"]), (6, 8, ["ABEF", "ABCD", "ACE"]),
])
def test_full_factorial_blocks_match_published_lengths(k, blocks, published):
    chosen = choose_block_words([0], k, blocks)

    def lengths(words):
        span = [0]
        for w in words:
            span = span + [s ^ w for s in span]
        return sorted(bin(s).count("1") for s in span if s)

    assert lengths(chosen) == lengths([parse_word(w) for w in published])


@pytest.mark.parametrize("key, blocks", [((4, 16), 2), ((4, 16), 4), ((6, 32), 4),
                                         ((7, 16), 2), ((5, 16), 4), ((8, 64), 8)])
def test_blocks_are_orthogonal_to_main_effects(tmp_path, key, blocks):
    k, runs = key
    study = load_study(_study(tmp_path, _numeric(LETTERS[:k].lower())), with_data=False)
    plan = plan_runs(study, runs=runs, blocks=blocks, center=0)
    b = plan.runs["block"].to_numpy()
    X = plan.coded.to_numpy()
    assert sorted(np.bincount(b)[1:]) == [runs // blocks] * blocks
    dummies = np.column_stack([(b == v) - 1 / blocks for v in range(1, blocks + 1)])
    assert np.allclose(dummies.T @ X, 0)


def test_blocks_report_and_bad_counts(tmp_path):
    study = load_study(_study(tmp_path, _numeric("abcd")), with_data=False)
    plan = plan_runs(study, runs=16, blocks=2)
    assert plan.blocks == [{"generator": "block generator 1", "word": "ABCD",
                            "confounded_with": ["a:b:c:d"]}]
    with pytest.raises(PlanError, match=r"3 blocks is not possible.*2, 4 or 8"):
        plan_runs(study, runs=16, blocks=3)
    with pytest.raises(PlanError, match=r"cannot be split into 8 blocks without mixing up "
                                        r"a main effect"):
        plan_runs(study, runs=8, blocks=8)


# --- centre points, replicates, run order -----------------------------------

def test_centre_points_at_each_categorical_level():
    study = load_study(DEMO, with_data=False)
    plan = plan_runs(study, center=4, seed=3)
    centre = plan.runs[plan.runs["point"] == "centre"]
    assert len(centre) == 4
    assert centre["protein"].tolist() == [25.0] * 4
    assert centre["mix_temp"].tolist() == [50.0] * 4
    assert sorted(centre["binder"].value_counts().tolist()) == [2, 2]
    with pytest.raises(PlanError, match=r"3 centre points per block cannot be spread "
                                        r"evenly over the 2 level combinations.*multiple of 2"):
        plan_runs(study, center=3)


def test_centre_points_refused_when_all_categorical(tmp_path):
    factors = ('[[factors]]\nname = "binder"\nlevels = ["rice", "date"]\n'
               '[[factors]]\nname = "coating"\nlevels = ["none", "choc"]\n')
    study = load_study(_study(tmp_path, factors), with_data=False)
    with pytest.raises(PlanError, match=r"centre points need a numeric factor.*every "
                                        r"factor here is categorical.*--replicates"):
        plan_runs(study, center=2)
    plan = plan_runs(study, replicates=2)
    assert len(plan.runs) == 8


def test_run_order_seeded_and_standard_order_kept():
    study = load_study(DEMO, with_data=False)
    a = plan_runs(study, center=4, seed=11)
    b = plan_runs(study, center=4, seed=11)
    c = plan_runs(study, center=4, seed=12)
    assert a.runs.equals(b.runs)
    assert not a.runs["std_order"].equals(c.runs["std_order"])
    assert sorted(a.runs["std_order"]) == list(range(1, 21))
    back = a.coded.to_numpy()[np.argsort(a.runs["std_order"].to_numpy())][:16]
    assert np.array_equal(back, fractional_design(4).coded)
    assert a.runs["run_order"].tolist() == list(range(1, 21))


def test_replicates():
    study = load_study(DEMO, with_data=False)
    plan = plan_runs(study, runs=8, replicates=3, center=2)
    assert (plan.runs["point"] == "factorial").sum() == 24
    counts = plan.runs[plan.runs["point"] == "factorial"].groupby(
        ["protein", "glycerol", "binder", "mix_temp"]).size()
    assert counts.tolist() == [3] * 8


# --- fold-over ----------------------------------------------------------------

def test_foldover_clears_main_effects(tmp_path):
    study = load_study(_study(tmp_path, _numeric("abcdefg")), with_data=False)
    plain = plan_runs(study, runs=8, center=2, seed=5)
    folded = plan_runs(study, runs=8, center=2, seed=5, foldover=True)
    assert plain.design.resolution == 3 and folded.design.resolution == 4
    X = folded.coded[folded.runs["point"] == "factorial"].to_numpy()
    assert X.shape == (16, 7)
    M, labels = _model_columns(X)
    mains, twos = M[:, :7], M[:, 7:]
    assert np.allclose(mains.T @ twos, 0)  # no main effect aliased with a 2FI
    # The first block is the plain plan, run for run, so it can be made first.
    # (standard order numbers differ: the plain plan's centre runs follow 8
    # factorial runs, the folded plan's follow 16)
    first = folded.runs[folded.runs["block"] == 1].reset_index(drop=True)
    assert first.drop(columns="std_order").equals(plain.runs.drop(columns="std_order"))
    assert folded.blocks[0]["confounded_with"][0].count(":") == 2


def test_foldover_refused_when_it_adds_nothing(tmp_path):
    study = load_study(_study(tmp_path, _numeric("abcdef")), with_data=False)
    with pytest.raises(PlanError, match=r"even length, so its mirror image is the same "
                                        r"runs again.*--runs 32"):
        plan_runs(study, runs=16, foldover=True)
    with pytest.raises(PlanError, match=r"full factorial has no aliases"):
        fold_over(fractional_design(3, 8))


# --- augmentation -------------------------------------------------------------

def test_augment_demo_face_and_rotatable():
    study = load_study(DEMO)
    face = augment_study(study, "face", seed=1)
    assert face.alpha == 1.0
    assert (face.runs["point"] == "axial").sum() == 12  # 3 numeric x 2 x 2 binders
    assert face.runs["block"].unique().tolist() == [2]
    assert face.runs["run"].iloc[0].startswith("R") and "R21" in face.runs["run"].tolist()
    rot = augment_study(study, "rotatable", seed=1)
    # 8 factorial runs per binder level: alpha = 8 ** (1/4) (rotatable CCD,
    # Box & Hunter 1957; common practice)
    assert rot.alpha == pytest.approx(8 ** 0.25)
    assert rot.runs["protein"].min() == pytest.approx(25 - 5 * 8 ** 0.25, abs=1e-3)
    old = study.coded().to_numpy()
    both = np.vstack([old, rot.coded.to_numpy()])
    block = np.r_[np.ones(len(old)), np.full(len(rot.runs), 2)]
    ev = evaluate_design(study.factors, both, "quadratic", block=block)
    assert {"protein^2", "glycerol^2", "mix_temp^2"} <= set(ev.estimable)
    assert ev.table["estimable"].all()


def test_augment_full_factorial_alpha_two(tmp_path):
    rows = ["run,a,b,c,d,y"] + [
        f"{i + 1}," + ",".join("10" if x > 0 else "0" for x in r) + ",1"
        for i, r in enumerate(fractional_design(4, 16).coded)]
    study = load_study(_study(tmp_path, _numeric("abcd"), "\n".join(rows) + "\n"))
    plan = augment_study(study, "rotatable", center=3)
    assert plan.alpha == pytest.approx(2.0)  # 16 ** (1/4)
    assert len(plan.runs) == 8 + 3
    assert plan.runs["run"].tolist() == [str(i) for i in range(17, 28)]


def test_augment_refuses_off_grid_runs(tmp_path):
    data = "run,a,b,y\n1,0,0,1\n2,10,0,2\n3,0,10,3\n4,10,10,4\n5,3,5,5\n"
    study = load_study(_study(tmp_path, _numeric("ab"), data))
    with pytest.raises(PlanError, match=r"factor 'a' is 3 at row 6, which is none of "
                                        r"0, 10, 5"):
        augment_study(study, "face")
    with pytest.raises(PlanError, match=r"augmentation '\w+' is not one I know"):
        augment_study(study, "sphere")
