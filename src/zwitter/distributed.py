"""Scoring on Dask: the batch chunk scorer, partition by partition, on a cluster.

Two ways in:

* **Collections you already have.** :func:`score_dask_bag` and :func:`score_dask_dataframe` turn
  a Dask bag or DataFrame of sequences into a Dask DataFrame of scores (the columns of
  :func:`zwitter.batch.output_columns`), lazily; each partition is one vectorised call of
  :func:`zwitter.batch.score_chunk`. Compute it with whatever client is active.
* **Files.** ``zwitter batch ... --engine dask [--scheduler ADDRESS]`` (or
  ``score_fasta(..., engine="dask", scheduler=...)``) reads the files on this machine, sends
  blocks of records to the workers, and writes the results here in input order, so the workers
  need zwitter installed but not the files. Without an address a local cluster is started with
  one single-threaded worker process per ``--jobs``.

Running on an existing cluster::

    dask scheduler                      # on the scheduler machine (prints tcp://HOST:8786)
    dask worker tcp://HOST:8786         # on each worker machine, in an env with zwitter installed
    zwitter batch proteome.fasta.gz -o scores.parquet --engine dask --scheduler tcp://HOST:8786

or, from Python::

    from distributed import Client
    import dask.bag as db
    client = Client("tcp://HOST:8786")
    scores = score_dask_bag(db.from_sequence(records, npartitions=64), ph=[7.4])
    scores.to_parquet("scores/")
"""

from __future__ import annotations

import logging
from collections.abc import Iterable, Mapping
from pathlib import Path
from typing import TYPE_CHECKING, Any

from .batch import (
    BatchOptions,
    Block,
    ChunkResult,
    empty_frame,
    make_options,
    run_block,
    score_chunk,
)
from .errors import ParameterError
from .scales import Scale

if TYPE_CHECKING:
    import pandas as pd

__all__ = ["score_dask_bag", "score_dask_dataframe", "DaskEngine"]


# -- collections -----------------------------------------------------------------------------------
def _bag_records(
    items: Iterable[Any], partition: int
) -> tuple[list[str], list[str], list[str], list[str]]:
    """(ids, descriptions, sequences, reading errors) of the elements of one bag partition."""
    ids: list[str] = []
    descs: list[str] = []
    seqs: list[str] = []
    errors: list[str] = []
    for k, item in enumerate(items):
        ident, desc, seq, err = f"part{partition}_seq{k + 1}", "", None, ""
        if isinstance(item, str):
            seq = item
        elif isinstance(item, Mapping):
            ident = str(item.get("id", ident))
            desc = str(item.get("description", "") or "")
            seq = item.get("sequence")
        elif isinstance(item, (tuple, list)) and len(item) in (2, 3):
            ident = str(item[0])
            desc = str(item[1]) if len(item) == 3 else ""
            seq = item[-1]
        else:
            err = (
                f"bag element {k} of partition {partition} is a {type(item).__name__}; expected a "
                "sequence string, (id, sequence), (id, description, sequence) or a mapping with "
                "'sequence'"
            )
        if not err and not isinstance(seq, str):
            err = (
                f"the sequence of bag element {k} of partition {partition} is {seq!r}, not a string"
            )
        ids.append(ident)
        descs.append(desc)
        seqs.append(seq if isinstance(seq, str) else "")
        errors.append(err)
    return ids, descs, seqs, errors


def _score_bag_partition(
    items: Iterable[Any], options: BatchOptions, partition: int
) -> pd.DataFrame:
    ids, descs, seqs, errors = _bag_records(items, partition)
    return score_chunk(seqs, ids, descs, options, record_errors=errors)


def score_dask_bag(
    bag: Any,
    ph: float | Iterable[float] = (7.0,),
    scale: str | Path | Scale | None = None,
    cys: str = "free",
    conditions: Any = None,
) -> Any:
    """Score a Dask bag of sequences; a lazy Dask DataFrame, one row per element, in bag order.

    Elements are sequence strings (ids become ``part<P>_seq<k>``), ``(id, sequence)`` or
    ``(id, description, sequence)`` tuples, or mappings with ``sequence`` (and optional ``id``,
    ``description``). Other elements give a row with an error. The index restarts in every
    partition; ``.compute().reset_index(drop=True)`` numbers the rows.

    Examples
    --------
    >>> import dask, dask.bag as db
    >>> bag = db.from_sequence([("a", "DK"), ("b", "MKW")], npartitions=2)
    >>> with dask.config.set(scheduler="synchronous"):
    ...     df = score_dask_bag(bag, ph=[7.0], scale="lehninger").compute()
    >>> list(df["id"])
    ['a', 'b']
    """
    import dask.dataframe as dd
    from dask.delayed import delayed

    opts = make_options(ph, scale, cys, conditions, where="score_dask_bag")
    shared = delayed(opts, pure=True)
    parts = [
        delayed(_score_bag_partition, pure=True)(part, shared, i)
        for i, part in enumerate(bag.to_delayed())
    ]
    return dd.from_delayed(parts, meta=empty_frame(opts), verify_meta=False)


