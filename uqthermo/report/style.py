"""Visual style of the report: colour palette, matplotlib settings, report CSS.

The palette is the eight-colour set of Okabe & Ito, *Color Universal Design* (2008),
which stays distinguishable under the common forms of colour-vision deficiency.
Every figure is drawn inside :func:`figure_style` so that the global matplotlib state
of the caller (e.g. a notebook) is left untouched.

User-supplied text (titles, datum ids, species names) goes through :func:`mpl_text`
before it reaches matplotlib: a ``$`` would otherwise switch on mathtext parsing.
"""

from __future__ import annotations

import contextlib
from collections.abc import Iterator

import matplotlib

matplotlib.use("Agg", force=False)  # no display; the report layer only writes files

import matplotlib.pyplot as plt  # noqa: E402

# Okabe & Ito (2008) palette, in the order the figures use it.
PALETTE: dict[str, str] = {
    "blue": "#0072B2",
    "orange": "#E69F00",
    "sky": "#56B4E9",
    "green": "#009E73",
    "vermillion": "#D55E00",
    "purple": "#CC79A7",
    "yellow": "#F0E442",
    "black": "#000000",
}
GREY = "#6E6E6E"
LIGHT_GREY = "#D9D9D9"
INK = "#1F2328"

#: roles → colours, so every figure uses the same colour for the same thing
ROLE = {
    "mc": PALETTE["blue"],           # Monte Carlo results
    "mc_band": "#A6CDE8",            # Monte Carlo coverage band (light blue)
    "linear": PALETTE["vermillion"],  # GUM linear results
    "phase": PALETTE["green"],        # phase changes
    "limit": PALETTE["purple"],       # limits / targets
    "driver": PALETTE["blue"],
    "correlation": PALETTE["orange"],
    "front": PALETTE["blue"],
    "best": PALETTE["vermillion"],
    "other": LIGHT_GREY,
}

FIG_WIDTH_IN = 7.2  # fits an A4 page between 18 mm margins at 100 %
PNG_DPI = 160
#: zlib level of the PNGs: 1 encodes several times faster than the default 6 for files ~15 % larger
PNG_COMPRESS_LEVEL = 1

_RC = {
    "font.family": "DejaVu Sans",
    "font.size": 9.5,
    "axes.titlesize": 10.5,
    "axes.titleweight": "bold",
    "axes.titlelocation": "left",
    "axes.labelsize": 9.5,
    "axes.labelcolor": INK,
    "axes.edgecolor": "#8C8C8C",
    "axes.linewidth": 0.8,
    "axes.grid": True,
    "axes.axisbelow": True,
    "axes.spines.top": False,
    "axes.spines.right": False,
    "axes.prop_cycle": matplotlib.cycler(color=list(PALETTE.values())),
    "grid.color": "#E6E6E6",
    "grid.linewidth": 0.7,
    "xtick.color": "#4D4D4D",
    "ytick.color": "#4D4D4D",
    "xtick.labelsize": 8.5,
    "ytick.labelsize": 8.5,
    "legend.fontsize": 8.5,
    "legend.frameon": True,
    "legend.framealpha": 0.88,
    "legend.facecolor": "white",
    "legend.edgecolor": "none",
    "legend.borderpad": 0.35,
    "figure.dpi": PNG_DPI,     # the layout then measures text with the renderer the PNG reuses (metrics cached)
    "figure.facecolor": "white",
    "savefig.facecolor": "white",
    "savefig.dpi": PNG_DPI,
    "svg.fonttype": "path",  # text as outlines: no font needed, no text nodes in the SVG
    "svg.hashsalt": "uqthermo",  # deterministic SVG ids
    "lines.linewidth": 1.6,
    "axes.formatter.useoffset": False,
    "axes.formatter.limits": (-4, 6),
}


@contextlib.contextmanager
def figure_style() -> Iterator[None]:
    """Apply the report's matplotlib style for the duration of a ``with`` block."""
    with plt.rc_context(_RC):
        yield


def mpl_text(text: object) -> str:
    """Make user text safe for a matplotlib label.

    Escapes ``$`` (mathtext switch) so that e.g. a title ``"cost $ 5"`` is drawn
    literally; newlines are folded so a label cannot break a layout.
    """
    s = "" if text is None else str(text)
    s = s.replace("\r", " ").replace("\n", " ")
    return s.replace("$", r"\$")


