"""Response transforms (none, log, sqrt) and the Box-Cox suggestion.

A response can be modelled on a log or square-root scale when its spread
grows with its level; predictions are turned back to natural units. The
Box-Cox (1964) profile likelihood over lambda says which power suits the
model's residuals best: lambda near 1 means no transform, 0.5 square root,
0 log.
"""
from __future__ import annotations

import numpy as np
from scipy import optimize, stats

from ..errors import ModelError

__all__ = ["TRANSFORM_NAMES", "forward", "inverse", "box_cox", "power_advice"]

TRANSFORM_NAMES = ("none", "log", "sqrt")
_LAMBDA_OF = {"none": 1.0, "sqrt": 0.5, "log": 0.0}
# the powers tried by ``box_cox``: an interval that reaches one of them is open on that side
_TRIED = (-3.0, 3.0)
_SCALE_WORDS = {"none": "the measured scale", "sqrt": "a square-root scale",
                "log": "a log scale"}


def forward(y, transform: str, *, response: str = "response") -> np.ndarray:
    """Natural units -> modelling scale. Refuses values the transform cannot take."""
    y = np.asarray(y, dtype=float)
    if transform == "none":
        return y
    ok = ~np.isnan(y)
    if transform == "log":
        if np.any(y[ok] <= 0):
            raise ModelError(f"response '{response}': transform 'log' needs values above "
                             f"0, found {y[ok].min():g}: remove the transform or check "
                             "the data")
        return np.log(y)
    if transform == "sqrt":
        if np.any(y[ok] < 0):
            raise ModelError(f"response '{response}': transform 'sqrt' needs values of 0 "
                             f"or more, found {y[ok].min():g}: remove the transform or "
                             "check the data")
        return np.sqrt(y)
    raise ModelError(f"response '{response}': transform '{transform}' is not one I know: "
                     f"use one of {', '.join(TRANSFORM_NAMES)}")


def inverse(z, transform: str) -> np.ndarray:
    """Modelling scale -> natural units (for log: the median on the natural scale)."""
    z = np.asarray(z, dtype=float)
    if transform == "log":
        return np.exp(z)
    if transform == "sqrt":
        return np.square(np.maximum(z, 0.0))  # a negative root means 0
    return z


def box_cox(y, Q: np.ndarray, *, level: float = 0.95) -> dict | None:
    """Box-Cox lambda for a response regressed on a model with orthonormal basis Q.

    The profile log-likelihood is
    L(lambda) = -n/2 log(SSE(lambda)/n) + (lambda - 1) sum(log y),
    SSE being the residual sum of squares of (y^lambda - 1)/lambda (log y at 0).

    Returns None when some y <= 0, else a dict with lambda (the maximum, in
    -3..3), low/high (the ``level`` likelihood interval) and suggest: 'none'
    when lambda = 1 lies in the interval, else 'sqrt' or 'log' when inside
    (nearest first), else 'other'.
    """
    y = np.asarray(y, dtype=float)
    if y.size < 3 or np.any(y <= 0) or Q.shape[1] >= y.size:
        return None
    logy = np.log(y)
    gm = np.exp(logy.mean())
    ly = logy - np.log(gm)  # dividing y by its geometric mean leaves lambda unchanged
    n = y.size

    def sse(lams: np.ndarray) -> np.ndarray:
        lams = np.atleast_1d(lams)
        L = lams[None, :]
        with np.errstate(divide="ignore", invalid="ignore"):
            Z = np.where(np.abs(L) < 1e-12, ly[:, None], np.expm1(L * ly[:, None]) / L)
        R = Z - Q @ (Q.T @ Z)
        return np.einsum("ij,ij->j", R, R)

    def loglik(lams) -> np.ndarray:
        # sum(log(y/gm)) is 0, so the Jacobian term vanishes on this scale
        s = np.maximum(sse(lams), 1e-300)
        return -0.5 * n * np.log(s / n)

    grid = np.linspace(-3, 3, 61)
    ll = loglik(grid)
    i = int(np.argmax(ll))
    lo, hi = grid[max(i - 1, 0)], grid[min(i + 1, grid.size - 1)]
    res = optimize.minimize_scalar(lambda t: -loglik(t)[0], bounds=(lo, hi),
                                   method="bounded", options={"xatol": 1e-7})
    lam = float(res.x)
    lmax = float(-res.fun)
    cut = lmax - 0.5 * stats.chi2.ppf(level, 1)
    low = _edge(grid, ll, cut, lam, lmax, -1, loglik)
    high = _edge(grid, ll, cut, lam, lmax, +1, loglik)

    def within(v: float) -> bool:
        return loglik(v)[0] >= cut

    if within(1.0):
        suggest = "none"
    else:
        fits = [name for name in ("sqrt", "log") if within(_LAMBDA_OF[name])]
        fits.sort(key=lambda name: abs(_LAMBDA_OF[name] - lam))
        suggest = fits[0] if fits else "other"
    return {"lambda": lam, "low": low, "high": high, "suggest": suggest}


