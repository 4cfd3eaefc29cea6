"""One generator of study folders of every kind, for the whole-pipeline oracle.

``generate(picker, kind)`` returns a ``Generated`` study: its study file (a
TOML document), its data files (runs, storage, panel, confirmation tables)
and what the oracle needs to judge the answers (the searched region with its
rules, the exit codes each command may give, the factors the data cannot
judge, the columns no key uses). Every key comes from the README's study-file
reference and ``tradeoff.study.spec.SECTION_KEYS``.

Kinds (``KINDS``): numeric factors; two-level choices; choices among 3 to 5
options; blends with process factors; transforms, smooth models and
explicit terms; pieces per batch; storage-derived responses (shelf life
across storage temperatures, ...); panel-derived responses; blocks; designs
whose terms are confounded (with blocks or in a fraction); runs tables with
unused columns; a storage study of one product without factors; and
``mixed``, which draws every feature at random. Each kind adds, at random,
goals of every kind with shapes and weights, goals on factors, linear rules,
narrowed search ranges, confirmation runs, and now and then a study that
cannot be estimated or has no goal at all.

All data are simulated (seeded numpy noise around a known polynomial), never
measurements.
"""
from __future__ import annotations

import itertools
import math
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np
import pandas as pd
import tomli_w

from oracle_data import (LEVEL_WORDS, TWO_LEVELS, Factor, Region, Rule, Truth, fmt,
                         goal_keys, mixture_design, n_blend_terms, n_model_columns,
                         numeric_design)

__all__ = ["KINDS", "Generated", "generate", "COMMANDS"]

KINDS = ("numeric", "two_level", "levels", "mixture", "models", "pieces", "storage",
         "panel", "blocks", "confounded", "extra_columns", "no_factors", "mixed",
         "mistakes")
COMMANDS = ("check", "fit", "optimize", "next", "plan", "report_html", "report_xlsx",
            "confirm")
NUMERIC_NAMES = ("sugar", "fat", "salt", "water", "fibre", "acid", "mix_time", "bake_temp")
CAT_NAMES = ("flour", "binder", "film", "oil")
COMPONENT_NAMES = ("rice_flour", "sorghum", "tapioca", "potato_starch")
RESPONSE_NAMES = ("hardness", "volume", "colour", "liking", "cost", "moisture")
R_GAS = 8.314462618  # J/(mol K), CODATA 2018 (exact)
# A small region (a narrowed range, a bounded blend, levels only) may hold no
# setting far enough from every run made: next then says so.
REFUSALS = {"next": r"^error: every setting in the searched region lies within .* coded "
                    r"units of a run already made"}


@dataclass
class Generated:
    """A generated study folder and what the oracle needs to judge its answers."""

    kind: str
    seed: int | None
    features: set
    spec: dict
    files: dict
    region: Region
    expect: dict
    unjudged: tuple = ()
    empty_levels: dict = field(default_factory=dict)
    # a study with a deliberate mistake: its error line names one of these files
    mentions: tuple = ()
    unused_columns: tuple = ()
    derived: tuple = ()
    replay: str = ""
    # refusals a valid study may meet, by command: exit 2 with a line matching these
    refusals: dict = field(default_factory=lambda: dict(REFUSALS))

    @property
    def study_text(self) -> str:
        return tomli_w.dumps(self.spec)

    def write(self, folder: Path) -> Path:
        folder.mkdir(parents=True, exist_ok=True)
        for name, data in self.files.items():
            (folder / name).write_bytes(data)
        path = folder / "study.toml"
        path.write_text(self.study_text, encoding="utf-8")
        return path

    def __repr__(self) -> str:  # what hypothesis prints for a failing example
        return (f"Generated(kind={self.kind!r}, features={sorted(self.features)}, "
                f"replay={self.replay!r})\n--- study.toml ---\n{self.study_text}")


def generate(pick, kind: str | None = None) -> Generated:
    """A study of ``kind`` (drawn by the picker when None) built from the picker's choices."""
    kind = pick.choice(KINDS) if kind is None else kind
    seed = pick.integer(0, 2**31 - 1)
    b = _Builder(kind, pick, np.random.default_rng(seed))
    getattr(b, f"kind_{kind}")()
    out = b.finish()
    out.replay = (f"seed {pick.seed}" if pick.seed is not None else f"data seed {seed}")
    out.seed = pick.seed
    return out


