"""The sheet's sections as (title, headers, rows) tables, shared by Markdown and HTML."""

from __future__ import annotations

from lintamp.audit import words as w
from lintamp.report.si import si


def ports_table(data: dict):
    rows = []
    for p in data["ports"]:
        zname = "Z_in" if p["kind"].endswith("input") else "Z_out"
        form = "; ".join(w.port_form_lines(p, zname))
        if p.get("parallel"):
            form += "; in parallel: " + ", ".join(f"{b['via']} {w.ohm(b['z_ohm'])}" for b in p["parallel"])
        rows.append([p["net"], p["kind"], w.z_text(p["z_ohm"]), w.z_text(p.get("z_band_ohm")),
                     p.get("stage") or "—", form or "—", p["decided_by"], len(p.get("findings", []))])
    return ("Ports", ["net", "kind", "Z at DC", "Z at band", "stage behind it", "textbook form",
                      "decided by", "findings"], rows)


def stages_table(data: dict):
    rows = []
    for s in data["stages"]:
        rows.append([s["device"], s["role"], s.get("region") or "—",
                     w.number(s.get("gm_s"), "S"), w.number(s.get("ro_ohm"), "Ω"),
                     w.number(s.get("id_a"), "A"),
                     w.margin_text(s), len(s.get("findings", []))])
    return ("Stages", ["device", "role", "region", "g_m", "r_o", "I_D / I_C", "V_DS − V_DSAT", "findings"], rows)


def paths_table(data: dict):
    rows = []
    for p in data["paths"]:
        chain = " → ".join(f"{h['device']} ({h['role']})" for h in p.get("chain", [])) or "—"
        form = w.path_form_text(p) if p.get("formula") else "—"
        rows.append([f"{p['from']} → {p['to']}", p["kind"], w.gain_text(p["gain"]),
                     w.gain_text(p.get("gain_band")), w.freq_text(p.get("f3db_hz")),
                     ", ".join(w.freq_text(f) for f in p.get("poles_hz") or []) or "—", chain, form])
    return ("Signal paths", ["path", "kind", "gain at DC", "gain at band", "−3 dB", "poles", "chain",
                             "textbook form"], rows)


def interfaces_table(path: dict):
    rows = []
    for i in path.get("interfaces", []):
        band = i["role"] != "input" and "z_in_band_ohm" in i  # judged in the band
        z_out, z_in = (i["z_out_band_ohm"], i["z_in_band_ohm"]) if band else (i["z_out_ohm"], i["z_in_ohm"])
        rows.append([i["net"], i["role"], i["signal"], w.ohm(z_out), w.ohm(z_in),
                     "band" if band else "DC", i["suits"], i["verdict"]])
    return (f"Interfaces {path['from']} → {path['to']}",
            ["net", "where", "signal", "Z_out (driver)", "Z_in (next)", "at", "wants", "verdict"], rows)


def chain_table(path: dict):
    rows = []
    for h in path.get("chain", []):
        rows.append([h["device"], h["role"], f"{h['from']} → {h['to']}", h["enters_at"],
                     w.gain_text(h["gain"]), w.hop_form_text(h) or "—"])
    return (f"Stages along {path['from']} → {path['to']}",
            ["device", "role", "nets", "signal enters at", "stage gain (MNA)", "textbook form"], rows)


def findings_table(data: dict):
    rows = [[f["severity"], f["rule"], f"{f['path']}:{f['line']}:{f['column']}", f["subject"], f["message"],
             f.get("fix") or ""] for f in data["findings"]]
    return ("Findings", ["severity", "rule", "where", "subject", "message", "fix"], rows)
