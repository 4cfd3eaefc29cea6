"""Runs that share a batch: a random intercept per whole plot, fitted by REML.

The model of a split-plot study is the linear mixed model

    z = M b + Z u + e,   u ~ N(0, s_wp^2 I),   e ~ N(0, s^2 I),

with one random intercept ``u`` per whole plot (a dough, an oven load, a day)
and ``Z`` the runs' whole-plot indicators. So ``Var(z) = s^2 V(g)`` with
``V(g) = I + g Z Z'`` and ``g = s_wp^2 / s^2``, the variance ratio.

Why hand-written and not a library's mixed-model fitter: with one random
intercept everything is exact and cheap in closed form. Within a whole plot of
``k`` runs, ``V^-1 = I - g / (1 + g k) J``, so the whitening ``W`` with
``W'W = V^-1`` is "subtract ``c`` times the plot mean", ``c = 1 - 1 /
sqrt(1 + g k)``; ``log |V| = sum log(1 + g k)``. The REML criterion profiled
over ``s^2`` is then one function of ``g`` (Harville 1977; Searle, Casella &
McCulloch 1992, ch. 6):

    -2 l_R(g) = log |V| + log |M' V^-1 M| + (n - p) log(r' V^-1 r / (n - p)),

minimised on ``g >= 0`` by Brent's method on ``log g`` (and the boundary
``g = 0`` compared). Given ``g``, the fixed effects are generalised least
squares, which is ordinary least squares on ``W M`` and ``W z``: the existing
QR solve (``model/solve.py``) gives the coefficients, ``(M'V^-1 M)^-1`` and
``s^2 = r'V^-1 r / (n - p)``, the REML estimate of ``s^2``. A general library
fitter would iterate on all of this and agree to its tolerance only; the tests
check this one against statsmodels MixedLM (REML).

Denominator degrees of freedom: Satterthwaite's (1946) approximation, as
Giesbrecht & Burns (1985) and Fai & Cornelius (1996) apply it to mixed models,
with the variance components' covariance from the REML expected information
``I_ij = tr(P V_i P V_j) / 2``. For a contrast ``l'b`` it is
``2 (l'Cl)^2 / (d' A d)`` with ``C = (M'V^-1 M)^-1``, ``d_i = l' dC/dth_i l``
and ``A = I^-1``; a term of several columns takes Fai & Cornelius's
combination over the eigenvectors of ``L C L'``. Kenward & Roger's
adjustment of ``C`` itself is not made: for balanced split plots both give
the classical split-plot tests.
"""
from __future__ import annotations

import math

import numpy as np
from scipy import optimize, special, stats

from ..errors import ModelError
from .solve import LeastSquares

__all__ = ["WholePlotSolve", "reml_ratio", "whiten", "plot_codes", "METHOD"]

METHOD = "REML; denominator df by Satterthwaite"
# g is searched on log g over this range (a ratio beyond it is "all batch")
_LOG_G = (math.log(1e-8), math.log(1e8))


def plot_codes(groups) -> tuple[np.ndarray, np.ndarray]:
    """Integer code 0..G-1 of each run's whole plot and the runs in each."""
    labels = np.asarray([str(v) for v in np.asarray(groups, dtype=object).ravel()],
                        dtype=object)
    _, codes = np.unique(labels, return_inverse=True)
    return codes, np.bincount(codes)


def whiten(A: np.ndarray, codes: np.ndarray, sizes: np.ndarray, g: float) -> np.ndarray:
    """``W A`` for ``W'W = (I + g Z Z')^-1``: subtract c_k times each plot's mean."""
    A = np.asarray(A, dtype=float)
    c = 1.0 - 1.0 / np.sqrt(1.0 + g * sizes)
    two = A if A.ndim == 2 else A[:, None]
    means = np.zeros((sizes.size, two.shape[1]))
    np.add.at(means, codes, two)
    means /= sizes[:, None]
    out = two - (c[:, None] * means)[codes]
    return out if A.ndim == 2 else out[:, 0]


def _criterion(g: float, M, z, codes, sizes) -> float:
    n, p = M.shape
    WM, Wz = whiten(M, codes, sizes, g), whiten(z, codes, sizes, g)
    R = np.linalg.qr(WM, mode="r")
    coef, *_ = np.linalg.lstsq(WM, Wz, rcond=None)
    r = Wz - WM @ coef
    s2 = float(r @ r) / (n - p)
    if not s2 > 0:
        return -np.inf  # an exact fit: the criterion is unbounded below
    return (float(np.sum(np.log1p(g * sizes))) + 2.0 * float(np.sum(np.log(np.abs(
        np.diag(R))))) + (n - p) * math.log(s2))


