"""Configuration discovery, validation and the messages a user sees for mistakes.

Scenarios are our own; expectations are the contract in INTERFACE.md (kebab-case
keys, nearest file wins, exit-2 style `path: key: what; expected ...` errors).
"""

from __future__ import annotations

from pathlib import Path

import pytest

from conftest import KNOWN
from lintamp.config import (
    DEFAULT_NETLISTS, Config, ConfigError, find_config, glob_match, load_config,
    parse_fail_on, parse_rule_list, register_threshold,
)
from lintamp.findings import Severity


def write(path: Path, text: str) -> Path:
    path.parent.mkdir(parents=True, exist_ok=True)
    path.write_text(text, encoding="utf-8")
    return path


def load(tmp_path: Path, text: str, name="lintamp.toml") -> Config:
    return load_config(write(tmp_path / name, text), start=tmp_path, known_rules=KNOWN)


def error_of(tmp_path: Path, text: str, name="lintamp.toml") -> str:
    with pytest.raises(ConfigError) as info:
        load(tmp_path, text, name)
    return str(info.value)


def test_defaults_without_a_file(tmp_path):
    config = load_config(None, start=tmp_path, known_rules=KNOWN)
    assert config.source is None and config.root == tmp_path.resolve()
    assert config.netlists == DEFAULT_NETLISTS
    assert config.fail_on is Severity.WARNING
    assert config.only == ("all",)


def test_nearest_config_wins_and_lintamp_toml_beats_pyproject(tmp_path):
    write(tmp_path / "lintamp.toml", 'fail-on = "error"\n')
    write(tmp_path / "sub" / "pyproject.toml", '[tool.lintamp]\nfail-on = "info"\n')
    write(tmp_path / "sub" / "deeper" / "pyproject.toml", "[tool.other]\nx = 1\n")
    deep = tmp_path / "sub" / "deeper"
    assert find_config(deep) == (tmp_path / "sub" / "pyproject.toml").resolve()
    config = load_config(None, start=deep, known_rules=KNOWN)
    assert config.fail_on is Severity.INFO
    assert config.root == (tmp_path / "sub").resolve()
    write(tmp_path / "sub" / "lintamp.toml", 'fail-on = "never"\n')
    assert find_config(deep).name == "lintamp.toml"
    assert load_config(None, start=deep, known_rules=KNOWN).fail_on is None


def test_no_config_reads_no_file(tmp_path):
    write(tmp_path / "lintamp.toml", 'fail-on = "error"\n')
    assert load_config(None, no_config=True, start=tmp_path, known_rules=KNOWN).fail_on is Severity.WARNING


def test_full_file_is_read(tmp_path):
    config = load(tmp_path, """
netlists = ["*.sp"]
exclude = ["build/**"]
only = ["connectivity", "unbuffered-output"]
skip = ["dangling-net"]
fail-on = "error"
bandwidth = "20meg"
include-paths = ["models"]

[severity]
unbiased-gate = "warning"
impedance = "info"

[paths]
"tb/**" = { skip = ["connectivity"] }

[devices]
"acme_nfet_*" = { kind = "nmos", pins = ["d", "g", "s", "b"] }
"acme_rpoly*" = { kind = "resistor", pins = ["p", "n", "-"], value = "r" }
""")
    assert config.fail_on is Severity.ERROR and config.bandwidth == "20meg"
    assert config.include_paths == ((tmp_path / "models").resolve(),)
    assert config.severity == {"unbiased-gate": Severity.WARNING, "impedance": Severity.INFO}
    assert config.rule_enabled("no-dc-path", "connectivity")
    assert not config.rule_enabled("dangling-net", "connectivity")  # rule beats category
    assert config.rule_enabled("unbuffered-output", "impedance")
    assert not config.rule_enabled("unused-port", "references")  # not selected
    assert config.severity_for("unbiased-gate", "connectivity", Severity.ERROR) is Severity.WARNING
    assert config.severity_for("unbuffered-output", "impedance", Severity.ERROR) is Severity.INFO
    assert config.skipped_in_file("no-dc-path", "connectivity", "tb/deep/tb1.sp")
    assert not config.skipped_in_file("no-dc-path", "connectivity", "blocks/tb1.sp")
    # INTERFACE.md: device globs are case-insensitive, first match wins.
    assert config.device_for("ACME_NFET_LVT").kind == "nmos"
    assert config.device_for("acme_rpoly_hv").value == "r"
    assert config.device_for("other") is None


