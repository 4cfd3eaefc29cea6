"""The generated studies' parts: factors, designs, known response surfaces, goals.

Everything here is simulated, and labelled so: a response is a known random
polynomial of the factors plus seeded normal noise, so the oracle knows what a
study should give. None of it is data about any product.

Coded units follow the README (common practice): numeric factors -1 at low,
+1 at high; a categorical factor is held here by its level's index (0, 1, ...);
a blend component by its L-pseudo-component share z = (amount - low) /
(total - sum of the lows) (Cornell (2002), Experiments with Mixtures, sec. 3.3,
from memory).
"""
from __future__ import annotations

import itertools
import math
from dataclasses import dataclass, field

import numpy as np
import pandas as pd

__all__ = ["Factor", "Rule", "Region", "Truth", "numeric_design", "mixture_design",
           "goal_keys", "fmt", "n_model_columns", "n_blend_terms"]

LEVEL_WORDS = ("oat", "rice", "spelt", "rye", "corn", "barley", "millet", "teff",
               "buckwheat", "sorghum")
TWO_LEVELS = (("rice syrup", "date paste"), ("pe film", "foil"), ("low", "high"),
              ("A", "B"))


def fmt(x: float) -> str:
    """A number as written into a generated file (ten significant digits)."""
    return f"{float(x):.10g}"


@dataclass
class Factor:
    """A generated factor: numeric (low, high), categorical (levels) or component."""

    name: str
    kind: str  # "numeric", "categorical" or "component"
    low: float | None = None
    high: float | None = None
    levels: tuple | None = None
    search: tuple | None = None
    goal: dict | None = None
    hold: str | None = None  # the level to hold a factor the data cannot judge at
    production_sd: float | None = None  # spread of the setting in production
    hard_to_change: bool = False  # set once per whole plot
    label: str | None = None
    unit: str | None = None
    step: float | None = None  # the step recommended settings are rounded to

    @property
    def lab_step(self) -> float:
        """``step``, else the README's default: the power of ten that cuts low..high
        into 20 to 200 steps."""
        if self.step is not None:
            return self.step
        return 10.0 ** math.floor(math.log10((self.high - self.low) / 20.0))

    @property
    def centre(self) -> float:
        return (self.low + self.high) / 2

    @property
    def half(self) -> float:
        return (self.high - self.low) / 2

    @property
    def search_range(self) -> tuple:
        return self.search if self.search is not None else (self.low, self.high)

    def natural(self, coded):
        return self.centre + self.half * np.asarray(coded, float)

    def coded(self, natural):
        return (np.asarray(natural, float) - self.centre) / self.half


@dataclass
class Rule:
    """A linear rule sum(coef[name] * natural setting) <= bound, and its text."""

    coef: dict
    bound: float

    @property
    def text(self) -> str:
        parts = [f"{fmt(c)}*{n}" for n, c in self.coef.items()]
        return " + ".join(parts).replace("+ -", "- ") + f" <= {fmt(self.bound)}"

    def holds(self, table: pd.DataFrame, tol: float = 1e-9, slack: float = 0.0) -> np.ndarray:
        """Which settings keep the rule, within ``tol`` of the sizes involved (and an
        absolute ``slack``)."""
        parts = [c * table[n].to_numpy(float) for n, c in self.coef.items()]
        size = np.maximum(sum(np.abs(p) for p in parts), max(1.0, abs(self.bound)))
        return sum(parts) <= self.bound + tol * size + slack

    def excess(self, table: pd.DataFrame) -> float:
        """How far the worst setting crosses the rule (0 when all keep it)."""
        left = sum(c * table[n].to_numpy(float) for n, c in self.coef.items())
        return float(max(0.0, np.max(left - self.bound)))


@dataclass
class Region:
    """The searched region: numeric search ranges, every level, the blend, the rules."""

    factors: list
    rules: list = field(default_factory=list)
    total: float | None = None  # a blend's total (components only)

    @property
    def numeric(self):
        return [f for f in self.factors if f.kind == "numeric"]

    @property
    def categorical(self):
        return [f for f in self.factors if f.kind == "categorical"]

    @property
    def components(self):
        return [f for f in self.factors if f.kind == "component"]

    def blend_scale(self) -> float:
        return self.total - sum(c.low for c in self.components)

    def sample(self, rng, n: int, *, box: bool = False) -> pd.DataFrame:
        """About n random settings inside the region (natural units, rules kept)."""
        parts, found = [], 0
        for _ in range(40):
            table = self._draw(rng, 4 * n, box)
            keep = np.ones(len(table), dtype=bool)
            for r in self.rules:
                keep &= r.holds(table)
            parts.append(table[keep])
            found += int(keep.sum())
            if found >= n:
                break
        if not found:
            raise AssertionError("the generated region is (nearly) empty")
        return pd.concat(parts).head(n).reset_index(drop=True)

    def _draw(self, rng, n, box):
        cols = {}
        for f in self.numeric:
            lo, hi = (f.low, f.high) if box else f.search_range
            cols[f.name] = rng.uniform(lo, hi, n)
        for f in self.categorical:
            cols[f.name] = np.asarray(f.levels, dtype=object)[rng.integers(0, len(f.levels), n)]
        comps = self.components
        if comps:
            z = rng.dirichlet(np.ones(len(comps)), n)
            amounts = np.array([c.low for c in comps]) + z * self.blend_scale()
            inside = np.all(amounts <= np.array([c.high for c in comps]) + 1e-12, axis=1)
            amounts = amounts[inside]
            m = len(amounts)
            cols = {k: v[:m] for k, v in cols.items()}
            for j, c in enumerate(comps):
                cols[c.name] = amounts[:, j]
        return pd.DataFrame(cols)


