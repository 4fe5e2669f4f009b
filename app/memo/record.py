"""The memo's embedded record, and the check that its printed numbers still hold.

A memo carries two attached files:

- ``case.json``: the case in canonical JSON (sorted keys, no spaces, ASCII), the very bytes whose
  SHA-256 is the results' fingerprint;
- ``printed-figures.json``: every key figure as printed (label -> formatted text), the engine
  version, the fingerprint and the generation time.

:func:`verify_memo` re-evaluates the attached case with the engine installed now, formats the
figures again with the same formatter and compares them one by one. A changed engine, a tampered
case or tampered figures show up as named differences. The figure labels and formats are defined
once, in :func:`.printed.printed_figures` (re-exported here); the memo prints the same strings.
"""

from __future__ import annotations

import hashlib
import io
import json
from dataclasses import dataclass, field
from typing import Any

# Defined there (the view names the attached case file too), re-exported here.
from obligor_memo.app.memo.printed import CASE_FILE, FIGURES_FILE, printed_figures

RECORD_FORMAT = 1


class MemoRecordError(ValueError):
    """The PDF is not a memo this tool wrote, or its record cannot be read."""


def canonical_case_json(results: Any) -> bytes:
    """The case exactly as fingerprinted (engine.evaluate.canonical_case_json).

    Parameters
    ----------
    results : Any
        The evaluated case (:class:`obligor_memo.engine.evaluate.Results`).

    Returns
    -------
    bytes
        The case in canonical JSON (sorted keys, no spaces, ASCII), the ``case.json`` attachment.
    """
    from obligor_memo.engine.evaluate import canonical_case_json as canonical

    return canonical(results.case)


def figures_record(results: Any, *, generated_at: str) -> bytes:
    """The ``printed-figures.json`` attachment (canonical JSON, so identical inputs match).

    Parameters
    ----------
    results : Any
        The evaluated case (:class:`obligor_memo.engine.evaluate.Results`).
    generated_at : str
        The print time, as the memo shows it.

    Returns
    -------
    bytes
        ASCII JSON with ``format``, ``engine_version``, ``fingerprint``, ``generated_at`` and
        ``figures`` (label -> text as printed, in the memo's order).
    """
    record = {
        "format": RECORD_FORMAT,
        "engine_version": results.engine_version,
        "fingerprint": results.fingerprint,
        "generated_at": generated_at,
        "figures": printed_figures(results),
    }
    # Insertion order is deterministic and follows the memo, which a reader of the file expects.
    return json.dumps(record, indent=1, ensure_ascii=True).encode("ascii")


def read_attachments(pdf: bytes) -> dict[str, bytes]:
    """Every embedded file of a PDF: name -> content (first copy where a name repeats).

    Parameters
    ----------
    pdf : bytes
        The PDF file.

    Returns
    -------
    dict[str, bytes]
        The attachments by file name.

    Raises
    ------
    MemoRecordError
        If the bytes are not a PDF or cannot be read as one.
    """
    from pypdf import PdfReader
    from pypdf.errors import PdfReadError

    if not pdf.startswith(b"%PDF-"):
        raise MemoRecordError("The file is not a PDF (it does not start with %PDF-).")
    try:
        reader = PdfReader(io.BytesIO(pdf))
        found = reader.attachments
    except (PdfReadError, ValueError, KeyError, TypeError) as exc:
        raise MemoRecordError(f"The file is not a readable PDF ({exc}).") from None
    return {name: contents[0] for name, contents in found.items() if contents}


@dataclass(frozen=True)
class FigureCheck:
    """One recorded figure: its text as the memo printed it and as it is formatted now."""

    label: str
    """The figure's label, as in ``printed-figures.json``."""
    printed: str | None
    """The text as printed; None: the figure is new (the memo did not print it)."""
    now: str | None
    """The text as recomputed now; None: the engine no longer produces it."""

    @property
    def holds(self) -> bool:
        """The figure reads the same now as printed; a figure the memo did not print cannot have changed."""
        return self.printed is None or self.printed == self.now


