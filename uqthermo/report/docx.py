"""report.docx: the report as a Word document, converted from the rendered HTML report.

The Word file holds what the HTML holds — the same headings, paragraphs, real tables and
the embedded figures (the PNGs) — because it is built from the HTML page itself: the page
is parsed (standard-library :mod:`html.parser`; our own, escaped markup) and each element
is written with python-docx using Word's built-in styles ("Title", "Heading 1"…"Heading 5",
"Caption", "List Bullet", "Table Grid"), so the text pastes into a company template and
takes its styles there. Tables get a repeated header row, right-aligned number columns and
their caption above; figures their caption below. The document-control block also goes
into the page header (reference, revision) and the core properties (title, author =
prepared by, identifier = reference, version = revision, comments = the case's sha256).

python-docx is an optional dependency (``pip install 'uqthermo[docx]'``):
:func:`available` says whether it is installed; :func:`html_to_docx` raises
:class:`ImportError` otherwise.
"""

from __future__ import annotations

import base64
import datetime as _dt
import io
import re
from collections.abc import Mapping
from dataclasses import dataclass, field
from html.parser import HTMLParser
from typing import Any

INSTALL_HINT = "pip install 'uqthermo[docx]' (python-docx)"

#: page: A4, 2 cm margins; figures fill the text width
PAGE_W_CM, PAGE_H_CM, MARGIN_CM = 21.0, 29.7, 2.0


def available() -> bool:
    try:
        import docx  # noqa: F401
    except ImportError:
        return False
    return True


# ---------------------------------------------------------------------------
# a small DOM of our own HTML
# ---------------------------------------------------------------------------

_VOID = {"meta", "link", "img", "br", "wbr", "hr", "input"}


@dataclass
class Node:
    tag: str
    attrs: dict[str, str] = field(default_factory=dict)
    children: list[Any] = field(default_factory=list)   # Node or str

    def cls(self) -> set[str]:
        return set((self.attrs.get("class") or "").split())

    def find_all(self, tag: str) -> list["Node"]:
        out = []
        for c in self.children:
            if isinstance(c, Node):
                if c.tag == tag:
                    out.append(c)
                out += c.find_all(tag)
        return out

    def text(self) -> str:
        return "".join(c if isinstance(c, str) else c.text() for c in self.children)


class _Builder(HTMLParser):
    def __init__(self) -> None:
        super().__init__(convert_charrefs=True)
        self.root = Node("root")
        self.stack = [self.root]

    def handle_starttag(self, tag, attrs):
        node = Node(tag, {k: v or "" for k, v in attrs})
        self.stack[-1].children.append(node)
        if tag not in _VOID:
            self.stack.append(node)

    def handle_endtag(self, tag):
        for i in range(len(self.stack) - 1, 0, -1):
            if self.stack[i].tag == tag:
                del self.stack[i:]
                return

    def handle_data(self, data):
        self.stack[-1].children.append(data)


def parse_html(page: str) -> Node:
    b = _Builder()
    b.feed(page)
    b.close()
    return b.root


# ---------------------------------------------------------------------------
# writing
# ---------------------------------------------------------------------------

@dataclass
class _Fmt:
    bold: bool = False
    italic: bool = False
    mono: bool = False
    sub: bool = False
    sup: bool = False
    small: bool = False
    grey: bool = False


def _squash(s: str) -> str:
    return re.sub(r"\s+", " ", s)


