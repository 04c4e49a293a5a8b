"""Proteome-scale scoring: streaming, chunked, parallel, and nothing lost.

The flow of a batch run::

    input file(s) --split--> blocks of whole records (bytes; main process, cheap)
                  --score--> one DataFrame per block (worker: parse, compose, one vectorised solve)
                  --encode-> CSV/TSV/JSON-lines text or an Arrow table (worker)
                  --write--> a temporary file beside the output, renamed when everything is written

* **Streaming.** Inputs are read in blocks of ``chunk_size`` records; at most a few blocks per
  worker are in flight, so memory does not grow with the file.
* **Vectorised.** A block of N sequences is one (N, K) count matrix
  (:func:`zwitter.sequence.compose_spans`, which counts the sequence lines where they lie in the
  block's bytes), scored by one call of :func:`zwitter.scoring.score_composition` (charge at M
  pH values as one N x M product, pI of all N rows by one vectorised root search); masses come
  from the (N, 32) letter-count matrix (:func:`zwitter.masses.chain_masses`). Ids and
  descriptions are cut out of the header lines with array operations too, into
  :class:`TextColumn` buffers that pyarrow takes as they are; Python loops only visit records
  with an error, a warning or an unusual header (blocks with old Mac line ends or text before
  the first header go through :func:`parse_fasta_block`, one string per record).
* **Parallel and ordered.** ``jobs > 1`` scores blocks in ``jobs`` worker processes while the
  main process cuts the input, collects the results and writes them (:class:`ProcessEngine`).
  Blocks of a plain file travel as a :class:`FileSpan` and each worker reads its bytes from the
  file; results are taken back in input order, so the output keeps the input order. The same
  block scorer runs on Dask (:mod:`zwitter.distributed`).
* **Nothing lost.** Every record appears once, in input order, including bad ones: their
  ``error`` column says what is wrong and where (input line, position in the sequence), and their
  numbers are empty. ``strict=True`` stops at the first bad record instead. A missing,
  truncated or corrupt input file is not a bad record but a bad input: InputFileError, and
  :func:`score_files` leaves no output file (the chunks before the damage are not written as if
  they were the whole file).
* **Scripts.** With ``jobs > 1`` and a start method other than fork (:func:`start_method`:
  another thread is running, or the system is not Linux) the workers re-import the script's
  main module: put the call under ``if __name__ == "__main__":``.

Output columns
--------------
``input`` (file name as given, ``<stdin>`` for ``-``), ``id`` (header up to the first whitespace),
``description``, ``length`` (residues), ``average_mass`` and ``monoisotopic_mass`` (Da, linear
chain: residues + H2O; empty when the sequence has X), ``pI``, ``charge_ph<pH>`` for each pH,
``n_D n_E n_C n_Y n_H n_K n_R n_U`` (ionizable residues), ``n_unknown`` (X), ``warnings``,
``error``. ``--cys bonded`` removes every cysteine thiol from the charge model; ``n_C`` still counts
the cysteines.

Extension points
----------------
* **Conditions** (temperature, ionic strength): pass ``conditions=`` any object whose
  ``apply(sites)`` returns a :class:`~zwitter.sites.SiteSet` with adjusted pKa values (such as
  :class:`zwitter.conditions.Conditions`); it is applied to each chunk's batch SiteSet before the
  solve. It must pickle when ``jobs > 1`` or on Dask.
* **Input formats**: :func:`register_input_format` adds an :class:`InputFormat` (a splitter that
  cuts an input into :class:`Block` objects in the main process, a block scorer that runs in the
  workers, and the output columns). FASTA is built in; SMILES (``.smi``) and SD files (``.sdf``)
  plug in the same way.
"""

from __future__ import annotations

import collections
import gzip
import math
import multiprocessing
import os
import shutil
import signal
import stat
import sys
import tempfile
import threading
import time
import uuid
import warnings
import zlib
from collections.abc import Callable, Generator, Iterable, Iterator, Sequence
from concurrent.futures import Future, ProcessPoolExecutor
from dataclasses import dataclass, field, replace
from pathlib import Path
from typing import IO, TYPE_CHECKING, Any, Protocol

import numpy as np
import numpy.typing as npt

from . import equilibrium as eq
from .errors import InputFileError, ParameterError
from .masses import chain_masses
from .scales import Scale, get_scale
from .scoring import score_composition
from .sequence import Composition, check_cys, compose, compose_spans

if TYPE_CHECKING:
    import pandas as pd

__all__ = [
    "DEFAULT_CHUNK_SIZE",
    "IONIZABLE",
    "BatchOptions",
    "BatchSummary",
    "Block",
    "FileSpan",
    "InputFormat",
    "make_options",
    "charge_column",
    "output_columns",
    "empty_frame",
    "score_chunk",
    "score_columns",
    "TextColumn",
    "to_frame",
    "to_arrow",
    "encode_rows",
    "score_list",
    "iter_score_fasta",
    "score_fasta",
    "score_files",
    "register_input_format",
    "input_format_for",
    "split_fasta",
    "parse_fasta_block",
    "OUTPUT_FORMATS",
    "output_format_for",
]

#: Records per chunk: large enough that numpy's per-call overhead vanishes, small enough that a
#: chunk's arrays (well under 1 kB per record: the 32-letter count row, site counts, outputs)
#: stay a few MB.
DEFAULT_CHUNK_SIZE = 10_000
#: Residues whose counts the output reports (their side chains carry the sites of the model).
IONIZABLE = "DECYHKRU"
#: Shortest sequence for which "only A, C, G, T/U and N" suggests a nucleotide sequence (a
#: rule of thumb of sequence-format sniffing; common practice).
NUCLEOTIDE_MIN_LENGTH = 20
#: Record errors printed on stderr by a run before it only counts them.
MAX_REPORTED_ERRORS = 5
_READ_SIZE = 1 << 20
#: Bytes per read of the plain-file scanner: small enough to stay in a core's L2 cache between
#: the copy from the page cache and the two scans that follow (measured: the main process's
#: system time with two jobs fell from 0.45 to 0.27 s per 510 MB against 1 MB reads).
_SCAN_SIZE = 1 << 17


# -- options ----------------------------------------------------------------------------------
@dataclass(frozen=True)
class BatchOptions:
    """What to compute for every record: pH values, pKa scale, cysteine policy, conditions.

    Build it with :func:`make_options` (which validates). ``token`` identifies the options across
    processes, so workers reuse one copy per run (and its cached letter-to-site layout).
    """

    ph: tuple[float, ...]
    scale: Scale
    cys: str = "free"
    conditions: Any = None
    token: str = field(default_factory=lambda: uuid.uuid4().hex)


def make_options(
    ph: float | Iterable[float] = (7.0,),
    scale: str | Path | Scale | None = None,
    cys: str = "free",
    conditions: Any = None,
    *,
    where: str = "score_fasta",
) -> BatchOptions:
    """Validated :class:`BatchOptions` (pH values in range and distinct, a known scale)."""
    values = [ph] if isinstance(ph, (int, float)) else list(ph)
    if not values:
        raise ParameterError("ph", where, "one or more pH values", values)
    grid = eq.check_ph(np.asarray(values, dtype=float), where)
    if grid.ndim != 1:
        raise ParameterError("ph", where, "a flat list of pH values", values)
    names = [charge_column(float(p)) for p in grid]
    if len(set(names)) != len(names):
        seen = [n for n in names if names.count(n) > 1][0]
        raise ParameterError(
            "ph",
            where,
            "distinct pH values",
            values,
            f"{seen.removeprefix('charge_ph')} is given twice.",
        )
    check_cys(cys, where)
    if conditions is not None and not callable(getattr(conditions, "apply", None)):
        raise ParameterError(
            "conditions", where, "an object with an apply(sites) method (zwitter.Conditions)",
            f"<{type(conditions).__name__}>",
        )  # fmt: skip
    return BatchOptions(tuple(float(p) for p in grid), get_scale(scale), cys, conditions)


_CANONICAL: collections.OrderedDict[str, BatchOptions] = collections.OrderedDict()


def _canonical(options: BatchOptions) -> BatchOptions:
    """The first copy of these options seen by this process.

    Each task that crosses a process boundary unpickles a fresh copy; keeping one per token lets
    the layout cache of :func:`zwitter.sequence.layout_for` (keyed on the scale object) hit.
    """
    kept = _CANONICAL.get(options.token)
    if kept is None:
        _CANONICAL[options.token] = kept = options
        while len(_CANONICAL) > 8:
            _CANONICAL.popitem(last=False)
    return kept


def charge_column(ph: float) -> str:
    """Charge column name for ``ph``: ``charge_ph7.0``, ``charge_ph7.4``, ``charge_ph7.25``."""
    text = f"{ph:g}"
    if "." not in text and "e" not in text:
        text += ".0"
    return f"charge_ph{text}"


def output_columns(options: BatchOptions) -> list[tuple[str, str]]:
    """(name, kind) of the output columns of sequence records; kind is str, int or float."""
    cols = [("input", "str"), ("id", "str"), ("description", "str"), ("length", "int")]
    cols += [("average_mass", "float"), ("monoisotopic_mass", "float"), ("pI", "float")]
    cols += [(charge_column(p), "float") for p in options.ph]
    cols += [(f"n_{r}", "int") for r in IONIZABLE] + [("n_unknown", "int")]
    cols += [("warnings", "str"), ("error", "str")]
    return cols


def empty_frame(options: BatchOptions) -> pd.DataFrame:
    """A frame with no rows and the output columns and dtypes (Dask ``meta``, empty inputs)."""
    import pandas as pd

    # ``str`` is the text dtype of the pandas in use (object in pandas 2, "str" in pandas 3), the
    # same that score_chunk's columns of Python strings get.
    dtypes: dict[str, Any] = {"str": str, "int": "Int64", "float": "float64"}
    return pd.DataFrame(
        {name: pd.Series([], dtype=dtypes[kind]) for name, kind in output_columns(options)}
    )


