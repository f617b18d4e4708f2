"""Rules from outside lintamp: entry-point plugins and a repository's own rule folder.

Plugins register under the entry-point group ``lintamp.rules`` (the entry points
specification of the Python Packaging User Guide: ``entry_points.txt`` in a
``.dist-info`` folder).  A plugin or local rule that cannot be used stops the run with
one line that names it (exit 2, INTERFACE.md); a name a built-in rule has is refused.
"""

from __future__ import annotations

import json
import subprocess
import sys
import textwrap
from pathlib import Path

import lintamp

REPO = Path(__file__).resolve().parent.parent
IMPORT_ROOT = Path(lintamp.__file__).resolve().parent.parent

RULE = textwrap.dedent('''
    """One note per checked deck (a rule of our own, for the tests).

    What it finds
        Nothing real: it reports each checked file once.

    Why it matters
        It shows that rules from outside lintamp run.

    Example
        Any netlist.

    Fix
        None needed.
    """
    from lintamp.findings import Severity
    from lintamp.location import Location

    NAME = "{name}"
    CATEGORY = "connectivity"
    SEVERITY = Severity.INFO
    SUMMARY = "one note per checked file ({origin})"


    def check(ctx):
        yield ctx.finding(location=Location(ctx.netlist.path, 1, 1), subject="deck",
                          message="{message}")
''')
DECK = "divider\nv1 a 0 1\nr1 a b 1k\nr2 b 0 1k\n.end\n"


def _run(args, cwd: Path, *site: Path) -> subprocess.CompletedProcess:
    env = {"PYTHONPATH": ":".join(str(p) for p in (*site, IMPORT_ROOT)), "NO_COLOR": "1",
           "PATH": "/usr/bin:/bin", "PYTHONDONTWRITEBYTECODE": "1"}
    return subprocess.run([sys.executable, "-m", "lintamp", *args], cwd=cwd, env=env,
                          capture_output=True, text=True, timeout=300)


def _install(site: Path, module: str, source: str) -> None:
    """A distribution as an installer leaves it: a module and its .dist-info folder."""
    site.mkdir(exist_ok=True)
    (site / f"{module}.py").write_text(source, encoding="utf-8")
    info = site / f"{module}-1.0.dist-info"
    info.mkdir()
    (info / "METADATA").write_text(f"Metadata-Version: 2.1\nName: {module}\nVersion: 1.0\n")
    (info / "entry_points.txt").write_text(f"[lintamp.rules]\n{module} = {module}\n")


def _deck(tmp_path: Path) -> Path:
    folder = tmp_path / "proj"
    folder.mkdir()
    (folder / "a.sp").write_text(DECK)
    return folder


def test_a_plugin_that_fails_to_import_is_one_line_naming_it(tmp_path):
    site = tmp_path / "site"
    _install(site, "broken_rule", "import no_such_module_anywhere\n")
    folder = _deck(tmp_path)
    for args in (["check", "--no-cache", "a.sp"], ["rules"]):
        out = _run(args, folder, site)
        assert out.returncode == 2, out.stderr
        lines = out.stderr.strip().splitlines()
        assert len(lines) == 1 and lines[0].startswith("lintamp: rule plugin broken_rule (broken_rule)")
        assert "failed to import: ModuleNotFoundError" in lines[0] and "Traceback" not in out.stderr


def test_a_plugin_named_like_a_built_in_rule_is_an_error(tmp_path):
    site = tmp_path / "site"
    _install(site, "clash_rule", RULE.format(name="dangling-net", origin="a plugin",
                                             message="not the real one"))
    out = _run(["check", "--no-cache", "a.sp"], _deck(tmp_path), site)
    assert out.returncode == 2
    assert out.stderr.strip() == ("lintamp: rule plugin clash_rule (clash_rule): rule name "
                                  "'dangling-net' is a built-in rule's; give the rule a name of its own")


def test_a_module_that_is_no_rule_is_named(tmp_path):
    site = tmp_path / "site"
    _install(site, "not_a_rule", "X = 1\n")
    out = _run(["rules"], _deck(tmp_path), site)
    assert out.returncode == 2
    assert "rule plugin not_a_rule (not_a_rule) is not a rule module: it defines no NAME" in out.stderr


