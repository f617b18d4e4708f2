"""Containment: what a netlist from a pull request can make lintamp read, write or reach.

Includes stay inside the project root and the include paths (absolute paths, '..'
escapes and symlinks out are findings, never reads); devices, pipes and folders are
refused without blocking; there is no network; the checked files are never written;
a killed run leaves the old baseline and cache usable; reports are byte-identical
whatever the order of the paths.  Common practice for tools run as CI gates on
untrusted input, unless a comment names another source.
"""

from __future__ import annotations

import hashlib
import json
import os
import signal
import socket
import subprocess
import sys
import textwrap
from pathlib import Path

import pytest

from lintamp.cache import CACHE_DIR, Cache
from lintamp.cli import main
from lintamp.config import Config
from lintamp.netlist.parser import parse_file
from lintamp.netlist.reader import ReadOptions

REPO = Path(__file__).resolve().parent.parent
SAMPLES = REPO / "samples"


@pytest.fixture
def project(tmp_path):
    """A project folder with a secret next to it (outside the root)."""
    root = tmp_path / "proj"
    root.mkdir()
    outside = tmp_path / "outside"
    outside.mkdir()
    (outside / "secret.inc").write_text("rsecret leaked 0 1\n")
    return root, outside


def read_deck(root: Path, text: str):
    (root / "deck.sp").write_text(text)
    return parse_file(root / "deck.sp", ReadOptions(root=root))


def element_names(netlist) -> set[str]:
    return {e.name.lower() for cell in netlist.all_cells() for e in cell.elements}


def test_absolute_path_include_outside_the_root_is_a_finding_not_a_read(project):
    root, outside = project
    netlist = read_deck(root, f"* t\n.include {outside / 'secret.inc'}\n.lib {outside / 'secret.inc'} tt\n")
    assert [d.rule for d in netlist.diagnostics] == ["bad-include", "bad-include"]
    assert "rsecret" not in element_names(netlist)


def test_dot_dot_escape_is_a_finding_even_when_the_target_is_absent(project):
    root, _ = project
    netlist = read_deck(root, "* t\n.include ../outside/secret.inc\n.include ../../nowhere.inc\n")
    assert [d.rule for d in netlist.diagnostics] == ["bad-include", "bad-include"]
    assert "rsecret" not in element_names(netlist)


@pytest.mark.skipif(not hasattr(os, "symlink"), reason="needs symbolic links")
def test_file_and_folder_symlinks_out_of_the_root_are_not_followed(project):
    root, outside = project
    (root / "link.inc").symlink_to(outside / "secret.inc")
    (root / "linked_dir").symlink_to(outside, target_is_directory=True)
    netlist = read_deck(root, "* t\n.include link.inc\n.include linked_dir/secret.inc\n")
    assert [d.rule for d in netlist.diagnostics] == ["bad-include", "bad-include"]
    assert "rsecret" not in element_names(netlist)


def test_symlink_inside_the_root_is_fine(project):
    root, _ = project
    (root / "models").mkdir()
    (root / "models" / "real.inc").write_text("rinside a 0 1\n")
    (root / "alias.inc").symlink_to(root / "models" / "real.inc")
    netlist = read_deck(root, "* t\n.include alias.inc\n")
    assert netlist.diagnostics == [] and "rinside" in element_names(netlist)


_NO_HANG = textwrap.dedent("""
    import sys
    sys.path.insert(0, sys.argv[1])
    from lintamp.cli import main
    sys.exit(main(["check", "--no-config", "--no-cache", "--format", "json", *sys.argv[2:]]))
""")


def run_cli_child(*args: str, cwd: Path) -> subprocess.CompletedProcess:
    # in a child with a timeout: a read that blocks must fail the test, not hang the suite
    return subprocess.run([sys.executable, "-c", _NO_HANG, str(REPO), *args], cwd=cwd,
                          capture_output=True, text=True, timeout=60)


