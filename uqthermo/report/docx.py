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
    size: float | None = None      # points


def _squash(s: str) -> str:
    return re.sub(r"\s+", " ", s)


W_NS = "http://schemas.openxmlformats.org/wordprocessingml/2006/main"
TWIPS_PER_CM = 566.93


def _esc(t: str) -> str:
    return t.replace("&", "&amp;").replace("<", "&lt;").replace(">", "&gt;")


def _attr(t: str) -> str:
    return _esc(t).replace('"', "&quot;")


class _Writer:
    """Writes the body as WordprocessingML text, parsed in one go (python-docx's per-element API is
    slow for a few thousand table cells); pictures go through python-docx (they need image parts)."""

    def __init__(self, doc) -> None:
        from docx.shared import Cm

        self.doc = doc
        self.Cm = Cm
        self.figures = 0
        self.tables = 0
        self.buf: list[str] = []
        self._style_ids: dict[str, str] = {}

    # -- plumbing ------------------------------------------------------------
    def style_id(self, name: str) -> str:
        sid = self._style_ids.get(name)
        if sid is None:
            sid = self._style_ids[name] = self.doc.styles[name].style_id
        return sid

    def flush(self) -> None:
        """Parse the buffered XML and put it at the end of the body (before the section properties)."""
        if not self.buf:
            return
        from docx.oxml import parse_xml

        body = parse_xml(f'<w:body xmlns:w="{W_NS}">' + "".join(self.buf) + "</w:body>")
        anchor = self.doc.element.body.sectPr
        for el in list(body):
            if anchor is not None:
                anchor.addprevious(el)
            else:
                self.doc.element.body.append(el)
        self.buf.clear()

    # -- inline ------------------------------------------------------------
    def runs(self, node: Any, fmt: _Fmt) -> str:
        if isinstance(node, str):
            t = _squash(node)
            if not t:
                return ""
            pr = []
            if fmt.mono:
                pr.append('<w:rFonts w:ascii="Consolas" w:hAnsi="Consolas" w:cs="Consolas"/>')
            if fmt.bold:
                pr.append("<w:b/>")
            if fmt.italic:
                pr.append("<w:i/>")
            if fmt.grey:
                pr.append('<w:color w:val="59636E"/>')
            if fmt.size:
                pr.append(f'<w:sz w:val="{int(round(2 * fmt.size))}"/><w:szCs w:val="{int(round(2 * fmt.size))}"/>')
            elif fmt.small:
                pr.append('<w:sz w:val="17"/><w:szCs w:val="17"/>')
            if fmt.sub or fmt.sup:
                pr.append(f'<w:vertAlign w:val="{"subscript" if fmt.sub else "superscript"}"/>')
            rpr = f"<w:rPr>{''.join(pr)}</w:rPr>" if pr else ""
            return f'<w:r>{rpr}<w:t xml:space="preserve">{_esc(t)}</w:t></w:r>'
        tag = node.tag
        if tag in ("wbr", "script", "style"):
            return ""
        if tag == "br":
            return "<w:r><w:br/></w:r>"
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
            inner = "".join(self.runs(c, _Fmt(italic=True, small=True)) for c in node.children)
            return self.runs(" [", fmt) + inner + self.runs("]", fmt)
        return "".join(self.runs(c, f) for c in node.children)

    def p_xml(self, runs: str, style: str | None = None, align: str | None = None, keep_next: bool = False) -> str:
        ppr = ""
        if style:
            ppr += f'<w:pStyle w:val="{_attr(self.style_id(style))}"/>'
        if keep_next:
            ppr += "<w:keepNext/>"
        if align:
            ppr += f'<w:jc w:val="{align}"/>'
        return f"<w:p>{'<w:pPr>' + ppr + '</w:pPr>' if ppr else ''}{runs}</w:p>"

    def paragraph(self, node: Node, style: str | None = None, fmt: _Fmt | None = None) -> None:
        self.buf.append(self.p_xml("".join(self.runs(c, fmt or _Fmt()) for c in node.children), style))

    # -- blocks ------------------------------------------------------------
    def block(self, node: Any) -> None:
        if isinstance(node, str):
            if node.strip():
                self.buf.append(self.p_xml(self.runs(node, _Fmt())))
            return
        tag, cls = node.tag, node.cls()
        if tag in ("head", "style", "script", "nav", "title", "meta", "link"):
            return
        if tag == "h1":
            self.paragraph(node, "Title")
            return
        if tag in ("h2", "h3", "h4", "h5"):
            self.paragraph(node, f"Heading {int(tag[1]) - 1}")
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
                    self.buf.append(self.p_xml("".join(self.runs(c, _Fmt()) for c in inner), style))
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

    def table_xml(self, rows: list[list[str]], widths_cm: list[float], header_rows: int = 0,
                  fills: list[str | None] | None = None) -> str:
        """A Table Grid table; ``rows`` hold each cell's paragraph XML."""
        grid = "".join(f'<w:gridCol w:w="{int(w * TWIPS_PER_CM)}"/>' for w in widths_cm)
        out = [f'<w:tbl><w:tblPr><w:tblStyle w:val="{_attr(self.style_id("Table Grid"))}"/><w:tblW w:w="0" w:type="auto"/>'
               f'<w:tblLayout w:type="fixed"/><w:tblLook w:val="04A0" w:firstRow="1" w:lastRow="0" w:firstColumn="1" '
               f'w:lastColumn="0" w:noHBand="0" w:noVBand="1"/></w:tblPr><w:tblGrid>{grid}</w:tblGrid>']
        for i, row in enumerate(rows):
            trpr = "<w:trPr><w:tblHeader/></w:trPr>" if i < header_rows else ""
            out.append(f"<w:tr>{trpr}")
            fill = (fills[i] if fills else None) or ("EEF1F4" if i < header_rows else None)
            for j, cell in enumerate(row):
                shd = f'<w:shd w:val="clear" w:color="auto" w:fill="{fill}"/>' if fill else ""
                w = widths_cm[j] if j < len(widths_cm) else widths_cm[-1]
                out.append(f'<w:tc><w:tcPr><w:tcW w:w="{int(w * TWIPS_PER_CM)}" w:type="dxa"/>{shd}</w:tcPr>'
                           f"{cell or '<w:p/>'}</w:tc>")
            out.append("</w:tr>")
        out.append("</w:tbl>")
        return "".join(out)

    def callout(self, node: Node, critical: bool, formula: bool) -> None:
        paras, inline = [], []

        def close() -> None:            # consecutive inline content is one paragraph
            text = "".join(inline)
            if text:
                paras.append(self.p_xml(text))
            inline.clear()

        for c in node.children:
            if isinstance(c, Node) and c.tag in ("ul", "ol"):
                close()
                for li in c.children:
                    if isinstance(li, Node) and li.tag == "li":
                        paras.append(self.p_xml(self.runs("• ", _Fmt()) + "".join(self.runs(cc, _Fmt()) for cc in li.children)))
            elif isinstance(c, Node) and c.tag in ("p", "div"):
                close()
                paras.append(self.p_xml("".join(self.runs(cc, _Fmt()) for cc in c.children)))
            else:
                inline.append(self.runs(c, _Fmt()))
        close()
        fill = "F6F8FA" if formula else ("FFEBE9" if critical else "FFF8C5")
        self.buf.append(self.table_xml([["".join(paras)]], [PAGE_W_CM - 2 * MARGIN_CM], fills=[fill]))
        self.buf.append("<w:p/>")

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
        rows = [[self.p_xml("".join(self.runs(c, _Fmt(bold=True, small=True)) for c in (a.children if a else []))),
                 self.p_xml("".join(self.runs(c, _Fmt(small=True)) for c in b.children))] for a, b in pairs]
        total = PAGE_W_CM - 2 * MARGIN_CM
        self.buf.append(self.table_xml(rows, [0.35 * total, 0.65 * total]))
        self.buf.append("<w:p/>")

    def table(self, node: Node) -> None:
        caption = next((c for c in node.children if isinstance(c, Node) and c.tag == "caption"), None)
        trs = node.find_all("tr")
        if not trs:
            return
        if caption is not None:
            self.buf.append(self.p_xml("".join(self.runs(c, _Fmt()) for c in caption.children), "Caption", keep_next=True))
        grid = [[c for c in tr.children if isinstance(c, Node) and c.tag in ("td", "th")] for tr in trs]
        ncols = max(len(r) for r in grid)
        size = 7.5 if ncols >= 8 else (8.5 if ncols >= 5 else 9.5)
        head = {id(tr) for th in node.find_all("thead") for tr in th.find_all("tr")}
        n_head = sum(1 for tr in trs if id(tr) in head)
        rows = []
        for tr, cells in zip(trs, grid):
            header = id(tr) in head
            row = []
            for c in cells[:ncols]:
                runs = "".join(self.runs(cc, _Fmt(bold=header or c.tag == "th", size=size)) for cc in c.children)
                row.append(self.p_xml(runs, align="right" if "r" in c.cls() else None))
            row += ["<w:p/>"] * (ncols - len(row))
            rows.append(row)
        order = [r for tr, r in zip(trs, rows) if id(tr) in head] + [r for tr, r in zip(trs, rows) if id(tr) not in head]
        self.buf.append(self.table_xml(order, _column_widths(grid, ncols, PAGE_W_CM - 2 * MARGIN_CM), header_rows=n_head))
        self.buf.append("<w:p/>")
        self.tables += 1

    def figure(self, node: Node) -> None:
        from docx.enum.text import WD_ALIGN_PARAGRAPH

        img = next(iter(node.find_all("img")), None)
        if img is None:
            return
        m = re.match(r"data:image/png;base64,(.*)$", img.attrs.get("src", ""), re.S)
        if not m:
            return
        self.flush()
        self.doc.add_picture(io.BytesIO(base64.b64decode(m.group(1))), width=self.Cm(PAGE_W_CM - 2 * MARGIN_CM))
        last = self.doc.paragraphs[-1]
        last.alignment = WD_ALIGN_PARAGRAPH.CENTER
        last.paragraph_format.keep_with_next = True
        cap = next(iter(node.find_all("figcaption")), None)
        if cap is not None:
            self.buf.append(self.p_xml("".join(self.runs(c, _Fmt()) for c in cap.children), "Caption"))
        self.figures += 1


