"""Findings on real open-PDK designs of ../shared/corpus, as read by hand in the
precision review (right / defensible / wrong, see bench/reviews/): each check pins
one class of what a reviewer keeps, or of the noise folded away, on the file it was
read on.  Skipped, with a message, where the corpus is absent."""

from __future__ import annotations

from pathlib import Path

import pytest

from lintamp.api import check_file
from lintamp.config import Config

CORPUS = Path(__file__).resolve().parent.parent.parent / "shared" / "corpus"


def findings(repo: str, path: str):
    file = CORPUS / repo / path
    if not file.is_file():
        pytest.skip(f"the shared corpus file is not at {file}")
    return check_file(file, Config(), include_paths=[CORPUS / repo]).findings


def loud(found):
    return sorted((f.rule, f.severity.label, f.subject) for f in found
                  if f.severity.label != "info")


def test_magic_substrate_in_device_wrapper_cells_is_no_error():
    # read: VSUBS of cells built from PMOS wrappers touches only the wrappers'
    # capacitors to substrate (the cells do not bring it out): an extraction fact
    found = findings("gilangfajrul__sky130_gff_ip__bgr_1.2v", "magic/bgr_op5_block_rev1.spice")
    assert loud(found) == []
    assert sum(1 for f in found if f.rule == "no-dc-path" and "vsubs" in f.message) >= 6


def test_floating_output_gates_of_an_extracted_vco_are_kept():
    # read: the output PMOS gates sit on a net nothing drives; magic itself marks its
    # capacitance '**FLOATING' in the same file: right
    found = findings("SkillSurf__cmos-pll-ihp-sg13g2",
                     "Combined_Design/design_data/pex/11Stage_vco_new_update2__11Stage_vco_new_update2/"
                     "magic_RC/11Stage_vco_new_update2.pex.spice")
    assert loud(found) == [("unbiased-gate", "error", "a_7198_n376#"),
                           ("unbiased-gate", "error", "a_7212_321#")]


def test_klayout_device_cells_spare_substrate_pins_are_infos():
    found = findings("SkillSurf__cmos-pll-ihp-sg13g2", "Combined_Design/design_data/gds/TOP_extracted.cir")
    assert loud(found) == [("no-dc-path", "warning", "top")]  # no pin labels: right
    assert {f.severity.label for f in found if f.rule == "unused-port"} == {"info"}


def test_spare_cell_in_another_pin_order_is_one_finding_not_four():
    # read: the spare cell's instances list their nets in layout pin order against
    # alphabetical definitions (VGND on a VPWR pin); a PDK cell no deck here uses
    found = findings("idea-fasoc__OpenFASOC", "openfasoc/common/platforms/sky130hd/cdl/sky130_fd_sc_hd.spice")
    assert loud(found) == []
    assert [f.rule for f in found if "sparecell" in f.cell] == ["swapped-pins"]


def test_tie_cells_with_rails_taken_as_global_leave_only_the_real_duplicates():
    found = findings("idea-fasoc__OpenFASOC", "openfasoc/common/platforms/gf180osu9t/cdl/gf180mcu_osu_sc_9T.spice")
    assert loud(found) == [("duplicate-name", "error", "x0"), ("duplicate-name", "error", "x4")]


def test_a_current_into_a_port_the_block_never_uses_is_kept():
    # read: I4 pushes 200 uA into ITAIL, which PLL_TOP7 connects to nothing: right
    found = findings("efabless__sky130_aa_ip__programmable_pll",
                     "Xschem/PLL_TOP_Schematics/TB_TOP_MUX_F7_sch.spice")
    assert ("unused-port", "warning", "itail") in loud(found)


def test_an_exported_blocks_well_pins_do_not_float():
    found = findings("gilangfajrul__sky130_gff_ip__bgr_1.2v", "xschem/simulations/op.spice")
    assert "body-tie" not in [f.rule for f in found]
