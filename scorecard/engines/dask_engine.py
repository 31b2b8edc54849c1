"""The passes on a Dask cluster: one task per partition of a Parquet dataframe.

Every pass reads its partition from the Parquet files on a worker and returns a small count
table; neighbouring tables are merged on the workers, earlier partition first, so the result
is the one :class:`scorecard.engines.local.LocalEngine` gets from the same rows in the same order. The
per-row facts (outcome, weight, sample) are drawn on the client once over all rows, sent to
the workers once in slices cut at the partition boundaries, and reused by every later pass.

Use as a context manager, or call :meth:`DaskEngine.close`, to shut the cluster down.
"""

from __future__ import annotations

import logging
import weakref
from pathlib import Path

import numpy as np
import pandas as pd

from scorecard.data.formats import PARQUET_SUFFIXES
from scorecard.engines.base import PassProgress, pass_label, slice_rows
from scorecard.engines.passes import RowFacts
from scorecard.errors import InputError

LOCAL = "local"
LOCAL_WORKERS = 2
# Share of the machine's memory the workers of a local cluster may hold between them; the rest
# is for the client, which keeps the per-row facts and the merged pattern table.
LOCAL_MEMORY_SHARE = 0.6
CONNECT_TIMEOUT = "20s"


def parquet_files(source) -> list[Path]:
    """The Parquet files of ``source`` in the order the local reader takes them."""
    import pyarrow as pa
    import pyarrow.dataset as pads

    path = Path(source)
    if not path.exists():
        raise InputError(f"{path}: data file not found")
    if path.is_file():
        if path.suffix.lower() not in PARQUET_SUFFIXES:
            raise InputError(f"{path}: the Dask engine reads Parquet (a .parquet file or a folder "
                             "of them); write the data as Parquet or use engine: local")
        return [path]
    try:
        files = [Path(f) for f in pads.dataset(path, format="parquet").files]
    except (pa.ArrowInvalid, OSError) as exc:
        first = (str(exc).strip().splitlines() or [type(exc).__name__])[0]
        raise InputError(f"{path}: cannot read the Parquet data: {first}") from None
    if not files:
        raise InputError(f"{path}: the folder holds no Parquet files")
    return files


def _run_pass(fn, partition: pd.DataFrame, rows: RowFacts | None, args: tuple):
    return fn(partition, *args) if rows is None else fn(partition, rows, *args)


def _run_collect(fn, partition: pd.DataFrame):
    return len(partition), fn(partition)


def _shut_down(client, cluster) -> None:
    client.close()
    if cluster is not None:
        cluster.close()


