"""The files of a generated study and what the oracle needs to judge its answers.

``Files`` is the half of the study builder (oracle_studies._Builder) that
writes the study file (a TOML document), the runs table (CSV, Excel or a
decimal-comma CSV), pieces of a batch, confirmation runs and deliberate
mistakes, and returns a ``Generated`` study.
"""
from __future__ import annotations

from dataclasses import dataclass, field
from pathlib import Path

import numpy as np
import pandas as pd
import tomli_w

from oracle_data import Factor, Region

__all__ = ["Generated", "Files", "COMMANDS", "REFUSALS"]

COMMANDS = ("check", "fit", "optimize", "next", "plan", "report_html", "report_xlsx",
            "confirm")
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



class Files:
    """Writes the generated study's files and returns it as ``Generated``."""

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
                | ({"step": c.step} if c.step is not None else {})
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
            if f.step is not None:
                entry["step"] = f.step
        if f.hard_to_change:
            entry["hard_to_change"] = True
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
        self.whole_plot = None
        self.study.pop("whole_plot", None)
        for f in self.factors:
            f.hard_to_change = False
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
        if getattr(self, "whole_plot", None) is not None:
            # runs sharing a batch: one random shift per whole plot (simulated)
            table[self.study["whole_plot"]] = self.whole_plot
            shift = np.array([self.plot_shift[p] for p in self.whole_plot])
            for name, (mean, noise) in self.measured.items():
                self.columns[name] = self.columns[name] + shift * noise
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

