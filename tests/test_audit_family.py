"""The review sheet on a family of amplifier decks of our own, against ngspice-39.

Each deck in ``tests/fixtures/audit_family`` (CS, degenerated CS, CG, followers,
cascodes, mirrors, a mirror-loaded pair, shunt-feedback TIAs, BJT CE/CB/CC, a
Darlington, a two-stage Miller op-amp open loop, as a unity-gain buffer and in
feedback, an RC ladder, a folded cascode, a bandgap core; each with passive elements
between the source and the first device) must

* render in every format with exit 0 or 1 and never a traceback;
* print every path gain, stage gain and port impedance within 1 % of ngspice-39's AC
  analysis of the same deck text (``tests/family_reference.py``);
* print every textbook form within 2 % of that exact number, or mark it as an
  approximation with its error (the error it states is the one ngspice-39 gives);
* solve its operating point within 1 mV of ngspice-39's ``.op``.
"""

from __future__ import annotations

import io
import json
import math
from contextlib import redirect_stderr, redirect_stdout

import pytest

import family_reference as ref
import ngspice_harness as ng

DECKS = ref.family()
GAIN_Z_REL = 0.01  # the issue: path gains and port impedances within 1 % of ngspice-39
FORM_REL = 0.02  # a form printed with "=" is within 2 % of the exact number
OP_MV = 1.0  # the operating point within 1 mV of ngspice-39 .op
WITH_PICTURES = {"cs_source_resistance", "tia_shunt_feedback", "bjt_cb_current_input", "miller_open_loop",
                 "rc_ladder"}  # the rest render Markdown and HTML as without matplotlib


def test_the_family_is_large_enough():
    assert len(DECKS) >= 30


@pytest.fixture(scope="module")
def compared():
    ng.require_ngspice()
    return {}


def _result(compared, path):
    if path.stem not in compared:
        compared[path.stem] = ref.compare_deck(path)
    return compared[path.stem]


@pytest.mark.parametrize("path", DECKS, ids=[p.stem for p in DECKS])
def test_numbers_match_ngspice(compared, path):
    res, data = _result(compared, path)
    # ngspice-39 .op: lintamp's own DC solve (with its homotopies) lands on the same point
    if res.ngspice_solves:
        assert res.op_max_dev_mv <= OP_MV, f"{path.stem}: OP {res.op_max_dev_mv:.3g} mV off ngspice-39"
    # ngspice-39 AC analysis: port impedances, path gains, stage gains
    assert res.checks, "the sheet shows no number to compare"
    for what, mine, theirs, err in res.checks:
        assert err <= GAIN_Z_REL, f"{path.stem}: {what}: lintamp {mine:.6g}, ngspice-39 {theirs:.6g}"
    for what, mine, theirs in res.signs:
        assert mine == theirs, f"{path.stem}: {what}: sign {mine} against ngspice-39's {theirs}"
    for what, z_ng in res.open_checks:  # an impedance the sheet calls open is open for ngspice too
        assert z_ng > ref.OPEN_OHM, f"{path.stem}: {what} is {z_ng:.3g} ohm for ngspice-39"


@pytest.mark.parametrize("path", DECKS, ids=[p.stem for p in DECKS])
def test_forms_are_exact_or_marked(compared, path):
    res, data = _result(compared, path)
    for what, value, exact, err, marked_exact in res.forms:
        if marked_exact:  # printed with "=": within 2 % of ngspice-39's number
            assert err <= FORM_REL + 1e-9, f"{path.stem}: {what} = {value:.6g}, ngspice-39 {abs(exact):.6g}"
        else:  # printed as an approximation: it is one, by about the error it states
            assert err > FORM_REL * 0.9, f"{path.stem}: {what} marked approximate but {100 * err:.3g} % off"
    text = _render(path, "text")[1]
    for p in data["paths"]:
        for h in p.get("chain", []):
            if h.get("formula_value") is not None and not h.get("formula_exact"):
                assert f"{h['formula_error_pct']:.3g} % off" in text
                assert h["formula_error_pct"] / 100 == pytest.approx(
                    next(f[3] for f in res.forms if f[0] == f"{h['device']}: {h['formula']}"), rel=0.02, abs=1e-3)


