"""The memo's pages read back: the fingerprint each page carries and the figures it prints.

``verify`` (in :mod:`.record`) uses this to check the pages themselves, not only the attachments:

- every page's footer carries the first 16 hex digits of the inputs' fingerprint; all pages
  must carry the fingerprint of the attached case;
- the decision page: the numbers printed on it, as a multiset, must equal the numbers of the
  decision page rendered again from the recomputation (the same template and formats, the
  record's generation time and page size): a number edited, added or removed shows up;
- the body (sections 1 to 4): every number of the body's text and tables rendered again must be
  printed there as often; the body's charts add tick labels, so extra numbers are not flagged.

A number is a run of digits with its thousands separators, decimals and a trailing "x"
(multiples), not the digits of a hex fingerprint or the month and day of a date; running
header and footer are taken off each page first. Text comes from poppler's
pdftotext when installed (fast), else pypdf.
"""

from __future__ import annotations

import io
import re
import shutil
import subprocess
from collections import Counter
from collections.abc import Callable
from dataclasses import dataclass
from html.parser import HTMLParser
from typing import Any

NUMBER = re.compile(r"(?<![\w.,])(?<!\d-)-?\d[\d,]*(?:\.\d+)?x?(?![\w])")
FOOTER_FINGERPRINT = re.compile(r"Inputs\s+([0-9a-f]{16})(?![0-9a-f])")
PAGE_NUMBER = re.compile(r"Page\s+\d+\s+of\s+\d+")
DECISION_SECTIONS = ("summary",)
BODY_SECTIONS = ("review", "financials", "pd", "brief", "signoff")


class PagesUnreadable(ValueError):
    """The PDF's text cannot be extracted."""


def page_texts(pdf: bytes) -> list[str]:
    """The text of every page, in order.

    Read by poppler's pdftotext when it is installed and succeeds, else by pypdf.

    Parameters
    ----------
    pdf : bytes
        The memo's PDF.

    Returns
    -------
    list[str]
        One text per page.

    Raises
    ------
    PagesUnreadable
        If pdftotext is missing or fails and pypdf cannot read the PDF either.
    """
    tool = shutil.which("pdftotext")
    if tool is not None:
        done = subprocess.run([tool, "-enc", "UTF-8", "-", "-"], input=pdf, capture_output=True, timeout=120)
        if done.returncode == 0:
            pages = done.stdout.decode("utf-8", errors="replace").split("\f")
            return pages[:-1] if pages and not pages[-1].strip() else pages
    try:
        from pypdf import PdfReader

        return [page.extract_text() or "" for page in PdfReader(io.BytesIO(pdf)).pages]
    except Exception as exc:  # noqa: BLE001 - any reader failure means the pages cannot be read
        raise PagesUnreadable(f"the pages' text cannot be extracted ({type(exc).__name__}: {exc})") from None


def exact_reader(pdf: bytes, fallback: list[str]) -> Callable[[int], str]:
    """Page i's text as pypdf reads it, or the fallback's text where pypdf cannot read the page.

    pypdf does not join words hyphenated at a line end, which pdftotext does and which would
    glue "12-" and "13" into "1213".

    Parameters
    ----------
    pdf : bytes
        The memo's PDF.
    fallback : list[str]
        The text of every page from :func:`page_texts`.

    Returns
    -------
    Callable[[int], str]
        Page index (0-based) -> text; each page is read once and kept.
    """
    cache: dict[int, str] = {}
    try:
        from pypdf import PdfReader

        reader: Any = PdfReader(io.BytesIO(pdf))
    except Exception:  # noqa: BLE001 - no second reader: use the first
        reader = None

    def read(i: int) -> str:
        if i not in cache:
            try:
                cache[i] = reader.pages[i].extract_text() or "" if reader is not None else fallback[i]
            except Exception:  # noqa: BLE001 - this page only
                cache[i] = fallback[i]
        return cache[i]

    return read