@dataclass(frozen=True)
class VerifyReport:
    """What ``verify`` found: the record against the attached case, and the pages against both."""

    printed_engine_version: str
    """The engine version the memo was printed with, as recorded."""
    current_engine_version: str
    """The engine version that recomputed it now."""
    recorded_fingerprint: str
    """The fingerprint the record gives."""
    case_fingerprint: str
    """The SHA-256 of the attached case.json, as embedded."""
    generated_at: str
    """The print time, as recorded."""
    checks: tuple[FigureCheck, ...] = field(default_factory=tuple)
    """One check per figure recorded or computed now (recorded ones first)."""
    page_fingerprints: tuple[str | None, ...] = ()
    """The fingerprint in each page's footer (16 hex digits; None: the page carries none)."""
    page_checks: tuple[Any, ...] = ()
    """pages.PageCheck of the decision page and the body."""
    pages_note: str = ""
    """Why the pages could not be read ("" when they were)."""

    @property
    def pages_belong(self) -> bool:
        """Every page carries the fingerprint of the attached case."""
        short = self.case_fingerprint[:16]
        return bool(self.page_fingerprints) and all(f == short for f in self.page_fingerprints)

    @property
    def pages_hold(self) -> bool:
        """The pages were read, belong to the attached case, and every page check holds."""
        return not self.pages_note and self.pages_belong and all(c.holds for c in self.page_checks)

    @property
    def fingerprint_holds(self) -> bool:
        """The attached case hashes to the fingerprint the record gives."""
        return self.recorded_fingerprint == self.case_fingerprint

    @property
    def changed(self) -> tuple[FigureCheck, ...]:
        """The recorded figures that no longer hold."""
        return tuple(c for c in self.checks if not c.holds)

    @property
    def ok(self) -> bool:
        """The fingerprint holds, every recorded figure holds and the pages hold: the memo stands."""
        return self.fingerprint_holds and not self.changed and self.pages_hold

    def _page_lines(self) -> list[str]:
        if self.pages_note:
            return [f"PAGES NOT READ: {self.pages_note}."]
        short = self.case_fingerprint[:16]
        lines = []
        foreign = [i + 1 for i, f in enumerate(self.page_fingerprints) if f != short]
        if not foreign:
            lines.append(
                f"Pages: all {len(self.page_fingerprints)} pages carry the attached case's fingerprint {short}."
            )
        else:
            shown = sorted({f or "none" for f in self.page_fingerprints if f != short})
            lines.append(
                f"PAGES DO NOT BELONG TO THE ATTACHMENTS: page(s) {', '.join(map(str, foreign[:20]))} carry "
                f"{', '.join(shown)}, the attached case is {short}."
            )
        for c in self.page_checks:
            pages = f"page{'s' if len(c.pages) != 1 else ''} {', '.join(map(str, c.pages))}"
            scope = "every number" if c.part == "decision page" else "every number of the text and tables"
            if c.holds:
                lines.append(
                    f"  holds    {c.part} ({pages}): {scope} as recomputed, {c.matched} of {c.expected} numbers read"
                    + (" (chart labels not checked)" if c.part == "body" else "")
                )
                continue
            detail = []
            if c.missing:
                detail.append("recomputed but not printed: " + ", ".join(c.missing[:12]))
            if c.extra:
                detail.append("printed but not recomputed: " + ", ".join(c.extra[:12]))
            if c.recorded_absent:
                detail.append("recorded figures not on the page: " + ", ".join(c.recorded_absent))
            lines.append(f"  CHANGED  {c.part} ({pages}): " + "; ".join(detail))
        return lines

    def text(self) -> str:
        """A plain report, one line per figure, that a committee secretary can file.

        Returns
        -------
        str
            The engine versions and inputs check, a line per figure (holds, new, GONE or
            CHANGED), the page checks and a closing verdict; lines joined by newlines.
        """
        lines = [
            f"Memo generated {self.generated_at} by engine {self.printed_engine_version}; "
            f"re-computed now with engine {self.current_engine_version}."
        ]
        if self.printed_engine_version != self.current_engine_version:
            lines.append("NOTE: the engine version has changed since the memo was printed.")
        if self.fingerprint_holds:
            lines.append(
                f"Inputs: the embedded case matches the recorded fingerprint {self.recorded_fingerprint[:16]}..."
            )
        else:
            lines.append(
                f"INPUTS ALTERED: the embedded case hashes to {self.case_fingerprint[:16]}... "
                f"but the memo recorded {self.recorded_fingerprint[:16]}..."
            )
        width = max((len(c.label) for c in self.checks), default=10)
        for c in self.checks:
            if c.printed is None:
                lines.append(f"  new      {c.label.ljust(width)}  now {c.now} (not printed in the memo)")
            elif c.holds:
                lines.append(f"  holds    {c.label.ljust(width)}  {c.printed}")
            elif c.now is None:
                lines.append(f"  GONE     {c.label.ljust(width)}  printed {c.printed}, no longer computed")
            else:
                lines.append(f"  CHANGED  {c.label.ljust(width)}  printed {c.printed}, now {c.now}")
        lines.extend(self._page_lines())
        held = sum(c.holds and c.printed is not None for c in self.checks)
        printed = sum(c.printed is not None for c in self.checks)
        read = sum(c.matched for c in self.page_checks)
        if self.ok:
            verdict = "the recorded figures and the numbers read on the pages hold"
        elif self.changed:
            verdict = f"{len(self.changed)} figure(s) differ: " + ", ".join(c.label for c in self.changed)
        elif not self.fingerprint_holds:
            verdict = "the figures hold but the inputs do not match the fingerprint"
        else:
            verdict = "the attachments hold but the pages do not agree with them"
        lines.append(
            f"{held} of {printed} recorded figures hold; {read} numbers read on the decision page and the "
            f"body checked against the recomputation; {verdict}."
        )
        return "\n".join(lines)


