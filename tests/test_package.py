"""The library stays light: importing it loads no front end (house style)."""
from __future__ import annotations

import subprocess
import sys


def test_import_leaves_streamlit_out():
    code = ("import sys, tradeoff; "
            "bad = [m for m in ('streamlit', 'altair', 'statsmodels', 'sklearn') "
            "if m in sys.modules]; print(bad)")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True)
    assert out.returncode == 0, out.stderr
    assert out.stdout.strip() == "[]"