def flat(text: str) -> str:
    """The text with every run of white space (en and no-break spaces included) as one space.

    Parameters
    ----------
    text : str
        Text read from a page or the HTML.

    Returns
    -------
    str
        The text on one line, stripped.
    """
    # pdftotext prints the headings' en-space as a plain space; one space between words.
    return " ".join(text.replace("\u2002", " ").replace("\u00a0", " ").split())


def footer_fingerprints(pages: list[str]) -> tuple[str | None, ...]:
    """The fingerprint printed in each page's footer (None where a page carries none).

    Parameters
    ----------
    pages : list[str]
        The text of every page.

    Returns
    -------
    tuple[str | None, ...]
        For each page the last "Inputs <16 hex digits>" it prints, the digits only.
    """
    out = []
    for text in pages:
        found = FOOTER_FINGERPRINT.findall(flat(text))
        out.append(found[-1] if found else None)
    return tuple(out)


def numbers(text: str) -> Counter[str]:
    """The numbers a text prints, each counted as often as it appears.

    Parameters
    ----------
    text : str
        Text read from a page or the HTML.

    Returns
    -------
    Counter[str]
        Each number as printed (see :data:`NUMBER` and the module docstring) -> its count.
    """
    return Counter(NUMBER.findall(flat(text)))


class _SectionText(HTMLParser):
    """The text of chosen <section id=...> elements of the memo's HTML."""

    def __init__(self, wanted: tuple[str, ...]):
        super().__init__(convert_charrefs=True)
        self.wanted, self.depth = wanted, 0
        self.current: str | None = None
        self.hidden: str | None = None
        self.parts: dict[str, list[str]] = {key: [] for key in wanted}

    def handle_starttag(self, tag: str, attrs: list[tuple[str, str | None]]) -> None:
        if "running-strings" in (dict(attrs).get("class") or ""):
            self.hidden = tag  # set for the running header and footer, never printed in place
        if tag == "section":
            if self.current is None and dict(attrs).get("id") in self.wanted:
                self.current, self.depth = dict(attrs)["id"], 0
            elif self.current is not None:
                self.depth += 1
        elif tag in ("br", "td", "th", "p", "li", "tr", "div") and self.current is not None:
            self.parts[self.current].append(" ")

    def handle_endtag(self, tag: str) -> None:
        if tag == self.hidden:
            self.hidden = None
        if tag == "section" and self.current is not None:
            if self.depth == 0:
                self.current = None
            else:
                self.depth -= 1

    def handle_data(self, data: str) -> None:
        if self.current is not None and self.hidden is None:
            self.parts[self.current].append(data)


def section_text(memo_html: str, wanted: tuple[str, ...]) -> str:
    """The text of chosen ``<section id=...>`` elements of the memo's HTML, running strings left out.

    Parameters
    ----------
    memo_html : str
        The memo's HTML.
    wanted : tuple[str, ...]
        The ids of the sections.

    Returns
    -------
    str
        The sections' text in the order of ``wanted``, table cells and paragraphs apart.
    """
    parser = _SectionText(wanted)
    parser.feed(memo_html)
    return " ".join("".join(parser.parts[key]) for key in wanted)


def _strip_running(text: str, borrower: str) -> str:
    """A page without its running header (the borrower's name once) and footer."""
    text = flat(text)
    text = PAGE_NUMBER.sub(" ", FOOTER_FINGERPRINT.sub(" ", text))
    name = flat(borrower)
    return text.replace(name, " ", 1) if name else text


@dataclass(frozen=True)
class PageCheck:
    """The numbers of one part of the memo, printed against rendered again from the recomputation."""

    part: str
    """"decision page" or "body"."""
    pages: tuple[int, ...]
    """1-based page numbers read."""
    expected: int
    """Numbers the recomputation prints there."""
    missing: tuple[str, ...]
    """Recomputed but not printed (as often)."""
    extra: tuple[str, ...]
    """Printed but not recomputed (decision page only; the body has charts)."""
    recorded_absent: tuple[str, ...] = ()
    """Recorded figures of this part not found in its text."""

    @property
    def holds(self) -> bool:
        """No number is missing or extra, and every recorded figure of the part is found."""
        return not self.missing and not self.extra and not self.recorded_absent

    @property
    def matched(self) -> int:
        """Numbers of the recomputation found printed."""
        return self.expected - len(self.missing)