@pytest.mark.skipif(not hasattr(os, "mkfifo"), reason="needs FIFOs")
def test_include_of_dev_zero_a_fifo_or_a_folder_does_not_block(project):
    root, _ = project
    os.mkfifo(root / "pipe.inc")
    (root / "folder.inc").mkdir()
    (root / "deck.sp").write_text("* t\n.include /dev/zero\n.include pipe.inc\n.include folder.inc\nr1 a 0 1\n")
    done = run_cli_child("deck.sp", cwd=root)
    assert done.returncode == 1, done.stderr
    found = [(f["rule"], f["line"], f["message"]) for f in json.loads(done.stdout)["findings"]]
    assert [(rule, line) for rule, line, _ in found] == [("bad-include", 2), ("bad-include", 3),
                                                        ("bad-include", 4)]
    assert "outside the project root" in found[0][2]
    assert "folder, device or pipe" in found[1][2] and "folder, device or pipe" in found[2][2]


@pytest.mark.skipif(not hasattr(os, "mkfifo"), reason="needs FIFOs")
def test_a_fifo_or_device_named_on_the_command_line_does_not_block(project):
    root, _ = project
    os.mkfifo(root / "pipe.sp")
    done = run_cli_child("pipe.sp", "/dev/zero", cwd=root)
    assert done.returncode == 1, done.stderr
    messages = [f["message"] for f in json.loads(done.stdout)["findings"]]
    assert any("it is a pipe" in m for m in messages) and any("it is a device" in m for m in messages)


def test_no_network_is_touched(monkeypatch, capsys):
    def refuse(*args, **kwargs):
        raise AssertionError("lintamp opened a network connection")

    monkeypatch.setattr(socket, "socket", refuse)
    monkeypatch.setattr(socket, "create_connection", refuse)
    monkeypatch.setattr(socket, "getaddrinfo", refuse)
    assert main(["check", "--no-config", "--no-cache", "--format", "sarif", str(SAMPLES)]) in (0, 1)
    assert main(["impedance", str(SAMPLES / "bias_block.sp"), "nb"]) in (0, 2)
    capsys.readouterr()


def test_a_long_garbage_line_is_quoted_by_excerpt_only(tmp_path):
    garbage = "".join(chr(0x21 + (i * 7919) % 90) for i in range(10_000))
    for text in (f"* t\n{garbage}\n", f"* t\nr1 a b {garbage}\n", f"* t\n.include {garbage}\n",
                 f"* t\nx{garbage} a b {garbage}\n", f"* t\n.param {garbage}\n"):
        (tmp_path / "g.sp").write_text(text)
        out = tmp_path / "g.json"
        main(["check", "--no-config", "--no-cache", "--format", "json", "-o", str(out), str(tmp_path / "g.sp")])
        findings = json.loads(out.read_text())["findings"]
        assert findings, text[:40]
        assert all(len(f["message"]) < 300 for f in findings), [len(f["message"]) for f in findings]


# ------------------------------------------------------------------- nothing lost
def snapshot(folder: Path) -> dict:
    """Bytes, mtime and mode of every file, and the listing and mtime of every folder."""
    state = {}
    for path in sorted(folder.rglob("*")) + [folder]:
        st = path.lstat()
        digest = hashlib.sha256(path.read_bytes()).hexdigest() if path.is_file() else sorted(
            p.name for p in path.iterdir()) if path.is_dir() else None
        state[str(path)] = (digest, st.st_mtime_ns, st.st_mode)
    return state


def test_checked_files_and_their_folders_are_never_written(tmp_path, monkeypatch):
    checked = tmp_path / "checked"
    checked.mkdir()
    for sample in SAMPLES.iterdir():
        (checked / sample.name).write_bytes(sample.read_bytes())
    elsewhere = tmp_path / "out"
    elsewhere.mkdir()
    monkeypatch.chdir(elsewhere)  # no config file: the cache goes under the current folder
    before = snapshot(checked)
    for fmt in ("text", "json", "sarif", "github", "junit"):
        main(["check", "--format", fmt, "-o", str(elsewhere / f"r.{fmt}"),
              "--write-baseline", str(elsewhere / "baseline.json"), str(checked)])
    main(["check", "--baseline", str(elsewhere / "baseline.json"), "-o", str(elsewhere / "r2"),
          str(checked)])
    assert snapshot(checked) == before


