"""What a short command line imports, and plugins found through entry points.

A pre-commit hook runs ``lintamp check`` on a few small files again and again; most
runs are cache hits, and then the process start is most of the time.  These tests pin
the structure that keeps it short: a cache hit imports none of the reader, parser,
circuit or analysis layers nor the numeric libraries, and a run with no plugin
installed never imports ``importlib.metadata``.  They count modules, not seconds (the
timings are in ``bench/bench_scale.py``).

Plugins: rules register under the entry-point group ``lintamp.rules`` (the entry
points specification of the Python Packaging User Guide: an ``entry_points.txt`` in
the distribution's ``.dist-info`` folder), and that must keep working whatever
shortcut the registry takes when there is none.
"""

from __future__ import annotations

import json
import shutil
import subprocess
import sys
import textwrap
from pathlib import Path

import lintamp

REPO = Path(__file__).resolve().parent.parent
SAMPLES = REPO / "samples"
# Where this lintamp is imported from, so the child process runs the same code.
IMPORT_ROOT = Path(lintamp.__file__).resolve().parent.parent

# Packages a cache hit must not import (each costs more than the hit itself); nor any
# rule module (the registry reads their metadata from source).
HEAVY_PACKAGES = ("lintamp.netlist", "lintamp.circuit", "lintamp.connectivity", "lintamp.engine",
                  "lintamp.rulekit",
                  "pyparsing", "numpy", "scipy", "networkx", "tomllib")

_RUN_AND_LIST_MODULES = textwrap.dedent("""
    import json, sys
    from lintamp.cli import main
    code = main(sys.argv[2:])
    with open(sys.argv[1], "w", encoding="utf-8") as out:
        json.dump({"exit": code, "modules": sorted(sys.modules)}, out)
""")


def _env(*python_path: Path) -> dict[str, str]:
    return {"PYTHONPATH": ":".join(str(p) for p in (*python_path, IMPORT_ROOT)),
            "NO_COLOR": "1", "PATH": "/usr/bin:/bin"}


def _modules_after(args: list[str], cwd: Path, env: dict[str, str]) -> tuple[int, list[str], str]:
    listing = cwd / "modules.json"
    out = subprocess.run([sys.executable, "-c", _RUN_AND_LIST_MODULES, str(listing), *args],
                         cwd=cwd, env=env, capture_output=True, text=True, timeout=300)
    assert out.returncode in (0, 1), out.stderr
    data = json.loads(listing.read_text(encoding="utf-8"))
    listing.unlink()
    return data["exit"], data["modules"], out.stdout


def _preloaded(env: dict[str, str]) -> set[str]:
    """Modules the interpreter imports before lintamp runs (site hooks of the machine)."""
    out = subprocess.run([sys.executable, "-c", "import json, sys; print(json.dumps(sorted(sys.modules)))"],
                         env=env, capture_output=True, text=True, timeout=60, check=True)
    return set(json.loads(out.stdout))


def _heavy(modules: list[str], preloaded: set[str]) -> list[str]:
    return [m for m in modules if m not in preloaded
            and (m.startswith("lintamp.rules.")
                 or any(m == p or m.startswith(p + ".") for p in HEAVY_PACKAGES))]


def _small_project(tmp_path: Path) -> Path:
    folder = tmp_path / "small"
    folder.mkdir()
    for name in ("bias_block.sp", "models.lib"):
        shutil.copy(SAMPLES / name, folder / name)
    return folder


def test_cache_hit_imports_no_parser_circuit_analysis_or_numerics(tmp_path):
    folder = _small_project(tmp_path)
    env = _env()
    first_exit, first_modules, first_report = _modules_after(["check", "bias_block.sp"], folder, env)
    assert "lintamp.netlist.parser" in first_modules  # the miss did read the file
    assert (folder / ".lintamp_cache").is_dir()
    hit_exit, hit_modules, hit_report = _modules_after(["check", "bias_block.sp"], folder, env)
    assert (hit_exit, hit_report) == (first_exit, first_report)
    preloaded = _preloaded(env)
    assert _heavy(hit_modules, preloaded) == []
    from importlib.metadata import entry_points
    if "importlib.metadata" not in preloaded and not entry_points(group="lintamp.rules"):
        assert "importlib.metadata" not in hit_modules  # no plugin is installed to look for


