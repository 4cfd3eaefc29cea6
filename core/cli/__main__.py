"""``python -m tradeoff.cli``: the same as the ``tradeoff`` command."""
import sys

from .entry import main

sys.exit(main())
