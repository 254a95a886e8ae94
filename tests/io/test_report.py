"""Self-contained HTML run report."""

from __future__ import annotations

import base64
import os
import re
import struct
import zlib
from decimal import Decimal
from html.parser import HTMLParser
from pathlib import Path

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from geomelt.io import report as report_mod
from geomelt.io.report import (
    MISSING,
    ReportFigure,
    ReportSection,
    ReportTable,
    RunReport,
    format_value,
    render_report,
    safe_relative_href,
    write_report,
)

CAUTION = "Regional screening estimate; not a substitute for site investigation."
NNBSP = "\u202f"
MINUS = "\u2212"
VOID = {"meta", "img", "br", "hr", "link", "col", "input", "wbr", "source", "area", "base"}


def tiny_png(path: Path, width: int = 3, height: int = 2) -> Path:
    """Write a minimal valid 8-bit grey PNG (IHDR, one IDAT, IEND)."""

    def chunk(kind: bytes, payload: bytes) -> bytes:
        crc = zlib.crc32(kind + payload) & 0xFFFFFFFF
        return struct.pack(">I", len(payload)) + kind + payload + struct.pack(">I", crc)

    ihdr = struct.pack(">IIBBBBB", width, height, 8, 0, 0, 0, 0)
    raw = b"".join(
        b"\x00" + bytes((x * 40 + y * 90) % 256 for x in range(width)) for y in range(height)
    )
    data = (
        b"\x89PNG\r\n\x1a\n"
        + chunk(b"IHDR", ihdr)
        + chunk(b"IDAT", zlib.compress(raw))
        + chunk(b"IEND", b"")
    )
    path.write_bytes(data)
    return path


class Doc(HTMLParser):
    """Strict structure checker: every non-void element we emit is closed in order."""

    def __init__(self) -> None:
        super().__init__(convert_charrefs=True)
        self.stack: list[str] = []
        self.errors: list[str] = []
        self.tags: list[tuple[str, dict[str, str | None]]] = []
        self.text_by_tag: dict[str, list[str]] = {}
        self.ids: list[str] = []

    def handle_starttag(self, tag, attrs):
        attrs_d = dict(attrs)
        self.tags.append((tag, attrs_d))
        if "id" in attrs_d:
            self.ids.append(attrs_d["id"])
        if tag not in VOID:
            self.stack.append(tag)

    def handle_startendtag(self, tag, attrs):
        self.handle_starttag(tag, attrs)
        if tag not in VOID:
            self.stack.pop()

    def handle_endtag(self, tag):
        if tag in VOID:
            self.errors.append(f"end tag for void element {tag}")
        elif not self.stack or self.stack[-1] != tag:
            self.errors.append(f"</{tag}> closes {self.stack[-1] if self.stack else 'nothing'}")
        else:
            self.stack.pop()

    def handle_data(self, data):
        if self.stack:
            self.text_by_tag.setdefault(self.stack[-1], []).append(data)


def parse(text: str) -> Doc:
    doc = Doc()
    doc.feed(text)
    doc.close()
    return doc


def assert_balanced(text: str) -> Doc:
    doc = parse(text)
    assert doc.errors == []
    assert doc.stack == []
    return doc


