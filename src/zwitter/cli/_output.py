"""Rendering of result rows: a rich table for people, CSV/TSV/JSON for machines (same numbers)."""

from __future__ import annotations

import csv
import enum
import io
import json
import math
import sys
from collections.abc import Sequence
from typing import Any

CAUTION = (
    "Estimates from published pKa data: verify experimentally before acting on them, and follow "
    "your lab's safety rules and local regulations."
)


class OutputFormat(str, enum.Enum):
    table = "table"
    csv = "csv"
    tsv = "tsv"
    json = "json"


def rounded(value: Any, digits: int = 3) -> Any:
    """The one rounding used by every format, so people and machines see the same numbers."""
    if isinstance(value, float):
        if math.isnan(value):
            return None
        return round(value, digits)
    return value


def emit(
    rows: Sequence[dict[str, Any]],
    fmt: OutputFormat,
    *,
    title: str = "",
    caption: str = "",
    stream: Any = None,
) -> None:
    """Write rows (dicts with the same keys) in the chosen format to stdout."""
    out = stream or sys.stdout
    rows = [{k: rounded(v) for k, v in r.items()} for r in rows]
    columns = list(rows[0]) if rows else []
    if fmt is OutputFormat.json:
        out.write(json.dumps(rows, indent=2, allow_nan=False) + "\n")
        return
    if fmt in (OutputFormat.csv, OutputFormat.tsv):
        buf = io.StringIO()
        writer = csv.writer(
            buf, delimiter="," if fmt is OutputFormat.csv else "\t", lineterminator="\n"
        )
        writer.writerow(columns)
        for r in rows:
            writer.writerow(["" if r[c] is None else r[c] for c in columns])
        out.write(buf.getvalue())
        return
    from rich.console import Console
    from rich.table import Table

    table = Table(
        title=title or None, caption=caption or None, header_style="bold", caption_justify="left"
    )
    for c in columns:
        numeric = any(isinstance(r[c], (int, float)) and not isinstance(r[c], bool) for r in rows)
        table.add_column(c, justify="right" if numeric else "left", overflow="fold")
    for r in rows:
        table.add_row(*("—" if r[c] is None else str(r[c]) for c in columns))
    Console(file=out, soft_wrap=False).print(table)
