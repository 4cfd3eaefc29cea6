"""Stage 4a, planning runs: two-level designs, aliases, design evaluation, run sheets.

May import study/, derive/ and model/. Imported by maps/, report/ and the top level.
"""
