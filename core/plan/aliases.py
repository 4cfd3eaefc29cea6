"""Aliases of two-level fractional factorials, computed from their defining words.

An effect is written as a *word*: a bit mask over the factors (bit ``i`` set
when factor ``i`` takes part), so ``A`` is ``0b1`` and ``ABC`` is ``0b111``.
A regular fraction is fixed by its *defining subgroup*: the words whose
contrast is constant over every run (``I = ABCE = ...``). Two effects are
aliases (their columns in the model matrix are identical up to sign) exactly
when the product of their words lies in that subgroup. Everything here is
integer arithmetic on words; the design matrix is not needed.

Letters follow the usual convention A, B, C, ... and skip ``I``, which stands
for the identity (the column of +1s) in a defining relation.
"""
from __future__ import annotations

from itertools import combinations
from typing import Iterable, Sequence

from ..errors import PlanError

__all__ = [
    "LETTERS", "parse_word", "word_letters", "word_term", "word_length",
    "span_words", "defining_subgroup", "word_length_pattern", "resolution",
    "generators_in_letters", "alias_structure", "alias_chains", "confounded_terms",
]

# No "I": it is the identity in "I = ABCE".
LETTERS = "ABCDEFGHJKLMNOPQRSTUVWXYZ"


def parse_word(text: str) -> int:
    """Letters such as ``"ABCE"`` -> word bit mask."""
    mask = 0
    for ch in text.strip().upper():
        if ch not in LETTERS:
            raise PlanError(f"'{ch}' in the word '{text}' is not a factor letter: "
                            f"use {LETTERS[:12]}... (there is no I)")
        mask ^= 1 << LETTERS.index(ch)
    return mask


def word_letters(word: int) -> str:
    """Word bit mask -> letters, ``0b10111`` -> ``"ABCE"``; the identity is ``"I"``."""
    if word == 0:
        return "I"
    return "".join(LETTERS[i] for i in range(word.bit_length()) if word >> i & 1)


def word_term(word: int, names: Sequence[str]) -> str:
    """Word bit mask -> model term label in factor names, ``"protein:binder"``.

    Names are joined with ``:`` in the study's factor order, as model terms are.
    """
    return ":".join(names[i] for i in range(word.bit_length()) if word >> i & 1)


def word_length(word: int) -> int:
    """Number of factors in a word."""
    return int(word).bit_count()


def span_words(words: Iterable[int]) -> list[int]:
    """All products of the given words (their span over GF(2)), identity first."""
    group = [0]
    for w in words:
        if w in group:
            continue  # already a product of the others
        group = group + [g ^ w for g in group]
    return sorted(set(group))


def defining_subgroup(generator_words: Iterable[int]) -> list[int]:
    """The defining subgroup spanned by generator words (each ``X * its word``)."""
    return span_words(generator_words)


def word_length_pattern(subgroup: Sequence[int], k: int) -> tuple[int, ...]:
    """Counts (A1, ..., Ak) of defining words of each length.

    Minimum aberration means: smallest A3, then smallest A4 among those, ...
    """
    counts = [0] * k
    for w in subgroup:
        if w:
            counts[word_length(w) - 1] += 1
    return tuple(counts)


def resolution(subgroup: Sequence[int]) -> int | None:
    """Length of the shortest defining word; ``None`` for a full factorial."""
    lengths = [word_length(w) for w in subgroup if w]
    return min(lengths) if lengths else None


def generators_in_letters(subgroup: Sequence[int], k: int) -> list[tuple[int, int]]:
    """Generators of a defining subgroup, each solved for one factor.

    Returns ``(factor_index, word)`` pairs meaning ``factor = word``; the solved
    factors are the last ones possible (row reduction over GF(2) with the
    highest letters as pivots), so the table's ``E = ABC`` comes back as it was.
    """
    basis: dict[int, int] = {}  # pivot bit -> reduced word
    for w in subgroup:
        for p in sorted(basis, reverse=True):
            if w >> p & 1:
                w ^= basis[p]
        if not w:
            continue
        p = w.bit_length() - 1
        for q in basis:  # keep the basis fully reduced
            if basis[q] >> p & 1:
                basis[q] ^= w
        basis[p] = w
    pivots, basis = list(basis), list(basis.values())
    out = [(p, b ^ (1 << p)) for p, b in zip(pivots, basis)]
    return sorted(out)


def _effects(k: int, max_order: int) -> list[int]:
    """Main effects, then two-factor interactions, ..., each in factor order."""
    out = []
    for order in range(1, max_order + 1):
        for combo in combinations(range(k), order):
            out.append(sum(1 << i for i in combo))
    return out


def alias_chains(subgroup: Sequence[int], k: int, max_order: int = 2) -> list[list[int]]:
    """Groups of effects (up to ``max_order`` factors) that are aliases of each other.

    Only groups with at least two members are returned; within a group the
    effects keep the order main effects first, then interactions in factor
    order. Groups are listed in the order of their first member.
    """
    subgroup = list(subgroup)
    seen: dict[int, list[int]] = {}
    order: list[int] = []
    for e in _effects(k, max_order):
        key = min(e ^ w for w in subgroup)  # coset representative
        if key not in seen:
            seen[key] = []
            order.append(key)
        seen[key].append(e)
    return [seen[key] for key in order if len(seen[key]) > 1]


def alias_structure(subgroup: Sequence[int], names: Sequence[str],
                    max_order: int = 2) -> dict[str, list[str]]:
    """Alias structure in factor names: ``{"a:b": ["c:e"], ...}``.

    The key is the first effect of each alias chain (main effects before
    interactions, factor order within), the value its aliases, all of at most
    ``max_order`` factors.
    """
    return {word_term(chain[0], names): [word_term(e, names) for e in chain[1:]]
            for chain in alias_chains(subgroup, len(names), max_order)}


def confounded_terms(word: int, subgroup: Sequence[int], names: Sequence[str],
                     max_order: int | None = None) -> list[str]:
    """Every effect a contrast (such as a block generator) is confounded with.

    Shortest first; ``max_order`` keeps only effects of at most that many factors.
    """
    coset = sorted({word ^ w for w in subgroup}, key=lambda e: (word_length(e), e))
    if max_order is not None:
        coset = [e for e in coset if word_length(e) <= max_order]
    return [word_term(e, names) for e in coset if e]