class Truth:
    """A known random response surface over the study's factors (simulated).

    Main effects, two-factor products and squares of the numeric factors, one
    effect per level of each categorical factor (and its product with the first
    numeric factor), Scheffe quadratic blending of the components, and each
    process factor shifting every component's blending effect.
    """

    def __init__(self, rng, region: Region):
        self.region = region
        num, cat, comp = region.numeric, region.categorical, region.components
        self.b1 = rng.normal(0, 1, len(num))
        self.b2 = {pair: rng.normal(0, 0.5) for pair in itertools.combinations(range(len(num)), 2)}
        self.b3 = rng.normal(0, 0.6, len(num))
        self.level = [rng.normal(0, 1, len(f.levels)) for f in cat]
        self.level_x = [rng.normal(0, 0.4, len(f.levels)) for f in cat]
        q = len(comp)
        self.blend = rng.normal(0, 1.5, q)
        self.blend2 = {pair: rng.normal(0, 2.5) for pair in itertools.combinations(range(q), 2)}
        self.process = rng.normal(0, 0.6, q)

    def __call__(self, table: pd.DataFrame) -> np.ndarray:
        region = self.region
        n = len(table)
        y = np.zeros(n)
        x = [f.coded(table[f.name]) for f in region.numeric]
        for j, b in enumerate(self.b1):
            y += b * x[j] + self.b3[j] * x[j] ** 2
        for (i, j), b in self.b2.items():
            y += b * x[i] * x[j]
        for f, eff, eff_x in zip(region.categorical, self.level, self.level_x):
            index = np.array([f.levels.index(v) for v in table[f.name]])
            y += eff[index] + (eff_x[index] * x[0] if x else 0.0)
        comps = region.components
        if comps:
            scale = region.blend_scale()
            z = [(table[c.name].to_numpy(float) - c.low) / scale for c in comps]
            w = x[0] if x else np.zeros(n)
            for i, b in enumerate(self.blend):
                y += (b + self.process[i] * w) * z[i]
            for (i, j), b in self.blend2.items():
                y += b * z[i] * z[j]
        return y


def numeric_design(k: int, *, quadratic: bool, centres: int) -> np.ndarray:
    """Coded runs: 2^k corners (+ face-centred axial runs for a quadratic) + centres."""
    if k == 0:
        return np.zeros((max(1, centres), 0))
    if quadratic and k == 1:
        rows = [[-1.0], [0.0], [1.0]]
    else:
        rows = [list(r) for r in itertools.product([-1.0, 1.0], repeat=k)]
        if quadratic:
            for j in range(k):
                for s in (-1.0, 1.0):
                    e = [0.0] * k
                    e[j] = s
                    rows.append(e)
    rows += [[0.0] * k for _ in range(centres)]
    return np.array(rows)


def mixture_design(rng, region: Region, n_blends: int) -> pd.DataFrame:
    """n_blends spread-out blends of the bounded region (greedy farthest point).

    Candidates: every vertex, edge middle and the centroid of the
    pseudo-component simplex that the highs allow, plus random blends; the
    design starts at the candidate nearest the centre and adds the candidate
    farthest from those chosen (a maximin design, common practice).
    """
    comps = region.components
    q = len(comps)
    scale = region.blend_scale()
    lows = np.array([c.low for c in comps])
    highs = np.array([c.high for c in comps])
    lattice = [np.array(p) / 2 for p in itertools.product(range(3), repeat=q) if sum(p) == 2]
    pool = np.vstack(lattice + [np.full(q, 1 / q), rng.dirichlet(np.ones(q), 4000)])
    amounts = lows + pool * scale
    keep = np.all(amounts <= highs + 1e-12, axis=1)
    table = pd.DataFrame(amounts[keep], columns=[c.name for c in comps])
    ok = np.ones(len(table), dtype=bool)
    for r in region.rules:
        if set(r.coef) <= set(table.columns):  # rules among the components
            ok &= r.holds(table)
    table = table[ok].reset_index(drop=True)
    z = (table.to_numpy() - lows) / scale
    chosen = [int(np.argmin(((z - z.mean(axis=0)) ** 2).sum(axis=1)))]
    dist = ((z - z[chosen[0]]) ** 2).sum(axis=1)
    while len(chosen) < min(n_blends, len(z)):
        i = int(np.argmax(dist))
        chosen.append(i)
        dist = np.minimum(dist, ((z - z[i]) ** 2).sum(axis=1))
    out = table.iloc[chosen].reset_index(drop=True)
    # amounts with four decimals; the widest component takes the rounding
    out = out.round(4)
    widest = int(np.argmax(highs - lows))
    others = [c.name for j, c in enumerate(comps) if j != widest]
    out[comps[widest].name] = region.total - out[others].sum(axis=1)
    return out


