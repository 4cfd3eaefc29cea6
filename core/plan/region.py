"""The region a design is built in, in coded units: box ranges, categorical
levels and linear rules ``A x <= b``, with uniform sampling over it.

Designs for any region (core/plan/optimal.py) and the judging of a plan by its
prediction variance (core/plan/variance.py) both work on a ``Region``: the
first moves runs only to points inside it, the second averages the prediction
variance over it. ``study_region`` builds the region of a study (each numeric
factor's search range, each categorical factor's levels, every
``[[constraints]]`` rule); other helpers may build their own (a constrained
simplex, say) by giving their own rules, a feasibility function or a sampler.
"""
from __future__ import annotations

from dataclasses import dataclass, field
from typing import Callable, Sequence

import numpy as np

from ..errors import PlanError

__all__ = ["Region", "study_region"]

_TOL = 1e-9


@dataclass(frozen=True, eq=False)
class Region:
    """A design region in coded units.

    Parameters
    ----------
    lower, upper : (k,) coded bounds of each factor (ignored for categorical
        factors).
    levels : per factor, the allowed coded values of a categorical factor (for
        example ``(-1.0, 1.0)`` or ``(0.0, 1.0, 2.0)``), or None for a numeric one.
    A, b : linear rules ``A @ x <= b`` on the coded settings (categorical columns 0).
    rule_names : one text per rule, for messages.
    accept : optional ``(m, k) -> (m,)`` booleans, further rules that are not
        linear; sampling then rejects points it refuses.
    sampler : optional ``(rng, m) -> (m, k)`` points spread uniformly over the
        region; replaces the built-in sampler (rejection, then hit-and-run).
    """

    lower: np.ndarray
    upper: np.ndarray
    levels: tuple
    A: np.ndarray = field(default_factory=lambda: np.zeros((0, 0)))
    b: np.ndarray = field(default_factory=lambda: np.zeros(0))
    rule_names: tuple = ()
    accept: Callable | None = None
    sampler: Callable | None = None

    def __post_init__(self):
        k = len(self.levels)
        object.__setattr__(self, "lower", np.asarray(self.lower, dtype=float).reshape(k))
        object.__setattr__(self, "upper", np.asarray(self.upper, dtype=float).reshape(k))
        A = np.asarray(self.A, dtype=float)
        if A.size == 0:
            A = np.zeros((0, k))
        object.__setattr__(self, "A", A.reshape(-1, k))
        object.__setattr__(self, "b", np.asarray(self.b, dtype=float).ravel())
        object.__setattr__(self, "levels", tuple(
            None if v is None else np.asarray(v, dtype=float) for v in self.levels))

    @property
    def k(self) -> int:
        return len(self.levels)

    @property
    def numeric(self) -> np.ndarray:
        """Indices of the numeric factors."""
        return np.array([j for j, v in enumerate(self.levels) if v is None], dtype=int)

    @property
    def categorical(self) -> np.ndarray:
        return np.array([j for j, v in enumerate(self.levels) if v is not None], dtype=int)

    def feasible(self, X) -> np.ndarray:
        """(m,) booleans: which coded points (m, k) lie in the region."""
        X = np.atleast_2d(np.asarray(X, dtype=float))
        ok = np.ones(len(X), dtype=bool)
        num = self.numeric
        if len(num):
            lo, hi = self.lower[num], self.upper[num]
            span = np.maximum(hi - lo, 1.0)
            ok &= np.all((X[:, num] >= lo - _TOL * span) & (X[:, num] <= hi + _TOL * span),
                         axis=1)
        for j in self.categorical:
            ok &= np.isin(X[:, j], self.levels[j])
        if len(self.b):
            scale = np.maximum(1.0, np.abs(self.b))
            ok &= np.all(X @ self.A.T - self.b <= 1e-7 * scale, axis=1)
        if self.accept is not None:
            ok &= np.asarray(self.accept(X), dtype=bool)
        return ok

    def intervals(self, x: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """For each coordinate j, the range that keeps ``x`` in the box and rules
        when only coordinate j changes: arrays (low, high) of length k.

        Only the box and the linear rules count (``accept`` is checked on
        candidates by the caller); low > high where no value fits.
        """
        lo, hi = self.lower.copy(), self.upper.copy()
        if len(self.b):
            A = self.A
            rest = (self.b - A @ x)[:, None] + A * x[None, :]  # (rules, k)
            with np.errstate(divide="ignore", invalid="ignore"):
                ratio = rest / A
            hi = np.minimum(hi, np.where(A > 1e-12, ratio, np.inf).min(axis=0))
            lo = np.maximum(lo, np.where(A < -1e-12, ratio, -np.inf).max(axis=0))
        return lo, hi

    def check(self) -> None:
        """Raise a PlanError naming the rules when no numeric setting meets them all."""
        if not len(self.b) or self.__dict__.get("_checked"):
            return
        from scipy.optimize import linprog

        num = self.numeric
        res = linprog(np.zeros(len(num)), A_ub=self.A[:, num], b_ub=self.b,
                      bounds=list(zip(self.lower[num], self.upper[num])), method="highs")
        if res.status != 0:
            names = "; ".join(f"'{r}'" for r in self.rule_names) or "the rules"
            raise PlanError(f"no setting inside the factors' ranges meets every rule "
                            f"({names}): relax a rule or widen a factor's range")
        self.__dict__["_checked"] = True

    def sample(self, n: int, rng: np.random.Generator) -> np.ndarray:
        """``n`` points spread uniformly over the region (coded, (n, k)).

        Uniform in the box and over the levels, rules met by rejection; when
        the rules keep only a sliver of the box, hit-and-run inside it.
        """
        if self.sampler is not None:
            X = np.asarray(self.sampler(rng, n), dtype=float)
            return X[:n]
        self.check()
        out, have, tried = [], 0, 0
        while have < n and tried < 200_000:
            m = max(2 * (n - have), 256)
            X = self._box(m, rng)
            X = X[self.feasible(X)]
            out.append(X)
            have += len(X)
            tried += m
        if have >= n:
            return np.vstack(out)[:n]
        return self._hit_and_run(n, rng, np.vstack(out))

    def _box(self, m: int, rng: np.random.Generator) -> np.ndarray:
        X = np.empty((m, self.k))
        num = self.numeric
        if len(num):
            X[:, num] = self.lower[num] + rng.random((m, len(num))) * (
                self.upper[num] - self.lower[num])
        for j in self.categorical:
            X[:, j] = rng.choice(self.levels[j], size=m)
        return X

    def _hit_and_run(self, n: int, rng, found: np.ndarray) -> np.ndarray:
        """Hit-and-run over the numeric coordinates (a random direction, a
        uniform point on the chord), started at a feasible point."""
        if len(found):
            x = found[0].copy()
        else:
            x = self._inner_point()
            if x is None:
                names = "; ".join(f"'{r}'" for r in self.rule_names) or "the rules"
                raise PlanError(f"no setting inside the factors' ranges meets every rule "
                                f"({names}): relax a rule or widen a factor's range")
        num = self.numeric
        out = np.empty((n, self.k))
        thin = 3 * max(len(num), 1)
        i = 0
        steps = 0
        while i < n:
            d = np.zeros(self.k)
            d[num] = rng.standard_normal(len(num))
            d /= np.linalg.norm(d) or 1.0
            lo, hi = self._chord(x, d)
            if hi > lo:
                x = x + (lo + rng.random() * (hi - lo)) * d
            for j in self.categorical:
                x[j] = rng.choice(self.levels[j])
            steps += 1
            if steps % thin == 0 and (self.accept is None or self.feasible(x[None])[0]):
                out[i] = x
                i += 1
        return out

    def _chord(self, x: np.ndarray, d: np.ndarray) -> tuple[float, float]:
        lo, hi = -np.inf, np.inf
        num = self.numeric
        for j in num:
            if abs(d[j]) > 1e-15:
                t1 = (self.lower[j] - x[j]) / d[j]
                t2 = (self.upper[j] - x[j]) / d[j]
                lo, hi = max(lo, min(t1, t2)), min(hi, max(t1, t2))
        if len(self.b):
            ad = self.A @ d
            slack = self.b - self.A @ x
            pos, neg = ad > 1e-15, ad < -1e-15
            if pos.any():
                hi = min(hi, float(np.min(slack[pos] / ad[pos])))
            if neg.any():
                lo = max(lo, float(np.max(slack[neg] / ad[neg])))
        return max(lo, -1e6), min(hi, 1e6)

    def _inner_point(self) -> np.ndarray | None:
        """The centre of the largest ball inside box and rules (a linear program)."""
        from scipy.optimize import linprog

        num = self.numeric
        p = len(num)
        A = self.A[:, num]
        norms = np.linalg.norm(A, axis=1)
        A_ub = np.vstack([np.column_stack([A, norms]),
                          np.column_stack([np.eye(p), np.ones(p)]),
                          np.column_stack([-np.eye(p), np.ones(p)])])
        b_ub = np.concatenate([self.b, self.upper[num], -self.lower[num]])
        c = np.zeros(p + 1)
        c[-1] = -1.0
        res = linprog(c, A_ub=A_ub, b_ub=b_ub,
                      bounds=[(None, None)] * p + [(0, None)], method="highs")
        if res.status != 0:
            return None
        x = np.zeros(self.k)
        x[num] = res.x[:p]
        for j in self.categorical:
            x[j] = self.levels[j][0]
        return x


def study_region(study, factor_codes: Sequence | None = None) -> Region:
    """The region of a study in coded units: search ranges, levels and rules.

    ``factor_codes`` gives each factor's coded level values (None for numeric
    factors); by default a categorical factor's codes come from
    ``tradeoff.study.coding.level_codes``.
    """
    from ..study.coding import level_codes
    from ..study.constraints import rule_arrays, study_rules

    factors = study.factors
    k = len(factors)
    lower, upper = np.zeros(k), np.zeros(k)
    levels = []
    for j, f in enumerate(factors):
        if f.is_categorical:
            levels.append(level_codes(f) if factor_codes is None else factor_codes[j])
            continue
        a, b = f.search_range
        lower[j] = (a - f.centre) / f.half_range
        upper[j] = (b - f.centre) / f.half_range
        levels.append(None)
    A, b = rule_arrays(study, coded=True)
    names = tuple(r.rule for r in study_rules(study))
    region = Region(lower=lower, upper=upper, levels=tuple(levels), A=A, b=b,
                    rule_names=names)
    region.check()
    return region
