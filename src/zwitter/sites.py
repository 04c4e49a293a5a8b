"""Titratable sites and the SiteSet: the value every reader builds and every solver reads.

A *site* is a group that takes or gives protons. It has a label, its pKa step(s) in ascending
order (successive deprotonations of a polyprotic group), the charge of its most protonated state,
a count (how many such groups the molecule has; fractional for ambiguous residues), and the source
of its pKa. A permanent charge is a site without pKa steps.

A :class:`SiteSet` stores K site types as numpy arrays. Its ``counts`` are a vector of K numbers for
one molecule, or an N x K matrix for a batch of N molecules that share the same site types (a
composition matrix): every solver in :mod:`zwitter.equilibrium` accepts both.
"""

from __future__ import annotations

import math
from collections.abc import Iterable, Sequence
from dataclasses import dataclass, field

import numpy as np
import numpy.typing as npt

from .errors import ParameterError

__all__ = ["Site", "SiteSet", "permanent_charge"]

FloatArray = npt.NDArray[np.float64]


@dataclass(frozen=True)
class Site:
    """One titratable group type (or permanent charge) of a molecule.

    Parameters
    ----------
    label
        What people read: ``"K"``, ``"N-terminus"``, ``"phosphoserine"``, ``"carboxylic acid"``.
    pkas
        pKa of each deprotonation step, ascending. Empty for a permanent charge.
    charge
        Charge of the most protonated state (``+1`` for lysine, ``0`` for a carboxylic acid).
    count
        Number of such groups in the molecule; may be fractional (B counts half an Asp).
    source
        Where the pKa values come from.
    group
        Key of the group type for look-ups (ionization enthalpy, ...); defaults to ``label``.
    members
        Names of the individual groups, e.g. residue positions ``("K12", "K40")``.
    atoms
        Atom indices when the site comes from a structure.

    Examples
    --------
    >>> Site("K", (10.5,), +1, count=3).charge_range()
    (0, 1)
    """

    label: str
    pkas: tuple[float, ...]
    charge: int
    count: float = 1.0
    source: str = ""
    group: str = ""
    members: tuple[str, ...] = ()
    atoms: tuple[int, ...] = ()

    def __post_init__(self) -> None:
        object.__setattr__(self, "pkas", tuple(float(p) for p in self.pkas))
        if not self.group:
            object.__setattr__(self, "group", self.label)
        if any(not math.isfinite(p) for p in self.pkas):
            raise ParameterError("pkas", f"site {self.label!r}", "finite numbers", self.pkas)
        if list(self.pkas) != sorted(self.pkas):
            raise ParameterError(
                "pkas", f"site {self.label!r}", "in ascending order (successive steps)", self.pkas
            )
        if not math.isfinite(self.count) or self.count < 0:
            raise ParameterError("count", f"site {self.label!r}", "a number >= 0", self.count)
        if int(self.charge) != self.charge:
            raise ParameterError("charge", f"site {self.label!r}", "a whole number", self.charge)

    @property
    def is_permanent(self) -> bool:
        return not self.pkas

    def charge_range(self) -> tuple[int, int]:
        """(lowest, highest) charge one such group can carry."""
        return (self.charge - len(self.pkas), self.charge)


def permanent_charge(label: str, charge: int, count: float = 1.0, source: str = "") -> Site:
    """A charge that no pH in water removes (quaternary ammonium, sulfate ester)."""
    return Site(label, (), charge, count, source)