def _empty_columns(options: BatchOptions) -> Columns:
    empty: dict[str, Any] = {
        "str": lambda: np.zeros(0, dtype=object),
        "int": lambda: np.ma.MaskedArray(np.zeros(0, dtype=np.int64), mask=np.zeros(0, dtype=bool)),
        "float": lambda: np.zeros(0),
    }
    return {name: empty[kind]() for name, kind in output_columns(options)}


def to_frame(columns: Columns, options: BatchOptions) -> pd.DataFrame:
    """:data:`Columns` as a DataFrame (nullable Int64 for the counts)."""
    import pandas as pd

    first = next(iter(columns.values()), None)
    if first is None or len(first) == 0:
        return empty_frame(options)
    data = {}
    for name, v in columns.items():
        if isinstance(v, np.ma.MaskedArray):
            data[name] = pd.arrays.IntegerArray(np.asarray(v.data), np.ma.getmaskarray(v))
        elif isinstance(v, TextColumn):
            data[name] = np.array(v.tolist(), dtype=object)
        else:
            data[name] = v
    return pd.DataFrame(data)


class TextColumn(Sequence[str]):
    """N strings laid out as Arrow lays them out: UTF-8 bytes in one buffer and N + 1 offsets.

    The batch reader cuts ids and descriptions out of a FASTA block this way without making a
    Python string per record; the writers hand the buffers to pyarrow as they are.
    """

    __slots__ = ("offsets", "data")

    def __init__(self, offsets: npt.NDArray[np.int64], data: bytes):
        self.offsets = offsets
        self.data = data

    @classmethod
    def from_strings(cls, values: Iterable[str]) -> TextColumn:
        """The column of ``values`` (TypeError if one is not a string)."""
        vals = list(values)
        joined = "".join(vals)
        if not joined:
            return cls(np.zeros(len(vals) + 1, dtype=np.int64), b"")
        if joined.isascii():
            lengths = np.fromiter(map(len, vals), dtype=np.int64, count=len(vals))
            data = joined.encode("ascii")
        else:
            encoded = [v.encode("utf-8") for v in vals]
            lengths = np.fromiter(map(len, encoded), dtype=np.int64, count=len(vals))
            data = b"".join(encoded)
        return cls(np.concatenate([[0], np.cumsum(lengths)]).astype(np.int64), data)

    @classmethod
    def repeat(cls, value: str, n: int) -> TextColumn:
        raw = value.encode("utf-8")
        return cls(np.arange(n + 1, dtype=np.int64) * len(raw), raw * n)

    def __len__(self) -> int:
        return len(self.offsets) - 1

    def __getitem__(self, i: Any) -> Any:
        if isinstance(i, slice):
            return self.tolist()[i]
        n = len(self)
        if not -n <= i < n:
            raise IndexError("TextColumn index out of range")
        i = i + n if i < 0 else i
        return self.data[self.offsets[i] : self.offsets[i + 1]].decode("utf-8", errors="replace")

    def tolist(self) -> list[str]:
        cuts = self.offsets.tolist()
        if self.data.isascii():
            text = self.data.decode("ascii")
            return [text[a:b] for a, b in zip(cuts[:-1], cuts[1:])]
        raw = self.data
        return [raw[a:b].decode("utf-8", errors="replace") for a, b in zip(cuts[:-1], cuts[1:])]


def _bitmap(valid: npt.NDArray[np.bool_]) -> tuple[Any, int]:
    """Arrow validity buffer (None when every value is there) and the null count."""
    import pyarrow as pa

    nulls = int(valid.size - np.count_nonzero(valid))
    if not nulls:
        return None, 0
    return pa.py_buffer(np.packbits(valid, bitorder="little")), nulls


def _arrow_array(v: Any, type_: Any) -> Any:
    """One column as an Arrow array, built from its buffers where its layout allows.

    (``pyarrow.array`` would give the same array, but its first call imports pandas, which costs
    a fresh batch process about 0.3 s.)
    """
    import pyarrow as pa

    if isinstance(v, np.ndarray) and v.dtype == object and type_ == pa.string():
        try:
            v = TextColumn.from_strings(v.tolist())
        except (TypeError, UnicodeEncodeError):  # None, NaN, lone surrogates: pyarrow decides
            pass
    if isinstance(v, TextColumn) and type_ == pa.string() and len(v.data) < 2**31:
        offsets = pa.py_buffer(v.offsets.astype(np.int32))
        return pa.Array.from_buffers(type_, len(v), [None, offsets, pa.py_buffer(v.data)], 0)
    if isinstance(v, TextColumn):
        return pa.array(v.tolist(), type=type_)
    if isinstance(v, np.ma.MaskedArray) and type_ == pa.int64() and v.dtype == np.int64:
        validity, nulls = _bitmap(~np.ma.getmaskarray(v))
        values = pa.py_buffer(np.ascontiguousarray(v.data))
        return pa.Array.from_buffers(type_, len(v), [validity, values], nulls)
    if isinstance(v, np.ma.MaskedArray):
        return pa.array(np.asarray(v.data), mask=np.ma.getmaskarray(v), type=type_)
    if (
        isinstance(v, np.ndarray)
        and v.dtype == np.float64
        and v.ndim == 1
        and type_ == pa.float64()
    ):
        validity, nulls = _bitmap(~np.isnan(v))  # NaN = empty, as pandas writes it
        values = pa.py_buffer(np.ascontiguousarray(v))
        return pa.Array.from_buffers(type_, len(v), [validity, values], nulls)
    return pa.array(v, type=type_, from_pandas=True)


def to_arrow(columns: Columns | pd.DataFrame, schema: Any) -> Any:
    """:data:`Columns` (or a frame) as a pyarrow Table with ``schema`` (empty values as nulls)."""
    import pyarrow as pa

    if not isinstance(columns, dict):
        return pa.Table.from_pandas(columns, schema=schema, preserve_index=False)
    arrays = [_arrow_array(columns[f.name], f.type) for f in schema]
    return pa.Table.from_arrays(arrays, schema=schema)


# -- the one chunk scorer ---------------------------------------------------------------------
Columns = dict[str, Any]
"""Output columns of a chunk as numpy arrays, without pandas: float64 (NaN = empty), text as
object arrays of str or :class:`TextColumn` (the FASTA reader's ids, descriptions and input
names), and masked int64 arrays (``numpy.ma``; masked = empty)."""


def score_chunk(
    sequences: Sequence[str],
    ids: Sequence[str] | None = None,
    descriptions: Sequence[str] | None = None,
    options: BatchOptions | None = None,
    *,
    input_name: str = "",
    lines: Sequence[int] | None = None,
    record_errors: Sequence[str] | None = None,
) -> pd.DataFrame:
    """Score N sequences in one vectorised pass; one output row per sequence, in order.

    The DataFrame form of :func:`score_columns` (same parameters).
    """
    opts = _canonical(options or make_options())
    cols = score_columns(
        sequences, ids, descriptions, opts,
        input_name=input_name, lines=lines, record_errors=record_errors,
    )  # fmt: skip
    return to_frame(cols, opts)


def score_columns(
    sequences: Sequence[str],
    ids: Sequence[str] | None = None,
    descriptions: Sequence[str] | None = None,
    options: BatchOptions | None = None,
    *,
    input_name: str = "",
    lines: Sequence[int] | None = None,
    record_errors: Sequence[str] | None = None,
) -> Columns:
    """Score N sequences in one vectorised pass: the output :data:`Columns`, rows in order.

    Parameters
    ----------
    sequences
        One-letter sequences (whitespace and line breaks inside are ignored).
    ids, descriptions
        Record ids and descriptions (default: ``seq1``, ``seq2``, ... and empty).
    options
        From :func:`make_options` (default: pH 7.0, default scale, free cysteines).
    input_name
        Value of the ``input`` column.
    lines
        Input line of each record, named in error messages.
    record_errors
        Errors found while reading (non-empty string = the record is bad; it is not scored).
    """
    opts = _canonical(options or make_options())
    n = len(sequences)
    if ids is None:
        ids = [f"seq{i + 1}" for i in range(n)]
    if descriptions is None:
        descriptions = [""] * n
    if not (len(ids) == len(descriptions) == n):
        raise ValueError("sequences, ids and descriptions must have the same length")
    if n == 0:
        return _empty_columns(opts)
    comp = compose(sequences, opts.scale, ids)
    return _columns(
        comp, np.asarray(ids, dtype=object), np.asarray(descriptions, dtype=object), opts,
        np.full(n, input_name, dtype=object), lines, record_errors,
    )  # fmt: skip


def _columns(
    comp: Composition,
    ids: Any,
    descriptions: Any,
    opts: BatchOptions,
    inputs: Any,
    lines: Sequence[int] | npt.NDArray[np.int64] | None,
    record_errors: Sequence[str] | None,
) -> Columns:
    """The output :data:`Columns` of composed records (text columns as given)."""
    n = len(comp.errors)
    sites = comp.sites
    if opts.cys == "bonded":
        # Every cysteine in a disulfide (sequence.bond_all_cysteines for the matrix): no thiol site.
        cys_cols = [k for k, g in enumerate(sites.groups) if g == "C"]
        counts = np.array(sites.counts)
        counts[:, cys_cols] = 0.0
        sites = sites.with_counts(counts)
    if opts.conditions is not None:
        sites = opts.conditions.apply(sites)
    scores = score_composition(comp, opts.ph, sites=sites)

    failed = np.fromiter((e is not None for e in comp.errors), dtype=bool, count=n)
    error_text = np.full(n, "", dtype=object)
    for i in np.flatnonzero(failed).tolist():
        error_text[i] = str(comp.errors[i])
    if record_errors is not None:
        for i, text in enumerate(record_errors):
            if text:
                error_text[i] = text
                failed[i] = True
    if lines is not None:
        for i in np.flatnonzero(failed).tolist():
            error_text[i] = f"line {lines[i]}: {error_text[i]}"

    letters = comp.letters
    mono, avg = chain_masses(letters)
    # 1e-5 Da is far below what any measurement resolves; it keeps float noise out of the files.
    mono = np.where(failed, np.nan, np.round(mono, 5))
    avg = np.where(failed, np.nan, np.round(avg, 5))
    pi = np.where(failed, np.nan, scores.pi)
    charge = np.where(failed[:, None], np.nan, scores.charge)

    notes = _warnings(comp, scores.pi_reasons, failed)

    def ints(values: npt.ArrayLike) -> np.ma.MaskedArray[Any, Any]:
        return np.ma.MaskedArray(np.asarray(values, dtype=np.int64), mask=failed.copy())

    data: dict[str, Any] = {
        "input": inputs,
        "id": ids,
        "description": descriptions,
        "length": ints(comp.lengths),
        "average_mass": avg,
        "monoisotopic_mass": mono,
        "pI": pi,
    }
    for j, p in enumerate(opts.ph):
        data[charge_column(p)] = charge[:, j]
    for r in IONIZABLE:
        data[f"n_{r}"] = ints(comp.letter_counts(r)[:, 0])
    data["n_unknown"] = ints(comp.unknown)
    data["warnings"] = notes
    data["error"] = error_text
    return data


