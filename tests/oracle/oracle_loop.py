"""The workbench's loop on every generated study: the plan it gives is the plan
command's file, pinned recipes are each their own what-if, a batch sheet adds
up exactly.

- plan: ``plan_request`` with the battery's plan options writes the same bytes
  as ``tradeoff plan`` did (the reference is the command's file itself).
- compare: each column of ``compare_recipes`` holds the models' predictions and
  prediction intervals at that column's recipe (``fit.predict``) and the D of
  ``what_if`` at that recipe alone.
- batch sheet: per recipe the grams add up exactly to the batch and each lies
  within one scale step of its exact share (largest remainder; common practice);
  for a blend the shares are the components over the blend's total.
- keep: the pinned recipes and a confirmation table typed from the batch sheet's
  run order come back from the session file exactly (settings to the last bit);
  that typed table, checked as the workbench checks it (``entered_study``), gives
  the comparison the library gives for the same batch written as a confirmation
  file beside a copy of the study (or both refuse it with the same message).
"""
from __future__ import annotations

import math

__all__ = ["check_loop"]

BATCH_G, STEP_G = 1000.0, 0.5


def _options(plan_args: list) -> dict:
    options, i = {}, 0
    while i < len(plan_args):
        key = str(plan_args[i])[2:].replace("-", "_")
        if i + 1 < len(plan_args) and not str(plan_args[i + 1]).startswith("--"):
            value = plan_args[i + 1]
            options[key] = value if not isinstance(value, str) else (
                int(value) if value.isdigit() else value)
            i += 2
        else:
            options[key] = True
            i += 1
    for key in ("whole_plots", "runs", "extra", "replicates", "seed"):
        if key in options:
            options[key] = int(options[key])
    if "ratio" in options:
        options["ratio"] = float(options["ratio"])
    return options


def check_loop(generated, study, fit, result, path, sheet, plan_args, outcome) -> None:
    import tradeoff
    from tradeoff.confirm.batch_sheet import batch_sheet, taken_run_ids
    from tradeoff.maps.recipe_compare import compare_recipes
    from tradeoff.maps.tables import what_if
    from tradeoff.plan.plan_request import plan_request

    if sheet is not None and sheet.exists():
        try:
            planned = plan_request(path, **_options(plan_args))
        except tradeoff.TradeoffError as exc:
            outcome.fail("loop", "plan", f"the command planned, the workbench refused: {exc}")
        else:
            if planned.csv != sheet.read_bytes():
                outcome.fail("loop", "plan", "the workbench's run sheet differs from the "
                             "plan command's with the same options")
    if result is None or fit is None or not result.solutions:
        return
    recipes = {s.label: dict(s.settings) for s in result.solutions[:3]}
    try:
        table = compare_recipes(study, fit, recipes)
    except tradeoff.TradeoffError as exc:
        outcome.fail("loop", "compare", f"pinned solutions refused: {exc}")
        return
    rows = table.set_index(["part", "item"])
    for label, settings in recipes.items():
        pred = fit.predict(settings).set_index("response")
        for name in pred.index:
            for part, column in (("predicted", "predicted"), ("interval low", "pi_low"),
                                 ("interval high", "pi_high")):
                a, b = float(rows.loc[(part, name), label]), float(pred.loc[name, column])
                if not (math.isclose(a, b, rel_tol=1e-9, abs_tol=1e-12)
                        or (math.isnan(a) and math.isnan(b))):
                    outcome.fail("loop", "compare", f"{label}: {part} of {name} is {a}, "
                                 f"the model says {b}")
        D = what_if(study, fit, settings, draws=500).desirability
        shown = float(rows.loc[("D", "all goals"), label])
        if not (math.isclose(shown, D, rel_tol=1e-9, abs_tol=1e-12)
                or (math.isnan(shown) and math.isnan(D))):
            outcome.fail("loop", "compare", f"{label}: D {shown} but its what-if says {D}")
    numeric = [f.name for f in study.factors if not f.is_categorical
               and not getattr(f, "is_component", False)]
    percent = () if study.mixture is not None else tuple(numeric[:1])
    best = result.solutions[0]
    if percent and not 0 <= float(best.settings[percent[0]]) <= 100:
        percent = ()
    try:
        taken = taken_run_ids(study)
        sheet_ = batch_sheet(study, {best.label: dict(best.settings)}, batch_g=BATCH_G,
                             step_g=STEP_G, batches=2, seed=1, percent_factors=percent,
                             taken=taken)
    except tradeoff.TradeoffError as exc:
        outcome.fail("loop", "batch", f"the best recipe gave no batch sheet: {exc}")
        return
    grams = sheet_.ingredients["grams"]
    if len(grams):
        if abs(grams.sum() - BATCH_G) > 1e-9:
            outcome.fail("loop", "batch", f"the amounts add up to {grams.sum()}, not {BATCH_G}")
        if ((grams - sheet_.ingredients["exact_g"]).abs() >= STEP_G + 1e-9).any():
            outcome.fail("loop", "batch", "an amount is a scale step or more from its share")
    if study.mixture is not None:
        total = float(study.mixture.total)
        for row in sheet_.ingredients.itertuples():
            share = 100.0 * float(best.settings[row.ingredient]) / total
            if not math.isclose(row.share_percent, share, rel_tol=1e-9, abs_tol=1e-9):
                outcome.fail("loop", "batch", f"{row.ingredient}: share {row.share_percent} "
                             f"%, the blend says {share} %")
    if set(sheet_.order["run"]) & taken or sheet_.order["run"].duplicated().any():
        outcome.fail("loop", "batch", f"batch ids {list(sheet_.order['run'])} repeat a "
                     f"confirmation run's id ({sorted(taken)})")
    if len(sheet_.order) != 2:
        outcome.fail("loop", "batch", "two confirmation batches asked, "
                     f"{len(sheet_.order)} in the run order")
    _check_keep(study, fit, best, recipes, sheet_, path, outcome)