class _Writer:
    def __init__(self, doc) -> None:
        from docx.shared import Cm, Pt, RGBColor

        self.doc = doc
        self.Cm, self.Pt, self.RGB = Cm, Pt, RGBColor
        self.figures = 0
        self.tables = 0

    # -- inline ------------------------------------------------------------
    def runs(self, par, node: Any, fmt: _Fmt) -> None:
        if isinstance(node, str):
            t = _squash(node)
            if not t:
                return
            r = par.add_run(t)
            r.bold = fmt.bold or None
            r.italic = fmt.italic or None
            if fmt.mono:
                r.font.name = "Consolas"
            if fmt.sub:
                r.font.subscript = True
            if fmt.sup:
                r.font.superscript = True
            if fmt.small:
                r.font.size = self.Pt(8.5)
            if fmt.grey:
                r.font.color.rgb = self.RGB(0x59, 0x63, 0x6E)
            return
        tag = node.tag
        if tag in ("wbr", "script", "style"):
            return
        if tag == "br":
            par.add_run().add_break()
            return
        f = _Fmt(**fmt.__dict__)
        if tag in ("b", "strong"):
            f.bold = True
        elif tag == "i":
            f.italic = True
        elif tag == "code":
            f.mono = True
        elif tag == "sub":
            f.sub = True
        elif tag == "sup":
            f.sup = True
        if "badge" in node.cls():
            par.add_run(" [")
            for c in node.children:
                self.runs(par, c, _Fmt(italic=True, small=True))
            par.add_run("]")
            return
        for c in node.children:
            self.runs(par, c, f)

    def paragraph(self, node: Node, style: str | None = None, fmt: _Fmt | None = None):
        p = self.doc.add_paragraph(style=style)
        for c in node.children:
            self.runs(p, c, fmt or _Fmt())
        return p

    # -- blocks ------------------------------------------------------------
    def block(self, node: Any) -> None:
        if isinstance(node, str):
            if node.strip():
                p = self.doc.add_paragraph()
                self.runs(p, node, _Fmt())
            return
        tag, cls = node.tag, node.cls()
        if tag in ("head", "style", "script", "nav", "title", "meta", "link"):
            return
        if tag == "h1":
            p = self.doc.add_paragraph(style="Title")
            self.runs(p, Node("x", children=node.children), _Fmt())
            return
        if tag in ("h2", "h3", "h4", "h5"):
            level = {"h2": 1, "h3": 2, "h4": 3, "h5": 4}[tag]
            h = self.doc.add_heading(level=level)
            for c in node.children:
                self.runs(h, c, _Fmt())
            return
        if tag == "p":
            if "stmt" in cls:
                self.paragraph(node, fmt=_Fmt(bold=True))
            elif "detail" in cls or "small" in cls or "table-note" in cls:
                self.paragraph(node, fmt=_Fmt(small=True, grey=True, italic="table-note" in cls))
            else:
                self.paragraph(node)
            return
        if tag in ("ul", "ol"):
            style = "List Bullet" if tag == "ul" else "List Number"
            for li in node.children:
                if isinstance(li, Node) and li.tag == "li":
                    inner = [c for c in li.children if not (isinstance(c, Node) and c.tag in ("ul", "ol"))]
                    p = self.doc.add_paragraph(style=style)
                    for c in inner:
                        self.runs(p, c, _Fmt())
                    for c in li.children:
                        if isinstance(c, Node) and c.tag in ("ul", "ol"):
                            self.block(c)
            return
        if tag == "table":
            self.table(node)
            return
        if tag == "figure":
            self.figure(node)
            return
        if tag == "dl":
            self.deflist(node)
            return
        if tag == "div" and ("callout" in cls or "formula" in cls):
            self.callout(node, "crit" in cls, "formula" in cls)
            return
        if tag == "div" and "kicker" in cls:
            self.paragraph(node, fmt=_Fmt(small=True, grey=True, bold=True))
            return
        if tag == "div" and ("muted" in cls or "small" in cls):
            self.paragraph(node, fmt=_Fmt(small=True, grey=True))
            return
        if tag == "footer":
            self.paragraph(node, fmt=_Fmt(small=True, grey=True))
            return
        # containers: html, body, main, header, section, div …
        inline_only = all(isinstance(c, str) or c.tag in ("b", "strong", "i", "code", "span", "sub", "sup", "wbr", "br", "a")
                          for c in node.children)
        if tag == "div" and inline_only and node.text().strip():
            self.paragraph(node)
            return
        for c in node.children:
            self.block(c)

    def callout(self, node: Node, critical: bool, formula: bool) -> None:
        t = self.doc.add_table(rows=1, cols=1)
        t.style = self.doc.styles["Table Grid"]
        cell = t.rows[0].cells[0]
        _shade(cell, "F6F8FA" if formula else ("FFEBE9" if critical else "FFF8C5"))
        first = cell.paragraphs[0]
        used = False
        for c in node.children:
            if isinstance(c, Node) and c.tag in ("ul", "ol"):
                for li in c.children:
                    if isinstance(li, Node) and li.tag == "li":
                        p = first if not used else cell.add_paragraph()
                        used = True
                        p.add_run("• ")
                        for cc in li.children:
                            self.runs(p, cc, _Fmt())
            elif isinstance(c, str) and not c.strip():
                continue
            else:
                p = first if not used else cell.add_paragraph()
                used = True
                self.runs(p, c, _Fmt(mono=formula))
        self.doc.add_paragraph()

    def deflist(self, node: Node) -> None:
        pairs, dt = [], None
        for c in node.children:
            if isinstance(c, Node) and c.tag == "dt":
                dt = c
            elif isinstance(c, Node) and c.tag == "dd":
                pairs.append((dt, c))
                dt = None
        if not pairs:
            return
        t = self.doc.add_table(rows=0, cols=2)
        t.style = self.doc.styles["Table Grid"]
        for a, b in pairs:
            row = t.add_row().cells
            p = row[0].paragraphs[0]
            if a is not None:
                for c in a.children:
                    self.runs(p, c, _Fmt(bold=True, small=True))
            p = row[1].paragraphs[0]
            for c in b.children:
                self.runs(p, c, _Fmt(small=True))
        self.doc.add_paragraph()

    def table(self, node: Node) -> None:
        from docx.enum.table import WD_TABLE_ALIGNMENT
        from docx.enum.text import WD_ALIGN_PARAGRAPH
        from docx.oxml import OxmlElement
        from docx.oxml.ns import qn

        caption = next((c for c in node.children if isinstance(c, Node) and c.tag == "caption"), None)
        rows = [tr for tr in node.find_all("tr")]
        if not rows:
            return
        if caption is not None:
            p = self.doc.add_paragraph(style="Caption")
            for c in caption.children:
                self.runs(p, c, _Fmt())
            p.paragraph_format.keep_with_next = True
        grid = [[c for c in tr.children if isinstance(c, Node) and c.tag in ("td", "th")] for tr in rows]
        ncols = max(len(r) for r in grid)
        t = self.doc.add_table(rows=0, cols=ncols)
        t.style = self.doc.styles["Table Grid"]
        t.alignment = WD_TABLE_ALIGNMENT.LEFT
        size = self.Pt(7.5 if ncols >= 8 else (8.5 if ncols >= 5 else 9.5))
        head_rows = {id(tr) for th in node.find_all("thead") for tr in th.find_all("tr")}
        widths = _column_widths(grid, ncols, PAGE_W_CM - 2 * MARGIN_CM)
        t.autofit = False
        for j, col in enumerate(t.columns):       # the grid (LibreOffice) and each cell (Word) carry the width
            col.width = self.Cm(widths[j])
        for tr, cells in zip(rows, grid):
            row = t.add_row()
            header = id(tr) in head_rows
            if header:
                trPr = row._tr.get_or_add_trPr()
                el = OxmlElement("w:tblHeader")
                el.set(qn("w:val"), "true")
                trPr.append(el)
            for j in range(ncols):
                row.cells[j].width = self.Cm(widths[j])
            if header:
                for j in range(ncols):
                    _shade(row.cells[j], "EEF1F4")
            for j, c in enumerate(cells[:ncols]):
                p = row.cells[j].paragraphs[0]
                for cc in c.children:
                    self.runs(p, cc, _Fmt(bold=header or c.tag == "th"))
                for r in p.runs:
                    r.font.size = size
                if "r" in c.cls():
                    p.alignment = WD_ALIGN_PARAGRAPH.RIGHT
        self.tables += 1
        self.doc.add_paragraph()

    def figure(self, node: Node) -> None:
        from docx.enum.text import WD_ALIGN_PARAGRAPH

        img = next(iter(node.find_all("img")), None)
        if img is None:
            return
        src = img.attrs.get("src", "")
        m = re.match(r"data:image/png;base64,(.*)$", src, re.S)
        if not m:
            return
        data = base64.b64decode(m.group(1))
        self.doc.add_picture(io.BytesIO(data), width=self.Cm(PAGE_W_CM - 2 * MARGIN_CM))
        self.doc.paragraphs[-1].alignment = WD_ALIGN_PARAGRAPH.CENTER
        self.doc.paragraphs[-1].paragraph_format.keep_with_next = True
        cap = next(iter(node.find_all("figcaption")), None)
        if cap is not None:
            p = self.doc.add_paragraph(style="Caption")
            for c in cap.children:
                self.runs(p, c, _Fmt())
        self.figures += 1


