"""Small study folders of every kind the study file allows, for the report and map tests.

``write_study(folder, kind)`` writes a study file and its tables into
``folder`` and returns the study file's path. The data are generated here
from a known equation plus seeded noise: they are property-check studies
(the tests compare the tool's numbers with independent computations, never
with values made up here), not demo data.

Kinds (``KINDS``):

- ``levels2`` .. ``levels5``: one categorical factor of 2 to 5 levels, alone;
- ``numeric_levels3``, ``numeric_levels5``: two numeric factors and a
  categorical one of 3 or 5 levels (a 2 x 2 x L factorial with centre points);
- ``blend_levels3``: three blend components with a three-level process factor;
- ``blend_process``: three blend components with a numeric process factor;
- ``blocks_levels3``: a numeric and a three-level factor, run in two blocks;
- ``smooth_levels3``: a smooth (Gaussian process) model with a three-level factor;
- ``log_levels4``: a log-transformed response and a four-level factor;
- ``storage_levels3``: a shelf life derived from a storage table;
- ``panel_levels3``: a panel mean derived from a panel table.

``ONE_PRODUCT_STUDY`` and ``one_product_storage`` are a study without factors:
one product stored at 20, 30 and 40 degC, built from a known Arrhenius rate
(1 N a week at 20 degC, 80 kJ/mol) plus seeded noise.
"""
from __future__ import annotations

import itertools
from pathlib import Path

import numpy as np

__all__ = ["KINDS", "write_study", "LEVEL_NAMES", "ONE_PRODUCT_STUDY", "one_product_storage",
           "R_GAS", "STORAGE_WEEKS"]

KINDS = ("levels2", "levels3", "levels4", "levels5", "numeric_levels3", "numeric_levels5",
         "blend_levels3", "blend_process", "blocks_levels3", "smooth_levels3",
         "log_levels4", "storage_levels3", "panel_levels3")
LEVEL_NAMES = ("oat", "rye", "spelt", "teff", "millet")
# each level's shift of the response (the levels' deviations differ, so the choice matters)
SHIFTS = (4.0, -1.0, 2.5, -3.0, 0.5)


R_GAS = 8.314462618      # J/(mol K), CODATA 2018 (exact)
# storage weeks at each temperature (degC) of the one-product study
STORAGE_WEEKS = {20: (4, 8, 13, 26), 30: (2, 4, 8, 13), 40: (1, 2, 4, 6)}
ONE_PRODUCT_STUDY = """[study]
name = "One bar stored at 20, 30 and 40 degC (generated)"

[storage]
data = "storage.csv"
time = "week"
temperature = "temp_c"

[[responses]]
name = "life"
unit = "weeks"
derive = "shelf_life"
property = "hardness"
limit = 35
direction = "up"
at_temperature = 20
"""


def one_product_storage(seed: int = 3) -> str:
    """The one product's storage table (CSV text): hardness from 12 N rising at
    k(T) = 1 N/week x exp(-80 kJ/mol / R (1/T - 1/293.15 K)), noise SD 0.3 N."""
    import math

    rng = np.random.default_rng(seed)
    rows = ["run,week,temp_c,property,value", f"P1,0,,hardness,{12 + rng.normal(0, 0.3):.4f}"]
    for T, weeks in STORAGE_WEEKS.items():
        k = math.exp(-80e3 / R_GAS * (1 / (T + 273.15) - 1 / 293.15))
        rows += [f"P1,{w},{T},hardness,{12 + k * w + rng.normal(0, 0.3):.4f}" for w in weeks]
    return "\n".join(rows) + "\n"


def _levels(n: int) -> list[str]:
    return list(LEVEL_NAMES[:n])


def _toml_list(items) -> str:
    return "[" + ", ".join(f'"{x}"' for x in items) + "]"


def _csv(rows: list[dict]) -> str:
    head = list(rows[0])
    lines = [",".join(head)]
    for row in rows:
        lines.append(",".join(f"{row[h]:.6g}" if isinstance(row[h], float) else str(row[h])
                              for h in head))
    return "\n".join(lines) + "\n"