def _warnings(
    comp: Any, pi_reasons: Sequence[str], failed: npt.NDArray[np.bool_]
) -> npt.NDArray[Any]:
    """Per-row caution texts; Python work only for the rows that have one."""
    n = len(failed)
    notes = np.full(n, "", dtype=object)
    nucleotide = comp.letter_counts("ACGTUN").sum(axis=1)
    looks_nt = (nucleotide == comp.lengths) & (comp.lengths >= NUCLEOTIDE_MIN_LENGTH)
    reasons = (
        np.asarray(pi_reasons, dtype=object) if len(pi_reasons) else np.full(n, "", dtype=object)
    )
    has_reason = reasons != ""
    for i in np.flatnonzero(~failed & ((comp.unknown > 0) | has_reason | looks_nt)).tolist():
        parts = comp.warnings_for(i)
        if looks_nt[i]:
            parts.append("only A, C, G, T/U and N letters: is this a nucleotide sequence?")
        if has_reason[i]:
            parts.append(str(reasons[i]))
        notes[i] = "; ".join(parts)
    return notes


def score_list(
    sequences: Sequence[str],
    ids: Sequence[str] | None = None,
    descriptions: Sequence[str] | None = None,
    *,
    ph: float | Iterable[float] = (7.0,),
    scale: str | Path | Scale | None = None,
    cys: str = "free",
    conditions: Any = None,
    chunk_size: int = DEFAULT_CHUNK_SIZE,
) -> pd.DataFrame:
    """Score an in-memory list of sequences; one row per sequence, in order.

    Examples
    --------
    >>> df = score_list(["DK", "MKWVTFISLLFLFSSAYS"], ["a", "b"], ph=[7.0, 7.4])
    >>> df["id"].tolist(), df["length"].tolist(), list(df.columns[7:9])
    (['a', 'b'], [2, 18], ['charge_ph7.0', 'charge_ph7.4'])
    """
    import pandas as pd

    opts = make_options(ph, scale, cys, conditions, where="score_list")
    _check_chunk_size(chunk_size, "score_list")
    seqs = list(sequences)
    idl = list(ids) if ids is not None else [f"seq{i + 1}" for i in range(len(seqs))]
    descs = list(descriptions) if descriptions is not None else [""] * len(seqs)
    if not (len(idl) == len(descs) == len(seqs)):
        raise ParameterError(
            "ids", "score_list", f"as many ids and descriptions as sequences ({len(seqs)})",
            f"{len(idl)} ids, {len(descs)} descriptions",
        )  # fmt: skip
    frames = [
        score_chunk(
            seqs[a : a + chunk_size], idl[a : a + chunk_size], descs[a : a + chunk_size], opts
        )
        for a in range(0, len(seqs), chunk_size)
    ]
    return pd.concat(frames, ignore_index=True) if frames else empty_frame(opts)


def _check_chunk_size(chunk_size: int | None, where: str) -> None:
    if chunk_size is None:  # the input format's own default
        return
    if isinstance(chunk_size, bool) or not isinstance(chunk_size, int) or chunk_size < 1:
        raise ParameterError("chunk_size", where, "a whole number >= 1 (or None)", chunk_size)


# -- input formats ----------------------------------------------------------------------------
@dataclass(frozen=True)
class FileSpan:
    """Where a block's bytes lie in a plain (uncompressed, seekable) input file.

    A worker process on the same machine reads them from there itself (:meth:`Block.loaded`)
    instead of receiving them through a pipe. ``identity`` (device, inode, size, modification
    time) is the file's when the block was cut: if the file has changed since, the read is
    refused rather than scoring other bytes than the ones the block's boundaries were found in.
    """

    path: str
    offset: int
    length: int
    identity: tuple[int, int, int, int]


def _identity(st: os.stat_result) -> tuple[int, int, int, int]:
    return (st.st_dev, st.st_ino, st.st_size, st.st_mtime_ns)


@dataclass(frozen=True)
class Block:
    """A run of whole records cut from one input, ready to send to a worker.

    ``scorer`` is a module-level function ``(block, options) -> Columns or DataFrame`` (it
    pickles by name; :func:`score_columns` / :func:`score_chunk` build either).
    ``raw_pos`` is how many bytes of the input file (compressed bytes for gzip) had been read when
    the block was cut, for progress and ETA. ``origin``, when set, says where ``data`` lies in
    a plain input file, so that a local worker can be sent the block without its bytes
    (:meth:`detached`) and read them itself (:meth:`loaded`).
    """

    source: str
    input_index: int
    data: bytes
    first_line: int
    raw_pos: int
    scorer: Callable[[Block, BatchOptions], Columns | pd.DataFrame]
    origin: FileSpan | None = None

    def detached(self) -> Block:
        """This block without its bytes when it knows where they lie (else itself)."""
        if self.origin is None or not self.data:
            return self
        return replace(self, data=b"")

    def loaded(self) -> Block:
        """This block with its bytes, read from its file span when it was sent without them.

        Raises InputFileError when the file cannot be read or has changed since the block was
        cut.
        """
        span = self.origin
        if self.data or span is None or span.length == 0:
            return self
        try:
            handle = open(span.path, "rb", buffering=0)  # closed below (finally)
        except OSError as exc:
            raise InputFileError(f"cannot open again: {exc.strerror or exc}", self.source) from None
        try:
            same = _identity(os.fstat(handle.fileno())) == span.identity
            data = b""
            if same:
                handle.seek(span.offset)
                data = handle.read(span.length)
                while 0 < len(data) < span.length:  # a raw read may return less than asked
                    more = handle.read(span.length - len(data))
                    if not more:
                        break
                    data += more
        except OSError as exc:
            text = f"read error in line {self.first_line}: {exc.strerror or exc}"
            raise InputFileError(text, self.source) from None
        finally:
            handle.close()
        if not same or len(data) != span.length:
            raise InputFileError(
                "the file changed while it was being scored (its size or modification time is "
                "not what it was when it was opened); score a copy that nobody writes to",
                self.source,
            )
        return replace(self, data=data)


@dataclass(frozen=True)
class InputFormat:
    """How to read one kind of input file in a batch.

    split(path, label, input_index, chunk_size) -> Iterator[Block]
        Runs in the main process: cut the input into blocks of ``chunk_size`` records. Keep it
        cheap (no parsing beyond finding record boundaries); raise InputFileError for unreadable,
        truncated or corrupt input.
    columns(options) -> [(name, kind)]
        The output columns; every block's frame has exactly these.
    sniff(first_bytes) -> bool
        Whether decompressed leading bytes look like this format (for unknown file suffixes).
    chunk_size
        Records per block when the caller does not say: enough work per block that the cost of
        handing it out vanishes, little enough that every worker gets blocks from a small file.
    """

    name: str
    suffixes: tuple[str, ...]
    split: Callable[[str, str, int, int], Iterator[Block]]
    columns: Callable[[BatchOptions], list[tuple[str, str]]]
    sniff: Callable[[bytes], bool]
    chunk_size: int = DEFAULT_CHUNK_SIZE


_FORMATS: dict[str, InputFormat] = {}


def register_input_format(fmt: InputFormat) -> None:
    """Make ``fmt`` available to batch runs (by name and by file suffix)."""
    _FORMATS[fmt.name] = fmt


def input_format_for(path: str, name: str = "auto") -> InputFormat:
    """The format of an input: by ``name``, else by suffix (``.gz`` ignored), else by content."""
    if name != "auto":
        if name not in _FORMATS:
            raise ParameterError(
                "input_format", "batch", f"one of auto, {', '.join(_FORMATS)}", name
            )
        return _FORMATS[name]
    if path == "-":
        return _FORMATS["fasta"]
    lower = path.lower()
    if lower.endswith(".gz"):
        lower = lower[:-3]
    for fmt in _FORMATS.values():
        if lower.endswith(fmt.suffixes):
            return fmt
    head = _peek(path)
    for fmt in _FORMATS.values():
        if fmt.sniff(head):
            return fmt
    known = ", ".join(f"{f.name} ({' '.join(f.suffixes)})" for f in _FORMATS.values())
    raise InputFileError(
        f"cannot tell the input format from the file name or its first line; known formats: "
        f"{known}; rename the file or pass the format explicitly",
        path,
    )


def _open_binary(path: str) -> tuple[IO[bytes], IO[bytes] | None, int | None]:
    """(decompressed byte stream, raw file for progress, raw size); ``-`` is stdin."""
    if path == "-":
        return sys.stdin.buffer, None, None
    p = Path(path)
    try:
        raw = p.open("rb")
    except FileNotFoundError:
        raise InputFileError("no such file", path) from None
    except IsADirectoryError:
        raise InputFileError("is a directory, not a file", path) from None
    except OSError as exc:
        raise InputFileError(f"cannot open: {exc.strerror or exc}", path) from None
    size = os.fstat(raw.fileno()).st_size
    if raw.peek(2)[:2] == b"\x1f\x8b":
        return gzip.GzipFile(fileobj=raw, mode="rb"), raw, size  # type: ignore[return-value]
    return raw, raw, size


