r"""Self-contained HTML report of one run.

Every run can leave one HTML file beside its outputs that says what was done and
what came out: a summary of the run (version, grid, CRS, times), its warnings,
sections with tables and quick-look figures, and links to the output files next
to the report. The screening caution is shown at the top and again at the end.

The file stands alone. Styles are inline, every figure is embedded as a
``data:image/png;base64`` URI, there is no JavaScript and nothing is fetched
from a network, so the report opens in any browser, offline, and can be mailed
or archived as a single file. The only links are the caller's relative paths to
files in the same output folder, plus in-page anchors.

All text from the caller (titles, facts, cells, notes, warnings, captions, link
labels) is HTML-escaped, since much of it comes from attribute values of user
input files.

Number formatting (:func:`format_value`)
----------------------------------------
- ``int``: digits grouped by three with a narrow no-break space (U+202F), as
  recommended by the SI brochure, e.g. ``12 345 678``.
- ``float``: three significant digits (trailing zeros kept, so ``2.0`` shows as
  ``2.00``) for magnitudes that round below 1000; small magnitudes below
  ``1e-4`` as ``1.23×10⁻⁵``. Larger values are rounded to grouped integers
  (``12 346``); from ``1e15`` on they are again shown as ``1.23×10¹⁵``.
- Negative numbers carry a true minus sign (U+2212).
- ``None``, NaN and infinities are shown as an en dash ``–``.
- ``bool`` is ``yes`` / ``no``.
- Everything else is shown as ``str(value)``.

numpy scalars are formatted like their Python counterparts.
"""

from __future__ import annotations

import base64
import html
import logging
import math
import numbers
import os
import re
import struct
import unicodedata
from dataclasses import dataclass, field
from pathlib import Path
from urllib.parse import quote

import numpy as np

import geomelt
from geomelt.io.styles import atomic_path

__all__ = [
    "MISSING",
    "ReportFigure",
    "ReportSection",
    "ReportTable",
    "RunReport",
    "format_value",
    "render_report",
    "safe_relative_href",
    "write_report",
]

log = logging.getLogger(__name__)

MISSING = "\u2013"
"""Shown for ``None``, NaN and infinite values (an en dash)."""

_GROUP_SEP = "\u202f"  # narrow no-break space between groups of three digits
_MINUS = "\u2212"
_SCI_LARGE = 1e15
_SCI_SMALL = 1e-4
_SUPERSCRIPT = str.maketrans("0123456789-", "⁰¹²³⁴⁵⁶⁷⁸⁹⁻")
_PNG_SIGNATURE = b"\x89PNG\r\n\x1a\n"
# C0 controls (except tab, newline, carriage return) and DEL are not allowed in HTML text.
_CONTROL_CHARS = re.compile(r"[\x00-\x08\x0b\x0c\x0e-\x1f\x7f]")
# Fixed anchors of the page; section anchors never take these.
_FIXED_IDS = ("summary", "contents", "warnings", "outputs")


@dataclass
class ReportTable:
    """A table in a report section.

    Attributes
    ----------
    title : str
        Shown as the table caption.
    columns : list of str
        Header texts; they may carry units, e.g. ``"area (km²)"``.
    rows : list of list
        One list per row, as long as ``columns``. Cells are ``str``, ``int``,
        ``float`` or ``bool`` (see :func:`format_value`); ``None`` and NaN are
        shown as an en dash.
    note : str
        One paragraph shown under the table.
    align_numbers : bool
        Right-align columns whose cells are all numbers (or missing).
    """

    title: str
    columns: list[str]
    rows: list[list[object]]
    note: str = ""
    align_numbers: bool = True


@dataclass
class ReportFigure:
    """A PNG figure, embedded in the report as a base64 data URI.

    Attributes
    ----------
    title : str
        Figure title, also the image's alternative text.
    png_path : Path
        Existing PNG file; it is read when the report is rendered.
    caption : str
        Text shown under the figure after its title.
    """

    title: str
    png_path: Path
    caption: str = ""


@dataclass
class ReportSection:
    """A titled section: paragraphs, then tables, then figures.

    Attributes
    ----------
    title : str
        Section heading; listed in the table of contents.
    paragraphs : list of str
        Plain-text paragraphs.
    tables : list of ReportTable
    figures : list of ReportFigure
    """

    title: str
    paragraphs: list[str] = field(default_factory=list)
    tables: list[ReportTable] = field(default_factory=list)
    figures: list[ReportFigure] = field(default_factory=list)


