"""The memo's embedded record, and the check that its printed numbers still hold.

A memo carries two attached files:

- ``case.json``: the case in canonical JSON (sorted keys, no spaces, ASCII), the very bytes whose
  SHA-256 is the results' fingerprint;
- ``printed-figures.json``: every key figure as printed (label -> formatted text), the engine
  version, the fingerprint and the generation time.

:func:`verify_memo` re-evaluates the attached case with the engine installed now, formats the
figures again with the same formatter and compares them one by one. A changed engine, a tampered
case or tampered figures show up as named differences. The figure labels and formats are defined
once here, in :func:`printed_figures`; the memo prints the same strings.
"""

from __future__ import annotations

import hashlib
import io
import json
from dataclasses import dataclass, field
from typing import Any

from obligor_memo.app.present import formatting as fmt

CASE_FILE = "case.json"
FIGURES_FILE = "printed-figures.json"
RECORD_FORMAT = 1


class MemoRecordError(ValueError):
    """The PDF is not a memo this tool wrote, or its record cannot be read."""


def canonical_case_json(results: Any) -> bytes:
    """The case exactly as fingerprinted (engine.evaluate.canonical_case_json)."""
    from obligor_memo.engine.evaluate import canonical_case_json as canonical

    return canonical(results.case)


def covenant_line(c: Any) -> dict[str, str]:
    """One covenant as the memo prints it (the decision page and section 1 use these strings)."""
    value_fmt = (lambda v: fmt.pct(v, 1)) if c.metric == "ebitda_margin" else fmt.times
    if c.ebitda_fall_to_breach is not None and not c.breached:
        fall = fmt.pct(c.ebitda_fall_to_breach, 1)
    else:
        fall = c.note or "n/a"
    return {
        "label": c.label,
        "limit": f"{'at most' if c.direction == 'max' else 'at least'} {value_fmt(c.threshold)}",
        "tested": c.tested,
        "year": str(c.year) if c.year is not None else "n/a",
        "value": value_fmt(c.value) if c.value is not None else "not computable",
        "headroom": fmt.pct(c.headroom, 1) if c.headroom is not None else "n/a",
        "fall": fall,
        "ebitda_at_breach": fmt.money(c.ebitda_at_breach) if c.ebitda_at_breach is not None else "n/a",
        "status": "breached" if c.breached else "holds" if c.breached is False else "not tested",
    }


