"""``tradeoff app``: open the point-and-click workbench in the web browser.
"""
from __future__ import annotations

import sys

from .arguments import port_number

__all__ = ["add", "run"]


def add(commands) -> None:
    """Add ``app`` and its options to the sub-command parsers."""
    app = commands.add_parser(
        "app", help="open the point-and-click workbench in your web browser")
    app.add_argument("study", nargs="?",
                     help="the study file (.toml); the invented demo study if left out")
    app.add_argument("--port", type=port_number, default=8501,
                     help="the local port to serve on (default 8501)")
    app.set_defaults(run=run)


def run(args) -> int:
    import importlib.resources
    import os
    from pathlib import Path

    from ..study.demo import demo_study_path
    from ..study.intake import MAX_TABLE_BYTES
    from ..derive.load import load_study

    study = Path(args.study) if args.study else demo_study_path()
    load_study(study)  # a bad study file stops here with one line, not in the browser
    app_file = importlib.resources.files("tradeoff_ui") / "app.py"
    argv = [sys.executable, "-m", "streamlit", "run", str(app_file),
            "--server.address", "127.0.0.1", "--server.port", str(args.port),
            "--server.headless", "true", "--browser.gatherUsageStats", "false",
            # uploads above the library's own limit are refused in the browser
            "--server.maxUploadSize", str(MAX_TABLE_BYTES // 2**20),
            "--client.toolbarMode", "minimal", "--", str(study.resolve())]
    print(f"Opening the workbench: open http://127.0.0.1:{args.port} in your web "
          "browser (press Ctrl+C here to stop it)", flush=True)
    # Replace this process, so stopping it (Ctrl+C, kill) stops the server too.
    os.execv(sys.executable, argv)
    return 0  # not reached
