"""End to end through pre-commit: a finding blocks a commit, a waiver with a reason lets it in.

Runs only where ``pre-commit`` is installed, ``lintamp`` is on PATH (the CLI exists)
and the checkout is installable (has a pyproject.toml): pre-commit builds the hook's
own environment from this checkout.  The netlist is a scenario of our own: a 1 V
source and a 1 kΩ resistor whose far end ``b`` touches nothing else, a net with a
single terminal (INTERFACE.md: ``dangling-net``).
"""

from __future__ import annotations

import importlib.util
import os
import shutil
import subprocess
from pathlib import Path

import pytest

from conftest import REPO

NETLIST = """* a resistor left hanging
v1 a 0 dc 1
r1 a b 1k
.end
"""
WAIVED = """* a resistor left hanging
v1 a 0 dc 1
* lintamp: waive dangling-net b -- probe point, left open on purpose
r1 a b 1k
.end
"""

# An amplifier deck that takes its transistor model from a library beside it.
DECK_WITH_MODELS = """* amp
.include models.lib
v1 vdd 0 dc 1.8
vg g 0 dc 1
rd vdd d 10k
m1 d g 0 0 nch w=2u l=1u
.end
"""


def _why_skip() -> str | None:
    if importlib.util.find_spec("pre_commit") is None:
        return "pre-commit is not installed (pip install pre-commit)"
    if shutil.which("lintamp") is None:
        return "the lintamp command is not on PATH yet (the CLI is built on main)"
    if not (REPO / "pyproject.toml").is_file():
        return "this checkout has no pyproject.toml, so pre-commit cannot install the hook"
    if shutil.which("git") is None:
        return "git is not installed"
    return None


needs_cli = pytest.mark.skipif(_why_skip() is not None, reason=_why_skip() or "")


def test_hook_manifest_is_valid_for_pre_commit():
    # Checked by pre-commit's own manifest loader (pre_commit.clientlib).
    clientlib = pytest.importorskip("pre_commit.clientlib", reason="pre-commit is not installed")
    (hook,) = clientlib.load_manifest(str(REPO / ".pre-commit-hooks.yaml"))
    assert hook["id"] == "lintamp-check" and hook["entry"] == "lintamp check --dependents"
    assert hook["language"] == "python" and hook["require_serial"] and hook["pass_filenames"]
    import re
    files = re.compile(hook["files"])
    assert all(files.search(f"a/b.{ext}") for ext in ("sp", "spice", "cir", "net", "spi", "ckt", "cdl",
                                                      "lib", "inc", "mod"))
    assert not files.search("a/b.sp.orig") and not files.search("notes.txt")


def run(args, cwd: Path, env: dict) -> subprocess.CompletedProcess:
    return subprocess.run(args, cwd=cwd, env=env, capture_output=True, text=True, timeout=600)


@pytest.fixture(scope="module")
def pre_commit_home(tmp_path_factory) -> Path:
    """One pre-commit store for the module: the hook's environment (a virtualenv with
    lintamp installed from this checkout) is built once, not once per test."""
    return tmp_path_factory.mktemp("pre-commit-home")


@pytest.fixture
def project(tmp_path, pre_commit_home):
    repo = tmp_path / "netlists"
    repo.mkdir()
    env = {**os.environ, "PRE_COMMIT_HOME": str(pre_commit_home), "NO_COLOR": "1",
           "GIT_AUTHOR_NAME": "t", "GIT_AUTHOR_EMAIL": "t@example.invalid",
           "GIT_COMMITTER_NAME": "t", "GIT_COMMITTER_EMAIL": "t@example.invalid"}
    for args in (["git", "init", "-q"], ["git", "config", "commit.gpgsign", "false"]):
        assert run(args, repo, env).returncode == 0
    (repo / "lintamp.toml").write_text('fail-on = "warning"\n')
    (repo / "hang.sp").write_text(NETLIST)
    return repo, env


@pytest.mark.slow
@needs_cli
def test_try_repo_blocks_the_hanging_net_and_passes_the_waived_one(project):
    # one try-repo run (each builds the hook's environment afresh in a temporary store):
    # the bad file fails the hook, the waived copy beside it reports nothing
    repo, env = project
    (repo / "waived.sp").write_text(WAIVED)
    assert run(["git", "add", "lintamp.toml", "hang.sp", "waived.sp"], repo, env).returncode == 0
    blocked = run(["pre-commit", "try-repo", str(REPO), "lintamp-check", "--files", "hang.sp",
                   "waived.sp"], repo, env)
    assert blocked.returncode != 0, blocked.stdout + blocked.stderr
    assert "hang.sp:3:1: warning dangling-net" in blocked.stdout
    assert "waived.sp:" not in blocked.stdout
    assert "2 files checked: 0 errors, 1 warning, 0 infos (1 waived)." in blocked.stdout


@pytest.mark.slow
@needs_cli
def test_installed_hook_blocks_a_commit(project):
    repo, env = project
    head = run(["git", "rev-parse", "HEAD"], REPO, env).stdout.strip()
    (repo / ".pre-commit-config.yaml").write_text(
        f"repos:\n  - repo: {REPO}\n    rev: {head}\n    hooks:\n      - id: lintamp-check\n")
    assert run(["pre-commit", "install"], repo, env).returncode == 0
    run(["git", "add", "."], repo, env)
    blocked = run(["git", "commit", "-qm", "hanging resistor"], repo, env)
    assert blocked.returncode != 0 and "dangling-net" in blocked.stdout + blocked.stderr
    (repo / "hang.sp").write_text(WAIVED)
    run(["git", "add", "hang.sp"], repo, env)
    allowed = run(["git", "commit", "-qm", "hanging resistor, waived"], repo, env)
    assert allowed.returncode == 0, allowed.stdout + allowed.stderr

    # a commit of a model library alone: the deck that includes it is checked (issue 23).
    # The deck names model nch; the library renames it, so the deck's m1 has no model.
    (repo / "models.lib").write_text(".model nch nmos vto=0.5 kp=200u\n")
    (repo / "amp.sp").write_text(DECK_WITH_MODELS)
    run(["git", "add", "models.lib", "amp.sp"], repo, env)
    clean = run(["git", "commit", "-qm", "an amplifier and its models"], repo, env)
    assert clean.returncode == 0, clean.stdout + clean.stderr
    (repo / "models.lib").write_text(".model nch_renamed nmos vto=0.5 kp=200u\n")
    run(["git", "add", "models.lib"], repo, env)
    blocked = run(["git", "commit", "-qm", "rename the model"], repo, env)
    assert blocked.returncode != 0, blocked.stdout + blocked.stderr
    said = blocked.stdout + blocked.stderr  # git shows the hook's output on stderr
    assert "amp.sp" in said and "unknown-model" in said
