"""The sheet as one self-contained HTML page: inline CSS, pictures as base64 PNG,
no scripts, no external resources."""

from __future__ import annotations

import base64
import html

from lintamp.audit import tables
from lintamp.audit import words as w

CSS = """
body{font-family:"DejaVu Sans",Arial,sans-serif;font-size:14px;color:#1b1b1b;margin:24px;max-width:1100px}
h1{font-size:20px;margin:0 0 8px} h2{font-size:17px;margin:22px 0 6px;border-bottom:1px solid #ccc}
h3{font-size:15px;margin:14px 0 4px}
table{border-collapse:collapse;margin:4px 0 10px;width:100%}
th,td{border:1px solid #d0d0d0;padding:3px 6px;text-align:left;vertical-align:top}
th{background:#eef2f8} td.num{white-space:nowrap}
.meta{color:#444;margin:2px 0} .ok{color:#1d6b1d} .bad{color:#a01818;font-weight:bold}
.error{color:#a01818;font-weight:bold} .warning{color:#9a6200;font-weight:bold} .info{color:#245c9a}
figure{margin:6px 0 12px} figcaption{color:#555;font-size:12px}
img{max-width:100%;height:auto;border:1px solid #e4e4e4}
""".strip()


def _e(value) -> str:
    return html.escape(str(value), quote=True)


def _table(title, headers, rows, level="h2", cls="") -> list[str]:
    out = [f"<{level}>{_e(title)}</{level}>"]
    if not rows:
        return out + ["<p>none</p>"]
    out.append(f'<table class="{cls}"><thead><tr>' + "".join(f"<th>{_e(h)}</th>" for h in headers)
               + "</tr></thead><tbody>")
    for row in rows:
        cells = []
        for c in row:
            text = str(c)
            klass = ""
            if text.startswith("suits"):
                klass = "ok"
            elif text.startswith("loses") or text.startswith("both open"):
                klass = "bad"
            elif text in ("error", "warning", "info"):
                klass = text
            cells.append(f'<td class="{klass}">{_e(text)}</td>' if klass else f"<td>{_e(text)}</td>")
        out.append("<tr>" + "".join(cells) + "</tr>")
    return out + ["</tbody></table>"]


def _figure(images: dict[str, bytes], key: str, caption: str) -> list[str]:
    png = images.get(key)
    if not png:
        return []
    data = base64.b64encode(png).decode("ascii")
    return [f'<figure><img alt="{_e(caption)}" src="data:image/png;base64,{data}">'
            f"<figcaption>{_e(caption)}</figcaption></figure>"]


def render_html(data: dict, images: dict[str, bytes]) -> str:
    cell = data["cell"] + (f" (instance {data['instance']})" if data.get("instance") else "")
    s = data["summary"]
    out = ["<!DOCTYPE html>", '<html lang="en"><head><meta charset="utf-8">',
           f"<title>Review sheet: {_e(data['netlist'])}</title>", f"<style>{CSS}</style></head><body>",
           f"<h1>Review sheet: {_e(data['netlist'])}, cell {_e(cell)}</h1>",
           f'<p class="meta">operating point: {_e(w.OP_SOURCE.get(data["operating_point"], data["operating_point"]))}</p>',
           f'<p class="meta">signal band: {_e(w.band_text(data["band"]))}</p>',
           f'<p class="meta">findings: {s["errors"]} errors, {s["warnings"]} warnings, {s["infos"]} infos, '
           f'{s["waived"]} waived</p>']
    out += _table(*tables.ports_table(data), cls="ports")
    for p in data["ports"]:
        out += _figure(images, f"port-{p['net']}", f"|Z(f)| at {p['net']} ({p['kind']}); dashed: poles")
    out += _table(*tables.stages_table(data), cls="stages")
    out += _table(*tables.paths_table(data), cls="paths")
    for p in data["paths"]:
        out += _table(*tables.chain_table(p), level="h3", cls="chain")
        out += _table(*tables.interfaces_table(p), level="h3", cls="interfaces")
        out += _figure(images, f"path-{p['from']}-{p['to']}",
                       f"{p['kind']} {p['from']} → {p['to']} over frequency; dashed: poles, dotted: −3 dB")
        out += [f"<p class=\"meta\">note: {_e(n)}</p>" for n in p.get("notes", [])]
    out += _table(*tables.findings_table(data), cls="findings")
    plots = data.get("plots") or {}
    if plots and not plots.get("made"):
        out.append(f'<p class="meta">Plots skipped: {_e(plots.get("reason"))}.</p>')
    if data.get("notes"):
        out.append("<h2>Notes</h2><ul>" + "".join(f"<li>{_e(n)}</li>" for n in data["notes"]) + "</ul>")
    out.append("</body></html>")
    return "\n".join(out) + "\n"
