"""``obligor_memo.batch.run(paths, ...) -> pandas.DataFrame``: a book of cases at once (see
:mod:`obligor_memo.app.batch.run`)."""

from obligor_memo.app.batch import BatchResult, BatchUsageError, find_cases, run, run_batch

__all__ = ["BatchResult", "BatchUsageError", "find_cases", "run", "run_batch"]