@pytest.fixture
def sample(tmp_path) -> RunReport:
    png1 = tiny_png(tmp_path / "setting.png", 3, 2)
    png2 = tiny_png(tmp_path / "melt.png", 5, 4)
    return RunReport(
        title="geomelt run: Test region",
        caution=CAUTION,
        facts=[("geomelt version", "0.1.0"), ("CRS", "EPSG:32633"), ("cells", 1_234_567)],
        sections=[
            ReportSection(
                title="Settings",
                paragraphs=["Area of each tectonic-magmatic setting.", "Second paragraph."],
                tables=[
                    ReportTable(
                        title="Area by setting",
                        columns=["setting", "area (km²)", "share", "flagged"],
                        rows=[
                            ["mid-ocean ridge", 123456.7, 0.4567, True],
                            ["arc", 950, float("nan"), False],
                            ["<script>alert(1)</script>", None, 1e-6, True],
                        ],
                        note="Areas on the ellipsoid.",
                    )
                ],
                figures=[ReportFigure("Setting map", png1, "Classes as in the GeoTIFF.")],
            ),
            ReportSection(title="Melting", figures=[ReportFigure("Melt fraction", png2)]),
            ReportSection(title="Settings"),
            ReportSection(title="Warnings"),
            ReportSection(title="Été & «résumé» / 2"),
            ReportSection(title="***"),
        ],
        warnings=["10 cells have no heat flow", "Slab depth <missing> west of 20°E"],
        links=[
            ("Setting raster", "setting.tif"),
            ("Quick-look & map", "quicklooks/melt fraction.png"),
            ("Escape", "../outside.tif"),
            ("Absolute", "/etc/passwd"),
            ("Windows absolute", "C:\\data\\x.tif"),
            ("URL", "https://example.org/x.tif"),
            ("Script", "javascript:alert(1)"),
        ],
    )


# --------------------------------------------------------------------------- structure


def test_structure_is_balanced_and_html5(sample):
    text = render_report(sample)
    assert text.startswith("<!DOCTYPE html>\n")
    assert '<meta charset="utf-8">' in text
    doc = assert_balanced(text)
    names = [t for t, _ in doc.tags]
    for tag in ("html", "head", "body", "main", "style", "table", "figure", "nav"):
        assert tag in names
    assert "script" not in names
    assert "link" not in names


def test_caution_at_top_and_bottom(sample):
    text = render_report(sample)
    assert text.count(CAUTION) == 2
    first, last = text.find(CAUTION), text.rfind(CAUTION)
    # The first is before any section, the last after all of them.
    assert first < text.find('id="summary"')
    assert last > text.find("Output files")
    assert text.count('class="caution"') == 2


def test_empty_caution_is_refused(sample):
    sample.caution = "  "
    with pytest.raises(ValueError, match="caution"):
        render_report(sample)


def test_images_embedded_and_decode_to_same_bytes(sample, tmp_path):
    doc = parse(render_report(sample))
    imgs = [a for t, a in doc.tags if t == "img"]
    assert len(imgs) == 2
    for attrs, name, size in zip(imgs, ["setting.png", "melt.png"], [(3, 2), (5, 4)], strict=True):
        prefix = "data:image/png;base64,"
        assert attrs["src"].startswith(prefix)
        assert (
            base64.b64decode(attrs["src"][len(prefix) :], validate=True)
            == (tmp_path / name).read_bytes()
        )
        assert (int(attrs["width"]), int(attrs["height"])) == size
        assert attrs["alt"]


def test_matplotlib_png_is_embedded(tmp_path):
    from matplotlib.backends.backend_agg import FigureCanvasAgg
    from matplotlib.figure import Figure

    fig = Figure(figsize=(2, 1.5), dpi=50)
    FigureCanvasAgg(fig)
    fig.add_subplot().plot([0, 1], [1, 0])
    png = tmp_path / "plot.png"
    fig.savefig(png)
    report = RunReport("r", CAUTION, [], [ReportSection("Plot", figures=[ReportFigure("p", png)])])
    doc = parse(render_report(report))
    (src,) = [a["src"] for t, a in doc.tags if t == "img"]
    assert base64.b64decode(src.split(",", 1)[1]) == png.read_bytes()
    (img,) = [a for t, a in doc.tags if t == "img"]
    assert (img["width"], img["height"]) == ("100", "75")


def test_no_external_resources(sample):
    text = render_report(sample)
    doc = parse(text)
    for tag, attrs in doc.tags:
        for key in ("src", "href", "action", "srcset", "poster", "data"):
            value = attrs.get(key)
            if value is None:
                continue
            assert not re.match(r"^\s*([a-z][a-z0-9+.-]*:|//)", value, re.I) or value.startswith(
                "data:image/png;base64,"
            ), (tag, key, value[:80])
    assert "http://" not in text
    assert "https://" not in text
    assert "@import" not in text
    assert "url(" not in text