def _peek(path: str) -> bytes:
    stream, raw, _ = _open_binary(path)
    try:
        return _read(stream, path, lambda: 0)[:4096]
    finally:
        stream.close()
        if raw is not None and raw is not stream:
            raw.close()


def _read(stream: IO[bytes], path: str, line: Callable[[], int]) -> bytes:
    """Up to one read size of decompressed bytes; ``line()`` says how far the input got."""
    try:
        # read1: one decompression step at a time, so a truncated gzip fails at the line where it
        # breaks off instead of losing the last full read.
        read = getattr(stream, "read1", stream.read)
        return read(_READ_SIZE)
    except EOFError:
        raise InputFileError(
            f"the gzip stream ends early: the file is truncated (it breaks off in line {line()})",
            path,
        ) from None
    except (zlib.error, gzip.BadGzipFile) as exc:
        raise InputFileError(f"corrupt gzip data in line {line()}: {exc}", path) from None
    except OSError as exc:
        raise InputFileError(f"read error in line {line()}: {exc.strerror or exc}", path) from None


# -- FASTA --------------------------------------------------------------------------------------
def _count_newlines(data: bytes) -> int:
    """Line breaks in ``data`` (a vectorised count: about four times faster than bytes.count)."""
    return int(np.count_nonzero(np.frombuffer(data, dtype=np.uint8) == ord("\n")))


def split_fasta(path: str, label: str, input_index: int, chunk_size: int) -> Iterator[Block]:
    """Cut a FASTA input into blocks of ``chunk_size`` whole records (plain, gzip or ``-``).

    A record starts at a ``>`` at the start of a line; text before the first header stays in the
    first block (and is reported there). Truncated or corrupt gzip raises
    :class:`~zwitter.errors.InputFileError` after the complete blocks before it were yielded.
    Blocks of a plain regular file carry no bytes, only where they lie (:class:`FileSpan`):
    :meth:`Block.loaded` reads them.
    """
    stream, raw, _ = _open_binary(path)
    try:
        if raw is stream and raw is not None and stat.S_ISREG(os.fstat(raw.fileno()).st_mode):
            yield from _split_plain_fasta(raw, path, label, input_index, chunk_size)
        else:
            yield from _split_fasta_stream(stream, raw, path, label, input_index, chunk_size)
    finally:
        if stream is not sys.stdin.buffer:
            stream.close()
        if raw is not None and raw is not stream:
            raw.close()


def _split_fasta_stream(
    stream: IO[bytes], raw: IO[bytes] | None, path: str, label: str, input_index: int,
    chunk_size: int,
) -> Iterator[Block]:  # fmt: skip
    """:func:`split_fasta` for gzip and stdin: the blocks carry their bytes."""
    # The bytes not yet cut into blocks are kept as the chunks read (joining them once per
    # block copies each byte once; a growing buffer would move them again and again).
    chunks: list[bytes] = []
    base = 0  # input offset of chunks[0][0]
    end = 0  # input offset after the last chunk
    starts: list[int] = []  # input offsets where a record starts
    line = 1  # line number at offset base
    prefix_done = False  # whether text before the first header was looked at
    after_break = True  # whether the byte before `end` ends a line (or there is none)
    eof = False

    def take(cut: int) -> bytes:
        """Remove and return the bytes from base up to offset ``cut``."""
        nonlocal base
        out, size = [], base
        while chunks and size + len(chunks[0]) <= cut:
            size += len(chunks[0])
            out.append(chunks.pop(0))
        if size < cut:
            head = chunks[0]
            out.append(head[: cut - size])
            chunks[0] = head[cut - size :]
        base = cut
        return b"".join(out)

    def line_now() -> int:  # where the input got to, for a truncation message
        return line + sum(c.count(b"\n") for c in chunks)

    while not eof:
        data = _read(stream, path, line_now)
        eof = not data
        if data:
            arr = np.frombuffer(data, dtype=np.uint8)
            starts.extend((_line_starts(arr, ord(">"), after_break) + end).tolist())
            chunks.append(data)
            end += len(data)
            after_break = data[-1:] in (b"\n", b"\r")
        if not prefix_done and starts:
            prefix_done = True
            if starts[0] > 0 and b"".join(chunks)[: starts[0]].strip():
                starts.insert(0, 0)  # text before the first header: a record of its own
        # A block ends where record chunk_size + 1 begins.
        while len(starts) > chunk_size:
            cut = starts[chunk_size]
            block = take(cut)
            yield Block(label, input_index, block, line, _tell(raw), _score_fasta_block)
            line += _count_newlines(block)
            del starts[:chunk_size]
    rest = take(end)
    if rest.strip():
        yield Block(label, input_index, rest, line, _tell(raw), _score_fasta_block)


def _line_starts(arr: npt.NDArray[np.uint8], byte: int, after_break: bool) -> Any:
    """Positions in ``arr`` of ``byte`` at the start of a line (after \\n or \\r; at 0 when
    ``after_break``, i.e. the byte before ``arr`` ended a line)."""
    hits = np.flatnonzero(arr == byte)
    prev = arr[np.maximum(hits - 1, 0)]
    line_start = (prev == ord("\n")) | (prev == ord("\r"))
    if hits.size and hits[0] == 0:
        line_start[0] = after_break
    return hits[line_start]


def _split_plain_fasta(
    raw: IO[bytes], path: str, label: str, input_index: int, chunk_size: int
) -> Iterator[Block]:
    """:func:`split_fasta` for a plain regular file: blocks that only say where they lie.

    The file is scanned through one reused buffer for record starts and line breaks; each block
    is a :class:`FileSpan` with empty ``data``, and whoever scores it reads the bytes
    (:meth:`Block.loaded`), in a worker process when there are workers. So cutting copies
    nothing and holds no more than the buffer. The same blocks as :func:`_split_fasta_stream`
    (tested).
    """
    identity = _identity(os.fstat(raw.fileno()))
    if hasattr(os, "posix_fadvise"):  # read ahead generously: the file is read once, in order
        os.posix_fadvise(raw.fileno(), 0, 0, os.POSIX_FADV_SEQUENTIAL)
    buf = np.empty(_SCAN_SIZE, dtype=np.uint8)
    view = memoryview(buf.data)
    window = 0  # file offset of buf[0]
    lines = 1  # line number at offset `window`
    after_break = True  # whether the byte before `window` ends a line (or there is none)
    starts: list[int] = []  # record starts not yet cut into blocks
    block_start, block_line = 0, 1  # where the next block begins, and its line number
    header_seen = prefix_text = False

    where = os.path.abspath(path)  # workers may run in another folder (forkserver, spawn)

    def block(end: int) -> Block:
        span = FileSpan(where, block_start, end - block_start, identity)
        return Block(label, input_index, b"", block_line, end, _score_fasta_block, span)

    while True:
        try:
            n = raw.readinto(view)  # type: ignore[attr-defined]
        except OSError as exc:
            text = f"read error in line {lines}: {exc.strerror or exc}"
            raise InputFileError(text, path) from None
        if not n:
            break
        arr = buf[:n]
        found = _line_starts(arr, ord(">"), after_break)
        if not header_seen:
            # Text before the first header is a record of its own (reported as an error);
            # blank lines there are not.
            head = int(found[0]) if found.size else n
            prefix_text = prefix_text or bool(bytes(arr[:head]).strip())
            if found.size:
                header_seen = True
                if prefix_text:
                    starts.append(0)
        starts.extend((found + window).tolist())
        newline = arr == ord("\n")
        breaks = None  # positions of the line breaks, found only in a window where a block ends
        # A block ends where record chunk_size + 1 begins (always in this window: before it,
        # at most chunk_size starts were waiting).
        while len(starts) > chunk_size:
            cut = starts[chunk_size]
            yield block(cut)
            if breaks is None:
                breaks = np.flatnonzero(newline)
            block_start = cut
            block_line = lines + int(np.searchsorted(breaks, cut - window))
            del starts[:chunk_size]
        lines += breaks.size if breaks is not None else int(np.count_nonzero(newline))
        after_break = bool(arr[-1] == ord("\n") or arr[-1] == ord("\r"))
        window += n
    if starts or prefix_text:
        yield block(window)


def _tell(raw: IO[bytes] | None) -> int:
    try:
        return raw.tell() if raw is not None else 0
    except (OSError, ValueError):
        return 0


@dataclass(frozen=True)
class RecordBatch:
    """Records parsed from one block: parallel lists."""

    ids: list[str]
    descriptions: list[str]
    sequences: list[str]
    lines: list[int]
    errors: list[str]


def parse_fasta_block(block: Block) -> RecordBatch:
    """The records of a FASTA block (same rules as :func:`zwitter.fasta.read_fasta`).

    Windows and old Mac line endings are accepted, blank lines ignored, a header without
    sequence lines is a record with an empty sequence, and text before the first header is one
    record with an error. Bytes that are not UTF-8 become U+FFFD (reported as invalid residues).
    """
    data = block.data
    if b"\r" in data and b"\n" not in data:
        data = data.replace(b"\r", b"\n")  # old Mac line ends: same lines, one convention
    heads = _line_starts(np.frombuffer(data, dtype=np.uint8), ord(">"), True)
    newlines = np.flatnonzero(np.frombuffer(data, dtype=np.uint8) == ord("\n"))
    lines = (block.first_line + np.searchsorted(newlines, heads)).tolist()
    out = RecordBatch([], [], [], [], [])
    first = int(heads[0]) if heads.size else len(data)
    if data[:first].strip():
        lead = len(data[:first]) - len(data[:first].lstrip())
        where = block.first_line + data.count(b"\n", 0, lead)
        out.ids.append(f"(before first header, line {where})")
        out.descriptions.append("")
        out.sequences.append(data[:first].decode("utf-8", errors="replace"))
        out.lines.append(where)
        out.errors.append("sequence text before the first '>' header")
    if not heads.size:
        return out
    # One split of the decoded block at the headers, then C-level string methods per record.
    parts = data[first + 1 :].decode("utf-8", errors="replace").split("\n>")
    if len(parts) != len(lines):  # a lone '\r>' line end in a '\n' file: go line by line
        parts = _split_records(data, heads)
    split = [p.partition("\n") for p in parts]
    words = [h.split(None, 1) for h, _, _ in split]
    out.ids.extend([w[0] if w else f"(no id, line {n})" for w, n in zip(words, lines)])
    out.descriptions.extend([w[1].strip() if len(w) > 1 else "" for w in words])
    out.sequences.extend([seq for _, _, seq in split])
    out.lines.extend(lines)
    out.errors.extend([""] * len(lines))
    return out


