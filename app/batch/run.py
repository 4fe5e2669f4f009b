"""Review season: every case of a book evaluated (and its memo printed) on Dask distributed.

One task per case, run on a local cluster of worker processes (one thread each: the memo's
chart browser and its garbage-collection settings belong to a process) or on an existing
cluster (``scheduler="tcp://host:port"``). Each worker keeps one warm chart browser, started by
a worker plugin and closed at the end. A bad case never stops the batch: it becomes a row of
errors.csv. Results land in a pandas DataFrame first; the files are written from it.

``resume``: a memo already in OUTDIR whose embedded case has the same fingerprint is not
printed again (the manifest ``.batch-manifest.json`` keeps each case's row and fingerprint).
"""

from __future__ import annotations

import json
import logging
import signal
import sys
import threading
import time
from collections.abc import Callable, Iterable, Sequence
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import pandas as pd
from distributed import WorkerPlugin
from obligor_memo.app.batch.portfolio import frames, row_from, write_outputs

log = logging.getLogger(__name__)

CASE_SUFFIXES = (".yaml", ".yml", ".json")
MANIFEST = ".batch-manifest.json"
CHUNK_MAX = 25  # cases per task without memos (about 0.25 s of work; memos go one by one)


class BatchUsageError(ValueError):
    """A mistake in the command itself (no case found, a bad option): exit code 2."""


@dataclass
class BatchResult:
    """The batch's outcome: the succeeded cases (one row each), the failed ones, and counts."""

    portfolio: pd.DataFrame
    """One row per succeeded or skipped case (see :func:`obligor_memo.app.batch.portfolio.frames`)."""
    errors: pd.DataFrame
    """One row per problem of a failed case: ``case_file``, ``field``, ``message``."""
    skipped: int = 0
    """Cases not run again because their memo with the same inputs was already there (resume)."""
    seconds: float = 0.0
    """Wall time of the whole batch, cluster start included [s]."""
    startup_seconds: float = 0.0
    """Of which: starting the cluster (or connecting) and the chart browsers [s]."""
    workers: int = 0
    """Workers the cluster had when the last case was done."""
    notes: list[str] = field(default_factory=list)
    """Remarks on the batch as a whole (run_batch leaves it empty)."""


def find_cases(paths: Iterable[str | Path]) -> list[Path]:
    """Case files given, and those found in given folders (recursively; hidden ones skipped).

    In a folder, files ending in .yaml, .yml or .json are cases, in sorted order; a file given
    by name is taken whatever its suffix.

    Parameters
    ----------
    paths : Iterable[str | Path]
        Case files and folders.

    Returns
    -------
    list[Path]
        The cases, resolved, each once, in the order found.

    Raises
    ------
    BatchUsageError
        If a path does not exist, no case is found, or two cases have the same name without
        suffix (their memos would share one file name).
    """
    found: list[Path] = []
    for given in paths:
        path = Path(given)
        if path.is_dir():
            found += sorted(
                p
                for p in path.rglob("*")
                if p.is_file()
                and p.suffix.lower() in CASE_SUFFIXES
                and not any(part.startswith(".") for part in p.relative_to(path).parts)
            )
        elif path.is_file():
            found.append(path)
        else:
            raise BatchUsageError(f"CASE_OR_FOLDER: got {str(given)!r}; allowed: an existing case file or folder")
    unique = list(dict.fromkeys(p.resolve() for p in found))
    if not unique:
        raise BatchUsageError("CASE_OR_FOLDER: no case file (.yaml, .yml, .json) found in the paths given")
    stems = [p.stem for p in unique]
    clashes = sorted({s for s in stems if stems.count(s) > 1})
    if clashes:
        raise BatchUsageError(
            f"CASE_OR_FOLDER: several cases are named {', '.join(clashes[:5])}; allowed: "
            "case files with distinct names (each memo is OUTDIR/<name>.pdf)"
        )
    return unique


# --------------------------------------------------------------------------- one case (on a worker)


