"""Scheffe's canonical mixture polynomials: their terms, and the fitted equation in proportions.

A mixture model has no intercept: the components add up to the whole, so a
constant is already the sum of the linear blending terms (Scheffe 1958;
Cornell (2002), Experiments with Mixtures, 3rd ed., ch. 2). Its terms:

* ``linear``        b_i x_i                         labels ``a``
* ``quadratic``     + b_ij x_i x_j                  labels ``a:b`` (binary blending)
* ``special_cubic`` + b_ijk x_i x_j x_k             labels ``a:b:c``
* ``cubic``         quadratic + d_ij x_i x_j (x_i - x_j) + b_ijk x_i x_j x_k;
  the contrast terms are labelled ``a:b:(a-b)`` (a before b in study order).

Process variables enter by ``[mixture] process``: ``none`` (no process
terms), ``linear`` (each process main effect crossed with each linear blending
term: ``a:temp``) or ``full`` (every mixture term crossed with every term of
the study's process model: ``a:b:temp``, ``a:temp^2``, ...). The x's are the
coded component columns: proportions of the total, or L-pseudo-components
when some low is above 0 (``study/mixture.py``).
"""
from __future__ import annotations

import itertools
from dataclasses import dataclass
from typing import Sequence

import numpy as np

from ..errors import ModelError
from .columns import expand_levels, level_term
from .terms import ContrastTerm, Term, model_matrix, model_terms, parse_term, term_label

__all__ = ["scheffe_terms", "mixture_model_terms", "MixtureInfo", "mixture_fit_options",
           "proportion_equation", "distinct_blends", "SCHEFFE_SIZE"]


def SCHEFFE_SIZE(model: str, q: int) -> int:
    """Number of terms of a Scheffe model in q components."""
    pairs, triples = q * (q - 1) // 2, q * (q - 1) * (q - 2) // 6
    return {"linear": q, "quadratic": q + pairs, "special_cubic": q + pairs + triples,
            "cubic": q + 2 * pairs + triples}[model]


def scheffe_terms(model: str, q: int, names: Sequence[str]) -> list[Term]:
    """The terms of a Scheffe model on the first q of ``names`` (the components)."""
    k = len(names)

    def mono(idx):
        powers = [0] * k
        for j in idx:
            powers[j] = 1
        return Term(term_label(powers, names), tuple(powers))

    terms = [mono((i,)) for i in range(q)]
    if model == "linear":
        return terms
    terms += [mono(c) for c in itertools.combinations(range(q), 2)]
    if model == "cubic":
        terms += [contrast_term(i, j, names) for i, j in itertools.combinations(range(q), 2)]
    if model in ("special_cubic", "cubic"):
        terms += [mono(c) for c in itertools.combinations(range(q), 3)]
    return terms


def contrast_term(i: int, j: int, names: Sequence[str], process=None) -> ContrastTerm:
    """x_i x_j (x_i - x_j), optionally times a process part (powers on other columns)."""
    powers = [0] * len(names) if process is None else list(process)
    return ContrastTerm.make(i, j, tuple(powers), names)


def _cross(term: Term, part: Sequence[int], names) -> Term:
    """A mixture term times a process part (powers on the process columns)."""
    if not any(part):
        return term
    if isinstance(term, ContrastTerm):
        return contrast_term(term.first, term.second, names, process=part)
    powers = tuple(a + b for a, b in zip(term.powers, part))
    return Term(term_label(powers, names), powers)


def mixture_model_terms(names: Sequence[str], q: int, model: str, process: str,
                        process_model: str = "interactions",
                        n_settings: Sequence[int] | None = None,
                        response: str = "response", levels=None) -> list[Term]:
    """Every term of a mixture (x process) model, no intercept, mixture terms first.

    ``names``: components first (q of them), then the process factors.
    ``n_settings``: distinct coded settings per column (squares of process
    factors with two settings are left out, as the ordinary quadratic model does).
    ``levels``: per column, the level names of a categorical process factor of
    three or more levels (as ``model_terms`` takes them): a term crossed with
    it becomes one column per level but the last.
    """
    names = list(names)
    k = len(names)
    mix = scheffe_terms(model, q, names)
    if process == "none" or k == q:
        return mix
    pnames = names[q:]
    if process == "linear":
        parts = []
        for j in range(q, k):
            part = [0] * k
            part[j] = 1
            parts.append(part)
        crossed = [_cross(t, p, names) for p in parts for t in mix[:q]]
    else:
        ps = None if n_settings is None else list(n_settings)[q:]
        plevels = None if levels is None else list(levels)[q:]
        pterms, _ = model_terms(process_model, pnames, n_settings=ps, response=response,
                                levels=plevels)
        parts = []  # one part per process term (its level columns share the powers)
        for t in pterms:
            part = [0] * q + list(t.powers)
            if not t.is_intercept and part not in parts:
                parts.append(part)
        crossed = [_cross(t, p, names) for p in parts for t in mix]
    return expand_levels(mix + crossed, names, levels)


@dataclass(frozen=True)
class MixtureInfo:
    """What a mixture model needs beyond its terms.

    ``q`` components (the first q columns), ``lows`` their lows as proportions
    of the total (the pseudo-component origin), ``scale`` ``proportion`` or ``pseudo``.
    """

    components: tuple[str, ...]
    lows: tuple[float, ...]
    scale: str = "proportion"

    @property
    def q(self) -> int:
        return len(self.components)

    def is_mixture_term(self, term: Term) -> bool:
        """True when the term involves a component (no effect in coded +-1 sense)."""
        return any(term.powers[:self.q])

    def is_linear_blend(self, term: Term) -> bool:
        return sum(term.powers[:self.q]) == 1 and not any(term.powers[self.q:])


