"""Model terms: their labels and the model matrix built from coded settings.

A term is a product of coded factor columns. Labels: ``intercept``; a main
effect is the factor's name; an interaction joins names with ``:`` in the
study's factor order (``protein:glycerol``); a square is ``name^2``.
Internally a term is a tuple of powers, one per factor in study order.

A categorical factor with three or more levels is sum-to-zero (effect) coded:
one column per level but the last, +1 at that level, -1 at the last level, 0
elsewhere, so each coefficient is that level's deviation from the average over
levels (the last level's is minus the sum of the others). Its columns are
labelled ``flour[oat]``, ``sugar:flour[oat]``, ``flour[oat]:film[pe]``; every
column of one model term shares the term's ``group`` label (``flour``,
``sugar:flour``), which tests, reduction and hierarchy treat as a whole. In
the coded settings such a factor's column holds the level's position 0, 1, ...
(``tradeoff.study.coding``); two-level categorical factors keep -1/+1.
"""
from __future__ import annotations

import difflib
import functools
import itertools
import math
from dataclasses import dataclass
from typing import Sequence

import numpy as np

from ..errors import ModelError
from .columns import column_label, expand_levels, level_column

__all__ = ["MODEL_NAMES", "Term", "term_label", "column_label", "parse_term", "model_terms",
           "model_matrix", "hierarchy_closure",
           "named_model_size", "BlockTerm", "block_terms", "model_label", "ContrastTerm"]

MODEL_NAMES = ("main", "interactions", "full", "quadratic")


def model_label(model) -> str:
    """A model as text: its name, or ``terms: a, b, a:b`` for a list of terms."""
    return model if isinstance(model, str) else "terms: " + ", ".join(model)


@dataclass(frozen=True)
class Term:
    """One model column: ``powers[j]`` is the power of factor j (0, 1 or 2).

    ``cells`` holds ``(factor, level, n_levels)`` for each factor of three or
    more levels in the term (the level whose sum-to-zero column this is);
    ``group`` is the label of the whole term the column belongs to (the
    column's own label when the term has one column).
    """

    label: str
    powers: tuple[int, ...]
    cells: tuple = ()
    group: str = ""
    # True for a term whose column is not a product of powers (ContrastTerm)
    custom = False

    def __post_init__(self):
        if not self.group:
            object.__setattr__(self, "group", self.label)

    # Cached: a fit reads these for every term several times, and the Term
    # objects of a named model are shared between fits (model_terms caches them).
    # cached_property writes the instance __dict__ directly, so frozen is kept.
    @functools.cached_property
    def order(self) -> int:
        return int(sum(self.powers))

    @functools.cached_property
    def is_intercept(self) -> bool:
        return self.order == 0

    @functools.cached_property
    def is_square(self) -> bool:
        return 2 in self.powers

    @functools.cached_property
    def factors(self) -> tuple[int, ...]:
        return tuple(j for j, p in enumerate(self.powers) if p)

    @property
    def is_block(self) -> bool:
        return False

    def contains(self, other: "Term") -> bool:
        """True when ``other`` is a strict lower-order part of this term (a parent)."""
        if self.is_block or other.is_block:
            return False  # blocks are outside the hierarchy of factor terms
        return other.powers != self.powers and all(
            o <= s for o, s in zip(other.powers, self.powers))


@dataclass(frozen=True)
class BlockTerm(Term):
    """A block column (a nuisance term): not a product of factors.

    ``level`` is the block it stands for; in sum-to-zero (effects) coding the
    column is +1 in that block, -1 in the first block and 0 elsewhere, so its
    coefficient is the block's shift from the average over blocks.
    """

    level: str = ""

    @property
    def is_intercept(self) -> bool:
        return False

    @property
    def is_square(self) -> bool:
        return False

    @property
    def is_block(self) -> bool:
        return True


@dataclass(frozen=True)
class ContrastTerm(Term):
    """The full cubic mixture model's x_a x_b (x_a - x_b), labelled ``a:b:(a-b)``.

    It is not a product of powers, so its column comes from ``column``. Its
    ``powers`` hold 2 for a and 1 for b (plus any process part): a key that no
    plain term label can take (a square is never combined with another
    factor), so it never clashes with ``a:b``, and ``a:b``, ``a`` and ``b``
    count as its parents in the hierarchy.
    """

    first: int = 0
    second: int = 0
    custom = True

    @classmethod
    def make(cls, i: int, j: int, powers: Sequence[int], names: Sequence[str]):
        rest = [p if n not in (i, j) else 0 for n, p in enumerate(powers)]
        label = f"{names[i]}:{names[j]}:({names[i]}-{names[j]})"
        if any(rest):
            label += ":" + term_label(rest, names)
        key = list(rest)
        key[i], key[j] = 2, 1
        return cls(label, tuple(int(p) for p in key), first=i, second=j)

    @property
    def order(self) -> int:
        return 3 + sum(p for n, p in enumerate(self.powers) if n not in (self.first,
                                                                          self.second))

    @property
    def is_square(self) -> bool:
        return False

    def column(self, X: np.ndarray) -> np.ndarray:
        a, b = X[:, self.first], X[:, self.second]
        # the process part, a level column of it where a factor has levels
        return a * b * (a - b) * level_column(X, self, skip=(self.first, self.second))


