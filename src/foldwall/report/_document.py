"""The report as a list of sections made of a few kinds of blocks, and its two renderings.

One content model feeds both files, so ``report.html`` and ``report.md`` say the
same things: HTML with inline SVG and inline CSS (nothing is fetched), Markdown
with the SVG files in a folder beside it.
"""

from __future__ import annotations

import html
import re
from collections.abc import Sequence
from dataclasses import dataclass

__all__ = [
    "Block",
    "Bullets",
    "Code",
    "Document",
    "Facts",
    "Figure",
    "Section",
    "Subheading",
    "Table",
    "Text",
    "render_html",
    "render_markdown",
]


@dataclass(frozen=True)
class Text:
    """A paragraph of plain text (escaped on output). ``kind`` "note" or "caution" marks it."""

    text: str
    kind: str = ""


@dataclass(frozen=True)
class Bullets:
    """A list of plain-text items."""

    items: tuple[str, ...]
    kind: str = ""


@dataclass(frozen=True)
class Table:
    """A table of plain-text cells; ``numeric`` marks the columns aligned right."""

    columns: tuple[str, ...]
    rows: tuple[tuple[str, ...], ...]
    caption: str = ""
    numeric: tuple[bool, ...] = ()
    links: tuple[str, ...] = ()
    """Per row, the anchor its last cell links to within the report ("" for none)."""


@dataclass(frozen=True)
class Facts:
    """Label and value pairs (a definition list)."""

    pairs: tuple[tuple[str, str], ...]


@dataclass(frozen=True)
class Code:
    """Text shown verbatim in a monospaced block (a command, a digest)."""

    text: str


@dataclass(frozen=True)
class Subheading:
    """A heading inside a section."""

    text: str


@dataclass(frozen=True)
class Figure:
    """A plot: an SVG document, its caption and a text alternative.

    ``key`` names the SVG file beside report.md and prefixes the SVG's element ids
    in report.html, so several inline plots never share an id.
    """

    key: str
    svg: str
    caption: str
    alt: str


Block = Text | Bullets | Table | Facts | Code | Subheading | Figure


@dataclass(frozen=True)
class Section:
    """One section of the report: an anchor ``key``, a heading and its blocks."""

    key: str
    title: str
    blocks: tuple[Block, ...]


@dataclass(frozen=True)
class Document:
    """The whole report."""

    title: str
    subtitle: str
    sections: tuple[Section, ...]
    footer: str = ""


# ---------------------------------------------------------------- HTML

_CSS = """
:root { --ink: #1a1a1a; --muted: #555; --rule: #d0d0d0; --band: #f4f6f8;
  --note: #0072B2; --caution: #D55E00; }
* { box-sizing: border-box; }
body { font-family: system-ui, -apple-system, "Segoe UI", Roboto, "Helvetica Neue",
  Arial, sans-serif; color: var(--ink); margin: 0 auto; max-width: 60rem;
  padding: 1.5rem 1.25rem 3rem; line-height: 1.45; font-size: 15px; background: #fff; }
h1 { font-size: 1.6rem; margin: 0 0 .25rem; }
h2 { font-size: 1.25rem; margin: 2rem 0 .6rem; padding-bottom: .2rem;
  border-bottom: 2px solid var(--rule); }
h3 { font-size: 1.02rem; margin: 1.2rem 0 .4rem; }
p { margin: .45rem 0; }
.subtitle { color: var(--muted); margin: 0 0 1rem; }
nav ol { columns: 2; margin: .4rem 0 1rem; padding-left: 1.4rem; }
nav a { color: var(--note); text-decoration: none; }
table { border-collapse: collapse; margin: .5rem 0 .9rem; font-size: .88rem;
  width: auto; max-width: 100%; }
caption { text-align: left; color: var(--muted); font-size: .85rem; padding: 0 0 .25rem; }
th, td { border-bottom: 1px solid var(--rule); padding: .22rem .55rem; text-align: left;
  vertical-align: top; }
th { background: var(--band); font-weight: 600; }
td.num, th.num { text-align: right; font-variant-numeric: tabular-nums; }
dl.facts { display: grid; grid-template-columns: max-content 1fr; gap: .15rem 1rem;
  margin: .4rem 0 .9rem; font-size: .92rem; }
dl.facts dt { color: var(--muted); }
dl.facts dd { margin: 0; overflow-wrap: anywhere; }
pre { background: var(--band); padding: .55rem .7rem; overflow-x: auto;
  white-space: pre-wrap; overflow-wrap: anywhere; font-size: .85rem; }
figure { margin: .8rem 0 1.2rem; }
figure svg { display: block; width: 100%; height: auto; }
figcaption { color: var(--muted); font-size: .85rem; margin-top: .25rem; }
.note { border-left: 4px solid var(--note); padding-left: .6rem; }
.caution { border-left: 4px solid var(--caution); padding-left: .6rem; }
footer { margin-top: 2.5rem; color: var(--muted); font-size: .82rem;
  border-top: 1px solid var(--rule); padding-top: .6rem; }
@media print {
  body { max-width: none; padding: 0; font-size: 10.5pt; }
  nav { display: none; }
  h2 { break-after: avoid; }
  figure, table, dl.facts, pre { break-inside: avoid; }
  a { color: inherit; }
}
@page { size: A4; margin: 16mm 14mm; }
"""