def distinct_blends(X: np.ndarray, q: int) -> int:
    """Number of different blends (rows of the first q columns) among the runs."""
    if len(X) == 0:
        return 0
    return int(len(np.unique(np.round(np.asarray(X, float)[:, :q], 9), axis=0)))


def mixture_fit_options(study, response, spec, X: np.ndarray):
    """(terms, keep labels, MixtureInfo) for fitting ``response`` of a mixture study.

    ``spec`` is what the study asks for this response: a named process model
    (the Scheffe model of ``[mixture]`` then applies) or a list of term labels
    (explicit terms: parsed, the intercept refused). Raises ModelError when the
    runs hold fewer distinct blends than the model's mixture terms need.
    """
    from ..study.mixture import components_of
    from .levels import factor_levels

    mixture = study.mixture
    names = study.factor_names
    comps = components_of(study)
    q = len(comps)
    name = response.name
    if isinstance(spec, str):
        Xs = np.sort(np.round(X, 9), axis=0)
        n_settings = (1 + np.count_nonzero(np.diff(Xs, axis=0), axis=0)).tolist() \
            if len(X) else None
        terms = mixture_model_terms(names, q, mixture.model, mixture.process,
                                    process_model=spec, n_settings=n_settings,
                                    response=name, levels=factor_levels(study.factors))
        what = f"the {mixture.model.replace('_', ' ')} mixture model"
    else:
        terms = []
        for label in spec:
            t = parse_term(label, names, response=name)
            j = t.factors[0] if t.is_square else None
            if j is not None and study.factors[j].is_categorical:
                raise ModelError(f"response '{name}': term '{label}': factor "
                                 f"'{names[j]}' is categorical, so it has no square: "
                                 "remove the term")
            if t.is_intercept:
                raise ModelError(f"response '{name}': a mixture model has no intercept "
                                 "(the components' linear terms stand for it): remove "
                                 f"'{label}' from the terms")
            terms.append(t)
        missing = [c.name for c in comps if c.name not in {t.label for t in terms}]
        if missing:
            raise ModelError(f"response '{name}': the listed mixture model lacks the "
                             f"linear blending term(s) {', '.join(missing)}: every "
                             "component needs its own term")
        what = "the listed mixture model"
    n_mix = sum(1 for t in terms if not any(t.powers[q:]))
    valid = ~np.isnan(study.runs[name].to_numpy(float)) if name in study.runs else None
    blends = distinct_blends(X if valid is None else X[valid], q)
    if blends < n_mix:
        raise ModelError(f"response '{name}': {what} has {n_mix} blending terms and needs "
                         f"at least {n_mix} different blends, but the runs hold {blends}: "
                         "add blends (binary mid-points, the centroid) or choose a smaller "
                         "model in [mixture] model")
    info = MixtureInfo(components=tuple(c.name for c in comps),
                       lows=tuple(c.low / c.total for c in comps), scale=mixture.scale)
    return terms, [c.name for c in comps], info


def proportion_equation(terms: Sequence[Term], coef, names: Sequence[str],
                        info: MixtureInfo, levels=None) -> dict[str, float]:
    """The fitted equation with the components as proportions of the total.

    For proportions (every low 0) the coefficients are the fitted ones. For
    L-pseudo-components, z_i = (x_i - l_i) / (1 - sum l) is put back in terms
    of the proportions x: substituting an affine map keeps the degree, so the
    equation is re-expressed exactly in the Scheffe model of the same degree
    (special cubic -> full cubic), each process part kept. It is solved by
    least squares at random blends, where both forms agree to rounding.
    Process factors stay in coded units (a categorical one of three or more
    levels, ``levels`` as ``model_terms`` takes them, as its level columns).
    """
    coef = np.asarray(coef, dtype=float)
    mix_terms = [(t, b) for t, b in zip(terms, coef) if not t.is_block]
    if info.scale == "proportion":
        return {t.label: float(b) for t, b in mix_terms}
    names = list(names)
    q, k = info.q, len(names)
    degree = max(sum(t.powers[:q]) if not isinstance(t, ContrastTerm) else 3
                 for t, _ in mix_terms)
    base = scheffe_terms({1: "linear", 2: "quadratic"}.get(degree, "cubic"), q, names)
    parts = []  # (process powers, level cells): level columns are parts of their own
    for t, _ in mix_terms:
        part = (tuple([0] * q + list(t.powers[q:])), tuple(t.cells))
        if part not in parts:
            parts.append(part)
    target = [_cross(t, p, names) for p, _ in parts for t in base]
    target = [level_term(t, cells, names, levels) if cells else t
              for t, cells in zip(target, [c for _, c in parts for _ in base])]
    rng = np.random.default_rng(20021)
    n = 3 * len(target) + 20
    P = rng.dirichlet(np.ones(q), n)
    proc = rng.uniform(-1.0, 1.0, (n, k - q))
    for j, _, n_levels in {c for t, _ in mix_terms for c in t.cells}:
        proc[:, j - q] = rng.integers(0, n_levels, n)  # level positions
    lows = np.asarray(info.lows)
    Z = (P - lows) / (1.0 - lows.sum())
    y = model_matrix(np.hstack([Z, proc]), [t for t, _ in mix_terms]) @ \
        np.array([b for _, b in mix_terms])
    Mt = model_matrix(np.hstack([P, proc]), target)
    c = np.linalg.lstsq(Mt, y, rcond=None)[0]
    scale = max(1.0, float(np.abs(c).max()))
    return {t.label: (0.0 if abs(v) < 1e-10 * scale else float(v))
            for t, v in zip(target, c)}