def test_caller_text_is_escaped(sample):
    sample.title = 'Region "A" <b>bold</b>'
    sample.facts.append(("<i>key</i>", "a & b"))
    sample.sections[0].figures[0].caption = "<img src=x onerror=alert(1)>"
    text = render_report(sample)
    assert "<script>" not in text
    assert "&lt;script&gt;alert(1)&lt;/script&gt;" in text
    assert "&lt;missing&gt;" in text
    assert "<b>bold</b>" not in text
    assert "&lt;i&gt;key&lt;/i&gt;" in text
    assert "a &amp; b" in text
    assert "&lt;img src=x onerror=alert(1)&gt;" in text
    doc = assert_balanced(text)
    assert [t for t, _ in doc.tags].count("img") == 2  # only the two figures
    assert "".join(doc.text_by_tag["title"]) == 'Region "A" <b>bold</b>'


@settings(max_examples=60, deadline=None)
@given(st.text(max_size=40))
def test_any_cell_text_round_trips(cell):
    """Whatever the text, it stays one cell whose displayed text is the input.

    Control characters other than tab/newline/CR are not allowed in HTML and are
    removed; the parser folds CR and CRLF into LF, so compare after doing the same.
    """
    table = ReportTable("t", ["c"], [[cell]], align_numbers=False)
    report = RunReport("r", CAUTION, [], [ReportSection("s", tables=[table])])
    doc = assert_balanced(render_report(report))
    shown = "".join(doc.text_by_tag.get("td", []))
    expected = re.sub(r"[\x00-\x08\x0b\x0c\x0e-\x1f\x7f]", "", cell)
    expected = expected.replace("\r\n", "\n").replace("\r", "\n")
    shown = shown.replace("\r\n", "\n").replace("\r", "\n")
    assert shown == expected


# --------------------------------------------------------------------------- numbers


@pytest.mark.parametrize(
    ("value", "expected"),
    [
        (0, "0"),
        (7, "7"),
        (999, "999"),
        (1000, f"1{NNBSP}000"),
        (1234567, f"1{NNBSP}234{NNBSP}567"),
        (-1234567, f"{MINUS}1{NNBSP}234{NNBSP}567"),
        (np.int64(45678), f"45{NNBSP}678"),
        (np.uint8(200), "200"),
        (0.0, "0.00"),
        (-0.0, "0.00"),
        (2.0, "2.00"),
        (0.5, "0.500"),
        (3.14159, "3.14"),
        (-3.14159, f"{MINUS}3.14"),
        (0.012345, "0.0123"),
        (123.456, "123"),
        (99.96, "100"),
        (999.4, "999"),
        (999.6, f"1{NNBSP}000"),
        (1234.5678, f"1{NNBSP}235"),
        (123456.7, f"123{NNBSP}457"),
        (-98765.4, f"{MINUS}98{NNBSP}765"),
        (np.float32(0.25), "0.250"),
        (0.000123456, "0.000123"),
        (1.234e-5, "1.23×10⁻⁵"),
        (-6.02e23, f"{MINUS}6.02×10²³"),
        (float("nan"), MISSING),
        (np.float64("nan"), MISSING),
        (float("inf"), MISSING),
        (float("-inf"), MISSING),
        (None, MISSING),
        (True, "yes"),
        (False, "no"),
        (np.bool_(True), "yes"),
        ("text", "text"),
        ("", ""),
    ],
)
def test_format_value(value, expected):
    assert format_value(value) == expected


def _parse_shown(text: str) -> Decimal:
    """Read a number as formatted by format_value back, exactly (test helper)."""
    text = text.replace(NNBSP, "").replace(MINUS, "-")
    if "×10" in text:
        mantissa, exp = text.split("×10")
        exp = exp.translate(str.maketrans("⁰¹²³⁴⁵⁶⁷⁸⁹⁻", "0123456789-"))
        return Decimal(mantissa).scaleb(int(exp))
    return Decimal(text)