# ---------------------------------------------------------------------------
# Report CSS (inlined into report.html; no external resources)
# ---------------------------------------------------------------------------
REPORT_CSS = """
:root {
  --ink: #1f2328; --muted: #59636e; --rule: #d0d7de; --soft: #f6f8fa;
  --accent: #0072B2; --warn: #9a6700; --warn-bg: #fff8c5; --crit: #a40e26; --crit-bg: #ffebe9;
  --ok: #1a7f37; --ok-bg: #dafbe1;
}
* { box-sizing: border-box; }
html { font-size: 15px; }
body {
  margin: 0; color: var(--ink); background: #fff;
  font-family: "Segoe UI", "Helvetica Neue", Arial, "Liberation Sans", "DejaVu Sans", sans-serif;
  line-height: 1.5;
}
main { max-width: 1040px; margin: 0 auto; padding: 28px 36px 60px; }
header.report-head { border-bottom: 3px solid var(--accent); padding-bottom: 14px; margin-bottom: 18px; }
header.report-head .kicker { text-transform: uppercase; letter-spacing: .08em; font-size: .78rem; color: var(--accent); font-weight: 600; }
h1 { font-size: 1.75rem; line-height: 1.25; margin: .2em 0 .3em; }
h2 { font-size: 1.3rem; margin: 2.0em 0 .6em; padding-bottom: .25em; border-bottom: 1px solid var(--rule); }
h3 { font-size: 1.1rem; margin: 1.6em 0 .5em; }
h4 { font-size: .98rem; margin: 1.3em 0 .4em; color: var(--muted); }
p { margin: .5em 0 .8em; }
.lead { font-size: 1.07rem; }
.muted { color: var(--muted); }
.small { font-size: .85rem; }
code, .mono { font-family: "DejaVu Sans Mono", "Consolas", "Liberation Mono", monospace; font-size: .86em; }
code { background: var(--soft); padding: .05em .3em; border-radius: 3px; word-break: break-all; }
nav.toc { background: var(--soft); border: 1px solid var(--rule); border-radius: 6px; padding: 10px 18px; margin: 16px 0; font-size: .9rem; }
nav.toc ol { margin: .3em 0; padding-left: 1.3em; columns: 2; }
nav.toc a { color: var(--accent); text-decoration: none; }
dl.meta { display: grid; grid-template-columns: max-content 1fr; gap: 3px 18px; margin: .6em 0 1em; font-size: .92rem; }
dl.meta dt { color: var(--muted); }
dl.meta dd { margin: 0; word-break: break-word; }
.cards { display: grid; grid-template-columns: repeat(auto-fill, minmax(290px, 1fr)); gap: 12px; margin: 12px 0 18px; }
.card { border: 1px solid var(--rule); border-left: 4px solid var(--accent); border-radius: 6px; padding: 10px 14px; background: #fff; break-inside: avoid; }
.card .name { font-weight: 600; }
.card .value { font-size: 1.25rem; font-variant-numeric: tabular-nums; margin: .15em 0; }
.card .detail { font-size: .84rem; color: var(--muted); }
.badge { display: inline-block; font-size: .75rem; font-weight: 600; padding: .05em .55em; border-radius: 999px; vertical-align: middle; white-space: nowrap; }
.badge.ok { color: var(--ok); background: var(--ok-bg); }
.badge.no { color: var(--crit); background: var(--crit-bg); }
.badge.na { color: var(--muted); background: var(--soft); }
.callout { border-radius: 6px; padding: 10px 14px; margin: 12px 0; border: 1px solid; break-inside: avoid; }
.callout.warn { background: var(--warn-bg); border-color: #d4a72c; }
.callout.crit { background: var(--crit-bg); border-color: #ff8182; }
.callout.info { background: var(--soft); border-color: var(--rule); }
.callout h3, .callout h4 { margin-top: .2em; }
.callout ul { margin: .3em 0; padding-left: 1.3em; }
.table-wrap { overflow-x: auto; margin: .4em 0 1.2em; }
table { border-collapse: collapse; font-size: .86rem; width: auto; min-width: 50%; }
caption { caption-side: top; text-align: left; font-weight: 600; font-size: .9rem; padding: 0 0 6px; color: var(--ink); }
th, td { padding: 4px 10px; border-bottom: 1px solid #e4e8ec; vertical-align: top; }
thead th { border-bottom: 2px solid #8c959f; text-align: left; background: var(--soft); font-weight: 600; white-space: nowrap; }
td.r, th.r { text-align: right; font-variant-numeric: tabular-nums; white-space: nowrap; }
td.c, th.c { text-align: center; }
td.l { white-space: nowrap; }
td.w { min-width: 7em; overflow-wrap: break-word; }
tbody tr:nth-child(even) td { background: #fbfcfd; }
.table-note { font-size: .8rem; color: var(--muted); margin: -0.8em 0 1.2em; }
figure { margin: 14px 0 20px; break-inside: avoid; page-break-inside: avoid; }
figure img { display: block; width: 100%; max-width: 900px; height: auto; border: 1px solid #eef0f2; }
figcaption { font-size: .84rem; color: var(--muted); margin-top: 6px; max-width: 900px; }
figcaption b { color: var(--ink); }
.formula { font-family: "Cambria Math", "STIX Two Math", "DejaVu Serif", serif; background: var(--soft); border-left: 3px solid var(--rule); padding: 6px 12px; margin: .5em 0 .8em; overflow-x: auto; }
section.output { border-top: 1px dashed var(--rule); margin-top: 1.6em; }
section.output.first-output { border-top: 0; margin-top: 0; }
footer { margin-top: 48px; padding-top: 10px; border-top: 1px solid var(--rule); font-size: .8rem; color: var(--muted); }
table.doc-control { min-width: 0; font-size: .86rem; margin: 0 0 10px; }
table.doc-control th { text-align: left; color: var(--muted); font-weight: 600; padding-right: 18px; white-space: nowrap; background: none; border-bottom: 1px solid #e4e8ec; }
table.doc-control td { word-break: break-all; }
section.concise { border: 1px solid var(--rule); border-radius: 8px; padding: 4px 22px 14px; margin-top: 18px; }
section.concise h2 { margin-top: .8em; }
.statements { margin: 8px 0 6px; }
.statement { border-left: 4px solid var(--accent); background: var(--soft); padding: 8px 14px; margin: 0 0 10px; border-radius: 0 6px 6px 0; break-inside: avoid; }
.statement .stmt { font-size: 1.04rem; font-weight: 600; margin: 0 0 .25em; font-variant-numeric: tabular-nums; }
.statement .detail { font-size: .86rem; color: var(--muted); margin: .1em 0; }
.budget { margin: 0 0 8px; }
section.concise thead th { white-space: normal; vertical-align: bottom; }
section.concise td.l { white-space: normal; }
.budget h4 { color: var(--ink); }
h3.app { font-size: 1.15rem; margin-top: 1.8em; padding-bottom: .2em; border-bottom: 1px solid var(--rule); }
h4.output-head { font-size: 1.02rem; color: var(--ink); margin-top: 1.6em; }
h5 { font-size: .92rem; margin: 1.2em 0 .4em; color: var(--muted); }
nav.toc > ul { list-style: none; padding-left: 0; margin: .3em 0; }
nav.toc ul ul { columns: 2; padding-left: 1.3em; margin: .2em 0 .5em; }
span.num { font-variant-numeric: tabular-nums; }
@media (max-width: 900px) {
  main { padding: 18px 14px 40px; }
  table { font-size: .8rem; min-width: 0; }
  th, td { padding: 3px 6px; }
  thead th { white-space: normal; }
  td.l { white-space: normal; overflow-wrap: anywhere; }
  td.r { white-space: normal; }
  td.w { min-width: 5em; }
  nav.toc ul ul { columns: 1; }
  section.concise { padding: 2px 10px 10px; }
  .table-wrap { background: linear-gradient(to right, #fff 30%, rgba(255,255,255,0)), linear-gradient(to left, #fff 30%, rgba(255,255,255,0)) 100% 0,
                radial-gradient(farthest-side at 0 50%, rgba(0,0,0,.15), rgba(0,0,0,0)), radial-gradient(farthest-side at 100% 50%, rgba(0,0,0,.15), rgba(0,0,0,0)) 100% 0;
                background-repeat: no-repeat; background-size: 40px 100%, 40px 100%, 12px 100%, 12px 100%; background-attachment: local, local, scroll, scroll; }
}
@media print {
  section.concise { border: 0; padding: 0; }
  h3.app { break-before: auto; }
  section.appendix > h2 { break-before: page; page-break-before: always; }
  html { font-size: 10.5pt; }
  main { max-width: none; padding: 0; }
  nav.toc { display: none; }
  a { color: inherit; text-decoration: none; }
  h2 { break-before: page; page-break-before: always; }
  h2.keep, section.first h2 { break-before: auto; page-break-before: auto; }
  h2, h3, h4, caption { break-after: avoid; page-break-after: avoid; }
  section.output { break-before: page; page-break-before: always; border-top: 0; }
  section.output.first-output { break-before: auto; page-break-before: auto; }
  table, figure, .card, .callout { break-inside: avoid; page-break-inside: avoid; }
  thead { display: table-header-group; }
  tr { break-inside: avoid; page-break-inside: avoid; }
  .table-wrap { overflow: visible; }
  table { font-size: 7.6pt; }
  th, td { padding: 2px 5px; }
  td.l { white-space: normal; }
  td.w { min-width: 5em; }
  figure img { max-width: 100%; border: 0; }
  tbody tr:nth-child(even) td { background: none; }
}
@page { size: A4; margin: 16mm 15mm 18mm; }
"""

