"""The review sheet's numbers against ngspice-39 and its forms against the textbook.

Each sample that forms a circuit is audited through the library (the same dict the
JSON format prints) and the same deck text goes to ngspice-39: operating point
(``op`` with ``@dev[param]``) and AC analysis, agreeing within 2 %.  Textbook
sources are named beside each check: Razavi, *Design of Analog CMOS Integrated
Circuits*, ch. 3 (common gate, source follower); Sedra & Smith, *Microelectronic
Circuits*, ch. 7 (common emitter, emitter follower).
"""

from __future__ import annotations

import math
import re
from pathlib import Path

import pytest

import ngspice_harness as ng
from lintamp.audit.sheet import AuditError, build_sheet
from lintamp.config import Config

REPO = Path(__file__).resolve().parent.parent
SAMPLES = REPO / "samples"
REL = 0.02  # the brief: within 2 % of ngspice-39


def _deck(name: str) -> str:
    """A sample with its ``.include models.lib`` written out, for ngspice in a tmp folder."""
    text = (SAMPLES / name).read_text()
    models = (SAMPLES / "models.lib").read_text()
    return re.sub(r"(?im)^\.include\s+models\.lib\s*$", models, text)


def _sheet(path: Path, **kw) -> dict:
    return build_sheet(path, config=Config(root=path.parent), plots=False, **kw).data


def _by(rows, key, value):
    return next(r for r in rows if r[key] == value)


# ---------------------------------------------------------------- sensor front end
@pytest.fixture(scope="module")
def sensor():
    return _sheet(SAMPLES / "sensor_frontend.sp")


@pytest.fixture(scope="module")
def sensor_ng():
    """ngspice-39 op values of m1/m2 for the sensor front end."""
    deck = _deck("sensor_frontend.sp")
    params = [(d, p) for d in ("m1", "m2") for p in ("gm", "gmbs", "gds", "vds", "vdsat", "id")]
    return ng.operating_point(deck, ("pd", "d1", "out"), params)


def _no_ac(deck: str) -> str:
    """The deck with the photodiode's AC stimulus off (the harness probes with its own)."""
    return re.sub(r"(?im)^(ipd\s+pd\s+0\s+dc\s+0\s+)ac\s+1", r"\1ac 0", deck)


def test_sensor_ports_kinds_and_band(sensor):
    pd, out = _by(sensor["ports"], "net", "pd"), _by(sensor["ports"], "net", "out")
    assert pd["kind"] == "current-input" and pd["decided_by"].startswith("pragma")
    assert out["kind"] == "voltage-output"
    assert sensor["band"] == {"freq_hz": pytest.approx(20e6), "source": "pragma (samples/sensor_frontend.sp:4)"} \
        or sensor["band"]["source"].startswith("pragma")
    assert pd["stage"] == "common gate (m1)"
    assert out["stage"].endswith("(m2)") and "follower" in out["stage"]


def test_sensor_stages_match_ngspice_op(sensor, sensor_ng):
    for dev in ("m1", "m2"):
        row = _by(sensor["stages"], "device", dev)
        assert row["region"] == "saturation"
        # ngspice-39 operating point, @m[gm], @m[gds], @m[vds] - @m[vdsat]
        assert row["gm_s"] == pytest.approx(sensor_ng[f"@{dev}[gm]"], rel=REL)
        assert row["ro_ohm"] == pytest.approx(1 / sensor_ng[f"@{dev}[gds]"], rel=REL)
        margin = sensor_ng[f"@{dev}[vds]"] - sensor_ng[f"@{dev}[vdsat]"]
        assert row["margin_v"] == pytest.approx(margin, rel=REL)
    assert _by(sensor["stages"], "device", "m1")["role"] == "common gate"
    assert "follower" in _by(sensor["stages"], "device", "m2")["role"]