@dataclass(frozen=True, eq=False)
class SiteSet:
    """K site types as arrays; ``counts`` is (K,) for one molecule or (N, K) for a batch.

    Attributes
    ----------
    labels, groups, sources, members, atoms
        Tuples of length K.
    pkas
        (K, S) array of step pKa values, padded with NaN where a site has fewer than S steps
        (S is the largest number of steps; 0 columns when every site is permanent).
    nsteps
        (K,) number of steps of each site (0 for a permanent charge).
    charges
        (K,) charge of the most protonated state.
    counts
        (K,) or (N, K) number of each site type per molecule.
    """

    labels: tuple[str, ...]
    pkas: FloatArray
    nsteps: npt.NDArray[np.int64]
    charges: FloatArray
    counts: FloatArray
    sources: tuple[str, ...] = ()
    groups: tuple[str, ...] = ()
    members: tuple[tuple[str, ...], ...] = ()
    atoms: tuple[tuple[int, ...], ...] = ()
    notes: tuple[str, ...] = field(default=())

    def __post_init__(self) -> None:
        k = len(self.labels)
        pkas = np.asarray(self.pkas, dtype=np.float64)
        if pkas.ndim != 2 or pkas.shape[0] != k:
            raise ValueError(f"pkas must be (K, S) with K={k}; got shape {pkas.shape}")
        counts = np.asarray(self.counts, dtype=np.float64)
        if counts.shape[-1:] != (k,) or counts.ndim not in (1, 2):
            raise ValueError(f"counts must be (K,) or (N, K) with K={k}; got {counts.shape}")
        for name, value in (("sources", self.sources), ("groups", self.groups)):
            if value and len(value) != k:
                raise ValueError(f"{name} must have K={k} entries")
        object.__setattr__(self, "pkas", pkas)
        object.__setattr__(self, "counts", counts)
        object.__setattr__(self, "nsteps", np.asarray(self.nsteps, dtype=np.int64))
        object.__setattr__(self, "charges", np.asarray(self.charges, dtype=np.float64))
        if not self.sources:
            object.__setattr__(self, "sources", ("",) * k)
        if not self.groups:
            object.__setattr__(self, "groups", self.labels)
        if not self.members:
            object.__setattr__(self, "members", ((),) * k)
        if not self.atoms:
            object.__setattr__(self, "atoms", ((),) * k)
        for arr in (self.pkas, self.counts, self.nsteps, self.charges):
            arr.setflags(write=False)

    # -- construction -------------------------------------------------------------------------
    @classmethod
    def from_sites(cls, sites: Iterable[Site], notes: Sequence[str] = ()) -> SiteSet:
        """Build a one-molecule SiteSet from Site objects (order kept)."""
        items = list(sites)
        width = max((len(s.pkas) for s in items), default=0)
        pkas = np.full((len(items), width), np.nan)
        for i, s in enumerate(items):
            pkas[i, : len(s.pkas)] = s.pkas
        return cls(
            labels=tuple(s.label for s in items),
            pkas=pkas,
            nsteps=np.array([len(s.pkas) for s in items], dtype=np.int64),
            charges=np.array([s.charge for s in items], dtype=np.float64),
            counts=np.array([s.count for s in items], dtype=np.float64),
            sources=tuple(s.source for s in items),
            groups=tuple(s.group for s in items),
            members=tuple(s.members for s in items),
            atoms=tuple(s.atoms for s in items),
            notes=tuple(notes),
        )

    def sites(self) -> list[Site]:
        """The site types as :class:`Site` objects (one molecule only)."""
        if self.is_batch:
            raise ValueError("sites() needs a one-molecule SiteSet; use row(i) first")
        return [
            Site(
                self.labels[i],
                tuple(float(p) for p in self.pkas[i, : self.nsteps[i]]),
                int(self.charges[i]),
                float(self.counts[i]),
                self.sources[i],
                self.groups[i],
                self.members[i],
                self.atoms[i],
            )
            for i in range(len(self.labels))
        ]

    # -- shape --------------------------------------------------------------------------------
    @property
    def is_batch(self) -> bool:
        return self.counts.ndim == 2

    @property
    def n_types(self) -> int:
        return len(self.labels)

    @property
    def n_molecules(self) -> int:
        return int(self.counts.shape[0]) if self.is_batch else 1

    def row(self, i: int) -> SiteSet:
        """Molecule ``i`` of a batch, keeping only the site types it has."""
        counts = self.counts[i] if self.is_batch else self.counts
        return self.with_counts(counts).compact()

    def with_counts(self, counts: npt.ArrayLike) -> SiteSet:
        return SiteSet(
            self.labels, self.pkas, self.nsteps, self.charges, np.asarray(counts, dtype=float),
            self.sources, self.groups, self.members, self.atoms, self.notes,
        )  # fmt: skip

    def with_pkas(self, pkas: npt.ArrayLike, sources: Sequence[str] | None = None) -> SiteSet:
        """A copy with other pKa values (same shape), e.g. after temperature corrections."""
        new = np.array(pkas, dtype=float)
        if new.shape != self.pkas.shape:
            raise ValueError(f"pkas shape {new.shape} differs from {self.pkas.shape}")
        return SiteSet(
            self.labels, new, self.nsteps, self.charges, self.counts,
            tuple(sources) if sources is not None else self.sources,
            self.groups, self.members, self.atoms, self.notes,
        )  # fmt: skip

    def compact(self) -> SiteSet:
        """Drop site types with a zero count (one molecule only)."""
        if self.is_batch:
            return self
        keep = np.flatnonzero(self.counts > 0)
        return self.take(keep)

    def take(self, index: Sequence[int] | npt.NDArray[np.int64]) -> SiteSet:
        idx = [int(i) for i in index]
        width = int(max((self.nsteps[i] for i in idx), default=0))
        return SiteSet(
            tuple(self.labels[i] for i in idx),
            self.pkas[idx][:, :width] if idx else np.zeros((0, 0)),
            self.nsteps[idx],
            self.charges[idx],
            self.counts[..., idx],
            tuple(self.sources[i] for i in idx),
            tuple(self.groups[i] for i in idx),
            tuple(self.members[i] for i in idx),
            tuple(self.atoms[i] for i in idx),
            self.notes,
        )

    def __add__(self, other: SiteSet) -> SiteSet:
        """Site types of two one-molecule SiteSets together (a complex, a modification)."""
        if self.is_batch or other.is_batch:
            raise ValueError("only one-molecule SiteSets can be added")
        return SiteSet.from_sites(self.sites() + other.sites(), self.notes + other.notes)

    # -- simple summaries ---------------------------------------------------------------------
    def charge_bounds(self) -> tuple[FloatArray, FloatArray]:
        """(lowest, highest) net charge the molecule(s) can carry."""
        high = self.counts @ self.charges
        low = self.counts @ (self.charges - self.nsteps)
        return np.asarray(low), np.asarray(high)

    def __len__(self) -> int:
        return self.n_types

    def __repr__(self) -> str:
        shape = f"{self.n_molecules} molecules x " if self.is_batch else ""
        return f"SiteSet({shape}{self.n_types} site types: {', '.join(self.labels)})"