def _column_widths(grid: list[list[Node]], ncols: int, total_cm: float) -> list[float]:
    """Column widths (cm) in proportion to their longest cell text (capped), at least 1.4 cm each."""
    need = [4.0] * ncols
    for row in grid:
        for j, c in enumerate(row[:ncols]):
            n = len(_squash(c.text()).strip())
            cap = 12.0 if c.tag == "th" else 34.0          # header words wrap; data cells (ids, numbers) should not
            need[j] = max(need[j], min(float(n), cap))
    floor = min(1.4, total_cm / ncols)
    scale = (total_cm - floor * ncols) / sum(need) if sum(need) else 0.0
    return [floor + scale * x for x in need]


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
    w.flush()
    out = io.BytesIO()
    doc.save(out)
    return _fixed_zip(out.getvalue())


def _fixed_zip(data: bytes) -> bytes:
    """The same .docx with fixed member timestamps, so the same results give the same bytes."""
    import zipfile

    src = zipfile.ZipFile(io.BytesIO(data))
    out = io.BytesIO()
    with zipfile.ZipFile(out, "w", zipfile.ZIP_DEFLATED) as dst:
        for info in src.infolist():
            zi = zipfile.ZipInfo(info.filename, date_time=(1980, 1, 1, 0, 0, 0))
            zi.compress_type = zipfile.ZIP_DEFLATED
            zi.external_attr = 0o644 << 16
            dst.writestr(zi, src.read(info.filename))
    return out.getvalue()


__all__ = ["html_to_docx", "available", "parse_html", "INSTALL_HINT"]
