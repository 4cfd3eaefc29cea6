"""Every response of a study fitted at once, and predictions in natural units."""
from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np
import pandas as pd

from ..errors import DataError, ModelError, StudyError
from .fit import DEFAULT_ALPHA, ResponseModel
from .pieces import piece_components
from .transforms import forward

__all__ = ["StudyFit", "fit_study", "fit_response"]


@dataclass(frozen=True)
class StudyFit:
    """Fitted models of a study's responses.

    ``models``: response name -> fitted ResponseModel, in study order.
    ``skipped``: response name -> why it has no model (the error message).
    """

    study: object
    models: dict = field(default_factory=dict)
    skipped: dict = field(default_factory=dict)

    def predict(self, settings) -> pd.DataFrame:
        """Predictions at settings in natural units (categorical by level name).

        Returns a tidy table with columns point (row position of the settings),
        response, predicted, ci_low, ci_high, pi_low, pi_high.
        """
        from ..study.coding import to_coded

        if isinstance(settings, dict):
            settings = pd.DataFrame({k: np.atleast_1d(v) for k, v in settings.items()})
        if not isinstance(settings, pd.DataFrame):
            raise DataError("settings must be a table (or dict) with one column per factor")
        missing = [f.name for f in self.study.factors if f.name not in settings.columns]
        if missing:
            raise DataError(f"settings have no column for factor(s) {missing}: give a "
                            "value for every factor")
        try:
            X = to_coded(self.study.factors, settings)
        except (ValueError, TypeError):
            raise DataError("settings of numeric factors must be numbers: check the "
                            "values given") from None
        cols = ["point", "response", "predicted", "ci_low", "ci_high", "pi_low", "pi_high"]
        frames = []
        for name, model in self.models.items():
            table = model.intervals(X)
            table.insert(0, "response", name)
            table.insert(0, "point", np.arange(X.shape[0]))
            frames.append(table)
        if not frames:
            return pd.DataFrame(columns=cols)
        return pd.concat(frames, ignore_index=True)[cols]

    def report(self) -> dict:
        """``{"responses": {name: model.report()}, "skipped": {name: reason}}``."""
        return {"responses": {k: m.report() for k, m in self.models.items()},
                "skipped": dict(self.skipped)}


def fit_response(study, name: str, *, reduce: bool = False, terms=None,
                 alpha: float = DEFAULT_ALPHA, keep=None, drop=None,
                 _runs=None) -> ResponseModel:
    """Fit one response of a study (with block terms when its runs fall in blocks).

    ``terms`` overrides the study's model (a name or a list of terms); ``keep``
    and ``drop`` override the response's ``keep_terms`` / ``drop_terms`` keys.
    Raises ModelError when the response cannot be modelled. (``_runs``: the
    coded settings, run ids and blocks, when a caller fitting several responses
    has them already.)
    """
    response = study.response(name)
    if not study.factors:
        raise ModelError(_nothing_to_model(study))
    if study.runs is None:
        raise StudyError(f"study '{study.name}' has no runs loaded: load it with its data")
    if name not in study.runs.columns:
        raise ModelError(f"response '{name}' has no values in the runs yet (it is "
                         "computed from a storage or panel table): compute it first")
    spec = terms if terms is not None else study.model_for(response)
    if not isinstance(spec, str):
        spec = list(spec)
    if response.extra.get("derive") == "panel_category":
        from .category_model import fit_category_response  # the scores' cumulative logit

        if spec == "smooth":
            raise ModelError(f"response '{name}': a category response is modelled by "
                             "its scores' cumulative logit, not a smooth model: give it "
                             "model = \"main\" or another polynomial model")
        return fit_category_response(study, response, spec)
    plots = study.whole_plot_labels()
    if spec == "smooth" and plots is not None:
        raise ModelError(f"response '{name}': a smooth model treats every run as "
                         f"independent, but the runs share whole plots ("
                         f"{study.whole_plot}): use a polynomial model")
    if spec == "smooth":
        from .smooth import SmoothModel  # a Gaussian process: no terms to keep or drop

        model = SmoothModel(factor_names=study.factor_names, transform=response.transform,
                            confidence=study.confidence, name=name, factors=study.factors,
                            seed=study.seed)
        model.fit(study.coded().to_numpy(), study.runs[name].to_numpy(dtype=float),
                  study.runs["run"].to_numpy(), block=study.block_labels())
        return _with_reach(study, name, model)
    keep = response.extra.get("keep_terms", ()) if keep is None else keep
    drop = response.extra.get("drop_terms", ()) if drop is None else drop
    X = _runs[0] if _runs is not None else study.coded().to_numpy()
    mixture = None
    if study.mixture is not None:
        # Scheffe terms, no intercept; the linear blending terms are never dropped
        from .scheffe import mixture_fit_options

        spec, linear, mixture = mixture_fit_options(study, response, spec, X)
        keep = list(keep) + [t for t in linear if t not in keep]
    options = dict(terms=spec, factor_names=study.factor_names,
                   transform=response.transform, confidence=study.confidence,
                   name=name, reduce=reduce, alpha=alpha, keep=keep, drop=drop,
                   factors=study.factors, block_name=study.block_column or "block",
                   mixture=mixture)
    _, ids, block = _runs if _runs is not None else (None, study.runs["run"].to_numpy(),
                                                     study.block_labels())
    y = study.runs[name].to_numpy(dtype=float)
    from .panel_scores import fits_on_scores

    if fits_on_scores(response):
        from .panel_scores import NO_RUN_DF  # the panel's scores, runs random (panel_scores.py)
        from .panel_scores import score_data
        from .wholeplot import WholePlotModel

        d = score_data(study, response)
        # the run values' own fit says whether the runs leave df for a run-to-run SD
        runs_df = ResponseModel(**options).fit(X, y, ids, block=block).residual_df_
        options.update(block_name="assessor")
        if runs_df >= 1:
            model = WholePlotModel(whole_plot_name="run", **options)
            model.fit(d["X"], d["y"], d["ids"], block=d["assessor"], whole_plot=d["run"])
            # a new run's value is its panel's mean: run SD^2 + score SD^2 / scores per run
            _, per_run = np.unique(d["run"], return_counts=True)
            model.runs_of(int(round(float(np.median(per_run)))))
        else:
            model = ResponseModel(**options)
            model.fit(d["X"], d["y"], d["ids"], block=d["assessor"])
            model._warnings.append(NO_RUN_DF)
        model.fit_on_ = "scores"
        return model
    if plots is not None:  # runs sharing a batch: a random intercept per whole plot
        from .wholeplot import WholePlotModel

        model = WholePlotModel(whole_plot_name=study.whole_plot, **options)
        model.fit(X, y, ids, block=block, whole_plot=plots)
    else:
        model = ResponseModel(**options)
        model.fit(X, y, ids, block=block)
    model.pieces_ = _pieces(study, response, model)
    return _with_reach(study, name, model)


