"""The front ends: one module per command, help that teaches, progress, include dependents."""

from __future__ import annotations

import argparse
import ast
import json
import os
import pty
import select
import shutil
import subprocess
import sys
import time
from pathlib import Path

import pytest

from lintamp.cli import build_parser, main
from lintamp.commands import COMMANDS

REPO = Path(__file__).resolve().parent.parent
SAMPLES = REPO / "samples"


def _env(**extra) -> dict[str, str]:
    env = {"PYTHONPATH": str(REPO), "NO_COLOR": "1", "PATH": "/usr/bin:/bin",
           "PYTHONDONTWRITEBYTECODE": "1"}
    env.update(extra)
    return env


# ---------------------------------------------------------------- structure


def test_commands_never_import_the_cli():
    # issue 18: cli.py imports the commands, never the other way round (no cycle)
    for path in sorted((REPO / "lintamp" / "commands").glob("*.py")):
        tree = ast.parse(path.read_text(encoding="utf-8"))
        for node in ast.walk(tree):
            if isinstance(node, ast.ImportFrom):
                assert node.module != "lintamp.cli" and not (node.module == "lintamp" and any(
                    a.name == "cli" for a in node.names)), f"{path.name} imports lintamp.cli"
            elif isinstance(node, ast.Import):
                assert all(a.name != "lintamp.cli" for a in node.names), path.name


def test_every_command_has_its_module_and_registers():
    parser = build_parser()
    sub = next(a for a in parser._actions if isinstance(a, argparse._SubParsersAction))
    assert list(sub.choices) == list(COMMANDS)
    for name in COMMANDS:
        assert (REPO / "lintamp" / "commands" / f"{name}.py").is_file()
        assert sub.choices[name].get_default("run").__module__ == f"lintamp.commands.{name}"


def test_exit_code_comes_from_the_decision_module(monkeypatch, tmp_path):
    # the CLI does not re-implement the --fail-on policy: it asks decide.exit_code
    import lintamp.decide
    asked = []

    def spy(report, fail_on):
        asked.append(fail_on)
        return 0
    monkeypatch.setattr(lintamp.decide, "exit_code", spy)
    assert main(["check", "--no-config", "--no-cache", "--fail-on", "error", "-o",
                 str(tmp_path / "r.txt"), str(SAMPLES / "review_typos.sp")]) == 0
    from lintamp.findings import Severity
    assert asked == [Severity.ERROR]


# ---------------------------------------------------------------- help


def _option_actions(parser):
    return [a for a in parser._actions if a.option_strings or a.dest not in ("command",)]


@pytest.mark.parametrize("name", COMMANDS)
def test_help_describes_every_option_and_ends_with_examples(name, capsys):
    parser = build_parser()
    sub = next(a for a in parser._actions if isinstance(a, argparse._SubParsersAction))
    command = sub.choices[name]
    for action in command._actions:
        if isinstance(action, argparse._HelpAction):
            continue
        assert action.help and action.help.strip(), f"{name} {action.option_strings or action.dest}"
    with pytest.raises(SystemExit) as exit_info:
        main([name, "--help"])
    assert exit_info.value.code == 0
    text = capsys.readouterr().out
    tail = text[text.rindex("examples:"):].splitlines()[1:]
    examples = [line.strip() for line in tail if line.startswith("  lintamp ")]
    assert 2 <= len(examples) <= 3, text
    assert all(line.startswith("  lintamp " + name) or name == "explain" and
               line.strip().startswith("lintamp explain") for line in tail if line.startswith("  l"))


def test_help_of_check_names_the_new_options_only(capsys):
    with pytest.raises(SystemExit):
        main(["check", "--help"])
    text = capsys.readouterr().out
    for option in ("--only", "--skip", "--no-config", "--counts", "--dependents"):
        assert option in text
    for old in ("--select", "--ignore", "--isolated", "--statistics"):
        assert old not in text


@pytest.mark.parametrize("old", ["--select", "--ignore", "--isolated", "--statistics"])
def test_old_options_are_gone(old, capsys):
    argv = ["check", old] + (["connectivity"] if old in ("--select", "--ignore") else []) + [str(SAMPLES)]
    with pytest.raises(SystemExit) as info:
        main(argv)
    assert info.value.code == 2
    assert "unrecognized arguments" in capsys.readouterr().err


