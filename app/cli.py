"""The ``obligor-memo`` command: evaluate, memo, verify, app.

Starting the command imports neither Streamlit, plotly nor WeasyPrint; those load only in the
subcommand that needs them. A user's mistake ends with exit code 2 and one paragraph naming the
field, the value and what is allowed; never a traceback.
"""

from __future__ import annotations

import json
import logging
import sys
from pathlib import Path
from typing import Any

import click
from obligor_memo.app import settings

log = logging.getLogger(__name__)

EXIT_USER_ERROR = 2
EXIT_INTERNAL = 3
_FINISHED: list[bool] = []  # set by a command whose output is written and nothing is left to do


def run() -> None:
    """The console command: :func:`main`, ended without the interpreter's teardown after a memo.

    Once ``memo`` has written its PDF, freeing the heap it built (plotly's figure classes,
    WeasyPrint's boxes, pandas, SciPy) is all the interpreter still does: about 0.5 s of every
    cold memo on 2 cores. After that command the exit handlers are run and the output flushed,
    then the process ends at once (``os._exit``). Other commands (the workbench, the batch with its
    Dask workers) end the usual way.
    """
    import atexit
    import os

    try:
        main()
        code: object = 0
    except SystemExit as exc:
        code = exc.code
    if not _FINISHED:
        sys.exit(code)  # type: ignore[arg-type]
    status = code if isinstance(code, int) else (0 if code is None else 1)
    atexit._run_exitfuncs()  # what a normal exit runs: the chart browser's stop, finalizers
    logging.shutdown()
    sys.stdout.flush()
    sys.stderr.flush()
    os._exit(status)


def _fail(message: str, code: int = EXIT_USER_ERROR) -> None:
    click.echo(message, err=True)
    sys.exit(code)


def _guard(func):
    """Turn user mistakes into a paragraph and internal failures into a short report."""
    import functools

    @functools.wraps(func)
    def wrapper(*args, **kwargs):
        from obligor_memo.engine.errors import CaseError

        try:
            return func(*args, **kwargs)
        except CaseError as exc:
            _fail(exc.paragraph(limit=12))
        except click.exceptions.Exit:
            raise
        except (KeyboardInterrupt, BrokenPipeError):
            sys.exit(130)
        except Exception as exc:  # an engine bug: short report; traceback only on request
            if settings.current().debug:
                raise
            log.debug("internal error", exc_info=True)
            _fail(
                f"obligor-memo hit an internal error ({type(exc).__name__}: {exc}). This is a "
                "bug, not a problem with your input; set OBLIGOR_MEMO_DEBUG=1 to see the details "
                "and report them.",
                EXIT_INTERNAL,
            )

    return wrapper


@click.group(context_settings={"help_option_names": ["-h", "--help"]})
@click.version_option(package_name="obligor-memo", prog_name="obligor-memo")
def main() -> None:
    """One borrower's expected loss, from a case file to a signed credit memo."""


@main.command()
@click.argument("case", type=click.Path(dir_okay=False, path_type=Path))
@click.option("--json", "as_json", is_flag=True, help="Print one JSON object (the documented contract).")
@_guard
def evaluate(case: Path, as_json: bool) -> None:
    """Validate CASE (YAML or JSON) and compute EAD, PD, LGD, EL and the rest."""
    from obligor_memo.engine.analysis import analyse
    from obligor_memo.engine.loading import load_case

    results = analyse(load_case(case))
    if as_json:
        from obligor_memo.app.present.report import contract_json

        click.echo(json.dumps(contract_json(results), indent=2, allow_nan=False))
    else:
        from obligor_memo.app.present.report import summary_text

        click.echo(summary_text(results))


