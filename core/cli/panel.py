"""``tradeoff panel``: the panel's own analysis of every attribute."""
from __future__ import annotations

import json

__all__ = ["add", "run"]


def add(commands) -> None:
    """Add ``panel`` and its options to the sub-command parsers."""
    panel = commands.add_parser(
        "panel", help="panel ANOVA, least-squares means, pairs and assessor performance "
                      "of every attribute of the study's panel table")
    panel.add_argument("study", help="the study file (.toml)")
    panel.add_argument("--json", action="store_true", help="print the analysis as JSON")
    panel.set_defaults(run=run)


def run(args) -> int:
    from ..derive.load import load_study
    from ..model.panel_summary import panel_analysis, panel_json
    from ..report.panel_text import panel_text

    study = load_study(args.study)
    result = panel_analysis(study)
    if args.json:
        print(json.dumps(panel_json(result), indent=2))
    else:
        print(panel_text(result), end="")
    return 0