def test_cache_hit_with_no_config_and_only_imports_no_toml_reader(tmp_path):
    folder = _small_project(tmp_path)
    args = ["check", "--no-config", "--only", "connectivity,references,syntax", "bias_block.sp"]
    _modules_after(args, folder, _env())
    _, hit_modules, _ = _modules_after(args, folder, _env())
    assert _heavy(hit_modules, _preloaded(_env())) == []


def test_connectivity_check_of_a_deck_of_plain_numbers_needs_no_grammar_nor_numerics(tmp_path):
    folder = _small_project(tmp_path)
    args = ["check", "--no-cache", "--no-config", "--only", "connectivity,references,syntax",
            "bias_block.sp"]
    _, modules, _ = _modules_after(args, folder, _env())
    assert "lintamp.netlist.parser" in modules
    assert not [m for m in modules if m.split(".")[0] in ("pyparsing", "numpy", "scipy")]

    (folder / "bias_block.sp").write_text(
        (folder / "bias_block.sp").read_text(encoding="utf-8").replace("18k", "{2*9k}"),
        encoding="utf-8")
    _, modules, _ = _modules_after(args, folder, _env())
    assert "pyparsing" in modules  # an expression: the grammar is built on demand


def _install_fake_plugin(site: Path) -> None:
    """A distribution as an installer leaves it: a module and its .dist-info folder."""
    (site / "amp_extra_rule.py").write_text(textwrap.dedent('''
        """Every deck gets one note (a plugin rule for the tests).

        What it finds
            Nothing real: it reports each checked file once.

        Why it matters
            It shows that rules from other packages run.

        Example
            Any netlist.

        Fix
            None needed.
        """
        from lintamp.findings import Severity
        from lintamp.location import Location

        NAME = "extra-deck-note"
        CATEGORY = "connectivity"
        SEVERITY = Severity.INFO
        SUMMARY = "one note per checked file (a plugin)"


        def check(ctx):
            yield ctx.finding(location=Location(ctx.netlist.path, 1, 1), subject="deck",
                              message="a plugin rule ran on this file")
    '''), encoding="utf-8")
    info = site / "amp_extra_rule-1.0.dist-info"
    info.mkdir()
    (info / "METADATA").write_text("Metadata-Version: 2.1\nName: amp-extra-rule\nVersion: 1.0\n",
                                   encoding="utf-8")
    (info / "entry_points.txt").write_text("[lintamp.rules]\nextra-deck-note = amp_extra_rule\n",
                                           encoding="utf-8")


def test_plugin_rule_from_an_entry_point_is_listed_and_runs(tmp_path):
    site = tmp_path / "site"
    site.mkdir()
    _install_fake_plugin(site)
    folder = _small_project(tmp_path)
    env = _env(site)
    listed = subprocess.run([sys.executable, "-m", "lintamp", "rules", "--format", "json"], cwd=folder,
                            env=env, capture_output=True, text=True, timeout=300)
    assert listed.returncode == 0, listed.stderr
    assert {"name": "extra-deck-note", "category": "connectivity", "severity": "info",
            "summary": "one note per checked file (a plugin)"} in json.loads(listed.stdout)
    for extra in ([], ["--no-cache"]):  # a miss, then a hit, then without the cache
        for _ in range(1 if extra else 2):
            out = subprocess.run([sys.executable, "-m", "lintamp", "check", "--format", "json",
                                  *extra, "bias_block.sp"], cwd=folder, env=env,
                                 capture_output=True, text=True, timeout=300)
            assert out.returncode == 0, out.stderr
            found = [(f["rule"], f["subject"], f["line"]) for f in json.loads(out.stdout)["findings"]]
            assert ("extra-deck-note", "deck", 1) in found


def test_no_plugin_declared_means_no_plugin_rules(tmp_path):
    site = tmp_path / "site"
    site.mkdir()
    other = site / "unrelated-2.0.dist-info"  # entry points of another tool only
    other.mkdir()
    (other / "METADATA").write_text("Metadata-Version: 2.1\nName: unrelated\nVersion: 2.0\n",
                                    encoding="utf-8")
    (other / "entry_points.txt").write_text("[console_scripts]\nunrelated = unrelated:main\n",
                                            encoding="utf-8")
    out = subprocess.run([sys.executable, "-m", "lintamp", "rules", "--format", "json"], cwd=tmp_path,
                         env=_env(site), capture_output=True, text=True, timeout=300)
    assert out.returncode == 0, out.stderr
    from lintamp.registry import all_rules
    assert sorted(r["name"] for r in json.loads(out.stdout)) == sorted(all_rules())


def _described(rule) -> tuple | None:
    if rule is None:
        return None
    return (rule.name, rule.category, rule.severity, rule.summary, rule.doc,
            rule.check is None, rule.module)


