"""The sheet for a terminal: plain text, no pictures."""

from __future__ import annotations

from lintamp.audit import words as w
from lintamp.report.si import si


def render_text(data: dict) -> str:
    out: list[str] = []
    cell = data["cell"] + (f" (instance {data['instance']})" if data.get("instance") else "")
    out.append(f"review sheet: {data['netlist']} — cell {cell}")
    out.append(f"  operating point: {w.OP_SOURCE.get(data['operating_point'], data['operating_point'])}")
    out.append(f"  signal band: {w.band_text(data['band'])}")
    if data.get("loads"):
        out.append(f"  load elements: {', '.join(data['loads'])}")
    fp_index = {f["fingerprint"]: f for f in data["findings"]}
    out.append("")
    out.append("PORTS")
    if not data["ports"]:
        out.append("  none found")
    for p in data["ports"]:
        zname = "Z_in" if p["kind"].endswith("input") else "Z_out"
        band = f", at band {w.z_text(p.get('z_band_ohm'))}" if p.get("z_band_ohm") else ""
        out.append(f"  {p['net']:<10} {p['kind']:<15} {zname} {w.z_text(p['z_ohm'])} at DC{band}"
                   f"   [{p['decided_by']}]")
        if p.get("stage"):
            out.append(f"             behind it: {p['stage']}")
        for line in w.port_form_lines(p, zname):
            out.append("             " + line)
        for fp in p.get("findings", []):
            out.append(f"             ! {w.finding_line(fp_index[fp])}")
    out.append("")
    out.append("STAGES")
    if not data["stages"]:
        out.append("  no transistors")
    for s in data["stages"]:
        gm = w.number(s.get("gm_s"), "S")
        ro = w.number(s.get("ro_ohm"), "Ω")
        out.append(f"  {s['device']:<8} {s['role']:<32} {s.get('region') or '—':<11} g_m {gm:<9} "
                   f"r_o {ro:<9} margin {w.margin_text(s)}")
        if s.get("unevaluated"):
            out.append(f"           — not evaluated: {s['unevaluated']}")
        for fp in s.get("findings", []):
            out.append(f"           ! {w.finding_line(fp_index[fp])}")
    out.append("")
    out.append("SIGNAL PATHS")
    if not data["paths"]:
        out.append("  none (needs at least one input and one output)")
    for p in data["paths"]:
        head = f"  {p['from']} → {p['to']}: {p['kind']} {w.gain_text(p['gain'])} at DC"
        if p.get("gain_band"):
            head += f", {w.gain_text(p['gain_band'])} at the band"
        head += f"; -3 dB at {w.freq_text(p.get('f3db_hz'))}"
        out.append(head)
        if p.get("poles_hz"):
            out.append("    poles: " + ", ".join(w.freq_text(f) for f in p["poles_hz"]))
        if p.get("formula"):
            out.append(f"    {w.path_form_text(p)}")
        for h in p.get("chain", []):
            line = f"    {h['device']:<8} {h['role']:<32} {h['from']} → {h['to']} (enters at the {h['enters_at']})" \
                   f"  {w.gain_text(h['gain'])}"
            if h.get("formula") or h.get("formula_none"):
                line += f"  {w.hop_form_text(h)}"
            out.append(line)
        for i in p.get("interfaces", []):
            band = i["role"] != "input" and "z_in_band_ohm" in i  # judged in the band
            z_out, z_in = (i["z_out_band_ohm"], i["z_in_band_ohm"]) if band else (i["z_out_ohm"], i["z_in_ohm"])
            out.append(f"    at {i['net']:<8} ({i['role']}, {i['signal']}) Z_out {w.ohm(z_out)} vs "
                       f"Z_in {w.ohm(z_in)}{' at the band' if band else ''}: {i['verdict']}")
        for note in p.get("notes", []):
            out.append(f"    note: {note}")
    out.append("")
    s = data["summary"]
    out.append(f"FINDINGS ({s['errors']} errors, {s['warnings']} warnings, {s['infos']} infos, "
               f"{s['waived']} waived)")
    for f in data["findings"]:
        out.append("  " + w.finding_line(f))
    if not data["findings"]:
        out.append("  none")
    if data.get("notes"):
        out.append("")
        out.append("NOTES")
        for note in data["notes"]:
            out.append(f"  {note}")
    return "\n".join(out) + "\n"