def _render(path, fmt, out=None):
    from lintamp.cli import main
    stdout, stderr = io.StringIO(), io.StringIO()
    argv = ["audit", str(path), "--format", fmt, "--no-config"] + (["-o", str(out)] if out else [])
    with redirect_stdout(stdout), redirect_stderr(stderr):
        code = main(argv)
    return code, stdout.getvalue(), stderr.getvalue()


@pytest.mark.parametrize("path", DECKS, ids=[p.stem for p in DECKS])
def test_every_format_renders(path, tmp_path, monkeypatch):
    # one sheet per deck (with and without plots) for the four formats: the command, its
    # options, renderers and exit code run each time, the sheet is not recomputed
    import copy

    import lintamp.audit.sheet as sheet
    real, built = sheet.build_sheet, {}

    def once(netlist_path, **kw):
        key = kw.get("plots")
        if key not in built:
            built[key] = real(netlist_path, **kw)
        return copy.deepcopy(built[key])

    monkeypatch.setattr(sheet, "build_sheet", once)
    if path.stem not in WITH_PICTURES:  # pictures cost seconds each: the sheet without them
        import lintamp.audit.plots as plots
        monkeypatch.setattr(plots, "_pyplot", lambda: None)
    for fmt in ("text", "json", "markdown", "html"):
        out = tmp_path / f"sheet.{fmt}" if fmt in ("markdown", "html") else None
        code, stdout, stderr = _render(path, fmt, out)
        assert code in (0, 1), f"{path.stem} --format {fmt}: exit {code}: {stderr}"
        assert "Traceback" not in stderr and "internal error" not in stderr
        if fmt == "json":  # strict JSON: no NaN, no Infinity (null with a reason instead)
            data = json.loads(stdout, parse_constant=lambda c: pytest.fail(f"{c} in the JSON"))
            for item in data.get("non_finite", []):
                assert item["why"]
        if out is not None:
            assert out.read_text(encoding="utf-8").strip()


def test_infinite_and_nan_values_are_null_with_a_reason(monkeypatch):
    # an open Z_in (a CG input fed by an ideal current source) and a g_m the model gave no
    # number for: strict JSON has neither, so each is null with its reason (RFC 8259: no NaN/Infinity)
    import lintamp.audit.sheet as sheet
    real = sheet.build_sheet

    def with_odd_values(*a, **k):
        built = real(*a, **k)
        built.data["ports"][0]["z_ohm"]["mag"] = math.inf
        built.data["stages"][0]["gm_s"] = math.nan
        return built

    monkeypatch.setattr(sheet, "build_sheet", with_odd_values)
    path = ref.FAMILY_DIR / "cg_ideal_current_source.sp"
    code, stdout, stderr = _render(path, "json")
    assert code == 0, stderr
    data = json.loads(stdout)
    assert data["ports"][0]["z_ohm"]["mag"] is None and data["ports"][0]["z_ohm"]["mag_why"].startswith("infinite")
    assert data["stages"][0]["gm_s"] is None and data["stages"][0]["gm_s_why"].startswith("not a number")
    assert {n["where"] for n in data["non_finite"]} >= {"ports[0].z_ohm.mag", "stages[0].gm_s"}
    for fmt in ("text", "markdown"):
        code, stdout, stderr = _render(path, fmt)
        assert code == 0 and "Traceback" not in stderr
    assert "g_m —" in _render(path, "text")[1]