@main.command()
@click.argument("case", type=click.Path(dir_okay=False, path_type=Path))
@click.option(
    "-o",
    "--output",
    "output",
    required=True,
    type=click.Path(dir_okay=False, path_type=Path),
    help="Where to write the PDF memo.",
)
@click.option(
    "--page-size",
    type=click.Choice(["A4", "Letter"]),
    default=None,
    help="Paper size (default: the case's memo.page_size, else A4).",
)
@click.option(
    "--no-charts", is_flag=True, help="Print without charts (no browser needed); a note marks each chart's place."
)
@click.option(
    "--annex",
    is_flag=True,
    help="Add the technical annex: PD term structure, exposure, recovery, loss and capital, "
    "methods and sources, and every input listed.",
)
@_guard
def memo(case: Path, output: Path, page_size: str | None, no_charts: bool, annex: bool) -> None:
    """Write the credit memo for CASE as a PDF that carries its own inputs."""
    from obligor_memo.app.memo.chart_browser import ChartExporter, ChartsUnavailable

    if not output.parent.is_dir():
        _fail(
            f"-o/--output: got {str(output)!r}; allowed: a file in an existing folder "
            f"({str(output.parent)!r} does not exist)."
        )
    browser = None
    try:
        from obligor_memo.engine.loading import load_case

        loaded = load_case(case)
        if not no_charts and not _memo_drawn_before(loaded, page_size, annex):
            # The browser is the slowest part of a cold memo, so it starts first, while the case
            # is analysed; the memo closes it as soon as the charts are drawn, before the PDF is
            # written. A memo whose charts are all kept from an earlier print starts none.
            browser = ChartExporter().start(wait=False)
        from obligor_memo.app.memo import render_memo_pdf
        from obligor_memo.engine.analysis import analyse

        results = analyse(loaded)
        pdf = render_memo_pdf(results, charts=not no_charts, page_size=page_size, exporter=browser, annex=annex)
    except ChartsUnavailable as exc:
        _fail(f"The memo was not written: {exc}")
    finally:
        if browser is not None:
            browser.close()
    partial = output.with_name(output.name + ".partial")
    partial.write_bytes(pdf)
    partial.replace(output)
    click.echo(f"Wrote {output} ({len(pdf):,} bytes).")
    _FINISHED.append(True)


def _memo_drawn_before(case: Any, page_size: str | None, annex: bool) -> bool:
    """Whether every chart of this memo is kept on disk from an earlier print (no browser needed)."""
    from obligor_memo.app.memo import chart_cache
    from obligor_memo.app.memo.render import printed_case
    from obligor_memo.engine.evaluate import fingerprint

    if chart_cache.cache_dir() is None:
        return False
    printed = printed_case(case, page_size or case.memo.page_size)
    return chart_cache.memo_drawn(chart_cache.memo_key(fingerprint(printed), annex=annex))


@main.command()
@click.argument("memo_pdf", metavar="MEMO.pdf", type=click.Path(exists=True, dir_okay=False, path_type=Path))
@_guard
def verify(memo_pdf: Path) -> None:
    """Re-compute MEMO.pdf from the case it carries and check the figures on its pages.

    Checks the fingerprint in every page footer against the attached case, every number on the
    decision page and every recomputed number of the body's text and tables (chart labels and the
    appendices are not read), and reports how many numbers it checked. Exit 0 when all hold, 1
    otherwise.
    """
    from obligor_memo.app.memo.record import MemoRecordError, verify_memo

    try:
        report = verify_memo(memo_pdf.read_bytes())
    except MemoRecordError as exc:
        _fail(f"{memo_pdf}: {exc}")
    click.echo(report.text())
    sys.exit(0 if report.ok else 1)


@main.command()
@click.argument("old", type=click.Path(exists=True, dir_okay=False, path_type=Path))
@click.argument("new", type=click.Path(exists=True, dir_okay=False, path_type=Path))
@click.option("--json", "as_json", is_flag=True, help="Print one JSON object.")
@_guard
def compare(old: Path, new: Path, as_json: bool) -> None:
    """What changed from OLD to NEW (case files or memo PDFs), and why: each change split by cause."""
    from obligor_memo.app.memo.reading import read_last_review_path
    from obligor_memo.app.memo.record import MemoRecordError
    from obligor_memo.engine.compare import compare_cases

    try:
        last, now = read_last_review_path(old), read_last_review_path(new)
    except MemoRecordError as exc:
        _fail(str(exc))
    comparison = compare_cases(last.case, now.case, old_recorded=last.recorded)
    from obligor_memo.app.present import compare_report

    if as_json:
        click.echo(json.dumps(compare_report.compare_json(comparison), indent=2, allow_nan=False))
    else:
        click.echo(
            compare_report.compare_text(
                comparison, old_name=old.name, new_name=new.name, currency=now.case.borrower.currency
            )
        )


@main.command()
@click.option("--port", default=8501, show_default=True, type=click.IntRange(1024, 65535))
@click.option(
    "--host",
    default="127.0.0.1",
    show_default=True,
    help="Address to bind. Anything but 127.0.0.1 exposes the workbench to the network.",
)
@click.option(
    "--workdir",
    type=click.Path(file_okay=False, path_type=Path),
    default=None,
    help="Folder for autosaved cases (default: ~/.obligor-memo).",
)
def app(port: int, host: str, workdir: Path | None) -> None:
    """Start the workbench in the browser (Streamlit), on the sample borrower."""
    from obligor_memo.app.workbench.serve import serve

    sys.exit(serve(port=port, host=host, workdir=workdir))