def verify_memo(pdf: bytes) -> VerifyReport:
    """Re-evaluate the memo's embedded case and compare each printed figure.

    The case is analysed in full, as the memo command prints it; the numbers on the decision
    page and in the body's text and tables are read and checked too, unless the pages cannot be
    read (the report then says why).

    Parameters
    ----------
    pdf : bytes
        The memo's PDF.

    Returns
    -------
    VerifyReport
        The report; its ``ok`` says whether the memo stands.

    Raises
    ------
    MemoRecordError
        If the PDF carries no readable record.
    CaseError
        If the embedded case no longer validates.
    """
    from obligor_memo.engine import ENGINE_VERSION
    from obligor_memo.engine.analysis import analyse
    from obligor_memo.engine.case import parse_case

    files = read_attachments(pdf)
    missing = [name for name in (CASE_FILE, FIGURES_FILE) if name not in files]
    if missing:
        raise MemoRecordError(
            f"The PDF does not carry {' and '.join(missing)}; only memos written "
            "by 'obligor-memo memo' can be verified."
        )
    try:
        case_data = json.loads(files[CASE_FILE])
        record = json.loads(files[FIGURES_FILE])
        recorded = dict(record["figures"])
        meta = (str(record["engine_version"]), str(record["fingerprint"]), str(record["generated_at"]))
    except (ValueError, KeyError, TypeError) as exc:
        raise MemoRecordError(f"The memo's embedded record cannot be read ({type(exc).__name__}: {exc}).") from None
    case = parse_case(case_data, source="embedded case")
    # Hash the bytes as embedded: re-serialising would hide edits to the stored text.
    embedded_hash = hashlib.sha256(files[CASE_FILE]).hexdigest()
    # The full analysis, as the memo command prints it (scenarios and sensitivities included).
    results = analyse(case)
    now = printed_figures(results)
    labels = list(recorded) + [label for label in now if label not in recorded]
    checks = tuple(FigureCheck(label, recorded.get(label), now.get(label)) for label in labels)
    from obligor_memo.app.memo import pages as page_reading

    page_fingerprints: tuple[str | None, ...] = ()
    page_checks: tuple[Any, ...] = ()
    note = ""
    try:
        texts = page_reading.page_texts(pdf)
        page_fingerprints = page_reading.footer_fingerprints(texts)
        page_checks = page_reading.check_pages(
            texts, results, recorded=recorded, generated_at=meta[2], exact=page_reading.exact_reader(pdf, texts)
        )
    except page_reading.PagesUnreadable as exc:
        note = str(exc)
    return VerifyReport(
        printed_engine_version=meta[0],
        current_engine_version=ENGINE_VERSION,
        recorded_fingerprint=meta[1],
        case_fingerprint=embedded_hash,
        generated_at=meta[2],
        checks=checks,
        page_fingerprints=page_fingerprints,
        page_checks=page_checks,
        pages_note=note,
    )
