"""The notes behind the rule sources, readable inside the report.

Rule sources cite the notes shipped with the package (``docs/<note>.md §N``, source ids
such as ``S22``). The HTML report turns each citation into a link to an appendix that
holds the cited sections' text, so a reader who installed the package without the
repository still has them. The notes are package data (``stresscheck.notes``).
"""

from __future__ import annotations

import re
from importlib import resources
from pathlib import Path

from markupsafe import Markup, escape

CITATION = re.compile(r"docs/([A-Za-z0-9_-]+)\.md((?:\s*(?:,|and|&)?\s*§\s*\d+)+)")
SECTION_NUMBER = re.compile(r"§\s*(\d+)")
SOURCE_ID = re.compile(r"\bS(\d{1,3})\b")
_HEADING = re.compile(r"^##\s+(\d+)\.\s+(.*)$")


def note_text(name: str) -> str | None:
    """Text of a shipped note (``name`` without ``.md``), else None."""
    if not re.fullmatch(r"[A-Za-z0-9_-]+", name or ""):
        return None
    try:
        return resources.files("stresscheck.notes").joinpath(f"{name}.md").read_text(
            encoding="utf-8")
    except (ModuleNotFoundError, FileNotFoundError, NotADirectoryError, TypeError):
        pass
    fallback = Path(__file__).resolve().parents[2] / "docs" / f"{name}.md"
    return fallback.read_text(encoding="utf-8") if fallback.is_file() else None


def sections(text: str) -> dict[int, tuple[str, str]]:
    """``{number: (title, body)}`` of the ``## N. title`` sections of a note."""
    out: dict[int, tuple[str, str]] = {}
    current, title, body = None, "", []
    for line in text.splitlines():
        match = _HEADING.match(line)
        if match or line.startswith("## "):
            if current is not None:
                out[current] = (title, "\n".join(body).strip())
            current = int(match.group(1)) if match else None
            title, body = (match.group(2) if match else ""), []
        elif current is not None:
            body.append(line)
    if current is not None:
        out[current] = (title, "\n".join(body).strip())
    return out


def citations(source: str) -> list[tuple[str, int]]:
    """(note, section) pairs a rule source cites, in order of first mention."""
    found: list[tuple[str, int]] = []
    for match in CITATION.finditer(source or ""):
        for num in SECTION_NUMBER.findall(match.group(2)):
            pair = (match.group(1), int(num))
            if pair not in found:
                found.append(pair)
    return found


def name_notes(text: str) -> str:
    """``docs/<note>.md`` in a text (no section cited) named as the shipped notes."""
    return re.sub(r"docs/([A-Za-z0-9_-]+)\.md",
                  lambda m: f"the {m.group(1).replace('-', ' ')} notes (cited sections "
                            "under Rule sources)", text or "")


def plain_citations(source: str) -> str:
    """A rule source as plain text worded as the HTML report shows it: each
    ``docs/<note>.md §N`` becomes ``<note> notes §N`` (the section's text is given with
    the report: the HTML appendix, the spreadsheet's Policy sheet), any other
    ``docs/<note>.md`` as in :func:`name_notes`."""
    def cite(match) -> str:
        numbers = " ".join(f"§{n}" for n in SECTION_NUMBER.findall(match.group(2)))
        return f"{match.group(1).replace('-', ' ')} notes {numbers}"
    return name_notes(CITATION.sub(cite, source or ""))


def anchor(note: str, number: int) -> str:
    return f"src-{note}-{number}"


def link_citations(source: str, available: set) -> Markup:
    """A rule source as HTML: each ``docs/<note>.md §N`` a link to its appendix section
    (where the appendix has it); all text escaped."""
    out, pos = [], 0
    source = source or ""
    for match in CITATION.finditer(source):
        out.append(escape(source[pos:match.start()]))
        note = match.group(1)
        pieces = []
        for num in SECTION_NUMBER.findall(match.group(2)):
            n = int(num)
            if (note, n) in available:
                pieces.append(Markup('<a href="#{}">§{}</a>').format(anchor(note, n), n))
            else:
                pieces.append(escape(f"§{n}"))
        out.append(escape(f"{note.replace('-', ' ')} notes ") + Markup(" ").join(pieces))
        pos = match.end()
    out.append(escape(source[pos:]))
    return Markup("").join(out)


def source_rows(ids, text: str) -> list[str]:
    """The table rows of section 1 of the derating-sources note that describe the given
    source ids (``S22``), as their raw markdown lines."""
    wanted = {f"S{i}" for i in ids}
    rows = []
    for line in text.splitlines():
        cells = [c.strip() for c in line.strip().strip("|").split("|")]
        if line.startswith("|") and cells and cells[0] in wanted:
            rows.append(line)
    return rows


