"""Measuring a pKa scale against proteins and peptides with experimentally measured pI.

Used to choose the default scale (README, benchmarks/scale_accuracy.py, tests) and by anyone who
wants to score a scale file of their own against the same reference table
(``data/reference/measured_pi.csv`` in the source tree; its README cites every value).
"""

from __future__ import annotations

import math
import warnings
from collections.abc import Sequence
from dataclasses import dataclass
from pathlib import Path

from . import equilibrium as eq
from .errors import ZwitterWarning
from .scales import Scale, get_scale
from .sequence import sites_for_sequence
from .sites import SiteSet
from .tables import Row, read_csv_text

__all__ = ["ScaleAccuracy", "load_measured_pi", "plain_complex_sites", "scale_errors"]


@dataclass(frozen=True)
class ScaleAccuracy:
    """Prediction error of one scale on the reference table."""

    scale: str
    n: int
    rmsd: float
    mae: float
    max_abs: float
    residuals: tuple[tuple[str, float, float], ...]  # (id, measured, predicted)


def load_measured_pi(path: str | Path) -> list[Row]:
    """Rows of the measured-pI reference table (only lines *starting* with '#' are comments)."""
    p = Path(path)
    return read_csv_text(p.read_text(encoding="utf-8"), str(p), ("id", "sequence", "measured_pi"))


def plain_complex_sites(sequence: str, scale: Scale) -> SiteSet:
    """Sites of a molecule given as plain chains separated by '//' (each chain with its termini)."""
    total: SiteSet | None = None
    for chain in sequence.split("//"):
        sites, _ = sites_for_sequence(chain, scale)
        total = sites if total is None else total + sites
    assert total is not None
    return total


def scale_errors(
    scale: str | Path | Scale | None, rows: Sequence[Row], *, exclude: Sequence[str] = ()
) -> ScaleAccuracy:
    """RMSD / MAE of the predicted pI (plain sequences, cysteines free) against measured pI."""
    sc = get_scale(scale)
    residuals = []
    for row in rows:
        if row["id"] in exclude:
            continue
        sites = plain_complex_sites(row["sequence"], sc)
        with warnings.catch_warnings():
            warnings.simplefilter("ignore", ZwitterWarning)
            pi = float(eq.isoelectric_point(sites).values[0])
        residuals.append((row["id"], float(row["measured_pi"]), pi))
    diffs = [p - m for _, m, p in residuals if not math.isnan(p)]
    n = len(diffs)
    rmsd = math.sqrt(sum(d * d for d in diffs) / n) if n else math.nan
    mae = sum(abs(d) for d in diffs) / n if n else math.nan
    return ScaleAccuracy(
        sc.key, n, rmsd, mae, max((abs(d) for d in diffs), default=math.nan), tuple(residuals)
    )
