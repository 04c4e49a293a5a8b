"""Coupled titratable sites: exact microstate enumeration, with a mean-field fallback.

A molecule has K sites. Site i has S_i pKa steps and, in state j (j protons lost, 0 <= j <= S_i),
the charge q_i = c_i - j, where c_i is the charge of its most protonated state. A *microstate*
gives every site a state. Its free energy, in pK units (log10 of a weight; pH 0 and the fully
protonated molecule as reference), is

    G(s) = sum_i [pKa_i,1 + ... + pKa_i,j_i]        intrinsic steps of each site
         + sum_{i<k} w_ik(q_i q_k)                  pairwise coupling of charged sites
         + sum_i sum_p w_ip(q_i Q_p)                coupling to permanent charges Q_p

and its weight at a pH is 10**(L(s) * pH - G(s)), where L(s) = sum_i j_i is the number of protons
lost. The intrinsic pKa of a site is its value when every other site is uncharged; the coupling
carries the rest. For two charges a distance d bonds apart,

    w(q q') = q q' * A * f**(d - d0) * paths,

with one (A, f) pair for two anions, one for two cations and one for opposite charges
(lfer_reactions.csv, rows ``coupling_*``), and ``paths`` the number of shortest bond paths (at
most 3: both ways round a ring). Between two residues of a peptide (both sites of the group family
``peptide``) w is multiplied by the factor of row ``coupling_peptide`` (:attr:`Coupling.peptide`);
between two aminocarboxylate nitrogens (both titrating atoms match the SMARTS of row
``coupling_aminocarboxylate``: the amines of EDTA-like chelators) the cation-cation w is multiplied
by that row's factor (:attr:`Coupling.aminocarboxylate`).

Grouping microstates by L gives the binding polynomial (by protons bound, T - L): the macroscopic
pKa values are pKa_L = log10 Z_(L-1) - log10 Z_L with Z_L = sum over microstates with L protons
lost of 10**(-G). Every pH-dependent quantity follows from the level populations, because within
one level the relative weights of the microstates do not depend on pH.

At an ionic strength above zero the activity coefficients belong to whole species, not to sites:
a microstate of net charge z has log10 g(z) = -a z**2 (Davies, a = A F(I);
:func:`zwitter.conditions.davies_species_terms` derives the weights), so

    G(s) -> G(s) + log10 g(z(s)) + h L(s)

with h = log10 g(H+) when pH means -log10 [H+] (0 for a glass-electrode pH). Disconnected
fragments kept together are separate species, each with its own net charge. One species: the term
depends on L only, so it moves each level's log10 Z and leaves the microstates of a level in the
same proportions. Written out, -a z**2 = -a (Q + sum_i q_i)**2 is a uniform pair coupling of
-2a q_i q_k between every two sites of a species plus terms of each site alone, which is how the
mean-field answer takes it.

Exact enumeration is used up to :data:`MAX_EXACT_STATES` microstates (2**16). Beyond that the
mean-field answer replaces it (each site feels the average charge of the others, solved
self-consistently at every pH) and a :class:`~zwitter.errors.ZwitterWarning` says so.
"""

from __future__ import annotations

import math
import warnings
from collections.abc import Sequence
from dataclasses import dataclass
from functools import cache
from typing import Any

import numpy as np
import numpy.typing as npt

from .errors import ZwitterWarning

__all__ = [
    "MAX_EXACT_STATES",
    "Coupling",
    "default_coupling",
    "coupling_matrix",
    "PairTable",
    "Microstates",
]

FloatArray = npt.NDArray[np.float64]
IntArray = npt.NDArray[np.int64]

#: Largest number of microstates enumerated exactly (ARCHITECTURE.md: cheap up to about 2**16).
MAX_EXACT_STATES = 2**16
#: Shortest-path multiplicity counted at most this many times (both ways round a ring).
MAX_PATHS = 3
_LN10 = math.log(10.0)


