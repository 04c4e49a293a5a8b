"""Average and monoisotopic masses of peptide and protein chains.

The packaged table ``data/residue_masses.csv`` holds element masses (NIST monoisotopic masses,
IUPAC 2013 conventional atomic weights) and the elemental formula of every residue; residue masses
are computed here from those two, so each value traces back to its element rows. A linear chain's
mass is the sum of its residue masses plus one water.

Batch work is vectorised: :func:`chain_masses` takes the (N, 256) letter-count matrix of a chunk
(:attr:`zwitter.sequence.Composition.letters`) and returns N masses with one matrix product.
A chain with a residue that has no formula (X, or any letter outside the table) gets NaN.

Examples
--------
>>> round(residue_masses()["G"].monoisotopic, 5)
57.02146
>>> round(sequence_mass("GG", monoisotopic=True), 4)
132.0535
"""

from __future__ import annotations

import functools
import math
import re
from dataclasses import dataclass

import numpy as np
import numpy.typing as npt

from .errors import InputFileError
from .tables import Row, packaged_csv

__all__ = [
    "ResidueMass",
    "residue_masses",
    "water_mass",
    "mass_vectors",
    "chain_masses",
    "sequence_mass",
]

TABLE = "residue_masses.csv"
_FORMULA = re.compile(r"([A-Z][a-z]?)(\d*)")
_MEAN = re.compile(r"^mean\(\s*([A-Z])\s*,\s*([A-Z])\s*\)$")
FloatArray = npt.NDArray[np.float64]


@dataclass(frozen=True)
class ResidueMass:
    """Masses of one residue (or of the water a chain adds), with the formula they come from."""

    symbol: str
    name: str
    formula: str
    monoisotopic: float
    average: float
    source: str

    def __post_init__(self) -> None:
        for value in (self.monoisotopic, self.average):
            if not (math.isfinite(value) and value > 0):
                raise ValueError(
                    f"residue {self.symbol!r}: mass {value!r} must be a positive number"
                )


def _where(row: Row) -> tuple[str, int]:
    return row.path, row.line


def _parse_formula(
    formula: str, elements: dict[str, tuple[float, float]], row: Row
) -> tuple[float, float]:
    """(monoisotopic, average) mass of an elemental formula such as ``C3H5NOSe``."""
    pos = 0
    mono = avg = 0.0
    for match in _FORMULA.finditer(formula):
        if match.start() != pos:
            break
        symbol, count = match.group(1), int(match.group(2) or 1)
        if symbol not in elements:
            raise InputFileError(
                f"formula {formula!r} uses element {symbol!r}, which has no element row",
                *_where(row),
            )
        mono += count * elements[symbol][0]
        avg += count * elements[symbol][1]
        pos = match.end()
    if pos != len(formula) or not formula:
        raise InputFileError(
            f"formula {formula!r} is not an elemental formula such as C3H5NO or mean(D,N)",
            *_where(row),
        )
    return mono, avg


@functools.cache
def _load() -> tuple[dict[str, ResidueMass], ResidueMass]:
    rows = packaged_csv(
        TABLE, ("kind", "symbol", "name", "formula", "monoisotopic", "average", "source")
    )
    elements: dict[str, tuple[float, float]] = {}
    for row in rows:
        if row["kind"] == "element":
            elements[row["symbol"]] = (
                row.number("monoisotopic", error=InputFileError),
                row.number("average", error=InputFileError),
            )
    residues: dict[str, ResidueMass] = {}
    means: list[Row] = []
    water: ResidueMass | None = None
    for row in rows:
        kind, symbol, formula = row["kind"], row["symbol"], row["formula"]
        if kind == "element":
            continue
        if kind not in ("residue", "chain"):
            raise InputFileError(
                f"unknown kind {kind!r}; use element, residue or chain", *_where(row)
            )
        if _MEAN.match(formula):
            means.append(row)
            continue
        mono, avg = _parse_formula(formula, elements, row)
        item = ResidueMass(symbol, row["name"], formula, mono, avg, row["source"])
        if kind == "chain":
            water = item
        elif len(symbol) != 1 or symbol in residues:
            raise InputFileError(
                f"residue symbol {symbol!r} is not a new one-letter code", *_where(row)
            )
        else:
            residues[symbol] = item
    for row in means:
        match = _MEAN.match(row["formula"])
        assert match is not None
        a, b = match.group(1), match.group(2)
        if a not in residues or b not in residues:
            raise InputFileError(
                f"{row['formula']!r} names a residue without a formula", *_where(row)
            )
        residues[row["symbol"]] = ResidueMass(
            row["symbol"], row["name"], row["formula"],
            (residues[a].monoisotopic + residues[b].monoisotopic) / 2,
            (residues[a].average + residues[b].average) / 2,
            row["source"],
        )  # fmt: skip
    if water is None:
        raise InputFileError("the table has no chain row (water)", f"zwitter/data/{TABLE}")
    return residues, water


