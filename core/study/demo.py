"""Where the invented demo study lives.

The demo files sit in the repository's ``demo_data`` folder, next to the
package folders (an editable install, as the README's Quick start makes).
"""
from __future__ import annotations

from pathlib import Path

from ..errors import StudyError

__all__ = ["demo_study_path"]

DEMO_FILE = "snack_bar.toml"


def demo_study_path() -> Path:
    """The demo study file (``demo_data/snack_bar.toml``).

    Raises
    ------
    StudyError
        When the package was installed without the repository's demo folder.
    """
    here = Path(__file__).resolve().parent.parent  # core/, beside demo_data/
    for folder in (here.parent / "demo_data", here / "demo_data"):
        path = folder / DEMO_FILE
        if path.is_file():
            return path
    raise StudyError(f"the demo study ({DEMO_FILE}) was not found next to the "
                     f"package in {here.parent}: install the tool from its folder with "
                     "'pip install -e .', or name your own study file")
