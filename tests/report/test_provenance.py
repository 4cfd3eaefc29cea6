"""The provenance block: tool version, file fingerprints, date and seed.

Fingerprints are checked against hashlib computed here on the same bytes
(SHA-256, FIPS 180-4); the empty-input digest e3b0c442... is the standard's
well-known value (from memory).
"""
from __future__ import annotations

import datetime as dt
import hashlib
import json

import tradeoff
from tradeoff.cli import main
from tradeoff.report.provenance import bytes_sha256, file_sha256, provenance, provenance_text


def test_sha256_of_nothing():
    assert bytes_sha256(b"") == ("e3b0c44298fc1c149afbf4c8996fb924"
                                 "27ae41e4649b934ca495991b7852b855")


def test_block_fingerprints_the_files(write_study, tmp_path):
    path = write_study()
    study = tradeoff.load_study(path)
    when = dt.datetime(2026, 3, 1, 12, 0, 5, 123, tzinfo=dt.timezone(dt.timedelta(hours=1)))
    block = provenance(study, seed=7, now=when)
    assert block["study_sha256"] == hashlib.sha256(path.read_bytes()).hexdigest()
    assert block["data_sha256"] == hashlib.sha256(
        (tmp_path / "runs.csv").read_bytes()).hexdigest()
    assert block["created"] == "2026-03-01T11:00:05Z"  # stored in UTC
    assert block["seed"] == 7 and block["version"] == tradeoff.__version__
    assert provenance(study)["seed"] == study.seed
    assert json.loads(json.dumps(block)) == block
    assert block["study_sha256"] in provenance_text(block)
    # uploaded bytes are fingerprinted instead of files on disk
    assert provenance(study, study_bytes=b"abc")["study_sha256"] == \
        hashlib.sha256(b"abc").hexdigest()
    assert file_sha256(tmp_path / "missing.csv") is None


def test_optimize_json_carries_provenance(write_study, capsys):
    path = write_study()
    assert main(["optimize", str(path), "--json", "--top", "1", "--seed", "3"]) == 0
    out = json.loads(capsys.readouterr().out)
    assert out["provenance"]["seed"] == 3 == out["seed"]
    assert out["provenance"]["study_sha256"] == hashlib.sha256(path.read_bytes()).hexdigest()