def evaluate_case(case_file: str, outdir: str | None, memos: bool, done: dict[str, Any] | None) -> dict[str, Any]:
    """One case: {"status": "ok" | "skipped", "row": ...} or {"status": "failed", "error": ...}.

    Plain data only crosses the wire (no Results objects). With a memo to print the case is
    analysed and its memo written to ``outdir/<name>.pdf`` (through a ``.pdf.part`` file);
    otherwise it is only evaluated. No exception leaves: a case error lists each problem, any
    other failure is one row with field "(internal)".

    Parameters
    ----------
    case_file : str
        Path of the case file.
    outdir : str | None
        Folder of the memos; None for none.
    memos : bool
        Whether to print the memo (only with an ``outdir``).
    done : dict[str, Any] | None
        The case's entry in the resume manifest (``fingerprint`` and ``row``), or None: a case
        whose fingerprint matches and whose memo exists is skipped and keeps that row.

    Returns
    -------
    dict[str, Any]
        ``status`` and either ``row`` (see :func:`obligor_memo.app.batch.portfolio.row_from`)
        or ``error`` (a list of rows with ``case_file``, ``field`` and ``message``).
    """
    from obligor_memo.engine.errors import CaseError
    from obligor_memo.engine.evaluate import evaluate, fingerprint
    from obligor_memo.engine.loading import load_case

    try:
        case = load_case(case_file)
        stamp = fingerprint(case)
        memo_path = Path(outdir) / f"{Path(case_file).stem}.pdf" if outdir and memos else None
        if done and memo_path is not None and done.get("fingerprint") == stamp and memo_path.is_file():
            return {"status": "skipped", "row": done["row"]}
        if memo_path is not None:
            from obligor_memo.app.memo import render_memo_pdf
            from obligor_memo.engine.analysis import analyse

            results = analyse(case)
            pdf = render_memo_pdf(results)
            temp = memo_path.with_suffix(".pdf.part")
            temp.write_bytes(pdf)
            temp.replace(memo_path)
        else:
            results = evaluate(case)
        row = row_from(case_file, results.to_dict(), str(memo_path) if memo_path else None)
        return {"status": "ok", "row": row}
    except CaseError as exc:
        return {
            "status": "failed",
            "error": [{"case_file": case_file, "field": p.field, "message": p.sentence()} for p in exc.problems],
        }
    except Exception as exc:  # a bug or a chart fault: the batch goes on, the case is listed
        log.exception("case %s failed", case_file)
        return {
            "status": "failed",
            "error": [{"case_file": case_file, "field": "(internal)", "message": f"{type(exc).__name__}: {exc}"}],
        }


def evaluate_cases(
    case_files: list[str], outdir: str | None, memos: bool, done: list[dict[str, Any] | None]
) -> list[dict[str, Any]]:
    """Several cases in one task, as :func:`evaluate_case` runs each.

    Without memos a case takes milliseconds, less than a task's own scheduling cost, so cases
    travel in chunks.

    Parameters
    ----------
    case_files : list[str]
        Paths of the case files.
    outdir : str | None
        Folder of the memos; None for none.
    memos : bool
        Whether to print the memos.
    done : list[dict[str, Any] | None]
        Each case's entry in the resume manifest, or None, in the order of ``case_files``.

    Returns
    -------
    list[dict[str, Any]]
        The outcome of each case, in order.
    """
    return [evaluate_case(case, outdir, memos, entry) for case, entry in zip(case_files, done)]


class ChartBrowserPlugin(WorkerPlugin):
    """Keeps one warm chart browser per worker process (started on setup, closed on teardown)."""

    name = "obligor-memo-chart-browser"

    def setup(self, worker: Any) -> None:
        """Start the worker's chart browser without waiting for it; a failure is only logged.

        Parameters
        ----------
        worker : Any
            The Dask worker (not used).
        """
        from obligor_memo.app.memo import start_chart_exporter

        try:
            start_chart_exporter(wait=False)
        except Exception:  # the memos then say why they have no browser
            log.warning("the chart browser did not start on this worker", exc_info=True)

    def teardown(self, worker: Any) -> None:
        """Close the worker's chart browser.

        Parameters
        ----------
        worker : Any
            The Dask worker (not used).
        """
        from obligor_memo.app.memo import stop_chart_exporter

        stop_chart_exporter()


# --------------------------------------------------------------------------- the batch (the driver)


def _manifest(outdir: Path | None) -> dict[str, Any]:
    if outdir is None or not (outdir / MANIFEST).is_file():
        return {}
    try:
        return json.loads((outdir / MANIFEST).read_text(encoding="utf-8"))
    except (OSError, ValueError):
        log.warning("the batch manifest in %s could not be read; every case is run again", outdir)
        return {}


