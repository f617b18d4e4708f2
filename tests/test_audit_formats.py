"""``lintamp audit`` from the command line: formats, -o, determinism, optional plots.

Scenarios are the repository's samples; the numbers themselves are checked against
ngspice-39 in test_audit.py.
"""

from __future__ import annotations

import json
import shutil
import subprocess
import sys
from pathlib import Path

import pytest

REPO = Path(__file__).resolve().parent.parent
SAMPLE = REPO / "samples" / "sensor_frontend.sp"
HAVE_MPL = shutil.which("python3") is not None and subprocess.run(
    [sys.executable, "-c", "import matplotlib"], capture_output=True).returncode == 0


def lintamp(*args, cwd=REPO, extra_code: str = ""):
    code = extra_code + "import sys\nfrom lintamp.cli import main\nrc = main(sys.argv[1:])\n" \
        "sys.stdout.flush()\nprint('MPL_LOADED' if 'matplotlib' in sys.modules else 'MPL_ABSENT', " \
        "file=sys.stderr)\nsys.exit(rc)\n"
    return subprocess.run([sys.executable, "-c", code, *map(str, args)], capture_output=True, text=True,
                          cwd=cwd, env={"PYTHONPATH": str(REPO), "PATH": "/usr/bin:/bin"}, timeout=300)


def test_json_has_the_interface_shape():
    proc = lintamp("audit", SAMPLE, "--format", "json")
    assert proc.returncode == 0, proc.stderr
    data = json.loads(proc.stdout)
    # INTERFACE.md, "lintamp audit --format json (at least)"
    assert set(data) >= {"cell", "ports", "stages", "paths", "findings"}
    port = data["ports"][0]
    assert set(port) >= {"net", "kind", "z_ohm", "stage"} and set(port["z_ohm"]) >= {"mag", "phase_deg"}
    assert set(data["stages"][0]) >= {"device", "role", "region", "gm_s", "ro_ohm"}
    path = data["paths"][0]
    assert set(path) >= {"from", "to", "kind", "gain", "f3db_hz", "interfaces"}
    assert set(path["gain"]) >= {"mag", "unit", "freq_hz"} and path["gain"]["unit"] in ("V/V", "A/A", "ohm", "S")
    assert set(path["interfaces"][0]) >= {"net", "z_out_ohm", "z_in_ohm"}
    assert "MPL_ABSENT" in proc.stderr  # json never loads matplotlib


def test_text_sheet_and_other_commands_do_not_load_matplotlib():
    proc = lintamp("audit", SAMPLE)
    assert proc.returncode == 0, proc.stderr
    for word in ("PORTS", "STAGES", "SIGNAL PATHS", "FINDINGS", "common gate (m1)", "transimpedance"):
        assert word in proc.stdout
    assert "MPL_ABSENT" in proc.stderr
    other = lintamp("impedance", SAMPLE, "pd")
    assert other.returncode == 0 and "MPL_ABSENT" in other.stderr


def test_bad_options_exit_2(tmp_path):
    assert lintamp("audit", tmp_path / "none.sp").returncode == 2
    proc = lintamp("audit", SAMPLE, "--top", "nosuch")
    assert proc.returncode == 2 and "no subcircuit" in proc.stderr
    proc = lintamp("audit", SAMPLE, "--bandwidth", "fast")
    assert proc.returncode == 2 and "--bandwidth" in proc.stderr


def test_bandwidth_option_wins_over_the_pragma():
    data = json.loads(lintamp("audit", SAMPLE, "--format", "json", "--bandwidth", "5meg").stdout)
    assert data["band"] == {"freq_hz": 5e6, "source": "--bandwidth"}


def test_output_file_written_and_nothing_beside_the_netlist(tmp_path):
    work = tmp_path / "block"
    work.mkdir()
    for name in ("sensor_frontend.sp", "models.lib"):
        shutil.copy(REPO / "samples" / name, work / name)
    before = sorted(p.name for p in work.iterdir())
    out = tmp_path / "sheets" / "sheet.md"
    out.parent.mkdir()
    proc = lintamp("audit", work / "sensor_frontend.sp", "--format", "markdown", "-o", out, cwd=tmp_path)
    assert proc.returncode == 0, proc.stderr
    assert sorted(p.name for p in work.iterdir()) == before
    text = out.read_text()
    assert "## Review sheet" in text and "| net | kind |" in text
    leftovers = [p.name for p in out.parent.iterdir() if p.name.endswith(".tmp")]
    assert leftovers == []
    if HAVE_MPL:
        pngs = sorted(p.name for p in out.parent.glob("sheet-*.png"))
        assert pngs == ["sheet-path-pd-out.png", "sheet-port-out.png", "sheet-port-pd.png"]
        for name in pngs:  # linked relatively, beside the sheet
            assert f"]({name})" in text


FORMATS = ("text", "json", "markdown", "html")


