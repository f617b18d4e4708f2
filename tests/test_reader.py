"""Reader: lines -> cards.  One tiny netlist per behaviour.

Sources: ngspice User's Manual ch. 2 "Circuit description" (title line, '+'
continuation, '*' / ';' / '$' / '//' comments, .end, .control, .include, .lib);
Berkeley SPICE3 User's Guide "Input format"; where a point is from memory it says so.
"""

from __future__ import annotations

import os
from pathlib import Path

import pytest

from lintamp.netlist.parser import parse_file, parse_text
from lintamp.netlist.reader import ReadOptions, read_text


def cards(text: str) -> list[str]:
    return [c.text for c in read_text(text).cards]


def test_first_line_is_the_title_even_when_it_looks_like_a_card():
    # ngspice manual 2.3: the first line is the title, whatever it holds
    result = read_text("R1 a b 1k\nR2 b 0 1k\n")
    assert result.title == "R1 a b 1k"
    assert [c.text for c in result.cards] == ["R2 b 0 1k"]


def test_title_starting_with_star_or_dollar():
    assert cards("* my deck\nR1 a 0 1k\n") == ["R1 a 0 1k"]
    assert cards("$ CDL netlist\nR1 a 0 1k\n") == ["R1 a 0 1k"]


def test_library_fragment_has_no_title(tmp_path):
    # included and library files have no title line (spice-syntax.md 1.1)
    lib = tmp_path / "cells.sp"
    lib.write_text(".subckt inv a y vdd vss\nm1 y a vss vss nch\n.ends\n")
    netlist = parse_file(lib, ReadOptions(root=tmp_path))
    assert "inv" in netlist.top.cells
    assert not [d for d in netlist.diagnostics if d.rule == "parse-error"]


def test_plus_continuation_joins_and_keeps_physical_columns():
    # ngspice manual 2.4: a '+' line continues the previous card
    result = read_text("t\nM1 d g s b nch\n+ W=1u\n+   L=2u\n")
    card = result.cards[0]
    assert card.text.split() == ["M1", "d", "g", "s", "b", "nch", "W=1u", "L=2u"]
    where = card.location_at(card.text.index("L=2u"))
    assert (where.line, where.column) == (4, 5)


def test_continuation_after_interleaved_comment_and_blank_lines():
    # '+' attaches to the last statement across comment lines (spice-syntax.md 1.2, from memory)
    assert cards("t\nR1 a b\n* a comment\n\n+ 1k\n") == ["R1 a b  1k"]


def test_continuation_with_leading_blanks():
    # ngspice and Xyce accept blanks before '+' (spice-syntax.md 1.2)
    assert cards("t\nR1 a b\n   + 1k\n") == ["R1 a b  1k"]


def test_trailing_backslash_continues():
    # HSPICE-style continuation (spice-syntax.md 1.2)
    assert cards("t\nR1 a b \\\n 1k\n")[0].split() == ["R1", "a", "b", "1k"]


def test_continuation_with_nothing_before_is_an_error():
    netlist = parse_text("t\n+ W=1u\n")
    assert [d.rule for d in netlist.diagnostics] == ["parse-error"]
    assert netlist.diagnostics[0].location.line == 2


def test_crlf_and_tabs():
    assert cards("t\r\nR1\ta\tb\t1k\r\n") == ["R1\ta\tb\t1k"]


def test_latin1_bytes_in_comments_do_not_crash(tmp_path):
    f = tmp_path / "deck.sp"
    f.write_bytes(b"t\n* R\xe9sistance de charge \xb5\nR1 a 0 1k\n")
    netlist = parse_file(f, ReadOptions(root=tmp_path))
    assert [e.name for e in netlist.top.elements] == ["R1"]


def test_inline_comments_by_dialect():
    # ';' always; '$' after a blank; '//' after a blank (ngspice manual 2.5)
    assert cards("t\nR1 a b 1k ; load\n") == ["R1 a b 1k "]
    assert cards("t\nR1 a b 1k $ load\n") == ["R1 a b 1k "]
    assert cards("t\nR1 a b 1k // load\n") == ["R1 a b 1k "]
    # '$' inside a name is not a comment (M$1, $PDK_ROOT)
    assert cards("t\nM$1 d g s b nch\n") == ["M$1 d g s b nch"]


def test_comment_characters_inside_braces_and_quotes_stay():
    assert cards("t\nR1 a b {x;y}\n") == ["R1 a b {x;y}"]
    assert cards("t\nR1 a b 'x $ y'\n") == ["R1 a b 'x $ y'"]


