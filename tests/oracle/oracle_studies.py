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
across storage temperatures, ...); panel-derived responses; blocks; split plots (runs sharing a batch, with
hard-to-change factors); designs
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
from __future__ import annotations

import itertools

import numpy as np
import pandas as pd

from oracle_data import Factor, Rule, fmt, numeric_design
from oracle_files import COMMANDS, Files, Generated
from oracle_parts import Parts

__all__ = ["KINDS", "Generated", "generate", "COMMANDS"]

KINDS = ("numeric", "two_level", "levels", "mixture", "models", "pieces", "storage",
         "panel", "blocks", "confounded", "extra_columns", "no_factors", "mixed",
         "mistakes", "whole_plots", "screening")


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



class _Builder(Parts, Files):
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
        self.whole_plot: list | None = None  # each run's whole plot (runs sharing a batch)
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


    # -- kinds ---------------------------------------------------------------------

    def _extras(self, *, rules=True, confirm=True) -> None:
        """Goals on factors, rules, search ranges, production spread, labels and
        units, the confidence level, sometimes no goal at all."""
        if self.pick.chance(0.3):
            self.narrow_search()
        if self.pick.chance(0.2):
            self.spread()
        if self.pick.chance(0.3):
            self.steps()
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
        if r and self.pick.chance(0.3):  # a choice among process options
            self.add_categorical(self.pick.choice([2, 3]))
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
            elif how == "smooth" and len(self.design) >= 2 * len(self.factors) + 5:
                # a smooth model needs 2 runs per factor plus 3 with a value (README), and
                # some runs here may lack one: a margin of two
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

    def kind_whole_plots(self):
        """A split plot: hard-to-change factors set once per whole plot (a factorial
        of their own, replicated), the others crossed within each whole plot."""
        hard_num = self.pick.integer(0, 2)
        self.add_numeric(hard_num)
        hard = list(self.factors)
        if not hard or self.pick.chance(0.3):
            self.add_categorical(2)
            hard = list(self.factors)
        self.add_numeric(self.pick.integer(1, 2))
        if self.pick.chance(0.3):
            self.add_categorical(2)
        easy = [f for f in self.factors if f not in hard]
        self._extras()
        settings = list(itertools.product(*[
            f.levels if f.kind == "categorical" else (-1.0, 1.0) for f in hard]))
        e_num = [f for f in easy if f.kind != "categorical"]
        e_cat = [f for f in easy if f.kind == "categorical"]
        within = numeric_design(len(e_num), quadratic=False,
                                centres=self.pick.integer(0, 1))
        combos = list(itertools.product(*[f.levels for f in e_cat])) or [()]
        reps = self.pick.integer(2, 3)
        rows, labels = [], []
        for rep in range(reps):
            for i in self.rng.permutation(len(settings)):
                plot = f"P{rep + 1}{i + 1}" if self.pick.chance(0.5) else str(
                    rep * len(settings) + i + 1)
                for combo in combos:
                    for x in within:
                        row = {}
                        for f, v in zip(hard, settings[i]):
                            row[f.name] = v if f.kind == "categorical" else float(
                                fmt(f.natural(v)))
                        row.update({f.name: float(fmt(f.natural(v))) for f, v in zip(e_num, x)})
                        row.update({f.name: level for f, level in zip(e_cat, combo)})
                        rows.append(row)
                        labels.append(plot)
        self.design = pd.DataFrame(rows)
        self.study["model"] = self.pick.choice(["main", "interactions"])
        self.set_whole_plots(labels, hard)
        self.responses_plain(self.pick.integer(1, 2))

    def kind_screening(self):
        """A definitive screening design (tests/oracle/oracle_screening.py) of 3 to 7
        numeric factors, with 0 or 2 fake factors; now and then a run lost or added,
        so the screening analysis must fall back to the ordinary model."""
        from oracle_screening import paley_definitive

        m = self.pick.integer(3, 7)
        self.add_numeric(m)
        self._extras(rules=False)
        extra = self.pick.choice([0, 0, 2]) if m <= 5 else 0
        coded = paley_definitive(m, extra)
        if self.pick.chance(0.2):
            coded = np.vstack([coded, [1.0] + [0.0] * (m - 1)]) if self.pick.chance(0.5) \
                else coded[1:]
            self.features.add("screening_broken")
        num = self.region.numeric
        self.design = pd.DataFrame([{f.name: float(fmt(f.natural(v))) for f, v in
                                     zip(num, x)} for x in coded])
        self.study["model"] = "main"
        self.features.add("screening")
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
            plots = len(self.factors) >= 2 and self.pick.chance(0.25)
            reps = max(n_blocks, 2) if plots else n_blocks
            self.factorial(model=self.pick.choice(["main", "interactions"]),
                           replicate=reps)
            per = len(self.design) // reps
            if n_blocks > 1:
                self.set_blocks([i // per for i in range(len(self.design))], n_blocks)
            first = self.factors[0]
            if plots and "scattered_runs" not in self.features:
                # the first factor set once per replicate and setting: runs sharing a batch
                values = self.design[first.name].astype(str).to_numpy()
                self.set_whole_plots([f"{i // per}-{v}" for i, v in enumerate(values)],
                                     [first])
            if self.pick.chance(0.2):
                self.pieces = ("rows", self.pick.integer(2, 3))
                self.features.add("pieces_rows")
        for _ in range(self.pick.integer(1, 2)):
            how = self.pick.choice(["plain", "transform", "smooth"])
            # a smooth model needs 2 runs per factor plus 3 (README); fewer are refused
            enough = len(self.design) >= 2 * len(self.factors) + 3
            if how == "smooth" and enough and not self.region.components \
                    and not self.region.categorical and self.whole_plot is None:
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