@dataclass(frozen=True)
class Coupling:
    """Pairwise interaction of two charges, in pK units per unit charge product.

    ``w(d) = amplitude * attenuation**(d - d0)`` with one (amplitude, attenuation) pair for two
    anions, one for two cations and one for opposite charges. ``peptide`` scales the interaction
    of two sites that are both residues of a peptide (group family ``peptide``; the structure
    reader applies it, see ``lfer_reactions.csv`` row ``coupling_peptide``). ``aminocarboxylate``
    scales the cation-cation interaction of two sites whose titrating atoms both match
    ``aminocarboxylate_smarts`` (row ``coupling_aminocarboxylate``; the structure reader applies
    it).

    Examples
    --------
    >>> c = Coupling((2.5, 0.6), (2.5, 0.6), (1.5, 0.6), 3.0)
    >>> round(float(c.strength(np.array(3.0), "cation")), 3), round(float(c.strength(4.0)), 3)
    (2.5, 1.5)
    """

    anion: tuple[float, float]
    cation: tuple[float, float]
    opposite: tuple[float, float]
    d0: float
    source: str = ""
    peptide: float = 1.0
    aminocarboxylate: float = 1.0
    aminocarboxylate_smarts: str = ""

    def strength(self, d: npt.ArrayLike, pair: str = "anion") -> FloatArray:
        """w at topological distance ``d`` (bonds) for ``pair`` = anion, cation or opposite.

        Disconnected atoms (d = inf) do not interact.
        """
        amp, att = {"anion": self.anion, "cation": self.cation, "opposite": self.opposite}[pair]
        dd = np.asarray(d, dtype=np.float64)
        with np.errstate(over="ignore", under="ignore", invalid="ignore"):
            out = np.where(
                np.isfinite(dd),
                amp * np.power(att, np.where(np.isfinite(dd), dd, 0) - self.d0),
                0.0,
            )
        return np.asarray(out, dtype=np.float64)


@cache
def default_coupling() -> Coupling:
    """The coupling parameters of the packaged ``lfer_reactions.csv`` (rows ``coupling_*``)."""
    from .tables import packaged_csv

    rows = {r["key"]: r for r in packaged_csv("lfer_reactions.csv", ("key", "kind", "rho"))}
    pairs = {}
    d0s = set()
    for pair in ("anion", "cation", "opposite"):
        r = rows[f"coupling_{pair}"]
        pairs[pair] = (r.number("rho"), r.number("attenuation"))
        d0s.add(r.number("d0"))
    if len(d0s) != 1:
        raise ValueError("lfer_reactions.csv: the coupling rows must share d0")
    peptide = rows["coupling_peptide"].number("rho") if "coupling_peptide" in rows else 1.0
    chelator = rows.get("coupling_aminocarboxylate")
    return Coupling(
        pairs["anion"],
        pairs["cation"],
        pairs["opposite"],
        d0s.pop(),
        "site coupling fitted here (lfer_reactions.csv, rows coupling_anion, coupling_cation, "
        "coupling_opposite; coupling_peptide between two peptide residues; "
        "coupling_aminocarboxylate between two aminocarboxylate nitrogens)",
        peptide,
        chelator.number("rho") if chelator is not None else 1.0,
        chelator["smarts"] if chelator is not None else "",
    )


@dataclass(frozen=True)
class PairTable:
    """Coupling matrices of K sites (K x K each): anion-anion, cation-cation, opposite charges."""

    anion: FloatArray
    cation: FloatArray
    opposite: FloatArray

    @classmethod
    def zeros(cls, k: int, p: int | None = None) -> PairTable:
        shape = (k, k if p is None else p)
        return cls(np.zeros(shape), np.zeros(shape), np.zeros(shape))


def coupling_matrix(
    distances: npt.ArrayLike, paths: npt.ArrayLike, coupling: Coupling, *, square: bool = True
) -> PairTable:
    """Coupling matrices from distances (bonds) and shortest-path counts (capped at 3).

    For a square site-site matrix the diagonal is zero: a site does not interact with itself (its
    own steps hold that).
    """
    d = np.asarray(distances, dtype=np.float64)
    n = np.minimum(np.asarray(paths, dtype=np.float64), MAX_PATHS)
    mats = [coupling.strength(d, pair) * n for pair in ("anion", "cation", "opposite")]
    if square:
        for m in mats:
            np.fill_diagonal(m, 0.0)
    return PairTable(*mats)