# ---------------------------------------------------------------- the closing line and --quiet


def test_closing_line_of_the_samples_and_of_a_clean_run(tmp_path, capsys):
    # INTERFACE.md: "6 files checked: 6 errors, 2 warnings, 0 infos." / "3 files checked: clean."
    assert main(["check", "--no-config", "--no-cache", "--color", "never", str(SAMPLES)]) == 1
    out = capsys.readouterr().out
    assert out.splitlines()[-1] == "6 files checked: 6 errors, 2 warnings, 0 infos."
    for name in ("a", "b", "c"):
        (tmp_path / f"{name}.sp").write_text("divider\nv1 a 0 1\nr1 a b 1k\nr2 b 0 1k\n.end\n")
    assert main(["check", "--no-config", "--no-cache", "--color", "never", str(tmp_path)]) == 0
    assert capsys.readouterr().out == "3 files checked: clean.\n"
    assert main(["check", "--no-config", "--no-cache", "--quiet", str(tmp_path)]) == 0
    assert capsys.readouterr().out == ""


def test_counts_end_the_report_with_findings_per_rule(capsys):
    main(["check", "--no-config", "--no-cache", "--counts", "--color", "never", str(SAMPLES)])
    lines = capsys.readouterr().out.splitlines()
    start = lines.index("Findings by rule:")
    assert lines[start + 1].split()[:2] == ["2", "unbiased-gate"]


# ---------------------------------------------------------------- config through the CLI


def test_an_old_config_key_exits_2_naming_the_new_key(tmp_path, capsys):
    (tmp_path / "lintamp.toml").write_text('select = ["connectivity"]\n')
    deck = tmp_path / "a.sp"
    deck.write_text("divider\nv1 a 0 1\nr1 a b 1k\nr2 b 0 1k\n.end\n")
    assert main(["check", "--no-cache", str(deck)]) == 2
    err = capsys.readouterr().err
    assert "select: is now called 'only'" in err
    assert main(["check", "--no-cache", "--no-config", str(deck)]) == 0


def test_paths_table_skips_a_rule_under_a_glob(tmp_path, monkeypatch, capsys):
    monkeypatch.chdir(tmp_path)
    (tmp_path / "lintamp.toml").write_text('[paths]\n"tb/**" = { skip = ["dangling-net"] }\n')
    open_end = "* one resistor to nowhere\nv1 a 0 1\nr1 a b 1k\n.end\n"
    for folder in ("tb", "blocks"):
        (tmp_path / folder).mkdir()
        (tmp_path / folder / "x.sp").write_text(open_end)
    main(["check", "--no-cache", "--format", "json", "."])
    report = json.loads(capsys.readouterr().out)
    assert {(f["rule"], f["path"]) for f in report["findings"]} == {("dangling-net", "blocks/x.sp")}


def test_impedance_and_audit_read_the_config_too(tmp_path, capsys):
    (tmp_path / "lintamp.toml").write_text('ignore = ["connectivity"]\n')
    shutil.copy(SAMPLES / "sensor_frontend.sp", tmp_path)
    shutil.copy(SAMPLES / "models.lib", tmp_path)
    for argv in (["impedance", str(tmp_path / "sensor_frontend.sp"), "pd"],
                 ["audit", str(tmp_path / "sensor_frontend.sp")]):
        assert main(argv) == 2
        assert "ignore: is now called 'skip'" in capsys.readouterr().err
        assert main([*argv, "--no-config"]) == 0
        capsys.readouterr()


# ---------------------------------------------------------------- include dependents