def test_nan_never_reaches_the_sheet():
    from lintamp.audit.solves import finite_for_json
    notes = []
    clean = finite_for_json({"gm_s": math.nan, "rows": [{"z_ohm": math.inf}]}, notes=notes)
    assert clean == {"gm_s": None, "gm_s_why": "not a number (the models gave no value here)",
                     "rows": [{"z_ohm": None, "z_ohm_why": "infinite (an open, or a value without bound)"}]}
    assert [n["where"] for n in notes] == ["gm_s", "rows[0].z_ohm"]
    path = ref.FAMILY_DIR / "pmos_body_forward.sp"
    code, stdout, stderr = _render(path, "text")
    assert code in (0, 1) and "Traceback" not in stderr


def test_internal_error_is_exit_2_with_one_line(monkeypatch, tmp_path):
    # INTERFACE.md: exit 2 when the tool could not do its job; STYLE.md 11: never a traceback
    import lintamp.audit.sheet as sheet
    import lintamp.rulekit.impedance_report as report

    def boom(*a, **k):
        raise TypeError("unsupported operand type(s) for *=: 'NoneType' and 'float'")

    path = ref.FAMILY_DIR / "cs_source_resistance.sp"
    monkeypatch.setattr(sheet, "build_sheet", boom)
    code, stdout, stderr = _render(path, "text")
    assert code == 2
    lines = stderr.strip().splitlines()
    assert len(lines) == 1 and str(path) in lines[0] and "TypeError" in lines[0]
    monkeypatch.setattr(report, "impedance_report", boom)
    from lintamp.cli import main
    err = io.StringIO()
    with redirect_stdout(io.StringIO()), redirect_stderr(err):
        code = main(["impedance", str(path), "out"])
    assert code == 2 and len(err.getvalue().strip().splitlines()) == 1 and str(path) in err.getvalue()


def test_unevaluated_pdk_devices_print_a_dash_with_the_reason(tmp_path):
    # a PDK-wrapped transistor whose model library is absent: SPICE defaults would give
    # numbers that are not the designer's (DESIGN.md "Numbers, when they can be had")
    deck = tmp_path / "pdk.sp"
    deck.write_text("* CS with a PDK device whose library is absent\nvdd vdd 0 1.8\n"
                    "vin g 0 dc 0.8 ac 1\nxm1 out g 0 0 sky130_fd_pr__nfet_01v8 w=1 l=0.15\n"
                    "rd vdd out 10k\n.end\n")
    code, text, stderr = _render(deck, "text")
    assert code in (0, 1), stderr
    assert "level-1" not in text.splitlines()[1]  # the header names no model it did not use
    assert "fS" not in text and "e+8" not in text
    row = next(line for line in text.splitlines() if line.strip().startswith("xm1"))
    assert "g_m —" in row and "r_o —" in row
    assert "not evaluated: nmos (PDK subcircuit sky130_fd_pr__nfet_01v8" in text
    data = json.loads(_render(deck, "json")[1])
    assert data["operating_point"] == "assumed"
    assert data["stages"][0]["gm_s"] is None and data["stages"][0]["unevaluated"]


def test_buffer_output_is_no_high_class_without_numbers(tmp_path):
    # BSIM-class models: no numbers; the buffer's output drives its own input gate, so
    # by inspection its class is unknown, not "high" (it is ohms with the loop closed)
    text = (ref.FAMILY_DIR / "miller_unity_buffer.sp").read_text()
    text = text.replace("level=1 vto=0.5 kp=200u lambda=0.05 gamma=0.4 phi=0.7", "level=54") \
        .replace("level=1 vto=-0.5 kp=80u lambda=0.05 gamma=0.4 phi=0.7", "level=54")
    deck = tmp_path / "buffer_bsim.sp"
    deck.write_text(text)
    from lintamp.cli import main
    out = io.StringIO()
    with redirect_stdout(out), redirect_stderr(io.StringIO()):
        assert main(["impedance", str(deck), "out", "--format", "json"]) == 0
    assert json.loads(out.getvalue())["class"] == "unknown"