def reml_ratio(M: np.ndarray, z: np.ndarray, codes: np.ndarray, sizes: np.ndarray) -> float:
    """The REML estimate of ``g = s_wp^2 / s^2`` (0 when the batches add nothing)."""
    f = lambda t: _criterion(math.exp(t), M, z, codes, sizes)  # noqa: E731
    grid = np.linspace(*_LOG_G, 33)
    values = np.array([f(t) for t in grid])
    i = int(np.argmin(values))
    lo, hi = grid[max(i - 1, 0)], grid[min(i + 1, grid.size - 1)]
    best = optimize.minimize_scalar(f, bounds=(lo, hi), method="bounded",
                                    options={"xatol": 1e-10})
    t = float(best.x) if best.fun <= values[i] else float(grid[i])
    at_zero = _criterion(0.0, M, z, codes, sizes)
    return 0.0 if at_zero <= f(t) else math.exp(t)


class WholePlotSolve:
    """The REML/GLS fit of one model matrix, shaped like ``LeastSquares``.

    Attributes read by ``ResponseModel`` (coef, Rinv, cdiag, sse, df, se, t, p,
    fitted, resid, leverage, qr) are those of the whitened least-squares
    problem: ``sse / df`` is the REML ``s^2``, ``Rinv Rinv'`` is
    ``(M'V^-1 M)^-1`` on the scale of ``s^2``, and ``p`` are t tests on
    Satterthwaite's degrees of freedom. ``z`` and ``sst`` are the whitened
    response and its total sum of squares about its GLS mean, so R2 is Buse's
    (1973) GLS R2.
    """

    def __init__(self, M: np.ndarray, z: np.ndarray, codes: np.ndarray, sizes: np.ndarray,
                 qr=None, ratio: float | None = None):
        n, p = M.shape
        if n - p < 1:
            raise ModelError("the model leaves no runs to estimate the variation "
                             "between and within whole plots: use fewer terms or add runs")
        self.codes, self.sizes = codes, sizes
        self.ratio = reml_ratio(M, z, codes, sizes) if ratio is None else float(ratio)
        g = self.ratio
        WM = np.asfortranarray(whiten(M, codes, sizes, g))
        self.z = whiten(z, codes, sizes, g)
        ls = LeastSquares(WM, self.z)
        for name in ("coef", "fitted", "resid", "sse", "df", "qr", "Rinv", "cdiag",
                     "leverage", "se"):
            setattr(self, name, getattr(ls, name))
        one = whiten(np.ones(n), codes, sizes, g)
        mu = float(one @ self.z) / float(one @ one)
        self.sst = float(np.sum((self.z - mu * one) ** 2))
        self.M = np.asarray(M, dtype=float)
        self.s2 = self.sse / self.df
        self.s2_wp = g * self.s2
        self._components()
        self.t = self.p = self.ddf = None
        if self.se is not None:
            self.ddf = np.array([self.contrast_df(np.eye(p)[j][None, :])
                                 for j in range(p)])
            with np.errstate(divide="ignore", invalid="ignore"):
                self.t = self.coef / self.se
            self.p = 2 * special.stdtr(self.ddf, -np.abs(self.t))

    # the variance components' covariance and the derivatives of C
    def _components(self) -> None:
        """REML information of (s_wp^2, s^2) and dC/dth, without n x n matrices.

        With U = V^-1 M, B = Z'U, C = (M'V^-1 M)^-1 and P = V^-1 - U C U':
        tr(P ZZ' P ZZ') = ||Z'PZ||^2, Z'PZ = D - B C B', D = Z'V^-1 Z diagonal;
        tr(P ZZ' P) = ||PZ||^2 and tr(PP) = ||P||^2 expanded the same way; all
        sums over whole plots or p x p products.
        """
        M, codes, sizes, g = self.M, self.codes, self.sizes, self.ratio
        s2 = self.s2

        def vinv(A):  # V^-1 A for V = s^2 I + s_wp^2 Z Z'
            return whiten(whiten(A, codes, sizes, g), codes, sizes, g) / s2

        def by_plot(A):  # Z'A
            out = np.zeros((sizes.size, A.shape[1]))
            np.add.at(out, codes, A)
            return out
        U = vinv(M)
        C = np.linalg.inv(M.T @ U)
        B = by_plot(U)
        d = sizes / (s2 * (1.0 + g * sizes))  # diagonal of Z'V^-1 Z
        BtB, UtU = B.T @ B, U.T @ U
        CB, CU = C @ BtB, C @ UtU
        zpz = (float(np.sum(d * d)) - 2.0 * float(np.sum(np.einsum("ij,jk,ik->i", B, C, B)
                                                         * d))
               + float(np.trace(CB @ CB)))
        E = by_plot(vinv(U))  # Z'V^-1 V^-1 M
        pz = (float(np.sum(sizes / (s2 * (1.0 + g * sizes)) ** 2))
              - 2.0 * float(np.sum(E * (B @ C))) + float(np.trace(CU @ CB)))
        a = g / (1.0 + g * sizes)
        trv2 = float(np.sum(sizes - (2.0 * a - a * a * sizes) * sizes)) / (s2 * s2)
        pp = trv2 - 2.0 * float(np.trace(C @ (U.T @ vinv(U)))) + float(np.trace(CU @ CU))
        info = 0.5 * np.array([[zpz, pz], [pz, pp]])
        self.C = C
        self.cov_components = np.linalg.pinv(info)  # order (s_wp^2, s^2)
        # dC/dth_i = C M'V^-1 V_i V^-1 M C with V_1 = Z Z', V_2 = I
        self.dC = (C @ BtB @ C, C @ UtU @ C)

    def contrast_df(self, L: np.ndarray) -> float:
        """Satterthwaite's denominator df for the contrasts in the rows of L."""
        L = np.atleast_2d(np.asarray(L, dtype=float))
        LCL = L @ self.C @ L.T
        vals, vecs = np.linalg.eigh(LCL)
        nus = []
        for d, u in zip(vals, vecs.T):
            l = u @ L
            grad = np.array([l @ dC @ l for dC in self.dC])
            var = float(grad @ self.cov_components @ grad)
            nus.append(2.0 * d * d / var if var > 0 else np.inf)
        if len(nus) == 1:
            return float(nus[0])
        # Fai & Cornelius (1996): several contrasts at once
        q = len(nus)
        e = sum(v / (v - 2.0) for v in nus if v > 2.0)
        return float(2.0 * e / (e - q)) if e > q else float(min(nus))

    def term_test(self, idx) -> dict:
        """Wald F test of the columns ``idx`` together: df, f, p and its denominator df."""
        idx = list(idx)
        L = np.eye(len(self.coef))[idx]
        b = self.coef[idx]
        k = len(idx)
        wald = float(b @ np.linalg.solve(L @ self.C @ L.T, b))
        f = wald / k
        ddf = self.contrast_df(L)
        p = float(special.fdtrc(k, ddf, f)) if np.isfinite(f) and np.isfinite(ddf) else (
            float(stats.chi2.sf(wald, k)) if np.isfinite(f) else np.nan)
        # no sum of squares: a mixed model's Wald F has none of its own (the
        # two-strata ANOVA gives the classical ones)
        return {"df": k, "f": f, "p": p, "df_denominator": ddf}

    def term_tests(self, terms) -> dict:
        """``levels.term_tests`` with Satterthwaite's df: {group: row} in model order."""
        groups: dict[str, list[int]] = {}
        for i, t in enumerate(terms):
            if t.is_intercept or t.is_block:
                continue
            groups.setdefault(t.group, []).append(i)
        out = {}
        for label, idx in groups.items():
            row = self.term_test(idx)
            row["columns"] = [terms[i].label for i in idx]
            out[label] = row
        return out

    def new_run_variance(self) -> tuple[float, float]:
        """``s_wp^2 + s^2`` (a new run in a new batch) and its Satterthwaite df."""
        total = self.s2_wp + self.s2
        var = float(np.ones(2) @ self.cov_components @ np.ones(2))
        df = 2.0 * total * total / var if var > 0 else np.inf
        return total, df

    def component_interval(self, which: int, level: float) -> tuple[float, float | None]:
        """Interval of an SD (0: whole plot, 1: within) by Satterthwaite's chi-square."""
        est = (self.s2_wp, self.s2)[which]
        var = float(self.cov_components[which, which])
        if not est > 0 or not var > 0:
            return 0.0, None
        nu = 2.0 * est * est / var
        a = (1.0 - level) / 2.0
        return (math.sqrt(nu * est / stats.chi2.ppf(1 - a, nu)),
                math.sqrt(nu * est / stats.chi2.ppf(a, nu)))