# Recorded figures the decision page prints (label -> printed as in the record).
DECISION_FIGURES = (
    "Grade",
    "PD in force",
    "Total EAD",
    "Total EL",
    "EL rate",
    "Total RWA",
    "Economic capital",
    "Economic capital (standalone)",
    "One-year PD",
    "RAROC",
    "Minimum spread",
    "Proposed spread",
)


def _diff(expected: Counter[str], printed: Counter[str]) -> tuple[tuple[str, ...], tuple[str, ...]]:
    missing = tuple(sorted((expected - printed).elements()))
    extra = tuple(sorted((printed - expected).elements()))
    return missing, extra


def check_pages(
    pages: list[str],
    results: Any,
    *,
    recorded: dict[str, str],
    generated_at: str,
    exact: Callable[[int], str] | None = None,
) -> tuple[PageCheck, ...]:
    """The decision page and the body printed against the memo rendered again from ``results``.

    The memo is rendered again as HTML (without charts, on the case's page size, with the
    recorded print time); the decision page runs to the page that prints "generated <time>",
    the body from there to the page that starts with "Appendix A".

    Parameters
    ----------
    pages : list[str]
        The text of every page (pdftotext), used to find where the decision page ends and the
        appendices begin.
    results : Any
        The recomputed case (the Results of :func:`obligor_memo.engine.analysis.analyse`).
    recorded : dict[str, str]
        The recorded figures, label -> text as printed; those of :data:`DECISION_FIGURES` must
        appear on the decision page.
    generated_at : str
        The print time, as recorded.
    exact : Callable[[int], str] | None, optional
        Page index -> text the numbers are read from (see :func:`exact_reader`); None reads
        ``pages[i]``.

    Returns
    -------
    tuple[PageCheck, ...]
        The check of the decision page, then of the body.
    """
    read = exact or (lambda i: pages[i])
    from obligor_memo.app.memo.view import memo_html

    rendered = memo_html(
        results, charts={}, notes={}, charts_requested=False, page_size=results.case.memo.page_size, stamp=generated_at
    )
    borrower = results.case.borrower.name
    stamp = flat(f"generated {generated_at}")
    # The decision page ends on the page with its closing line ("... generated <time> ..."); a
    # request too long for one page runs on to the next.
    end = next((i for i, text in enumerate(pages) if stamp in flat(text)), 0)
    decision_pages = list(range(0, end + 1))
    decision_text = " ".join(_strip_running(read(i), borrower) for i in decision_pages)
    missing, extra = _diff(numbers(section_text(rendered, DECISION_SECTIONS)), numbers(decision_text))
    recorded_absent = tuple(
        label for label in DECISION_FIGURES if label in recorded and flat(recorded[label]) not in decision_text
    )
    decision = PageCheck(
        "decision page",
        tuple(i + 1 for i in decision_pages),
        sum(numbers(section_text(rendered, DECISION_SECTIONS)).values()),
        missing,
        extra,
        recorded_absent,
    )
    appendix = next(
        (i for i, text in enumerate(pages) if i > end and re.search(r"^Appendix A\b", text, flags=re.M)), len(pages)
    )
    body_pages = list(range(end + 1, appendix))
    body_text = " ".join(_strip_running(read(i), borrower) for i in body_pages)
    expected_body = numbers(section_text(rendered, BODY_SECTIONS))
    body_missing, _ = _diff(expected_body, numbers(body_text))
    body = PageCheck("body", tuple(i + 1 for i in body_pages), sum(expected_body.values()), body_missing, ())
    return decision, body
