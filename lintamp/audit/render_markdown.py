"""The sheet as Markdown, ready for a pull-request comment; pictures are PNG files
written beside the sheet and linked relatively."""

from __future__ import annotations

from lintamp.audit import tables
from lintamp.audit import words as w


def _cell(value) -> str:
    return str(value).replace("|", "\\|").replace("\n", " ")


def _table(title, headers, rows, level="###") -> list[str]:
    out = [f"{level} {title}", ""]
    if not rows:
        return out + ["none", ""]
    out.append("| " + " | ".join(headers) + " |")
    out.append("|" + "|".join("---" for _ in headers) + "|")
    out += ["| " + " | ".join(_cell(c) for c in row) + " |" for row in rows]
    return out + [""]


def render_markdown(data: dict, image_names: dict[str, str]) -> str:
    """``image_names``: curve key -> file name beside the sheet (empty: no pictures)."""
    cell = data["cell"] + (f" (instance `{data['instance']}`)" if data.get("instance") else "")
    s = data["summary"]
    out = [f"## Review sheet: `{data['netlist']}`, cell {cell}", "",
           f"- operating point: {w.OP_SOURCE.get(data['operating_point'], data['operating_point'])}",
           f"- signal band: {w.band_text(data['band'])}",
           f"- findings: {s['errors']} errors, {s['warnings']} warnings, {s['infos']} infos, {s['waived']} waived",
           ""]
    out += _table(*tables.ports_table(data))
    for p in data["ports"]:
        name = image_names.get(f"port-{p['net']}")
        if name:
            out += [f"![|Z| at {p['net']}]({name})", ""]
    out += _table(*tables.stages_table(data))
    out += _table(*tables.paths_table(data))
    for p in data["paths"]:
        out += _table(*tables.chain_table(p), level="####")
        out += _table(*tables.interfaces_table(p), level="####")
        name = image_names.get(f"path-{p['from']}-{p['to']}")
        if name:
            out += [f"![{p['kind']} {p['from']} to {p['to']}]({name})", ""]
        out += [f"- note: {n}" for n in p.get("notes", [])]
    out += _table(*tables.findings_table(data))
    plots = data.get("plots") or {}
    if plots and not plots.get("made"):
        out += [f"_Plots skipped: {plots.get('reason')}._", ""]
    if data.get("notes"):
        out += ["### Notes", ""] + [f"- {_cell(n)}" for n in data["notes"]] + [""]
    return "\n".join(out)