def _local_project(tmp_path: Path) -> Path:
    folder = _deck(tmp_path)
    rules = folder / "lint" / "rules"
    rules.mkdir(parents=True)
    (rules / "deck_note.py").write_text(RULE.format(name="deck-note", origin="the repository",
                                                    message="a local rule ran"))
    (rules / "_helpers.py").write_text("raise RuntimeError('a helper is not a rule')\n")
    (folder / "lintamp.toml").write_text('rule-paths = ["lint/rules"]\nonly = ["deck-note"]\n')
    return folder


def test_a_local_rule_folder_loads_rules_from_the_repository(tmp_path):
    folder = _local_project(tmp_path)
    listed = _run(["rules", "--format", "json"], folder)
    assert listed.returncode == 0, listed.stderr
    assert {"name": "deck-note", "category": "connectivity", "severity": "info",
            "summary": "one note per checked file (the repository)"} in json.loads(listed.stdout)
    page = _run(["explain", "deck-note"], folder)
    assert page.returncode == 0 and "What it finds" in page.stdout
    for _ in range(2):  # a miss, then a cache hit
        out = _run(["check", "--format", "json", "a.sp"], folder)
        assert out.returncode == 0, out.stderr
        assert [(f["rule"], f["message"]) for f in json.loads(out.stdout)["findings"]] == [
            ("deck-note", "a local rule ran")]
    # an edit of the rule is not hidden by the cache
    rule = folder / "lint" / "rules" / "deck_note.py"
    rule.write_text(rule.read_text().replace("a local rule ran", "the edited rule ran"))
    (folder / "b.sp").write_text(DECK)
    out = _run(["check", "--format", "json", "--jobs", "2", "a.sp", "b.sp"], folder)
    assert [(f["path"], f["message"]) for f in json.loads(out.stdout)["findings"]] == [
        ("a.sp", "the edited rule ran"), ("b.sp", "the edited rule ran")]
    # --only on the command line knows the config's local rules
    out = _run(["check", "--no-cache", "--only", "deck-note,connectivity", "--format", "json", "a.sp"], folder)
    assert out.returncode == 0 and json.loads(out.stdout)["summary"]["infos"] == 1, out.stderr
    # without the config, the rule is unknown
    out = _run(["check", "--no-config", "--no-cache", "--only", "deck-note", "a.sp"], folder)
    assert out.returncode == 2 and "unknown rule or category 'deck-note'" in out.stderr


def test_local_rules_that_cannot_be_used_are_config_errors(tmp_path):
    folder = _local_project(tmp_path)
    rules = folder / "lint" / "rules"
    (rules / "broken.py").write_text("1/0\n")
    out = _run(["check", "--no-cache", "a.sp"], folder)
    assert out.returncode == 2
    line = out.stderr.strip()
    assert line.startswith(f"lintamp: {folder / 'lintamp.toml'}: rule-paths: local rule ")
    assert "broken.py failed to import: ZeroDivisionError" in line and "\n" not in line
    (rules / "broken.py").write_text(RULE.format(name="unused-port", origin="x", message="x"))
    out = _run(["check", "--no-cache", "a.sp"], folder)
    assert out.returncode == 2 and "rule name 'unused-port' is a built-in rule's" in out.stderr
    (rules / "broken.py").unlink()
    (folder / "lintamp.toml").write_text('rule-paths = ["../elsewhere"]\n')
    out = _run(["check", "--no-cache", "a.sp"], folder)
    assert out.returncode == 2 and "outside the config's folder" in out.stderr


def test_a_bug_reaches_the_exit_2_handler_with_its_traceback(monkeypatch, capsys, tmp_path):
    # INTERFACE.md: 2 for an internal error; a bug is shown, never swallowed
    import lintamp.api
    from lintamp.cli import main

    def broken(*args, **kwargs):
        raise KeyError("a programming error")
    monkeypatch.setattr(lintamp.api, "check_paths", broken)
    (tmp_path / "a.sp").write_text(DECK)
    assert main(["check", "--no-config", "--no-cache", str(tmp_path / "a.sp")]) == 2
    err = capsys.readouterr().err
    assert "Traceback" in err and "KeyError: 'a programming error'" in err
    assert err.strip().splitlines()[-1].startswith("lintamp: internal error: KeyError")