def test_pyproject_table_and_key_prefix_in_messages(tmp_path):
    config = load(tmp_path, '[tool.lintamp]\nskip = ["unused-port"]\n', name="pyproject.toml")
    assert config.skip == ("unused-port",)
    message = error_of(tmp_path, '[tool.lintamp]\nfail_on = "error"\n', name="pyproject.toml")
    assert message == (f"{tmp_path / 'pyproject.toml'}: tool.lintamp.fail_on: unknown key; "
                       "expected the kebab-case spelling 'fail-on'")


@pytest.mark.parametrize("text, key, words", [
    ('colour = "always"\n', "colour", "unknown key"),
    ('only = ["danglng-net"]\n', "only", "did you mean 'dangling-net'"),
    ('skip = "dangling-net"\n', "skip", "single string"),
    ('fail-on = "fatal"\n', "fail-on", "error, warning, info, never"),
    ('bandwidth = "fast"\n', "bandwidth", "frequency"),
    ('[severity]\ndangling-net = "fatal"\n', "severity.dangling-net", '"error", "warning" or "info"'),
    ('[severity]\nno-such-rule = "error"\n', "severity.no-such-rule", "unknown rule"),
    ('[paths]\n"tb/**" = { skip = ["nope"] }\n', 'paths."tb/**".skip', "unknown rule"),
    ('[paths]\n"tb/**" = ["connectivity"]\n', 'paths."tb/**"', '{ skip = ["unused-port"] }'),
    ('[paths]\n"tb/**" = { severity = "info" }\n', 'paths."tb/**".severity', "unknown key"),
    ('[devices]\n"x*" = { kind = "jfet", pins = ["d","g","s"] }\n', 'devices."x*".kind', "nmos pmos"),
    ('[devices]\n"x*" = { kind = "nmos", pins = ["d","g"] }\n', 'devices."x*".pins', "lacks s"),
    ('[devices]\n"x*" = { kind = "nmos", pins = ["d","g","s","q"] }\n', 'devices."x*".pins', "not a nmos terminal"),
    ('[devices]\n"x*" = { kind = "npn", pins = ["c","b","e","e"] }\n', 'devices."x*".pins', "twice"),
    ('[devices]\n"x*" = { kind = "nmos", pins = ["d","g","s"], model = "n" }\n', 'devices."x*".model', "unknown key"),
    ('[thresholds]\nno-such-threshold = 3\n', "thresholds.no-such-threshold", "unknown threshold"),
])
def test_mistakes_name_file_key_problem_and_expectation(tmp_path, text, key, words):
    message = error_of(tmp_path, text)
    assert message.startswith(f"{tmp_path / 'lintamp.toml'}: {key}: ")
    assert "; expected " in message
    assert words in message


def test_bad_toml_gives_line_and_column(tmp_path):
    message = error_of(tmp_path, 'only = ["a"\n')
    assert message.startswith(f"{tmp_path / 'lintamp.toml'}: not valid TOML")
    assert "line" in message


def test_missing_config_file(tmp_path):
    with pytest.raises(ConfigError, match="file not found"):
        load_config(tmp_path / "nope.toml", start=tmp_path, known_rules=KNOWN)


def test_thresholds_are_checked_against_what_rules_declare(tmp_path):
    register_threshold("test-gain-margin-ratio", 10.0, "ratio", "for this test only")
    config = load(tmp_path, "[thresholds]\ntest-gain-margin-ratio = 4\n")
    assert config.threshold("test-gain-margin-ratio") == 4.0
    assert Config().threshold("test-gain-margin-ratio") == 10.0
    assert "a number in ratio" in error_of(tmp_path, '[thresholds]\ntest-gain-margin-ratio = "4"\n')


def test_command_line_lists_use_the_same_checks():
    assert parse_rule_list("dangling-net, impedance,all", option="--only", known_rules=KNOWN) == (
        "dangling-net", "impedance", "all")
    with pytest.raises(ConfigError) as info:
        parse_rule_list("dangling", option="--skip", known_rules=KNOWN)
    assert str(info.value).startswith("--skip: unknown rule or category 'dangling'")
    assert parse_fail_on("never") is None and parse_fail_on("info") is Severity.INFO


