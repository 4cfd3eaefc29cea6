"""Write the invented demo study: a high-protein snack bar texture study.

EVERY NUMBER THIS SCRIPT WRITES IS INVENTED. The "true" behaviour below was
made up to look like a plausible bar recipe study (harder bars with more
protein, softer with more glycerol, hardening in storage that glycerol slows
more at high protein); it is not a measurement of any real product.

Run it again to get the same files (the random seed is fixed):

    python demo_data/make_demo.py

It writes, next to itself:
- snack_bar_runs.csv     one row per run: settings and the per-run responses
- snack_bar_storage.csv  hardness of every run at weeks 0, 2, 4, 8 and 12
- snack_bar_panel.csv    every panel member's liking score for every run (one
                         session), and a 1-5 crunchiness rating in two sessions
- snack_bar_storage_temps.csv  hardness of every run stored at 20, 30 and 40 degC
"""
from __future__ import annotations

import itertools
import os
import tempfile
from pathlib import Path

import numpy as np
import pandas as pd

SEED = 20261201
HERE = Path(__file__).resolve().parent
WEEKS = (0, 2, 4, 8, 12)
ASSESSORS = 12

# Natural ranges: coded -1 at the first value, +1 at the second.
PROTEIN = (20.0, 30.0)      # % of the bar
GLYCEROL = (4.0, 10.0)      # % of the bar
BINDERS = ("rice syrup", "date paste")
MIX_TEMP = (40.0, 60.0)     # degrees C


def design(rng: np.random.Generator) -> pd.DataFrame:
    """2^4 full factorial in standard order, then 4 centre points (2 per binder)."""
    rows = []
    for std, (t, b, g, p) in enumerate(itertools.product((-1, 1), repeat=4), start=1):
        rows.append({"std_order": std, "p": p, "g": g, "b": b, "t": t})
    for k, b in enumerate((-1, 1, -1, 1), start=17):
        rows.append({"std_order": k, "p": 0, "g": 0, "b": b, "t": 0})
    coded = pd.DataFrame(rows)
    order = rng.permutation(len(coded))
    coded = coded.iloc[order].reset_index(drop=True)
    coded.insert(0, "run", [f"R{i:02d}" for i in range(1, len(coded) + 1)])
    return coded


def natural(low_high, coded):
    low, high = low_high
    return (low + high) / 2 + np.asarray(coded, float) * (high - low) / 2


def storage_table(coded: pd.DataFrame, rng) -> pd.DataFrame:
    p, g, b, t = (coded[c].to_numpy(float) for c in "pgbt")
    fresh = 17.0 + 3.2 * p - 2.4 * g + 1.1 * b + 0.7 * t - 0.6 * p * g
    # First-order hardening (per week): protein speeds it, glycerol slows it,
    # and glycerol slows it more at high protein (the p*g term).
    rate = 0.034 + 0.010 * p - 0.008 * g - 0.006 * p * g + 0.002 * t + 0.003 * b
    rows = []
    for i, run in enumerate(coded["run"]):
        for week in WEEKS:
            value = fresh[i] * np.exp(rate[i] * week) + rng.normal(0, 0.5)
            rows.append({"run": run, "week": week, "property": "hardness",
                         "value": round(float(value), 1)})
    return pd.DataFrame(rows)


# Storage at three temperatures (a separate table, own random stream, so the
# other demo files stay exactly as they were).
TEMPS_SEED = SEED + 15
STORAGE_PLAN = {20: (4, 8, 13, 26), 30: (2, 4, 8, 13), 40: (1, 2, 4, 6)}
R_GAS = 8.314462618


def storage_temperature_table(coded: pd.DataFrame) -> pd.DataFrame:
    """Hardness at 20, 30 and 40 degC: first-order hardening with an Arrhenius rate.

    Invented: the rate at 20 degC follows the same recipe pattern as the main
    storage table; the activation energy (kJ/mol) rises with glycerol and falls
    with protein, so recipes differ in how much warm storage speeds them up.
    """
    rng = np.random.default_rng(TEMPS_SEED)
    p, g, b, t = (coded[c].to_numpy(float) for c in "pgbt")
    fresh = 17.0 + 3.2 * p - 2.4 * g + 1.1 * b + 0.7 * t - 0.6 * p * g
    k20 = 0.8 * (0.034 + 0.010 * p - 0.008 * g - 0.006 * p * g + 0.002 * t + 0.003 * b) + 0.004
    ea = 65.0 + 10.0 * g - 6.0 * p + 3.0 * p * g          # kJ/mol
    rows = []
    for i, run in enumerate(coded["run"]):
        v0 = fresh[i] + rng.normal(0, 0.3)
        rows.append({"run": run, "week": 0, "storage_temp": "", "property": "hardness",
                     "value": round(float(v0), 1)})
        for temp, weeks in STORAGE_PLAN.items():
            k = k20[i] * np.exp(-ea[i] * 1e3 / R_GAS * (1 / (temp + 273.15) - 1 / 293.15))
            for week in weeks:
                value = fresh[i] * np.exp(k * week) * np.exp(rng.normal(0, 0.02))
                rows.append({"run": run, "week": week, "storage_temp": temp,
                             "property": "hardness", "value": round(float(value), 1)})
    return pd.DataFrame(rows)