def test_sensor_input_impedance(sensor, sensor_ng):
    pd = _by(sensor["ports"], "net", "pd")
    (z_ng,) = ng.impedance(_no_ac(_deck("sensor_frontend.sp")), "pd", [1.0])  # ngspice-39 AC, 1 Hz
    assert pd["z_ohm"]["mag"] == pytest.approx(abs(z_ng), rel=REL)
    (zb_ng,) = ng.impedance(_no_ac(_deck("sensor_frontend.sp")), "pd", [20e6])  # ngspice-39 AC at the band
    assert pd["z_band_ohm"]["mag"] == pytest.approx(abs(zb_ng), rel=REL)
    # Razavi ch. 3, common gate: R_in = (R_D + r_o)/(1 + (g_m+g_mb) r_o) ~ 1/(g_m+g_mb) for R_D << r_o
    gm, gmb, ro = sensor_ng["@m1[gm]"], sensor_ng["@m1[gmbs]"], 1 / sensor_ng["@m1[gds]"]
    assert pd["formula"] == "(R_D + r_o)/(1 + (g_m+g_mb) r_o)"
    assert pd["formula_ohm"] == pytest.approx((10e3 + ro) / (1 + (gm + gmb) * ro), rel=REL)
    assert pd["approx"] == "1/(g_m+g_mb)"
    assert pd["approx_ohm"] == pytest.approx(1 / (gm + gmb), rel=REL)
    assert pd["z_ohm"]["mag"] == pytest.approx(1 / (gm + gmb), rel=0.10)  # the approximation, 10 %


def test_sensor_output_impedance(sensor, sensor_ng):
    out = _by(sensor["ports"], "net", "out")
    (z_ng,) = ng.impedance(_no_ac(_deck("sensor_frontend.sp")), "out", [1.0])  # ngspice-39 AC
    assert out["z_ohm"]["mag"] == pytest.approx(abs(z_ng), rel=REL)
    # Razavi ch. 3, source follower: R_out = 1/(g_m+g_mb) || r_o, ideal current-source bias
    gm, gmb, ro = sensor_ng["@m2[gm]"], sensor_ng["@m2[gmbs]"], 1 / sensor_ng["@m2[gds]"]
    assert out["formula_ohm"] == pytest.approx(1 / (gm + gmb + 1 / ro), rel=REL)
    assert out["approx_ohm"] == pytest.approx(1 / (gm + gmb), rel=REL)


def test_sensor_transimpedance_and_bandwidth(sensor, sensor_ng):
    path = _by(sensor["paths"], "from", "pd")
    assert (path["to"], path["kind"], path["gain"]["unit"]) == ("out", "transimpedance", "ohm")
    deck = _deck("sensor_frontend.sp")  # ipd carries AC 1 A: v(out) is the transimpedance
    ref = ng.run_deck(deck, ["ac lin 1 1 1", "let zt = vm(out)", "print zt"])["zt"]  # ngspice-39 AC
    assert path["gain"]["mag"] == pytest.approx(ref, rel=REL)
    # analog-knowledge 1 / Razavi ch. 3: CG fed by an ideal current gives Z_t = R_D at its drain;
    # the follower then passes A = g_m/(g_m+g_mb+g_ds) (Razavi ch. 3 source follower)
    gm, gmb, gds = sensor_ng["@m2[gm]"], sensor_ng["@m2[gmbs]"], sensor_ng["@m2[gds]"]
    assert path["formula_value"] == pytest.approx(10e3 * gm / (gm + gmb + gds), rel=REL)
    cg, sf = path["chain"]
    assert (cg["device"], cg["enters_at"], sf["device"], sf["enters_at"]) == ("m1", "source", "m2", "gate")
    assert cg["gain"]["mag"] == pytest.approx(10e3, rel=REL)  # ~ R_D
    # -3 dB: ngspice-39 AC at lintamp's corner reads 1/sqrt(2) of the DC value
    f3 = path["f3db_hz"]
    at = ng.run_deck(deck, [f"ac lin 1 {f3:.9g} {f3:.9g}", "let zf = vm(out)", "print zf"])["zf"]
    assert at / ref == pytest.approx(1 / math.sqrt(2), rel=REL)
    # single input pole: f = 1/(2 pi R_in C_pd) with C_pd = 1 pF (Razavi ch. 3 CG input; analog-knowledge 3)
    rin = _by(sensor["ports"], "net", "pd")["z_ohm"]["mag"]
    assert f3 == pytest.approx(1 / (2 * math.pi * rin * 1e-12), rel=REL)
    assert path["poles_hz"] and path["poles_hz"][0] == pytest.approx(f3, rel=REL)