def n_blend_terms(q: int, model: str) -> int:
    """Scheffe model size (Cornell 2002, from memory): linear q, quadratic +C(q,2),
    special cubic +C(q,3), full cubic +C(q,2) more."""
    pairs, triples = math.comb(q, 2), math.comb(q, 3)
    return {"linear": q, "quadratic": q + pairs, "special_cubic": q + pairs + triples,
            "cubic": q + 2 * pairs + triples}[model]


def n_model_columns(model: str, widths: list[int], n_numeric: int) -> int:
    """Model columns of a named model, each factor taking ``widths[j]`` columns
    (1 for numeric and two-level factors, levels - 1 for more levels)."""
    total = 1 + sum(widths)
    if model in ("interactions", "quadratic"):
        total += sum(a * b for a, b in itertools.combinations(widths, 2))
    if model == "quadratic":
        total += n_numeric
    if model == "full":
        total = math.prod(1 + w for w in widths)
    return total


def goal_keys(pick, values: np.ndarray, *, infeasible: bool = False) -> dict:
    """A goal of a random kind with limits set from the spread of ``values``.

    The limits cut into the spread so that goals conflict and D is positive in
    part of the region only; with ``infeasible`` the limits lie beyond every
    value (no setting can meet them).
    """
    kind = pick.choice(["maximize", "minimize", "target", "range", "maximize",
                        "minimize", "target", "none"])
    if kind == "none":
        return {"goal": "none"}
    lo_v, hi_v = float(np.min(values)), float(np.max(values))
    span = max(hi_v - lo_v, 1e-6 * max(1.0, abs(hi_v)))

    def q(a):
        return float(np.quantile(values, a))

    keys = {"goal": kind}
    if kind == "maximize":
        keys.update(lower=q(pick.real(0.05, 0.6)), upper=q(1.0) + span * pick.choice([-0.3, 0, 0.1]))
        if infeasible:
            keys.update(lower=hi_v + 0.5 * span, upper=hi_v + span)
    elif kind == "minimize":
        keys.update(lower=q(0.0) - span * pick.choice([-0.3, 0, 0.1]), upper=q(pick.real(0.4, 0.95)))
        if infeasible:
            keys.update(lower=lo_v - span, upper=lo_v - 0.5 * span)
    elif kind == "target":
        a, b = pick.real(0.02, 0.35), pick.real(0.65, 0.98)
        keys.update(lower=q(a), upper=q(b), target=q(a + (b - a) * pick.real(0.2, 0.8)))
        if infeasible:
            keys.update(lower=hi_v + span, target=hi_v + 1.5 * span, upper=hi_v + 2 * span)
    else:
        keys.update(lower=q(pick.real(0.05, 0.45)), upper=q(pick.real(0.55, 0.95)))
        if infeasible:
            keys.update(lower=lo_v - 2 * span, upper=lo_v - span)
    if keys["upper"] <= keys["lower"]:
        keys["upper"] = keys["lower"] + 0.5 * span
    if kind == "target" and not keys["lower"] < keys["target"] < keys["upper"]:
        keys["target"] = (keys["lower"] + keys["upper"]) / 2
    if kind in ("maximize", "minimize") and pick.chance(0.6):
        keys["shape"] = pick.choice([0.3, 0.5, 2.0, 3.0, round(pick.real(0.2, 4.0), 2)])
    if kind == "target":
        if pick.chance(0.6):
            keys["shape_below"] = pick.choice([0.4, 1.0, 2.5, round(pick.real(0.2, 4.0), 2)])
        if pick.chance(0.6):
            keys["shape_above"] = pick.choice([0.5, 1.0, 3.0, round(pick.real(0.2, 4.0), 2)])
    if pick.chance(0.5):
        keys["weight"] = pick.choice([0.5, 2.0, 3.0, round(pick.real(0.1, 5.0), 2)])
    for k in ("lower", "upper", "target"):
        if k in keys:
            keys[k] = float(fmt(keys[k]))
    return keys