def _split_records(data: bytes, heads: npt.NDArray[np.int64]) -> list[str]:
    """Record texts (header line, newline, sequence lines) without the leading '>'."""
    bounds = heads[1:].tolist() + [len(data)]
    out = []
    for a, b in zip(heads.tolist(), bounds):
        text = data[a + 1 : b].decode("utf-8", errors="replace")
        nl, cr = text.find("\n"), text.find("\r")
        if 0 <= cr and (nl < 0 or cr < nl - 1):  # a '\r' line end before the first '\n'
            text = text[:cr] + "\n" + text[cr + 1 :]
        out.append(text)
    return out


def _score_fasta_block(block: Block, options: BatchOptions) -> Columns:
    fast = _score_plain_fasta_block(block, _canonical(options))
    if fast is not None:
        return fast
    recs = parse_fasta_block(block)
    return score_columns(
        recs.sequences, recs.ids, recs.descriptions, options,
        input_name=block.source, lines=recs.lines, record_errors=recs.errors,
    )  # fmt: skip


# Python's whitespace (str.split, str.strip) among ASCII bytes: \t \n \v \f \r, \x1c-\x1f, space.
_SPACE = np.zeros(256, dtype=bool)
_SPACE[[9, 10, 11, 12, 13, 28, 29, 30, 31, 32]] = True


def _ranges(starts: npt.NDArray[np.int64], lengths: npt.NDArray[np.int64]) -> npt.NDArray[np.intp]:
    """Concatenated ``arange(s, s + n)`` for each start s and length n."""
    total = int(lengths.sum())
    before = np.cumsum(lengths) - lengths
    out: npt.NDArray[np.intp] = np.repeat((starts - before).astype(np.intp), lengths)
    out += np.arange(total, dtype=np.intp)
    return out


def _first_at(sorted_pos: npt.NDArray[np.intp], at: npt.NDArray[np.int64]) -> Any:
    """For each ``at``: the first of ``sorted_pos[:-1]`` that is >= it (else ``sorted_pos[-1]``)."""
    return sorted_pos[np.searchsorted(sorted_pos[:-1], at)]


def _score_plain_fasta_block(block: Block, opts: BatchOptions) -> Columns | None:
    """The block's rows without a Python string per record, or None when it needs the full reader.

    It takes blocks whose records all start with a header, with Unix or Windows line ends
    throughout (most files); headers and sequences are cut out of the block's bytes with array
    operations (:func:`zwitter.sequence.compose_spans`), and the results are the same as those
    of :func:`parse_fasta_block` with :func:`score_columns` (tested).
    """
    data = block.data
    if not data or (b"\r" in data and data.count(b"\r") != data.count(b"\r\n")):
        return None  # old Mac or mixed line ends
    size = len(data)
    arr = np.frombuffer(data, dtype=np.uint8)
    newlines = np.flatnonzero(arr == ord("\n"))
    # Headers start after a line break (a CR is always followed by LF here) or at byte 0.
    after = newlines[newlines < size - 1] + 1
    hit = np.flatnonzero(arr[after] == ord(">"))
    heads, before = after[hit], hit + 1  # before: line breaks before the header
    if data[:1] == b">":
        heads, before = np.concatenate([[0], heads]), np.concatenate([[0], before])
    if not heads.size or (heads[0] > 0 and data[: heads[0]].strip()):
        return None  # text before the first header
    n = heads.size
    eol = np.append(newlines, size)[before]  # the header's line end
    lines = block.first_line + before
    # Header text: between '>' and the line end. The id runs from the first non-space byte to
    # the next space; the description from the next non-space byte to the last one.
    starts = heads + 1
    lengths = eol - starts
    text = arr[_ranges(starts, lengths)]
    total = text.size
    b = np.cumsum(lengths)
    a = b - lengths
    space = _SPACE[text]
    # positions of non-space and space bytes, each list closed by a sentinel
    solid = np.append(np.flatnonzero(~space), total)
    blank = np.append(np.flatnonzero(space), total)
    id_a = np.minimum(_first_at(solid, a), b)
    id_b = np.minimum(_first_at(blank, id_a), b)
    desc_a = np.minimum(_first_at(solid, id_b), b)
    last = solid[np.searchsorted(solid[:-1], b) - 1]  # the last non-space byte before b
    desc_b = np.where(desc_a < b, last + 1, desc_a)
    ids = _text_column(text, id_a, id_b)
    descriptions = _text_column(text, desc_a, desc_b)
    odd = np.flatnonzero(id_a == b).tolist()  # no id
    if not data.isascii():  # headers with other bytes: the str methods decide, as in the reader
        wide = np.flatnonzero(text >= 0x80)
        odd = sorted({*odd, *np.unique(np.searchsorted(b, wide, side="right")).tolist()})
    if odd:
        id_list, desc_list = ids.tolist(), descriptions.tolist()
        for i in odd:
            header = data[int(starts[i]) : int(eol[i])].decode("utf-8", errors="replace")
            words = header.split(None, 1)
            id_list[i] = words[0] if words else f"(no id, line {lines[i]})"
            desc_list[i] = words[1].strip() if len(words) > 1 else ""
        ids, descriptions = TextColumn.from_strings(id_list), TextColumn.from_strings(desc_list)
    seq_a = np.minimum(eol + 1, size)
    seq_b = np.append(heads[1:], size)
    comp = compose_spans(data, seq_a, seq_b, opts.scale, ids)
    return _columns(comp, ids, descriptions, opts, TextColumn.repeat(block.source, n), lines, None)


def _text_column(
    text: npt.NDArray[np.uint8], a: npt.NDArray[np.int64], b: npt.NDArray[np.int64]
) -> TextColumn:
    lengths = b - a
    data = text[_ranges(a, lengths)].tobytes()
    return TextColumn(np.concatenate([[0], np.cumsum(lengths)]).astype(np.int64), data)


def _sniff_fasta(head: bytes) -> bool:
    return head.lstrip().startswith(b">")


FASTA = InputFormat(
    name="fasta",
    suffixes=(".fasta", ".fa", ".faa", ".fas", ".fsa", ".mpfa", ".pep", ".aa"),
    split=split_fasta,
    columns=output_columns,
    sniff=_sniff_fasta,
)
register_input_format(FASTA)


# -- output --------------------------------------------------------------------------------------
#: Output file suffix -> format. CSV, TSV and JSON lines may end in ``.gz`` as well.
OUTPUT_FORMATS = {".csv": "csv", ".tsv": "tsv", ".jsonl": "jsonl", ".parquet": "parquet"}


def output_format_for(path: str | Path) -> tuple[str, bool]:
    """(format, gzip) from an output file name; raises ParameterError for unknown suffixes."""
    name = Path(path).name.lower()
    compressed = name.endswith(".gz")
    if compressed:
        name = name[:-3]
    for suffix, fmt in OUTPUT_FORMATS.items():
        if name.endswith(suffix) and not (compressed and fmt == "parquet"):
            return fmt, compressed
    allowed = "a file name ending in .csv, .tsv, .jsonl (optionally + .gz) or .parquet"
    raise ParameterError("output", "batch", allowed, str(path))


def _arrow_schema(columns: list[tuple[str, str]]) -> Any:
    import pyarrow as pa

    types = {"str": pa.string(), "int": pa.int64(), "float": pa.float64()}
    return pa.schema([(name, types[kind]) for name, kind in columns])


def _columns_of(rows: Columns | pd.DataFrame, options: BatchOptions) -> list[tuple[str, str]]:
    """The (name, kind) columns of a chunk: the sequence columns, or those another input format
    (SMILES) produced, read off the chunk itself (masked integer arrays are ``int``, float arrays
    ``float``, anything else ``str``)."""
    standard = output_columns(options)
    if not isinstance(rows, dict) or list(rows) == [name for name, _ in standard]:
        return standard
    kinds = []
    for name, values in rows.items():
        if isinstance(values, np.ma.MaskedArray):
            kinds.append((name, "int"))
        elif isinstance(values, np.ndarray) and values.dtype.kind == "f":
            kinds.append((name, "float"))
        else:
            kinds.append((name, "str"))
    return kinds


def encode_rows(rows: Columns | pd.DataFrame, fmt: str, options: BatchOptions) -> Any:
    """A chunk's rows as what the writer appends: text bytes, an Arrow table, or a DataFrame.

    CSV, TSV and Parquet go through pyarrow when it is installed (several times faster than
    pandas, and the workers then need no pandas); CSV quotes every text field (RFC 4180, which
    every CSV reader takes), TSV quotes none, as Unix tools expect (a chunk whose text holds a
    tab, quote or line break falls back to pandas, which quotes just those fields).
    """
    columns = _columns_of(rows, options)

    def frame() -> pd.DataFrame:
        return rows if not isinstance(rows, dict) else to_frame(rows, options)

    if fmt in ("csv", "tsv"):
        fast = _arrow_text(rows, fmt, columns)
        if fast is not None:
            return fast
        text = frame().to_csv(
            None, sep="," if fmt == "csv" else "\t", header=False, index=False, lineterminator="\n"
        )
        return text.encode("utf-8")
    if fmt == "jsonl":
        f = frame()
        if f.empty:
            return b""
        text = f.to_json(orient="records", lines=True, double_precision=10)
        return (text if text.endswith("\n") else text + "\n").encode("utf-8")
    if fmt == "parquet":
        return to_arrow(rows, _arrow_schema(columns))
    return frame()