def _write_manifest(outdir: Path, portfolio: pd.DataFrame) -> None:
    entries = {
        row["case_file"]: {"fingerprint": row["fingerprint"], "row": row}
        for row in json.loads(portfolio.to_json(orient="records"))
    }
    temp = outdir / (MANIFEST + ".part")
    temp.write_text(json.dumps(entries, sort_keys=True), encoding="utf-8")
    temp.replace(outdir / MANIFEST)


def _client(workers: int | None, scheduler: str | None) -> tuple[Any, Any]:
    from distributed import Client, LocalCluster

    if scheduler:
        return Client(scheduler, timeout="20s"), None
    # The worker processes start with Ctrl+C ignored (an ignored signal stays ignored in a child):
    # a terminal sends SIGINT to the whole process group, and this process alone should answer
    # it, by cancelling the tasks and closing the cluster, which stops the workers.
    main_thread = threading.current_thread() is threading.main_thread()
    previous = signal.signal(signal.SIGINT, signal.SIG_IGN) if main_thread else None
    try:
        cluster = LocalCluster(
            n_workers=workers or 1,
            threads_per_worker=1,
            processes=True,
            dashboard_address=None,
            host="127.0.0.1",
            silence_logs=logging.ERROR,
        )
    finally:
        if main_thread:
            signal.signal(signal.SIGINT, previous)
    return Client(cluster), cluster


def run(
    paths: Sequence[str | Path],
    outdir: str | Path | None = None,
    *,
    workers: int | None = None,
    scheduler: str | None = None,
    memos: bool = True,
    resume: bool = False,
    progress: Callable[[int, int, int, float], None] | None = None,
) -> pd.DataFrame:
    """Evaluate every case (and print its memo into ``outdir`` unless ``memos=False``).

    The failed cases are in ``run_batch(...).errors``.

    Parameters
    ----------
    paths : Sequence[str | Path]
        Case files and folders searched for case files (see :func:`find_cases`).
    outdir : str | Path | None, optional
        Folder for the memos, portfolio.csv, portfolio.xlsx, errors.csv and the resume
        manifest (created if missing); None writes no file, and then ``memos`` must be False.
    workers : int | None, optional
        Worker processes of the local cluster (default 1); not used with ``scheduler``.
    scheduler : str | None, optional
        Address of an existing Dask scheduler, e.g. ``tcp://host:8786``; None starts a local
        cluster (closed at the end).
    memos : bool, optional
        Whether to print each case's memo (one case per task; without memos cases go in chunks).
    resume : bool, optional
        Whether to skip cases whose memo with the same inputs is already in ``outdir``.
    progress : Callable[[int, int, int, float], None] | None, optional
        Called after each finished task with the cases succeeded (skipped ones included), the
        cases in all, the cases failed and the seconds since the start [s] (see
        :func:`progress_line`).

    Returns
    -------
    pd.DataFrame
        The portfolio table, one row per succeeded case.

    Raises
    ------
    BatchUsageError
        For a usage mistake (see :func:`run_batch`).
    """
    return run_batch(
        paths, outdir, workers=workers, scheduler=scheduler, memos=memos, resume=resume, progress=progress
    ).portfolio