def markdown_html(text: str) -> Markup:
    """A small, safe rendering of a note's markdown: tables, bullet lists, paragraphs,
    ``**bold**`` and ``code``; everything else is escaped text."""
    blocks: list[Markup] = []
    lines = text.splitlines()
    i = 0

    def inline(s: str) -> Markup:
        s = str(escape(s))
        s = re.sub(r"\*\*(.+?)\*\*", r"<strong>\1</strong>", s)
        s = re.sub(r"`([^`]+)`", r"<code>\1</code>", s)
        return Markup(s)

    while i < len(lines):
        line = lines[i]
        if line.startswith("|"):
            rows = []
            while i < len(lines) and lines[i].startswith("|"):
                cells = [c.strip() for c in lines[i].strip().strip("|").split("|")]
                if not all(re.fullmatch(r":?-{2,}:?", c) for c in cells if c):
                    rows.append(cells)
                i += 1
            head, body = rows[0], rows[1:]
            html = Markup("<table class=\"small\"><thead><tr>")
            html += Markup("").join(Markup("<th>{}</th>").format(inline(c)) for c in head)
            html += Markup("</tr></thead><tbody>")
            for r in body:
                html += Markup("<tr>") + Markup("").join(
                    Markup("<td>{}</td>").format(inline(c)) for c in r) + Markup("</tr>")
            blocks.append(html + Markup("</tbody></table>"))
            continue
        if line.lstrip().startswith(("- ", "* ")):
            items = []
            while i < len(lines) and lines[i].lstrip().startswith(("- ", "* ")):
                items.append(lines[i].lstrip()[2:])
                i += 1
            blocks.append(Markup("<ul>") + Markup("").join(
                Markup("<li>{}</li>").format(inline(x)) for x in items) + Markup("</ul>"))
            continue
        if not line.strip() or line.strip() == "---":
            i += 1
            continue
        para = []
        while (i < len(lines) and lines[i].strip() and not lines[i].startswith("|")
               and not lines[i].lstrip().startswith(("- ", "* "))):
            para.append(lines[i].lstrip("#").strip())
            i += 1
        blocks.append(Markup("<p>{}</p>").format(inline(" ".join(para))))
    return Markup("\n").join(blocks)


def markdown_lines(text: str) -> list[str]:
    """A note's markdown as plain lines for a spreadsheet: table rows with their cells
    joined by " | " (separator rows dropped), bullets as "• ", ``**`` and backticks
    removed, paragraphs joined into one line each; blank lines dropped."""
    out: list[str] = []
    para: list[str] = []

    def clean(s: str) -> str:
        return re.sub(r"`([^`]+)`", r"\1", re.sub(r"\*\*(.+?)\*\*", r"\1", s))

    def flush():
        if para:
            out.append(clean(" ".join(para)))
            para.clear()

    for line in text.splitlines():
        stripped = line.strip()
        if line.startswith("|"):
            flush()
            cells = [c.strip() for c in stripped.strip("|").split("|")]
            if not all(re.fullmatch(r":?-{2,}:?", c) for c in cells if c):
                out.append(clean(" | ".join(cells)))
        elif line.lstrip().startswith(("- ", "* ")):
            flush()
            out.append("• " + clean(line.lstrip()[2:]))
        elif not stripped or stripped == "---":
            flush()
        else:
            para.append(line.lstrip("#").strip())
    flush()
    return out


def appendix(rules) -> list[dict]:
    """The sections and source rows the rules cite, ready for the template.

    Returns
    -------
    list of dict
        ``{"anchor", "key", "title", "html", "markdown"}`` per cited section (notes in
        order of first citation), then one entry with the cited source-id rows where
        any.
    """
    cited: list[tuple[str, int]] = []
    ids: list[int] = []
    for rule in rules or ():
        source = str(rule.get("source") or "")
        for pair in citations(source):
            if pair not in cited:
                cited.append(pair)
        for sid in SOURCE_ID.findall(source):
            if int(sid) not in ids:
                ids.append(int(sid))
    out = []
    texts: dict[str, str | None] = {}
    for note, number in cited:
        if note not in texts:
            texts[note] = note_text(note)
        if not texts[note]:
            continue
        found = sections(texts[note]).get(number)
        if found is None:
            continue
        title, body = found
        out.append({"anchor": anchor(note, number), "key": (note, number),
                    "title": f"{note.replace('-', ' ')} notes §{number}. {title}",
                    "html": markdown_html(body), "markdown": body})
    derating = note_text("derating-sources")
    if ids and derating:
        first = derating.splitlines()
        header = next((ln for ln in first if ln.startswith("| id |")), None)
        rows = source_rows(sorted(ids), derating)
        if header and rows:
            table = "\n".join([header, "|---|"] + rows)
            out.append({"anchor": "src-ids", "key": ("ids", 0),
                        "title": "Sources cited by id",
                        "html": markdown_html(table), "markdown": table})
    return out