def panel_table(coded: pd.DataFrame, rng) -> pd.DataFrame:
    p, g, b, t = (coded[c].to_numpy(float) for c in "pgbt")
    centre = (p == 0) & (g == 0) & (t == 0)
    # Liking peaks inside the box (the centre-point bump) and drops with chewiness.
    liking = (6.3 - 0.55 * p + 0.30 * g + 0.35 * b - 0.25 * p * b + 0.1 * t
              + 0.4 * centre)
    generosity = rng.normal(0, 0.5, ASSESSORS)
    rows = []
    for i, run in enumerate(coded["run"]):
        for a in range(ASSESSORS):
            score = np.clip(np.rint(liking[i] + generosity[a] + rng.normal(0, 0.8)), 1, 9)
            rows.append({"run": run, "assessor": f"A{a + 1:02d}", "attribute": "liking",
                         "score": int(score)})
    return pd.DataFrame(rows)


def crunch_table(coded: pd.DataFrame) -> pd.DataFrame:
    """Crunchiness on a 1-5 category scale, every assessor in two sessions.

    Its own seeded stream, so the liking scores and the runs table stay as they
    were before this attribute was added.
    """
    rng = np.random.default_rng(SEED + 27)
    p, g, t = (coded[c].to_numpy(float) for c in "pgt")
    # latent crunch: firmer with protein, softer with glycerol (invented)
    latent = 0.8 * p - 0.6 * g + 0.2 * t
    shift = rng.normal(0, 0.4, ASSESSORS)
    rows = []
    for session in ("1", "2"):
        for i, run in enumerate(coded["run"]):
            for a in range(ASSESSORS):
                z = latent[i] + shift[a] + rng.logistic(0, 0.3)
                score = int(np.digitize(z, [-1.2, -0.4, 0.4, 1.2]) + 1)
                rows.append({"run": run, "assessor": f"A{a + 1:02d}",
                             "attribute": "crunch", "score": score, "session": session})
    return pd.DataFrame(rows)


def runs_table(coded, storage, panel, rng) -> pd.DataFrame:
    p, g, b, t = (coded[c].to_numpy(float) for c in "pgbt")
    hardness = storage.pivot(index="run", columns="week", values="value")
    liking = panel.groupby("run")["score"].mean()
    water_activity = 0.615 - 0.035 * g + 0.008 * p - 0.006 * b + rng.normal(0, 0.004, len(p))
    cost = (0.50 + 0.055 * p + 0.012 * g + 0.030 * b + 0.004 * t
            + rng.normal(0, 0.002, len(p)))
    return pd.DataFrame({
        "run": coded["run"],
        "std_order": coded["std_order"],
        "protein": natural(PROTEIN, p),
        "glycerol": natural(GLYCEROL, g),
        "binder": [BINDERS[int(x > 0)] for x in b],
        "mix_temp": natural(MIX_TEMP, t),
        "hardness_fresh": hardness.loc[coded["run"], 0].to_numpy(),
        "hardness_12w": hardness.loc[coded["run"], 12].to_numpy(),
        "water_activity": np.round(water_activity, 3),
        "liking": np.round(liking.loc[coded["run"]].to_numpy(), 2),
        "cost": np.round(cost, 3),
    })


def write_csv(frame: pd.DataFrame, path: Path) -> None:
    """Write atomically so an interrupted run never leaves half a file."""
    fd, tmp = tempfile.mkstemp(dir=path.parent, suffix=".tmp")
    with os.fdopen(fd, "w", newline="") as handle:
        frame.to_csv(handle, index=False, lineterminator="\n")
    os.replace(tmp, path)


def main() -> None:
    rng = np.random.default_rng(SEED)
    coded = design(rng)
    storage = storage_table(coded, rng)
    panel = panel_table(coded, rng)
    runs = runs_table(coded, storage, panel, rng)
    write_csv(runs, HERE / "snack_bar_runs.csv")
    write_csv(storage, HERE / "snack_bar_storage.csv")
    panel_all = pd.concat([panel.assign(session="1"), crunch_table(coded)],
                          ignore_index=True)
    write_csv(panel_all, HERE / "snack_bar_panel.csv")
    temps = storage_temperature_table(coded)
    write_csv(temps, HERE / "snack_bar_storage_temps.csv")
    print(f"wrote {len(runs)} runs, {len(storage)} storage values, "
          f"{len(panel_all)} panel scores to {HERE}")


if __name__ == "__main__":
    main()