#: CSS for the compact notebook view (scoped under .uqt-view so it cannot leak)
NOTEBOOK_CSS = """
.uqt-view { font-family: "Segoe UI", "Helvetica Neue", Arial, "DejaVu Sans", sans-serif; font-size: 13px; color: #1f2328; }
.uqt-view .uqt-title { font-weight: 600; font-size: 14px; margin-bottom: 4px; }
.uqt-view .uqt-meta { color: #59636e; font-size: 12px; margin-bottom: 6px; }
.uqt-view table { border-collapse: collapse; }
.uqt-view th, .uqt-view td { padding: 3px 9px; border-bottom: 1px solid #e4e8ec; text-align: left; }
.uqt-view thead th { border-bottom: 2px solid #8c959f; background: #f6f8fa; }
.uqt-view td.r, .uqt-view th.r { text-align: right; font-variant-numeric: tabular-nums; white-space: nowrap; }
.uqt-view .uqt-warn { color: #9a6700; font-size: 12px; margin-top: 6px; }
"""


# ---------------------------------------------------------------------------
# Probabilities (one presentation for terminal, tables, figures and reports)
# ---------------------------------------------------------------------------
_SUPERSCRIPT = str.maketrans("-0123456789", "⁻⁰¹²³⁴⁵⁶⁷⁸⁹")