def test_sensor_interfaces(sensor):
    path = sensor["paths"][0]
    at = {i["net"]: i for i in path["interfaces"]}
    assert list(at) == ["pd", "d1", "out"]
    # current into the CG source: wants Z_in << Z_out (common practice, analog-knowledge 3)
    assert at["pd"]["signal"] == "current" and at["pd"]["z_out_ohm"] is None
    assert at["pd"]["verdict"].startswith("suits")
    # the drain drives the follower's gate: R_D against an open gate at DC
    assert at["d1"]["signal"] == "voltage"
    assert at["d1"]["z_out_ohm"] == pytest.approx(10e3, rel=REL) and at["d1"]["z_in_ohm"] is None


# ---------------------------------------------------------------- bias block
def test_bias_block_stages_match_ngspice():
    data = _sheet(SAMPLES / "bias_block.sp")
    ref = ng.operating_point(_deck("bias_block.sp"), (), [
        (f"m.{inst}.{dev}", p) for inst, dev in (("xbias", "m0"), ("xsink", "m1"), ("xsink", "m2"))
        for p in ("gm", "gds", "vds", "vdsat")])  # ngspice-39 op
    for inst, dev in (("xbias", "m0"), ("xsink", "m1"), ("xsink", "m2")):
        row = _by(data["stages"], "device", f"{inst}/{dev}")
        key = f"@m.{inst}.{dev}"
        assert row["gm_s"] == pytest.approx(ref[f"{key}[gm]"], rel=REL)
        assert row["ro_ohm"] == pytest.approx(1 / ref[f"{key}[gds]"], rel=REL)
        assert row["margin_v"] == pytest.approx(ref[f"{key}[vds]"] - ref[f"{key}[vdsat]"], rel=REL)
    # Razavi ch. 5: the diode-connected device is the mirror's reference, the others its outputs
    assert _by(data["stages"], "device", "xbias/m0")["role"].startswith("current-mirror reference")
    assert _by(data["stages"], "device", "xsink/m2")["role"] == "current-mirror output"
    assert data["ports"] == [] and data["paths"] == []


def test_bias_block_cell_ports_with_testbench():
    data = _sheet(SAMPLES / "bias_block.sp", top="sink2")
    assert (data["cell"], data["instance"]) == ("sink2", "xsink")
    out1 = _by(data["ports"], "net", "out1")
    assert out1["kind"] == "voltage-output" and out1["decided_by"] == "name"
    (z_ng,) = ng.impedance(_deck("bias_block.sp"), "o1", [1.0])  # ngspice-39 AC at the testbench net
    assert out1["z_ohm"]["mag"] == pytest.approx(abs(z_ng), rel=REL)
    # Razavi ch. 3: a drain with its source at AC ground looks like r_o; here in parallel with rl1
    assert out1["formula"] == "r_o"


# ---------------------------------------------------------------- broken sample
def test_review_typos_has_findings_and_no_invented_numbers():
    data = _sheet(SAMPLES / "review_typos.sp")
    rules = {f["rule"] for f in data["findings"]}
    assert {"pin-mismatch", "undefined-param", "duplicate-name", "unknown-model"} <= rules
    assert data["operating_point"] == "assumed"
    assert all(p["z_ohm"]["mag"] is None for p in data["ports"])
    assert any("no numbers" in n for n in data["notes"])
    m5 = _by(data["stages"], "device", "m5")
    assert any(data["findings"][i]["fingerprint"] in m5["findings"] for i in range(len(data["findings"])))


