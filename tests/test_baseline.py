"""The baseline file: round trip, byte stability, clear errors, and atomic replacement."""

from __future__ import annotations

import json
import os
import subprocess
import sys
import textwrap

import pytest

from conftest import KNOWN, REPO, make_finding
from lintamp import baseline as baseline_module
from lintamp.baseline import BaselineError, load_baseline, write_baseline
from lintamp.config import Config, ConfigError
from lintamp.decide import decide
from lintamp.findings import Report


def report_of(*findings):
    return Report(findings=list(findings))


def test_round_trip_and_sorted_bytes(tmp_path):
    path = tmp_path / "baseline.json"
    findings = [make_finding(subject="z", path="b.sp"), make_finding(subject="a", path="a.sp"),
                make_finding(subject="a", path="a.sp", line=99)]
    write_baseline(path, report_of(*findings))
    first = path.read_bytes()
    doc = json.loads(first)
    assert doc["tool"] == "lintamp" and doc["schema"] == 1
    assert [e["path"] for e in doc["entries"]] == ["a.sp", "a.sp", "b.sp"]
    assert set(doc["entries"][0]) == {"fingerprint", "rule", "path", "subject", "message"}
    write_baseline(path, report_of(*reversed(findings)))
    assert path.read_bytes() == first  # same findings, any order: same bytes
    loaded = load_baseline(path)
    report = decide(findings, [], Config(root=tmp_path), loaded, known_rules=KNOWN)
    assert report.findings == [] and report.baseline_matched == 3 and report.baseline_gone == []


@pytest.mark.parametrize("content, words", [
    (b"{not json", "not valid JSON"),
    (b'{"tool": "other", "schema": 1, "entries": []}', 'tool: is not "lintamp"'),
    (b'{"tool": "lintamp", "schema": 7, "entries": []}', "schema: is 7"),
    (b'{"tool": "lintamp", "schema": 1, "entries": [{"rule": "x"}]}', "entries[0]: is not a complete entry"),
    (b"\xff\xfe", "not valid JSON"),
])
def test_corrupt_baseline_is_a_clear_exit_2_error(tmp_path, content, words):
    path = tmp_path / "baseline.json"
    path.write_bytes(content)
    with pytest.raises(BaselineError) as info:
        load_baseline(path)
    assert isinstance(info.value, ConfigError)  # the CLI maps ConfigError to exit 2
    assert str(info.value).startswith(str(path))
    assert words in str(info.value)


def test_missing_baseline(tmp_path):
    with pytest.raises(BaselineError, match="file not found"):
        load_baseline(tmp_path / "none.json")


def test_failed_replace_keeps_the_old_file(tmp_path, monkeypatch):
    path = tmp_path / "baseline.json"
    write_baseline(path, report_of(make_finding()))
    old = path.read_bytes()

    def broken_replace(src, dst):
        raise OSError(28, "No space left on device")

    monkeypatch.setattr(baseline_module.os, "replace", broken_replace)
    with pytest.raises(BaselineError, match="No space left"):
        write_baseline(path, report_of(make_finding(subject="other")))
    assert path.read_bytes() == old
    assert sorted(p.name for p in tmp_path.iterdir()) == ["baseline.json"]  # no temp file left


def test_killed_writer_leaves_the_old_file_intact(tmp_path):
    # A writer process killed (SIGKILL) after writing half of the new bytes, before the rename.
    path = tmp_path / "baseline.json"
    write_baseline(path, report_of(make_finding()))
    old = path.read_bytes()
    script = textwrap.dedent(f"""
        import os, sys, signal
        sys.path.insert(0, {str(REPO)!r})
        from lintamp import baseline
        real_fsync = os.fsync
        def die(fd):
            os.kill(os.getpid(), signal.SIGKILL)
        baseline.os.fsync = die
        baseline.atomic_write_bytes(baseline.Path({str(path)!r}), b'{{"half": ' + b'x' * 100000)
    """)
    result = subprocess.run([sys.executable, "-c", script], capture_output=True, timeout=60)
    assert result.returncode == -9
    assert path.read_bytes() == old
    assert load_baseline(path).entries[0]["subject"] == "n1"


def test_write_into_missing_folder_is_a_clear_error(tmp_path):
    with pytest.raises(BaselineError, match="cannot write"):
        write_baseline(tmp_path / "no" / "such" / "b.json", report_of(make_finding()))
