"""Write the second invented demo study: a gluten-free bread flour blend.

EVERY NUMBER THIS SCRIPT WRITES IS INVENTED. The "true" behaviour below was
made up to look like a plausible blend study (tapioca starch lifts the loaf
and softens the crumb, sorghum flour firms it and darkens the crust, a hotter
oven browns the crust and dries the crumb; of the three hydrocolloids, the
first lifts and softens the loaf most but darkens its crust, the second firms
the crumb, the third lightens the crust); it is not a measurement of any real
flour, hydrocolloid, bread or product, and it makes no claim about gluten
content.

Run it again to get the same files (the random seed is fixed):

    python demo_data/make_flour_blend.py

It writes, next to itself:
- flour_blend_runs.csv   one row per loaf: the blend (% of the flour), the bake
                         temperature, the hydrocolloid and three measured responses
- flour_blend.toml       the study file

The design: the 11 blends (extreme vertices, edge mid-points, centroid) with
each of the three hydrocolloids, each blend-hydrocolloid pair baked at one
temperature, 175 or 205 C, alternating so that every blend meets both
temperatures and every hydrocolloid meets both (33 loaves); plus two centroid
loaves at 190 C with each hydrocolloid (6 loaves, the repeated runs that
measure run-to-run scatter). 39 loaves in all, enough for the Scheffe
quadratic blend with each flour crossed with temperature and hydrocolloid
(15 terms).
"""
from __future__ import annotations

import itertools
import os
import tempfile
from pathlib import Path

import numpy as np
import pandas as pd

SEED = 20261206
HERE = Path(__file__).resolve().parent
TOTAL = 100.0  # % of the flour blend
# Bounds in % of the blend, as the study file gives them (tapioca's high of 50 can
# never be reached: the other lows leave 45, which the loader reports and uses).
COMPONENTS = {"rice_flour": (40.0, 70.0), "sorghum_flour": (15.0, 45.0),
              "tapioca_starch": (10.0, 50.0)}
BAKE_TEMP = (175.0, 205.0)  # degrees C
# The hydrocolloid (a categorical process factor of three levels) and its invented
# effect on each response, per flour's proportion (rice, sorghum, tapioca): a
# blending term times the level, the form of the study's model.
HYDROCOLLOIDS = ("psyllium", "xanthan", "guar")
HYDRO_EFFECTS = {
    "specific_volume": {"psyllium": (0.20, 0.12, 0.05), "xanthan": (0.04, 0.00, 0.02),
                        "guar": (-0.10, -0.06, -0.12)},
    "crumb_hardness": {"psyllium": (-0.60, -0.80, -0.20), "xanthan": (0.40, 0.60, 0.20),
                       "guar": (0.00, 0.20, -0.10)},
    "crust_lightness": {"psyllium": (-4.5, -4.0, -5.0), "xanthan": (0.5, 0.5, 0.0),
                        "guar": (1.5, 1.0, 2.0)},
}


def vertices() -> np.ndarray:
    """Extreme vertices of the bounded blend region (two at bounds, one makes up the rest)."""
    lows = np.array([lo for lo, _ in COMPONENTS.values()])
    highs = np.array([hi for _, hi in COMPONENTS.values()])
    highs = np.minimum(highs, TOTAL - (lows.sum() - lows))
    found = []
    for free in range(3):
        others = [j for j in range(3) if j != free]
        for pick in itertools.product((0, 1), repeat=2):
            x = np.empty(3)
            for j, hi in zip(others, pick):
                x[j] = highs[j] if hi else lows[j]
            x[free] = TOTAL - x[others].sum()
            if lows[free] - 1e-9 <= x[free] <= highs[free] + 1e-9:
                found.append(np.round(x, 6))
    return np.unique(np.array(found), axis=0)


def blends() -> tuple[np.ndarray, list[str]]:
    """Vertices, edge mid-points (between vertices sharing a bound) and the centroid."""
    V = vertices()
    lows = np.array([lo for lo, _ in COMPONENTS.values()])
    highs = np.minimum(np.array([hi for _, hi in COMPONENTS.values()]),
                       TOTAL - (lows.sum() - lows))
    on = np.hstack([np.isclose(V, lows), np.isclose(V, highs)])
    edges = [(V[a] + V[b]) / 2 for a, b in itertools.combinations(range(len(V)), 2)
             if (on[a] & on[b]).any()]
    points = np.vstack([V, np.array(edges), V.mean(axis=0)[None, :]])
    kinds = ["vertex"] * len(V) + ["edge"] * len(edges) + ["centroid"]
    return points, kinds


def truth(P: np.ndarray, t: np.ndarray, h: list[str]) -> dict[str, np.ndarray]:
    """Invented Scheffe quadratic blending x linear temperature and hydrocolloid behaviour.

    ``P``: proportions of rice, sorghum, tapioca (rows add up to 1); ``t``: bake
    temperature coded -1 (175 C) to +1 (205 C); ``h``: each loaf's hydrocolloid.
    """
    r, s, k = P.T
    volume = (2.05 * r + 2.35 * s + 3.10 * k + 0.90 * r * s - 1.40 * s * k + 0.60 * r * k
              + t * (0.12 * r - 0.04 * s + 0.10 * k))
    hardness = (6.8 * r + 9.6 * s + 3.6 * k - 3.5 * r * s + 2.4 * s * k - 1.5 * r * k
                + t * (0.7 * r + 0.9 * s + 0.3 * k))
    crust = (63.0 * r + 50.0 * s + 70.0 * k - 6.0 * r * s + 4.0 * s * k - 8.0 * r * k
             + t * (-4.5 * r - 3.0 * s - 5.5 * k))
    out = {"specific_volume": volume, "crumb_hardness": hardness, "crust_lightness": crust}
    for name, by_level in HYDRO_EFFECTS.items():
        per_loaf = np.array([by_level[level] for level in h])
        out[name] = out[name] + (P * per_loaf).sum(axis=1)
    return out


