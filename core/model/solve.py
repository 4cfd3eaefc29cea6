"""The least-squares solve behind every response model: QR of the model matrix,
coefficients, their covariance, standard errors, t and p-values.
"""
from __future__ import annotations


import numpy as np
from scipy import special
from scipy.linalg import blas as _blas
from scipy.linalg import lapack as _lapack
from scipy.linalg import solve_triangular

from ..errors import ModelError
from .dependence import QRFactors

__all__ = ["LeastSquares"]

# Above this condition number of R, leverages come from Q itself (formed from the
# Householder reflectors) rather than from M R^-1, whose rounding grows with it;
# coded designs sit near 1.
_LEVERAGE_COND = 1e4


class LeastSquares:
    """A least-squares solution by QR: coefficients and what follows from them.

    Q is not formed: Q'z and Q(Q'z) are applied from the Householder
    reflectors (``QRFactors``); ``qr.Q`` forms it when something needs it.
    """

    def __init__(self, M: np.ndarray, z: np.ndarray, qr: QRFactors | None = None):
        n, p = M.shape
        fac = QRFactors(M) if qr is None else qr
        R = fac.R
        qty = fac.qt(z)[:p]
        self.coef = solve_triangular(R, qty, check_finite=False)
        w = np.zeros(n)
        w[:p] = qty
        self.fitted = fac.q(w)  # Q Q'z, the projection of z
        self.resid = z - self.fitted
        self.sse = float(self.resid @ self.resid)
        self.df = n - p
        self.qr = fac
        self.Rinv, info = _lapack.dtrtri(R)
        if info != 0:  # pragma: no cover - a zero pivot, excluded by find_aliases
            raise ModelError(f"the model matrix is singular (LAPACK info {info})")
        # diag((X'X)^-1) = row sums of Rinv^2, because (X'X)^-1 = Rinv Rinv'
        self.cdiag = np.einsum("ij,ij->i", self.Rinv, self.Rinv)
        # leverage = row sums of Q^2, and Q = M Rinv (a triangular product, trmm)
        cond = np.abs(R).sum(axis=0).max() * np.abs(self.Rinv).sum(axis=0).max()
        Q = fac.Q if cond > _LEVERAGE_COND else _blas.dtrmm(
            1.0, np.asfortranarray(self.Rinv), M, side=1, lower=0)
        self.leverage = np.einsum("ij,ij->i", Q, Q)
        if self.df > 0:
            s2 = self.sse / self.df
            self.se = np.sqrt(s2 * self.cdiag)
            with np.errstate(divide="ignore", invalid="ignore"):
                self.t = self.coef / self.se
            self.p = 2 * special.stdtr(self.df, -np.abs(self.t))  # two-sided t test
        else:
            self.se = self.t = self.p = None