class DaskEngine:
    """Runs every pass on the partitions of a Parquet file or folder, on a Dask cluster.

    Parameters
    ----------
    source : path
        A Parquet file, or a folder of Parquet files (read in the order of their names).
    address : str
        ``"local"`` starts a cluster of two worker processes on this machine; anything else is
        the address of a running scheduler, such as ``"tcp://10.0.0.5:8786"``.
    progress : callable, optional
        The build's stage printer; on a terminal each pass shows the rows of finished
        partitions and the time elapsed.

    Examples
    --------
    >>> with DaskEngine("applications.parquet", "local") as engine:  # doctest: +SKIP
    ...     result = build_scorecard(config, engine)
    """

    def __init__(self, source, address: str, progress=None):
        import dask.dataframe as dd

        self.files = parquet_files(source)
        self.source = Path(source)
        self.progress = progress
        self._cluster = None
        self.client = self._connect(address)
        self._finalizer = weakref.finalize(self, _shut_down, self.client, self._cluster)
        try:
            self.frame = dd.read_parquet([str(f) for f in self.files])
            self.partitions = self.frame.to_delayed()
        except (ValueError, OSError) as exc:
            self.close()
            raise InputError(f"{self.source}: cannot read the Parquet data: {exc}") from None
        self.columns = list(self.frame.columns)
        self._lengths: list[int] | None = None
        self._sent: tuple = (None, None)   # (the RowFacts sent, their slices on the workers)

    def _connect(self, address: str):
        from distributed import Client, LocalCluster

        if address == LOCAL:
            import psutil
            memory = int(psutil.virtual_memory().total * LOCAL_MEMORY_SHARE / LOCAL_WORKERS)
            self._cluster = LocalCluster(n_workers=LOCAL_WORKERS, threads_per_worker=1,
                                         processes=True, memory_limit=memory,
                                         dashboard_address=":0", silence_logs=logging.ERROR)
            return Client(self._cluster)
        try:
            return Client(address, timeout=CONNECT_TIMEOUT)
        except (OSError, TimeoutError, ValueError) as exc:
            raise InputError(f"engine.dask: cannot reach the Dask scheduler at {address}: "
                             f"{exc}") from None

    @property
    def n_rows(self) -> int:
        """Rows in the Parquet data, from the files' metadata."""
        if self._lengths is not None:
            return sum(self._lengths)
        import pyarrow.parquet as pq
        return sum(pq.ParquetFile(f).metadata.num_rows for f in self.files)

    def sample_rows(self, n: int = 1000) -> pd.DataFrame:
        """The first ``n`` rows of the first partition, with every column's type."""
        return self.frame.partitions[0].head(n, compute=True)

    def _partition_lengths(self) -> list[int]:
        if self._lengths is None:
            import dask
            self._lengths = [int(v) for v in self.client.compute(
                [dask.delayed(len)(p) for p in self.partitions], sync=True)]
        return self._lengths

    def _watch(self, label, futures) -> None:
        """Wait for the per-partition futures, moving the progress line as each finishes.

        The caller must hold no other reference to ``futures``: each result is let go as soon as
        it has been seen, so that only the merges keep it on the workers.
        """
        from distributed import as_completed

        n = len(futures)
        lengths = self._lengths or [self.n_rows / max(n, 1)] * n   # even guess until known
        where = {f.key: i for i, f in enumerate(futures)}
        waiting = as_completed(futures)
        futures.clear()
        shown = PassProgress(self.progress, label, self.n_rows)
        try:
            for future in waiting:
                shown.advance(round(lengths[where[future.key]]))
        finally:
            shown.finish()

    def _projected(self, columns) -> list:
        """The partitions, reading only ``columns`` (all when None) from the Parquet files.

        Names the data lack are left for the pass itself to report.
        """
        if columns is None:
            return self.partitions
        wanted = set(columns)
        return self.frame[[c for c in self.columns if c in wanted]].to_delayed()

    def collect(self, fn, columns=None):
        import dask

        futures = self.client.compute([dask.delayed(_run_collect)(fn, p)
                                       for p in self._projected(columns)])
        keys = list(futures)
        self._watch(pass_label(fn), futures)
        results = self.client.gather(keys)
        self._lengths = [n for n, _ in results]
        return tuple(np.concatenate(p) for p in zip(*(r for _, r in results)))

    def _row_slices(self, rows: RowFacts):
        """The slice of ``rows`` for each partition, on the workers; sent once per RowFacts."""
        sent, slices = self._sent
        if sent is not rows:
            bounds = np.concatenate([[0], np.cumsum(self._partition_lengths())])
            if bounds[-1] != len(rows.label):
                raise ValueError(f"the per-row facts cover {len(rows.label)} rows, "
                                 f"the data {bounds[-1]}")
            slices = self.client.scatter([slice_rows(rows, int(a), int(b))
                                          for a, b in zip(bounds[:-1], bounds[1:])])
            self._sent = (rows, slices)
        return slices

    def reduce(self, fn, merge, rows: RowFacts | None = None, *args, columns=None):
        import dask

        slices = self._row_slices(rows) if rows is not None else [None] * len(self.partitions)
        tasks = [dask.delayed(_run_pass)(fn, p, r, args)
                 for p, r in zip(self._projected(columns), slices)]
        futures = self.client.compute(tasks)
        merged = self._merge_on_workers(merge, futures)
        self._watch(pass_label(fn), futures)
        return merged.result()

    def _merge_on_workers(self, merge, futures):
        """Neighbours merged pairwise, earlier first, as soon as both are done."""
        level = list(futures)
        while len(level) > 1:
            # Merges outrank new partitions, so finished tables are folded before more pile up.
            paired = [self.client.submit(merge, a, b, priority=1, pure=False)
                      for a, b in zip(level[0::2], level[1::2])]
            level = paired + level[len(paired) * 2:]
        return level[0]

    def close(self) -> None:
        """Release the per-row slices, close the client and stop a cluster this engine started."""
        self._sent = (None, None)
        self._finalizer()

    def __enter__(self):
        return self

    def __exit__(self, *exc):
        self.close()
