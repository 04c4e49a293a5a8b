"""Independent-site acid-base equilibria, vectorised over pH and over molecules.

Each site type titrates on its own (Henderson-Hasselbalch for one step; successive steps for a
polyprotic group). For a site with steps pKa_1 < ... < pKa_S the state that has lost j protons has
the weight (base-10 logarithm)

    log w_j = j * pH - (pKa_1 + ... + pKa_j),   w_0 = 1,

and the population of state j is w_j / sum(w). The net charge is the sum over site types of
count * (charge of the most protonated state - mean number of protons lost).

Arrays: ``pkas`` is (K, S) (or (N, K, S) with one set of pKa values per molecule), counts are (K,)
or (N, K). All functions accept both, so one call scores a whole chunk of a batch.
"""

from __future__ import annotations

import math
import warnings
from dataclasses import dataclass

import numpy as np
import numpy.typing as npt

from .errors import ParameterError, ZwitterWarning
from .sites import SiteSet

__all__ = [
    "PH_MIN",
    "PH_MAX",
    "check_ph",
    "state_fractions",
    "mean_protons_lost",
    "site_charges",
    "net_charge",
    "isoelectric_point",
    "log_binding_polynomial",
    "macroscopic_pkas",
    "charge_state_populations",
    "DominantForm",
    "dominant_form",
]

FloatArray = npt.NDArray[np.float64]

#: pH range accepted everywhere (common practice: the aqueous scale with a margin for strong
#: acids and bases).
PH_MIN = -2.0
PH_MAX = 16.0
_LN10 = math.log(10.0)


def check_ph(ph: npt.ArrayLike, where: str) -> FloatArray:
    """Validate pH values: finite numbers in [PH_MIN, PH_MAX]."""
    try:
        arr = np.asarray(ph, dtype=np.float64)
    except (TypeError, ValueError):
        raise ParameterError("ph", where, f"a number in [{PH_MIN:g}, {PH_MAX:g}]", ph) from None
    bad = ~np.isfinite(arr) | (arr < PH_MIN) | (arr > PH_MAX)
    if np.any(bad):
        first = arr.reshape(-1)[np.flatnonzero(bad.reshape(-1))[0]]
        raise ParameterError("ph", where, f"a number in [{PH_MIN:g}, {PH_MAX:g}]", float(first))
    return arr


def _padded(pkas: FloatArray) -> FloatArray:
    # Missing steps become +inf: their state weight 10**(j*pH - inf) is exactly zero.
    return np.where(np.isnan(pkas), np.inf, pkas)


def state_fractions(ph: npt.ArrayLike, pkas: FloatArray) -> FloatArray:
    """Population of each protonation state of each site type.

    Parameters
    ----------
    ph
        Scalar, or an array whose shape broadcasts against ``pkas.shape[:-1]`` (add trailing axes).
    pkas
        (..., K, S) step pKa values, NaN-padded.

    Returns
    -------
    (..., K, S + 1) array; index j along the last axis = j protons lost; rows sum to 1.

    Examples
    --------
    >>> f = state_fractions(4.0, np.array([[4.0]]))
    >>> [round(float(x), 3) for x in f[0]]
    [0.5, 0.5]
    """
    p = _padded(np.asarray(pkas, dtype=np.float64))
    h = np.asarray(ph, dtype=np.float64)[..., None]
    steps = np.arange(1, p.shape[-1] + 1, dtype=np.float64)
    logw = steps * h - np.cumsum(p, axis=-1)
    logw = np.concatenate([np.zeros(logw.shape[:-1] + (1,)), logw], axis=-1)
    logw -= logw.max(axis=-1, keepdims=True)
    w = np.exp(logw * _LN10)
    out: FloatArray = w / w.sum(axis=-1, keepdims=True)
    return out


