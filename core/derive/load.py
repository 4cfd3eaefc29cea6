"""The whole load: a study file, its confirmation table, its runs and its
derived responses, in that order.

It lives in derive/ because it ends with the derived responses, which need the
study stage below it; study/ never reaches up to here.
"""
from __future__ import annotations

from pathlib import Path

from ..errors import StudyError
from ..study.confirmations import confirmation_runs
from ..study.intake import read_table
from ..study.reader import build_study, parse_study_text, read_study_bytes
from ..study.runs import attach_runs, read_study_table
from ..study.spec import Study
from .derived import add_derived_responses
from .options import check_derived

__all__ = ["load_study", "study_from_dict"]


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
        raise StudyError(f"{fname}: [study] has no data file: add data = \"runs.csv\"")
    if data_bytes is not None:
        table = read_table(data_path if data_path is not None else Path("data.csv"),
                           sheet=sheet, data=data_bytes)
    else:
        table = read_study_table(study, data_path, sheet=sheet)
    return add_derived_responses(attach_runs(study, table))