@pytest.fixture(scope="module")
def every_sheet(tmp_path_factory) -> dict[tuple[str, str], Path]:
    """Every sample's sheet in every format, rendered once for the module, all in one
    process (each sample once per format: the determinism test compares against these)."""
    folder = tmp_path_factory.mktemp("sheets")
    samples = sorted((REPO / "samples").glob("*.sp"))
    script = ("import sys\nfrom lintamp.cli import main\nfor fmt, src, dst in zip(*[iter(sys.argv[1:])] * 3):\n"
              "    rc = main(['audit', src, '--format', fmt, '-o', dst])\n"
              "    print(fmt, src, rc, flush=True)\n")
    args = []
    sheets = {}
    for sample in samples:
        for fmt in FORMATS:
            target = folder / f"{sample.stem}.{fmt}"
            args += [fmt, str(sample), str(target)]
            sheets[(sample.name, fmt)] = target
    proc = subprocess.run([sys.executable, "-c", script, *args], capture_output=True, text=True,
                          cwd=REPO, env={"PYTHONPATH": str(REPO), "PATH": "/usr/bin:/bin"}, timeout=600)
    codes = [line.rsplit(" ", 1)[1] for line in proc.stdout.splitlines()]
    assert codes == ["0"] * len(sheets), proc.stdout + proc.stderr
    return sheets


@pytest.mark.skipif(not HAVE_MPL, reason="matplotlib not installed (pip install '.[plots]')")
def test_same_input_same_bytes(tmp_path, every_sheet):
    # another process renders the sheet again: the same bytes
    target = tmp_path / "again.html"
    assert lintamp("audit", SAMPLE, "--format", "html", "-o", target).returncode == 0
    outs = [every_sheet[(SAMPLE.name, "html")].read_bytes(), target.read_bytes()]
    assert outs[0] == outs[1]
    assert outs[0].count(b"data:image/png;base64,") == 3
    assert b"<script" not in outs[0] and b"http://" not in outs[0] and b"https://" not in outs[0]


BLOCK_MPL = """import importlib.abc, sys
class _NoMatplotlib(importlib.abc.MetaPathFinder):
    def find_spec(self, name, path=None, target=None):
        if name == 'matplotlib' or name.startswith('matplotlib.'):
            raise ImportError('blocked for the test')
        return None
sys.meta_path.insert(0, _NoMatplotlib())
"""


def test_without_matplotlib_the_sheet_says_plots_were_skipped(tmp_path):
    target = tmp_path / "sheet.html"
    proc = lintamp("audit", SAMPLE, "--format", "html", "-o", target, extra_code=BLOCK_MPL)
    assert proc.returncode == 0, proc.stderr
    page = target.read_text()
    assert "Plots skipped: matplotlib is not installed" in page
    assert "<table" in page and "data:image/png" not in page
    md = tmp_path / "sheet.md"
    assert lintamp("audit", SAMPLE, "--format", "markdown", "-o", md, extra_code=BLOCK_MPL).returncode == 0
    assert "Plots skipped" in md.read_text() and not list(tmp_path.glob("sheet-*.png"))


def test_every_sample_renders_in_every_format(every_sheet):
    assert len(every_sheet) == len(list((REPO / "samples").glob("*.sp"))) * len(FORMATS)
    for (sample, fmt), target in every_sheet.items():
        assert target.stat().st_size > 0, (sample, fmt)


ODD_DECKS = {  # scenarios of our own: each must give a sheet or a one-line error, never a traceback
    "empty.sp": "empty\n",
    "garbage.sp": "garbage\nfoo bar baz\n+ +\n.subckt\n",
    "behavioural.sp": "b src\nb1 out 0 v=v(in)*2\nvin in 0 ac 1\nr1 out 0 1k\n.end\n",
    "floating_gate.sp": "float\nvin in 0 ac 1\nc1 in mid 1p\nm1 out mid 0 0 nm\n.model nm nmos level=1\n"
                        "r1 vdd out 1k\nvdd vdd 0 3\n.end\n",
    "source_loop.sp": "loop\nvin in 0 ac 1\nv2 in 0 1\nr1 in out 1k\n.end\n",
    "library.sp": "lib\n.subckt amp in out vdd\nr1 in out 1k\n.ends\n",
    "vcvs.sp": "vcvs\niin in 0 ac 1\nr1 in 0 1k\nc1 in 0 1n\ne1 out 0 in 0 -3\n.end\n",
}


@pytest.mark.parametrize("name", sorted(ODD_DECKS))
def test_odd_netlists_never_crash(tmp_path, name):
    deck = tmp_path / name
    deck.write_text(ODD_DECKS[name])
    proc = lintamp("audit", deck, "--format", "json")
    assert "Traceback" not in proc.stderr, proc.stderr
    assert proc.returncode in (0, 2)
    if proc.returncode == 0:
        json.loads(proc.stdout)
    else:
        assert proc.stderr.startswith("lintamp: ")


def test_vcvs_transimpedance_and_rc_corner(tmp_path):
    deck = tmp_path / "vcvs.sp"
    deck.write_text(ODD_DECKS["vcvs.sp"])
    data = json.loads(lintamp("audit", deck, "--format", "json").stdout)
    (path,) = data["paths"]
    # by hand (common practice): v(in) = i R1 -> v(out) = -3 i R1 = -3 kohm; input pole 1/(2 pi R1 C1)
    assert path["gain"]["mag"] == pytest.approx(3e3, rel=1e-6) and path["gain"]["sign"] == -1
    assert path["f3db_hz"] == pytest.approx(1 / (2 * 3.141592653589793 * 1e3 * 1e-9), rel=1e-3)
    assert data["operating_point"] in ("level1", "linear")  # a linear deck needs no bias point