def _arrow_text(
    rows: Columns | pd.DataFrame, fmt: str, columns: list[tuple[str, str]]
) -> bytes | None:
    try:
        import pyarrow as pa
        import pyarrow.csv as pacsv
    except ImportError:
        return None
    table = to_arrow(rows, _arrow_schema(columns))
    sink = pa.BufferOutputStream()
    style = "needed" if fmt == "csv" else "none"
    # One conversion batch per chunk (the default, 1024 rows, is a little slower; same bytes).
    options = pacsv.WriteOptions(
        include_header=False, delimiter="," if fmt == "csv" else "\t", quoting_style=style,
        batch_size=max(1024, table.num_rows),
    )  # fmt: skip
    try:
        pacsv.write_csv(table, sink, options)
    except pa.ArrowInvalid:
        return None
    return bytes(sink.getvalue())


#: zlib level of gzip output: 6 is zlib's own default and the usual trade-off (common
#: practice); gzip's 9 takes about twice as long for a file a few percent smaller.
GZIP_LEVEL = 6


def gzip_member(data: bytes) -> bytes:
    """``data`` as one gzip member (RFC 1952). Members written one after another make one valid
    gzip file (gzip, zcat and Python's gzip module read them as a single stream); the time stamp
    is 0 so that equal inputs give equal bytes."""
    return gzip.compress(data, compresslevel=GZIP_LEVEL, mtime=0) if data else b""


class _Writer:
    """Appends encoded chunks to a temporary file beside ``path``; ``commit`` renames it.

    Compressed text outputs arrive already compressed, one gzip member per chunk
    (:func:`run_block`); the header line is a member of its own.
    """

    def __init__(self, path: Path, fmt: str, compressed: bool, columns: list[tuple[str, str]]):
        self.path = path
        self.fmt = fmt
        fd, tmp = tempfile.mkstemp(dir=path.parent, prefix=f".{path.name}.", suffix=".partial")
        self.tmp = Path(tmp)
        self._parquet: Any = None
        self._handle: Any = None
        try:
            if fmt == "parquet":
                os.close(fd)
                import pyarrow.parquet as pq

                self._parquet = pq.ParquetWriter(str(self.tmp), _arrow_schema(columns))
            else:
                self._handle = os.fdopen(fd, "wb")
                if fmt in ("csv", "tsv"):
                    sep = "," if fmt == "csv" else "\t"
                    header = (sep.join(c for c, _ in columns) + "\n").encode("utf-8")
                    self._handle.write(gzip_member(header) if compressed else header)
        except BaseException:
            self.abort()
            raise

    def write(self, payload: Any) -> None:
        if self._parquet is not None:
            if payload.num_rows:
                self._parquet.write_table(payload)
        elif isinstance(payload, Spooled):
            payload.append_to(self._handle)
        elif payload:
            self._handle.write(payload)

    def commit(self) -> None:
        if self._parquet is not None:
            self._parquet.close()
        else:
            self._handle.close()
        umask = os.umask(0)
        os.umask(umask)
        os.chmod(self.tmp, 0o666 & ~umask)  # mkstemp makes 0600; give the usual file mode
        os.replace(self.tmp, self.path)

    def abort(self) -> None:
        try:
            if self._parquet is not None:
                self._parquet.close()
            elif self._handle is not None:
                self._handle.close()
        except Exception:  # noqa: BLE001 - closing a file we are about to delete
            pass
        finally:
            self.tmp.unlink(missing_ok=True)


# -- running blocks -------------------------------------------------------------------------------
@dataclass(frozen=True)
class ChunkResult:
    """What a worker sends back for a block: the encoded rows and the counts for the summary."""

    source: str
    input_index: int
    raw_pos: int
    n_records: int
    n_errors: int
    errors: tuple[str, ...]  # the first MAX_REPORTED_ERRORS error texts of the block
    payload: Any


def run_block(block: Block, options: BatchOptions, fmt: str = "frame") -> ChunkResult:
    """Score one block and encode it for the writer (the task every engine runs).

    ``fmt`` is an output format (:data:`OUTPUT_FORMATS`) or ``frame``; a text format with
    ``.gz`` appended gives the chunk as one gzip member (:func:`gzip_member`), so compression
    runs in the workers too.
    """
    opts = _canonical(options)
    block = block.loaded()
    rows = block.scorer(block, opts)
    error = np.asarray(rows["error"], dtype=object)
    bad = error != ""
    errors = tuple(error[bad][:MAX_REPORTED_ERRORS].tolist())
    base, packed = (fmt[:-3], True) if fmt.endswith(".gz") else (fmt, False)
    payload = encode_rows(rows, base, opts)
    if packed:
        payload = gzip_member(payload)
    return ChunkResult(
        block.source, block.input_index, block.raw_pos, len(error), int(bad.sum()), errors, payload
    )


class _Result(Protocol):
    def result(self) -> ChunkResult: ...


class Engine(Protocol):
    """What runs blocks: ``submit`` returns something with ``result()``; ``slots`` bounds how many
    blocks are in flight; ``close(cancel)`` releases workers."""

    slots: int

    def submit(self, block: Block) -> _Result: ...

    def close(self, cancel: bool) -> None: ...


class _Ready:
    def __init__(self, value: ChunkResult):
        self._value = value

    def result(self) -> ChunkResult:
        return self._value


class InProcessEngine:
    """Scores each block in this process, at submit time.

    While it runs, BLAS is limited to one thread when threadpoolctl is installed (the reason is at
    :data:`WORKER_THREAD_ENV`) and glibc keeps freed memory for reuse (:func:`keep_freed_memory`);
    on ``close`` the BLAS limits come back and glibc's default malloc settings are restored.
    """

    slots = 1

    def __init__(self, options: BatchOptions, fmt: str):
        self.options, self.fmt = options, fmt
        self._limits: Any = _limit_blas_threads()
        self._kept_memory = keep_freed_memory(True)

    def submit(self, block: Block) -> _Ready:
        return _Ready(run_block(block, self.options, self.fmt))

    def close(self, cancel: bool) -> None:
        if self._limits is not None:
            self._limits.restore_original_limits()
            self._limits = None
        if self._kept_memory:
            keep_freed_memory(False)
            self._kept_memory = False


_WORKER_OPTIONS: BatchOptions | None = None


def _init_worker(options: BatchOptions) -> None:
    global _WORKER_OPTIONS
    _WORKER_OPTIONS = options
    # Ctrl-C reaches the whole process group: the main process stops the run (and removes the
    # partial output); workers just finish their chunk instead of printing tracebacks.
    signal.signal(signal.SIGINT, signal.SIG_IGN)
    _limit_blas_threads()
    keep_freed_memory(True)


#: glibc malloc settings while a process scores chunks (mallopt(3) parameter numbers: -1
#: M_TRIM_THRESHOLD, -2 M_TOP_PAD, -3 M_MMAP_THRESHOLD). A chunk's arrays are megabytes each,
#: allocated and freed again for every chunk; by default glibc hands such blocks back to the
#: system on free (munmap, or trimming the heap top), and the next chunk faults the same amount
#: of memory in again, zeroed page by page. Keeping up to 256 MB of freed memory for reuse cut
#: page faults 15-fold and a one-job run by about 15 % (benchmarks/README.md); peak memory is
#: unchanged, since the same blocks are reused. 32 MB is the largest mmap threshold glibc takes.
_MALLOC_SCORING = {-1: 256 << 20, -2: 16 << 20, -3: 32 << 20}
#: glibc's documented defaults for the same parameters (mallopt(3)), restored afterwards.
_MALLOC_DEFAULTS = {-1: 128 << 10, -2: 128 << 10, -3: 128 << 10}


def keep_freed_memory(keep: bool) -> bool:
    """Have glibc keep freed memory for reuse while chunks are scored (``keep=False`` restores
    its default settings). Returns whether the settings took (False off glibc, e.g. musl or
    macOS, where nothing changes)."""
    if not sys.platform.startswith("linux"):
        return False
    try:
        import ctypes

        mallopt = ctypes.CDLL(None).mallopt
    except (OSError, AttributeError):
        return False
    settings = _MALLOC_SCORING if keep else _MALLOC_DEFAULTS
    return all(mallopt(param, value) == 1 for param, value in settings.items())


def _limit_blas_threads() -> Any:
    """Limit BLAS to one thread in this process (the reason is at :data:`WORKER_THREAD_ENV`).

    Returns the threadpoolctl limiter (its ``restore_original_limits`` undoes it), or None when
    threadpoolctl is not installed.
    """
    try:
        from threadpoolctl import threadpool_limits
    except ImportError:
        return None
    return threadpool_limits(limits=1, user_api="blas")


def _pool_task(block: Block, fmt: str, spool: str | None = None) -> ChunkResult:
    assert _WORKER_OPTIONS is not None
    result = run_block(block, _WORKER_OPTIONS, fmt)
    if spool is not None and isinstance(result.payload, bytes):
        result = replace(result, payload=Spooled.write(spool, result.payload))
    return result


@dataclass(frozen=True)
class Spooled:
    """A chunk's encoded bytes left by a worker in a file of the run's spool folder.

    The writer appends them to the output inside the kernel (``copy_file_range``) and deletes
    the file, so a chunk's bytes are not carried through a pipe, unpickled and written again by
    the main process, which stays free for cutting and collecting.
    """

    path: str
    size: int

    @classmethod
    def write(cls, folder: str, data: bytes) -> Spooled:
        fd, path = tempfile.mkstemp(dir=folder, suffix=".chunk")
        try:
            view = memoryview(data)
            while view:
                view = view[os.write(fd, view) :]
        finally:
            os.close(fd)
        return cls(path, len(data))

    def append_to(self, out: IO[bytes]) -> None:
        out.flush()
        src = os.open(self.path, os.O_RDONLY)
        try:
            left = self.size
            copy = getattr(os, "copy_file_range", None)
            while left and copy is not None:
                try:
                    n = copy(src, out.fileno(), left)
                except OSError:  # not across these file systems: copy through memory
                    break
                if n == 0:
                    break
                left -= n
            if left:
                os.lseek(src, self.size - left, os.SEEK_SET)
                while left:
                    data = os.read(src, min(left, 1 << 20))
                    if not data:
                        raise OSError(f"chunk file {self.path} is shorter than it was written")
                    out.write(data)
                    left -= len(data)
                out.flush()
        finally:
            os.close(src)
            os.unlink(self.path)