def mean_protons_lost(ph: npt.ArrayLike, pkas: FloatArray) -> FloatArray:
    """Mean number of protons lost by each site type, shape (..., K)."""
    p = np.asarray(pkas, dtype=np.float64)
    if p.shape[-1] == 0:
        return np.zeros(np.broadcast_shapes(np.shape(ph), p.shape[:-1]))
    if p.shape[-1] == 1:
        # Henderson-Hasselbalch: fraction deprotonated = 1 / (1 + 10**(pKa - pH)).
        x = (p[..., 0] - np.asarray(ph, dtype=np.float64)) * _LN10
        with np.errstate(over="ignore"):
            lost = 1.0 / (1.0 + np.exp(np.where(np.isnan(x), np.inf, x)))
        return np.asarray(lost)
    f = state_fractions(ph, p)
    return np.asarray(f @ np.arange(p.shape[-1] + 1, dtype=np.float64))


def site_charges(ph: npt.ArrayLike, sites: SiteSet) -> FloatArray:
    """Mean charge of one group of each site type at each pH: shape (M, K) for M pH values
    (or (K,) for a scalar pH)."""
    h = np.asarray(ph, dtype=np.float64)
    lost = mean_protons_lost(h[..., None], sites.pkas)
    return np.asarray(sites.charges - lost)


def net_charge(ph: npt.ArrayLike, sites: SiteSet, *, where: str = "charge") -> FloatArray:
    """Net charge at each pH.

    Shapes: one molecule -> same shape as ``ph``; a batch (N, K) -> (N,) for a scalar pH or
    (N, M) for M pH values. With per-molecule pKa values (N, K, S) the result is (N, M).

    Examples
    --------
    >>> from zwitter.sites import Site
    >>> s = SiteSet.from_sites([Site("COOH", (4.0,), 0), Site("NH3+", (9.0,), 1)])
    >>> abs(round(float(net_charge(6.5, s)), 6))
    0.0
    """
    h = check_ph(ph, where)
    if sites.pkas.ndim == 3:  # per-molecule pKa values
        hh = np.atleast_1d(h)
        lost = mean_protons_lost(hh[None, :, None], sites.pkas[:, None, :, :])  # (N, M, K)
        q: FloatArray = np.einsum("nmk,nk->nm", sites.charges - lost, np.atleast_2d(sites.counts))
        return q[:, 0] if h.ndim == 0 else q
    q = site_charges(np.atleast_1d(h), sites)  # (M, K)
    z = sites.counts @ q.T  # (M,) or (N, M)
    if h.ndim == 0:
        return np.asarray(z[..., 0])
    return np.asarray(z)


def _charge_rows(ph_rows: FloatArray, sites: SiteSet) -> FloatArray:
    """Net charge of molecule n at its own pH ph_rows[n] (batch) -> (N,)."""
    counts = np.atleast_2d(sites.counts)
    if sites.pkas.ndim == 3:
        lost = mean_protons_lost(ph_rows[:, None], sites.pkas)
    else:
        lost = mean_protons_lost(ph_rows[:, None], sites.pkas[None, :, :])
    return np.asarray(np.sum(counts * (sites.charges - lost), axis=-1))


