"""Transmitted variation: how the factors' production spread moves each response.

A plant never makes a batch at exactly the intended settings: each numeric
factor with a ``production_sd`` lands at ``x + e``, ``e`` normal with that
standard deviation (in the factor's units), the factors independent of one
another. The response's mean model then varies from batch to batch even with
no run-to-run noise; this module gives that spread (``transmitted_sd``) and
how much the average moves (``mean_shift``), with the coefficients as
estimated.

Polynomial models (every model of ``tradeoff.model``) are handled exactly.
Writing the model around the settings as a polynomial in the deviations,
``y(x + e) = sum_r a_r(x) e^r`` (multi-index powers ``r``), the mean shift is
``sum_r a_r E[e^r]`` over ``r != 0`` and the variance ``a' C a`` with
``C_rs = E[e^(r+s)] - E[e^r] E[e^s]``, from the moments of a centred normal
(0, s^2, 0, 3 s^4 for powers 1 to 4). For a model of at most second order this
is the textbook result for a quadratic form in normal variables,
``y = y(x) + g'e + e'Be``: mean shift ``tr(BS)`` and variance
``g'Sg + 2 tr(BSBS)`` (Mathai & Provost 1992, Quadratic Forms in Random
Variables, sec. 3.2); terms of higher order (three-factor interactions of a
full factorial model) are exact too.

Models on a log or square-root scale are polynomials on that scale: their
transmitted SD in natural units comes from seeded Monte Carlo draws of ``e``,
as does that of any model that is not a polynomial.
"""
from __future__ import annotations

import functools
import itertools
import math
from dataclasses import dataclass

import numpy as np

__all__ = ["coded_spread", "has_spread", "polynomial_moments", "model_polynomial",
           "TransmittedSpread", "transmitted_spread", "MC_DRAWS"]

MC_DRAWS = 20000  # Monte Carlo draws for models that are not polynomials on the natural scale


def coded_spread(study) -> np.ndarray:
    """Each factor's production SD in coded units (k,): 0 where none is given.

    A coded unit is half the factor's low..high range, so the natural SD is
    divided by ``half_range``. Categorical factors have none.
    """
    return np.array([0.0 if f.is_categorical or not getattr(f, "production_sd", None)
                     else float(f.production_sd) / f.half_range for f in study.factors])


def has_spread(study) -> bool:
    """True when some factor of the study has a production SD above 0."""
    return bool(np.any(coded_spread(study) > 0))


def _normal_moment(power: np.ndarray, sd: np.ndarray) -> np.ndarray:
    """E[e^power] for e ~ N(0, sd^2), elementwise, powers 0..4."""
    power = np.asarray(power)
    out = np.zeros(np.broadcast(power, sd).shape)
    out = np.where(power == 0, 1.0, out)
    out = np.where(power == 2, sd ** 2, out)
    out = np.where(power == 4, 3.0 * sd ** 4, out)
    return out


@functools.lru_cache(maxsize=64)
def _expansion(powers_key: bytes, shape: tuple, spread_key: bytes):
    """The deviation monomials of a polynomial and their moment matrix.

    Returns ``pairs`` (P, 3): term index, index of the deviation power r,
    binomial factor; ``rest`` (P, k): the power of x left after taking ``r``
    out; ``R`` (q, k) the distinct deviation powers (row 0 is all zeros);
    ``Er`` (q,) their means; ``C`` (q, q) their covariance. Cached: the same
    model and spread come back at every batch of a search.
    """
    powers = np.frombuffer(powers_key, dtype=np.int64).reshape(shape)
    sd = np.frombuffer(spread_key, dtype=float)
    spread_cols = np.flatnonzero(sd > 0)
    R_index = {(0,) * len(sd): 0}
    term_of, r_of, binom, rest = [], [], [], []
    for t, P in enumerate(powers):
        choices = [range(P[j] + 1) if j in spread_cols else (0,) for j in range(len(sd))]
        for r in itertools.product(*choices):
            r = tuple(int(v) for v in r)
            idx = R_index.setdefault(r, len(R_index))
            term_of.append(t)
            r_of.append(idx)
            binom.append(math.prod(math.comb(int(P[j]), rj) for j, rj in enumerate(r)))
            rest.append(P - np.array(r))
    R = np.array(list(R_index), dtype=int).reshape(len(R_index), len(sd))
    Er = np.prod(_normal_moment(R, sd), axis=1)
    Ers = np.prod(_normal_moment(R[:, None, :] + R[None, :, :], sd), axis=2)
    C = Ers - np.outer(Er, Er)
    return (np.array(term_of), np.array(r_of), np.array(binom, dtype=float),
            np.array(rest, dtype=int).reshape(len(rest), len(sd)), R, Er, C)