# Nothing may be fetched: the policy blocks every request a browser could make.
_CSP = "default-src 'none'; style-src 'unsafe-inline'; img-src data:"

_ID = re.compile(r'\bid="([^"]+)"')
_URL = re.compile(r"url\(#([^)]+)\)")
_HREF = re.compile(r'((?:xlink:)?href)="#([^"]+)"')
_HEAD = re.compile(r"^.*?(?=<svg\b)", re.DOTALL)
_SIZE = re.compile(r'(<svg\b[^>]*?)\s(width|height)="([^"]*)"')


def _e(text: str) -> str:
    return html.escape(text, quote=True)


def inline_svg(svg: str, prefix: str) -> str:
    """The SVG for inlining in HTML: no XML prologue, ids prefixed, width from CSS."""
    out = _HEAD.sub("", svg, count=1)
    out = _ID.sub(lambda m: f'id="{prefix}-{m.group(1)}"', out)
    out = _URL.sub(lambda m: f"url(#{prefix}-{m.group(1)})", out)
    out = _HREF.sub(lambda m: f'{m.group(1)}="#{prefix}-{m.group(2)}"', out)
    sizes: dict[str, str] = {}

    def drop(m: re.Match[str]) -> str:
        sizes[m.group(2)] = m.group(3)
        return m.group(1)

    for _ in range(2):
        out = _SIZE.sub(drop, out, count=1)
    if "width" in sizes:
        # As wide as drawn at most, narrower on a small screen or page.
        out = out.replace("<svg", f'<svg style="max-width: {sizes["width"]}"', 1)
    return out.strip()


def _html_block(block: Block) -> str:
    if isinstance(block, Text):
        cls = f' class="{block.kind}"' if block.kind else ""
        return f"<p{cls}>{_e(block.text)}</p>"
    if isinstance(block, Bullets):
        cls = f' class="{block.kind}"' if block.kind else ""
        items = "".join(f"<li>{_e(t)}</li>" for t in block.items)
        return f"<ul{cls}>{items}</ul>"
    if isinstance(block, Table):
        num = block.numeric or tuple(False for _ in block.columns)
        cap = f"<caption>{_e(block.caption)}</caption>" if block.caption else ""

        def cell(tag: str, text: str, is_num: bool) -> str:
            cls = ' class="num"' if is_num else ""
            return f"<{tag}{cls}>{_e(text)}</{tag}>"

        head = "".join(
            cell("th", c, n) for c, n in zip(block.columns, num, strict=True)
        )
        links = block.links or tuple("" for _ in block.rows)
        body = "".join(
            "<tr>"
            + "".join(cell("td", v, n) for v, n in zip(row[:-1], num, strict=False))
            + (
                f'<td><a href="#{_e(link)}">{_e(row[-1])}</a></td>'
                if link
                else cell("td", row[-1], num[len(row) - 1])
            )
            + "</tr>"
            for row, link in zip(block.rows, links, strict=True)
        )
        return (
            f"<table>{cap}<thead><tr>{head}</tr></thead><tbody>{body}</tbody></table>"
        )
    if isinstance(block, Facts):
        items = "".join(f"<dt>{_e(k)}</dt><dd>{_e(v)}</dd>" for k, v in block.pairs)
        return f'<dl class="facts">{items}</dl>'
    if isinstance(block, Code):
        return f"<pre><code>{_e(block.text)}</code></pre>"
    if isinstance(block, Subheading):
        return f"<h3>{_e(block.text)}</h3>"
    return (
        f'<figure id="fig-{_e(block.key)}" role="group" aria-label="{_e(block.alt)}">'
        f"{inline_svg(block.svg, block.key)}"
        f"<figcaption>{_e(block.caption)}</figcaption></figure>"
    )