def test_end_does_not_stop_reading():
    # ngspice-39 batch run: 't / v1 a 0 1 / r1 a 0 1k / .op / .end / r2 a 0 1k' gives
    # i(v1) = -2 mA, so the card after .end is part of the circuit (the manual's 2.3
    # says such lines are ignored; the simulator reads them)
    assert cards("t\nR1 a 0 1k\n.end\nR2 a 0 1k\n") == ["R1 a 0 1k", "R2 a 0 1k"]


def test_control_block_is_skipped():
    assert cards("t\nR1 a 0 1k\n.control\nrun\nplot v(a)\n.endc\nR2 a 0 1k\n") == [
        "R1 a 0 1k", "R2 a 0 1k"]


def test_pragmas_keep_their_location_and_cell():
    netlist = parse_text("t\n* lintamp: bandwidth 20meg\n.subckt amp a b\n"
                         "R1 a b 1k ; lintamp: waive dangling-net a -- probe pad\n.ends\n")
    top = netlist.top.pragmas
    assert [(p.verb, p.args, p.location.line) for p in top] == [("bandwidth", ("20meg",), 2)]
    inner = netlist.top.cells["amp"].pragmas
    assert inner[0].verb == "waive" and inner[0].inline and inner[0].element == "r1"
    assert inner[0].reason == "probe pad" and inner[0].cell == "amp"


def test_cdl_directives_kept_and_continued():
    # CDL puts directives in comments: *.PININFO, *.GLOBAL (spice-syntax.md 1.3); a '+'
    # after a directive continues the directive, not the card before it
    netlist = parse_text("t\n.param w1=1u\n*.GLOBAL gnd!\n+ vdd!\nR1 a 0 1k\n")
    assert {"gnd!", "vdd!"} <= netlist.globals
    assert not netlist.diagnostics


def test_include_relative_to_including_file(tmp_path):
    (tmp_path / "models").mkdir()
    (tmp_path / "models" / "n.inc").write_text(".model nch nmos level=1\n")
    (tmp_path / "deck.sp").write_text("t\n.include models/n.inc\nM1 d g 0 0 nch\n")
    netlist = parse_file(tmp_path / "deck.sp", ReadOptions(root=tmp_path))
    assert "nch" in netlist.top.models
    assert len(netlist.files) == 2


def test_include_from_include_path(tmp_path):
    lib = tmp_path / "pdk"
    lib.mkdir()
    (lib / "n.inc").write_text(".model nch nmos\n")
    proj = tmp_path / "proj"
    proj.mkdir()
    (proj / "deck.sp").write_text("t\n.include 'n.inc'\n")
    netlist = parse_file(proj / "deck.sp", ReadOptions(root=proj, include_paths=(lib,)))
    assert "nch" in netlist.top.models


def test_missing_include_is_a_finding_and_checking_goes_on(tmp_path):
    (tmp_path / "deck.sp").write_text("t\n.include nowhere.inc\nR1 a 0 1k\n")
    netlist = parse_file(tmp_path / "deck.sp", ReadOptions(root=tmp_path))
    assert [(d.rule, d.location.line) for d in netlist.diagnostics] == [("missing-include", 2)]
    assert [e.name for e in netlist.top.elements] == ["R1"]


def test_placeholder_include_is_not_expanded(tmp_path):
    (tmp_path / "deck.sp").write_text("t\n.lib $PDK_ROOT/models.lib tt\n")
    netlist = parse_file(tmp_path / "deck.sp", ReadOptions(root=tmp_path))
    assert netlist.diagnostics[0].rule == "missing-include"
    assert "placeholder" in netlist.diagnostics[0].message


def test_include_cycle_and_self_include(tmp_path):
    (tmp_path / "a.inc").write_text(".include b.inc\nR1 a 0 1k\n")
    (tmp_path / "b.inc").write_text(".include a.inc\n")
    (tmp_path / "deck.sp").write_text("t\n.include a.inc\n.include deck.sp\n")
    netlist = parse_file(tmp_path / "deck.sp", ReadOptions(root=tmp_path))
    rules = sorted(d.rule for d in netlist.diagnostics)
    assert rules == ["bad-include", "bad-include"]
    assert any("cycle" in d.message for d in netlist.diagnostics)