# ------------------------------------------------------------------ textbook lines, by hand
def _sheet(name):
    from lintamp.audit.sheet import build_sheet
    from lintamp.config import Config
    path = ref.FAMILY_DIR / f"{name}.sp"
    return path.read_text(), build_sheet(path, config=Config(root=path.parent), plots=False).data


def _par(*r):
    return 1 / sum(1 / x for x in r)


def test_bjt_emitter_input_exact_form():
    # Gray & Meyer, Analysis and Design of Analog ICs, 5th ed., sec. 3.3.5 (common base),
    # hybrid-pi with r_o: R_in = (r_o + R_C)/(1 + g_m r_o) || r_pi; ngspice-39 op values
    deck, data = _sheet("bjt_cb_current_input")
    op = ng.operating_point(deck, (), [("q1", p) for p in ("gm", "gpi", "go")])
    gm, rpi, ro = op["@q1[gm]"], 1 / op["@q1[gpi]"], 1 / op["@q1[go]"]
    port = next(p for p in data["ports"] if p["net"] == "e")
    assert port["formula"] == "(r_o + R_C)/(1 + g_m r_o) || r_pi"
    branch = _par((ro + 3e3) / (1 + gm * ro), rpi)
    assert port["formula_ohm"] == pytest.approx(branch, rel=0.002)
    z_ng = abs(ng.impedance(ref.ac_off(ref.detached_for_ac(deck, ["iin"])), "e", (1.0,))[0])
    assert _par(branch, 10e3) == pytest.approx(z_ng, rel=0.002)  # ngspice-39 AC


def test_common_base_transimpedance_has_alpha():
    # Sedra & Smith, Microelectronic Circuits, 7th ed., sec. 7.6 (CB): i_c = alpha i_e, so
    # Z_t = alpha R_C R_src/(R_src + R_in); ngspice-39 AC transimpedance
    deck, data = _sheet("bjt_cb_current_input")
    hop = data["paths"][0]["chain"][0]
    assert hop["formula"].startswith("alpha R_C R_src/(R_src + R_in)")
    alpha = hop["terms"]["alpha"]
    op = ng.operating_point(deck, (), [("q1", p) for p in ("gm", "gpi")])
    beta = op["@q1[gm]"] / op["@q1[gpi]"]
    assert alpha == pytest.approx(beta / (beta + 1), rel=0.02)  # alpha, up to r_o's share
    zt = abs(ng.run_deck(deck, ["ac lin 1 1 1", "let zt = vm(out)", "print zt"])["zt"])
    assert hop["formula_value"] == pytest.approx(zt, rel=0.002)


def test_shunt_feedback_tia_transimpedance():
    # Razavi, Design of Integrated Circuits for Optical Communications, 2nd ed., sec. 4.3:
    # Z_T = -(g_m R_F - 1) R_D'/(1 + g_m R_D'), R_D' = R_D || r_o; ngspice-39 op and AC
    deck, data = _sheet("tia_shunt_feedback")
    op = ng.operating_point(deck, (), [("m1", "gm"), ("m1", "gds")])
    gm, ro = op["@m1[gm]"], 1 / op["@m1[gds]"]
    rdp = _par(10e3, ro)
    expected = -(gm * 20e3 - 1) * rdp / (1 + gm * rdp)
    hop = data["paths"][0]["chain"][0]
    assert hop["formula"].startswith("-(g_m R_F - 1) R_D'/(1 + g_m R_D')")
    assert hop["formula_value"] == pytest.approx(expected, rel=0.002)
    zt = ng.run_deck(deck, ["ac lin 1 1 1", "let zt = vr(out)", "print zt"])["zt"]
    assert expected == pytest.approx(zt, rel=0.002)