@dataclass
class RunReport:
    """Content of a run report.

    Attributes
    ----------
    title : str
        Page title and main heading.
    caution : str
        Screening caution, shown in a bordered box at the top and at the end.
        Must not be empty.
    facts : list of (str, str)
        Key/value summary of the run (version, finish time, grid, CRS, run time...).
    sections : list of ReportSection
    warnings : list of str
        Shown in their own highlighted "Warnings" section ("No warnings." if empty).
    links : list of (str, str)
        ``(label, relative path)`` of output files beside the report. Absolute
        paths, paths with a ``..`` component and paths with a colon (drive
        letters, URL schemes) are dropped with a logged warning.
    """

    title: str
    caution: str
    facts: list[tuple[str, str]]
    sections: list[ReportSection]
    warnings: list[str] = field(default_factory=list)
    links: list[tuple[str, str]] = field(default_factory=list)


# --------------------------------------------------------------------------- formatting


def _text(value: object) -> str:
    """Caller text as escaped HTML (control characters removed)."""
    return html.escape(_CONTROL_CHARS.sub("", str(value)), quote=True)


def _group_int(n: int) -> str:
    digits = f"{abs(n):,}".replace(",", _GROUP_SEP)
    return f"{_MINUS}{digits}" if n < 0 else digits


def _scientific(mantissa: str, exponent: int, negative: bool) -> str:
    sign = _MINUS if negative else ""
    return f"{sign}{mantissa}×10{str(exponent).translate(_SUPERSCRIPT)}"


def _format_float(x: float) -> str:
    if not math.isfinite(x):
        return MISSING
    if x == 0:
        return "0.00"
    negative = x < 0
    ax = abs(x)
    rounded = float(f"{ax:.3g}")
    if rounded >= _SCI_LARGE:
        mantissa, exp = f"{ax:.2e}".split("e")
        return _scientific(mantissa, int(exp), negative)
    if rounded >= 1000:
        return _group_int(round(x))
    if rounded < _SCI_SMALL:
        mantissa, exp = f"{ax:.2e}".split("e")
        return _scientific(mantissa, int(exp), negative)
    digits = f"{ax:#.3g}".rstrip(".")
    return f"{_MINUS}{digits}" if negative else digits


def _is_number(value: object) -> bool:
    """True for ints and reals that are not booleans."""
    return isinstance(value, numbers.Real) and not isinstance(value, (bool, np.bool_))


def _is_missing(value: object) -> bool:
    if value is None:
        return True
    if _is_number(value) and not isinstance(value, numbers.Integral):
        return not math.isfinite(float(value))
    return False


def format_value(value: object) -> str:
    r"""Format a table cell or fact value as plain (unescaped) text.

    Parameters
    ----------
    value : object
        ``None``, ``bool``, an integer, a real number or anything with ``str``.

    Returns
    -------
    str
        The formatted text; see the module docstring for the rules.

    Examples
    --------
    >>> format_value(0.012345)
    '0.0123'
    >>> format_value(2.0)
    '2.00'
    >>> format_value(-2.5)
    '−2.50'
    >>> format_value(1234567) == "1\u202f234\u202f567"
    True
    >>> format_value(float("nan")), format_value(None)
    ('–', '–')
    >>> format_value(True)
    'yes'
    """
    if value is None:
        return MISSING
    if isinstance(value, (bool, np.bool_)):
        return "yes" if value else "no"
    if isinstance(value, numbers.Integral):
        return _group_int(int(value))
    if isinstance(value, numbers.Real):
        return _format_float(float(value))
    return str(value)


# --------------------------------------------------------------------------- anchors, links


def _anchor(title: str, used: set[str]) -> str:
    """A unique id of ``[a-z0-9-]`` characters made from ``title``."""
    ascii_title = unicodedata.normalize("NFKD", str(title)).encode("ascii", "ignore").decode()
    base = re.sub(r"[^a-z0-9]+", "-", ascii_title.lower()).strip("-")[:60].strip("-")
    base = base or "section"
    candidate, n = base, 2
    while candidate in used:
        candidate = f"{base}-{n}"
        n += 1
    used.add(candidate)
    return candidate


