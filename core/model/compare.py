"""Which model predicts a response best: cross-validated R2 and RMSE.

For each response, ``compare_models`` predicts every run from a model fitted
without it (leave-one-out) and scores the predictions: ``R2 = 1 - sum((y -
yhat)^2) / sum((y - mean y)^2)`` and ``RMSE = sqrt(mean((y - yhat)^2))``, both
in the response's own units. Above ``LOO_MAX_RUNS`` runs it uses ten folds
instead (``sklearn.model_selection.KFold``, shuffled with the study's seed).
The candidates are the polynomial models main, interactions and quadratic
(when some factor has three settings) and the smooth model.

Each candidate is the very model ``fit_response`` would fit (a blend's Scheffe
terms, the response's kept and dropped terms for the model in use), so the
figure of the model in use is the one its fit reports: a polynomial's
leave-one-out refits give exactly its PRESS, and a smooth model's fit itself
refits every hyperparameter without each run (``SmoothModel(refit_loo=True)``,
up to ``LOO_MAX_RUNS`` runs), so its figure is read from that fit. Above that,
every model is refitted in each of ten folds (a smooth model started from the
whole-data fit). R2 is computed on the modelling scale (the log of a
log-transformed response), as the fit's predicted R2; RMSE in natural units.

A quadratic model whose squares cannot be told apart (a two-level design with
centre points estimates only their sum) is listed last and never named best:
its figure rests on one curvature term standing for all the squares.
Blocks are left out of the comparison: a run's block effect cannot be
predicted from the other runs.
"""
from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from ..errors import ModelError, StudyError, TradeoffError

__all__ = ["ModelComparison", "compare_models", "compare_response", "cv_predictions",
           "cv_scores", "comparison_text", "COMPARED_MODELS", "LOO_MAX_RUNS"]

COMPARED_MODELS = ("main", "interactions", "quadratic", "smooth")
LOO_MAX_RUNS = 50  # leave-one-out up to this many runs, ten folds above (common practice)
_FOLDS = 10


@dataclass(frozen=True)
class ModelComparison:
    """The cross-validated scores of one response's candidate models.

    Attributes
    ----------
    response : str
    method : str
        ``leave-one-out`` or ``10-fold``.
    rows : tuple of dict
        ``{"model", "loo_r2", "rmse", "confounded"}`` per model that could be
        scored, best first (highest R2; a quadratic whose squares are confounded
        last, ``confounded`` True).
    notes : tuple of str
        Models left out and why.
    """

    response: str
    method: str
    rows: tuple
    notes: tuple = ()

    @property
    def best(self) -> str | None:
        """The model with the highest cross-validated R2 (None when none was scored);
        never a quadratic whose squares are confounded."""
        fair = [r for r in self.rows if not r.get("confounded")]
        return fair[0]["model"] if fair else None

    def to_list(self) -> list[dict]:
        """The JSON list ``[{"model", "loo_r2", "rmse", "confounded"}, ...]``, best first."""
        return [{"model": r["model"], "loo_r2": _num(r["loo_r2"]), "rmse": _num(r["rmse"]),
                 "confounded": bool(r.get("confounded"))} for r in self.rows]


def cv_scores(y, predictions) -> tuple[float, float]:
    """(R2, RMSE) of held-out predictions: 1 - SSE / SST around the mean of y."""
    y = np.asarray(y, dtype=float)
    e = y - np.asarray(predictions, dtype=float)
    sse = float(e @ e)
    sst = float(np.sum((y - y.mean()) ** 2))
    return 1.0 - sse / sst, math.sqrt(sse / len(y))


def _splitter(n: int, seed: int):
    from sklearn.model_selection import KFold, LeaveOneOut

    if n <= LOO_MAX_RUNS:
        return LeaveOneOut(), "leave-one-out"
    return KFold(n_splits=_FOLDS, shuffle=True, random_state=seed), f"{_FOLDS}-fold"