@settings(max_examples=300, deadline=None)
@given(st.floats(allow_nan=False, allow_infinity=False))
def test_float_format_precision(x):
    """Three significant digits below 1000 and from 1e15 on; the nearest integer between.

    Compared exactly (decimal arithmetic): the error is at most half a unit of the
    last digit shown, which is the definition of correct rounding.
    """
    shown = format_value(x)
    back = _parse_shown(shown)
    exact = Decimal(x)
    if x == 0:
        assert shown == "0.00"
    elif "×" not in shown and 999.5 <= abs(x):
        assert abs(x) < 1e15
        assert "." not in shown
        assert (NNBSP in shown) == (abs(back) >= 1000)
        assert abs(back - exact) <= Decimal("0.5")
    else:
        if "×" in shown:
            assert abs(x) < 1e-4 or abs(x) > 0.9995e15
        # Three significant digits: error at most half a unit of the third digit.
        unit = Decimal(1).scaleb(back.adjusted() - 2)
        assert abs(back - exact) <= unit / 2
        digits = re.sub(r"[^0-9]", "", shown.split("×")[0]).lstrip("0")
        assert len(digits) == 3


def test_numeric_columns_right_aligned(sample):
    doc = parse(render_report(sample))
    ths = [a for t, a in doc.tags if t == "th" and a.get("scope") == "col"]
    # setting (text) | area (numbers and None) | share (numbers and NaN) | flagged (bool)
    assert [a.get("class") for a in ths] == [None, "num", "num", None]
    text = render_report(sample)
    assert f'<td class="num">123{NNBSP}457</td>' in text
    assert f'<td class="num">{MISSING}</td>' in text
    assert "<td>yes</td>" in text


def test_alignment_can_be_switched_off(sample):
    sample.sections[0].tables[0].align_numbers = False
    assert 'class="num"' not in render_report(sample)


def test_row_length_checked(sample):
    sample.sections[0].tables[0].rows.append(["only one"])
    with pytest.raises(ValueError, match="Area by setting.*row 3"):
        render_report(sample)


def test_empty_table_and_no_warnings():
    report = RunReport(
        "r", CAUTION, [], [ReportSection("s", tables=[ReportTable("empty", ["a", "b"], [])])]
    )
    text = render_report(report)
    assert_balanced(text)
    assert "No rows." in text
    assert "<p>No warnings.</p>" in text
    assert 'id="outputs"' not in text


def test_warnings_section(sample):
    text = render_report(sample)
    doc = parse(text)
    assert "Warnings" in doc.text_by_tag["h2"]
    assert "No warnings." not in text
    assert 'class="warnings present"' in text
    assert "10 cells have no heat flow" in text


# --------------------------------------------------------------------------- anchors, links


def test_toc_anchors_unique_and_safe(sample):
    doc = parse(render_report(sample))
    assert len(doc.ids) == len(set(doc.ids))
    assert all(re.fullmatch(r"[a-z0-9-]+", i) for i in doc.ids)
    toc = [a["href"][1:] for t, a in doc.tags if t == "a" and a.get("href", "").startswith("#")]
    assert len(toc) == len(set(toc))
    assert set(toc) <= set(doc.ids)
    # Each section, the summary, the warnings and the output list are in the contents.
    assert len(toc) == len(sample.sections) + 3
    assert "settings" in toc and "settings-2" in toc
    assert "warnings" in toc and "warnings-2" in toc
    assert "ete-resume-2" in toc
    assert "section" in toc  # title without any usable character


def test_links_safe_and_quoted(sample):
    doc = parse(render_report(sample))
    hrefs = [a["href"] for t, a in doc.tags if t == "a" and not a["href"].startswith("#")]
    assert hrefs == ["setting.tif", "quicklooks/melt%20fraction.png"]
    text = render_report(sample)
    assert "Quick-look &amp; map" in text
    for dropped in ("Escape", "Absolute", "Windows absolute", "URL", "Script"):
        assert f">{dropped}</a>" not in text