def safe_relative_href(path: object) -> str | None:
    """URL-quoted ``href`` for a relative path, or ``None`` if the path is unsafe.

    Parameters
    ----------
    path : str or os.PathLike
        Path of an output file relative to the report's folder. Backslashes are
        read as separators.

    Returns
    -------
    str or None
        The path quoted with :func:`urllib.parse.quote` (``/`` kept), or ``None``
        for an empty path, an absolute path, a path with a ``..`` component, a
        colon (drive letter or URL scheme) or a control character.

    Examples
    --------
    >>> safe_relative_href("maps/melt fraction.tif")
    'maps/melt%20fraction.tif'
    >>> safe_relative_href("../secret.txt") is None, safe_relative_href("/etc/passwd") is None
    (True, True)
    """
    text = os.fspath(path) if isinstance(path, os.PathLike) else str(path)
    text = str(text).replace("\\", "/")
    if not text.strip() or text.startswith("/") or ":" in text:
        return None
    if any(ord(c) < 32 or ord(c) == 127 for c in text):
        return None
    if any(part == ".." for part in text.split("/")):
        return None
    return quote(text, safe="/")


# --------------------------------------------------------------------------- rendering

_CSS = """
* { box-sizing: border-box; }
html { -webkit-text-size-adjust: 100%; }
body { margin: 0; background: #f4f4f2; color: #1d2125;
  font: 15px/1.5 system-ui, -apple-system, "Segoe UI", Roboto, "Helvetica Neue", Arial,
    "Noto Sans", "DejaVu Sans", sans-serif; }
main { max-width: 1100px; margin: 0 auto; padding: 28px 36px 40px; background: #fff; }
h1 { font-size: 1.75rem; line-height: 1.25; margin: 0 0 0.6em; }
h2 { font-size: 1.3rem; margin: 2em 0 0.6em; padding-bottom: 0.2em;
  border-bottom: 1px solid #cfd3d7; }
p { margin: 0.5em 0; max-width: 80ch; }
a { color: #24507a; }
.caution { border: 2px solid #4f5862; background: #f2f3f4; padding: 12px 16px; margin: 1.2em 0; }
.caution .label { display: block; font-weight: 700; margin-bottom: 0.2em; }
.caution p { margin: 0; max-width: none; }
.warnings.present { border-left: 5px solid #a86400; background: #fdf6ea; padding: 4px 16px 8px; }
.warnings.present h2 { border-bottom-color: #e3c897; }
.warnings ul { padding-left: 1.3em; }
.warnings li { white-space: pre-wrap; margin: 0.25em 0; }
nav ol { margin: 0; padding-left: 1.5em; columns: 2 18em; }
table { border-collapse: collapse; margin: 0.6em 0 0.3em; font-variant-numeric: tabular-nums; }
caption { caption-side: top; text-align: left; font-weight: 600; padding: 0.2em 0 0.4em; }
th, td { padding: 4px 10px; text-align: left; vertical-align: top;
  border-bottom: 1px solid #e2e5e8; }
thead th { background: #eceef0; border-bottom: 2px solid #8d949b; }
tbody tr:nth-child(even) { background: #f7f8f9; }
th.num, td.num { text-align: right; white-space: nowrap; }
td.empty { color: #5d656d; font-style: italic; }
table.facts th { font-weight: 600; background: none; white-space: nowrap; }
.table-wrap { overflow-x: auto; margin-bottom: 1.2em; }
.note { font-size: 0.92rem; color: #454c53; }
figure { margin: 1.2em 0 1.6em; }
figure img { display: block; max-width: 100%; height: auto; border: 1px solid #e2e5e8; }
figcaption { font-size: 0.92rem; color: #454c53; margin-top: 0.4em; max-width: 80ch; }
.outputs code { font-size: 0.88rem; color: #454c53; }
@media print {
  body { background: #fff; font-size: 10.5pt; }
  main { max-width: none; padding: 0; }
  a { color: inherit; text-decoration: none; }
  h2, caption { break-after: avoid; }
  figure, tr, .caution, .warnings { break-inside: avoid; }
  thead { display: table-header-group; }
  .caution, .warnings.present, thead th, tbody tr:nth-child(even) {
    -webkit-print-color-adjust: exact; print-color-adjust: exact; }
}
"""


