"""Saving files so that an interrupted save never leaves a half-written file.

Every file the library writes (run sheets, reports, workbooks) goes through
``write_atomic``: the content is written to a temporary file in the same
folder, flushed to disk, then renamed over the target in one step
(``os.replace``). If anything fails on the way (a full disk, a crash, the
user pressing Ctrl+C) the old file, if there was one, is left as it was and
the temporary file is removed.
"""
from __future__ import annotations

import os
import tempfile
from pathlib import Path

from ..errors import TradeoffError

__all__ = ["write_atomic"]


def write_atomic(path: str | Path, data: bytes | str, *,
                 error: type[TradeoffError] = TradeoffError) -> Path:
    """Write ``data`` to ``path`` all at once, or not at all.

    Parameters
    ----------
    path : str or Path
        The file to write. Its folder must exist.
    data : bytes or str
        The whole content; text is written as UTF-8.
    error : TradeoffError subclass
        The kind of error raised when the file cannot be written (the calling
        module's own kind, so the message reads like its other messages).

    Returns
    -------
    Path
        ``path``.

    Raises
    ------
    TradeoffError (of the kind ``error``)
        The folder is missing or read-only, the target is a folder, the disk
        is full: one line naming the file.
    """
    path = Path(path)
    if isinstance(data, str):
        data = data.encode("utf-8")
    folder = path.parent if str(path.parent) else Path(".")
    if not folder.is_dir():
        raise error(f"{path}: the folder {folder} does not exist: create it or choose "
                    "another folder")
    if path.is_dir():
        raise error(f"{path}: that is a folder: give a file name")
    temp = None
    try:
        # The temporary file sits in the target's folder, so the final rename
        # stays on one file system and is a single step.
        handle, temp = tempfile.mkstemp(dir=folder, prefix=f".{path.name}.",
                                        suffix=".tmp")
        with os.fdopen(handle, "wb") as stream:
            stream.write(data)
            stream.flush()
            os.fsync(stream.fileno())
        # mkstemp makes the file private (0600); give it the permissions a
        # normally saved file would have, so colleagues can open the report.
        os.chmod(temp, _normal_mode())
        os.replace(temp, path)
        temp = None
    except OSError as exc:
        raise error(f"{path}: cannot write the file ({exc.strerror or exc}): is it open "
                    "in another program, the folder read-only or the disk full?") from None
    finally:
        # Whatever stopped the write (an error, Ctrl+C), leave no temporary file.
        if temp is not None and os.path.exists(temp):
            os.unlink(temp)
    return path


def _normal_mode() -> int:
    """0666 less the user's umask: what open() would give a new file."""
    mask = os.umask(0)
    os.umask(mask)
    return 0o666 & ~mask