def _score_frame_partition(
    frame: pd.DataFrame,
    options: BatchOptions,
    sequence_column: str,
    id_column: str | None,
    description_column: str | None,
) -> pd.DataFrame:
    seq_values = frame[sequence_column].tolist()
    seqs = [s if isinstance(s, str) else "" for s in seq_values]
    errors = [
        "" if isinstance(s, str) else f"column {sequence_column!r} holds {s!r}, not a sequence"
        for s in seq_values
    ]
    ids = [str(v) for v in (frame[id_column] if id_column else frame.index).tolist()]
    if description_column:
        descs = ["" if not isinstance(v, str) else v for v in frame[description_column].tolist()]
    else:
        descs = [""] * len(seqs)
    out = score_chunk(seqs, ids, descs, options, record_errors=errors)
    out.index = frame.index
    return out


def score_dask_dataframe(
    ddf: Any,
    sequence_column: str = "sequence",
    id_column: str | None = None,
    description_column: str | None = None,
    *,
    ph: float | Iterable[float] = (7.0,),
    scale: str | Path | Scale | None = None,
    cys: str = "free",
    conditions: Any = None,
) -> Any:
    """Score a Dask DataFrame with a column of sequences; a lazy Dask DataFrame of scores.

    The result keeps the input's index and partitions (join it back with ``ddf.join``). Ids come
    from ``id_column``, or from the index when it is None. Missing values give a row with an error.
    """
    opts = make_options(ph, scale, cys, conditions, where="score_dask_dataframe")
    for name, column in (
        ("sequence_column", sequence_column),
        ("id_column", id_column),
        ("description_column", description_column),
    ):
        if column is not None and column not in ddf.columns:
            names = ", ".join(map(str, ddf.columns))
            raise ParameterError(
                name, "score_dask_dataframe", f"a column of the frame ({names})", column
            )
    meta = empty_frame(opts)
    meta.index = ddf._meta.index[:0]
    return ddf.map_partitions(
        _score_frame_partition, opts, sequence_column, id_column, description_column,
        meta=meta, align_dataframes=False,
    )  # fmt: skip


# -- the file engine ----------------------------------------------------------------------------
class DaskEngine:
    """Runs :func:`zwitter.batch.run_block` on a Dask cluster (an address, or a local cluster).

    The options are broadcast to every worker once; each block is scattered to a worker and
    scored there. ``slots`` (blocks in flight) is twice the cluster's thread count, which keeps
    every worker busy and memory bounded.
    """

    def __init__(
        self, options: BatchOptions, fmt: str, *, scheduler: str | None = None, n_workers: int = 1
    ):
        import distributed

        dist: Any = distributed  # untyped package
        self.fmt = fmt
        self.cluster: Any = None
        try:
            if scheduler:
                self.client: Any = dist.Client(scheduler, timeout="20s", set_as_default=False)
            else:
                self.cluster = dist.LocalCluster(
                    # dashboard on a free port: a dashboard already on 8787 must not clash
                    n_workers=n_workers, threads_per_worker=1, processes=True,
                    dashboard_address=":0", silence_logs=logging.ERROR,
                )  # fmt: skip
                self.client = dist.Client(self.cluster, set_as_default=False)
        except (OSError, TimeoutError) as exc:
            if self.cluster is not None:
                self.cluster.close()
            where = f"the Dask scheduler at {scheduler}" if scheduler else "a local Dask cluster"
            raise ConnectionError(f"cannot reach {where}: {exc}") from None
        threads = sum(self.client.nthreads().values()) or 1
        self.slots = 2 * threads
        self._options = self.client.scatter(options, broadcast=True, hash=False)

    def submit(self, block: Block) -> Any:
        # Workers may run on other machines, without the input file: blocks go with their bytes.
        data = self.client.scatter(block.loaded(), hash=False)
        return self.client.submit(run_block, data, self._options, self.fmt, pure=False)

    def close(self, cancel: bool) -> None:
        try:
            self.client.close()
        finally:
            if self.cluster is not None:
                self.cluster.close()


def _check(result: ChunkResult) -> ChunkResult:  # pragma: no cover - typing aid
    return result