def test_rule_names_default_to_the_registry_plus_parser_rules(tmp_path):
    # The parser-level names are valid even without rule modules (INTERFACE.md table).
    config = load_config(write(tmp_path / "lintamp.toml", 'skip = ["pin-mismatch", "unused-waiver"]\n'),
                         start=tmp_path)
    assert config.skip == ("pin-mismatch", "unused-waiver")


def test_globs_and_file_selection(tmp_path):
    # Glob semantics: common practice of gitignore-style tools (name-only patterns match the file name).
    assert glob_match("*.sp", "a/b/c.sp") and not glob_match("a/*.sp", "a/b/c.sp")
    assert glob_match("a/**/*.sp", "a/c.sp") and glob_match("a/**/*.sp", "a/b/c.sp")
    assert glob_match("[ab].cir", "b.cir") and not glob_match("[!ab].cir", "b.cir")
    config = load(tmp_path, 'exclude = ["build", "tb/old_*.sp"]\n')
    assert config.wants_file(tmp_path / "blocks" / "amp.sp")
    assert config.wants_file(tmp_path / "blocks" / "amp.CDL") is False  # globs are case-sensitive
    assert not config.wants_file(tmp_path / "build" / "x" / "amp.sp")
    assert not config.wants_file(tmp_path / "tb" / "old_1.sp")
    assert not config.wants_file(tmp_path / "notes.txt")


def test_fingerprint_changes_with_settings(tmp_path):
    a = load(tmp_path, 'skip = ["dangling-net"]\n')
    b = load(tmp_path, 'skip = ["unused-port"]\n')
    assert a.fingerprint() != b.fingerprint()
    assert a.fingerprint() == load(tmp_path, 'skip = ["dangling-net"]\n').fingerprint()


def test_a_rule_threshold_is_accepted_in_a_fresh_process(tmp_path):
    # in a fresh interpreter no rule module is imported yet: the thresholds a built-in
    # rule declares must still be known when a config sets one (a bug once said
    # "none are declared yet"); a misspelt one is refused with the real names
    import shutil
    import subprocess
    import sys

    repo = Path(__file__).resolve().parent.parent
    shutil.copy(repo / "samples" / "bias_block.sp", tmp_path)
    shutil.copy(repo / "samples" / "models.lib", tmp_path)
    run = [sys.executable, "-m", "lintamp", "check", "--no-cache", "bias_block.sp"]
    (tmp_path / "lintamp.toml").write_text("[thresholds]\noutput-max-loss = 0.2\n")
    ok = subprocess.run(run, cwd=tmp_path, capture_output=True, text=True)
    assert ok.returncode in (0, 1), ok.stderr
    (tmp_path / "lintamp.toml").write_text("[thresholds]\noutput-max-los = 0.2\n")
    bad = subprocess.run(run, cwd=tmp_path, capture_output=True, text=True)
    assert bad.returncode == 2
    assert "did you mean 'output-max-loss'" in bad.stderr and "none are declared" not in bad.stderr


@pytest.mark.parametrize("old, new", [("include", "netlists"), ("select", "only"),
                                      ("ignore", "skip"), ("per-file-ignores", "paths")])
def test_a_key_of_0_1_0_is_an_error_that_names_its_new_name(tmp_path, old, new):
    # issue 23: the keys were renamed without aliases; the message must lead to the new one
    value = '{ "tb/**" = ["unused-port"] }' if old == "per-file-ignores" else '["unused-port"]'
    message = error_of(tmp_path, f"{old} = {value}\n")
    assert message.startswith(f"{tmp_path / 'lintamp.toml'}: {old}: is now called '{new}'; expected ")
    message = error_of(tmp_path, f"[tool.lintamp]\n{old} = {value}\n", name="pyproject.toml")
    assert f"tool.lintamp.{old}: is now called '{new}'" in message


def test_paths_entry_skips_rules_for_its_files_only(tmp_path):
    config = load(tmp_path, '[paths]\n"tb/**" = { skip = ["unused-port"] }\n"*.cir" = {}\n')
    assert config.skipped_in_file("unused-port", "references", "tb/a/b.sp")
    assert not config.skipped_in_file("unused-port", "references", "blocks/b.sp")
    assert not config.skipped_in_file("dangling-net", "connectivity", "tb/a/b.sp")
    assert not config.skipped_in_file("unused-port", "references", "x.cir")  # an empty entry skips nothing