def render_html(doc: Document) -> str:
    """The report as one self-contained HTML page (inline CSS and SVG, no scripts)."""
    toc = "".join(
        f'<li><a href="#{_e(s.key)}">{_e(s.title)}</a></li>' for s in doc.sections
    )
    parts = [
        "<!DOCTYPE html>",
        '<html lang="en">',
        "<head>",
        '<meta charset="utf-8">',
        f'<meta http-equiv="Content-Security-Policy" content="{_CSP}">',
        '<meta name="viewport" content="width=device-width, initial-scale=1">',
        f"<title>{_e(doc.title)}</title>",
        f"<style>{_CSS.strip()}</style>",
        "</head>",
        "<body>",
        f"<header><h1>{_e(doc.title)}</h1>",
        f'<p class="subtitle">{_e(doc.subtitle)}</p>',
        f'<nav aria-label="contents"><ol>{toc}</ol></nav></header>',
        "<main>",
    ]
    for s in doc.sections:
        body = "\n".join(_html_block(b) for b in s.blocks)
        parts.append(
            f'<section id="{_e(s.key)}">\n<h2>{_e(s.title)}</h2>\n{body}\n</section>'
        )
    parts.append("</main>")
    if doc.footer:
        parts.append(f"<footer>{_e(doc.footer)}</footer>")
    parts += ["</body>", "</html>", ""]
    return "\n".join(parts)


# ------------------------------------------------------------ Markdown

_MD_SPECIAL = re.compile(r"([\\`*_\[\]<>|#])")


def _m(text: str) -> str:
    """Plain text made literal in Markdown (one line)."""
    return _MD_SPECIAL.sub(r"\\\1", " ".join(text.split()))


def _md_table(
    columns: Sequence[str],
    rows: Sequence[Sequence[str]],
    numeric: Sequence[bool],
    links: Sequence[str] = (),
) -> str:
    num = list(numeric) or [False] * len(columns)
    head = "| " + " | ".join(_m(c) for c in columns) + " |"
    rule = "| " + " | ".join("---:" if n else "---" for n in num) + " |"
    body = []
    for i, row in enumerate(rows):
        cells = [_m(v) or " " for v in row]
        if i < len(links) and links[i]:
            cells[-1] = f"[{cells[-1]}](#{links[i]})"
        body.append("| " + " | ".join(cells) + " |")
    return "\n".join([head, rule, *body])


def _md_block(block: Block, files_dir: str) -> str:
    if isinstance(block, Text):
        prefix = {"note": "**Note:** ", "caution": "**Caution:** "}.get(block.kind, "")
        return prefix + _m(block.text)
    if isinstance(block, Bullets):
        return "\n".join(f"- {_m(t)}" for t in block.items)
    if isinstance(block, Table):
        cap = f"*{_m(block.caption)}*\n\n" if block.caption else ""
        return cap + _md_table(block.columns, block.rows, block.numeric, block.links)
    if isinstance(block, Facts):
        return _md_table(("item", "value"), block.pairs, (False, False))
    if isinstance(block, Code):
        fence = "````" if "```" in block.text else "```"
        return f"{fence}text\n{block.text}\n{fence}"
    if isinstance(block, Subheading):
        return f"### {_m(block.text)}"
    return f"![{_m(block.alt)}]({files_dir}/{block.key}.svg)\n\n*{_m(block.caption)}*"


def render_markdown(doc: Document, files_dir: str) -> tuple[str, dict[str, str]]:
    """The report as Markdown, and the SVG files it links (name -> SVG text).

    Parameters
    ----------
    doc : Document
        The report.
    files_dir : str
        Folder, relative to the Markdown file, that will hold the SVG files.

    Returns
    -------
    tuple of (str, dict of str to str)
        The Markdown text and ``{file name: SVG text}`` for every plot.
    """
    files: dict[str, str] = {}
    lines = [f"# {_m(doc.title)}", "", f"*{_m(doc.subtitle)}*", "", "Contents:", ""]
    lines += [f"{i}. [{_m(s.title)}](#{s.key})" for i, s in enumerate(doc.sections, 1)]
    for s in doc.sections:
        lines += ["", f'<a id="{s.key}"></a>', "", f"## {_m(s.title)}"]
        for b in s.blocks:
            lines += ["", _md_block(b, files_dir)]
            if isinstance(b, Figure):
                files[f"{b.key}.svg"] = b.svg
    if doc.footer:
        lines += ["", "---", "", _m(doc.footer)]
    return "\n".join(lines) + "\n", files
