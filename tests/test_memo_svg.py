"""The chart SVG is slimmed before printing: less for the PDF renderer to walk, the same picture.

The picture is compared by an outside rasteriser (poppler's pdftoppm) on a PDF of the chart before
and after slimming; the structure is checked with the standard library's XML parser.
"""

from __future__ import annotations

import base64
import shutil
import subprocess
import xml.etree.ElementTree as ET

import pytest
from obligor_memo.app.memo.figures import slim_svg

NS = "{http://www.w3.org/2000/svg}"

# Shaped like a plotly export: empty layer groups, a legend toggle with fill-opacity 0, a
# zero-size scroll bar, a path without geometry, styles in "style", a clip path, a dashed line,
# a half-transparent fill, text with a tspan, and a stroke inherited from a group.
PLOT_LIKE = """<svg xmlns="http://www.w3.org/2000/svg" xmlns:xlink="http://www.w3.org/1999/xlink"
 width="300" height="200" style="" viewBox="0 0 300 200">
<rect x="0" y="0" width="300" height="200" style="fill: rgb(255, 255, 255); fill-opacity: 1;"/>
<defs id="defs-1"><g class="clips"><clipPath id="clip1"><rect x="20" y="20" width="260" height="140"/>
</clipPath></g><g class="gradients"/><g class="patterns"/></defs>
<g class="bglayer"/><g class="layer-below"><g class="imagelayer"/><g class="shapelayer"/></g>
<g class="cartesianlayer"><g class="subplot xy"><g class="gridlayer"><g class="x">
<path class="xgrid crisp" transform="translate(100,0)" d="M0,20v140" style="stroke: rgb(200, 200, 200); stroke-opacity: 1; stroke-width: 1px;"/>
</g><g class="y"/></g><path class="xlines-below"/>
<g class="overplot"><g class="xy" transform="translate(20,20)" clip-path="url(#clip1)">
<g class="trace" style="stroke-miterlimit: 2; opacity: 1;">
<path class="js-fill" d="M0,140L60,20L120,90L260,140Z" style="fill: rgb(34, 48, 60); fill-opacity: 0.3; stroke-width: 0;"/>
<path class="js-line" d="M0,140L60,20L120,90L260,140" style="vector-effect: none; fill: none; stroke: rgb(179, 97, 42); stroke-opacity: 1; stroke-dasharray: 9px, 3px; stroke-width: 2px; opacity: 1;"/>
</g></g></g></g></g>
<g class="infolayer"><g class="legend" style="stroke: rgb(0, 0, 0);">
<rect class="legendtoggle" x="0" y="-9" width="80" height="18" style="fill: rgb(0, 0, 0); fill-opacity: 0;"/>
<rect class="marker" x="200" y="170" width="12" height="12" style="fill: rgb(85, 120, 90); stroke-width: 1px;"/>
<rect class="scrollbar" rx="20" ry="3" width="0" height="0" style="fill: rgb(128, 139, 164); fill-opacity: 1;" x="0" y="0"/>
</g>
<text class="xtitle" x="150" y="190" text-anchor="middle" style="font-family: 'DejaVu Sans'; font-size: 12px; fill: rgb(34, 48, 60); fill-opacity: 1; white-space: pre; pointer-events: all;">Loss <tspan style="font-weight: bold">[EUR m]</tspan></text>
</g></svg>"""


def _elements(svg: str) -> list[ET.Element]:
    return list(ET.fromstring(svg).iter())


def test_slimming_drops_what_draws_nothing_and_keeps_every_mark():
    before, after = _elements(PLOT_LIKE), _elements(slim_svg(PLOT_LIKE))
    tags = [e.tag.replace(NS, "") for e in after]
    assert len(after) < len(before)
    assert not any(e.tag == NS + "g" and len(e) == 0 for e in after)  # no empty groups
    assert not any(e.tag == NS + "path" and not e.get("d") for e in after)  # no empty paths
    # Kept: background, clip rectangle, grid line, fill, line, legend marker, title; dropped:
    # the zero-size scroll bar (SVG draws no rect of zero width or height).
    rect_sizes = sorted((e.get("width"), e.get("height")) for e in after if e.tag == NS + "rect")
    assert ("0", "0") not in rect_sizes
    assert tags.count("path") == 3 and tags.count("text") == 1 and tags.count("tspan") == 1
    assert tags.count("clipPath") == 1


def test_invisible_fill_with_an_inherited_stroke_is_kept():
    # The legend group sets a stroke, so the toggle rectangle (fill-opacity 0) still draws an
    # outline under SVG's inheritance rules: it must stay.
    after = _elements(slim_svg(PLOT_LIKE))
    assert any(e.get("width") == "80" and e.get("height") == "18" for e in after)
    no_stroke = PLOT_LIKE.replace('<g class="legend" style="stroke: rgb(0, 0, 0);">', '<g class="legend">')
    assert not any(e.get("width") == "80" and e.get("height") == "18" for e in _elements(slim_svg(no_stroke)))


@pytest.mark.parametrize(
    ("tag_text", "attribute", "value"),
    [
        ("js-line", "stroke-dasharray", "9px, 3px"),  # a list value keeps its comma
        ("js-line", "vector-effect", "none"),
        ("js-fill", "fill-opacity", "0.3"),
        ("xtitle", "font-family", "'DejaVu Sans'"),  # quoted family name kept as written
    ],
)
def test_style_declarations_become_the_same_presentation_attributes(tag_text, attribute, value):
    original = next(e for e in _elements(PLOT_LIKE) if tag_text in (e.get("class") or ""))
    slim = [e for e in _elements(slim_svg(PLOT_LIKE)) if e.get(attribute) == value]
    assert f"{attribute}: {value}" in original.get("style")
    assert slim


def test_screen_only_and_unparseable_input():
    out = slim_svg(PLOT_LIKE)
    assert "pointer-events" not in out and "class=" not in out
    assert "white-space: pre" in out  # not a presentation attribute: stays a style
    assert slim_svg("<svg") == "<svg"  # not XML: returned unchanged
    assert slim_svg("<html/>") == "<html/>"


@pytest.mark.skipif(shutil.which("pdftoppm") is None, reason="needs poppler-utils")
def test_slimmed_chart_prints_pixel_identical(tmp_path):
    """Both versions through WeasyPrint, rasterised by poppler: not one pixel differs."""
    from PIL import Image, ImageChops
    from weasyprint import HTML

    def raster(svg: str, name: str) -> Image.Image:
        uri = "data:image/svg+xml;base64," + base64.b64encode(svg.encode()).decode()
        html = f"<body style='margin:0'><img src='{uri}'></body>"
        pdf = HTML(string=html).write_pdf()
        (tmp_path / f"{name}.pdf").write_bytes(pdf)
        subprocess.run(
            ["pdftoppm", "-r", "150", "-png", "-singlefile", str(tmp_path / f"{name}.pdf"), str(tmp_path / name)],
            capture_output=True,
            check=True,
        )
        return Image.open(tmp_path / f"{name}.png").convert("RGB")

    before, after = raster(PLOT_LIKE, "before"), raster(slim_svg(PLOT_LIKE), "after")
    assert ImageChops.difference(before, Image.new("RGB", before.size, "white")).getbbox()  # drawn
    assert before.size == after.size
    assert ImageChops.difference(before, after).getbbox() is None
