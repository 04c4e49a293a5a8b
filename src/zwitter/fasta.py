"""Reading sequences: FASTA (plain or gzip, or stdin) and one-sequence-per-line text.

Records keep the line where they start, so a bad record can be named. Nothing is dropped: a
header with no sequence is a record with an empty sequence (which scoring reports as an error);
text before the first header in a FASTA file is reported, not skipped.
"""

from __future__ import annotations

import gzip
import io
import itertools
import sys
import zlib
from collections.abc import Iterator
from dataclasses import dataclass
from pathlib import Path
from typing import IO

from .errors import InputFileError

__all__ = ["Record", "open_text", "read_fasta", "read_sequences", "split_header"]


@dataclass(frozen=True)
class Record:
    """One input sequence: id (first word of the header), description, sequence, start line."""

    id: str
    description: str
    sequence: str
    line: int
    source: str = ""
    error: str = ""  # set when the record itself is malformed (e.g. text before the first '>')


def open_text(path: str | Path) -> IO[str]:
    """Open a text input: ``-`` is stdin; ``.gz`` (or gzip magic bytes) is decompressed."""
    if str(path) == "-":
        return io.TextIOWrapper(sys.stdin.buffer, encoding="utf-8", errors="replace", newline=None)
    p = Path(path)
    try:
        raw = p.open("rb")
    except FileNotFoundError:
        raise InputFileError("no such file", str(p)) from None
    except IsADirectoryError:
        raise InputFileError("is a directory, not a file", str(p)) from None
    except OSError as exc:
        raise InputFileError(f"cannot open: {exc.strerror or exc}", str(p)) from None
    magic = raw.peek(2)[:2] if hasattr(raw, "peek") else b""
    if magic == b"\x1f\x8b":
        stream: IO[bytes] = gzip.GzipFile(fileobj=raw)  # type: ignore[assignment]
    else:
        stream = raw
    return io.TextIOWrapper(stream, encoding="utf-8", errors="replace", newline=None)


def _lines(path: str | Path) -> Iterator[tuple[int, str]]:
    handle = open_text(path)
    try:
        number = 0
        try:
            for number, line in enumerate(handle, start=1):  # noqa: B007
                yield number, line.rstrip("\n")
        except EOFError:
            raise InputFileError(
                "the gzip stream ends early (truncated file); records up to here were read",
                str(path),
                number + 1,
            ) from None
        except (zlib.error, gzip.BadGzipFile, OSError) as exc:
            raise InputFileError(f"corrupt compressed data: {exc}", str(path), number + 1) from None
    finally:
        handle.close()


def read_fasta(path: str | Path) -> Iterator[Record]:
    """Yield the records of a FASTA file in order (streaming; memory independent of size).

    Windows line endings are accepted. Blank lines and ';' comment lines are ignored. A '>' line
    with no sequence gives a record with an empty sequence. Text before the first header gives one
    record with an error.
    """
    return _parse_fasta(_lines(path), str(path))


def _parse_fasta(lines: Iterator[tuple[int, str]], source: str) -> Iterator[Record]:
    header: str | None = None
    start = 0
    chunks: list[str] = []
    orphan: list[str] = []
    orphan_line = 0
    for number, line in lines:
        if line.startswith(";"):  # comment line of the original FASTA convention
            continue
        if line.startswith(">"):
            if orphan:
                yield Record(
                    f"(before first header, line {orphan_line})", "", "".join(orphan), orphan_line,
                    source, "sequence text before the first '>' header",
                )  # fmt: skip
                orphan = []
            if header is not None:
                yield _record(header, chunks, start, source)
            header, start, chunks = line[1:].strip(), number, []
        elif line.strip():
            if header is None:
                if not orphan:
                    orphan_line = number
                orphan.append(line.strip())
            else:
                chunks.append(line.strip())
    if orphan:
        yield Record(
            f"(before first header, line {orphan_line})", "", "".join(orphan), orphan_line, source,
            "sequence text before the first '>' header",
        )  # fmt: skip
    if header is not None:
        yield _record(header, chunks, start, source)


def split_header(header: str) -> tuple[str, str]:
    """(id, description) of a FASTA header line without its '>': the id ends at the first
    whitespace (space or tab), as sequence databases write it.

    >>> split_header("sp|P02769|ALBU_BOVIN Albumin OS=Bos taurus")
    ('sp|P02769|ALBU_BOVIN', 'Albumin OS=Bos taurus')
    """
    parts = header.strip().split(None, 1)
    if not parts:
        return "", ""
    return parts[0], parts[1].strip() if len(parts) > 1 else ""


def _record(header: str, chunks: list[str], line: int, source: str) -> Record:
    ident, description = split_header(header)
    if not ident:
        ident = f"(no id, line {line})"
    return Record(ident, description, "".join(chunks), line, source)


def read_sequences(path: str | Path) -> Iterator[Record]:
    """FASTA if the first non-blank line starts with '>', otherwise one sequence per line
    (``#`` comment lines skipped; an optional ``id<TAB>sequence`` form is accepted)."""
    lines = _lines(path)
    peeked: list[tuple[int, str]] = []
    for item in lines:
        peeked.append(item)
        if item[1].strip() and not item[1].startswith("#"):
            break
    if peeked and peeked[-1][1].lstrip().startswith((">", ";")):
        yield from _parse_fasta(itertools.chain(peeked, lines), str(path))
        return
    for number, line in itertools.chain(peeked, lines):
        text = line.strip()
        if not text or text.startswith("#"):
            continue
        if "\t" in text:
            ident, _, seq = text.partition("\t")
            yield Record(ident.strip(), "", seq.strip(), number, str(path))
        else:
            yield Record(f"line{number}", "", text, number, str(path))