def _project(tmp_path: Path) -> Path:
    """Decks that include a model library directly, through another include, or not at all."""
    root = tmp_path / "proj"
    (root / "models").mkdir(parents=True)
    (root / "blocks").mkdir()
    (root / "lintamp.toml").write_text('netlists = ["*.sp"]\n')
    (root / "models" / "devices.lib").write_text(".model nch nmos vto=0.5 kp=200u\n")
    (root / "models" / "corners.inc").write_text(".lib tt\n.include devices.lib\n.endl tt\n")
    deck = "{title}\n{include}\nv1 vdd 0 1.8\nvg g 0 1\nm1 vdd g 0 0 nch w=1u l=1u\n.end\n"
    (root / "blocks" / "direct.sp").write_text(
        deck.format(title="direct", include=".include ../models/devices.lib"))
    (root / "blocks" / "nested.sp").write_text(
        deck.format(title="nested", include=".lib '../models/corners.inc' tt"))
    (root / "blocks" / "alone.sp").write_text(
        deck.format(title="alone", include=".model nch nmos vto=0.5 kp=200u"))
    return root


def test_dependents_of_a_model_library_are_the_decks_that_read_it(tmp_path, monkeypatch, capsys):
    root = _project(tmp_path)
    monkeypatch.chdir(root)
    # the hook passes the staged model file; its includers are checked, directly or through
    # corners.inc, and the deck that defines its own model is not
    assert main(["check", "--no-cache", "--dependents", "--format", "json",
                 "models/devices.lib"]) == 0
    assert json.loads(capsys.readouterr().out)["summary"]["files"] == 2
    main(["check", "--no-cache", "--dependents", "models/devices.lib"])
    assert capsys.readouterr().out.splitlines()[-1] == "2 files checked: clean."

    from lintamp.commands.dependents import with_dependents
    from lintamp.config import load_config
    config = load_config(None, start=root)
    got = with_dependents([Path("models/devices.lib")], config)
    assert [p.as_posix() for p in got] == ["blocks/direct.sp", "blocks/nested.sp"]
    # a staged deck stays first and is not listed twice; the include file alone finds one
    got = with_dependents([Path("blocks/nested.sp"), Path("models/corners.inc")], config)
    assert [p.as_posix() for p in got] == ["blocks/nested.sp"]
    # without --dependents a named model file is checked alone, as before
    assert main(["check", "--no-cache", "--format", "json", "models/devices.lib"]) == 0
    assert json.loads(capsys.readouterr().out)["summary"]["files"] == 1


def test_dependents_stay_inside_the_project_and_its_netlist_globs(tmp_path, monkeypatch):
    root = _project(tmp_path)
    monkeypatch.chdir(root)
    outside = tmp_path / "elsewhere.lib"
    outside.write_text(".model nch nmos\n")
    (root / "blocks" / "escape.sp").write_text("escape\n.include ../../elsewhere.lib\n.end\n")
    (root / "blocks" / "notes.cir").write_text("not a netlist by the globs\n.include ../models/devices.lib\n")
    (root / "blocks" / "loop.sp").write_text("loop\n.include loop.sp\n.include ../models/corners.inc\n")
    from lintamp.commands.dependents import dependents
    from lintamp.config import load_config
    config = load_config(None, start=root)
    assert dependents([outside], config) == []  # never resolved outside the root
    found = sorted(p.name for p in dependents([root / "models" / "devices.lib"], config))
    assert found == ["direct.sp", "loop.sp", "nested.sp"]  # not notes.cir; the cycle ends


def test_the_pre_commit_hook_passes_model_files_and_asks_for_dependents():
    import re
    text = (REPO / ".pre-commit-hooks.yaml").read_text()
    entry = re.search(r"^\s*entry:\s*(.+)$", text, re.M).group(1).split()
    assert entry[:3] == ["lintamp", "check", "--dependents"]
    files = re.compile(re.search(r"^\s*files:\s*'(.+)'$", text, re.M).group(1))
    for name in ("a.sp", "b.cir", "models/x.lib", "m.inc", "deck.spice"):
        assert files.search(name), name
    assert not files.search("README.md")


# ---------------------------------------------------------------- progress


def _run_with_stderr_on_a_terminal(args, env, cwd) -> tuple[int, str, str]:
    """Run lintamp with stderr on a pseudo-terminal and stdout on a pipe."""
    leader, follower = pty.openpty()
    proc = subprocess.Popen([sys.executable, "-m", "lintamp", *args], cwd=cwd, env=env,
                            stdout=subprocess.PIPE, stderr=follower, stdin=subprocess.DEVNULL)
    os.close(follower)
    seen = b""
    deadline = time.monotonic() + 120
    while time.monotonic() < deadline:
        ready, _, _ = select.select([leader], [], [], 0.2)
        if ready:
            try:
                piece = os.read(leader, 65536)
            except OSError:  # the child closed its end
                break
            if not piece:
                break
            seen += piece
        elif proc.poll() is not None:
            break
    out = proc.stdout.read().decode("utf-8")
    code = proc.wait(timeout=60)
    os.close(leader)
    return code, out, seen.decode("utf-8", "replace")