def _check_keep(study, fit, best, recipes, sheet_, path, outcome) -> None:
    """Pins and a typed confirmation table through the session file, then compared."""
    import shutil

    import pandas as pd
    import tomlkit

    import tradeoff
    from tradeoff.confirm.check import check_confirmations
    from tradeoff.confirm.entered import entered_study
    from tradeoff.study.session import read_session, session_text

    columns = ["run", *study.factor_names, *study.response_names]
    measured = {n: v for n, v in best.predictions.items() if n in study.response_names}
    rows = [{"run": run, **recipes.get(recipe, best.settings),
             **(measured if i == 0 else {})}
            for i, (run, recipe) in enumerate(zip(sheet_.order["run"], sheet_.order["recipe"]))]
    typed = pd.DataFrame(rows, columns=columns).astype(object)
    back = read_session(session_text(study={"kind": "path", "path": str(path)}, goals={},
                                     models={}, pins=recipes, typed={"confirm": typed}),
                        "oracle.session.json")
    if back["pins"] != recipes:
        outcome.fail("loop", "keep", f"pinned recipes {recipes} came back as {back['pins']}")
    table = back["typed"]["confirm"]
    again = pd.DataFrame(table["rows"], columns=table["columns"]).astype(object)
    same = [[a == b or (pd.isna(a) and pd.isna(b)) for a, b in zip(r1, r2)]
            for r1, r2 in zip(typed.itertuples(index=False), again.itertuples(index=False))]
    if list(again.columns) != columns or len(again) != len(typed) or not all(map(all, same)):
        outcome.fail("loop", "keep", "the typed confirmation table did not come back as typed")
        return
    # the workbench's check of the typed table
    try:
        changed, files = entered_study(study, again)
        shown = check_confirmations(changed, fit=fit, files=files)
    except tradeoff.TradeoffError as exc:
        shown = str(exc)
    # the same batch as a confirmation file beside a copy of the study
    folder = path.parent / "typed_confirmation"
    shutil.copytree(path.parent, folder, ignore=shutil.ignore_patterns("typed_confirmation"))
    copy = folder / path.name
    pd.DataFrame([rows[0]], columns=columns).to_csv(folder / "typed.csv", index=False)
    # named in the copy's confirmations however the file writes them (tables or a list)
    doc = tomlkit.parse(copy.read_text(encoding="utf-8"))
    if "confirmations" in doc:
        doc["confirmations"].append({"data": "typed.csv"})
    else:
        doc["confirmations"] = tomlkit.aot()
        doc["confirmations"].append(tomlkit.table().add("data", "typed.csv"))
    copy.write_text(tomlkit.dumps(doc), encoding="utf-8")
    try:
        told = check_confirmations(tradeoff.load_study(copy), fit=fit)
    except tradeoff.TradeoffError as exc:
        told = str(exc)
    if isinstance(shown, str) or isinstance(told, str):
        if not (isinstance(shown, str) and isinstance(told, str)):
            outcome.fail("loop", "keep", f"typed: {shown if isinstance(shown, str) else 'checked'}"
                         f"; as a file: {told if isinstance(told, str) else 'checked'}")
        return
    a = shown.table[["response", "measured", "predicted", "pi_low", "pi_high", "inside"]]
    b = told.table[["response", "measured", "predicted", "pi_low", "pi_high", "inside"]]
    if not a.reset_index(drop=True).equals(b.reset_index(drop=True)):
        outcome.fail("loop", "keep", "the typed confirmation's comparison differs from the "
                     "same batch's as a file:\n" + a.to_string() + "\n" + b.to_string())