def _sig2(x: float, up: bool = False) -> tuple[float, int]:
    """(mantissa, exponent) of ``x`` to two significant digits, rounded up when ``up``."""
    import math

    e = math.floor(math.log10(x))
    m = x / 10.0**e
    m = math.ceil(m * 10.0 - 1e-9) / 10.0 if up else round(m, 1)
    if m >= 10.0:
        m, e = m / 10.0, e + 1
    return m, e


def _prob_number(x: float, up: bool = False) -> str:
    """A probability as per cent (≥ 0.1 %) or as m×10⁻ⁿ, two significant digits."""
    import math

    if x <= 0:
        return "0"
    if x >= 1:
        return "100 %"
    if 1.0 - x < 0.01:
        return _near_one(x, up)
    m, e = _sig2(x, up)
    if e >= -3:
        pct = m * 10.0 ** (e + 2)
        dec = max(0, 1 - (e + 2))
        s = f"{pct:.{dec}f}"
        if up and "." in s:           # a bound rounded up needs no trailing zero; an estimate keeps two digits
            s = s.rstrip("0").rstrip(".")
        return f"{s} %"
    ms = f"{m:.1f}".rstrip("0").rstrip(".") if up else f"{m:.1f}"
    return f"{ms}×10{str(e).translate(_SUPERSCRIPT)}" if math.isfinite(m) else "—"


def _near_one(x: float, up: bool = False) -> str:
    """A probability above 99 % and below 1 as per cent, its distance from 100 % to two significant
    digits (rounded down for an upper bound, so the bound stays outward): 0.99864 → "99.86 %",
    never "100 %"; beyond 99.9999 % → "> 99.9999 %"."""
    import math

    q = 1.0 - x
    if q < 1e-6:
        return "> 99.9999 %"
    e = math.floor(math.log10(q))
    m = q / 10.0**e
    m = math.floor(m * 10.0 + 1e-9) / 10.0 if up else round(m, 1)
    if m >= 10.0:
        m, e = m / 10.0, e + 1
    dec = max(0, 1 - (e + 2))
    s = f"{100.0 - m * 10.0 ** (e + 2):.{dec}f}"
    if "." in s:
        s = s.rstrip("0").rstrip(".")
    return f"{s} %"