def test_include_outside_the_root_is_not_read(tmp_path):
    outside = tmp_path / "outside.inc"
    outside.write_text("R9 a 0 1\n")
    proj = tmp_path / "proj"
    proj.mkdir()
    (proj / "deck.sp").write_text(f"t\n.include ../outside.inc\n.include {outside}\n")
    netlist = parse_file(proj / "deck.sp", ReadOptions(root=proj))
    assert [d.rule for d in netlist.diagnostics] == ["bad-include", "bad-include"]
    assert not netlist.top.elements


@pytest.mark.skipif(not hasattr(os, "symlink"), reason="needs symbolic links")
def test_symlink_pointing_out_of_the_root_is_not_followed(tmp_path):
    outside = tmp_path / "secret.inc"
    outside.write_text("R9 a 0 1\n")
    proj = tmp_path / "proj"
    proj.mkdir()
    (proj / "link.inc").symlink_to(outside)
    (proj / "deck.sp").write_text("t\n.include link.inc\n")
    netlist = parse_file(proj / "deck.sp", ReadOptions(root=proj))
    assert [d.rule for d in netlist.diagnostics] == ["bad-include"]


def test_lib_sections(tmp_path):
    # ngspice manual 2.7: '.lib FILE SECTION' uses the section defined by '.lib NAME ... .endl'
    (tmp_path / "corners.lib").write_text(
        ".lib tt\n.model nch nmos vto=0.5\n.endl tt\n.lib ff\n.model nch nmos vto=0.4\n.endl ff\n")
    (tmp_path / "deck.sp").write_text("t\n.lib corners.lib ff\n")
    netlist = parse_file(tmp_path / "deck.sp", ReadOptions(root=tmp_path))
    assert netlist.top.models["nch"].params["vto"] == "0.4"


def test_lib_section_missing(tmp_path):
    (tmp_path / "corners.lib").write_text(".lib tt\n.model nch nmos\n.endl\n")
    (tmp_path / "deck.sp").write_text("t\n.lib corners.lib ss\n")
    netlist = parse_file(tmp_path / "deck.sp", ReadOptions(root=tmp_path))
    assert [d.rule for d in netlist.diagnostics] == ["missing-include"]


def test_binary_file_is_refused_clearly(tmp_path):
    f = tmp_path / "waves.raw"
    f.write_bytes(b"\x00\x01\x02binary\x00" * 100)
    netlist = parse_file(f, ReadOptions(root=tmp_path))
    assert netlist.diagnostics[0].rule == "parse-error"
    assert "binary" in netlist.diagnostics[0].message


def test_empty_file(tmp_path):
    f = tmp_path / "empty.sp"
    f.write_bytes(b"")
    netlist = parse_file(f, ReadOptions(root=tmp_path))
    assert netlist.diagnostics == [] and netlist.top.elements == []


def test_spectre_section_is_skipped_and_said_once():
    netlist = parse_text("t\nR1 a 0 1k\nsimulator lang=spectre\nR2 (a b) resistor r=1k\n"
                         "simulator lang=spice\nR3 b 0 1k\n")
    assert [e.name for e in netlist.top.elements] == ["R1", "R3"]
    assert [d.rule for d in netlist.diagnostics] == ["unsupported-syntax"]


def test_reader_never_mutates_the_file(tmp_path):
    f = tmp_path / "deck.sp"
    data = b"t\r\nR1 a 0 1k\r\n.include missing.inc\r\n"
    f.write_bytes(data)
    before = os.stat(f).st_mtime_ns
    parse_file(f, ReadOptions(root=tmp_path))
    assert f.read_bytes() == data and os.stat(f).st_mtime_ns == before
    assert sorted(p.name for p in tmp_path.iterdir()) == ["deck.sp"]


def test_pspice_net_names_after_a_blank_are_names_not_comments():
    # PSpice schematics name unnamed nets $N_0001 and globals $G_DPWR (PSpice reference
    # manual, from memory); Xyce reads them as nets.  A ' $' before anything else still
    # starts a comment, as ngspice-39 reads ' $ a comment' and ' $1.68'
    from lintamp.api import check_text
    text = ("pspice nets\nV1 $N_0002 0 DC 1\nR1 $N_0002 $N_0001 1k\nR2 $N_0001 0 1k $1.68\n"
            "R3 $N_0001 0 2k $ a comment\n.end\n")
    findings = check_text(text, "ps.cir").findings
    assert not [f for f in findings if f.rule in ("parse-error", "dangling-net", "no-dc-path")]
