"""The sheet as Markdown, ready for a pull-request comment; pictures are PNG files
written beside the sheet and linked relatively.

Net, cell and file names are the pull request's: every piece of text from the
netlist is escaped for GitHub-flavoured Markdown, so that it reads as the name it
is and does nothing else: HTML (``<img>``, ``<details>``) becomes text,
``@someone`` notifies no one and ``[x](url)`` or ``www.x.org`` is no link
(CommonMark's backslash escapes for punctuation, entities for ``< > &``, a
zero-width space after ``@`` and inside ``www.`` and ``://``).
"""

from __future__ import annotations

from lintamp.audit import tables
from lintamp.audit import words as w
from lintamp.report.base import printable

# ASCII punctuation that Markdown (CommonMark 0.30, "Backslash escapes") may read as syntax
# inline (the text is never at a line start here: cells, alt text, after "- note: ")
_MARKUP = set("\\`*_[]|~")
_ENTITIES = {"<": "&lt;", ">": "&gt;", "&": "&amp;", "@": "@&#8203;", "\"": "&quot;"}


def md_text(value) -> str:
    """Untrusted text as inert Markdown inline text (one line; control characters escaped)."""
    text = printable(str(value).replace("\r\n", " ").replace("\n", " "))
    text = "".join(_ENTITIES.get(ch) or ("\\" + ch if ch in _MARKUP else ch) for ch in text)
    # no autolinks (GFM "Autolinks (extension)"): a zero-width space inside www. and ://
    return text.replace("://", ":&#8203;//").replace("www.", "www&#8203;.").replace("WWW.", "WWW&#8203;.")


def md_code(value) -> str:
    """Untrusted text as a code span (nothing inside is markup, nor a mention): fenced
    with one backtick more than the longest run inside (CommonMark, "Code spans")."""
    text = printable(str(value).replace("\n", " "))
    run = longest = 0
    for ch in text:
        run = run + 1 if ch == "`" else 0
        longest = max(longest, run)
    fence = "`" * (longest + 1)
    pad = " " if text.startswith("`") or text.endswith("`") or longest else ""
    return f"{fence}{pad}{text}{pad}{fence}"


def _cell(value) -> str:
    return md_text(value)


def _table(title, headers, rows, level="###") -> list[str]:
    out = [f"{level} {md_text(title)}", ""]  # a title may hold net names
    if not rows:
        return out + ["none", ""]
    out.append("| " + " | ".join(headers) + " |")
    out.append("|" + "|".join("---" for _ in headers) + "|")
    out += ["| " + " | ".join(_cell(c) for c in row) + " |" for row in rows]
    return out + [""]


def render_markdown(data: dict, image_names: dict[str, str]) -> str:
    """``image_names``: curve key -> file name beside the sheet (empty: no pictures)."""
    cell = md_text(data["cell"]) + (f" (instance {md_code(data['instance'])})" if data.get("instance") else "")
    s = data["summary"]
    out = [f"## Review sheet: {md_code(data['netlist'])}, cell {cell}", "",
           f"- operating point: {w.OP_SOURCE.get(data['operating_point'], data['operating_point'])}",
           f"- signal band: {w.band_text(data['band'])}",
           f"- findings: {s['errors']} errors, {s['warnings']} warnings, {s['infos']} infos, {s['waived']} waived",
           ""]
    out += _table(*tables.ports_table(data))
    for p in data["ports"]:
        name = image_names.get(f"port-{p['net']}")
        if name:
            out += [f"![\\|Z\\| at {md_text(p['net'])}]({name})", ""]
    out += _table(*tables.stages_table(data))
    out += _table(*tables.paths_table(data))
    for p in data["paths"]:
        out += _table(*tables.chain_table(p), level="####")
        out += _table(*tables.interfaces_table(p), level="####")
        name = image_names.get(f"path-{p['from']}-{p['to']}")
        if name:
            out += [f"![{md_text(p['kind'])} {md_text(p['from'])} to {md_text(p['to'])}]({name})", ""]
        out += [f"- note: {md_text(n)}" for n in p.get("notes", [])]
    out += _table(*tables.findings_table(data))
    plots = data.get("plots") or {}
    if plots and not plots.get("made"):
        out += [f"_Plots skipped: {md_text(plots.get('reason'))}._", ""]
    if data.get("notes"):
        out += ["### Notes", ""] + [f"- {_cell(n)}" for n in data["notes"]] + [""]
    return "\n".join(out)
