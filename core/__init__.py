"""tradeoff: find the factor settings that best balance several responses.

The package root re-exports the public API; each name lives in one module.
"""
from __future__ import annotations

__version__ = "0.1.0"

from .errors import (DataError, ModelError, PlanError, SearchError, StudyError,
                     TradeoffError)
from .study import Factor, Goal, Response, Study, load_study, study_from_dict
from .coding import to_coded, to_natural

__all__ = [
    "__version__",
    "TradeoffError", "StudyError", "DataError", "ModelError", "SearchError",
    "PlanError",
    "Factor", "Goal", "Response", "Study", "load_study", "study_from_dict",
    "to_coded", "to_natural",
]
