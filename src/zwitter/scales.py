"""Published pKa scales for amino-acid residues, and user scale files.

A scale gives one pKa for each ionizable group of a polypeptide (N-terminus, C-terminus and the
side chains of D, E, C, Y, H, K, R, U), optionally with terminus-specific values: the alpha-amino
pKa by N-terminal residue, the alpha-carboxyl pKa by C-terminal residue, and side-chain values for
a residue sitting at a terminus. Packaged scales live in ``data/pka_scales.csv`` (values, a source
per row) and ``data/pka_scales.toml`` (title, citation, notes per scale).

User scale files
----------------
CSV, with optional ``#`` comment lines, columns ``group,context,pka`` and optionally ``source``::

    group,context,pka,source
    Nterm,,8.0,my lab's titration
    Nterm,A,7.6,
    Cterm,,3.1,
    D,,3.9,
    ...

or TOML::

    title = "my scale"
    source = "where the values come from"
    [pka]            # group = pKa
    Nterm = 8.0
    K = 10.5
    [nterm]          # alpha-amino pKa by N-terminal residue (optional)
    A = 7.6
    [cterm]          # alpha-carboxyl pKa by C-terminal residue (optional)
    D = 4.55
    [side_nterm]     # side chain of a residue at the N-terminus (optional)
    [side_cterm]     # side chain of a residue at the C-terminus (optional)

Groups: Nterm Cterm D E C Y H K R (all required) and U (optional).
"""

from __future__ import annotations

import difflib
import functools
import math
from collections.abc import Mapping
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from .errors import ScaleError
from .tables import Row, packaged_csv, packaged_toml, read_csv_text, read_toml_text

__all__ = [
    "GROUPS",
    "REQUIRED_GROUPS",
    "Scale",
    "DEFAULT_SCALE",
    "scale_names",
    "get_scale",
    "load_scale_file",
    "list_scales",
]

#: Ionizable groups of polypeptides: charge of the protonated form and a readable name.
GROUPS: dict[str, tuple[int, str]] = {
    "Nterm": (+1, "N-terminal amine"),
    "Cterm": (0, "C-terminal carboxyl"),
    "D": (0, "Asp side-chain carboxyl"),
    "E": (0, "Glu side-chain carboxyl"),
    "C": (0, "Cys thiol"),
    "Y": (0, "Tyr phenol"),
    "H": (+1, "His imidazolium"),
    "K": (+1, "Lys ammonium"),
    "R": (+1, "Arg guanidinium"),
    "U": (0, "Sec selenol"),
}
REQUIRED_GROUPS = ("Nterm", "Cterm", "D", "E", "C", "Y", "H", "K", "R")
SIDE_CHAIN_GROUPS = ("D", "E", "C", "Y", "H", "K", "R", "U")
AMINO_ACIDS = "ACDEFGHIKLMNPQRSTVWYUO"

#: The default scale, chosen by measurement on data/reference/measured_pi.csv (see README).
DEFAULT_SCALE = "nozaki_tanford"


@dataclass(frozen=True)
class Scale:
    """One pKa scale: a value per group, optional terminus-specific values, and sources.

    ``nterm``/``cterm`` map a terminal residue to the alpha-amino/alpha-carboxyl pKa;
    ``side_nterm``/``side_cterm`` map a residue to its side-chain pKa when it is terminal.
    """

    key: str
    pka: Mapping[str, float]
    sources: Mapping[str, str]
    title: str = ""
    citation: str = ""
    kind: str = ""
    notes: str = ""
    temperature: float | None = None
    path: str = ""
    nterm: Mapping[str, float] = field(default_factory=dict)
    cterm: Mapping[str, float] = field(default_factory=dict)
    side_nterm: Mapping[str, float] = field(default_factory=dict)
    side_cterm: Mapping[str, float] = field(default_factory=dict)

    def __post_init__(self) -> None:
        missing = [g for g in REQUIRED_GROUPS if g not in self.pka]
        if missing:
            raise ScaleError(
                f"scale {self.key!r} has no pKa for {', '.join(missing)}; every scale needs "
                f"{', '.join(REQUIRED_GROUPS)}",
                self.path,
            )
        for table in (self.pka, self.nterm, self.cterm, self.side_nterm, self.side_cterm):
            for key, value in table.items():
                if not math.isfinite(value) or not -5.0 <= value <= 20.0:
                    raise ScaleError(
                        f"scale {self.key!r}: pKa {value!r} for {key!r} is outside [-5, 20]",
                        self.path,
                    )

    @property
    def terminus_specific(self) -> bool:
        return bool(self.nterm or self.cterm or self.side_nterm or self.side_cterm)

    def source_of(self, group: str, context: str = "") -> str:
        return self.sources.get(f"{group}@{context}" if context else group, "") or self.citation