def runs(rng: np.random.Generator) -> pd.DataFrame:
    points, kinds = blends()
    rows = []
    for i, (p, kind) in enumerate(zip(points, kinds)):
        for j, hydro in enumerate(HYDROCOLLOIDS):
            # one temperature per blend and hydrocolloid, alternating, so neither
            # the blend nor the hydrocolloid stands in for the temperature
            rows.append((p, kind, 1.0 if (i + j) % 2 == 0 else -1.0, hydro))
    centre = points[-1]
    for hydro in HYDROCOLLOIDS:  # repeated centroid loaves at 190 C: pure error
        rows += [(centre, "centroid", 0.0, hydro)] * 2
    order = rng.permutation(len(rows))
    rows = [rows[i] for i in order]
    A = np.array([r[0] for r in rows])
    t = np.array([r[2] for r in rows])
    h = [r[3] for r in rows]
    temp = (BAKE_TEMP[0] + BAKE_TEMP[1]) / 2 + t * (BAKE_TEMP[1] - BAKE_TEMP[0]) / 2
    # amounts to 0.1 %, rice flour taking the rounding so each blend adds up to 100
    A = np.round(A, 1)
    A[:, 0] = np.round(TOTAL - A[:, 1:].sum(axis=1), 1)
    y = truth(A / TOTAL, t, h)
    noise = {"specific_volume": 0.05, "crumb_hardness": 0.30, "crust_lightness": 0.8}
    table = pd.DataFrame({"run": [f"L{i:02d}" for i in range(1, len(rows) + 1)],
                          "point": [r[1] for r in rows]})
    for j, name in enumerate(COMPONENTS):
        table[name] = A[:, j]
    table["bake_temp"] = temp
    table["hydrocolloid"] = h
    for name, values in y.items():
        table[name] = np.round(values + rng.normal(0.0, noise[name], len(values)),
                               2 if name == "specific_volume" else 1)
    return table


STUDY = f"""\
# INVENTED DEMO: a gluten-free flour blend (made up by make_flour_blend.py, which also
# writes this file; not a measurement of any real flour, hydrocolloid or bread, and no
# claim about gluten content). Three flours add up to 100 % of the blend; the bake
# temperature and the hydrocolloid (three to choose from) are process factors.
[study]
name = "Gluten-free flour blend (invented demo)"
data = "flour_blend_runs.csv"
description = "Invented data: rice flour, sorghum flour and tapioca starch, baked at 175 to 205 C with one of three hydrocolloids"
# the process model: bake temperature and hydrocolloid enter as main effects
model = "main"

[mixture]
total = 100              # the three flours are % of the blend
model = "quadratic"      # Scheffe quadratic blending
process = "linear"       # each flour's blending term crossed with each process factor

[[components]]
name = "rice_flour"
label = "Rice flour"
unit = "%"
low = 40
high = 70

[[components]]
name = "sorghum_flour"
label = "Sorghum flour"
unit = "%"
low = 15
high = 45

[[components]]
name = "tapioca_starch"
label = "Tapioca starch"
unit = "%"
low = 10
high = 50               # cannot be reached (the other lows leave 45): the check says so

[[factors]]
name = "bake_temp"
label = "Bake temperature"
unit = "C"
low = 175
high = 205

[[factors]]
name = "hydrocolloid"
label = "Hydrocolloid"
levels = [{", ".join(f'"{h}"' for h in HYDROCOLLOIDS)}]

[[responses]]
name = "specific_volume"
label = "Loaf specific volume"
unit = "mL/g"
goal = "maximize"
lower = 2.2
upper = 2.9

[[responses]]
name = "crumb_hardness"
label = "Crumb hardness, day 1"
unit = "N"
goal = "minimize"
lower = 4
upper = 8

[[responses]]
name = "crust_lightness"
label = "Crust lightness (L*)"
goal = "target"
lower = 52
target = 58
upper = 64
"""


def write_atomic(path: Path, text: str) -> None:
    fd, tmp = tempfile.mkstemp(dir=path.parent, prefix=f".{path.name}.", suffix=".tmp")
    with os.fdopen(fd, "w", encoding="utf-8", newline="") as handle:
        handle.write(text)
    os.replace(tmp, path)


def main() -> None:
    rng = np.random.default_rng(SEED)
    table = runs(rng)
    write_atomic(HERE / "flour_blend_runs.csv", table.to_csv(index=False))
    write_atomic(HERE / "flour_blend.toml", STUDY)
    print(f"wrote {HERE / 'flour_blend_runs.csv'} ({len(table)} runs) and "
          f"{HERE / 'flour_blend.toml'}")


if __name__ == "__main__":
    main()
