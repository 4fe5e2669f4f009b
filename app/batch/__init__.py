"""Batches of cases (review season) on Dask distributed: see :mod:`.run`."""

from obligor_memo.app.batch.run import BatchResult, BatchUsageError, find_cases, run, run_batch

__all__ = ["BatchResult", "BatchUsageError", "find_cases", "run", "run_batch"]
