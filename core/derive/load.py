"""The whole load: a study file, its confirmation table, its runs and its
derived responses, in that order.

It lives in derive/ because it ends with the derived responses, which need the
study stage below it; study/ never reaches up to here.
"""
from __future__ import annotations

from pathlib import Path

from ..errors import DataError, StudyError, where
from ..study.confirmations import confirmation_runs
from ..study.intake import RawTable, cell_text, read_table
from ..study.reader import build_study, parse_study_text, read_study_bytes
from ..study.runs import attach_runs, read_study_table
from ..study.spec import Study
from .derived import add_derived_responses
from .options import check_derived

__all__ = ["load_study", "study_from_dict"]


def _products(study: Study) -> RawTable:
    """The runs of a study without factors and without a runs table: every run id
    of its storage (then panel) table, in the order they first appear."""
    from .options import _section

    for name in ("storage", "panel"):
        sec = _section(study, name)
        if sec is None:
            continue
        raw = read_study_table(study, sec["data"], sheet=sec["sheet"])
        fname = raw.source.name
        run_col = sec.get("columns", {}).get("run", "run")
        if run_col not in raw.header:
            raise DataError(f"{fname}: no column '{run_col}' (found "
                            f"{[h for h in raw.header if h]}): give every row the id of "
                            "the product (or batch) it was measured on, for example P1")
        i = raw.header.index(run_col)
        first: dict[str, int] = {}
        for row, cells in raw.rows:
            cell = cells[i] if i < len(cells) else None
            if cell is None or not cell_text(cell):
                raise DataError(f"{where(fname, row, run_col)}blank run id: give every row "
                                "the id of the product (or batch) it was measured on")
            first.setdefault(cell_text(cell), row)
        if not first:
            raise DataError(f"{fname}: the table has a header but no rows")
        return RawTable(source=raw.source, header=["run"],
                        rows=[(row, [run]) for run, row in first.items()])
    raise StudyError(f"{_name(study)}: no factors and no [storage] or [panel] table: "
                     "nothing to derive the study's values from")


def _name(study: Study) -> str:
    return study.source.name if study.source is not None else "study"


def load_study(path: str | Path, *, with_data: bool = True) -> Study:
    """Read and check a study file and its data table.

    With ``with_data=False`` the data file is not read (planning a study whose
    runs have not been made yet).
    """
    path = Path(path)
    return study_from_dict(parse_study_text(read_study_bytes(path), path.name),
                           source=path, with_data=with_data)


def study_from_dict(spec: dict, *, source: str | Path | None = None,
                    with_data: bool = True, data_bytes: bytes | None = None,
                    uploads: dict[str, bytes] | None = None) -> Study:
    """Build a study from an already parsed specification (a TOML document).

    ``source`` names the study file; a relative ``data`` path is taken from its
    folder. ``data_bytes`` may carry the data file's content (an upload);
    ``uploads`` (file name -> content) may carry every table the study names
    (runs, storage, panel, confirmations), which are then not read from disk.
    """
    study = build_study(spec, source=source, uploads=uploads)
    source = study.source
    fname = source.name if source is not None else "study"
    data_path, sheet = study.data_path, study.sheet
    if "confirmations" in spec:
        confirmation_runs(study, read_files=with_data and source is not None)
    check_derived(study)
    if not with_data:
        return study
    if data_path is None and data_bytes is None:
        if study.factors:
            raise StudyError(f"{fname}: [study] has no data file: add data = \"runs.csv\"")
        # no factors: the products are the runs named in the storage or panel table
        return add_derived_responses(attach_runs(study, _products(study)))
    if data_bytes is not None:
        table = read_table(data_path if data_path is not None else Path("data.csv"),
                           sheet=sheet, data=data_bytes)
    else:
        table = read_study_table(study, data_path, sheet=sheet)
    return add_derived_responses(attach_runs(study, table))