@main.command()
@click.argument("case", type=click.Path(dir_okay=False, path_type=Path))
@click.option(
    "-o",
    "--output",
    "output",
    type=click.Path(dir_okay=False, path_type=Path),
    default=None,
    help="The workbook to write (.xlsx).",
)
@click.option(
    "--csv",
    "csv_dir",
    type=click.Path(file_okay=False, path_type=Path),
    default=None,
    help="Also (or instead) write one CSV per table into this folder.",
)
@_guard
def export(case: Path, output: Path | None, csv_dir: Path | None) -> None:
    """The results of CASE as a workbook (.xlsx) or CSV files, one sheet or file per table.

    The tables: inputs, statements as read, facilities, totals, PD, cautions, and where the
    results have them pricing (in total and by facility), term structure, sensitivity, PD grid,
    scenarios and credit metrics.
    """
    from obligor_memo.app.present.export import export_csvs, export_workbook
    from obligor_memo.engine.analysis import analyse
    from obligor_memo.engine.loading import load_case

    if output is None and csv_dir is None:
        _fail("obligor-memo export: say where to write: -o OUT.xlsx, --csv DIR, or both.")
    if output is not None and output.suffix.lower() != ".xlsx":
        _fail(f"-o: got {str(output)!r}; allowed: a file name ending in .xlsx.")
    if output is not None and not output.parent.is_dir():
        _fail(f"-o: the folder {str(output.parent)!r} does not exist.")
    results = analyse(load_case(case))
    if output is not None:
        output.write_bytes(export_workbook(results))
        click.echo(f"Wrote {output}.")
    if csv_dir is not None:
        files = export_csvs(results, csv_dir)
        click.echo(f"Wrote {len(files)} CSV files to {csv_dir}.")


@main.command()
@click.argument("paths", metavar="CASE_OR_FOLDER...", nargs=-1, required=True, type=click.Path(path_type=Path))
@click.option(
    "-o",
    "--output",
    "outdir",
    required=True,
    type=click.Path(file_okay=False, path_type=Path),
    help="Folder for the memos, portfolio.csv / .xlsx and errors.csv.",
)
@click.option(
    "--workers", type=click.IntRange(1, 512), default=None, help="Worker processes of the local cluster (default: 1)."
)
@click.option(
    "--scheduler",
    default=None,
    metavar="ADDRESS",
    help="An existing Dask scheduler, e.g. tcp://10.0.0.5:8786 (then --workers is the cluster's).",
)
@click.option("--no-memos", is_flag=True, help="Evaluate only: no PDF memos.")
@click.option("--resume", is_flag=True, help="Skip cases whose memo with the same inputs is already in OUTDIR.")
@_guard
def batch(
    paths: tuple[Path, ...], outdir: Path, workers: int | None, scheduler: str | None, no_memos: bool, resume: bool
) -> None:
    """Evaluate every case (files, or folders searched for case files) and print their memos.

    Exit 0 when every case succeeded, 1 when some failed (listed in OUTDIR/errors.csv), 2 for a
    mistake in the command.
    """
    from obligor_memo.app.batch import BatchUsageError, run_batch
    from obligor_memo.app.batch.run import progress_line

    if scheduler is not None and workers is not None:
        _fail("--workers: not allowed with --scheduler (the cluster has its own workers).")
    try:
        result = run_batch(
            list(paths),
            outdir,
            workers=workers,
            scheduler=scheduler,
            memos=not no_memos,
            resume=resume,
            progress=progress_line(),
        )
    except BatchUsageError as exc:
        _fail(f"obligor-memo batch: {exc}.")
    except KeyboardInterrupt:
        _fail("obligor-memo batch: stopped (Ctrl+C); the cluster is closed. Run again with --resume.", 130)
    except OSError as exc:
        _fail(f"obligor-memo batch: {exc}. Check the scheduler address and the output folder.")
    failed = sorted(set(result.errors["case_file"]))
    click.echo(
        f"{len(result.portfolio)} case(s) done ({result.skipped} unchanged, skipped), {len(failed)} failed, "
        f"in {result.seconds:.1f} s on {result.workers} worker(s); results in {outdir}/portfolio.csv"
    )
    if failed:
        click.echo("Failed (see errors.csv):", err=True)
        for name in failed:
            click.echo(f"  {name}", err=True)
        sys.exit(1)


if __name__ == "__main__":  # pragma: no cover
    run()
