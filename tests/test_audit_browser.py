"""The HTML sheet in a real browser: headless Chromium (Debian's ``chromium`` package)
loads the self-contained page and must find the tables and the three plots.

Skips with a message when /usr/bin/chromium or matplotlib is absent.
"""

from __future__ import annotations

import re
import struct
import subprocess
import sys
from pathlib import Path

import pytest

REPO = Path(__file__).resolve().parent.parent
CHROMIUM = Path("/usr/bin/chromium")
FLAGS = ["--headless", "--no-sandbox", "--disable-gpu", "--disable-quic", "--no-first-run",
         "--disable-background-networking", "--disable-component-update", "--disable-sync",
         "--hide-scrollbars"]


@pytest.fixture(scope="module")
def sheet_html(tmp_path_factory):
    if not CHROMIUM.exists():
        pytest.skip("headless Chromium not installed: apt-get install -y chromium")
    pytest.importorskip("matplotlib", reason="matplotlib not installed (pip install '.[plots]'): no plots to check")
    tmp = tmp_path_factory.mktemp("audit-browser")
    target = tmp / "sheet.html"
    proc = subprocess.run([sys.executable, "-m", "lintamp", "audit", str(REPO / "samples" / "sensor_frontend.sp"),
                           "--format", "html", "-o", str(target)], capture_output=True, text=True, cwd=REPO,
                          timeout=300)
    assert proc.returncode == 0, proc.stderr
    return tmp, target


def _chromium(tmp: Path, *args: str) -> subprocess.CompletedProcess:
    profile = tmp / "profile"
    profile.mkdir(exist_ok=True)
    return subprocess.run([str(CHROMIUM), *FLAGS, f"--user-data-dir={profile}", *args],
                          capture_output=True, text=True, timeout=180)


def test_browser_sees_tables_and_plots(sheet_html):
    tmp, target = sheet_html
    proc = _chromium(tmp, "--dump-dom", target.as_uri())
    dom = proc.stdout
    assert "<h1>Review sheet" in dom, proc.stderr[-2000:]
    for cls in ("ports", "stages", "paths", "chain", "interfaces"):
        assert f'<table class="{cls}">' in dom, cls
    assert len(re.findall(r'<img alt="[^"]*" src="data:image/png;base64,', dom)) == 3
    assert "common gate (m1)" in dom and "transimpedance" in dom
    assert "<script" not in dom


def test_screenshot_is_a_page_with_content(sheet_html):
    tmp, target = sheet_html
    shot = tmp / "shot.png"
    proc = _chromium(tmp, "--window-size=1150,1700", f"--screenshot={shot}", target.as_uri())
    assert shot.exists(), proc.stderr[-2000:]
    head = shot.read_bytes()[:24]
    assert head[:8] == b"\x89PNG\r\n\x1a\n"
    width, height = struct.unpack(">II", head[16:24])
    assert (width, height) == (1150, 1700)
    assert shot.stat().st_size > 50_000  # tables and three plots, not a blank page