def cv_predictions(make, X, y, *, seed: int = 0) -> tuple[np.ndarray, str]:
    """Each run predicted by ``make().fit(X[train], y[train])`` from the folds without it.

    ``make`` builds an unfitted model (``ResponseModel`` or ``SmoothModel``).
    Returns the predictions (natural units) and the method's name.
    """
    X = np.asarray(X, dtype=float)
    y = np.asarray(y, dtype=float)
    splitter, method = _splitter(len(y), seed)
    out = np.empty(len(y))
    for train, test in splitter.split(X):
        out[test] = make().fit(X[train], y[train]).predict(X[test])
    return out, method


def _polynomial(study, response, model: str, X, current) -> dict:
    """The options ``fit_response`` gives a polynomial ``model`` of ``response``."""
    keep = drop = ()
    if model == current:  # the response's own term choices belong to its model in use
        keep = tuple(response.extra.get("keep_terms", ()))
        drop = tuple(response.extra.get("drop_terms", ()))
    spec, mixture = model, None
    if study.mixture is not None:
        from .scheffe import mixture_fit_options

        spec, linear, mixture = mixture_fit_options(study, response, model, X)
        keep = tuple(keep) + tuple(t for t in linear if t not in keep)
    return dict(terms=spec, keep=list(keep), drop=list(drop), mixture=mixture)


def _squares_confounded(model) -> bool:
    """True when the fitted model dropped a square as aliased with other terms."""
    return any(label.endswith("^2") for label in getattr(model, "aliases_", {}))


def compare_response(study, name: str, *, seed: int | None = None,
                     models=COMPARED_MODELS, restarts: int | None = None
                     ) -> ModelComparison:
    """Cross-validated R2 and RMSE of each candidate model of one response.

    Raises ModelError when the response cannot be compared at all (no
    values, or the same value in every run). ``restarts``: of the smooth
    model's whole-data fit (default: as ``fit_response`` fits it).
    """
    from .fit import ResponseModel
    from .smooth import SmoothModel, smooth_min_runs

    seed = study.seed if seed is None else seed
    response = study.response(name)
    if study.runs is None or name not in study.runs.columns:
        raise ModelError(f"response '{name}' has no values in the runs yet: nothing to "
                         "compare")
    X_all = study.coded().to_numpy()
    y_all = study.runs[name].to_numpy(dtype=float)
    keep = ~np.isnan(y_all)
    X, y = X_all[keep], y_all[keep]
    n, k = X.shape
    if n < 3:
        raise ModelError(f"response '{name}': only {n} run(s) have a value: too few "
                         "to compare models")
    if np.ptp(y) == 0:
        raise ModelError(f"response '{name}' is {y[0]:g} in every run: there is nothing "
                         "to compare, so it was skipped")
    common = dict(factor_names=study.factor_names, transform=response.transform,
                  confidence=study.confidence, name=name, factors=study.factors)
    current = study.model_for(response)
    from .transforms import forward

    z = forward(y, response.transform, response=name)
    loo = n <= LOO_MAX_RUNS
    numeric = [j for j, f in enumerate(study.factors) if not f.is_categorical]
    settings = [len(np.unique(np.round(X[:, j], 9))) for j in range(k)]
    rows, notes, method, seen = [], [], None, {}
    for model in models:
        if model == "smooth":
            need = smooth_min_runs(k)
            fewest = n - 1 if n <= LOO_MAX_RUNS else n - math.ceil(n / _FOLDS)
            if fewest < need:
                notes.append(f"smooth: each fit needs {need} runs with a value, and "
                             f"leaving runs out leaves {fewest}")
                continue
            more = {} if restarts is None else {"restarts": restarts}
            try:
                whole = SmoothModel(seed=seed, **more, **common).fit(X, y)
            except TradeoffError as exc:
                notes.append(f"smooth: {exc}")
                continue
            if loo and whole.loo_refit_ is not None:
                # its fit refitted it without each run: the figure its fit reports
                pred = whole.loo_refit_
                rows.append(_row("smooth", y, z, forward(pred, response.transform,
                                                          response=name), pred))
                method = "leave-one-out"
                continue
            start = whole.kernel_

            def make(start=start):
                # each fold refits every hyperparameter, from the whole-data values
                return SmoothModel(restarts=0, seed=seed, kernel=start, refit_loo=False,
                                   **common)
        else:
            if model == "quadratic" and not any(settings[j] >= 3 for j in numeric):
                notes.append("quadratic: no factor has three or more settings, so it "
                             "is the interactions model")
                continue
            from .terms import model_terms

            try:
                options = _polynomial(study, response, model, X, current)
            except ModelError as exc:
                notes.append(f"{model}: {exc}")
                continue
            terms = options["terms"] if study.mixture is not None else model_terms(
                model, study.factor_names, n_settings=settings, response=name)[0]
            if len(terms) > n - 1:
                notes.append(f"{model}: {len(terms)} terms for {n} runs: each fold "
                             "would have fewer runs than terms")
                continue

            def make(options=options):
                return ResponseModel(**options, **common)
        try:
            pred, method = cv_predictions(make, X, y, seed=seed)
        except (ModelError, StudyError) as exc:
            notes.append(f"{model}: {exc}")
            continue
        twin = next((m for m, p in seen.items() if np.allclose(p, pred, rtol=1e-10,
                                                               atol=1e-12)), None)
        if twin is not None:
            # a blend's [mixture] section (or too few settings) can make two named
            # models one: listing both would rank a model against itself
            notes.append(f"{model}: the same model as {twin} in this study (the same "
                         "predictions), so not listed again")
            continue
        seen[model] = pred
        row = _row(model, y, z, forward(pred, response.transform, response=name), pred)
        if model == "quadratic":
            try:
                row["confounded"] = _squares_confounded(make().fit(X, y))
            except (ModelError, StudyError):
                pass
            if row["confounded"]:
                notes.append("quadratic: its squares cannot be told apart in these runs "
                             "(the centre points give one curvature for all of them), so "
                             "it is listed last and not named best")
        rows.append(row)
    if method is None:
        method = _splitter(n, seed)[1]
    if study.block_labels() is not None:
        notes.append("blocks left out of the comparison (a run's block effect cannot "
                     "be predicted from the other runs)")
    rows.sort(key=lambda r: (r["confounded"], -r["loo_r2"] if math.isfinite(r["loo_r2"])
                             else math.inf))
    return ModelComparison(response=name, method=method, rows=tuple(rows),
                           notes=tuple(notes))


