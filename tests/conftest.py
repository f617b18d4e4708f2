"""Shared helpers for the policy and report tests: hand-built findings in scenarios of our own."""

from __future__ import annotations

import sys
from pathlib import Path

import pytest

REPO = Path(__file__).resolve().parent.parent
if str(REPO) not in sys.path:
    sys.path.insert(0, str(REPO))

from lintamp.findings import Finding, Related, Severity  # noqa: E402
from lintamp.location import Location  # noqa: E402
from lintamp.netlist.statements import Pragma  # noqa: E402

# Rule names the tests may use, with categories (the catalog a caller passes in).
KNOWN = {
    "parse-error": "syntax", "dangling-net": "connectivity", "unbiased-gate": "connectivity",
    "no-dc-path": "connectivity", "unbuffered-output": "impedance", "unused-port": "references",
    "unused-waiver": "waivers", "waiver-without-reason": "waivers",
}


def make_finding(rule="dangling-net", path="blocks/amp.sp", line=10, column=1, subject="n1",
                 cell="", severity=Severity.WARNING, **extra) -> Finding:
    return Finding(rule=rule, severity=severity, location=Location(path, line, column),
                   subject=subject, message=extra.pop("message", f"{rule} on {subject}"),
                   cell=cell, **extra)


def make_waiver(rule, subject=None, *, path="blocks/amp.sp", line=5, reason="on purpose",
                cell="", element=None, element_nets=(), inline=False) -> Pragma:
    args = (rule,) + ((subject,) if subject else ())
    return Pragma(verb="waive", args=args, reason=reason, location=Location(path, line, 1),
                  inline=inline, cell=cell, element=element, element_nets=tuple(element_nets))


@pytest.fixture
def rich_finding() -> Finding:
    """A finding with every field filled (a scenario of our own)."""
    return Finding(
        rule="unbiased-gate", severity=Severity.ERROR, location=Location("blocks/bias.sp", 12, 3),
        subject="nb", message="gate net nb has no DC bias path", cell="biasgen",
        instances=("x1", "x2"), nets=("nb",), elements=("m0", "m1"),
        explanation=("nb connects only to gates of m0, m1", "and to c1, open at DC",
                     "so its DC level is set by leakage: 100% undefined, a,b: c"),
        fix="add a bias resistor from nb to a defined level",
        values={"z_ohm": 1.0e12, "limit_ohm": 8.0e3, "region": "cutoff", "open": float("inf")},
        related=(Related(Location("blocks/bias.sp", 13, 1), "gate of m1"),
                 Related(Location("blocks/bias.sp", 14, 1), "c1 to ground")),
    )


# ---------------------------------------------------------------- slow tests

SLOW_REASON = ("slow: builds the pre-commit hook's environment (pip installs lintamp, minutes) or "
               "runs ngspice on a post-layout deck; run with --run-slow, as .ci/run and the "
               "README's second command do")


def pytest_addoption(parser):
    parser.addoption("--run-slow", action="store_true", default=False,
                     help="also run the tests marked slow (the pre-commit end-to-end runs)")


def pytest_configure(config):
    config.addinivalue_line("markers", "slow: builds environments; runs only with --run-slow")


def pytest_collection_modifyitems(config, items):
    if config.getoption("--run-slow"):
        return
    skip = pytest.mark.skip(reason=SLOW_REASON)
    for item in items:
        if "slow" in item.keywords:
            item.add_marker(skip)


# ---------------------------------------------------------------- the checkout stays clean

def _hypothesis_outside_the_checkout() -> None:
    """hypothesis keeps its examples and constants in .hypothesis/ of the current folder;
    give it a temporary folder instead, removed when the run ends."""
    try:
        from hypothesis.configuration import set_hypothesis_home_dir
    except ImportError:  # the test extras are not installed: those tests fail on import anyway
        return
    import atexit
    import shutil
    import tempfile
    home = tempfile.mkdtemp(prefix="lintamp-tests-hypothesis-")
    set_hypothesis_home_dir(home)
    atexit.register(shutil.rmtree, home, True)


_hypothesis_outside_the_checkout()

# Where a run without a config file would put its cache if a test let it write into the
# checkout (the current folder is the repository root when pytest runs from there).
_CACHE_SPOTS = (REPO / ".lintamp_cache", REPO / "samples" / ".lintamp_cache",
                REPO / "tests" / ".lintamp_cache", REPO / "tests" / "fixtures" / ".lintamp_cache")


@pytest.fixture(autouse=True)
def _checkout_stays_clean():
    """Fail the test that leaves a results cache in the checkout (issue 23: the suite never
    writes into the checkout; a test uses --no-cache or a temporary folder)."""
    before = {spot for spot in _CACHE_SPOTS if spot.exists()}
    yield
    new = [spot for spot in _CACHE_SPOTS if spot.exists() and spot not in before]
    if new:
        import shutil
        for spot in new:
            shutil.rmtree(spot, ignore_errors=True)
        pytest.fail("the test wrote into the checkout: " + ", ".join(str(p.relative_to(REPO)) for p in new))
