"""Writing the report: the page (``.html``) or the workbook (``.xlsx``), atomically.

``write_report`` chooses by the file's suffix and refuses to write over the
study's own files.
"""
from __future__ import annotations

from pathlib import Path

from ..errors import StudyError
from ..study.files import write_atomic
from .html import build_report_html
from .workbook import build_workbook

__all__ = ["write_report", "REPORT_SUFFIXES"]

REPORT_SUFFIXES = (".html", ".htm", ".xlsx")


def write_report(study, out: str | Path, *, top: int = 5, seed: int | None = None,
                 fit=None, result=None, now=None) -> Path:
    """Write the report (``.html``) or the workbook (``.xlsx``) atomically.

    Refuses to write over the study file, its data file or a confirmation
    table. Returns the path written.
    """
    out = Path(out)
    suffix = out.suffix.lower()
    if suffix not in REPORT_SUFFIXES:
        raise StudyError(f"{out.name}: a report is written as .html (a page) or .xlsx (a "
                         "workbook): change the file name's ending")
    from ..study.confirmations import confirmation_files

    protected = [p for p in (study.source, study.data_path) if p is not None]
    protected += list(confirmation_files(study).values())
    target = out.resolve()
    for path in protected:
        if Path(path).resolve() == target:
            raise StudyError(f"{out.name}: that is one of the study's own files; "
                             "choose another name for the report")
    if not target.parent.is_dir():
        raise StudyError(f"{out}: the folder {out.parent} does not exist: create it or "
                         "choose another folder")
    if suffix == ".xlsx":
        content = build_workbook(study, top=top, seed=seed, fit=fit, result=result, now=now)
    else:
        content = build_report_html(study, top=top, seed=seed, fit=fit, result=result,
                                    now=now)
    write_atomic(target, content, error=StudyError)
    return out
