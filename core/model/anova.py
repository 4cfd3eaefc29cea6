"""Analysis of variance of a fitted response model: model, residual, pure
error, lack of fit and, for two-level designs with centre points, curvature.

Pure error comes from runs made at identical settings (replicates, centre
points); lack of fit is what is left of the residual after pure error. The
curvature test compares the average of the factorial runs with the average
of the centre runs (all numeric factors at their centre).

With blocks in the model, the table gets a ``blocks`` row (blocks entered
first, so blocks + model + residual add up to the total) and replicates count
as such only within one block: runs at the same settings in different blocks
differ by the block shift as well, which the model accounts for, so pure error
(the residual of the model of one mean per setting and block, which contains
the fitted model) is taken within blocks (common practice). The curvature
test is then the centre-versus-factorial contrast within blocks.
"""
from __future__ import annotations

import numpy as np
from scipy import special

__all__ = ["anova_table", "pure_error", "curvature_test"]


def _f_test(ss1: float, df1: int, ss2: float, df2: int) -> tuple[float, float]:
    if df1 <= 0 or df2 <= 0:
        return np.nan, np.nan
    ms2 = ss2 / df2
    if ms2 <= 0:
        return (np.inf, 0.0) if ss1 > 0 else (np.nan, np.nan)
    f = (ss1 / df1) / ms2
    return float(f), float(special.fdtrc(df1, df2, f))  # upper tail of F(df1, df2)


def _block_codes(block, n: int) -> np.ndarray | None:
    """Integer block codes 0..b-1 of the runs, or None with fewer than two blocks."""
    if block is None:
        return None
    _, codes = np.unique(np.asarray([str(v) for v in np.asarray(block, dtype=object)
                                     .ravel()]), return_inverse=True)
    if codes.size != n:
        raise ValueError(f"{codes.size} block labels for {n} runs")
    return codes if codes.max(initial=0) > 0 else None


def pure_error(X: np.ndarray, y: np.ndarray, block=None) -> tuple[float, int, np.ndarray]:
    """Pure-error sum of squares and degrees of freedom from repeated settings.

    With ``block`` (one label per run), only runs at the same settings in the
    same block count as repeats. Returns (ss, df, group) where ``group``
    numbers the distinct settings (within blocks).
    """
    key = np.round(np.asarray(X, dtype=float), 9) + 0.0  # -0.0 and 0.0 alike
    codes = _block_codes(block, key.shape[0])
    if codes is not None:
        key = np.column_stack([key, codes.astype(float)])
    n = key.shape[0]
    if n == 0:
        return 0.0, 0, np.zeros(0, dtype=int)
    order = np.lexsort(key.T[::-1]) if key.shape[1] else np.arange(n)
    ks = key[order]
    new = np.ones(n, dtype=bool)
    new[1:] = np.any(ks[1:] != ks[:-1], axis=1)
    group = np.empty(n, dtype=np.intp)
    group[order] = np.cumsum(new) - 1
    g = int(new.sum())
    counts = np.bincount(group, minlength=g)
    means = np.bincount(group, weights=y, minlength=g) / counts
    ss = float(np.sum((y - means[group]) ** 2))
    return ss, int(y.size - g), group