@pytest.fixture(scope="module")
def many_decks(tmp_path_factory) -> Path:
    folder = tmp_path_factory.mktemp("many")
    for i in range(6):
        (folder / f"d{i}.sp").write_text(f"divider {i}\nv1 a 0 1\nr1 a b 1k\nr2 b 0 1k\n.end\n")
    return folder


def test_progress_line_on_a_terminal_and_never_in_stdout(many_decks):
    # stderr a terminal, six files, no CI: the line is drawn (rich, transient) on stderr
    args = ["check", "--no-config", "--no-cache", "--format", "json", "."]
    code, out, err = _run_with_stderr_on_a_terminal(args, _env(), many_decks)
    assert code == 0
    assert "checking" in err and "6/6" in err
    assert json.loads(out)["summary"]["files"] == 6  # stdout holds the report alone
    assert "checking" not in out and "\x1b" not in out


def test_no_progress_in_ci_or_off_a_terminal(many_decks):
    args = ["check", "--no-config", "--no-cache", "--format", "json", "."]
    for ci in ("true", "1"):
        code, out, err = _run_with_stderr_on_a_terminal(args, _env(CI=ci), many_decks)
        assert code == 0 and "checking" not in err and json.loads(out)["summary"]["files"] == 6
    piped = subprocess.run([sys.executable, "-m", "lintamp", *args], cwd=many_decks, env=_env(),
                           capture_output=True, text=True, timeout=120)
    assert piped.returncode == 0 and piped.stderr == ""


def test_no_progress_for_a_few_small_files(many_decks):
    code, out, err = _run_with_stderr_on_a_terminal(
        ["check", "--no-config", "--no-cache", "d0.sp", "d1.sp"], _env(), many_decks)
    assert code == 0 and "checking" not in err
    assert out.splitlines()[-1] == "2 files checked: clean."


def test_a_deck_over_100k_lines_counts_as_long(tmp_path):
    from lintamp.commands.progress import BIG_DECK_LINES, has_big_deck, in_ci, wants_progress
    small = tmp_path / "small.sp"
    small.write_text("t\n" + "r1 a 0 1k\n" * 10)
    big = tmp_path / "big.sp"
    with open(big, "w") as out:
        out.write("t\n")
        for i in range(BIG_DECK_LINES + 1):
            out.write(f"r{i} n{i} n{i + 1} 1k\n")
    assert not has_big_deck([small]) and has_big_deck([small, big])

    class Terminal:
        def isatty(self):
            return True
    assert wants_progress([big], Terminal(), environ={})
    assert not wants_progress([small], Terminal(), environ={})
    assert not wants_progress([big], Terminal(), environ={"CI": "true"})
    assert not wants_progress([big], sys.stderr if not sys.stderr.isatty() else object(), environ={})
    assert in_ci({"CI": "true"}) and not in_ci({"CI": ""}) and not in_ci({"CI": "false"})


def test_output_paths_are_checked_before_any_work(tmp_path, capsys):
    deck = tmp_path / "a.sp"
    deck.write_text("divider\nv1 a 0 1\nr1 a b 1k\nr2 b 0 1k\n.end\n")
    for option in ("-o", "--write-baseline"):
        assert main(["check", "--no-config", "--no-cache", option, str(tmp_path / "no" / "r"),
                     str(deck)]) == 2
        assert capsys.readouterr().err == f"lintamp: {option} {tmp_path / 'no' / 'r'}: no such folder\n"
        assert main(["check", "--no-config", "--no-cache", option, str(tmp_path), str(deck)]) == 2
        assert "is a folder, not a file" in capsys.readouterr().err
    assert main(["audit", "--no-config", "-o", str(tmp_path / "no" / "s.md"), str(deck)]) == 2
    assert "no such folder" in capsys.readouterr().err
