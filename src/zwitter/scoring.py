"""Scoring a chunk of sequences at once: pI and charge at several pH values for N rows.

This is the one vectorised call that the command line, the batch runner and the distributed
engine share: a chunk of N sequences becomes an N x K count matrix (:func:`sequence.compose`), the
charge at M pH values is one N x M matrix product, and the pI of all N rows is one vectorised
bisection.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np
import numpy.typing as npt

from . import equilibrium as eq
from .scales import Scale
from .sequence import Composition, compose
from .sites import SiteSet

__all__ = ["ChunkScores", "score_sequences", "score_composition"]


@dataclass(frozen=True)
class ChunkScores:
    """Scores of N sequences: pI (NaN where none or on error), charge (N, M), reasons, errors."""

    composition: Composition
    ph: npt.NDArray[np.float64]
    pi: npt.NDArray[np.float64]
    charge: npt.NDArray[np.float64]
    pi_reasons: tuple[str, ...]

    @property
    def errors(self) -> tuple[str, ...]:
        return tuple("" if e is None else str(e) for e in self.composition.errors)

    def warnings(self) -> list[list[str]]:
        out = []
        for i in range(self.pi.size):
            notes = self.composition.warnings_for(i)
            if self.composition.errors[i] is None and self.pi_reasons[i]:
                notes.append(self.pi_reasons[i])
            out.append(notes)
        return out


def score_composition(
    comp: Composition, ph: Sequence[float] | npt.ArrayLike, sites: SiteSet | None = None
) -> ChunkScores:
    """pI and charges for a composed chunk (rows with errors get NaN).

    ``sites`` replaces ``comp.sites`` for the solver when the chunk's sites were adjusted after
    composing (cysteines taken as bonded, pKa values moved to other conditions); it must have the
    same N rows.
    """
    grid = np.atleast_1d(eq.check_ph(ph, "score"))
    if sites is None:
        sites = comp.sites
    elif sites.n_molecules != len(comp.errors):
        raise ValueError(
            f"sites has {sites.n_molecules} rows; the composition has {len(comp.errors)}"
        )
    n = sites.n_molecules
    if n == 0:
        return ChunkScores(comp, grid, np.zeros(0), np.zeros((0, grid.size)), ())
    charge = np.atleast_2d(eq.net_charge(grid, sites, where="score"))
    if charge.shape != (n, grid.size):
        charge = charge.reshape(n, grid.size)
    pi = eq.isoelectric_point(sites)
    failed = np.array([e is not None for e in comp.errors])
    values = np.where(failed, np.nan, pi.values)
    charge = np.where(failed[:, None], np.nan, charge)
    return ChunkScores(comp, grid, values, charge, pi.reasons)


def score_sequences(
    sequences: Sequence[str],
    ph: Sequence[float] | npt.ArrayLike,
    scale: Scale,
    records: Sequence[str] | None = None,
) -> ChunkScores:
    """Compose and score N sequences in one vectorised pass."""
    return score_composition(compose(sequences, scale, records), ph)