def _lower_near_one(lb: float) -> str:
    """A lower bound close to 1 as per cent, its distance from 100 % rounded up: 0.99985 → "99.985 %"."""
    m, e = _sig2(1.0 - lb, up=True)
    dec = max(0, 1 - (e + 2))
    s = f"{100.0 - m * 10.0 ** (e + 2):.{dec}f}"
    return (s.rstrip("0").rstrip(".") if "." in s else s) + " %"


#: below this a probability from a normal approximation (no trials behind it) is shown as "< 10⁻⁹"
NORMAL_TAIL_FLOOR = 1e-9


def count_text(n: int) -> str:
    """A whole number with spaces between thousands: 50000 → "50 000"."""
    return f"{int(n):,}".replace(",", " ")


def probability_text(p, upper_bound=None, trials=None, *, lower_bound=None, confidence: float = 0.95,
                     basis: str | None = None) -> str:
    """A probability as the report shows it everywhere (terminal, tables, figure legends, HTML, Markdown).

    * no hit in N trials: ``"< 6×10⁻⁵ (95 % upper bound, 50 000 trials)"`` — the one-sided
      Clopper–Pearson bound, rounded up, never "0 %";
    * otherwise the estimate with its bound: ``"1.9 % (95 % upper bound 2.1 %, 20 000 trials)"``;
    * every trial beyond the limit: ``"100 % (all 20 000 trials; 95 % lower bound 99.99 %)"``;
    * without trials (a linear normal-tail estimate): ``"3.2 % (normal approximation)"`` or
      with ``basis`` the words given; below :data:`NORMAL_TAIL_FLOOR` ``"< 10⁻⁹ (normal approximation)"``
      (a normal tail that far out is no estimate of the real one).

    Per cent down to 0.1 %, below that m×10⁻ⁿ; two significant digits; bounds rounded outwards.

    Parameters
    ----------
    p : float or None
        The estimate (fraction of trials), or None ("—").
    upper_bound, lower_bound : float, optional
        One-sided bounds at ``confidence`` (results.json ``*_upper_bound``).
    trials : int, optional
        Number of Monte Carlo trials behind ``p``.
    """
    import math

    try:
        p = None if p is None or isinstance(p, bool) else float(p)
    except (TypeError, ValueError):
        p = None
    if p is None or not math.isfinite(p):
        return "—"
    level = f"{100 * confidence:g} %"
    n = None
    try:
        n = int(trials) if trials is not None and not isinstance(trials, bool) and float(trials) > 0 else None
    except (TypeError, ValueError):
        n = None
    ub = None
    try:
        ub = float(upper_bound) if upper_bound is not None and not isinstance(upper_bound, bool) else None
    except (TypeError, ValueError):
        ub = None
    if ub is not None and not math.isfinite(ub):
        ub = None
    nt = f"{count_text(n)} trials" if n else ""
    if p <= 0 and ub is None and n:
        ub = 1.0 - (1.0 - confidence) ** (1.0 / n)     # Clopper-Pearson bound for no hit (closed form)
    if p <= 0 and ub is not None:
        return f"< {_prob_number(ub, up=True)} ({level} upper bound" + (f", {nt})" if nt else ")")
    if p >= 1 and n:
        lb = None
        try:
            lb = float(lower_bound) if lower_bound is not None else None
        except (TypeError, ValueError):
            lb = None
        tail = f"; {level} lower bound {_lower_near_one(lb)}" if lb is not None and math.isfinite(lb) and 0 < lb < 1 else ""
        return f"100 % (all {nt}{tail})"
    if ub is None and not n and p < NORMAL_TAIL_FLOOR:
        # a normal-tail value this far out says nothing (the tails of the real distribution are not
        # normal): the floor, not false precision; results.json keeps the number
        floor = f"10{str(round(math.log10(NORMAL_TAIL_FLOOR))).translate(_SUPERSCRIPT)}"
        return f"< {floor} ({basis or 'normal approximation'})"
    text = _prob_number(p)
    if ub is not None:
        return f"{text} ({level} upper bound {_prob_number(ub, up=True)}" + (f", {nt})" if nt else ")")
    if basis:
        return f"{text} ({basis})"
    if n:
        return f"{text} ({nt})"
    return f"{text} (normal approximation)"