#: Thread-pool sizes for the numerical libraries in worker processes. Parallelism is one worker
#: per core; BLAS threads on top would oversubscribe the cores, and on the small matrix products
#: of a chunk their spin-waiting costs more than it gains (measured: benchmarks/README.md).
WORKER_THREAD_ENV = {"OPENBLAS_NUM_THREADS": "1", "OMP_NUM_THREADS": "1", "MKL_NUM_THREADS": "1"}


#: Modules the forkserver imports once for all workers: what a block needs for each output
#: format (pandas only where the output is built with it; it takes about 0.3 s to import).
_PRELOAD = {
    "frame": ["pandas"],
    "jsonl": ["pandas"],
    "csv": ["pyarrow.csv"],
    "tsv": ["pyarrow.csv"],
}


def start_method(requested: str = "auto") -> str:
    """How worker processes start: ``fork``, ``forkserver`` or ``spawn``.

    ``auto`` takes ``fork`` on Linux when this process runs no other Python thread: the workers
    are then copies of this process with zwitter already imported, ready in milliseconds
    instead of about half a second. The native thread pools such a process may have are made
    for it: OpenBLAS stops its threads before a fork, jemalloc (pyarrow's allocator) and Arrow's
    pools take their locks and restart in the child. Otherwise ``forkserver`` (safe beside any
    thread: workers fork from a clean server process, which first imports numpy and zwitter),
    and ``spawn`` where neither exists (macOS: fork is unsafe with its system libraries).
    """
    methods = multiprocessing.get_all_start_methods()
    if requested != "auto":
        if requested not in methods:
            raise ParameterError("start_method", "batch", f"one of auto, {', '.join(methods)}",
                                 requested)  # fmt: skip
        return requested
    if sys.platform.startswith("linux") and "fork" in methods and threading.active_count() == 1:
        return "fork"
    return "forkserver" if "forkserver" in methods else "spawn"


def _mp_context(method: str, fmt: str = "frame") -> Any:
    if method != "forkserver":
        return multiprocessing.get_context(method)
    # forkserver: workers fork from a server process that has imported zwitter (and the
    # libraries of a chunk) once. The server takes its environment when it starts, so the
    # thread limits are set around its start (and only where the user has not set them).
    import multiprocessing.forkserver as forkserver

    ctx = multiprocessing.get_context("forkserver")
    base = fmt.removesuffix(".gz")
    ctx.set_forkserver_preload(["zwitter.batch", "pyarrow", *_PRELOAD.get(base, [])])
    added = {k: v for k, v in WORKER_THREAD_ENV.items() if k not in os.environ}
    os.environ.update(added)
    # The server (and the workers it forks) ignore Ctrl-C from the start, also while importing:
    # the main process handles the interrupt. An ignored signal stays ignored across exec.
    try:
        previous = signal.signal(signal.SIGINT, signal.SIG_IGN)
    except ValueError:  # not the main thread: leave signals alone
        previous = None
    try:
        forkserver.ensure_running()
    finally:
        if previous is not None:
            signal.signal(signal.SIGINT, previous)
        for key in added:
            os.environ.pop(key, None)
    return ctx


def _warm_up() -> None:
    """A task that does nothing: submitted once per worker to start the worker processes."""


class ProcessEngine:
    """Scores blocks in ``jobs`` worker processes; this process reads, hands out and writes.

    Blocks of a plain input file go to the workers without their bytes (:meth:`Block.detached`):
    each worker reads its block from the file itself, so only small messages and the encoded
    results cross the pipes, and this process stays light (cutting blocks, collecting results,
    writing) and leaves the cores to the workers. Workers take blocks from one queue as they
    finish; ``slots`` bounds how many are in flight.

    With the ``fork`` start method (see :func:`start_method`) the workers are ready at once.
    Otherwise they take about half a second to start (the forkserver imports numpy, zwitter and
    pyarrow), which a background thread waits for while this process scores the first blocks
    itself.
    """

    def __init__(
        self,
        options: BatchOptions,
        fmt: str,
        jobs: int,
        method: str = "auto",
        spool: str | None = None,
    ):
        self.fmt = fmt
        self.spool = spool  # a folder where workers leave encoded chunks (Spooled), or None
        self.workers = max(1, jobs)
        # Blocks in flight: results wait in submission order, so a worker on a core the host
        # has taken away holds up the others once the oldest block is its own. Blocks that
        # travel without bytes and results left in the spool folder are small, so then the
        # others may run far ahead; blocks with their bytes (gzip, stdin) are bounded closer.
        self._deep = 16 * self.workers if spool is not None else 4 * self.workers
        self.slots = 4 * self.workers
        self.method = start_method(method)
        self._local: InProcessEngine | None = None
        self._in_hand: list[Future[ChunkResult]] = []
        self._started = threading.Event()
        self._starter: threading.Thread | None = None
        self._pool = ProcessPoolExecutor(
            max_workers=self.workers,
            mp_context=_mp_context(self.method, fmt),
            initializer=_init_worker,
            initargs=(options,),
        )
        if self.method == "fork":
            # Start every worker now, while this process runs no other Python thread (a fork
            # copies only the forking thread). Python 3.12+ warns about any fork of a process
            # with other OS threads; those left here are native pools that handle a fork
            # themselves (see start_method), so that generic warning is not passed on.
            try:
                with warnings.catch_warnings():
                    warnings.filterwarnings("ignore", "This process .* is multi-threaded",
                                            DeprecationWarning)  # fmt: skip
                    for f in [self._pool.submit(_warm_up) for _ in range(self.workers)]:
                        f.result()
            except BaseException:
                self._pool.shutdown(wait=True, cancel_futures=True)
                raise
            self._started.set()
        else:
            # Starting a worker blocks until the forkserver has imported its modules: do that
            # in a thread, and score here meanwhile. (A failed start shows as a broken pool on
            # submit.)
            self._local = InProcessEngine(options, fmt)
            self._starter = threading.Thread(target=self._start_workers, daemon=True)
            self._starter.start()

    def _start_workers(self) -> None:
        try:
            for f in [self._pool.submit(_warm_up) for _ in range(self.workers)]:
                f.exception()
        except Exception:  # noqa: BLE001 - submit() raises it again in the main thread
            pass
        finally:
            self._started.set()

    def submit(self, block: Block) -> _Result:
        if self._started.is_set() or self._local is None:
            light = block.detached()
            self.slots = self._deep if not light.data else 4 * self.workers
            future = self._pool.submit(_pool_task, light, self.fmt, self.spool)
            self._in_hand = [f for f in self._in_hand if not f.done()] + [future]
            return future
        return self._local.submit(block)

    def close(self, cancel: bool) -> None:
        try:
            if cancel:
                for f in self._in_hand:
                    f.cancel()
            if self._starter is not None:
                self._starter.join()
            self._pool.shutdown(wait=True, cancel_futures=cancel)
        finally:
            if self._local is not None:
                self._local.close(cancel)


def _ordered(engine: Engine, blocks: Iterator[Block]) -> Generator[ChunkResult, None, None]:
    """Results in submission order, with at most ``engine.slots`` blocks in flight."""
    pending: collections.deque[_Result] = collections.deque()
    ok = False
    try:
        for block in blocks:
            pending.append(engine.submit(block))
            while len(pending) >= engine.slots:  # slots may shrink (ProcessEngine)
                yield pending.popleft().result()
        while pending:
            yield pending.popleft().result()
        ok = True
    finally:
        engine.close(cancel=not ok)


def resolve_jobs(jobs: int, where: str = "batch") -> int:
    """``jobs`` as a worker count: 0 means one per CPU core."""
    if isinstance(jobs, bool) or not isinstance(jobs, int) or jobs < 0:
        raise ParameterError("jobs", where, "a whole number >= 0 (0 = one per CPU core)", jobs)
    return jobs or (os.cpu_count() or 1)


def _engine(
    options: BatchOptions,
    fmt: str,
    jobs: int,
    engine: str,
    scheduler: str | None,
    spool: str | None = None,
) -> Engine:
    if engine == "dask":
        from .distributed import DaskEngine

        return DaskEngine(options, fmt, scheduler=scheduler, n_workers=jobs)
    if engine != "local":
        raise ParameterError("engine", "batch", "'local' or 'dask'", engine)
    if scheduler is not None:
        raise ParameterError("scheduler", "batch", "given only with engine='dask'", scheduler)
    if jobs == 1:
        return InProcessEngine(options, fmt)
    return ProcessEngine(options, fmt, jobs, spool=spool)


def _as_paths(inputs: str | os.PathLike[str] | Iterable[str | os.PathLike[str]]) -> list[str]:
    if isinstance(inputs, (str, os.PathLike)):
        return [os.fspath(inputs)]
    return [os.fspath(p) for p in inputs]


def _label(path: str) -> str:
    return "<stdin>" if path == "-" else path


def _blocks(
    paths: list[str], formats: list[InputFormat], chunk_size: int | None
) -> Iterator[Block]:
    for index, (path, fmt) in enumerate(zip(paths, formats)):
        yield from fmt.split(path, _label(path), index, chunk_size or fmt.chunk_size)


def _formats(paths: list[str], input_format: str) -> list[InputFormat]:
    if not paths:
        raise ParameterError("inputs", "batch", "one or more input files", paths)
    if paths.count("-") > 1:
        raise ParameterError("inputs", "batch", "stdin ('-') at most once", paths)
    formats = [input_format_for(p, input_format) for p in paths]
    kinds = {f.name for f in formats}
    if len({tuple(f.columns(make_options())) for f in formats}) > 1:
        raise ParameterError(
            "inputs", "batch", "inputs of one kind (their output columns differ)", sorted(kinds)
        )
    return formats