class _Titration:
    """Sparse view of a (batch) SiteSet for root finding: only the non-zero titratable entries.

    A chunk's count matrix is mostly zeros (terminus-specific columns, absent residues), so the
    charge and its slope are sums over the non-zero (row, site) pairs, gathered by ``bincount``.
    """

    def __init__(self, sites: SiteSet) -> None:
        counts = np.atleast_2d(sites.counts)
        self.n = counts.shape[0]
        # charge with every group protonated (and permanent), a column at a time: a matrix
        # product may round a row differently depending on its place in the matrix
        self.top = np.zeros(self.n)
        for k in np.flatnonzero(sites.charges).tolist():
            self.top += counts[:, k] * sites.charges[k]
        pkas = sites.pkas
        if pkas.shape[-1] == 0:  # only permanent charges
            pkas = np.full(pkas.shape[:-1] + (1,), np.nan)
        # The non-zero counts of the one-step and of the several-step site types, each in row
        # order (the order bincount sums them in: a row's sums do not depend on other rows).
        self.r1, self.w1, pk1 = self._entries(counts, pkas, sites.nsteps == 1)
        self.rm, self.wm, pkm = self._entries(counts, pkas, sites.nsteps > 1)
        self.p1 = pk1[:, 0]
        self.pm = pkm[:, : int(sites.nsteps.max(initial=1))]

    @staticmethod
    def _entries(
        counts: FloatArray, pkas: FloatArray, kinds: npt.NDArray[np.bool_]
    ) -> tuple[npt.NDArray[np.intp], FloatArray, FloatArray]:
        """(rows, counts, pKa steps) of the non-zero counts in the columns marked by ``kinds``."""
        columns = np.flatnonzero(kinds)
        block = counts[:, columns]
        rows, k = np.nonzero(block)
        cols = columns[k]
        pk = pkas[cols] if pkas.ndim == 2 else pkas[rows, cols]
        return rows, block[rows, k], pk

    def restrict(self, rows: npt.NDArray[np.bool_]) -> _Titration:
        """The same rows (indices unchanged) with only the entries of the rows marked True: the
        root search stops evaluating rows that have converged."""
        sub = object.__new__(_Titration)
        sub.n, sub.top = self.n, self.top
        keep1, keepm = rows[self.r1], rows[self.rm]
        sub.r1, sub.w1, sub.p1 = self.r1[keep1], self.w1[keep1], self.p1[keep1]
        sub.rm, sub.wm, sub.pm = self.rm[keepm], self.wm[keepm], self.pm[keepm]
        return sub

    def charge_slope(self, ph: FloatArray) -> tuple[FloatArray, FloatArray]:
        """Net charge and d(charge)/d(pH) of every row at its own pH."""
        # single-step groups: fraction lost f = 1 / (1 + 10**(pKa - pH)); df/dpH = ln10 f (1 - f)
        x = (self.p1 - ph[self.r1]) * _LN10
        with np.errstate(over="ignore"):
            f = 1.0 / (1.0 + np.exp(x))
        # (bincount of an empty index returns integers: start from float zeros)
        lost = np.zeros(self.n) + np.bincount(self.r1, self.w1 * f, self.n)
        var = np.zeros(self.n) + np.bincount(self.r1, self.w1 * f * (1.0 - f), self.n)
        if self.rm.size:
            fr = state_fractions(ph[self.rm], self.pm)  # (nnz, S + 1)
            # mean and mean square of the protons lost, a state at a time (row by row, as above)
            mean = np.zeros(fr.shape[0])
            square = np.zeros(fr.shape[0])
            for j in range(1, fr.shape[-1]):
                mean += j * fr[:, j]
                square += j * j * fr[:, j]
            lost += np.bincount(self.rm, self.wm * mean, self.n)
            var += np.bincount(self.rm, self.wm * (square - mean * mean), self.n)
        return self.top - lost, -_LN10 * var


@dataclass(frozen=True)
class PIResult:
    """Isoelectric points of one or many molecules; NaN with a reason where there is none."""

    values: FloatArray
    reasons: tuple[str, ...]


