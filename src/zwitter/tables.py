"""Loading of the packaged data tables (``zwitter/data``).

Tables are CSV files whose leading ``#`` lines state the schema and sources, or TOML files.
They are read without pandas so that the command line starts quickly; every row keeps the line
number it came from so that a malformed row can be reported with its file, line and column.
"""

from __future__ import annotations

import csv
import functools
import io
import re
import sys
from dataclasses import dataclass
from importlib import resources
from typing import Any

from .errors import ScaleError

if sys.version_info >= (3, 11):
    import tomllib
else:  # pragma: no cover - exercised on Python 3.10 only
    import tomli as tomllib

__all__ = [
    "Row",
    "read_csv_text",
    "packaged_text",
    "packaged_csv",
    "packaged_toml",
    "read_toml_text",
]


@dataclass(frozen=True)
class Row:
    """One data row: its values by column name, and where it came from."""

    values: dict[str, str]
    path: str
    line: int

    def __getitem__(self, key: str) -> str:
        return self.values.get(key, "")

    def get(self, key: str, default: str = "") -> str:
        value = self.values.get(key)
        return default if value is None or value == "" else value

    def number(self, key: str, *, error: type[Exception] = ScaleError) -> float:
        """The column as a float; a clear error naming file, line and column otherwise."""
        raw = self.values.get(key, "")
        try:
            return float(raw)
        except (TypeError, ValueError):
            raise _make_error(
                error, f"expected a number, got {raw!r}", self.path, self.line, key
            ) from None


def _make_error(
    error: type[Exception], reason: str, path: str, line: int, column: str
) -> Exception:
    if error is ScaleError:
        return ScaleError(reason, path, line, column)
    return error(f"{path}, line {line}, column {column!r}: {reason}")


def read_csv_text(
    text: str, path: str, required: tuple[str, ...] = (), *, error: type[Exception] = ScaleError
) -> list[Row]:
    """Parse a commented CSV table.

    Lines starting with ``#`` (and blank lines) are skipped; the first other line is the header.
    Every row must have as many fields as the header. Column names in ``required`` must exist.
    """
    lines = text.splitlines()
    body: list[tuple[int, str]] = [
        (number, line)
        for number, line in enumerate(lines, start=1)
        if line.strip() and not line.lstrip().startswith("#")
    ]
    if not body:
        raise _make_error(error, "the file holds no header row", path, 0, "")
    header_line, header_text = body[0]
    header = [h.strip() for h in next(csv.reader([header_text]))]
    missing = [c for c in required if c not in header]
    if missing:
        raise _make_error(
            error,
            f"missing column(s) {', '.join(missing)}; the header has {', '.join(header)}",
            path,
            header_line,
            missing[0],
        )
    rows: list[Row] = []
    for number, line in body[1:]:
        fields = next(csv.reader(io.StringIO(line)))
        if len(fields) != len(header):
            raise _make_error(
                error,
                f"expected {len(header)} fields ({', '.join(header)}), found {len(fields)}",
                path,
                number,
                header[min(len(fields), len(header) - 1)],
            )
        rows.append(Row({h: f.strip() for h, f in zip(header, fields)}, path, number))
    return rows


def read_toml_text(text: str, path: str) -> dict[str, Any]:
    """Parse TOML, turning syntax errors into a :class:`ScaleError` with the line and column."""
    try:
        return tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        line = getattr(exc, "lineno", 0) or 0
        col = getattr(exc, "colno", 0) or 0
        found = re.search(r"\(at line (\d+), column (\d+)\)", str(exc))
        if found and not line:  # Python < 3.14 puts the position only in the message
            line, col = int(found.group(1)), int(found.group(2))
        message = re.sub(r"\s*\(at line \d+, column \d+\)", "", str(exc))
        raise ScaleError(f"invalid TOML: {message}", path, line, str(col) if col else "") from None


@functools.cache
def packaged_text(name: str) -> str:
    """The text of a packaged data file (cached)."""
    return resources.files("zwitter").joinpath("data", name).read_text(encoding="utf-8")


@functools.cache
def _packaged_csv(name: str, required: tuple[str, ...]) -> tuple[Row, ...]:
    return tuple(read_csv_text(packaged_text(name), f"zwitter/data/{name}", required))


def packaged_csv(name: str, required: tuple[str, ...] = ()) -> tuple[Row, ...]:
    """Rows of a packaged CSV table (cached)."""
    return _packaged_csv(name, tuple(required))


@functools.cache
def packaged_toml(name: str) -> dict[str, Any]:
    """A packaged TOML file as a dict (cached)."""
    return read_toml_text(packaged_text(name), f"zwitter/data/{name}")