def block_terms(block, k: int) -> tuple[list[BlockTerm], np.ndarray, list[str]]:
    """Sum-to-zero (effects) coded block columns of run labels ``block``.

    Parameters
    ----------
    block : (n,) block label of each run (any values; compared as text).
    k : number of factors (the length of a term's powers).

    Returns
    -------
    terms : one BlockTerm per block after the first, labelled ``block[<level>]``.
    columns : (n, b - 1) array: +1 in the term's block, -1 in the first block, else 0.
    levels : the b block labels, the first being the one left out (its effect is
        minus the sum of the others). Numbers sort as numbers, other labels as text.
        With fewer than two blocks: no terms, an (n, 0) array.
    """
    labels = np.asarray([str(v) for v in np.asarray(block, dtype=object).ravel()],
                        dtype=object)
    levels = sorted(set(labels.tolist()), key=_level_key)
    n = labels.size
    if len(levels) < 2:
        return [], np.empty((n, 0)), levels
    first = labels == levels[0]
    columns = np.zeros((n, len(levels) - 1))
    terms = []
    for j, level in enumerate(levels[1:]):
        columns[labels == level, j] = 1.0
        columns[first, j] = -1.0
        terms.append(BlockTerm(f"block[{level}]", (0,) * k, level=level))
    return terms, columns, levels


def _level_key(text: str):
    try:
        value = float(text)
    except ValueError:
        return (1, 0.0, text)
    return (0, value, text) if math.isfinite(value) else (1, 0.0, text)


def term_label(powers: Sequence[int], names: Sequence[str]) -> str:
    """The label of the term with these powers (``intercept``, ``a``, ``a:b``, ``a^2``)."""
    if not any(powers):
        return "intercept"
    parts = [names[j] if p == 1 else f"{names[j]}^{p}" for j, p in enumerate(powers) if p]
    return ":".join(parts)


def _term(powers: Sequence[int], names: Sequence[str]) -> Term:
    return Term(term_label(powers, names), tuple(int(p) for p in powers))


def parse_term(text: str, factor_names: Sequence[str], *, response: str = "response") -> Term:
    """Parse a term label such as ``protein:glycerol`` or ``protein^2``.

    Names may be given in any order; the label comes back in study order.
    """
    names = list(factor_names)
    where = f"response '{response}': term '{text}'"
    if not isinstance(text, str) or not text.strip():
        raise ModelError(f"response '{response}': a term is blank: write factor names "
                         "joined by ':' (for example 'protein:glycerol') or 'name^2'")
    text = text.strip()
    if text in ("intercept", "1"):
        return _term([0] * len(names), names)
    if "*" in text:
        raise ModelError(f"{where}: join factor names with ':' (for example "
                         f"'{text.replace('*', ':')}'), not '*'")
    parts = [part.strip() for part in text.split(":")]
    if parts[-1].startswith("("):  # a full cubic mixture term a:b:(a-b)
        return _contrast_term(parts, names, where)
    powers = [0] * len(names)
    for part in parts:
        base, power = part, 1
        if "^" in part:
            base, _, exp = part.partition("^")
            base = base.strip()
            if exp.strip() != "2":
                raise ModelError(f"{where}: only squares ('{base}^2') are supported, "
                                 f"found power '{exp.strip()}'")
            power = 2
        if "[" in base and base.partition("[")[0].strip() in names:
            whole = base.partition("[")[0].strip()
            raise ModelError(f"{where}: name the whole factor '{whole}', not one of its "
                             "levels: a categorical factor's levels enter and leave the "
                             "model together")
        if base not in names:
            close = difflib.get_close_matches(base, names, n=1, cutoff=0.6)
            hint = f" (did you mean '{close[0]}'?)" if close else ""
            raise ModelError(f"{where}: '{base}' is not a factor of the study{hint}: "
                             f"the factors are {names}")
        j = names.index(base)
        if powers[j]:
            raise ModelError(f"{where}: '{base}' appears twice: write '{base}^2' for "
                             "a square")
        powers[j] = power
    if 2 in powers and sum(1 for p in powers if p) > 1:
        raise ModelError(f"{where}: a square cannot be combined with other factors: "
                         "use plain squares ('a^2') and two-factor interactions ('a:b')")
    return _term(powers, names)


