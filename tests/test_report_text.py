"""Text reporter and the colour decision (INTERFACE.md: --color, NO_COLOR / FORCE_COLOR, tty)."""

from __future__ import annotations

import io
import subprocess
import sys

import pytest

from conftest import REPO
from lintamp.report import want_color
from report_helpers import render, sample_report


class FakeTty(io.StringIO):
    def isatty(self):
        return True


def test_plain_layout(rich_finding, tmp_path):
    out = render("text", sample_report(rich_finding, tmp_path))
    lines = out.splitlines()
    assert lines[0] == "blocks/amp.sp:4:1: warning dangling-net: dangling-net on spare"
    block = out[out.index("blocks/bias.sp:12:3: error unbiased-gate:"):]
    assert block.splitlines()[1:7] == [
        "    in cell biasgen, instances x1, x2",
        "    nb connects only to gates of m0, m1",
        "    and to c1, open at DC",
        "    so its DC level is set by leakage: 100% undefined, a,b: c",
        "    fix: add a bias resistor from nb to a defined level",
        "    blocks/bias.sp:13:1: gate of m1",
    ]
    assert lines[-1] == "4 files checked: 2 errors, 1 warning, 1 info (1 waived)."
    assert "\x1b[" not in out


def test_counts_and_baseline_summary(rich_finding, tmp_path):
    out = render("text", sample_report(rich_finding, tmp_path, baseline=True), counts=True)
    assert "1  unbiased-gate" in out
    assert out.splitlines()[-1] == ("4 files checked: 2 errors, 1 warning, 1 info "
                                    "(1 waived; 0 accepted by the baseline; 1 baseline entry no longer found).")


def test_colour_output_keeps_netlist_text_literal(rich_finding, tmp_path):
    rich_finding.subject = "[red]nb"
    rich_finding.message = "net [bold]x[/bold] stays literal"
    out = render("text", sample_report(rich_finding, tmp_path), color=True)
    assert "\x1b[" in out
    assert "net [bold]x[/bold] stays literal" in out


def test_no_findings_line(tmp_path):
    from lintamp.findings import Report
    assert render("text", Report(files=["a.sp"])) == "1 file checked: clean.\n"


@pytest.mark.parametrize("flag, env, tty, expected", [
    ("always", {"NO_COLOR": "1"}, False, True),      # the flag decides alone
    ("never", {"FORCE_COLOR": "1"}, True, False),
    ("auto", {"NO_COLOR": "1", "FORCE_COLOR": "1"}, True, False),  # no-color.org: non-empty NO_COLOR
    ("auto", {"NO_COLOR": ""}, True, True),          # empty NO_COLOR is unset (no-color.org)
    ("auto", {"FORCE_COLOR": "1"}, False, True),
    ("auto", {"FORCE_COLOR": "0"}, False, False),
    ("auto", {}, True, True),
    ("auto", {}, False, False),
    ("auto", {"TERM": "dumb"}, True, False),
])
def test_want_color(monkeypatch, flag, env, tty, expected):
    for name in ("NO_COLOR", "FORCE_COLOR", "TERM"):
        monkeypatch.delenv(name, raising=False)
    for name, value in env.items():
        monkeypatch.setenv(name, value)
    stream = FakeTty() if tty else io.StringIO()
    assert want_color(flag, stream) is expected


def test_want_color_rejects_other_words():
    with pytest.raises(ValueError, match="auto, always or never"):
        want_color("sometimes", io.StringIO())


def test_importing_the_package_loads_no_reporter_and_no_rich():
    code = ("import sys; import lintamp.report as r; r.get_reporter('text'); "
            "print(sorted(m for m in sys.modules if m.startswith(('rich', 'lintamp.report.'))))")
    out = subprocess.run([sys.executable, "-c", code], cwd=REPO, capture_output=True, text=True, check=True)
    assert out.stdout.strip() == "['lintamp.report.base', 'lintamp.report.color', 'lintamp.report.text']"


def test_control_characters_are_escaped(tmp_path):
    # Netlist text is untrusted: no terminal escapes, no line splitting (house rules).
    from conftest import make_finding
    from lintamp.config import Config
    from lintamp.decide import decide
    finding = make_finding(message="net \x1b[31mred\nsecond line", explanation=("a\rb",))
    out = render("text", decide([finding], [], Config(root=tmp_path), known_rules={"dangling-net": "connectivity"}))
    assert out.splitlines()[:2] == ["blocks/amp.sp:10:1: warning dangling-net: net \\x1b[31mred\\nsecond line",
                                    "    a\\rb"]