def _edge(grid: np.ndarray, ll: np.ndarray, cut: float, lam: float, lmax: float,
          side: int, loglik) -> float:
    """Where the log-likelihood falls to ``cut`` going left (-1) or right (+1) of lam:
    bracketed on the grid, then solved on the curve itself (a straight line between
    grid points 0.1 apart misplaces the end of a narrow interval); the grid's end
    when it never falls that far."""
    i = int(np.searchsorted(grid, lam))
    idx = range(i - 1, -1, -1) if side < 0 else range(i, grid.size)
    prev_x = lam
    for j in idx:
        if ll[j] < cut:
            return float(optimize.brentq(lambda t: loglik(t)[0] - cut, *sorted(
                (prev_x, float(grid[j]))), xtol=1e-8))
        prev_x = float(grid[j])
    return float(grid[0] if side < 0 else grid[-1])


def _power(v: float, digits: int = 1) -> str:
    return f"{v + 0.0:.{digits}f}"  # + 0.0: -0.0 reads as 0.0


def power_advice(bc: dict, transform: str = "none") -> tuple[str, bool]:
    """The power-transform check of ``box_cox`` as one plain sentence.

    Parameters
    ----------
    bc : dict
        ``box_cox``'s result (lambda, low, high, suggest).
    transform : str
        The scale the model uses now (one of ``TRANSFORM_NAMES``).

    Returns
    -------
    (sentence, helps)
        The sentence starts in lower case (it follows a label or is
        capitalised by the caller); ``helps`` is True when a scale the tool
        offers would fit clearly better than the one in use (the one in use
        lies outside the interval of powers that fit about as well).

    Examples
    --------
    ``a power transform would not help: the best power is 0.94, and any power
    from -0.4 to 2.3 fits about as well``
    """
    lam, low, high = float(bc["lambda"]), float(bc["low"]), float(bc["high"])
    at_low, at_high = low <= _TRIED[0] + 1e-9, high >= _TRIED[1] - 1e-9
    # a narrow interval needs its second decimal: -0.18 to 0.06, not -0.2 to 0.1
    digits = 2 if high - low < 1 else 1
    if at_low and at_high:
        spread = f"any power tried, from {_TRIED[0]:g} to {_TRIED[1]:g}, fits about as well"
    elif at_low:
        spread = f"any power up to {_power(high, digits)} fits about as well"
    elif at_high:
        spread = f"any power from {_power(low, digits)} up fits about as well"
    else:
        spread = (f"any power from {_power(low, digits)} to {_power(high, digits)} fits "
                  "about as well")
    top = f"{lam + 0.0:.2f}" + (" or beyond" if min(abs(lam - _TRIED[0]),
                                                     abs(lam - _TRIED[1])) < 0.05 else "")
    best = f"the best power is {top}, and {spread}"
    current = _LAMBDA_OF[transform]
    if low <= current <= high:
        if transform == "none":
            return f"a power transform would not help: {best}", False
        return f"{_SCALE_WORDS[transform]} suits this response: {best}", False
    suggest = bc["suggest"]
    if suggest in _SCALE_WORDS and suggest != transform:
        return (f"{_SCALE_WORDS[suggest]} would fit better than "
                f"{_SCALE_WORDS[transform].replace('a ', 'the ', 1)}: {best}"), True
    return (f"no scale offered here fits well: {best}; the measured scale (power 1), "
            "square root (0.5) and log (0) all lie outside"), False