# -- reading ---------------------------------------------------------------------------------
def _check_group(group: str, path: str, line: int, column: str = "group") -> None:
    if group not in GROUPS:
        raise ScaleError(
            f"unknown group {group!r}; allowed: {', '.join(GROUPS)}", path, line, column
        )


def _check_residue(residue: str, path: str, line: int, column: str = "context") -> None:
    if len(residue) != 1 or residue not in AMINO_ACIDS:
        raise ScaleError(
            f"context {residue!r} is not a one-letter amino-acid code", path, line, column
        )


def _scale_from_rows(key: str, rows: list[Row] | tuple[Row, ...], meta: Mapping[str, Any]) -> Scale:
    pka: dict[str, float] = {}
    sources: dict[str, str] = {}
    tables: dict[str, dict[str, float]] = {"nterm": {}, "cterm": {}, "sn": {}, "sc": {}}
    path = rows[0].path if rows else str(meta.get("path", ""))
    for row in rows:
        group, context = row["group"], row["context"]
        _check_group(group, row.path, row.line)
        value = row.number("pka")
        if not math.isfinite(value):
            raise ScaleError(f"pKa must be finite, got {row['pka']!r}", row.path, row.line, "pka")
        if not context:
            target, slot = pka, group
        elif group in ("Nterm", "Cterm"):
            _check_residue(context, row.path, row.line)
            target, slot = tables["nterm" if group == "Nterm" else "cterm"], context
        elif context in ("Nterm", "Cterm"):
            target, slot = tables["sn" if context == "Nterm" else "sc"], group
        else:
            raise ScaleError(
                f"context {context!r} for side-chain group {group!r} must be Nterm, Cterm or empty",
                row.path,
                row.line,
                "context",
            )
        if slot in target:
            raise ScaleError(
                f"duplicate value for group {group!r} context {context!r}", row.path, row.line
            )
        target[slot] = value
        sources[f"{group}@{context}" if context else group] = row.get("source")
    temp = meta.get("temperature")
    return Scale(
        key=key,
        pka=pka,
        sources=sources,
        title=str(meta.get("title", key)),
        citation=str(meta.get("citation", "")),
        kind=str(meta.get("kind", "")),
        notes=str(meta.get("notes", "")),
        temperature=float(temp) if temp is not None else None,
        path=path,
        nterm=tables["nterm"],
        cterm=tables["cterm"],
        side_nterm=tables["sn"],
        side_cterm=tables["sc"],
    )


@functools.cache
def _packaged() -> dict[str, Scale]:
    rows = packaged_csv("pka_scales.csv", ("scale", "group", "context", "pka", "source"))
    meta = packaged_toml("pka_scales.toml")
    by_key: dict[str, list[Row]] = {}
    for row in rows:
        by_key.setdefault(row["scale"], []).append(row)
    unknown = sorted(set(by_key) - set(meta))
    if unknown:
        raise ScaleError(f"scales {unknown} have no entry in pka_scales.toml", "zwitter/data")
    return {key: _scale_from_rows(key, by_key[key], meta[key]) for key in meta if key in by_key}


def scale_names() -> list[str]:
    """Keys of the packaged scales."""
    return list(_packaged())


def list_scales() -> list[Scale]:
    """The packaged scales, in table order."""
    return list(_packaged().values())