def isoelectric_point(
    sites: SiteSet, *, lo: float = PH_MIN, hi: float = PH_MAX, tol: float = 1e-9
) -> PIResult:
    """pH where the net charge crosses zero: vectorised Newton steps kept inside a bracket.

    The net charge of independent sites falls strictly with pH, so [lo, hi] holds at most one
    root. Each iteration evaluates charge and slope for every row at once; a Newton step that
    would leave the row's current bracket is replaced by bisection, so every row converges
    (quadratically near the root). Rows whose charge keeps one sign over [lo, hi] get NaN and a
    reason. ``tol`` is the pH change at which a row counts as converged.

    With pKa values shared by all rows (sequences), each row's search starts in the interval of
    a pH grid where its charge changes sign (:func:`_grid_bracket`): about four Newton steps
    instead of a dozen. Every number that steers a row's search is computed from that row
    alone, so a row's pI is the same, to the last bit, whatever the other rows of its chunk.
    """
    tit = _Titration(sites)
    n = tit.n
    counts = np.atleast_2d(sites.counts)
    titratable = (counts * (sites.nsteps > 0)).sum(axis=-1) > 0
    if sites.pkas.ndim == 2:
        a, b, x, z_lo, z_hi = _grid_bracket(tit, sites, counts, titratable, lo, hi)
    else:
        a, b = np.full(n, float(lo)), np.full(n, float(hi))
        x = 0.5 * (a + b)
        z_lo, _ = tit.charge_slope(a)
        z_hi, _ = tit.charge_slope(b)
    ok = (z_lo > 0) & (z_hi < 0) & titratable
    reasons = [""] * n
    for i in np.flatnonzero(~ok).tolist():
        if not titratable[i]:
            reasons[i] = "no titratable group: the charge does not change with pH"
        elif z_lo[i] <= 0:
            reasons[i] = (
                f"the net charge stays at or below zero from pH {lo:g} to {hi:g} "
                f"({z_lo[i]:+.3g} at pH {lo:g}): no isoelectric point"
            )
        else:
            reasons[i] = (
                f"the net charge stays at or above zero from pH {lo:g} to {hi:g} "
                f"({z_hi[i]:+.3g} at pH {hi:g}): no isoelectric point"
            )
    done = ~ok
    if done.any():
        tit = tit.restrict(ok)
    dx = b - a  # the last step taken
    dx_old = dx.copy()  # the step before it
    for _iteration in range(200):  # bisection alone needs ~35 steps for 1e-9 over 18 pH units
        if done.all():
            break
        z, dz = tit.charge_slope(x)
        positive = z > 0
        a = np.where(positive, x, a)
        b = np.where(positive, b, x)
        with np.errstate(divide="ignore", invalid="ignore"):
            correction = z / dz
        step = x - correction
        # Safeguarded Newton (as in the classic "rtsafe"): take the Newton step only when it stays
        # inside the bracket and is less than half the step before last; otherwise bisect. Newton
        # alone can cycle across the inflection of a sigmoid charge curve.
        newton = (step > a) & (step < b) & (np.abs(2.0 * correction) < np.abs(dx_old))
        new = np.where(newton, step, 0.5 * (a + b))
        dx_old = dx
        dx = np.abs(new - x)
        # converged: the Newton correction is below tol (x is then the root to ~tol**2), or the
        # bracket is narrower than tol
        done = done | (np.abs(correction) < tol) | (b - a < tol)
        x = np.where(done, x, new)
        if 0.1 < done.mean() < 1.0:  # evaluate only the rows still moving (same values, less work)
            tit = tit.restrict(~done)
    values = np.where(ok, x, np.nan)
    return PIResult(values, tuple(reasons))


#: Spacing of the pH grid on which the root search starts (isoelectric_point, shared pKa values).
#: A tuning choice, not a published value: 0.25, 0.5 and 1.0 took 14.7, 13.8 and 14.1 ms for a
#: 10,000-sequence chunk (2026-12-02), the same within noise; the roots do not depend on it.
_GRID_STEP = 0.5