def test_mirror_loaded_pair_gain():
    # Razavi, Design of Analog CMOS ICs, 2nd ed., sec. 5.3.3: |A_v| = g_m1 (r_o2 || r_o4)
    deck, data = _sheet("diff_pair_mirror_load")
    op = ng.operating_point(deck, (), [("m1", "gm"), ("m2", "gds"), ("m4", "gds")])
    expected = op["@m1[gm]"] / (op["@m2[gds]"] + op["@m4[gds]"])
    path = data["paths"][0]
    pair = next(h for h in path["chain"] if h.get("spans"))
    assert pair["formula"].startswith("g_m1 (r_o2 || r_o4)")
    assert pair["formula_value"] == pytest.approx(expected, rel=0.002)
    av = ng.run_deck(deck, ["ac lin 1 1 1", "let av = vr(out)/vr(ga)", "print av"])["av"]
    assert expected == pytest.approx(av, rel=0.02)  # the textbook form, within 2 % of ngspice-39


def test_body_tied_to_source_has_no_body_effect_in_the_chain():
    # Razavi sec. 3.3.3 with v_bs = 0: A_v = -g_m r_o R_D/(R_D + R_S + r_o + g_m r_o R_S)
    deck, data = _sheet("cs_degenerated_body_source")
    op = ng.operating_point(deck, (), [("m1", "gm"), ("m1", "gds"), ("m1", "gmbs")])
    gm, ro, gmb = op["@m1[gm]"], 1 / op["@m1[gds]"], op["@m1[gmbs]"]
    assert gmb > 0.1 * gm  # ngspice still reports a g_mb; it has no v_bs to act on
    hop = next(h for h in data["paths"][0]["chain"] if h["device"] == "m1")
    assert hop["terms"]["g_mb_s"] == 0.0
    expected = -gm * ro * 6e3 / (6e3 + 2e3 + ro + gm * ro * 2e3)
    assert hop["formula_value"] == pytest.approx(expected, rel=0.002)
    av = ng.run_deck(deck, ["ac lin 1 10k 10k", "let av = vr(out)/vr(g)", "print av"])["av"]
    assert expected == pytest.approx(av, rel=0.002)


def test_cascode_output_short_form_keeps_g_mb():
    # Razavi sec. 3.6.1: R_out ~ (g_m2 + g_mb2) r_o2 r_o1
    deck, data = _sheet("cascode_current_source")
    op = ng.operating_point(deck, (), [("m1", "gds"), ("m2", "gm"), ("m2", "gmbs"), ("m2", "gds")])
    approx = (op["@m2[gm]"] + op["@m2[gmbs]"]) / (op["@m2[gds]"] * op["@m1[gds]"])
    port = next(p for p in data["ports"] if p["net"] == "out")
    assert port["approx"] == "(g_m+g_mb) r_o R_S"
    assert port["approx_ohm"] == pytest.approx(approx, rel=0.002)
    z_ng = abs(ng.impedance(ref.ac_off(ref.detached_for_ac(deck, ["rload"])), "out", (1.0,))[0])
    assert approx == pytest.approx(z_ng, rel=0.02)


def test_cg_input_with_a_current_source_load_shows_the_load():
    # Razavi sec. 3.5: R_in = (R_D + r_o)/(1 + (g_m+g_mb) r_o); with a current-source drain
    # load R_D ~ r_o, so 1/(g_m+g_mb) would be far off: the short form keeps the load
    deck, data = _sheet("cg_current_source_load")
    port = next(p for p in data["ports"] if p["net"] == "s")
    assert port.get("approx") != "1/(g_m+g_mb)"
    op = ng.operating_point(deck, (), [("m1", "gm"), ("m1", "gmbs"), ("m1", "gds")])
    gm, gmb, ro = op["@m1[gm]"], op["@m1[gmbs]"], 1 / op["@m1[gds]"]
    assert abs(1 / (gm + gmb) - port["branch_ohm"]) / port["branch_ohm"] > 0.1  # the wrong form's error
    assert port["formula_ohm"] == pytest.approx(port["branch_ohm"], rel=0.002)
