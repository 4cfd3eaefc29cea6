"""Provenance: what a reader needs to reproduce a result.

Every result the tool hands out (the report, the workbook, the JSON of
``tradeoff optimize`` and ``tradeoff confirm``) carries a short block naming
the tool version, the SHA-256 of the study file and of its data file (the
bytes as stored), the date and the random seed. Running the same version on
files with the same hashes and the same seed gives the same answer.
"""
from __future__ import annotations

import datetime as _dt
import hashlib
import platform
from pathlib import Path

__all__ = ["provenance", "file_sha256", "bytes_sha256", "provenance_text"]


def bytes_sha256(data: bytes) -> str:
    """Hex SHA-256 digest of some bytes."""
    return hashlib.sha256(data).hexdigest()


def file_sha256(path: str | Path) -> str | None:
    """Hex SHA-256 digest of a file's bytes, or None when the file is not there."""
    path = Path(path)
    if not path.is_file():
        return None
    digest = hashlib.sha256()
    with path.open("rb") as handle:
        for chunk in iter(lambda: handle.read(1 << 16), b""):
            digest.update(chunk)
    return digest.hexdigest()


def provenance(study, *, seed: int | None = None, now: _dt.datetime | None = None,
               study_bytes: bytes | None = None, data_bytes: bytes | None = None,
               extra_files: dict[str, str | Path] | None = None) -> dict:
    """The provenance block of a result, JSON-ready.

    Parameters
    ----------
    study : Study
        The study the result was computed from.
    seed : int, optional
        The random seed the search used (defaults to the study's seed).
    now : datetime, optional
        The time to record (defaults to the current time, UTC).
    study_bytes, data_bytes : bytes, optional
        The study and data files' bytes when they did not come from disk (an
        upload in the workbench); hashed instead of the files.
    extra_files : dict, optional
        Further input files (label -> path), e.g. a confirmation-run table.

    Returns
    -------
    dict
        Keys ``tool``, ``version``, ``python``, ``created`` (ISO 8601, UTC),
        ``seed``, ``study_file``, ``study_sha256``, ``data_file``,
        ``data_sha256`` and ``other_files`` (label -> {file, sha256}).
        A hash is None when the bytes are not available.
    """
    from .. import __version__

    when = (now or _dt.datetime.now(_dt.timezone.utc)).astimezone(_dt.timezone.utc)
    source = Path(study.source) if study.source is not None else None
    data_path = Path(study.data_path) if study.data_path is not None else None
    if study_bytes is not None:
        study_hash = bytes_sha256(study_bytes)
    else:
        study_hash = file_sha256(source) if source is not None else None
    if data_bytes is not None:
        data_hash = bytes_sha256(data_bytes)
    else:
        data_hash = file_sha256(data_path) if data_path is not None else None
    others = {}
    for label, path in (extra_files or {}).items():
        others[label] = {"file": Path(path).name, "sha256": file_sha256(path)}
    return {
        "tool": "tradeoff",
        "version": __version__,
        "python": platform.python_version(),
        "created": when.replace(microsecond=0).isoformat().replace("+00:00", "Z"),
        "seed": int(study.seed if seed is None else seed),
        "study_file": source.name if source is not None else None,
        "study_sha256": study_hash,
        "data_file": data_path.name if data_path is not None else None,
        "data_sha256": data_hash,
        "other_files": others,
    }


def provenance_text(block: dict) -> str:
    """The provenance block as a few readable lines."""
    lines = [f"tool        {block['tool']} {block['version']} (Python {block['python']})",
             f"created     {block['created']}",
             f"seed        {block['seed']}",
             f"study file  {block['study_file'] or '(not from a file)'}",
             f"  sha256    {block['study_sha256'] or 'not available'}",
             f"data file   {block['data_file'] or '(none)'}",
             f"  sha256    {block['data_sha256'] or 'not available'}"]
    for label, entry in block.get("other_files", {}).items():
        lines += [f"{label:<11} {entry['file']}",
                  f"  sha256    {entry['sha256'] or 'not available'}"]
    return "\n".join(lines)