def _grid_bracket(
    tit: _Titration, sites: SiteSet, counts: FloatArray, titratable: npt.NDArray[np.bool_],
    lo: float, hi: float,
) -> tuple[FloatArray, FloatArray, FloatArray, FloatArray, FloatArray]:  # fmt: skip
    """Per row: a bracket [a, b] one grid step wide, a start x, and the charges at lo and hi.

    The charge of every row on a pH grid is one (N, K) x (K, G) matrix product, which proposes
    the grid interval where each row's charge changes sign. The product's rounding can depend on
    a row's place in the matrix, so it only proposes: the charges at the two ends of the interval
    are then evaluated row by row, the interval moved while they do not bracket the root (this
    only happens when the root lies within rounding of a grid point), and the search starts at
    the linear interpolation between them. A row without a root ends in the first or the last
    interval, whose outer end is lo or hi: its charge there says why.
    """
    n = tit.n
    grid = np.linspace(lo, hi, max(2, math.ceil((hi - lo) / _GRID_STEP) + 1))
    last = grid.size - 2  # the last interval
    z_grid = counts @ site_charges(grid, sites).T  # (N, G), falling along each row
    j = np.clip(np.count_nonzero(z_grid > 0, axis=1) - 1, 0, last)
    moving = titratable.copy()
    sub = tit if moving.all() else tit.restrict(moving)
    z_a, z_b = np.zeros(n), np.zeros(n)
    for _ in range(grid.size):
        za, _ = sub.charge_slope(grid[j])
        zb, _ = sub.charge_slope(grid[j + 1])
        z_a = np.where(moving, za, z_a)
        z_b = np.where(moving, zb, z_b)
        down = moving & (z_a <= 0) & (j > 0)
        up = moving & (z_b > 0) & (j < last)
        if not (down.any() or up.any()):
            break
        j = j - down + up
        moving = down | up
        sub = tit.restrict(moving)
    a, b = grid[j], grid[j + 1]
    with np.errstate(divide="ignore", invalid="ignore"):
        t = np.clip(np.nan_to_num(z_a / (z_a - z_b), nan=0.5), 0.0, 1.0)
    x = a + (b - a) * t
    # The charges at lo and hi: known where the interval reaches them; elsewhere only their sign
    # matters, and the charge falls with pH: above zero before an interval whose start has a
    # positive charge (it would have moved down otherwise), below zero after one whose end is
    # at or below zero.
    z_lo = np.where(j == 0, z_a, np.inf)
    z_hi = np.where(j == last, z_b, -np.inf)
    flat = ~titratable
    if flat.any():  # a constant charge: the same at every pH
        z0, _ = tit.restrict(flat).charge_slope(np.full(n, lo))
        z_lo = np.where(flat, z0, z_lo)
        z_hi = np.where(flat, z0, z_hi)
    return a, b, x, z_lo, z_hi


def pi_or_none(sites: SiteSet) -> float | None:
    """Isoelectric point of one molecule, or None with a :class:`ZwitterWarning` saying why."""
    res = isoelectric_point(sites)
    if math.isnan(res.values[0]):
        warnings.warn(res.reasons[0], ZwitterWarning, stacklevel=3)
        return None
    return float(res.values[0])


def _logaddexp10(a: FloatArray, b: FloatArray) -> FloatArray:
    return np.asarray(np.logaddexp(a * _LN10, b * _LN10) / _LN10)


def log_binding_polynomial(sites: SiteSet) -> FloatArray:
    """log10 of the coefficients beta_i of the binding polynomial sum_i beta_i [H+]^i.

    i counts protons bound relative to the fully deprotonated molecule; beta_0 = 1. Each group
    contributes the polynomial 1 + x 10^pKa_S + x^2 10^(pKa_S + pKa_(S-1)) + ...; whole counts are
    multiplied in. Fractional counts are rounded to the nearest whole number (with a warning),
    since a polynomial needs whole groups. Permanent charges do not enter.
    """
    if sites.is_batch:
        raise ValueError("log_binding_polynomial needs one molecule")
    coeffs = np.zeros(1)
    rounded = False
    for k in range(sites.n_types):
        s = int(sites.nsteps[k])
        if s == 0:
            continue
        count = float(sites.counts[k])
        whole = int(round(count))
        if abs(whole - count) > 1e-9:
            rounded = True
        if whole == 0:
            continue
        steps = sites.pkas[k, :s][::-1]  # highest pKa binds first
        factor = np.concatenate([[0.0], np.cumsum(steps)])
        for _ in range(whole):
            out = np.full(coeffs.size + s, -np.inf)
            for m in range(s + 1):
                out[m : m + coeffs.size] = _logaddexp10(
                    out[m : m + coeffs.size], coeffs + factor[m]
                )
            coeffs = out
    if rounded:
        warnings.warn(
            "fractional site counts (ambiguous residues such as B or Z) were rounded to whole "
            "groups for the binding polynomial (macroscopic pKa values and charge states)",
            ZwitterWarning,
            stacklevel=3,
        )
    return coeffs