def _read_png(figure: ReportFigure) -> tuple[bytes, tuple[int, int] | None]:
    """PNG bytes of a figure and its pixel size from the IHDR chunk."""
    path = Path(figure.png_path)
    try:
        data = path.read_bytes()
    except FileNotFoundError as exc:
        msg = f"figure {figure.title!r}: PNG file not found: {path}"
        raise FileNotFoundError(msg) from exc
    if not data.startswith(_PNG_SIGNATURE):
        msg = f"figure {figure.title!r}: not a PNG file: {path}"
        raise ValueError(msg)
    size = None
    if len(data) >= 24 and data[12:16] == b"IHDR":
        size = struct.unpack(">II", data[16:24])
    return data, size


def _numeric_columns(table: ReportTable) -> list[bool]:
    """Per column: every cell is a number or missing, and at least one is a number."""
    flags = []
    for j in range(len(table.columns)):
        cells = [row[j] for row in table.rows]
        present = [c for c in cells if not _is_missing(c)]
        flags.append(bool(present) and all(_is_number(c) for c in present))
    return flags


def _render_table(table: ReportTable, number: int) -> list[str]:
    ncol = len(table.columns)
    for i, row in enumerate(table.rows):
        if len(row) != ncol:
            msg = (
                f"table {table.title!r}: row {i} has {len(row)} cells, "
                f"expected {ncol} (one per column)"
            )
            raise ValueError(msg)
    numeric = _numeric_columns(table) if table.align_numbers else [False] * ncol

    def cls(j: int) -> str:
        return ' class="num"' if numeric[j] else ""

    out = ['<div class="table-wrap">', "<table>"]
    out.append(f"<caption>Table {number}. {_text(table.title)}</caption>")
    header = "".join(
        f'<th scope="col"{cls(j)}>{_text(c)}</th>' for j, c in enumerate(table.columns)
    )
    out.append(f"<thead><tr>{header}</tr></thead>")
    out.append("<tbody>")
    if not table.rows:
        out.append(f'<tr><td class="empty" colspan="{max(ncol, 1)}">No rows.</td></tr>')
    for row in table.rows:
        cells = "".join(f"<td{cls(j)}>{_text(format_value(v))}</td>" for j, v in enumerate(row))
        out.append(f"<tr>{cells}</tr>")
    out.append("</tbody>")
    out.append("</table>")
    if table.note:
        out.append(f'<p class="note">{_text(table.note)}</p>')
    out.append("</div>")
    return out


def _render_figure(figure: ReportFigure, number: int) -> list[str]:
    data, size = _read_png(figure)
    uri = "data:image/png;base64," + base64.b64encode(data).decode("ascii")
    dims = f' width="{size[0]}" height="{size[1]}"' if size else ""
    caption = f"<strong>Figure {number}. {_text(figure.title)}</strong>"
    if figure.caption:
        caption += f" {_text(figure.caption)}"
    return [
        "<figure>",
        f'<img src="{uri}" alt="{_text(figure.title)}"{dims}>',
        f"<figcaption>{caption}</figcaption>",
        "</figure>",
    ]


def _render_caution(caution: str) -> str:
    return (
        '<aside class="caution" role="note">'
        '<span class="label">Screening caution</span>'
        f"<p>{_text(caution)}</p>"
        "</aside>"
    )