def _contrast_term(parts: list[str], names: list[str], where: str) -> Term:
    """``a:b:(a-b)`` (a before b in study order), optionally with process factors."""
    last = parts.pop()
    if len(parts) < 2 or parts[0] not in names or parts[1] not in names \
            or names.index(parts[0]) >= names.index(parts[1]) \
            or last != f"({parts[0]}-{parts[1]})":
        raise ModelError(f"{where}: a cubic blending term is written 'a:b:(a-b)', the "
                         "two components in study order, for example "
                         f"'{names[0]}:{names[1]}:({names[0]}-{names[1]})'")
    rest = parse_term(":".join(parts[2:]), names).powers if parts[2:] else (0,) * len(names)
    return ContrastTerm.make(names.index(parts[0]), names.index(parts[1]),
                             tuple(rest), names)


def named_model_size(model: str, k: int, n_squares: int | None = None) -> int:
    """Number of terms (with intercept) of a named model for k factors."""
    if model == "main":
        return 1 + k
    if model == "interactions":
        return 1 + k + k * (k - 1) // 2
    if model == "full":
        return 2 ** k
    if model == "quadratic":
        return 1 + k + k * (k - 1) // 2 + (k if n_squares is None else n_squares)
    raise ValueError(model)


def model_terms(spec: str | Sequence[str], factor_names: Sequence[str], *,
                n_settings: Sequence[int] | None = None,
                response: str = "response",
                levels: Sequence | None = None) -> tuple[list[Term], list[str]]:
    """The terms of a named model or an explicit list, intercept first.

    Parameters
    ----------
    spec : one of MODEL_NAMES, or a list of term labels.
    factor_names : the study's factors, in study order.
    n_settings : number of distinct coded settings of each factor in the runs.
        ``quadratic`` squares only factors with three or more settings; an
        explicit square of a factor with two settings is refused.
    response : the response's name, for messages.
    levels : per factor, its level names when it is categorical with three or
        more levels (None otherwise): such a term expands to its sum-to-zero
        columns (see the module's docstring) and has no square.

    Returns
    -------
    terms, notes : the columns (intercept first, then by order) and remarks for the user.
    """
    if not isinstance(spec, (str, bytes, dict)) and spec and all(
            isinstance(t, Term) for t in spec):
        # terms built already (mixture models, model/scheffe.py): only their levels
        return expand_levels(list(spec), list(factor_names), levels), []
    key_spec = spec if isinstance(spec, str) else tuple(spec) if not isinstance(
        spec, (bytes, dict)) else spec
    try:
        key_levels = None if levels is None else tuple(
            None if v is None else tuple(v) for v in levels)
        terms, notes = _model_terms_cached(
            key_spec, tuple(factor_names),
            None if n_settings is None else tuple(int(v) for v in n_settings), response,
            key_levels)
    except TypeError:  # unhashable: let the uncached path explain what is wrong
        terms, notes = _model_terms(spec, factor_names, n_settings, response, levels)
    return list(terms), list(notes)


@functools.lru_cache(maxsize=256)
def _model_terms_cached(spec, factor_names, n_settings, response, levels):
    terms, notes = _model_terms(spec, factor_names, n_settings, response, levels)
    return tuple(terms), tuple(notes)


def _model_terms(spec, factor_names, n_settings, response, levels=None):
    terms, notes = _grouped_terms(spec, factor_names, n_settings, response, levels)
    return expand_levels(terms, list(factor_names), levels), notes