def _row(model: str, y, z, z_pred, y_pred) -> dict:
    """A comparison row: R2 on the modelling scale (as the fit's predicted R2), RMSE in
    natural units."""
    r2, _ = cv_scores(z, z_pred)
    _, rmse = cv_scores(y, y_pred)
    return {"model": model, "loo_r2": r2, "rmse": rmse, "confounded": False}


def compare_models(study, *, responses=None, seed: int | None = None,
                   restarts: int | None = None) -> tuple[dict, dict]:
    """Compare the candidate models of every response (or those named).

    Returns ``(comparisons, skipped)``: response name -> ModelComparison, and
    response name -> why it was not compared (a constant response, say).
    """
    names = study.response_names if responses is None else list(responses)
    for name in names:
        study.response(name)
    out, skipped = {}, {}
    for name in names:
        try:
            out[name] = compare_response(study, name, seed=seed, restarts=restarts)
        except ModelError as exc:
            skipped[name] = str(exc)
    return out, skipped


def comparison_text(comparisons: dict, skipped: dict) -> str:
    """The comparison tables for the terminal, naming the best model of each response."""
    lines = []
    for name, c in comparisons.items():
        lines.append(f"{name}: {c.method} cross-validation")
        lines.append(f"  {'model':<14}{'R2':>10}{'RMSE':>12}")
        for r in c.rows:
            lines.append(f"  {r['model']:<14}{_fmt(r['loo_r2'], '.3f'):>10}"
                         f"{_fmt(r['rmse'], '.4g'):>12}"
                         + ("   (squares confounded: not ranked)"
                            if r.get("confounded") else ""))
        if c.best is not None:
            lines.append(f"  best: {c.best} (highest cross-validated R2)")
        for note in c.notes:
            lines.append(f"  note: {note}")
        lines.append("")
    for name, why in skipped.items():
        lines.append(f"{name}: not compared: {why}")
    return "\n".join(lines).rstrip() + "\n"


def _fmt(v, spec):
    return "-" if v is None or not math.isfinite(v) else format(v, spec)


def _num(v):
    v = float(v)
    return v if math.isfinite(v) else None
