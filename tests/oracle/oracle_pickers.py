"""Where the generator's choices come from: hypothesis in the test suite, a seed in the sweep.

The study generator (oracle_studies.py) asks a picker for every structural
choice (how many factors, which goal, which shape ...). Two pickers answer:

- ``HypothesisPicker`` draws from hypothesis strategies inside a
  ``@st.composite`` strategy, so the suite runs hypothesis' derandomised,
  reproducible examples;
- ``SeedPicker`` draws from a numpy Generator seeded with one whole number, so
  the benchmark sweep (benchmarks/oracle_sweep.py) names a failing study by
  its seed and replays it exactly.

Numbers that only simulate data (coefficients, noise) come from a numpy
Generator whose seed is itself one of the picker's choices.
"""
from __future__ import annotations

import numpy as np

__all__ = ["SeedPicker", "HypothesisPicker"]


class SeedPicker:
    """Choices from ``numpy.random.default_rng(seed)``."""

    def __init__(self, seed: int):
        self.seed = int(seed)
        self._rng = np.random.default_rng(self.seed)

    def integer(self, low: int, high: int) -> int:
        """A whole number from low to high, both included."""
        return int(self._rng.integers(low, high + 1))

    def choice(self, options):
        options = list(options)
        return options[int(self._rng.integers(0, len(options)))]

    def real(self, low: float, high: float) -> float:
        return float(self._rng.uniform(low, high))

    def chance(self, p: float) -> bool:
        """True with probability p."""
        return bool(self._rng.random() < p)


class HypothesisPicker:
    """Choices drawn by hypothesis (``draw`` of an ``@st.composite`` strategy)."""

    def __init__(self, draw):
        from hypothesis import strategies as st

        self._draw = draw
        self._st = st
        self.seed = None  # hypothesis replays its own examples

    def integer(self, low: int, high: int) -> int:
        return self._draw(self._st.integers(low, high))

    def choice(self, options):
        return self._draw(self._st.sampled_from(list(options)))

    def real(self, low: float, high: float) -> float:
        return self._draw(self._st.floats(low, high, allow_nan=False, allow_infinity=False))

    def chance(self, p: float) -> bool:
        return self._draw(self._st.integers(0, 999)) < round(1000 * p)