def printed_figures(results: Any) -> dict[str, str]:
    """Every figure the memo prints and verify re-checks: label -> text as printed.

    Summary amounts carry the currency; per-facility amounts are printed in tables whose header
    names the currency, so they are recorded without it, as printed.
    """
    cur = results.case.borrower.currency
    pd, t = results.pd, results.total
    out: dict[str, str] = {
        "PD in force": fmt.pd_pct(pd.pd),
        "Model PD": fmt.pd_pct(pd.model_pd),
        "Distance to default": fmt.num(pd.distance_to_default, 3),
        "Grade": pd.grade if pd.grade is not None else "not graded",
        "Asset value": fmt.money(pd.asset_value, cur),
        "Asset volatility": fmt.pct(pd.asset_volatility),
        "Default point": fmt.money(pd.default_point, cur),
        "Total EAD": fmt.money(t.ead, cur),
        "Total EL": fmt.money(t.expected_loss, cur),
        "EL rate": fmt.pct(t.el_rate, 3),
        "Total UL": fmt.money(t.unexpected_loss, cur),
        "Total RWA": fmt.money(t.rwa, cur),
        "Regulatory capital": fmt.money(t.regulatory_capital, cur),
        "Loss quantile (VaR)": fmt.money(t.value_at_risk, cur),
        "Economic capital": fmt.money(t.economic_capital, cur),
        "Economic capital (single factor)": fmt.money(t.economic_capital_single_factor, cur),
        "Economic capital (standalone)": fmt.money(t.economic_capital_standalone, cur),
        "One-year PD": fmt.pd_pct(pd.pd_one_year),
        "IRB EL": fmt.money(t.regulatory_expected_loss, cur),
        "Lifetime EL": fmt.money(t.lifetime_expected_loss),  # table headed [currency]
    }
    if pd.asset_growth is not None:
        out["Asset growth"] = fmt.pct(pd.asset_growth)
    for f in results.facilities:
        out[f"{f.id}: EAD"] = fmt.money(f.ead)
        out[f"{f.id}: CCF"] = fmt.pct(f.ccf, 0)
        out[f"{f.id}: LGD"] = fmt.pct(f.lgd, 1)
        out[f"{f.id}: EL"] = fmt.money(f.expected_loss)
        out[f"{f.id}: UL"] = fmt.money(f.unexpected_loss)
        out[f"{f.id}: risk weight"] = fmt.pct(f.risk_weight, 1)
        out[f"{f.id}: RWA"] = fmt.money(f.rwa)
    p = results.pricing
    if p is not None:
        out["Minimum spread"] = (
            fmt.pct(p.minimum_spread) if p.minimum_spread is not None else "not defined (nothing drawn)"
        )
        out["Proposed spread"] = fmt.pct(p.proposed_spread)
        out["RAROC"] = fmt.pct(p.raroc, 1) if p.raroc is not None else "undefined (capital 0)"
        out["RAROC (regulatory capital)"] = fmt.pct(p.raroc_regulatory, 1)
        out["RAROC (economic capital)"] = fmt.pct(p.raroc_economic, 1)
    for i, c in enumerate(getattr(results, "covenants", ())):
        line = covenant_line(c)
        name = f"Covenant {i + 1} {line['label']}"
        out[f"{name}: value"] = line["value"]
        out[f"{name}: headroom"] = line["headroom"]
        out[f"{name}: EBITDA fall to breach"] = line["fall"]
    for z in getattr(results, "zscores", ()):
        if z.score is not None:
            out[f"Z-score {z.variant}"] = fmt.num(z.score, 2)
    market = getattr(results, "market", None)
    if market is not None:
        if market.merton is not None:
            out["Market-implied PD"] = fmt.pd_pct(market.merton.pd)
            out["Market distance to default"] = fmt.num(market.merton.distance_to_default, 3)
        out["Naive market PD"] = fmt.pd_pct(float(market.naive.pd))
    for s in getattr(results, "scenarios", None) or ():
        out[f"Scenario {s.name}: PD"] = fmt.pd_pct(s.figures.pd)
        out[f"Scenario {s.name}: EL"] = fmt.money(s.figures.expected_loss)
        out[f"Scenario {s.name}: RWA"] = fmt.money(s.figures.rwa)
    sensitivity = getattr(results, "sensitivity", None)
    for row in sensitivity.rows if sensitivity is not None else ():
        out[f"Sensitivity {row.label}: EL low"] = fmt.money(row.el_low)
        out[f"Sensitivity {row.label}: EL high"] = fmt.money(row.el_high)
    return out


def figures_record(results: Any, *, generated_at: str) -> bytes:
    """The ``printed-figures.json`` attachment (canonical JSON, so identical inputs match)."""
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
    """Every embedded file of a PDF: name -> content (first copy where a name repeats)."""
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
    label: str
    printed: str | None  # None: the figure is new (the memo did not print it)
    now: str | None  # None: the engine no longer produces it

    @property
    def holds(self) -> bool:
        """A figure the memo did not print cannot have changed."""
        return self.printed is None or self.printed == self.now


@dataclass(frozen=True)
class VerifyReport:
    printed_engine_version: str
    current_engine_version: str
    recorded_fingerprint: str
    case_fingerprint: str
    generated_at: str
    checks: tuple[FigureCheck, ...] = field(default_factory=tuple)

    @property
    def fingerprint_holds(self) -> bool:
        return self.recorded_fingerprint == self.case_fingerprint

    @property
    def changed(self) -> tuple[FigureCheck, ...]:
        return tuple(c for c in self.checks if not c.holds)

    @property
    def ok(self) -> bool:
        return self.fingerprint_holds and not self.changed

    def text(self) -> str:
        """A plain report, one line per figure, that a committee secretary can file."""
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
        held = sum(c.holds and c.printed is not None for c in self.checks)
        printed = sum(c.printed is not None for c in self.checks)
        verdict = (
            "all printed figures hold"
            if self.ok
            else (
                f"{len(self.changed)} figure(s) differ: " + ", ".join(c.label for c in self.changed)
                if self.changed
                else "the figures hold but the inputs do not match the fingerprint"
            )
        )
        lines.append(f"{held} of {printed} printed figures hold; {verdict}.")
        return "\n".join(lines)


def verify_memo(pdf: bytes) -> VerifyReport:
    """Re-evaluate the memo's embedded case and compare each printed figure.

    Raises :class:`MemoRecordError` when the PDF carries no readable record, and
    :class:`engine.errors.CaseError` when the embedded case no longer validates.
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
    return VerifyReport(
        printed_engine_version=meta[0],
        current_engine_version=ENGINE_VERSION,
        recorded_fingerprint=meta[1],
        case_fingerprint=embedded_hash,
        generated_at=meta[2],
        checks=checks,
    )
