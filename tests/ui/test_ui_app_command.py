"""``tradeoff app``: the command line that starts the workbench."""
from __future__ import annotations

import sys
from importlib.resources import files
from pathlib import Path

import pytest

from tradeoff import cli
from tradeoff.study.demo import demo_study_path

from conftest import DEMO


@pytest.fixture
def execv(monkeypatch):
    calls = []
    monkeypatch.setattr("os.execv", lambda exe, argv: calls.append((exe, argv)))
    return calls


def test_app_without_a_study_opens_the_demo(execv, capsys):
    assert cli.main(["app"]) == 0
    (exe, argv), = execv
    app_file = Path(str(files("tradeoff_ui") / "app.py"))
    assert exe == sys.executable and argv[0] == sys.executable
    assert argv[1:5] == ["-m", "streamlit", "run", str(app_file)]
    assert app_file.is_file()
    options = dict(zip(argv[5:-2:2], argv[6:-2:2]))
    assert options == {"--server.address": "127.0.0.1", "--server.port": "8501",
                       "--server.headless": "true", "--browser.gatherUsageStats": "false",
                       "--server.maxUploadSize": "50",
                       "--client.toolbarMode": "minimal"}
    assert argv[-2:] == ["--", str(DEMO.resolve())]
    assert "http://127.0.0.1:8501" in capsys.readouterr().out


def test_app_with_a_study_and_a_port(execv, write_study):
    path = write_study()
    assert cli.main(["app", str(path), "--port", "8642"]) == 0
    (_, argv), = execv
    assert argv[argv.index("--server.port") + 1] == "8642"
    assert argv[-1] == str(path.resolve())


def test_a_bad_study_stops_before_the_server_starts(execv, tmp_path, capsys):
    assert cli.main(["app", str(tmp_path / "missing.toml")]) == 2
    assert execv == []
    err = capsys.readouterr().err
    assert err.startswith("error: ") and "study file not found" in err


@pytest.mark.parametrize("port", ["80", "99999", "eighty"])
def test_a_bad_port_is_refused(execv, capsys, port):
    assert cli.main(["app", "--port", port]) == 2
    assert execv == []
    assert "expected a port number from 1024 to 65535" in capsys.readouterr().err


def test_demo_is_found_next_to_the_package():
    assert demo_study_path() == DEMO.resolve()