def test_rule_metadata_memo_gives_what_the_sources_say(tmp_path, monkeypatch):
    from types import SimpleNamespace

    from lintamp import registry

    folder = tmp_path / "rules"
    shutil.copytree(REPO / "rules", folder, ignore=shutil.ignore_patterns("__pycache__"))
    package = SimpleNamespace(__file__=str(folder / "__init__.py"))
    sources = {f"lintamp.rules.{p.stem}": p for p in sorted(folder.glob("[a-z]*.py"))}
    expected = {name: _described(registry._from_source(name, path)) for name, path in sources.items()}
    assert all(v is not None for v in expected.values())  # every built-in rule reads from source

    monkeypatch.setattr(sys, "dont_write_bytecode", True)
    memo = registry._SourceMemo(package)
    assert {n: _described(memo.from_source(n, p)) for n, p in sources.items()} == expected
    memo.save()
    assert memo.path is not None and not memo.path.exists()  # as Python writes no bytecode then

    monkeypatch.setattr(sys, "dont_write_bytecode", False)
    memo = registry._SourceMemo(package)
    for name, path in sources.items():
        memo.from_source(name, path)
    memo.save()
    assert memo.path.is_file() and memo.path.parent.name == "__pycache__"

    read_again: list[str] = []
    parse = registry._from_source
    monkeypatch.setattr(registry, "_from_source", lambda n, p: read_again.append(n) or parse(n, p))
    memo = registry._SourceMemo(package)
    assert {n: _described(memo.from_source(n, p)) for n, p in sources.items()} == expected
    assert read_again == []  # all from the memo

    edited = sources["lintamp.rules.dangling_net"]
    edited.write_text(edited.read_text(encoding="utf-8").replace('SEVERITY = Severity.WARNING',
                                                                 'SEVERITY = Severity.ERROR'),
                      encoding="utf-8")
    memo = registry._SourceMemo(package)
    changed = {n: _described(memo.from_source(n, p)) for n, p in sources.items()}
    assert read_again == ["lintamp.rules.dangling_net"]
    assert changed["lintamp.rules.dangling_net"][2] is registry.Severity.ERROR

    memo.path.write_text("{not json", encoding="utf-8")  # a damaged memo is read past
    memo = registry._SourceMemo(package)
    assert {n: _described(memo.from_source(n, p)) for n, p in sources.items()} == changed


def test_code_fingerprint_lists_the_files_rglob_lists(tmp_path):
    from lintamp.api import _python_files

    # names that sort differently as strings and as path components, a folder named
    # like a module, a linked folder (not followed) and a linked file (listed)
    for rel in ("a/b.py", "a.b/c.py", "a-b.py", "a/x.py/y.py", "a/.hidden.py", "a/no.pyc", "A.py"):
        (tmp_path / rel).parent.mkdir(parents=True, exist_ok=True)
        (tmp_path / rel).write_text("", encoding="utf-8")
    (tmp_path / "linked").symlink_to(tmp_path / "a", target_is_directory=True)
    (tmp_path / "file_link.py").symlink_to(tmp_path / "a-b.py")
    for folder in (tmp_path, REPO / "lintamp", REPO / "rules"):
        assert _python_files(str(folder)) == [str(p) for p in sorted(folder.rglob("*.py"))]


def test_device_globs_match_as_fnmatch_does():
    import fnmatch
    import itertools

    from lintamp.circuit.devicemap import BUILTIN, DeviceSpec

    # the reference is the definition the table always used: fnmatch.fnmatchcase on
    # lower-cased names and patterns
    patterns = [e.pattern for e in BUILTIN] + ["*", "?", "", "a[bc]d*", "a[", "[!x]fet", "X?Y*Z",
                                               "nfet", "NFET_*", "res_[0-9]*"]
    names = [e.pattern.replace("*", "x") for e in BUILTIN] + [
        "", "a", "abd", "acdx", "a[", "yfet", "xfet", "XqYzZ", "nfet", "NFET_01v8", "nfet_", "res_4k",
        "res_k", "sky130_fd_pr__nfet_01v8", "SKY130_FD_PR__PFET_G5V0D10V5", "biasgen", "sink2"]
    for pattern, name in itertools.product(patterns, names):
        spec = DeviceSpec(pattern, "nmos", ("d", "g", "s", "b"))
        assert spec.matches(name) == fnmatch.fnmatchcase(name.lower(), pattern.lower()), (pattern, name)