def test_the_cache_writes_only_inside_its_own_folder(tmp_path):
    files = [tmp_path / "deck.sp", tmp_path / "models.inc"]
    files[0].write_text("* t\n.include models.inc\nr1 a 0 1k\n")
    files[1].write_text(".model nch nmos\n")
    before = {str(p): (p.read_bytes(), p.stat().st_mtime_ns) for p in files}
    cache = Cache(tmp_path, "k")
    assert cache.put(files, []) and cache.get(files) == []
    assert {str(p): (p.read_bytes(), p.stat().st_mtime_ns) for p in files} == before
    assert sorted(p.name for p in tmp_path.iterdir()) == [CACHE_DIR, "deck.sp", "models.inc"]


def test_a_killed_cache_writer_leaves_the_old_entry_usable(tmp_path, rich_finding):
    deck = tmp_path / "deck.sp"
    deck.write_text("* t\nr1 a 0 1k\n")
    cache = Cache(tmp_path, "k")
    assert cache.put([deck], [rich_finding])
    script = textwrap.dedent(f"""
        import os, signal, sys
        sys.path.insert(0, {str(REPO)!r})
        from pathlib import Path
        from lintamp import baseline
        from lintamp.cache import Cache
        # killed after writing the new bytes, before the rename (cache entries are not
        # flushed to disk one by one, so the rename is the step to interrupt)
        baseline.os.replace = lambda src, dst: os.kill(os.getpid(), signal.SIGKILL)
        Cache(Path({str(tmp_path)!r}), "k").put([Path({str(deck)!r})], [])
    """)
    done = subprocess.run([sys.executable, "-c", script], capture_output=True, timeout=60)
    assert done.returncode == -signal.SIGKILL
    entry = cache.get_entry([deck])
    assert entry is not None and entry.findings[0].to_json() == rich_finding.to_json()


def test_a_corrupt_cache_entry_is_discarded_and_rechecked(tmp_path, rich_finding):
    deck = tmp_path / "deck.sp"
    deck.write_text("* t\nr1 a 0 1k\n")
    cache = Cache(tmp_path, "k")
    cache.put([deck], [rich_finding])
    entry = next((tmp_path / CACHE_DIR).glob("*/*.json"))
    good = json.loads(entry.read_text())
    good["findings"][0]["line"] = "not a number"  # well-formed JSON, wrong shape
    entry.write_text(json.dumps(good))
    assert cache.get([deck]) is None and not entry.exists()


# ------------------------------------------------------------------ determinism
def test_reports_are_byte_identical_whatever_the_path_order(tmp_path):
    files = sorted(str(p) for p in SAMPLES.glob("*.sp"))
    outputs = []
    for order in (files, files[::-1], [str(SAMPLES)]):
        for fmt in ("text", "json", "sarif", "junit"):
            out = tmp_path / f"{len(outputs)}.{fmt}"
            main(["check", "--no-config", "--no-cache", "--format", fmt, "-o", str(out), *order])
            outputs.append((fmt, out.read_bytes()))
    for fmt in ("text", "json", "sarif", "junit"):
        assert len({data for f, data in outputs if f == fmt}) == 1, fmt


def test_reports_are_byte_identical_whatever_the_jobs(tmp_path):
    # --jobs is accepted by the CLI; the parallel run is being wired on main.  This
    # guards the contract once it lands (today both runs are serial).
    outs = []
    for jobs in ("1", "2"):
        out = tmp_path / f"j{jobs}.json"
        main(["check", "--no-config", "--no-cache", "--format", "json", "--jobs", jobs, "-o", str(out), str(SAMPLES)])
        outs.append(out.read_bytes())
    assert outs[0] == outs[1]
