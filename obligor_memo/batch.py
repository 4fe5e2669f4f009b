"""A book of cases at once: ``obligor_memo.batch.run(paths, ...) -> pandas.DataFrame``.

The names are those of :mod:`obligor_memo.app.batch`, whose :mod:`obligor_memo.app.batch.run`
describes them.
"""

from obligor_memo.app.batch import BatchResult, BatchUsageError, find_cases, run, run_batch

__all__ = ["BatchResult", "BatchUsageError", "find_cases", "run", "run_batch"]
