"""The parts of a generated study: factors, region, designs, simulated responses,
blocks, and the storage and panel tables behind derived responses.

``Parts`` is the half of the study builder (oracle_studies._Builder) that adds
things to a study; every number it makes is simulated (a known polynomial plus
seeded noise), never a measurement.
"""
from __future__ import annotations

import itertools
import math

import numpy as np
import pandas as pd

from oracle_pickers import SeedPicker

from oracle_data import (LEVEL_WORDS, TWO_LEVELS, Factor, Region, Rule, Truth, fmt,
                         goal_keys, mixture_design, n_blend_terms, n_model_columns,
                         numeric_design)

__all__ = ["Parts", "NUMERIC_NAMES", "RESPONSE_NAMES"]

NUMERIC_NAMES = ("sugar", "fat", "salt", "water", "fibre", "acid", "mix_time", "bake_temp")
CAT_NAMES = ("flour", "binder", "film", "oil")
COMPONENT_NAMES = ("rice_flour", "sorghum", "tapioca", "potato_starch")
RESPONSE_NAMES = ("hardness", "volume", "colour", "liking", "cost", "moisture")
R_GAS = 8.314462618  # J/(mol K), CODATA 2018 (exact)


class Parts:
    """Adds factors, rules, designs and responses to the study being built."""

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

    def steps(self) -> None:
        """A step on some numeric factors and components, coarser or finer than the
        default and not always a round number."""
        for f in [*self.region.numeric, *self.region.components]:
            if self.pick.chance(0.5):
                f.step = float(fmt((f.high - f.low) / self.pick.choice([7, 25, 60, 400])))
                self.features.add("step")

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

    def set_whole_plots(self, labels: list, hard: list) -> None:
        """Runs sharing a batch: each run's whole plot, the factors set once per
        whole plot, and one simulated random shift per whole plot (in units of the
        response's noise SD, drawn with SD 0 to 2)."""
        name = self.pick.choice(["dough", "oven_load", "wp", "lot"])
        self.study["whole_plot"] = name
        self.whole_plot = [str(v) for v in labels]
        for f in hard:
            f.hard_to_change = True
        size = self.pick.choice([0.0, 0.5, 1.0, 2.0])
        self.plot_shift = {p: float(v) for p, v in zip(
            sorted(set(self.whole_plot)), self.rng.normal(0, size, len(set(labels))))}
        self.features.add("whole_plots")

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
                                     "property": "hardness",
                                     # a fast first-order fall stays above 0 (its log)
                                     "value": round(v, 4) if order == "zero" or v >= 1e-4
                                     else float(f"{v:.4g}")})
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
        """A panel table and its means: liking on 1..9, sometimes a second attribute
        on a 1..5 category scale, a second session, the lab's own column names or
        one column per attribute (``layout = "wide"``)."""
        self.features.add("panel")
        n = len(self.design)
        mu = np.clip(5 + 1.2 * Truth(self.rng, self.region)(self.design), 1.5, 8.5)
        ids = self._run_ids()
        assessors = [f"A{j + 1:02d}" for j in range(self.pick.integer(4, 7))]
        bias = self.rng.normal(0, 0.6, len(assessors))
        sessions = ["1", "2"] if self.pick.chance(0.3) else [""]
        category = self.pick.chance(0.4)
        wide = self.pick.chance(0.3)
        names = ({"run": "sample", "assessor": "judge", "attribute": "what",
                  "score": "mark", "session": "sitting"} if self.pick.chance(0.4)
                 else {k: k for k in ("run", "assessor", "attribute", "score", "session")})
        rows = []
        for i in range(n):
            tasted = [j for j in range(len(assessors)) if self.rng.random() < 0.85]
            if len(tasted) < 2:
                tasted = [0, 1]
            for j in tasted:
                for s in sessions:
                    scores = {"liking": int(np.clip(round(mu[i] + bias[j] + self.rng.normal(
                        0, 0.7)), 1, 9))}
                    if category:
                        scores["crunch"] = int(np.clip(round(mu[i] / 2 + self.rng.normal(
                            0, 0.6)), 1, 5))
                    base = {names["run"]: ids[i], names["assessor"]: assessors[j]}
                    if s:
                        base[names["session"]] = s
                    if wide:
                        rows.append({**base, **scores})
                    else:
                        rows += [{**base, names["attribute"]: a, names["score"]: v}
                                 for a, v in scores.items()]
        self.files["panel.csv"] = pd.DataFrame(rows).to_csv(index=False).encode()
        self.spec_panel = {"data": "panel.csv", "scale": [1, 9]}
        mapped = {k: v for k, v in names.items() if k != v
                  and not (wide and k in ("attribute", "score"))
                  and not (k == "session" and not sessions[0])}
        if mapped:
            self.spec_panel["columns"] = mapped
        if wide:
            self.spec_panel["layout"] = "wide"
        if category:
            self.spec_panel["attributes"] = [{"name": "crunch", "scale": [1, 5],
                                              "kind": "category"}]
        self.expect["panel"] = {0}
        # the category attribute as a response of its own (model/category_model.py),
        # its options drawn from the study's own data generator: the studies drawn
        # after this one (hypothesis reads one stream of choices) stay as they were
        local = SeedPicker(int(self.rng.integers(2 ** 31))) if category else None
        if category and local.chance(0.7):
            summary = local.choice(["expected", "top_box", "bottom_box"])
            keys = {"name": "crunch_cat", "derive": "panel_category", "attribute": "crunch",
                    "summary": summary, "model": "main",
                    "assessor": local.choice(["none", "fixed"])}
            values = np.clip(mu / 2, 1, 5)
            if summary != "expected":
                keys["top" if summary == "top_box" else "bottom"] = 2
                values = 100 * (values >= 4 if summary == "top_box" else values <= 2.5)
            self.derived.append("crunch_cat")
            self.responses.append({**keys, **goal_keys(local, values)})
        for kind in self.pick.choice([("panel_mean",), ("panel_adjusted",),
                                      ("panel_mean", "panel_adjusted")]):
            name = f"liking_{kind.split('_')[1]}"
            self.derived.append(name)
            self.responses.append({"name": name, "derive": kind, "attribute": "liking",
                                   **goal_keys(self.pick, mu)})

    def _run_ids(self) -> list[str]:
        return [f"R{i + 1:02d}" for i in range(len(self.design))]