@pytest.mark.parametrize(
    ("path", "expected"),
    [
        ("a.tif", "a.tif"),
        ("sub/dir/a b#c?.tif", "sub/dir/a%20b%23c%3F.tif"),
        ("sub\\a.tif", "sub/a.tif"),
        (Path("sub") / "é.tif", "sub/%C3%A9.tif"),
        ("a..b.tif", "a..b.tif"),  # only a '..' component climbs out
        ("./a.tif", "./a.tif"),
        ("..", None),
        ("../a.tif", None),
        ("sub/../../a.tif", None),
        ("sub\\..\\a.tif", None),
        ("/abs/a.tif", None),
        ("//server/share/a.tif", None),
        ("\\\\server\\share\\a.tif", None),
        ("C:\\a.tif", None),
        ("c:a.tif", None),
        ("http://example.org/a.tif", None),
        ("javascript:alert(1)", None),
        ("", None),
        ("   ", None),
        ("a\nb.tif", None),
    ],
)
def test_safe_relative_href(path, expected):
    assert safe_relative_href(path) == expected


# --------------------------------------------------------------------------- writing


def test_write_report_round_trip(sample, tmp_path):
    out = tmp_path / "out" / "report.html"
    out.parent.mkdir()
    assert write_report(out, sample) == out
    assert out.read_bytes().decode("utf-8") == render_report(sample)
    assert sorted(p.name for p in out.parent.iterdir()) == ["report.html"]


def test_write_report_replaces_existing(sample, tmp_path):
    out = tmp_path / "report.html"
    out.write_text("old", encoding="utf-8")
    write_report(out, sample)
    assert out.read_text(encoding="utf-8").startswith("<!DOCTYPE html>")
    assert sorted(p.name for p in tmp_path.iterdir() if not p.suffix == ".png") == ["report.html"]


def test_atomic_write_leaves_nothing_on_failure(sample, tmp_path, monkeypatch):
    out_dir = tmp_path / "out"
    out_dir.mkdir()
    out = out_dir / "report.html"

    def broken_replace(src, dst):
        assert Path(src).exists()  # the temporary file was fully written first
        assert Path(src).parent == out_dir
        raise OSError("disk gone")

    monkeypatch.setattr(os, "replace", broken_replace)
    with pytest.raises(OSError, match="disk gone"):
        write_report(out, sample)
    assert list(out_dir.iterdir()) == []


def test_failure_while_writing_keeps_old_file(sample, tmp_path, monkeypatch):
    out = tmp_path / "report.html"
    out.write_text("old", encoding="utf-8")

    def broken_fsync(fd):
        raise OSError("fsync failed")

    monkeypatch.setattr(report_mod.os, "fsync", broken_fsync)
    with pytest.raises(OSError, match="fsync failed"):
        write_report(out, sample)
    assert out.read_text(encoding="utf-8") == "old"
    assert not [p for p in tmp_path.iterdir() if p.name.endswith(".tmp")]


def test_missing_png_raises_before_writing(sample, tmp_path):
    missing = tmp_path / "nowhere" / "gone.png"
    sample.sections[1].figures.append(ReportFigure("Lost map", missing))
    out = tmp_path / "report.html"
    with pytest.raises(FileNotFoundError) as info:
        write_report(out, sample)
    assert "Lost map" in str(info.value)
    assert str(missing) in str(info.value)
    assert not out.exists()
    assert not [p for p in tmp_path.iterdir() if p.name.startswith(".")]


def test_not_a_png_is_refused(sample, tmp_path):
    fake = tmp_path / "fake.png"
    fake.write_bytes(b"GIF89a not a png")
    sample.sections[1].figures.append(ReportFigure("Fake", fake))
    with pytest.raises(ValueError, match="Fake.*not a PNG"):
        render_report(sample)