def polynomial_moments(powers, coef, X, sd, gates=None) -> tuple[np.ndarray, np.ndarray]:
    """Mean shift and variance of a polynomial at ``X + e``, e ~ N(0, diag(sd^2)).

    Parameters
    ----------
    powers : array_like of int, shape (T, k)
        Each term's power of each variable (0, 1 or 2).
    coef : array_like, shape (T,)
    X : array_like, shape (n, k)
        The intended settings (same units as ``sd``).
    sd : array_like, shape (k,)
        Standard deviation of each variable's deviation (0 = none).
    gates : sequence of tuples, optional
        Per term, the ``(factor, level, n_levels)`` cells of a categorical
        factor of three or more levels whose sum-to-zero column multiplies the
        term (``model_polynomial``); such a factor has no spread, so its column
        is a per-point multiplier of the coefficient.

    Returns
    -------
    shift : numpy.ndarray, shape (n,)
        ``E[y(X + e)] - y(X)``.
    var : numpy.ndarray, shape (n,)
        ``Var[y(X + e)]``.
    """
    powers = np.ascontiguousarray(np.asarray(powers, dtype=np.int64))
    coef = np.asarray(coef, dtype=float)
    X = np.atleast_2d(np.asarray(X, dtype=float))
    sd = np.ascontiguousarray(np.asarray(sd, dtype=float))
    if powers.max(initial=0) > 2:
        raise ValueError("powers above 2 are not supported")
    term_of, r_of, binom, rest, R, Er, C = _expansion(powers.tobytes(), powers.shape,
                                                      sd.tobytes())
    # a_r(x) = sum over (term, r) pairs of coef * binom * x^(P - r)
    mono = np.ones((len(X), len(rest)))
    for j in range(X.shape[1]):
        col = rest[:, j]
        if col.any():
            mono *= np.where(col == 0, 1.0, X[:, j:j + 1] ** col)
    if gates is not None and any(gates):
        coef = coef * _gate_values(gates, X)  # (n, T): a coefficient per point
        contrib = mono * (coef[:, term_of] * binom)
    else:
        contrib = mono * (coef[term_of] * binom)
    A = np.zeros((len(X), len(R)))
    np.add.at(A.T, r_of, contrib.T)
    shift = A[:, 1:] @ Er[1:]
    var = np.einsum("nr,rs,ns->n", A, C, A)
    return shift, np.maximum(var, 0.0)


@dataclass(frozen=True)
class TransmittedSpread:
    """Transmitted variation of each response at a set of settings.

    Attributes
    ----------
    responses : tuple of str
        Column order of the arrays.
    sd : numpy.ndarray, shape (n, m)
        Standard deviation of the response's mean caused by the factors'
        production spread, natural units.
    mean_shift : numpy.ndarray, shape (n, m)
        How far the average response moves because of the spread (natural units).
    method : dict
        Response name -> ``exact`` (polynomial moments) or ``monte carlo``.
    """

    responses: tuple
    sd: np.ndarray
    mean_shift: np.ndarray
    method: dict


def model_polynomial(model):
    """(powers (T, k), coef (T,), gates) of a model's mean on its modelling scale, or None.

    Every column is written as plain monomials in the coded factors: a cubic
    blending term ``a b (a - b)`` as ``a^2 b - a b^2``, and a level column of
    a factor with three or more levels as the monomial of its other factors
    with the level's sum-to-zero indicator in ``gates`` (see
    ``polynomial_moments``). None for a model that is not a polynomial in the
    coded factors (no ``polynomial`` method, or a column of another kind).
    """
    from ..model.terms import ContrastTerm

    get = getattr(model, "polynomial", None)
    if get is None:
        return None
    terms, coef = get()
    rows, values, gates = [], [], []
    for t, b in zip(terms, np.asarray(coef, dtype=float)):
        p = list(t.powers)
        for j, _, _ in t.cells:
            p[j] = 0  # the level indicator goes to the gate
        if isinstance(t, ContrastTerm):
            p[t.first] = p[t.second] = 0
            for a, c, sign in ((2, 1, 1.0), (1, 2, -1.0)):
                q = list(p)
                q[t.first], q[t.second] = a, c
                rows.append(q)
                values.append(sign * b)
                gates.append(tuple(t.cells))
            continue
        if t.custom:
            return None
        rows.append(p)
        values.append(b)
        gates.append(tuple(t.cells))
    k = len(terms[0].powers) if terms else 0
    powers = np.array(rows, dtype=np.int64).reshape(len(rows), k)
    return powers, np.asarray(values, dtype=float), gates


def _gate_values(gates, X) -> np.ndarray:
    """(n, T) value of each term's level indicators at the points X."""
    from ..model.columns import level_indicator

    return np.column_stack([level_indicator(X, cells) for cells in gates])


def transmitted_spread(study, models: dict, X_coded, *, draws: int = MC_DRAWS,
                       seed: int = 0) -> TransmittedSpread:
    """Transmitted SD and mean shift of every modelled response at coded settings.

    Parameters
    ----------
    study : Study
        Supplies each factor's ``production_sd``.
    models : dict
        Response name -> fitted model.
    X_coded : array_like, shape (n, k)
    draws, seed : Monte Carlo draws (models on a log or square-root scale, or
        not polynomials) and their seed.
    """
    X = np.atleast_2d(np.asarray(X_coded, dtype=float))
    n = len(X)
    sd = coded_spread(study)
    names = tuple(models)
    out_sd = np.zeros((n, len(names)))
    shift = np.zeros((n, len(names)))
    method = {}
    E = None
    for i, name in enumerate(names):
        model = models[name]
        poly = model_polynomial(model)
        if not np.any(sd > 0):
            method[name] = "exact"
            continue
        if poly is not None and getattr(model, "transform", "none") == "none":
            s, v = polynomial_moments(*poly[:2], X, sd, gates=poly[2])
            out_sd[:, i], shift[:, i] = np.sqrt(v), s
            method[name] = "exact"
            continue
        if E is None:
            E = np.random.default_rng(seed).standard_normal((draws, len(sd))) * sd
        centre = np.asarray(model.predict(X), dtype=float).reshape(n)
        for row in range(n):
            y = np.asarray(model.predict(X[row] + E), dtype=float)
            out_sd[row, i] = y.std(ddof=1)
            shift[row, i] = y.mean() - centre[row]
        method[name] = "monte carlo"
    return TransmittedSpread(names, out_sd, shift, method)