def curvature_test(X: np.ndarray, y: np.ndarray, ss_pe: float, df_pe: int,
                   block=None, categorical=None) -> dict | None:
    """Curvature test for a two-level design with centre points, or None.

    Numeric factors are the columns with a setting other than -1 and +1 (and
    not marked in ``categorical``, one boolean per column). The
    test applies when every run has all numeric factors at -1/+1 (factorial)
    or all at 0 (centre), with some of each. SS = nF nC (yF - yC)^2 / (nF + nC)
    on 1 degree of freedom, tested against pure error.

    With ``block``, the difference is the centre-run indicator's coefficient
    in a fit of y on the blocks and that indicator (a shift between blocks
    does not pose as curvature), and SS is its extra sum of squares; the
    averages reported stay the plain ones. None when every block holds only
    centre runs or only factorial runs (nothing to compare within a block).
    """
    X = np.asarray(X, dtype=float)
    # np.isclose(a, 1.0) and np.isclose(a, 0.0) with its default tolerances
    # (rtol 1e-5, atol 1e-8), written out: isclose's generic path is slow.
    absX = np.abs(X)
    at_one = np.abs(absX - 1.0) <= 1e-8 + 1e-5 * 1.0
    numeric = ~np.all(at_one, axis=0)
    if categorical is not None:
        numeric &= ~np.asarray(categorical, dtype=bool)
    if not numeric.any():
        return None
    factorial = np.all(at_one[:, numeric], axis=1)
    centre = np.all(absX[:, numeric] <= 1e-8, axis=1)
    if not np.all(factorial | centre) or not factorial.any() or not centre.any():
        return None
    nf, nc = int(factorial.sum()), int(centre.sum())
    yf, yc = float(y[factorial].mean()), float(y[centre].mean())
    codes = _block_codes(block, y.size)
    if codes is None:
        diff = yc - yf
        ss = nf * nc * (yf - yc) ** 2 / (nf + nc)
    else:
        # Within-block comparison: y on block indicators, then the centre indicator.
        B = (codes[:, None] == np.arange(codes.max() + 1)).astype(float)
        full = np.column_stack([B, centre.astype(float)])
        coef, sse1 = _lstsq(full, y)
        _, sse0 = _lstsq(B, y)
        if np.linalg.matrix_rank(full) <= B.shape[1]:
            return None  # the centre runs fall wholly in blocks of their own
        diff = float(coef[-1])
        ss = max(sse0 - sse1, 0.0)
    f, p = _f_test(ss, 1, ss_pe, df_pe)
    return {"factorial_mean": yf, "centre_mean": yc, "difference": diff,
            "n_factorial": nf, "n_centre": nc, "ss": ss, "df": 1, "f": f, "p": p}


def _lstsq(A: np.ndarray, y: np.ndarray) -> tuple[np.ndarray, float]:
    coef = np.linalg.lstsq(A, y, rcond=None)[0]
    r = y - A @ coef
    return coef, float(r @ r)


def anova_table(X: np.ndarray, y: np.ndarray, sse: float, n_terms: int,
                block=None, categorical=None) -> dict:
    """The ANOVA of a model with an intercept and ``n_terms`` terms in all.

    ``block`` (one label per run) marks a model with b - 1 block columns
    among its ``n_terms``: the table then starts with a ``blocks`` row (the
    between-block sum of squares, blocks entered first) and the model row
    holds the factor terms adjusted for blocks.

    Returns a dict of rows ([blocks,] model, residual, lack_of_fit,
    pure_error, total), each with ss, df, ms and, where a test exists, f and
    p; plus curvature (a row or None).
    """
    n = y.size
    sst = float(np.sum((y - y.mean()) ** 2))
    df_model, df_resid = n_terms - 1, n - n_terms
    rows = {}
    codes = _block_codes(block, n)
    ss_b = 0.0
    if codes is not None:
        counts = np.bincount(codes)
        means = np.bincount(codes, weights=y) / counts
        ss_b = float(np.sum(counts * (means - y.mean()) ** 2))
        df_b = int(counts.size - 1)
        df_model -= df_b
        f, p = _f_test(ss_b, df_b, sse, df_resid)
        rows["blocks"] = _row(ss_b, df_b, f, p)
    ssm = max(sst - ss_b - sse, 0.0)
    f, p = _f_test(ssm, df_model, sse, df_resid)
    rows["model"] = _row(ssm, df_model, f, p)
    rows["residual"] = _row(sse, df_resid)
    ss_pe, df_pe, _ = pure_error(X, y, block)
    df_lof = df_resid - df_pe
    if df_pe > 0 and df_lof > 0:
        ss_lof = max(sse - ss_pe, 0.0)
        f, p = _f_test(ss_lof, df_lof, ss_pe, df_pe)
        rows["lack_of_fit"] = _row(ss_lof, df_lof, f, p)
        rows["pure_error"] = _row(ss_pe, df_pe)
    elif df_pe > 0:
        rows["pure_error"] = _row(ss_pe, df_pe)
    rows["total"] = _row(sst, n - 1)
    rows["curvature"] = curvature_test(X, y, ss_pe, df_pe, block, categorical)
    return rows


def _row(ss: float, df: int, f: float = np.nan, p: float = np.nan) -> dict:
    ms = ss / df if df > 0 else np.nan
    return {"ss": float(ss), "df": int(df), "ms": float(ms), "f": f, "p": p}
