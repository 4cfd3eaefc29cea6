"""One plan asked for by name and options, carried out exactly as ``tradeoff plan`` does.

The workbench offers the same designs as the command; to give the same run
sheet for the same seed it goes through the same routes (blend plans, split
plots, then the rest), with the command's defaults for every option not given.
The run sheet is written into a scratch folder by the command's own writer and
read back as bytes, so the download is byte for byte the file the command writes.
"""
from __future__ import annotations

import tempfile
from argparse import Namespace
from dataclasses import dataclass
from pathlib import Path

import pandas as pd

__all__ = ["PlanOutcome", "plan_request", "plan_study_file", "design_choices", "read_table_frame",
           "PLAN_DEFAULTS"]

# The options of ``tradeoff plan`` and their defaults (core/cli/plan.py declares them).
PLAN_DEFAULTS = {"runs": None, "alpha": None, "criterion": "d", "model": None, "extra": 0,
                 "keep": False, "resolution": None, "center": None, "replicates": 1,
                 "blocks": 1, "foldover": False, "augment": None, "whole_plots": None,
                 "ratio": None, "seed": None, "effect": None, "sd": None, "design": None,
                 "degree": None, "centroids": None, "axial": False, "json": False}


@dataclass(frozen=True)
class PlanOutcome:
    """A plan as the command reports it.

    Attributes
    ----------
    report : dict
        The command's JSON report (``tradeoff plan --json``), ``run_sheet`` left out.
    text : str
        The command's text, its last line (where the sheet went) left out.
    sheet : pandas.DataFrame
        The run sheet as read back from the CSV the command wrote.
    csv : bytes
        The run sheet as the command writes it with ``--out runs.csv``.
    xlsx : bytes
        The run sheet as the command writes it with ``--out runs.xlsx``.
    """

    report: dict
    text: str
    sheet: pd.DataFrame
    csv: bytes
    xlsx: bytes


def design_choices(study) -> tuple[str, ...]:
    """The designs ``tradeoff plan`` accepts for this study, the command's default first."""
    if study.mixture is not None:
        from ..study.mixture import components_of
        from .mixture_designs import MIXTURE_DESIGNS

        # the command's default (plan/mixture_plan.py mixture_route): the lattice when
        # no bound cuts into the simplex of the lows, else the extreme vertices
        free = all(abs(c.high - c.low - c.half_range) <= 1e-9 * c.total
                   for c in components_of(study))
        first = "lattice" if free else "vertices"
        return (first,) + tuple(d for d in MIXTURE_DESIGNS if d not in ("optimal", first))
    if any(f.hard_to_change for f in study.factors):
        return ("factorial", "optimal")
    from .layouts import DESIGNS

    return tuple(DESIGNS)


def _route(args):
    from .mixture_plan import mixture_route
    from .runsheet import plan_command
    from .split_command import split_plot_route

    routed = mixture_route(args)
    if routed is None:
        routed = split_plot_route(args)
    return routed if routed is not None else plan_command(args)


def plan_request(study_path: str | Path, **options) -> PlanOutcome:
    """Plan the runs of the study file at ``study_path`` as ``tradeoff plan`` would.

    Parameters
    ----------
    study_path : str or Path
        The study file (its data file need not exist).
    **options
        Any option of ``tradeoff plan`` by its long name with ``_`` for ``-``
        (``design``, ``runs``, ``alpha``, ``center``, ``seed``, ``effect``,
        ``sd``, ...); options left out take the command's defaults.

    Returns
    -------
    PlanOutcome

    Raises
    ------
    PlanError, StudyError
        With the command's message when the options do not fit the study.
    """
    unknown = sorted(set(options) - set(PLAN_DEFAULTS))
    if unknown:
        raise TypeError(f"plan_request: unknown option(s) {', '.join(unknown)}")
    with tempfile.TemporaryDirectory(prefix="tradeoff-plan-") as folder:
        out = Path(folder) / "runs.csv"
        args = Namespace(study=str(study_path), out=str(out), **{**PLAN_DEFAULTS, **options})
        report, text = _route(args)
        csv = out.read_bytes()
    report = {k: v for k, v in report.items() if k != "run_sheet"}
    text = "\n".join(line for line in text.splitlines() if not line.startswith("Run sheet:"))
    return PlanOutcome(report=report, text=text, sheet=read_table_frame(csv), csv=csv,
                       xlsx=_workbook(csv))


def _workbook(csv: bytes) -> bytes:
    """The sheet as the command writes it with ``--out runs.xlsx`` (planned once, not
    twice: the same table, numbers as numbers, through the same safe writer)."""
    import io

    from ..study.safe_cells import restore_text, table_bytes

    table = pd.read_csv(io.BytesIO(csv), keep_default_na=False, na_values=[""],
                        dtype={"run": str})
    for column in ("std_order", "run_order"):
        if column in table:
            table[column] = table[column].astype("Int64")
    table = table.map(lambda v: restore_text(v) if isinstance(v, str) else v)
    return table_bytes(table, ".xlsx", sheet="runs")


def read_table_frame(data: bytes) -> pd.DataFrame:
    """The run sheet CSV as a table of text cells (blank cells empty)."""
    import io

    return pd.read_csv(io.BytesIO(data), dtype=str, keep_default_na=False)


def plan_study_file(study, sheet_name: str) -> bytes:
    """The study file that goes with a run sheet: the study, its data file the sheet.

    Fill in the sheet's response columns, keep both files in one folder, and the
    study opens with the planned runs as its data.
    """
    import tomli_w

    from ..study.writer import study_to_dict

    doc = study_to_dict(study)
    doc["study"]["data"] = sheet_name
    doc["study"].pop("sheet", None)
    doc.pop("confirmations", None)  # the plan's runs come before any confirmation
    return tomli_w.dumps(doc).encode("utf-8")