def _pair_energy(qa: FloatArray, qb: FloatArray, w: PairTable, ia: Any, ib: Any) -> FloatArray:
    # q_a q_b w for the matching pair type: qq > 0 repels (raises G), qq < 0 attracts.
    qq = qa * qb
    same = np.where(qa > 0, w.cation[ia, ib], w.anion[ia, ib])
    return np.asarray(np.where(qq > 0, qq * same, qq * w.opposite[ia, ib]))


class Microstates:
    """Coupled sites of one molecule: populations, charge, macroscopic pKa values.

    Parameters
    ----------
    pkas
        (K, S) intrinsic step pKa values, NaN-padded (as in :class:`~zwitter.sites.SiteSet`).
    nsteps
        (K,) number of steps of each site (>= 1).
    charges
        (K,) charge of each site's most protonated state.
    pairs
        Site-site coupling (:class:`PairTable` of K x K matrices); None: independent sites.
    fixed, field
        Permanent charges that interact with the sites: their (P,) charges and the K x P coupling.
    fixed_charge
        Total permanent charge of the molecule (it enters the net charge; only the charges listed in
        ``fixed`` interact with the sites).
    max_states
        Exact enumeration up to this many microstates; mean field beyond (with a warning).
    where
        Name of the molecule for the warning.
    activity, proton_log_gamma
        Whole-species activity correction (0, 0: none, I = 0): a species of net charge z has
        log10 g = -``activity`` z**2, and every proton lost adds ``proton_log_gamma`` (log10 g(H+)
        for a pH on the concentration scale) to the free energy
        (:func:`zwitter.conditions.davies_species_terms` gives both).
    species, species_charges
        The species (disconnected fragment) of each site, (K,) indices 0..F-1, and the permanent
        charge of each species, (F,). None: the sites and ``fixed_charge`` form one species.

    Examples
    --------
    Two identical acid sites without coupling: the statistical factor log10(4) separates the
    macroscopic pKa values.

    >>> ms = Microstates([[4.0], [4.0]], [1, 1], [0, 0])
    >>> [round(float(x), 3) for x in ms.macroscopic_pkas()]
    [3.699, 4.301]

    With a whole-species activity correction a = 0.1074 (Davies at I = 0.1 M, 25 C) the second
    step, 1- to 2-, falls by 3a (log10 g(2-) - log10 g(1-)) and the first, 0 to 1-, by a.

    >>> salt = Microstates([[4.0], [4.0]], [1, 1], [0, 0], activity=0.1074)
    >>> [round(float(x), 3) for x in salt.macroscopic_pkas()]
    [3.592, 3.979]
    """

    def __init__(
        self,
        pkas: npt.ArrayLike,
        nsteps: Sequence[int] | IntArray,
        charges: Sequence[float] | FloatArray,
        pairs: PairTable | None = None,
        *,
        fixed: Sequence[float] | FloatArray = (),
        field: PairTable | None = None,
        fixed_charge: float = 0.0,
        max_states: int = MAX_EXACT_STATES,
        where: str = "",
        activity: float = 0.0,
        proton_log_gamma: float = 0.0,
        species: Sequence[int] | IntArray | None = None,
        species_charges: Sequence[float] | FloatArray | None = None,
    ) -> None:
        p = np.asarray(pkas, dtype=np.float64)
        k = int(p.shape[0]) if p.ndim == 2 else 0
        self.k = k
        self.nsteps = np.asarray(nsteps, dtype=np.int64).reshape(k)
        if k and int(self.nsteps.min()) < 1:
            raise ValueError(
                "every site needs at least one pKa step (permanent charges go in fixed)"
            )
        self.charges = np.asarray(charges, dtype=np.float64).reshape(k)
        width = int(self.nsteps.max()) if k else 0
        self.pkas = p.reshape(k, -1)[:, :width] if k else np.zeros((0, 0))
        self.pairs = pairs if pairs is not None else PairTable.zeros(k)
        fixed_arr = np.asarray(fixed, dtype=np.float64).reshape(-1)
        self.fixed_charge = float(fixed_charge)
        j = np.arange(width + 1, dtype=np.float64)
        #: charge of each site in each state, (K, S + 1)
        self.state_charges = self.charges[:, None] - j[None, :]
        # Energy of each state of each site against the permanent charges: (K, S + 1).
        state_energy: FloatArray | float = 0.0
        if fixed_arr.size and k:
            state_energy = np.zeros((k, width + 1))
            assert field is not None
            for c, qp in enumerate(fixed_arr):
                qa = self.state_charges
                qq = qa * qp
                same = field.cation[:, c : c + 1] if qp > 0 else field.anion[:, c : c + 1]
                state_energy = state_energy + np.where(
                    qq > 0, qq * same, qq * field.opposite[:, c : c + 1]
                )
        # Cumulative intrinsic free energy of each state of each site (K, S + 1); inf: impossible.
        cum = np.zeros((k, width + 1))
        if width:
            steps = self.pkas
            if width > 1:  # NaN padding: a missing step is impossible (infinite free energy)
                steps = np.where(np.isnan(steps), np.inf, steps)
            cum[:, 1:] = np.cumsum(steps, axis=1)
        self.site_g = cum + state_energy
        self.total_steps = int(self.nsteps.sum())
        self.max_charge = self.fixed_charge + float(self.charges.sum())
        self._setup_activity(activity, proton_log_gamma, species, species_charges)
        n_states = 1
        for s in self.nsteps:
            n_states *= int(s) + 1
        self.n_states = n_states
        self.exact = n_states <= max_states
        self._mf_log_z: FloatArray | None = None
        self._last_populations: tuple[float, FloatArray] | None = None
        if self.exact:
            self._enumerate()
        else:
            warnings.warn(
                f"{where + ': ' if where else ''}{k} coupled sites give {n_states} microstates, "
                f"more than the {max_states} enumerated exactly: using the mean-field answer "
                "(each site feels the average charge of the others)",
                ZwitterWarning,
                stacklevel=3,
            )

    def _setup_activity(
        self,
        activity: float,
        proton_log_gamma: float,
        species: Sequence[int] | IntArray | None,
        species_charges: Sequence[float] | FloatArray | None,
    ) -> None:
        """Store the whole-species activity terms and their mean-field form."""
        #: a of log10 g(z) = -a z**2, and log10 g(H+) per proton lost (0, 0 at I = 0)
        self.activity = float(activity)
        self.proton_log_gamma = float(proton_log_gamma)
        #: site free energies the mean field uses: site_g plus each site's own activity terms
        self._mf_site_g: FloatArray = self.site_g
        #: (K, K) activity coupling of two sites of one species (-2a; zero across species)
        self._act_pairs: FloatArray | None = None
        #: (K, F) one-hot species membership and (F,) permanent charge of each species
        self._species = np.ones((self.k, 1))
        self._species_q = np.array([self.fixed_charge])
        if species is not None:
            idx = np.asarray(species, dtype=np.int64).reshape(self.k)
            n = int(idx.max()) + 1 if self.k else 0
            q = np.asarray(
                species_charges if species_charges is not None else np.zeros(n), dtype=np.float64
            ).reshape(-1)
            if q.size < n or (self.k and int(idx.min()) < 0):
                raise ValueError("species: indices 0..F-1 for each site, species_charges of size F")
            self._species = (idx[:, None] == np.arange(q.size)[None, :]).astype(np.float64)
            self._species_q = q
        if not (self.activity or self.proton_log_gamma) or not self.k:
            return
        a = self.activity
        j = np.arange(self.site_g.shape[1], dtype=np.float64)
        own_q = self._species @ self._species_q  # (K,) permanent charge of each site's species
        q = self.state_charges
        # -a (Q + sum q)**2 = -a Q**2 - a sum (q_i**2 + 2 Q q_i) - 2a sum_{i<k} q_i q_k
        self._mf_site_g = (
            self.site_g
            - a * (q * q + 2.0 * own_q[:, None] * q)
            + (self.proton_log_gamma * j[None, :])
        )
        same = self._species @ self._species.T
        np.fill_diagonal(same, 0.0)
        self._act_pairs = -2.0 * a * same

    def _activity_g(self, states: IntArray) -> FloatArray:
        """log10 g of every species of each microstate plus log10 g(H+) per proton lost: (M,)."""
        q = self.charges[None, :] - states  # (M, K)
        z = self._species_q[None, :] + q @ self._species  # (M, F) net charge of each species
        out = -self.activity * (z * z).sum(axis=1) + self.proton_log_gamma * states.sum(axis=1)
        return np.asarray(out, dtype=np.float64)

    @property
    def _log_z(self) -> FloatArray:
        """log10 Z by number of protons lost (mean field: computed on first use, it is costly)."""
        if self.exact:
            out: FloatArray = self._exact_log_z
            return out
        if self._mf_log_z is None:
            self._mf_log_z = self._mean_field_levels()
        return self._mf_log_z

    # -- exact ----------------------------------------------------------------------------------
    def _enumerate(self) -> None:
        k = self.k
        if k == 0 and self._act_pairs is None:
            # No site (half of a typical compound file): one form, one level, nothing to sum.
            self.states = np.zeros((1, 0), dtype=np.int64)
            self.g = np.zeros(1)
            self.lost = np.zeros(1, dtype=np.int64)
            self._exact_log_z = np.zeros(1)
            self._within = np.ones(1)
            self._site_lost = np.zeros((1, 0))
            return
        if k == 0:
            self.states = np.zeros((1, 0), dtype=np.int64)
            self.g = np.zeros(1)
        elif k == 1:
            self.states = np.arange(int(self.nsteps[0]) + 1, dtype=np.int64)[:, None]
            self.g = self.site_g[0, : int(self.nsteps[0]) + 1].copy()
        else:
            shape = tuple(int(s) + 1 for s in self.nsteps)
            self.states = np.indices(shape, dtype=np.int64).reshape(k, -1).T
            self.g = self.site_g[np.arange(k)[None, :], self.states].sum(axis=1)
            iu, ju = np.triu_indices(k, 1)
            w = self.pairs
            active = (w.anion[iu, ju] != 0) | (w.cation[iu, ju] != 0) | (w.opposite[iu, ju] != 0)
            iu, ju = iu[active], ju[active]
            if iu.size:
                q = self.charges[None, :] - self.states  # (M, K)
                self.g = self.g + _pair_energy(q[:, iu], q[:, ju], w, iu, ju).sum(axis=1)
        if self._act_pairs is not None:
            # whole-species activity coefficients (module docstring): zero cost at I = 0
            self.g = self.g + self._activity_g(self.states)
        self.lost = self.states.sum(axis=1)  # L(s)
        levels = self.total_steps + 1
        b = -self.g
        # One-hot level membership (levels x M): level sums and maxima without ufunc.at loops.
        member = self.lost[None, :] == np.arange(levels)[:, None]
        top = np.where(member, b[None, :], -np.inf).max(axis=1)
        rel = np.exp((b - top[self.lost]) * _LN10)
        weights = member * rel[None, :]
        z = weights.sum(axis=1)
        self._exact_log_z = top + np.log10(z)
        self._within = rel / z[self.lost]  # population of each microstate within its level
        # Mean protons lost by each site within each level: (levels, K).
        self._site_lost = (weights @ self.states) / z[:, None]

    # -- level populations ----------------------------------------------------------------------
    def level_populations(self, ph: npt.ArrayLike) -> FloatArray:
        """(..., T + 1) population of each number of protons lost at each pH."""
        h = np.asarray(ph, dtype=np.float64)[..., None]
        if self.total_steps == 0:  # nothing titrates: one level, whatever the pH
            return np.ones(h.shape)
        levels = np.arange(self.total_steps + 1, dtype=np.float64)
        logp = levels * h + self._log_z
        logp = logp - logp.max(axis=-1, keepdims=True)
        w = np.exp(logp * _LN10)
        out: FloatArray = w / w.sum(axis=-1, keepdims=True)
        return out

    def charge(self, ph: npt.ArrayLike) -> FloatArray:
        """Average net charge at each pH (same shape as ``ph``)."""
        if not self.exact:
            return np.asarray(self.max_charge - self._mf_site_lost(ph).sum(axis=-1))
        if self.total_steps == 0:
            return np.full(np.shape(ph), self.max_charge)
        pops = self.level_populations(ph)
        lost = pops @ np.arange(self.total_steps + 1, dtype=np.float64)
        return np.asarray(self.max_charge - lost)

    def site_lost(self, ph: npt.ArrayLike) -> FloatArray:
        """(..., K) mean protons lost by each site at each pH."""
        if not self.exact:
            return self._mf_site_lost(ph)
        return np.asarray(self.level_populations(ph) @ self._site_lost)

    def macroscopic_pkas(self) -> FloatArray:
        """Macroscopic pKa values, ascending (one per proton the molecule can lose)."""
        if self.total_steps == 0:
            return np.zeros(0)
        return np.sort(self._log_z[:-1] - self._log_z[1:])

    # -- microstates at one pH ------------------------------------------------------------------
    def populations(self, ph: float) -> FloatArray:
        """(M,) population of every microstate at ``ph`` (exact model only); they sum to 1."""
        if not self.exact:
            raise ValueError("microstate populations need the exact model")
        cached = self._last_populations
        if cached is not None and cached[0] == ph:
            return cached[1]  # dominant(), species() and site fractions ask for the same pH
        lev = self.level_populations(ph)
        out = np.asarray(lev[self.lost] * self._within)
        out.setflags(write=False)
        self._last_populations = (float(ph), out)
        return out

    def top(
        self, ph: float, n: int | None = None, min_population: float = 0.0
    ) -> tuple[IntArray, FloatArray]:
        """(states, populations) of the most populated microstates at ``ph``.

        ``states`` is (m, K): protons lost by each site. The mean-field model returns the single
        product state of the per-site most populated states.
        """
        if not self.exact:
            probs = self._mf_probs_grid(np.array([float(ph)]))[0]  # (K, S+1)
            best = probs.argmax(axis=1)
            pop = float(np.prod(probs[np.arange(self.k), best])) if self.k else 1.0
            return best[None, :].astype(np.int64), np.array([pop])
        pops = self.populations(ph)
        order = np.argsort(-pops, kind="stable")
        if min_population > 0:
            keep = pops[order] >= min_population
            keep[0] = True
            order = order[keep]
        if n is not None:
            order = order[:n]
        return self.states[order], pops[order]

    def dominant(self, ph: float) -> tuple[IntArray, float]:
        """(state, population) of the single most populated microstate."""
        states, pops = self.top(ph, 1)
        return states[0], float(pops[0])

    def state_charge(self, states: npt.ArrayLike) -> FloatArray:
        """Net charge of microstates given as (m, K) protons lost."""
        s = np.asarray(states, dtype=np.float64)
        return np.asarray(self.max_charge - s.sum(axis=-1))

    # -- mean field -----------------------------------------------------------------------------
    def _mf_probs_grid(self, ph: FloatArray) -> FloatArray:
        """(M, K, S+1) self-consistent state probabilities of each site at M pH values.

        Each site feels the mean charges of the others: the energy of site i in state j is
        sum_k w_ik(q_ij * <q_k>). Solved by damped fixed-point iteration.
        """
        width = self.site_g.shape[1]
        j = np.arange(width, dtype=np.float64)
        q_state = self.state_charges  # (K, S+1)
        valid = j[None, :] <= self.nsteps[:, None]
        base = j[None, None, :] * ph[:, None, None] - self._mf_site_g[None, :, :]
        base = np.where(valid[None], base, -np.inf)
        w = self.pairs
        same_pos = w.cation[None, :, None, :]
        same_neg = w.anion[None, :, None, :]
        opp = w.opposite[None, :, None, :]
        act = self._act_pairs

        def probs_for(qbar: FloatArray) -> FloatArray:
            qa = q_state[None, :, :, None]
            qq = qa * qbar[:, None, None, :]  # (M, K, S+1, K)
            e = np.where(qq > 0, qq * np.where(qa > 0, same_pos, same_neg), qq * opp)
            logw = base - e.sum(-1)
            if act is not None:  # whole-species activity: -2a q_i <q_k> within a species
                logw = logw - q_state[None, :, :] * (qbar @ act.T)[:, :, None]
            logw = logw - logw.max(axis=-1, keepdims=True)
            wt = np.exp(logw * _LN10)
            return np.asarray(wt / wt.sum(axis=-1, keepdims=True))

        qbar = np.zeros((ph.size, self.k))
        p = probs_for(qbar)
        for _ in range(500):
            new_q = (p * q_state[None]).sum(-1)
            if np.max(np.abs(new_q - qbar), initial=0.0) < 1e-10:
                break
            qbar = 0.5 * qbar + 0.5 * new_q  # damped: plain iteration can oscillate
            p = probs_for(qbar)
        return p

    def _mf_site_lost(self, ph: npt.ArrayLike) -> FloatArray:
        h = np.asarray(ph, dtype=np.float64)
        p = self._mf_probs_grid(np.atleast_1d(h).reshape(-1))
        lost = (p * np.arange(p.shape[-1], dtype=np.float64)).sum(-1)  # (M, K)
        return np.asarray(lost.reshape(h.shape + (self.k,)))

    def _mean_field_levels(self) -> FloatArray:
        """log10 Z by level for the mean-field model: independent steps at effective pKa values.

        The effective pKa of a step is the pH at which it equals its own value in the mean field
        of the other sites (a fixed point found on a grid from pH -2 to 16).
        """
        grid = np.linspace(-2.0, 16.0, 361)
        p = self._mf_probs_grid(grid)  # (M, K, S+1)
        qbar = (p * self.state_charges[None]).sum(-1)  # (M, K)
        w = self.pairs
        act_field = qbar @ self._act_pairs.T if self._act_pairs is not None else None  # (M, K)
        eff = []
        for i in range(self.k):
            others = np.array([kk for kk in range(self.k) if kk != i], dtype=np.int64)
            for step in range(1, int(self.nsteps[i]) + 1):
                pk = self._mf_site_g[i, step] - self._mf_site_g[i, step - 1]
                q_from, q_to = self.state_charges[i, step - 1], self.state_charges[i, step]
                shift = np.zeros(grid.size)
                if others.size:
                    qb = qbar[:, others]
                    ii = np.full(others.size, i)
                    e_to = _pair_energy(np.full_like(qb, q_to), qb, w, ii, others).sum(1)
                    e_from = _pair_energy(np.full_like(qb, q_from), qb, w, ii, others).sum(1)
                    shift = e_to - e_from
                if act_field is not None:
                    shift = shift + (q_to - q_from) * act_field[:, i]
                diff = pk + shift - grid
                idx = np.flatnonzero(np.diff(np.sign(diff)) != 0)
                if idx.size:
                    a = int(idx[0])
                    t = diff[a] / (diff[a] - diff[a + 1])
                    eff.append(float(grid[a] + t * (grid[a + 1] - grid[a])))
                else:
                    eff.append(float(pk + (shift[0] if diff[0] < 0 else shift[-1])))
        # Binding polynomial of independent single steps: Z_L gains Z_(L-1) * 10**(-pKa) per step.
        log_z = np.zeros(1)
        for pk in sorted(eff):
            out = np.full(log_z.size + 1, -np.inf)
            out[:-1] = log_z
            out[1:] = np.logaddexp(out[1:] * _LN10, (log_z - pk) * _LN10) / _LN10
            log_z = out
        return log_z