def macroscopic_pkas(sites: SiteSet) -> FloatArray:
    """Macroscopic (stepwise) pKa values of the whole molecule, ascending.

    pKa_i = log10(beta_i / beta_(i-1)) from the binding polynomial; for one group per site type
    these are the site pKa values corrected by the statistical factors of identical groups.

    Examples
    --------
    >>> from zwitter.sites import Site
    >>> s = SiteSet.from_sites([Site("COOH", (2.34,), 0), Site("NH3+", (9.6,), 1)])
    >>> [round(float(x), 2) for x in macroscopic_pkas(s)]
    [2.34, 9.6]
    """
    logb = log_binding_polynomial(sites)
    return np.sort(np.diff(logb))


def charge_state_populations(ph: float, sites: SiteSet) -> tuple[FloatArray, FloatArray]:
    """(charges, populations) of the macroscopic charge states at one pH, from the polynomial."""
    logb = log_binding_polynomial(sites)
    i = np.arange(logb.size, dtype=np.float64)
    logp = logb - i * ph
    logp -= logp.max()
    p = np.exp(logp * _LN10)
    p /= p.sum()
    # Charge of the fully deprotonated molecule: permanent charges as counted, titratable groups
    # with the same whole counts the polynomial used; each bound proton adds +1.
    titratable = sites.nsteps > 0
    whole = np.where(titratable, np.round(sites.counts), sites.counts)
    base = float(whole @ (sites.charges - sites.nsteps))
    return base + i, p


@dataclass(frozen=True)
class DominantForm:
    """The most populated protonation form of one molecule at one pH.

    Attributes
    ----------
    ph
        The pH.
    charge
        Net charge of the most populated charge state (a whole number).
    population
        Fraction of molecules in that charge state.
    microstate_population
        Population of the single most populated microstate (every group in its own most
        populated state); for large proteins this is small even when each group is sure.
    sites
        Per site type: (label, protons lost in the dominant state, charge of one group in that
        state, fraction of the groups in that state).
    mean_charge
        Average net charge at this pH (for comparison with ``charge``).
    """

    ph: float
    charge: float
    population: float
    microstate_population: float
    sites: tuple[tuple[str, int, float, float], ...]
    mean_charge: float


def dominant_form(ph: float, sites: SiteSet) -> DominantForm:
    """Most populated charge state and per-site dominant states at ``ph`` (one molecule)."""
    check_ph(ph, "dominant")
    charges, pops = charge_state_populations(ph, sites)
    top = int(np.argmax(pops))
    fr = state_fractions(ph, sites.pkas) if sites.pkas.shape[-1] else np.ones((sites.n_types, 1))
    per = []
    log_micro = 0.0
    for k in range(sites.n_types):
        s = int(sites.nsteps[k])
        j = int(np.argmax(fr[k, : s + 1]))
        pop = float(fr[k, j])
        per.append((sites.labels[k], j, float(sites.charges[k] - j), pop))
        if pop > 0:
            log_micro += float(sites.counts[k]) * math.log(pop)
        else:  # pragma: no cover - populations are never exactly zero for finite pKa
            log_micro = -math.inf
    return DominantForm(
        ph=float(ph),
        charge=float(charges[top]),
        population=float(pops[top]),
        microstate_population=math.exp(log_micro),
        sites=tuple(per),
        mean_charge=float(net_charge(ph, sites, where="dominant")),
    )