def run_batch(
    paths: Sequence[str | Path],
    outdir: str | Path | None = None,
    *,
    workers: int | None = None,
    scheduler: str | None = None,
    memos: bool = True,
    resume: bool = False,
    progress: Callable[[int, int, int, float], None] | None = None,
) -> BatchResult:
    """Evaluate every case on a Dask cluster, print the memos and write the batch's files.

    A case that fails becomes rows of the errors and never stops the batch. With ``outdir`` the
    tables are written there (see :func:`obligor_memo.app.batch.portfolio.write_outputs`) with
    the resume manifest. With memos each worker keeps one chart browser, closed at the end.
    Ctrl+C cancels the tasks and closes the client and any local cluster before the interrupt
    goes on.

    Parameters
    ----------
    paths : Sequence[str | Path]
        Case files and folders searched for case files (see :func:`find_cases`).
    outdir : str | Path | None, optional
        Folder for the memos, portfolio.csv, portfolio.xlsx, errors.csv and the resume
        manifest (created if missing); None writes no file, and then ``memos`` must be False.
    workers : int | None, optional
        Worker processes of the local cluster (default 1); not used with ``scheduler``.
    scheduler : str | None, optional
        Address of an existing Dask scheduler, e.g. ``tcp://host:8786``; None starts a local
        cluster (closed at the end).
    memos : bool, optional
        Whether to print each case's memo (one case per task; without memos cases go in chunks).
    resume : bool, optional
        Whether to skip cases whose memo with the same inputs is already in ``outdir``.
    progress : Callable[[int, int, int, float], None] | None, optional
        Called after each finished task with the cases succeeded (skipped ones included), the
        cases in all, the cases failed and the seconds since the start [s] (see
        :func:`progress_line`).

    Returns
    -------
    BatchResult
        The tables, the cases skipped, the timings and the number of workers.

    Raises
    ------
    BatchUsageError
        If ``workers`` is below 1, memos are asked for without an ``outdir``, or
        :func:`find_cases` refuses the paths.
    """
    if workers is not None and workers < 1:
        raise BatchUsageError(f"--workers: got {workers}; allowed: a whole number of at least 1")
    if memos and outdir is None:
        raise BatchUsageError("-o OUTDIR: missing; allowed: a folder for the memos (or memos=False)")
    cases = find_cases(paths)
    out = Path(outdir) if outdir is not None else None
    if out is not None:
        out.mkdir(parents=True, exist_ok=True)
    done = _manifest(out) if resume else {}
    from distributed import as_completed

    start = time.perf_counter()
    client, cluster = _client(workers, scheduler)
    rows: list[dict[str, Any]] = []
    errors: list[dict[str, Any]] = []
    skipped = 0
    futures = []
    registered = False
    n_workers = 0
    ready = 0.0
    try:
        if memos:
            client.register_plugin(ChartBrowserPlugin(), name=ChartBrowserPlugin.name)
            registered = True
        ready = time.perf_counter() - start
        slots = max(1, len(client.scheduler_info().get("workers", {})))
        size = 1 if memos else max(1, min(CHUNK_MAX, len(cases) // (4 * slots)))
        chunks = [cases[i : i + size] for i in range(0, len(cases), size)]
        futures = [
            client.submit(
                evaluate_cases,
                [str(c) for c in chunk],
                str(out) if out else None,
                memos,
                [done.get(str(c)) for c in chunk],
                key=f"cases-{i}-{chunk[0].stem}",
                pure=False,
            )
            for i, chunk in enumerate(chunks)
        ]
        for finished in as_completed(futures):
            for outcome in finished.result():
                if outcome["status"] == "failed":
                    errors += outcome["error"]
                else:
                    rows.append(outcome["row"])
                    skipped += outcome["status"] == "skipped"
            if progress is not None:
                progress(len(rows), len(cases), len({e["case_file"] for e in errors}), time.perf_counter() - start)
        n_workers = len(client.scheduler_info().get("workers", {}))
    except KeyboardInterrupt:
        for future in futures:
            future.cancel()
        raise
    finally:
        if registered:
            try:
                client.unregister_worker_plugin(ChartBrowserPlugin.name)  # closes each browser
            except Exception:
                log.warning("the chart browsers could not be closed through the scheduler", exc_info=True)
        client.close()
        if cluster is not None:
            cluster.close()
    portfolio, failed = frames(rows, errors)
    if out is not None:
        write_outputs(out, portfolio, failed)
        _write_manifest(out, portfolio)
    return BatchResult(
        portfolio,
        failed,
        skipped=skipped,
        seconds=time.perf_counter() - start,
        startup_seconds=ready,
        workers=n_workers,
    )


def progress_line(stream: Any = sys.stderr) -> Callable[[int, int, int, float], None]:
    """A one-line progress display: cases done, failed and the rate.

    Parameters
    ----------
    stream : Any, optional
        Text stream written to (standard error by default); the line is rewritten in place
        (carriage return) and ends with a newline once every case is handled.

    Returns
    -------
    Callable[[int, int, int, float], None]
        The ``progress`` callback of :func:`run_batch`.
    """

    def show(ok: int, total: int, failed: int, seconds: float) -> None:
        handled = ok + failed
        rate = handled / seconds if seconds > 0 else 0.0
        end = "\n" if handled >= total else ""
        stream.write(f"\r  {handled}/{total} cases, {failed} failed, {rate:.1f} cases/s   {end}")
        stream.flush()

    return show