def render_report(report: RunReport) -> str:
    """Render a run report as one self-contained HTML5 document.

    Nothing is written; PNG figures are read and embedded.

    Parameters
    ----------
    report : RunReport
        Content of the report.

    Returns
    -------
    str
        The HTML text (UTF-8 declared in a ``<meta charset>``).

    Raises
    ------
    FileNotFoundError
        A figure's PNG file does not exist (the message names the figure and path).
    ValueError
        The caution is empty, a figure file is not a PNG, or a table row does not
        have one cell per column.
    """
    if not str(report.caution).strip():
        msg = "the report needs a non-empty screening caution"
        raise ValueError(msg)

    used = set(_FIXED_IDS)
    anchors = [_anchor(s.title, used) for s in report.sections]

    links: list[tuple[str, str, str]] = []
    for label, target in report.links:
        href = safe_relative_href(target)
        if href is None:
            log.warning("report link %r -> %r dropped: not a safe relative path", label, target)
            continue
        links.append((str(label), href, str(target)))

    toc = [("summary", "Run summary"), ("warnings", "Warnings")]
    toc += [(a, s.title) for a, s in zip(anchors, report.sections, strict=True)]
    if links:
        toc.append(("outputs", "Output files"))

    out = [
        "<!DOCTYPE html>",
        '<html lang="en">',
        "<head>",
        '<meta charset="utf-8">',
        '<meta name="viewport" content="width=device-width, initial-scale=1">',
        f'<meta name="generator" content="geomelt {_text(geomelt.__version__)}">',
        f"<title>{_text(report.title)}</title>",
        f"<style>{_CSS}</style>",
        "</head>",
        "<body>",
        "<main>",
        "<header>",
        f"<h1>{_text(report.title)}</h1>",
        _render_caution(report.caution),
        "</header>",
    ]

    out.append('<section id="summary">')
    out.append("<h2>Run summary</h2>")
    if report.facts:
        out.append('<table class="facts">')
        out.append("<tbody>")
        for key, value in report.facts:
            out.append(
                f'<tr><th scope="row">{_text(key)}</th><td>{_text(format_value(value))}</td></tr>'
            )
        out.append("</tbody>")
        out.append("</table>")
    else:
        out.append("<p>No run facts recorded.</p>")
    out.append("</section>")

    out.append('<nav id="contents" aria-label="Contents">')
    out.append("<h2>Contents</h2>")
    out.append("<ol>")
    out.extend(f'<li><a href="#{a}">{_text(t)}</a></li>' for a, t in toc)
    out.append("</ol>")
    out.append("</nav>")

    if report.warnings:
        out.append('<section id="warnings" class="warnings present">')
        out.append("<h2>Warnings</h2>")
        n = len(report.warnings)
        out.append(f"<p>{n} warning{'s' if n != 1 else ''} from this run:</p>")
        out.append("<ul>")
        out.extend(f"<li>{_text(w)}</li>" for w in report.warnings)
        out.append("</ul>")
    else:
        out.append('<section id="warnings" class="warnings">')
        out.append("<h2>Warnings</h2>")
        out.append("<p>No warnings.</p>")
    out.append("</section>")

    n_table = n_figure = 0
    for anchor, section in zip(anchors, report.sections, strict=True):
        out.append(f'<section id="{anchor}">')
        out.append(f"<h2>{_text(section.title)}</h2>")
        out.extend(f"<p>{_text(p)}</p>" for p in section.paragraphs)
        for table in section.tables:
            n_table += 1
            out.extend(_render_table(table, n_table))
        for figure in section.figures:
            n_figure += 1
            out.extend(_render_figure(figure, n_figure))
        out.append("</section>")

    if links:
        out.append('<section id="outputs" class="outputs">')
        out.append("<h2>Output files</h2>")
        out.append("<p>Paths are relative to the folder of this report.</p>")
        out.append("<ul>")
        for label, href, target in links:
            out.append(
                f'<li><a href="{_text(href)}">{_text(label)}</a> '
                f"<code>{_text(target.replace(chr(92), '/'))}</code></li>"
            )
        out.append("</ul>")
        out.append("</section>")

    out += [
        "<footer>",
        _render_caution(report.caution),
        "</footer>",
        "</main>",
        "</body>",
        "</html>",
    ]
    return "\n".join(out) + "\n"


def write_report(path: Path, report: RunReport) -> Path:
    """Render a run report and write it atomically to ``path``.

    The whole document is rendered first (so a missing figure fails before any
    file is touched), written to a temporary file in the same folder, flushed to
    disk and moved onto ``path`` with :func:`os.replace`. On any error the
    temporary file is removed and ``path`` is left as it was.

    Parameters
    ----------
    path : Path
        Destination ``.html`` file; its folder must exist.
    report : RunReport
        Content of the report.

    Returns
    -------
    Path
        ``path``.

    Raises
    ------
    FileNotFoundError
        A figure's PNG file does not exist (nothing is written).
    """
    path = Path(path)
    data = render_report(report).encode("utf-8", errors="replace")
    with atomic_path(path) as tmp, open(tmp, "xb") as fh:
        fh.write(data)
        fh.flush()
        os.fsync(fh.fileno())
    return path
