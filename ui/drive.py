"""Drive the workbench in a real browser: start it, wait until it answers, open
Debian's chromium, wait until a view has settled, stop it.

One copy for the three tools that do this: the browser tests (tests/ui/), the
browser benchmarks (benchmarks/bench_browser.py and its kin) and the README's
picture script (ui/screenshots/). The workbench itself never imports it.
Playwright is only needed by the caller that hands a browser or page in.
"""
from __future__ import annotations

import os
import signal
import socket
import subprocess
import sys
import time
import urllib.request
from pathlib import Path

__all__ = ["CHROMIUM", "ARGS", "CONNECTED", "free_port", "start_workbench", "wait_healthy",
           "stop_workbench", "launch_chromium", "settle"]

CHROMIUM = "/usr/bin/chromium"  # Debian's package: a browser is never downloaded
ARGS = ["--no-sandbox", "--disable-gpu", "--disable-background-networking",
        "--disable-component-update", "--disable-sync", "--no-first-run"]
# the page has its connection to the server (after a load or a reload)
CONNECTED = '[data-testid="stApp"][data-test-connection-state="CONNECTED"]'

# What a settled view holds still: scripts running, placeholders showing, elements,
# charts, charts drawn, and the length of the text on the page.
_PAGE_STATE = """() => [
  document.querySelectorAll('[data-testid="stStatusWidget"]').length,
  document.querySelectorAll('[data-testid="stSkeleton"]').length,
  document.querySelectorAll('[data-testid="stElementContainer"]').length,
  document.querySelectorAll('.vega-embed').length,
  document.querySelectorAll('.vega-embed svg, .vega-embed canvas').length,
  document.body.innerText.length]"""


def free_port() -> int:
    """A port on 127.0.0.1 nothing listens on now."""
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return s.getsockname()[1]


def start_workbench(args: list[str], log: Path | None = None, env: dict | None = None,
                    command: list[str] | None = None) -> tuple[subprocess.Popen, int]:
    """``tradeoff app ARGS --port P`` on a free port, once it answers.

    Its output goes to ``log`` (or nowhere); ``env`` is added to this process's
    environment. ``command`` starts another server instead (its port option
    appended), such as a bare Streamlit page measured beside the workbench.
    """
    port = free_port()
    tradeoff = str(Path(sys.executable).with_name("tradeoff"))
    cmd = [*command, "--server.port", str(port)] if command else \
        [tradeoff, "app", *args, "--port", str(port)]
    out = log.open("wb") if log else subprocess.DEVNULL
    try:
        proc = subprocess.Popen(cmd, stdout=out, stderr=subprocess.STDOUT,
                                env={**os.environ, **(env or {})}, start_new_session=True)
    finally:
        if log:
            out.close()
    try:
        wait_healthy(proc, port, log)
    except BaseException:
        stop_workbench(proc)
        raise
    return proc, port


def wait_healthy(proc: subprocess.Popen, port: int, log: Path | None = None,
                 timeout: float = 120.0) -> None:
    """Return once the server on ``port`` answers; fail if it stops or stays silent."""
    def told() -> str:
        return f":\n{log.read_text(errors='replace')}" if log and log.exists() else ""

    deadline = time.monotonic() + timeout
    while time.monotonic() < deadline:
        if proc.poll() is not None:
            raise RuntimeError(f"the workbench stopped early{told()}")
        try:
            with urllib.request.urlopen(f"http://127.0.0.1:{port}/_stcore/health",
                                        timeout=2) as answer:
                if answer.read().strip() == b"ok":
                    return
        except OSError:
            pass
        time.sleep(0.3)
    raise RuntimeError(f"the workbench did not answer within {timeout:.0f} s{told()}")


def stop_workbench(proc: subprocess.Popen) -> None:
    """End a started server and all it started.

    ``tradeoff app`` replaces its own process with the server, which starts
    helpers of its own: end politely, then the whole process group.
    """
    if proc.poll() is None:
        proc.terminate()
        try:
            proc.wait(timeout=10)
        except subprocess.TimeoutExpired:
            pass
    try:
        os.killpg(proc.pid, signal.SIGKILL)
    except ProcessLookupError:
        pass
    try:
        proc.wait(timeout=10)
    except subprocess.TimeoutExpired:
        pass


def launch_chromium(playwright):
    """Debian's chromium, headless, through a started playwright."""
    return playwright.chromium.launch(executable_path=CHROMIUM, headless=True, args=ARGS)


def settle(page, start: float | None = None, quiet: float = 0.8,
           timeout: float = 120.0) -> float:
    """Wait until the view has settled; seconds from ``start`` to its last change.

    Settled: no script running, no placeholder showing, every chart drawn, and
    nothing of that changed for ``quiet`` seconds (not counted in the answer).
    ``start`` is a ``time.perf_counter()`` reading (the user's action); now if
    left out.
    """
    start = time.perf_counter() if start is None else start
    last, changed = None, time.perf_counter()
    while time.perf_counter() - start < timeout:
        state = page.evaluate(_PAGE_STATE)
        busy = state[0] > 0 or state[1] > 0 or state[2] == 0 or state[4] < state[3]
        now = time.perf_counter()
        if state != last or busy:
            last, changed = state, now
        elif now - changed >= quiet:
            return changed - start
        page.wait_for_timeout(20)
    raise TimeoutError(f"the view did not settle within {timeout:.0f} s")
