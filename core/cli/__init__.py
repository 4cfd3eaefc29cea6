"""The command line, one module per command: each holds its parser (``add``) and
its work (``run``); entry.py builds the top parser and turns the library's errors
into one ``error:`` line and exit status 2. Only the parsers are built when the
command line starts; each ``run`` imports what it needs when it runs, so
``tradeoff --help`` loads neither pandas nor scipy.

May import every stage folder. Imported by nothing in core/ (the ``tradeoff``
script calls ``tradeoff.cli:main``).
"""
from .entry import build_parser, main

__all__ = ["main", "build_parser"]
