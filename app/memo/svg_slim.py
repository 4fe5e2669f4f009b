"""Slimming plotly's SVG before WeasyPrint draws it into the memo.

Plotly writes many empty layer groups, shapes that draw nothing, class names and CSS ``style``
lists; WeasyPrint pays for each element and declaration when it writes the PDF. :func:`slim_svg`
drops what draws nothing and turns styles into presentation attributes, leaving the picture
pixel-identical (tests/test_memo_svg.py): 1,981 -> 866 elements over the sample memo's charts.
"""

from __future__ import annotations

import re
from typing import Any

# Style properties that SVG also accepts as presentation attributes: moved out of ``style`` so
# the PDF renderer reads a plain attribute instead of parsing a CSS declaration list per element.
_PRESENTATION = frozenset(
    (
        "fill",
        "fill-opacity",
        "fill-rule",
        "stroke",
        "stroke-width",
        "stroke-opacity",
        "stroke-dasharray",
        "stroke-dashoffset",
        "stroke-linecap",
        "stroke-linejoin",
        "stroke-miterlimit",
        "opacity",
        "font-family",
        "font-size",
        "font-weight",
        "font-style",
        "text-anchor",
        "dominant-baseline",
        "visibility",
        "display",
        "vector-effect",
        "clip-path",
        "shape-rendering",
        "color",
    )
)
# Properties that only matter to an interactive page (pointer, selection): dropped on paper.
_SCREEN_ONLY = frozenset(("pointer-events", "cursor", "user-select", "-webkit-user-select"))
_SVG_NS = "http://www.w3.org/2000/svg"
_XLINK_NS = "http://www.w3.org/1999/xlink"
_DECLARATION_SPLIT = re.compile(r";(?![^()]*\))")
_DRAWN_SHAPES = frozenset(("path", "rect", "circle", "ellipse", "line", "polyline", "polygon"))


def _declarations(style: str) -> list[tuple[str, str]] | None:
    """``style`` as (property, value) pairs; None when it holds anything but plain declarations."""
    pairs = []
    for part in _DECLARATION_SPLIT.split(style):
        if not part.strip():
            continue
        name, colon, value = part.partition(":")
        if not colon or "!" in value or "/*" in part:
            return None
        pairs.append((name.strip().lower(), value.strip()))
    return pairs


_PAINT = ("fill", "fill-opacity", "stroke", "stroke-width", "stroke-opacity")
_ZEROS = ("0", "0.0", "0px")


def _draws_nothing(element: Any, paint: dict[str, str]) -> bool:
    """A shape that leaves no mark: no geometry, zero size, or neither fill nor stroke shows.

    ``paint`` holds the fill and stroke settings the element has after inheritance.
    """
    tag = element.tag.rpartition("}")[2]
    if tag not in _DRAWN_SHAPES or "id" in element.attrib:  # an id may be drawn by <use>
        return False
    get = element.attrib.get
    if tag == "path" and not get("d", "").strip():
        return True
    if tag == "rect" and (get("width") in _ZEROS or get("height") in _ZEROS):
        return True
    if any(key.startswith("marker") for key in paint) or any(k.startswith("marker") for k in element.attrib):
        return False
    # SVG's defaults: fill black, no stroke.
    no_fill = paint.get("fill", "black") in ("none", "transparent") or paint.get("fill-opacity") in _ZEROS
    no_stroke = (
        paint.get("stroke", "none") in ("none", "transparent")
        or paint.get("stroke-width") in _ZEROS
        or paint.get("stroke-opacity") in _ZEROS
    )
    return no_fill and no_stroke


def slim_svg(svg: str) -> str:
    """The same drawing with less for the PDF renderer to walk.

    Dropped: plotly's empty layer groups (and groups without attributes, replaced by their
    children), shapes that leave no mark (legend toggles, zero-size scroll bars, paths without
    geometry), class names and screen-only properties; ``style`` declarations are turned into
    presentation attributes. Every visible element, attribute value and the drawing order are
    kept.

    Parameters
    ----------
    svg : str
        The SVG document, as plotly writes it.

    Returns
    -------
    str
        The slimmed document; text that cannot be parsed as XML, or whose root is not an SVG
        element, is returned unchanged.
    """
    import xml.etree.ElementTree as ET

    try:
        root = ET.fromstring(svg)
    except ET.ParseError:
        return svg
    if root.tag != f"{{{_SVG_NS}}}svg":
        return svg

    def clean(element: Any, inherited: dict[str, str]) -> None:
        attrib = element.attrib
        attrib.pop("class", None)
        style = attrib.pop("style", None)
        if style is not None:
            pairs = _declarations(style)
            if pairs is None:
                attrib["style"] = style
            else:
                kept = []
                for name, value in pairs:
                    if name in _PRESENTATION:
                        attrib[name] = value  # style wins over an attribute, as in CSS
                    elif name not in _SCREEN_ONLY:
                        kept.append(f"{name}: {value}")
                if kept:
                    attrib["style"] = "; ".join(kept)
        paint = {**inherited, **{key: attrib[key] for key in _PAINT if key in attrib}}
        for child in list(element):
            clean(child, paint)
            tag = child.tag.rpartition("}")[2]
            empty_group = (
                tag in ("g", "defs") and len(child) == 0 and "id" not in child.attrib and not (child.text or "").strip()
            )
            own = {**paint, **{key: child.attrib[key] for key in _PAINT if key in child.attrib}}
            if (empty_group or _draws_nothing(child, own)) and not (child.tail or "").strip():
                element.remove(child)
            elif tag == "g" and not child.attrib and not (child.text or "").strip() and not (child.tail or "").strip():
                # A group with no attributes changes nothing: its children take its place.
                at = list(element).index(child)
                element[at : at + 1] = list(child)

    clean(root, {})
    ET.register_namespace("", _SVG_NS)
    ET.register_namespace("xlink", _XLINK_NS)
    return ET.tostring(root, encoding="unicode")