def iter_score_fasta(
    paths: str | os.PathLike[str] | Iterable[str | os.PathLike[str]],
    ph: float | Iterable[float] = (7.0,),
    scale: str | Path | Scale | None = None,
    cys: str = "free",
    conditions: Any = None,
    *,
    chunk_size: int | None = None,
    jobs: int = 1,
    engine: str = "local",
    scheduler: str | None = None,
    input_format: str = "auto",
) -> Iterator[pd.DataFrame]:
    """Score FASTA file(s) chunk by chunk: one DataFrame per chunk, records in input order.

    The index of each frame is the record's position over all inputs (0-based). Memory stays
    flat: only a few chunks are held at once. Raises InputFileError for a missing, truncated or
    corrupt input (after yielding the chunks before the problem). Parameters as in
    :func:`score_fasta`.
    """
    opts = make_options(ph, scale, cys, conditions, where="iter_score_fasta")
    _check_chunk_size(chunk_size, "iter_score_fasta")
    workers = resolve_jobs(jobs, "iter_score_fasta")
    paths_ = _as_paths(paths)
    formats = _formats(paths_, input_format)
    run = _engine(opts, "frame", workers, engine, scheduler)
    start = 0
    for result in _ordered(run, _blocks(paths_, formats, chunk_size)):
        frame = result.payload
        frame.index = range(start, start + len(frame))
        start += len(frame)
        yield frame


def score_fasta(
    paths: str | os.PathLike[str] | Iterable[str | os.PathLike[str]],
    ph: float | Iterable[float] = (7.0,),
    scale: str | Path | Scale | None = None,
    cys: str = "free",
    conditions: Any = None,
    *,
    chunk_size: int | None = None,
    jobs: int = 1,
    engine: str = "local",
    scheduler: str | None = None,
    input_format: str = "auto",
) -> pd.DataFrame:
    """Score every record of FASTA file(s): one row per record, in input order.

    Parameters
    ----------
    paths
        A FASTA file (plain or gzip; ``"-"`` for stdin) or a list of them.
    ph
        pH value(s) for the ``charge_ph...`` columns.
    scale
        pKa scale (name, file, :class:`~zwitter.scales.Scale`; None = default).
    cys
        ``"free"`` or ``"bonded"`` (every cysteine in a disulfide).
    conditions
        Temperature / ionic strength: an object with ``apply(sites)`` (see module docstring).
    chunk_size
        Records per chunk; None: the input format's own (10,000 sequences, 250 structures).
    jobs
        Worker processes (1 = this process; 0 = one per CPU core).
    engine, scheduler
        ``"local"``, or ``"dask"`` with a scheduler address (None starts a local cluster).
    input_format
        ``"auto"`` (by suffix, then content) or a registered format name.

    Examples
    --------
    >>> import zwitter.batch as zb, pathlib, tempfile
    >>> f = pathlib.Path(tempfile.mkdtemp()) / "two.fasta"
    >>> _ = f.write_text(">a first\\nDK\\n>b\\nMKW\\n")
    >>> df = zb.score_fasta(f, ph=[7.0], scale="lehninger")
    >>> list(df["id"]), list(df["description"])
    (['a', 'b'], ['first', ''])
    """
    import pandas as pd

    frames = list(
        iter_score_fasta(
            paths, ph, scale, cys, conditions, chunk_size=chunk_size, jobs=jobs, engine=engine,
            scheduler=scheduler, input_format=input_format,
        )
    )  # fmt: skip
    if not frames:
        return empty_frame(make_options(ph, scale, cys, conditions))
    return pd.concat(frames) if len(frames) > 1 else frames[0]


# -- whole runs to a file -------------------------------------------------------------------------
@dataclass(frozen=True)
class BatchSummary:
    """What a run did: records read, scored, with errors; where the output went; how long."""

    records: int
    scored: int
    errors: int
    output: str
    seconds: float

    def line(self) -> str:
        rate = self.records / self.seconds if self.seconds > 0 else float("inf")
        rate_text = f"{rate:,.0f} records/s" if math.isfinite(rate) else "instant"
        return (
            f"{self.records:,} records read, {self.scored:,} scored, {self.errors:,} with errors; "
            f"wrote {self.output} ({self.seconds:.1f} s, {rate_text})"
        )


class Progress:
    """Records, records/s and ETA on stderr, overwritten in place; only when stderr is a TTY."""

    def __init__(self, total_bytes: int | None, stream: Any = None, enabled: bool | None = None):
        self.stream = stream or sys.stderr
        self.enabled = self.stream.isatty() if enabled is None else enabled
        self.total = total_bytes
        self.start = time.monotonic()
        self._last = 0.0
        self._shown = False

    def update(self, records: int, done_bytes: int) -> None:
        now = time.monotonic()
        if not self.enabled or now - self._last < 0.5:
            return
        self._last = now
        elapsed = max(now - self.start, 1e-9)
        text = f"zwitter: {records:,} records, {records / elapsed:,.0f} records/s"
        if self.total and done_bytes > 0:
            fraction = min(done_bytes / self.total, 1.0)
            eta = elapsed * (1 - fraction) / fraction if fraction > 0 else float("nan")
            text += f", {100 * fraction:.0f}%, ETA {_duration(eta)}"
        self.stream.write("\r" + text.ljust(79)[:79])
        self.stream.flush()
        self._shown = True

    def finish(self) -> None:
        if self._shown:
            self.stream.write("\r" + " " * 79 + "\r")
            self.stream.flush()


def _duration(seconds: float) -> str:
    if not math.isfinite(seconds):
        return "?"
    seconds = int(seconds)
    return f"{seconds // 3600}:{seconds // 60 % 60:02d}:{seconds % 60:02d}"


def _sizes(paths: list[str]) -> tuple[list[int], int | None]:
    """Offsets of each input in the total, and the total (None if any size is unknown)."""
    offsets, total = [], 0
    known = True
    for p in paths:
        offsets.append(total)
        try:
            if p == "-":
                raise OSError
            total += os.stat(p).st_size
        except OSError:
            known = False
    return offsets, total if known else None


def score_files(
    inputs: str | os.PathLike[str] | Iterable[str | os.PathLike[str]],
    output: str | os.PathLike[str],
    ph: float | Iterable[float] = (7.0,),
    scale: str | Path | Scale | None = None,
    cys: str = "free",
    conditions: Any = None,
    *,
    chunk_size: int | None = None,
    jobs: int = 1,
    strict: bool = False,
    engine: str = "local",
    scheduler: str | None = None,
    input_format: str = "auto",
    progress: Progress | None = None,
    on_record_error: Callable[[str, str], None] | None = None,
) -> BatchSummary:
    """Score input file(s) into one output file (format by suffix), atomically.

    Rows are written as chunks finish, to a temporary file in the output's folder, renamed to
    ``output`` only when every record is written. On any failure (a truncated input, ``strict``
    and a bad record, an interrupt) the temporary file is removed and no output appears; an
    existing ``output`` is left as it was.

    ``on_record_error(source, error)`` is called for the first :data:`MAX_REPORTED_ERRORS` bad
    records (the CLI prints them). With ``strict=True`` the first bad record raises
    :class:`~zwitter.errors.InputFileError` naming it.
    """
    opts = make_options(ph, scale, cys, conditions, where="score_files")
    _check_chunk_size(chunk_size, "score_files")
    workers = resolve_jobs(jobs)
    paths = _as_paths(inputs)
    formats = _formats(paths, input_format)
    out = Path(os.fspath(output))
    fmt, compressed = output_format_for(out)
    if not out.parent.is_dir():
        raise ParameterError("output", "batch", "a path in an existing folder", str(out))
    for p in paths:
        if p != "-" and Path(p).exists() and out.exists() and os.path.samefile(p, out):
            raise ParameterError("output", "batch", "a file other than the inputs", str(out))
    columns = formats[0].columns(opts)
    offsets, total = _sizes(paths)
    progress = progress or Progress(total)
    started = time.monotonic()
    # Local workers leave text chunks in a spool folder beside the output (Spooled); it goes
    # with the run, whatever happens.
    spool = None
    if workers > 1 and engine == "local" and fmt != "parquet":
        spool = tempfile.mkdtemp(dir=out.parent, prefix=f".{out.name}.", suffix=".chunks")
    try:
        # The engine first: forked workers start before this process opens the output or
        # loads the libraries that write it.
        run = _engine(opts, fmt + ".gz" if compressed else fmt, workers, engine, scheduler, spool)
        try:
            writer = _Writer(out, fmt, compressed, columns)
        except BaseException:
            run.close(cancel=True)
            raise
        records, errors = _run_into(
            run, writer, _blocks(paths, formats, chunk_size), strict, on_record_error, progress,
            offsets,
        )  # fmt: skip
    finally:
        if spool is not None:
            shutil.rmtree(spool, ignore_errors=True)
    return BatchSummary(records, records - errors, errors, str(out), time.monotonic() - started)


def _run_into(
    run: Engine, writer: _Writer, blocks: Iterator[Block], strict: bool,
    on_record_error: Callable[[str, str], None] | None, progress: Progress, offsets: list[int],
) -> tuple[int, int]:  # fmt: skip
    """Write every chunk in order and commit, or remove the partial output: (records, errors)."""
    records = errors = 0
    committed = False
    results = _ordered(run, blocks)
    try:
        for result in results:
            if strict and result.n_errors:
                raise InputFileError(
                    f"{result.errors[0]} (--strict stops at the first bad record)", result.source
                )
            if on_record_error is not None:
                for text in result.errors[: max(0, MAX_REPORTED_ERRORS - errors)]:
                    on_record_error(result.source, text)
            writer.write(result.payload)
            records += result.n_records
            errors += result.n_errors
            progress.update(records, offsets[result.input_index] + result.raw_pos)
        writer.commit()
        committed = True
    finally:
        results.close()  # the workers have stopped (and written nothing more) when this returns
        progress.finish()
        if not committed:
            writer.abort()
    return records, errors


# The SMILES input format registers itself on import (it builds on the names above).
from . import batch_smiles as _batch_smiles  # noqa: E402, F401