def residue_masses() -> dict[str, ResidueMass]:
    """Residue masses by one-letter code (upper case), computed from the packaged table."""
    return dict(_load()[0])


def water_mass() -> ResidueMass:
    """The H2O that a linear chain adds to the sum of its residues."""
    return _load()[1]


_FIRST, _LAST = ord("A"), ord("Z")


@functools.cache
def mass_vectors() -> tuple[FloatArray, FloatArray, FloatArray]:
    """Masses of the letters A-Z in order: (monoisotopic, average, 1.0 where the letter has a mass).

    Letters without a formula (X, and any other letter missing from the table) have mass 0 and
    flag 0. These are the columns 1 to 26 (``ord(letter) - 64``) of :attr:`Composition.letters`.
    """
    residues = _load()[0]
    mono = np.zeros(_LAST - _FIRST + 1)
    avg = np.zeros_like(mono)
    known = np.zeros_like(mono)
    for symbol, item in residues.items():
        mono[ord(symbol) - _FIRST] = item.monoisotopic
        avg[ord(symbol) - _FIRST] = item.average
        known[ord(symbol) - _FIRST] = 1.0
    for arr in (mono, avg, known):
        arr.setflags(write=False)
    return mono, avg, known


def chain_masses(letters: npt.ArrayLike) -> tuple[FloatArray, FloatArray]:
    """(monoisotopic, average) masses of N linear chains from their letter counts.

    ``letters`` is (N, 32) with column ``ord(letter) - 64`` (A = 1, as in
    :attr:`Composition.letters`) or (N, 256) by upper-case byte value. Rows with a letter that has
    no mass (X, anything outside the table) or with no residue at all get NaN.

    >>> import numpy as np
    >>> counts = np.zeros((1, 32), dtype=np.int64); counts[0, ord("G") - 64] = 2
    >>> [round(float(m[0]), 4) for m in chain_masses(counts)]
    [132.0535, 132.1179]
    """
    counts = np.asarray(letters)
    if counts.ndim != 2 or counts.shape[1] not in (32, 256):
        raise ValueError(f"letters must be an (N, 32) or (N, 256) count matrix; got {counts.shape}")
    offset = 64 if counts.shape[1] == 256 else 0
    mono, avg, known = mass_vectors()
    first = _FIRST - 64 + offset
    upper = counts[:, first : first + 26].astype(np.float64)  # (N, 26): a small copy
    water = water_mass()
    mono_sum = upper @ mono + water.monoisotopic
    avg_sum = upper @ avg + water.average
    with_mass = upper @ known
    undefined = (counts.sum(axis=1) > with_mass) | (with_mass == 0)
    mono_sum[undefined] = np.nan
    avg_sum[undefined] = np.nan
    return mono_sum, avg_sum


def sequence_mass(sequence: str, *, monoisotopic: bool = False) -> float:
    """Mass of one linear chain given as one-letter codes (NaN if it has X or unknown letters)."""
    data = np.frombuffer(sequence.upper().encode("utf-8"), dtype=np.uint8)
    counts = np.bincount(data, minlength=256)[None, :256]
    mono, avg = chain_masses(counts)
    return float(mono[0] if monoisotopic else avg[0])