class _Builder:
    """Builds one study: factors, design, responses, then the files."""

    def __init__(self, kind, pick, rng):
        self.kind, self.pick, self.rng = kind, pick, rng
        self.features: set = set()
        self.factors: list[Factor] = []
        self.rules: list[Rule] = []
        self.total = None
        self.mixture = None
        self.study = {"name": f"oracle {kind} (simulated)", "data": "runs.csv"}
        self.responses: list[dict] = []
        self.columns: dict[str, np.ndarray] = {}  # runs-table response columns
        self.design: pd.DataFrame | None = None
        self.block: list | None = None
        self.files: dict[str, bytes] = {}
        self.extra: dict = {}
        self.expect = {c: {0} for c in COMMANDS}
        self.expect["plan"] = {0, 2}
        self.unjudged: tuple = ()
        self.empty_levels: dict = {}
        self.mistake = None
        self.mentions: tuple = ()
        self.unused: tuple = ()
        self.derived: list[str] = []
        self.pieces = None  # ("rows", n) or ("columns", n)
        self.measured: dict = {}  # response name -> mean function (natural settings)

    # -- the region ---------------------------------------------------------------

    @property
    def region(self) -> Region:
        return Region(self.factors, self.rules, self.total)

    def add_numeric(self, n: int) -> None:
        names = [x for x in NUMERIC_NAMES if x not in {f.name for f in self.factors}]
        for name in names[:n]:
            scale = self.pick.choice([0.01, 1.0, 1.0, 10.0, 1000.0])
            low = round(self.pick.real(0, 20), 2) * scale
            width = self.pick.choice([1, 2, 5, 10]) * scale
            self.factors.append(Factor(name, "numeric", low=float(fmt(low)),
                                       high=float(fmt(low + width))))
        if n:
            self.features.add("numeric")

    def add_categorical(self, n_levels: int) -> None:
        used = {f.name for f in self.factors}
        name = next(x for x in CAT_NAMES if x not in used)
        if n_levels == 2:
            levels = self.pick.choice(TWO_LEVELS)
            self.features.add("two_level")
        else:
            start = self.pick.integer(0, len(LEVEL_WORDS) - n_levels)
            levels = LEVEL_WORDS[start:start + n_levels]
            self.features.add("levels3+")
        self.factors.append(Factor(name, "categorical", levels=tuple(levels)))

    def add_components(self, q: int) -> None:
        self.total = self.pick.choice([100.0, 1.0, 50.0])
        lows = np.array([round(self.pick.real(0, 0.2), 2) for _ in range(q)])
        if self.pick.chance(0.3):
            lows[:] = 0.0
        highs = np.ones(q)
        if self.pick.chance(0.6):  # some highs cut into the simplex
            for j in range(q):
                if self.pick.chance(0.5):
                    highs[j] = round(max(lows[j] + 0.25, self.pick.real(0.4, 0.8)), 2)
        if highs.sum() < 1.0:
            highs[0] = 1.0
        for _ in range(q):  # the bounds the others imply (the tool tightens to them)
            lows = np.maximum(lows, 1.0 - (highs.sum() - highs))
            highs = np.minimum(highs, 1.0 - (lows.sum() - lows))
        for j in range(q):
            self.factors.append(Factor(COMPONENT_NAMES[j], "component",
                                       low=float(fmt(lows[j] * self.total)),
                                       high=float(fmt(highs[j] * self.total))))
        self.features.add("components")

    def add_rule(self) -> None:
        num = self.region.numeric
        comps = self.region.components
        if comps and self.pick.chance(0.7):
            a, b = comps[0], comps[1]
            mid = self.region.sample(self.rng, 200)
            bound = float(np.quantile(mid[a.name] + mid[b.name], self.pick.real(0.4, 0.8)))
            self.rules.append(Rule({a.name: 1.0, b.name: 1.0}, float(fmt(bound))))
        elif len(num) >= 2:
            a, b = self.pick.choice(list(itertools.combinations(num, 2)))
            ca = self.pick.choice([1.0, 2.0, -1.0, 0.5]) / a.half
            cb = self.pick.choice([1.0, -1.0, 3.0]) / b.half
            # through the region: a share of 30 to 80 % of it keeps the rule
            mid = self.region.sample(self.rng, 400)
            bound = float(np.quantile(ca * mid[a.name] + cb * mid[b.name],
                                      self.pick.real(0.3, 0.8)))
            self.rules.append(Rule({a.name: float(fmt(ca)), b.name: float(fmt(cb))},
                                   float(fmt(bound))))
        else:
            return
        self.features.add("rules")

    def narrow_search(self) -> None:
        num = self.region.numeric
        if not num:
            return
        f = self.pick.choice(num)
        lo = f.low + f.half * 2 * self.pick.choice([0.0, 0.1, 0.25])
        hi = f.high - f.half * 2 * self.pick.choice([0.0, 0.2, -0.1])
        if hi - lo > 0.2 * (f.high - f.low):
            f.search = (float(fmt(lo)), float(fmt(hi)))
            self.features.add("search")

    def spread(self) -> None:
        """A production SD on some numeric factors (at most half of low..high)."""
        for f in self.region.numeric:
            if self.pick.chance(0.6):
                f.production_sd = float(fmt(f.half * self.pick.choice([0.02, 0.1, 0.3])))
                self.features.add("production_sd")

    def labels(self) -> None:
        """Labels and units, some of them beyond ASCII, and a description."""
        for f in self.factors:
            if f.kind != "categorical":
                f.unit = self.pick.choice(["%", "g", "°C", "min", "g/kg"])
            f.label = self.pick.choice([f"{f.name.replace('_', ' ').title()} content",
                                        f"Teneur en {f.name} (essai)", f"{f.name} — dose"])
        self.study["description"] = "Simulated data for the oracle; not a measurement."
        self.features.add("labels")

    def factor_goal(self) -> None:
        num = self.region.numeric
        if not num:
            return
        f = self.pick.choice(num)
        lo, hi = f.search_range
        f.goal = goal_keys(self.pick, np.linspace(lo, hi, 41))
        if f.goal["goal"] != "none":
            self.features.add("factor_goal")

    # -- designs -------------------------------------------------------------------

    def factorial(self, *, model: str | None = None, centres: int | None = None,
                  replicate: int = 1) -> str:
        """Runs for numeric and categorical factors: corners (and axial runs for a
        quadratic model) plus centres, crossed with every level combination."""
        num, cat = self.region.numeric, self.region.categorical
        if model is None:
            choices = ["main", "interactions", "interactions"]
            if num:
                choices.append("quadratic")
            if len(num) + len(cat) <= 3 and all(len(f.levels) == 2 for f in cat):
                choices.append("full")
            model = self.pick.choice(choices)
        centres = self.pick.integer(1, 3) if centres is None else centres
        random_runs = bool(model != "full" and num and self.pick.chance(0.2))
        combos = list(itertools.product(*[f.levels for f in cat])) or [()]
        if random_runs:  # runs scattered over the region, as gathered over earlier studies
            widths = [1] * len(num) + [len(f.levels) - 1 if len(f.levels) > 2 else 1 for f in cat]
            need = n_model_columns(model, widths, len(num))
            per = max(len(num) + 3 if model != "quadratic" else 2 * len(num) + 4,
                      math.ceil((need + 6) / len(combos)))
            parts = []
            for combo in combos:
                part = self.region.sample(self.rng, per, box=True)
                part = part[[f.name for f in num]].copy()
                for f, level in zip(cat, combo):
                    part[f.name] = level
                parts.append(part)
            table = pd.concat(parts, ignore_index=True)
            self.features.add("scattered_runs")
        else:
            coded = numeric_design(len(num), quadratic=model == "quadratic",
                                   centres=centres if num else 2)
            rows = []
            for combo in combos:
                for x in coded:
                    row = {f.name: float(fmt(f.natural(v))) for f, v in zip(num, x)}
                    row.update({f.name: level for f, level in zip(cat, combo)})
                    rows.append(row)
            table = pd.DataFrame(rows)
        table = pd.concat([table] * replicate, ignore_index=True)
        self.design = table
        self.study["model"] = model
        return model

    def blend_design(self) -> None:
        comps = self.region.components
        process = self.region.numeric + self.region.categorical
        model = self.pick.choice(["linear", "quadratic", "quadratic", "special_cubic"]
                                 + (["cubic"] if len(comps) == 3 else []))
        how = self.pick.choice(["none", "linear", "full"]) if process else "none"
        self.mixture = {"total": self.total, "model": model, "process": how}
        if how == "full":
            self.study["model"] = self.pick.choice(["main", "interactions"])
        blends = mixture_design(self.rng, self.region, n_blend_terms(len(comps), model) + 3)
        rows = []
        corners = list(itertools.product(*[
            (f.low, f.high) if f.kind == "numeric" else f.levels for f in process]))
        if how == "none":
            corners = corners[:1] if corners else [()]
        for _, blend in blends.iterrows():
            for corner in corners or [()]:
                row = dict(blend)
                row.update({f.name: v for f, v in zip(process, corner)})
                rows.append(row)
        table = pd.DataFrame(rows)
        extra = table.sample(2, random_state=self.rng.integers(2**31))  # repeats: pure error
        self.design = pd.concat([table, extra], ignore_index=True)

    # -- responses -----------------------------------------------------------------

    def measured_response(self, *, positive: bool = False, transform: str | None = None,
                          model: str | None = None, terms=None, infeasible: bool = False,
                          goal: dict | None = None) -> dict:
        name = next(x for x in RESPONSE_NAMES if x not in self.measured
                    and x not in self.derived)
        truth = Truth(self.rng, self.region)
        loc = self.pick.choice([0.0, 10.0, 100.0, -5.0])
        scale = self.pick.choice([0.1, 1.0, 3.0, 20.0])
        noise = scale * self.pick.choice([0.05, 0.1, 0.3])
        if positive or transform:
            base = abs(loc) + 1.0

            def mean(table, truth=truth, base=base):
                return base * np.exp(0.25 * truth(table))
            noise = 0.03 * base
        else:
            def mean(table, truth=truth, loc=loc, scale=scale):
                return loc + scale * truth(table)
        values = mean(self.design)
        sim = values + self.rng.normal(0, noise, len(values))
        if positive or transform:
            sim = np.maximum(sim, 0.05 * np.min(values))
        entry = {"name": name}
        probe = mean(self.region.sample(self.rng, 300))
        entry.update(goal if goal is not None else goal_keys(self.pick, probe,
                                                            infeasible=infeasible))
        if transform:
            entry["transform"] = transform
            self.features.add("transform")
        if model:
            entry["model"] = model
            self.features.add(model if model == "smooth" else "response_model")
        if terms:
            entry["terms"] = terms
            self.features.add("terms")
        self.measured[name] = (mean, noise)
        self.columns[name] = sim
        self.responses.append(entry)
        return entry

    def responses_plain(self, n: int) -> None:
        infeasible = self.pick.chance(0.08)
        for i in range(n):
            self.measured_response(infeasible=infeasible and i == 0)

    # -- kinds ---------------------------------------------------------------------

    def _extras(self, *, rules=True, confirm=True) -> None:
        """Goals on factors, rules, search ranges, production spread, labels and
        units, the confidence level, sometimes no goal at all."""
        if self.pick.chance(0.3):
            self.narrow_search()
        if self.pick.chance(0.2):
            self.spread()
        if self.pick.chance(0.3):
            self.labels()
        if self.pick.chance(0.25):
            self.study["confidence"] = self.pick.choice([0.9, 0.99, 0.8])
            self.features.add("confidence")
        if rules and self.pick.chance(0.4):
            self.add_rule()
        if self.pick.chance(0.35):
            self.factor_goal()
        self._confirm = confirm and self.pick.chance(0.4)
        self._no_goals = self.pick.chance(0.05)

    def kind_numeric(self):
        self.add_numeric(self.pick.integer(1, 4))
        self._extras()
        self.factorial()
        self.responses_plain(self.pick.integer(1, 3))

    def kind_two_level(self):
        self.add_numeric(self.pick.integer(1, 3))
        for _ in range(self.pick.integer(1, 2)):
            self.add_categorical(2)
        self._extras()
        self.factorial()
        self.responses_plain(self.pick.integer(1, 3))

    def kind_levels(self):
        self.add_numeric(self.pick.integer(0, 2))
        self.add_categorical(self.pick.integer(3, 5))
        if self.pick.chance(0.3):
            self.add_categorical(2)
        self._extras()
        self.factorial(model=self.pick.choice(["main", "interactions"]
                                              + (["quadratic"] if self.region.numeric else [])))
        self.responses_plain(self.pick.integer(1, 3))

    def kind_mixture(self):
        self.add_components(self.pick.integer(3, 4))
        r = self.pick.integer(0, 2)
        self.add_numeric(r)
        if r and self.pick.chance(0.3):
            self.add_categorical(2)
        self._extras()
        self.blend_design()
        self.responses_plain(self.pick.integer(1, 3))

    def kind_models(self):
        self.add_numeric(self.pick.integer(1, 3))
        if self.pick.chance(0.3):
            self.add_categorical(2)
        self._extras()
        model = self.factorial(model=self.pick.choice(["interactions", "quadratic"]),
                               centres=3)
        num = self.region.numeric
        for i in range(self.pick.integer(1, 3)):
            how = self.pick.choice(["transform", "smooth", "terms", "plain", "drop"])
            if how == "transform":
                self.measured_response(transform=self.pick.choice(["log", "sqrt"]))
            elif how == "smooth":
                self.measured_response(model="smooth")
            elif how == "terms":
                terms = [f.name for f in self.factors]
                if len(num) >= 2:
                    terms.append(f"{num[0].name}:{num[1].name}")
                if model == "quadratic" and self.pick.chance(0.5):
                    terms.append(f"{num[0].name}^2")
                self.measured_response(terms=terms)
            elif how == "drop" and len(num) >= 2:
                entry = self.measured_response(positive=self.pick.chance(0.5))
                entry["drop_terms"] = [f"{num[0].name}:{num[1].name}"]
                self.features.add("drop_terms")
            else:
                self.measured_response(model=self.pick.choice(["main", "interactions"]))

    def kind_pieces(self):
        self.add_numeric(self.pick.integer(1, 3))
        self._extras()
        self.factorial()
        self.pieces = (self.pick.choice(["rows", "columns"]), self.pick.integer(2, 4))
        self.features.add(f"pieces_{self.pieces[0]}")
        self.responses_plain(self.pick.integer(1, 2))

    def kind_storage(self):
        self.add_numeric(self.pick.integer(1, 2))
        if self.pick.chance(0.3):
            self.add_categorical(2)
        self._extras()
        self.factorial(model=self.pick.choice(["main", "interactions"]))
        self.storage(temps=self.pick.chance(0.6))
        if self.pick.chance(0.4):
            self.measured_response()

    def kind_panel(self):
        self.add_numeric(self.pick.integer(1, 3))
        self._extras()
        self.factorial(model=self.pick.choice(["main", "interactions"]))
        self.panel()
        if self.pick.chance(0.4):
            self.measured_response()

    def kind_blocks(self):
        self.add_numeric(self.pick.integer(1, 3))
        if self.pick.chance(0.3):
            self.add_categorical(2)
        self._extras()
        n_blocks = self.pick.integer(2, 3)
        self.factorial(model=self.pick.choice(["main", "interactions"]),
                       replicate=n_blocks)
        per = len(self.design) // n_blocks
        self.set_blocks([i // per for i in range(len(self.design))], n_blocks)
        self.responses_plain(self.pick.integer(1, 3))

    def kind_confounded(self):
        how = self.pick.choice(["blocks", "fraction", "factor", "few_runs", "empty_level"])
        self.features.add(f"confounded_{how}")
        self._confirm = self.pick.chance(0.3)
        self._no_goals = False
        if how == "few_runs":  # fewer runs than terms: terms aliased with each other
            self.add_numeric(self.pick.integer(1, 3))
            if self.pick.chance(0.5):
                self.add_categorical(self.pick.integer(2, 3))
            self.factorial(model="interactions")
            self._unestimable = True
            self.responses_plain(self.pick.integer(1, 2))
            return
        if how == "blocks":  # 2^3 in two blocks: the three-factor product is the block
            self.add_numeric(3)
            self.factorial(model="full", centres=0)
            x = np.column_stack([f.coded(self.design[f.name]) for f in self.factors])
            sign = np.prod(x, axis=1)
            self.set_blocks([0 if s < 0 else 1 for s in sign], 2)
        elif how == "fraction":  # 2^(4-1), fourth factor = product of the first three
            self.add_numeric(4)
            num = self.factors
            rows = []
            for x in itertools.product([-1.0, 1.0], repeat=3):
                x = list(x) + [x[0] * x[1] * x[2]]
                rows.append({f.name: float(fmt(f.natural(v))) for f, v in zip(num, x)})
            rows += [{f.name: f.centre for f in num}] * 2
            self.design = pd.DataFrame(rows)
            self.study["model"] = "interactions"
        elif how == "factor":  # a two-level choice made on its own day: confounded with the blocks
            self.add_numeric(self.pick.integer(1, 2))
            self.add_categorical(2)
            cat = self.factors[-1]
            self.factorial(model=self.pick.choice(["main", "interactions"]), centres=2)
            self.set_blocks([cat.levels.index(v) for v in self.design[cat.name]], 2)
            if self.pick.chance(0.5):  # the level to hold it at, named by the user
                cat.hold = self.pick.choice(cat.levels)
            self.unjudged = (cat.name,)
        else:  # a level declared but never made: nothing measured there
            self.add_numeric(self.pick.integer(1, 2))
            self.add_categorical(self.pick.integer(3, 4))
            cat = self.factors[-1]
            missing = self.pick.choice(cat.levels)
            made = tuple(v for v in cat.levels if v != missing)
            cat.levels, declared = made, cat.levels  # the design uses the levels made
            self.factorial(model=self.pick.choice(["main", "interactions"]))
            cat.levels = declared
            self.empty_levels = {cat.name: missing}
        self.responses_plain(self.pick.integer(1, 2))

    def kind_extra_columns(self):
        self.add_numeric(self.pick.integer(1, 3))
        if self.pick.chance(0.4):
            self.add_categorical(2)
        self._extras()
        self.factorial()
        self.responses_plain(self.pick.integer(1, 2))
        n = len(self.design)
        pool = {"replicate": [str(1 + i % 2) for i in range(n)],
                "tray_notes": [self.pick.choice(["ok", "edge burnt", ""]) for _ in range(n)],
                "operator": [self.pick.choice(["AB", "CD"]) for _ in range(n)],
                "batch_no": [f"L{100 + i // 3}" for i in range(n)]}
        chosen = [k for k in pool if self.pick.chance(0.5)] or ["replicate"]
        self.extra = {k: pool[k] for k in chosen}
        self.unused = tuple(chosen)
        self.features.add("unused_columns")

    def kind_no_factors(self):
        self.features.add("no_factors")
        self._confirm = self._unestimable = self._no_goals = False
        n = self.pick.integer(1, 3)
        self.design = pd.DataFrame(index=range(n))
        self.storage(temps=True, goal=self.pick.chance(0.5))
        self.expect.update({c: {0, 2} for c in ("fit", "optimize", "next", "plan",
                                                "confirm")})

    def kind_mixed(self):
        if self.pick.chance(0.25):
            self.add_components(self.pick.integer(3, 4))
            self.add_numeric(self.pick.integer(0, 1))
            self._extras()
            self.blend_design()
        else:
            self.add_numeric(self.pick.integer(0, 3))
            combos = 1
            for _ in range(self.pick.integer(0 if self.region.numeric else 1, 2)):
                levels = self.pick.integer(2, 5)
                if combos * levels <= 12:
                    self.add_categorical(levels)
                    combos *= levels
            self._extras()
            n_blocks = self.pick.choice([1, 1, 2])
            self.factorial(model=self.pick.choice(["main", "interactions"]),
                           replicate=n_blocks)
            if n_blocks > 1:
                per = len(self.design) // n_blocks
                self.set_blocks([i // per for i in range(len(self.design))], n_blocks)
            if self.pick.chance(0.2):
                self.pieces = ("rows", self.pick.integer(2, 3))
                self.features.add("pieces_rows")
        for _ in range(self.pick.integer(1, 2)):
            how = self.pick.choice(["plain", "transform", "smooth"])
            if how == "smooth" and not self.region.components and not self.region.categorical:
                self.measured_response(model="smooth")
            elif how == "transform":
                self.measured_response(transform=self.pick.choice(["log", "sqrt"]))
            else:
                self.measured_response()
        if self.pick.chance(0.3):
            self.storage(temps=self.pick.chance(0.5))
        if self.pick.chance(0.3):
            self.panel()
        if self.pick.chance(0.15):
            self.extra = {"tray_notes": ["" for _ in range(len(self.design))]}
            self.unused = ("tray_notes",)
            self.features.add("unused_columns")

    def kind_mistakes(self):
        """A valid small study with one mistake a lab user makes: every command that
        reads it must refuse it with one line that names the file at fault."""
        self.add_numeric(self.pick.integer(1, 2))
        self.add_categorical(2)
        self.factorial(model="main")
        self.responses_plain(self.pick.integer(1, 2))
        self.mistake = self.pick.choice(["level", "number", "key", "bounds", "rule",
                                         "column", "target", "duplicate"])
        self.features.add(f"mistake_{self.mistake}")
        self._confirm = self._no_goals = False
        self.expect.update({c: {2} for c in COMMANDS})
        self.expect["plan"] = {0, 2}  # a plan needs the study file, not the data
        in_data = self.mistake in ("level", "number", "column")
        self.mentions = ("runs.csv",) if in_data else ("study.toml",)
        if self.mistake == "column":
            self.mentions = ("runs.csv", "study.toml")
            self.expect["plan"] = {0}

    def _mistake_in_data(self, table: pd.DataFrame) -> pd.DataFrame:
        row = self.pick.integer(0, len(table) - 1)
        cat = next(f for f in self.factors if f.kind == "categorical")
        if self.mistake == "level":
            table[cat.name] = table[cat.name].astype(object)
            table.loc[row, cat.name] = table.loc[row, cat.name] + "s"
        elif self.mistake == "number":
            name = next(iter(self.measured))
            table[name] = table[name].astype(object)
            table.loc[row, name] = f"{float(table.loc[row, name]):.3g} N"
        elif self.mistake == "column":
            table = table.drop(columns=[self.region.numeric[0].name])
        return table

    def _mistake_in_spec(self, spec: dict) -> None:
        first = spec["factors"][0]
        if self.mistake == "key":
            first["hihg"] = 3
        elif self.mistake == "bounds":
            first["low"], first["high"] = first["high"], first["low"]
        elif self.mistake == "rule":
            name = self.region.numeric[0].name
            spec["constraints"] = [{"rule": f"{name[:-1]} + {name} <= 3"}]
        elif self.mistake == "target":
            r = spec["responses"][0]
            r.update(goal="target", lower=1.0, upper=2.0, target=3.0)
        elif self.mistake == "duplicate":
            spec["factors"].append(dict(first))

    # -- blocks, storage, panel ----------------------------------------------------

    def set_blocks(self, index, n_blocks) -> None:
        labels = self.pick.choice([("1", "2", "3"), ("day A", "day B", "day C"),
                                   ("B1", "B2", "B3")])
        self.block = [labels[i] for i in index]
        self.block_name = self.pick.choice(["block", "day"])
        if self.block_name != "block":
            self.study["blocks"] = self.block_name
        self.block_shift = dict(zip(labels, self.rng.normal(0, 1, 3)))
        self.features.add("blocks")

    def storage(self, *, temps: bool, goal: bool = True) -> None:
        """A storage table (run, time, [temperature], property, value) and the
        responses derived from it: the property rises (or falls) at an Arrhenius
        rate (simulated)."""
        self.features.add("storage_temps" if temps else "storage")
        n = len(self.design)
        region = self.region
        t0 = Truth(self.rng, region)(self.design) if region.factors else np.zeros(n)
        t1 = Truth(self.rng, region)(self.design) if region.factors else np.zeros(n)
        order = self.pick.choice(["zero", "first"])
        up = self.pick.chance(0.7)
        v0 = 20.0 * np.exp(0.05 * t0) + self.rng.normal(0, 0.3, n)
        k = (0.6 if order == "zero" else 0.03) * np.exp(0.2 * t1)
        ea = np.clip(70 + 8 * t1 + self.rng.normal(0, 3, n), 40, 120) * 1e3
        temperatures = self.pick.choice([(20, 30, 40), (15, 25, 35), (20, 35)]) if temps else (None,)
        weeks = (4, 8, 12) if temps else (2, 4, 8, 12)
        ref = temperatures[0] if temps else 20
        packs = 2 if self.pick.chance(0.2) else 1
        ids = self._run_ids()
        sign = 1.0 if up else -1.0

        def value(i, t, T):
            rate = k[i] if T is None else k[i] * math.exp(
                -ea[i] / R_GAS * (1 / (T + 273.15) - 1 / (ref + 273.15)))
            if order == "zero":
                return v0[i] + sign * rate * t
            return v0[i] * math.exp(sign * rate * t)

        rows = []
        for i in range(n):
            for T in temperatures:
                for t in (0,) + weeks:
                    if t == 0 and T != temperatures[0]:
                        continue  # time 0 is one measurement of the fresh batch
                    for _ in range(packs):
                        v = value(i, t, T) * (1 + self.rng.normal(0, 0.004))
                        rows.append({"run": ids[i], "week": t,
                                     **({"temp_c": "" if t == 0 else T} if temps else {}),
                                     "property": "hardness", "value": round(v, 4)})
        table = pd.DataFrame(rows)
        self.files["storage.csv"] = table.to_csv(index=False).encode()
        self.spec_storage = {"data": "storage.csv", "time": "week", "time_unit": "weeks",
                             **({"temperature": "temp_c"} if temps else {})}
        horizon = weeks[-1] * self.pick.choice([0.7, 1.2])
        limit = float(np.median([value(i, horizon, temperatures[0]) for i in range(n)]))
        life = {"derive": "shelf_life", "property": "hardness", "limit": round(limit, 3),
                "direction": "up" if up else "down", "order": order,
                "estimate": self.pick.choice(["bound", "mean"])}
        if temps:
            life["at_temperature"] = temperatures[0]
        kinds = [life]
        if temps:
            extra = self.pick.choice(["activation_energy", "q10", "rate_at"])
            entry = {"derive": extra, "property": "hardness", "order": order}
            if extra != "activation_energy":
                entry["at_temperature"] = temperatures[-1]
            kinds.append(entry)
        else:
            extra = self.pick.choice(["value_at", "change", "rate", "time_to_limit"])
            entry = {"derive": extra, "property": "hardness", "order": order}
            if extra in ("value_at", "change"):
                entry["at"] = self.pick.choice([6, 8])
            if extra == "change" and self.pick.chance(0.5):
                entry["relative"] = True
            if extra == "time_to_limit":
                entry.update(limit=life["limit"], direction=life["direction"])
            kinds.append(entry)
        names = ("shelf_life", f"hardness_{extra}")
        for name, entry in zip(names, kinds):
            self.derived.append(name)
            record = {"name": name, **entry}
            if goal and name == "shelf_life":
                horizon_values = np.array([self._time_to(value, i, life, temperatures[0])
                                           for i in range(n)])
                record.update(goal_keys(self.pick, horizon_values))
            self.responses.append(record)

    @staticmethod
    def _time_to(value, i, life, T):
        """Where the simulated mean curve reaches the limit (bisection on 0..1000 weeks)."""
        lo, hi = 0.0, 1000.0
        rising = life["direction"] == "up"
        for _ in range(60):
            mid = (lo + hi) / 2
            past = value(i, mid, T) >= life["limit"] if rising else \
                value(i, mid, T) <= life["limit"]
            lo, hi = (lo, mid) if past else (mid, hi)
        return (lo + hi) / 2

    def panel(self) -> None:
        """A panel table (run, assessor, attribute, score on 1..9) and its means."""
        self.features.add("panel")
        n = len(self.design)
        mu = np.clip(5 + 1.2 * Truth(self.rng, self.region)(self.design), 1.5, 8.5)
        ids = self._run_ids()
        assessors = [f"A{j + 1:02d}" for j in range(self.pick.integer(4, 7))]
        bias = self.rng.normal(0, 0.6, len(assessors))
        rows = []
        for i in range(n):
            tasted = [j for j in range(len(assessors)) if self.rng.random() < 0.85]
            if len(tasted) < 2:
                tasted = [0, 1]
            for j in tasted:
                score = int(np.clip(round(mu[i] + bias[j] + self.rng.normal(0, 0.7)), 1, 9))
                rows.append({"run": ids[i], "assessor": assessors[j],
                             "attribute": "liking", "score": score})
        self.files["panel.csv"] = pd.DataFrame(rows).to_csv(index=False).encode()
        self.spec_panel = {"data": "panel.csv", "scale": [1, 9]}
        for kind in self.pick.choice([("panel_mean",), ("panel_adjusted",),
                                      ("panel_mean", "panel_adjusted")]):
            name = f"liking_{kind.split('_')[1]}"
            self.derived.append(name)
            self.responses.append({"name": name, "derive": kind, "attribute": "liking",
                                   **goal_keys(self.pick, mu)})

    def _run_ids(self) -> list[str]:
        return [f"R{i + 1:02d}" for i in range(len(self.design))]

    # -- the files -----------------------------------------------------------------

    def finish(self) -> Generated:
        if getattr(self, "_unestimable", False):
            self._drop_runs()
        if getattr(self, "_no_goals", False):
            for r in self.responses:
                for k in ("goal", "lower", "upper", "target", "shape", "shape_below",
                          "shape_above", "weight"):
                    r.pop(k, None)
            for f in self.factors:
                f.goal = None
            self.features.add("no_goals")
        if not any(r.get("goal", "none") != "none" for r in self.responses) and \
                not any(f.goal and f.goal["goal"] != "none" for f in self.factors):
            self.features.add("no_goals")
            self.expect["optimize"] = self.expect["next"] = {2}
        self._runs_file()
        spec = {"study": self.study}
        spec["study"]["seed"] = self.pick.integer(0, 99)
        if self.factors and any(f.kind != "component" for f in self.factors):
            spec["factors"] = [self._factor_entry(f) for f in self.factors
                               if f.kind != "component"]
        if self.region.components:
            spec["mixture"] = self.mixture
            spec["components"] = [{"name": c.name, "unit": c.unit or (
                "%" if self.total == 100 else "g"), "low": c.low, "high": c.high}
                | ({"label": c.label} if c.label else {})
                for c in self.region.components]
        spec["responses"] = self.responses
        if self.rules:
            spec["constraints"] = [{"rule": r.text} for r in self.rules]
        if hasattr(self, "spec_storage"):
            spec["storage"] = self.spec_storage
        if hasattr(self, "spec_panel"):
            spec["panel"] = self.spec_panel
        if getattr(self, "_confirm", False) and self.measured and self.factors:
            spec["confirmations"] = self._confirmations()
            if spec["confirmations"]:
                self.features.add("confirmations")
        if "confirmations" not in self.features:
            self.expect["confirm"] = {2}
            spec.pop("confirmations", None)
        if self.mistake:
            self._mistake_in_spec(spec)
        return Generated(kind=self.kind, seed=None, features=self.features, spec=spec,
                         files=self.files, region=self.region, expect=self.expect,
                         unjudged=self.unjudged, empty_levels=self.empty_levels,
                         mentions=self.mentions,
                         unused_columns=self.unused,
                         derived=tuple(self.derived))

    def _factor_entry(self, f: Factor) -> dict:
        entry = {"name": f.name}
        if f.kind == "categorical":
            entry["levels"] = list(f.levels)
            if f.hold is not None:
                entry["hold"] = f.hold
        else:
            entry.update(low=f.low, high=f.high)
            if f.search is not None:
                entry["search"] = list(f.search)
            if f.production_sd is not None:
                entry["production_sd"] = f.production_sd
        for key in ("label", "unit"):
            if getattr(f, key):
                entry[key] = getattr(f, key)
        if f.goal:
            entry.update(f.goal)
        return entry

    def _drop_runs(self) -> None:
        """Fewer runs than the smallest model has terms: the fit must refuse."""
        keep = max(1, min(len(self.factors), len(self.design) - 1))
        self.design = self.design.head(keep).reset_index(drop=True)
        self.block = None
        self.study.pop("blocks", None)
        for name, (mean, noise) in self.measured.items():
            self.columns[name] = mean(self.design) + self.rng.normal(0, noise, keep)
        self.features.add("not_estimable")
        self.expect.update({c: {0, 2} for c in ("fit", "optimize", "next", "report_html",
                                                "report_xlsx", "confirm")})

    def _runs_file(self) -> None:
        n = len(self.design)
        table = pd.DataFrame({"run": self._run_ids()})
        if self.block is not None:
            table[self.block_name] = self.block
            shift = np.array([self.block_shift[b] for b in self.block])
            for name, (mean, noise) in self.measured.items():
                self.columns[name] = self.columns[name] + shift * noise * 3
        for col in self.design.columns:
            table[col] = self.design[col].to_numpy()
        for name, values in self.columns.items():
            table[name] = values
        for name, values in self.extra.items():
            table[name] = values
        if self.pieces is not None and self.measured:
            table = self._with_pieces(table)
        if self.mistake:
            table = self._mistake_in_data(table)
        fmt_choice = "csv" if self.mistake else self.pick.choice(["csv"] * 8
                                                                 + ["xlsx", "semicolon"])
        if fmt_choice == "xlsx":  # as a lab saves it from its spreadsheet
            import io

            buffer = io.BytesIO()
            table.to_excel(buffer, index=False, sheet_name="runs")
            self.files["runs.xlsx"] = buffer.getvalue()
            self.study["data"] = "runs.xlsx"
            self.features.add("xlsx")
        elif fmt_choice == "semicolon":  # a locale with decimal commas
            text = table.to_csv(index=False, sep=";", decimal=",", float_format="%.10g")
            self.files["runs.csv"] = text.encode("utf-8-sig")
            self.features.add("decimal_comma")
        else:
            text = table.to_csv(index=False, float_format="%.10g")
            self.files["runs.csv"] = text.encode()
        assert n >= 1

    def _with_pieces(self, table: pd.DataFrame) -> pd.DataFrame:
        mode, m = self.pieces
        names = list(self.measured)
        if mode == "rows":
            parts = []
            for _ in range(m):
                part = table.copy()
                for name in names:
                    noise = self.measured[name][1]
                    part[name] = table[name] + self.rng.normal(0, noise, len(table))
                parts.append(part)
            out = pd.concat(parts).sort_index(kind="stable").reset_index(drop=True)
            return out
        for name in names:
            noise = self.measured[name][1]
            cols = [f"{name}_{j + 1}" for j in range(m)]
            for c in cols:
                values = table[name] + self.rng.normal(0, noise, len(table))
                if self.rng.random() < 0.3:
                    values = values.mask(pd.Series(self.rng.random(len(table)) < 0.1))
                table[c] = values
            table = table.drop(columns=[name])
            entry = next(r for r in self.responses if r["name"] == name)
            entry["columns"] = cols
        return table

    def _confirmations(self) -> list[dict]:
        """One to three settings in the region, each made once or twice; measured
        around the simulated mean, one in four far off (a miss)."""
        region = self.region
        table = region.sample(self.rng, self.pick.integer(1, 3))
        inline = self.pick.chance(0.5)
        entries, rows = [], []
        for i, point in table.iterrows():
            settings = {}
            for f in self.factors:
                v = point[f.name]
                settings[f.name] = v if f.kind == "categorical" else round(float(v), 6)
            if region.components:  # amounts rounded: the widest takes the rest
                comps = region.components
                widest = max(comps, key=lambda c: c.high - c.low)
                settings[widest.name] = round(region.total - sum(
                    settings[c.name] for c in comps if c is not widest), 6)
            frame = pd.DataFrame([settings])
            for _ in range(self.pick.choice([1, 1, 2])):
                measured = {}
                for name, (mean, noise) in self.measured.items():
                    if self.pick.chance(0.8):
                        off = 8 * noise if self.pick.chance(0.25) else 0.0
                        measured[name] = round(float(mean(frame)[0] + off
                                                     + self.rng.normal(0, noise)), 6)
                if not measured:
                    name = next(iter(self.measured))
                    measured[name] = round(float(self.measured[name][0](frame)[0]), 6)
                rows.append({**settings, **measured})
                entries.append({"settings": settings, "measured": measured})
        if inline:
            return entries
        self.files["confirm.csv"] = pd.DataFrame(rows).to_csv(
            index=False, float_format="%.10g").encode()
        return [{"data": "confirm.csv"}]