def _factorial(levels: int, rng, *, reps: int = 1, centre: bool = True) -> list[dict]:
    """2 x 2 x L factorial in two numeric factors and a categorical one (+ centres)."""
    names = _levels(levels)
    rows = []
    points = list(itertools.product((-1.0, 1.0), (-1.0, 1.0)))
    if centre:
        points.append((0.0, 0.0))
    for _ in range(reps):
        for (a, b), (i, lv) in itertools.product(points, enumerate(names)):
            y = 50 + 6 * a - 4 * b + 2.5 * a * b + SHIFTS[i] + 1.5 * a * SHIFTS[i] / 4
            rows.append({"sugar": 4 + 2 * a, "fat": 10 + 5 * b, "grain": lv,
                         "crunch": y + rng.normal(0, 0.8)})
    return rows


def _sugar_grain_runs(names: list[str]) -> list[dict]:
    """Runs R1, R2, ...: sugar at 2 and 6 % with each grain, twice over."""
    settings = [(lv, a) for _ in range(2) for lv in names for a in (-1.0, 1.0)]
    return [{"run": f"R{k}", "sugar": 4 + 2 * a, "grain": lv}
            for k, (lv, a) in enumerate(settings, start=1)]


def write_study(folder: str | Path, kind: str, *, seed: int = 7) -> Path:
    """Write the study of ``kind`` (see ``KINDS``) into ``folder``; return its path."""
    folder = Path(folder)
    folder.mkdir(parents=True, exist_ok=True)
    rng = np.random.default_rng(seed)
    head = f'[study]\nname = "{kind} (generated)"\ndata = "runs.csv"\n'
    goal = 'goal = "maximize"\nlower = 40\nupper = 60\n'
    if kind.startswith("levels"):
        n = int(kind[-1])
        names = _levels(n)
        rows = [{"run": f"R{k + 1}", "grain": lv, "crunch": 50 + SHIFTS[i] + rng.normal(0, 0.7)}
                for k, (rep, (i, lv)) in enumerate(itertools.product(range(3),
                                                                     enumerate(names)))]
        text = (head + 'model = "main"\n\n[[factors]]\nname = "grain"\n'
                f"levels = {_toml_list(names)}\n\n[[responses]]\nname = \"crunch\"\n{goal}")
    elif kind in ("numeric_levels3", "numeric_levels5", "log_levels4", "smooth_levels3",
                  "blocks_levels3"):
        n = int(kind[-1])
        rows = _factorial(n, rng, reps=2 if kind == "smooth_levels3" else 1)
        model = "smooth" if kind == "smooth_levels3" else "interactions"
        transform = 'transform = "log"\n' if kind == "log_levels4" else ""
        if kind == "blocks_levels3":
            # two blocks (days); day 2 reads 3 higher, a shift the block term takes up
            rows = _factorial(n, rng, reps=2, centre=True)
            for k, row in enumerate(rows):
                row["block"] = 1 + (k >= len(rows) // 2)
                row["crunch"] += 3.0 * (row["block"] == 2)
        text = (head + f'model = "{model}"\n\n'
                '[[factors]]\nname = "sugar"\nunit = "%"\nlow = 2\nhigh = 6\n\n'
                '[[factors]]\nname = "fat"\nunit = "%"\nlow = 5\nhigh = 15\n\n'
                f'[[factors]]\nname = "grain"\nlevels = {_toml_list(_levels(n))}\n\n'
                f'[[responses]]\nname = "crunch"\n{transform}{goal}')
    elif kind in ("blend_levels3", "blend_process"):
        blends = [(1, 0, 0), (0, 1, 0), (0, 0, 1), (.5, .5, 0), (.5, 0, .5), (0, .5, .5),
                  (1 / 3, 1 / 3, 1 / 3)]
        process = ([("grain", lv, i) for i, lv in enumerate(_levels(3))]
                   if kind == "blend_levels3" else
                   [("bake", t, t) for t in (-1.0, 1.0)])
        rows = []
        for (x1, x2, x3), (pname, pvalue, p) in itertools.product(blends, process):
            shift = SHIFTS[p] if kind == "blend_levels3" else 2.0 * p
            y = 40 * x1 + 55 * x2 + 48 * x3 + 12 * x1 * x2 + shift + rng.normal(0, 0.6)
            setting = pvalue if kind == "blend_levels3" else 190 + 10 * pvalue
            rows.append({"rice": round(100 * x1, 4), "corn": round(100 * x2, 4),
                         "potato": round(100 * x3, 4), pname: setting, "crunch": y})
        factor = (f'[[factors]]\nname = "grain"\nlevels = {_toml_list(_levels(3))}\n'
                  if kind == "blend_levels3" else
                  '[[factors]]\nname = "bake"\nunit = "C"\nlow = 180\nhigh = 200\n')
        comps = "".join(f'[[components]]\nname = "{c}"\nunit = "%"\nlow = 0\nhigh = 100\n\n'
                        for c in ("rice", "corn", "potato"))
        text = (head + 'model = "main"\n\n[mixture]\ntotal = 100\nmodel = "quadratic"\n'
                'process = "linear"\n\n' + comps + factor
                + f'\n[[responses]]\nname = "crunch"\n{goal}')
    elif kind == "storage_levels3":
        names = _levels(3)
        rows, storage = _sugar_grain_runs(names), []
        for row in rows:
            a, i = (row["sugar"] - 4) / 2, names.index(row["grain"])
            rate = 0.8 + 0.15 * a + 0.1 * SHIFTS[i] / 4
            for week in (0, 2, 4, 6, 8):
                storage.append({"run": row["run"], "week": week, "property": "hardness",
                                "value": 20 + rate * week + rng.normal(0, 0.2)})
        (folder / "storage.csv").write_text(_csv(storage), encoding="utf-8")
        text = (head + 'model = "interactions"\n\n[storage]\ndata = "storage.csv"\n'
                'time = "week"\n\n'
                '[[factors]]\nname = "sugar"\nunit = "%"\nlow = 2\nhigh = 6\n\n'
                f'[[factors]]\nname = "grain"\nlevels = {_toml_list(names)}\n\n'
                '[[responses]]\nname = "life"\nunit = "weeks"\nderive = "time_to_limit"\n'
                'property = "hardness"\nlimit = 30\ndirection = "up"\ngoal = "maximize"\n'
                'lower = 9\nupper = 15\n')
    elif kind == "panel_levels3":
        names = _levels(3)
        rows, scores = _sugar_grain_runs(names), []
        for row in rows:
            a, i = (row["sugar"] - 4) / 2, names.index(row["grain"])
            mean = 6 + 0.6 * a + 0.3 * SHIFTS[i]
            for assessor in range(1, 7):
                score = int(np.clip(np.rint(mean + rng.normal(0, 0.8)), 1, 9))
                scores.append({"run": row["run"], "assessor": f"A{assessor}",
                               "attribute": "liking", "score": score})
        (folder / "panel.csv").write_text(_csv(scores), encoding="utf-8")
        text = (head + 'model = "interactions"\n\n[panel]\ndata = "panel.csv"\n'
                'scale = [1, 9]\n\n'
                '[[factors]]\nname = "sugar"\nunit = "%"\nlow = 2\nhigh = 6\n\n'
                f'[[factors]]\nname = "grain"\nlevels = {_toml_list(names)}\n\n'
                '[[responses]]\nname = "liking"\nderive = "panel_mean"\n'
                'attribute = "liking"\ngoal = "maximize"\nlower = 5\nupper = 8\n')
    else:
        raise ValueError(f"unknown study kind '{kind}': one of {KINDS}")
    if "run" not in rows[0]:
        rows = [{"run": f"R{k + 1}", **row} for k, row in enumerate(rows)]
    (folder / "runs.csv").write_text(_csv(rows), encoding="utf-8")
    path = folder / "study.toml"
    path.write_text(text, encoding="utf-8")
    return path