def _column_widths(grid: list[list[Node]], ncols: int, total_cm: float) -> list[float]:
    """Column widths (cm) in proportion to their longest cell text (capped), at least 1.4 cm each."""
    need = [4.0] * ncols
    for row in grid:
        for j, c in enumerate(row[:ncols]):
            n = len(_squash(c.text()).strip())
            need[j] = max(need[j], min(float(n), 34.0))
    floor = min(1.4, total_cm / ncols)
    scale = (total_cm - floor * ncols) / sum(need) if sum(need) else 0.0
    return [floor + scale * x for x in need]


def _shade(cell, fill: str) -> None:
    from docx.oxml import OxmlElement
    from docx.oxml.ns import qn

    shd = OxmlElement("w:shd")
    shd.set(qn("w:val"), "clear")
    shd.set(qn("w:color"), "auto")
    shd.set(qn("w:fill"), fill)
    cell._tc.get_or_add_tcPr().append(shd)


def _date(text: str) -> _dt.datetime | None:
    try:
        d = _dt.datetime.fromisoformat(text)
    except (TypeError, ValueError):
        return None
    return d if d.tzinfo else d.replace(tzinfo=_dt.timezone.utc)


def html_to_docx(page: str, results: Mapping | None = None) -> bytes:
    """The rendered HTML report (``render_html``) as a .docx file (bytes)."""
    import docx
    from docx.shared import Cm, Pt

    results = results or {}
    doc = docx.Document()
    sec = doc.sections[0]
    sec.page_width, sec.page_height = Cm(PAGE_W_CM), Cm(PAGE_H_CM)
    for side in ("left_margin", "right_margin", "top_margin", "bottom_margin"):
        setattr(sec, side, Cm(MARGIN_CM))
    normal = doc.styles["Normal"]
    normal.font.name = "Calibri"
    normal.font.size = Pt(10)
    document = results.get("document") if isinstance(results.get("document"), Mapping) else {}
    case = results.get("case") or {}
    run = results.get("run") or {}
    title = str(case.get("title") or "Uncertainty report")
    cp = doc.core_properties
    cp.title = title[:250]
    cp.subject = "Uncertainty and sensitivity section"
    cp.keywords = "uqthermo; GUM; JCGM 101; Kirchhoff"
    cp.author = str(document.get("prepared_by") or "uqthermo")[:250]
    cp.last_modified_by = str(document.get("checked_by") or cp.author)[:250]
    cp.identifier = str(document.get("reference") or "")[:250]
    cp.version = str(document.get("revision") or "")[:250]
    cp.comments = f"case sha256 {case.get('sha256', '')}; uqthermo {run.get('version', '')}"[:250]
    when = _date(str(run.get("date") or ""))
    if when is not None:
        cp.created = cp.modified = when
    short = title if len(title) <= 90 else title[:89].rstrip() + "…"
    head = " · ".join(x for x in (str(document.get("reference") or ""),
                                  f"rev. {document['revision']}" if document.get("revision") else "", short) if x)
    sec.header.paragraphs[0].text = head
    for r in sec.header.paragraphs[0].runs:
        r.font.size = Pt(8)
    w = _Writer(doc)
    root = parse_html(page)
    body = next(iter(root.find_all("main")), None) or next(iter(root.find_all("body")), None) or root
    for c in body.children:
        w.block(c)
    out = io.BytesIO()
    doc.save(out)
    return out.getvalue()


__all__ = ["html_to_docx", "available", "parse_html", "INSTALL_HINT"]