def test_unknown_top_is_an_audit_error():
    with pytest.raises(AuditError, match="no subcircuit"):
        _sheet(SAMPLES / "bias_block.sp", top="nosuch")


# ---------------------------------------------------------------- BJT chain (scenario of our own)
BJT_DECK = """ce + ef chain
.model qn npn is=1e-16 bf=100 vaf=100
vcc vcc 0 5
vin in 0 dc 0.72 ac 1
rc vcc c1 2k
q1 c1 in 0 qn
q2 vcc c1 out qn
re out 0 2k
.ac dec 10 1 1g
.end
"""


def test_bjt_ce_follower_against_ngspice_and_sedra_smith(tmp_path):
    path = tmp_path / "ce_ef.sp"
    path.write_text(BJT_DECK)
    data = _sheet(path)
    ports = {p["net"]: p for p in data["ports"]}
    assert ports["in"]["kind"] == "voltage-input" and ports["in"]["decided_by"].startswith("testbench")
    ref = ng.operating_point(BJT_DECK, ("c1", "out"), [(q, p) for q in ("q1", "q2") for p in ("gm", "gpi", "go")])
    vce = {"q1": ref["c1"], "q2": 5.0 - ref["out"]}
    for q in ("q1", "q2"):  # ngspice-39 operating point
        row = _by(data["stages"], "device", q)
        assert row["gm_s"] == pytest.approx(ref[f"@{q}[gm]"], rel=REL)
        assert row["ro_ohm"] == pytest.approx(1 / ref[f"@{q}[go]"], rel=REL)
        assert row["vce_v"] == pytest.approx(vce[q], rel=REL)
    gain = data["paths"][0]
    assert gain["kind"] == "voltage gain" and gain["gain"]["unit"] == "V/V"
    av = ng.run_deck(BJT_DECK, ["ac lin 1 1 1", "let av = vm(out)", "print av"])["av"]  # ngspice-39 AC
    assert gain["gain"]["mag"] == pytest.approx(av, rel=REL)
    assert gain["gain"]["sign"] == -1
    # Sedra & Smith ch. 7: CE gain -g_m (R_C || r_o || R_in,EF), R_in,EF = r_pi + (beta+1)(R_E || r_o);
    # emitter follower (beta+1) R'/(r_pi + (beta+1) R'); the chain's product form agrees with the MNA value
    gm1, ro1 = ref["@q1[gm]"], 1 / ref["@q1[go]"]
    gm2, rpi2, ro2 = ref["@q2[gm]"], 1 / ref["@q2[gpi]"], 1 / ref["@q2[go]"]
    beta2 = gm2 * rpi2
    rp = 1 / (1 / 2e3 + 1 / ro2)
    rin_ef = rpi2 + (beta2 + 1) * rp
    expected = gm1 / (1 / 2e3 + 1 / ro1 + 1 / rin_ef) * (beta2 + 1) * rp / (rpi2 + (beta2 + 1) * rp)
    assert gain["formula_value"] == pytest.approx(expected, rel=REL)
    assert gain["gain"]["mag"] == pytest.approx(expected, rel=REL)
    # Sedra & Smith ch. 7: looking into the base of a CE with grounded emitter: r_pi
    assert ports["in"]["z_ohm"]["mag"] == pytest.approx(1 / ref["@q1[gpi]"], rel=REL)
    # emitter-follower output: (R_B + r_pi)/(beta+1) || r_o, in parallel with R_E; R_B = R_C || r_o1 here
    rb = 1 / (1 / 2e3 + 1 / ro1)
    zout = 1 / (1 / ((rb + rpi2) / (beta2 + 1)) + 1 / ro2 + 1 / 2e3)
    assert ports["out"]["z_ohm"]["mag"] == pytest.approx(zout, rel=REL)
    # an ideal voltage source drives the input: Z_out 0 against r_pi suits a voltage signal
    first = gain["interfaces"][0]
    assert (first["net"], first["z_out_ohm"], first["signal"]) == ("in", 0.0, "voltage")
    assert first["verdict"].startswith("suits")
