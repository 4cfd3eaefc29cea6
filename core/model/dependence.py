"""Which model columns the runs can tell apart: the QR factors of a model
matrix and the aliases of the columns that depend on earlier ones.

A dropped column is reported with the exact linear combination of the kept
columns it equals in these runs, signs and coefficients included: in a 2^3 in
blocks with the three-factor interaction confounded (Yates 1937), ``a:b:c``
equals plus one block column and minus another, not their plain sum.
"""
from __future__ import annotations

from fractions import Fraction
from typing import Sequence

import numpy as np
from scipy.linalg import lapack as _lapack
from scipy.linalg import qr as _scipy_qr

__all__ = ["qr", "QRFactors", "find_aliases", "combination_text"]

# A column counts as linearly dependent on the earlier ones when what is left
# of it after projection is this small relative to its length. Exact aliasing in
# a design leaves ~1e-15; genuine near-collinearity of measured settings stays far above.
_ALIAS_TOL = 1e-9
# Largest denominator printed as a fraction (balanced runs give halves, thirds, ...)
_DENOMINATOR = 24


def qr(M: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Economic QR of a model matrix (Q is n x p, R is p x p upper triangular)."""
    return _scipy_qr(np.asfortranarray(M), mode="economic", check_finite=False)


class QRFactors:
    """Householder QR of an (n, p) model matrix, n >= p, kept in LAPACK's raw form.

    Q is never formed unless asked for (``Q``): products with Q' and Q are
    applied from the Householder reflectors (LAPACK dormqr), which costs a
    fraction of forming Q and is as accurate.

    Attributes
    ----------
    R : (p, p) upper triangular factor.
    """

    __slots__ = ("_a", "_tau", "R", "_Q")

    def __init__(self, M: np.ndarray):
        n, p = M.shape
        a = np.array(M, dtype=float, order="F")  # geqrf overwrites its input
        # lwork 64 p: room for LAPACK's blocked algorithm (block size <= 64)
        a, tau, _, info = _lapack.dgeqrf(a, lwork=max(1, 64 * p), overwrite_a=1)
        if info != 0:  # pragma: no cover - LAPACK argument error
            raise ValueError(f"QR factorization failed (LAPACK info {info})")
        self._a, self._tau = a, tau
        self.R = np.triu(a[:p])
        self._Q = None

    def qt(self, z: np.ndarray) -> np.ndarray:
        """Q_full' z for a vector z of length n (all n rotated coordinates)."""
        return self._apply("T", z)

    def q(self, w: np.ndarray) -> np.ndarray:
        """Q_full w for a vector w of length n."""
        return self._apply("N", w)

    def _apply(self, trans: str, v: np.ndarray) -> np.ndarray:
        c = np.array(v, dtype=float, order="F").reshape(-1, 1, order="F")
        # lwork 1: the unblocked algorithm, several times faster for one column
        out, _, info = _lapack.dormqr("L", trans, self._a, self._tau, c, lwork=1,
                                      overwrite_c=1)
        if info != 0:  # pragma: no cover - LAPACK argument error
            raise ValueError(f"applying Q failed (LAPACK info {info})")
        return out[:, 0]

    @property
    def Q(self) -> np.ndarray:
        """The (n, p) orthonormal factor, formed on first use."""
        if self._Q is None:
            p = self.R.shape[0]
            Q, _, info = _lapack.dorgqr(self._a, self._tau, lwork=max(1, 64 * p))
            if info != 0:  # pragma: no cover - LAPACK argument error
                raise ValueError(f"forming Q failed (LAPACK info {info})")
            self._Q = Q
        return self._Q


def find_aliases(M: np.ndarray, terms: Sequence, *, return_qr: bool = False):
    """Which columns of the model matrix the runs can estimate.

    Columns are taken in order; a column that is a linear combination of the
    columns kept before it is dropped (the first term of each alias chain is
    kept) and reported with that combination.

    Returns
    -------
    keep : boolean mask over the columns.
    aliases : dropped label -> {kept label: coefficient}, the combination of
        kept columns the dropped column equals in these runs (coefficients
        to 12 significant digits; an empty dict for a column that is 0 in every
        run). Iterating it gives the partners' labels in model order.
    qr : only with ``return_qr``: the QRFactors of M when every column is
        kept (so a fit need not factor M again), else None.
    """
    n, p = M.shape
    norms = np.sqrt(np.einsum("ij,ij->j", M, M))  # column lengths
    keep = np.zeros(p, dtype=bool)
    if p <= n:
        fac = QRFactors(M)
        diag = np.abs(np.diag(fac.R))
        if np.all(diag > _ALIAS_TOL * np.maximum(norms, 1e-300)) and np.all(norms > 0):
            keep[:] = True
            return (keep, {}, fac) if return_qr else (keep, {})
    # Sequential Gram-Schmidt (twice, for stability) over the columns in order:
    # exact, and it never lets a dropped column's rounding noise take a dimension.
    basis = np.empty((n, min(n, p)))
    rank = 0
    for j in range(p):
        v = M[:, j].copy()
        if norms[j] == 0 or rank == n:
            continue
        for _ in range(2):
            if rank:
                B = basis[:, :rank]
                v -= B @ (B.T @ v)
        r = np.linalg.norm(v)
        if r > _ALIAS_TOL * norms[j]:
            basis[:, rank] = v / r
            rank += 1
            keep[j] = True
    aliases: dict[str, dict[str, float]] = {}
    kept_idx = np.flatnonzero(keep)
    Mk = M[:, kept_idx]
    for j in np.flatnonzero(~keep):
        if norms[j] == 0:
            aliases[terms[j].label] = {}
            continue
        b = np.linalg.lstsq(Mk, M[:, j], rcond=None)[0]
        big = np.abs(b) > 1e-6 * max(1.0, np.abs(b).max())
        # 12 significant digits: 0.49999999999998 is 0.5 (the runs' own rounding)
        aliases[terms[j].label] = {terms[kept_idx[i]].label: float(f"{b[i]:.12g}")
                                   for i in np.flatnonzero(big)}
    return (keep, aliases, None) if return_qr else (keep, aliases)


def combination_text(combination: dict) -> str:
    """A signed combination as text: ``block[2] - block[3] + 1/3*block[4]``.

    A coefficient of 1 is shown by its sign alone; one that is a fraction with
    a small denominator (as designed runs give: 1/2, 2/3) as that fraction, so
    the text is exact; any other to 4 significant digits. ``0`` for an empty
    combination (a column that is 0 throughout).
    """
    parts = []
    for label, c in combination.items():
        size = _size(abs(c))
        parts.append(("-" if c < 0 else "+", f"{size}*{label}" if size else label))
    if not parts:
        return "0"
    first_sign, first = parts[0]
    text = ("-" if first_sign == "-" else "") + first
    return text + "".join(f" {s} {t}" for s, t in parts[1:])


def _size(c: float) -> str:
    """A coefficient's size as text: '' for 1, '3', '2/3', else 4 significant digits."""
    frac = Fraction(c).limit_denominator(_DENOMINATOR)
    if abs(float(frac) - c) <= 1e-9 * max(1.0, c):
        if frac == 1:
            return ""
        return str(frac.numerator) if frac.denominator == 1 else \
            f"{frac.numerator}/{frac.denominator}"
    return f"{c:.4g}"