def _with_reach(study, name: str, model):
    """The model, warned when its response's values lie past the storage study
    (``derive.reach``): the flag of the derived values carried into the model."""
    reach = getattr(study, "reach", {}).get(name)
    note = reach.model_note(int(study.runs[name].notna().sum())) if reach else ""
    if note:
        if hasattr(model, "_warnings"):
            model._warnings.append(note)   # a polynomial builds warnings_ from it
        else:
            model.warnings_.append(note)   # a smooth model holds a plain list
    return model


def _pieces(study, response, model) -> dict | None:
    """Measurement noise against batch noise when the response's runs have pieces."""
    table = getattr(study, "pieces", None)
    if table is None:
        return None
    table = table[table["response"] == response.name]
    if table.empty:
        return None
    values = table["value"].to_numpy(dtype=float)
    scale = model.transform
    try:
        values = forward(values, scale, response=response.name)
    except ModelError:
        return None  # a piece the transform cannot take: no split on the model's scale
    return piece_components(values, table["run"].to_numpy(dtype=object),
                            [str(i) for i in model.residuals_.index],
                            residual_sd=model.residual_sd_,
                            residual_df=model.residual_df_, unit=response.unit,
                            scale=scale)


def _shared_runs(study):
    """What every response's fit reads from the runs: coded settings, ids, blocks."""
    from ..study.coding import to_coded

    # the array itself: the coded table (study.coded()) would only be unwrapped again
    return (to_coded(study.factors, study.runs), study.runs["run"].to_numpy(),
            study.block_labels())


def fit_study(study, *, reduce: bool = False, responses=None) -> StudyFit:
    """Fit every response of a study (or those named in ``responses``).

    A response that cannot be modelled is listed in ``skipped`` with the
    reason, so the others can still be used.
    """
    if not study.factors:  # one message, not one per response
        raise ModelError(_nothing_to_model(study))
    names = study.response_names if responses is None else list(responses)
    for name in names:
        study.response(name)  # unknown names are an error, not a skip
    models: dict[str, ResponseModel] = {}
    skipped: dict[str, str] = {}
    # the runs' coded settings are the same for every response: code them once
    shared = _shared_runs(study) if study.runs is not None else None
    for name in study.response_names:
        if name not in names:
            continue
        try:
            models[name] = fit_response(study, name, reduce=reduce, _runs=shared)
        except ModelError as exc:
            skipped[name] = str(exc)
    return StudyFit(study=study, models=models, skipped=skipped)


def _nothing_to_model(study) -> str:
    from ..study.spec import NOTHING_TO_MODEL

    return (f"{study.source.name}: " if study.source is not None else "") + NOTHING_TO_MODEL