def load_scale_file(path: str | Path) -> Scale:
    """Read a user scale file (``.csv`` or ``.toml``); errors name the file, line and column."""
    p = Path(path)
    try:
        text = p.read_text(encoding="utf-8")
    except OSError as exc:
        raise ScaleError(f"cannot read scale file: {exc.strerror or exc}", str(p)) from None
    except UnicodeDecodeError:
        raise ScaleError("scale file is not UTF-8 text", str(p)) from None
    suffix = p.suffix.lower()
    if suffix == ".csv":
        rows = read_csv_text(text, str(p), ("group", "context", "pka"))
        if not rows:
            raise ScaleError("scale file has a header but no rows", str(p))
        return _scale_from_rows(p.stem, rows, {"title": p.stem, "path": str(p)})
    if suffix == ".toml":
        return _scale_from_toml(p.stem, read_toml_text(text, str(p)), text, str(p))
    raise ScaleError(f"unknown scale file type {suffix!r}; use .csv or .toml", str(p))


def _line_of(text: str, key: str) -> int:
    for number, line in enumerate(text.splitlines(), start=1):
        if line.strip().startswith(key):
            return number
    return 0


def _scale_from_toml(key: str, data: Mapping[str, Any], text: str, path: str) -> Scale:
    rows: list[Row] = []
    tables = {"pka": "", "nterm": "Nterm", "cterm": "Cterm", "side_nterm": "", "side_cterm": ""}
    for name in data:
        if name not in tables and name not in ("title", "source", "citation", "notes"):
            raise ScaleError(
                f"unknown key {name!r}; allowed: title, source, notes, {', '.join(tables)}",
                path,
                _line_of(text, name),
            )
    source = str(data.get("source", data.get("citation", "")))
    for table, group_for in tables.items():
        entries = data.get(table, {})
        if not isinstance(entries, dict):
            raise ScaleError(
                f"[{table}] must be a table of name = pKa", path, _line_of(text, table)
            )
        for name, value in entries.items():
            line = _line_of(text, name)
            if not isinstance(value, (int, float)) or isinstance(value, bool):
                raise ScaleError(
                    f"pKa of {name!r} must be a number, got {value!r}", path, line, name
                )
            if table == "pka":
                values = {"group": name, "context": ""}
            elif table in ("nterm", "cterm"):
                values = {"group": group_for, "context": name}
            else:
                values = {"group": name, "context": "Nterm" if table == "side_nterm" else "Cterm"}
            values.update(pka=repr(float(value)), source=source)
            rows.append(Row(values, path, line))
    if not rows:
        raise ScaleError("scale file defines no pKa values ([pka] table)", path)
    meta = {"title": data.get("title", key), "citation": source, "notes": data.get("notes", "")}
    return _scale_from_rows(key, rows, meta)


def get_scale(scale: str | Path | Scale | None = None) -> Scale:
    """Resolve a scale: None (default), a packaged key, a file path, or a :class:`Scale`."""
    if scale is None:
        return _packaged()[DEFAULT_SCALE]
    if isinstance(scale, Scale):
        return scale
    if isinstance(scale, Path):
        return load_scale_file(scale)
    if not isinstance(scale, str):
        raise ScaleError(f"a scale is a name, a file path or a Scale; got {type(scale).__name__}")
    packaged = _packaged()
    key = scale.strip().lower().replace("-", "_").replace(" ", "_")
    if key in packaged:
        return packaged[key]
    try:
        is_file = Path(scale).is_file()
    except OSError:  # not a usable path at all (too long, ...): not a file
        is_file = False
    if scale.lower().endswith((".csv", ".toml")) or is_file:
        return load_scale_file(scale)
    close = difflib.get_close_matches(key, list(packaged), n=3, cutoff=0.5)
    hint = f" Did you mean {', '.join(close)}?" if close else ""
    raise ScaleError(
        f"unknown pKa scale {scale!r}; packaged scales: {', '.join(packaged)}.{hint} "
        "A path to a .csv or .toml scale file is also accepted."
    )