def _grouped_terms(spec, factor_names, n_settings, response, levels):
    names = list(factor_names)
    multi = [False] * len(names) if levels is None else [v is not None for v in levels]
    k = len(names)
    notes: list[str] = []
    zero = [0] * k
    if isinstance(spec, str):
        if spec not in MODEL_NAMES:
            close = difflib.get_close_matches(spec, MODEL_NAMES, n=1, cutoff=0.6)
            hint = f" (did you mean '{close[0]}'?)" if close else ""
            raise ModelError(f"response '{response}': model '{spec}' is not one I know"
                             f"{hint}: use one of {', '.join(MODEL_NAMES)} or a list "
                             "of terms")
        top = {"main": 1, "interactions": 2, "full": k, "quadratic": 2}[spec]
        terms = [_term(zero, names)]
        for order in range(1, top + 1):
            for combo in itertools.combinations(range(k), order):
                powers = list(zero)
                for j in combo:
                    powers[j] = 1
                terms.append(_term(powers, names))
        if spec == "quadratic":
            skipped = []
            for j in range(k):
                if multi[j]:
                    continue  # a categorical factor has levels, not a curve
                if n_settings is not None and n_settings[j] < 3:
                    skipped.append(names[j])
                    continue
                powers = list(zero)
                powers[j] = 2
                terms.append(_term(powers, names))
            if skipped:
                notes.append(f"no square term for {', '.join(skipped)}: "
                             f"{'it has' if len(skipped) == 1 else 'they have'} only two "
                             "settings in the runs")
        return terms, notes

    if isinstance(spec, (bytes, dict)) or not all(isinstance(t, str) for t in spec):
        raise ModelError(f"response '{response}': terms must be a list of names such as "
                         "[\"protein\", \"glycerol\", \"protein:glycerol\"]")
    parsed = [_term(zero, names)]
    seen = {parsed[0].powers: "intercept"}
    for text in spec:
        term = parse_term(text, names, response=response)
        if term.powers in seen:
            if term.is_intercept:
                continue  # the intercept is always in the model
            raise ModelError(f"response '{response}': term '{text}' is listed twice "
                             f"(as '{seen[term.powers]}'): remove one")
        seen[term.powers] = text
        if term.is_square and multi[term.factors[0]]:
            raise ModelError(f"response '{response}': term '{term.label}': factor "
                             f"'{names[term.factors[0]]}' is categorical, so it has no "
                             "square: its levels are compared directly; remove the term")
        if term.is_square and n_settings is not None and n_settings[term.factors[0]] < 3:
            raise ModelError(f"response '{response}': term '{term.label}': factor "
                             f"'{names[term.factors[0]]}' has only two settings in the "
                             "runs, so its square cannot be estimated: remove the term "
                             "or add runs at a third setting (centre or axial points)")
        parsed.append(term)
    parsed.sort(key=lambda t: t.order)  # stable: main effects before interactions
    present = {t.powers for t in parsed}
    missing = sorted({term_label(p, names) for t in parsed for p in _parents(t.powers)
                      if p not in present and any(p)})
    if missing:
        notes.append("the model is not hierarchical (missing "
                     f"{', '.join(missing)}): coefficients then depend on how the "
                     "factors are coded")
    return parsed, notes


def _parents(powers: Sequence[int]) -> list[tuple[int, ...]]:
    out = []
    for j, p in enumerate(powers):
        if p:
            q = list(powers)
            q[j] -= 1
            out.append(tuple(q))
    return out


def hierarchy_closure(terms: Sequence[Term], within: Sequence[Term]) -> set[str]:
    """Labels of ``terms`` and every lower-order term of ``within`` they contain."""
    labels = {t.label for t in terms}
    groups = {t.group for t in terms}
    for t in terms:
        for other in within:
            if t.contains(other):
                labels.add(other.label)
                groups.add(other.group)
    # a term with several columns (a categorical factor's levels) stays whole
    labels |= {other.label for other in within if other.group in groups}
    return labels


def model_matrix(X: np.ndarray, terms: Sequence[Term]) -> np.ndarray:
    """The (n, p) model matrix of coded settings ``X`` (n, k) for ``terms``."""
    X = np.asarray(X, dtype=float)
    if X.ndim == 1:
        X = X.reshape(1, -1)
    X = np.asfortranarray(X)  # contiguous columns: the products below read columns
    n = X.shape[0]
    out = np.empty((n, len(terms)), order="F")  # columns contiguous, as LAPACK wants
    cache: dict[tuple[int, ...], np.ndarray] = {}
    for i, t in enumerate(terms):
        f = t.factors
        if t.custom:
            out[:, i] = t.column(X)
            continue
        if t.cells:
            out[:, i] = level_column(X, t)
            continue
        if not f:
            out[:, i] = 1.0
        elif t.order != len(f) and len(f) > 1:  # a blend times a square (mixtures)
            out[:, i] = np.prod([X[:, j] ** t.powers[j] for j in f], axis=0)
        elif t.is_square:
            col = X[:, f[0]]
            np.multiply(col, col, out=out[:, i])
        elif len(f) == 1:
            out[:, i] = X[:, f[0]]
        else:
            # Reuse the product of the first factors when an earlier term had it.
            head = X[:, f[0]] if len(f) == 2 else cache.get(f[:-1])
            if head is None:
                head = X[:, f[0]] * X[:, f[1]]
                for j in f[2:-1]:
                    head = head * X[:, j]
            np.multiply(head, X[:, f[-1]], out=out[:, i])
            cache[f] = out[:, i]
    return out
