"""Ion-exchange planning: which exchanger, at which pH, in which buffer; elution order; separations.

A molecule binds a **cation exchanger** (fixed negative groups: sulfopropyl, carboxymethyl) when it
carries enough positive net charge, i.e. below its pI, and an **anion exchanger** (fixed positive
groups: quaternary ammonium, diethylaminoethyl) above its pI. The defaults follow common practice
(ion-exchange chromatography handbooks, from memory):

* work at least ``margin`` = 1 pH unit from the pI, and
* require a net charge of at least ``threshold`` charges, by default one per 100 residues and at
  least 1 (larger proteins need more net charge to bind as firmly);
* stay inside the molecule's stability window, by default pH 4-9 (what most proteins tolerate);
* buffer with a substance whose pKa lies within 1 unit of the working pH (nearest first) and whose
  forms carry the **same sign as the exchanger's fixed groups**, so the buffer ions do not bind
  (anionic buffers such as MES, phosphate, acetate for cation exchangers; cationic ones such as
  Tris, bis-Tris, ethanolamine for anion exchangers).

With contaminants, the plan picks the pH inside the usable windows where the net charge of the
target differs most from that of the nearest contaminant (the largest minimum charge gap), and
lists the elution order in a rising salt gradient (weakest bound, i.e. least charge of the binding
sign, first). The charge curves behind the choice are in :attr:`Plan.curves`.

These are estimates from sequence or structure: charge patches, not the net charge, decide binding
of many proteins. Confirm with a pilot run.
"""

from __future__ import annotations

import math
import warnings
from collections.abc import Iterable, Sequence
from dataclasses import dataclass, field
from typing import TYPE_CHECKING, Any

import numpy as np
import numpy.typing as npt

from .conditions import Conditions, residue_count
from .errors import ParameterError, ZwitterWarning
from .molecule import Molecule

if TYPE_CHECKING:
    import pandas as pd

__all__ = ["Window", "Plan", "plan_ion_exchange", "elution_order", "separation_ph", "as_molecule"]

#: pH grid of the plan (common practice: the range ion-exchange media and proteins are used in).
GRID = np.round(np.arange(2.0, 12.0 + 1e-9, 0.01), 2)
#: Defaults when the user gives none (common practice): a pH window most proteins tolerate, and
#: working at least one pH unit from the pI.
DEFAULT_STABILITY = (4.0, 9.0)
DEFAULT_MARGIN = 1.0
EXCHANGERS = {"cation": "negative", "anion": "positive"}


@dataclass(frozen=True)
class Window:
    """A pH interval [lo, hi] (NaN bounds when empty)."""

    lo: float
    hi: float

    @property
    def empty(self) -> bool:
        return not (math.isfinite(self.lo) and math.isfinite(self.hi) and self.lo <= self.hi)

    @property
    def width(self) -> float:
        return 0.0 if self.empty else self.hi - self.lo

    def intersect(self, lo: float, hi: float) -> Window:
        if self.empty:
            return self
        a, b = max(self.lo, lo), min(self.hi, hi)
        return Window(a, b) if a <= b else Window(math.nan, math.nan)

    def __contains__(self, ph: object) -> bool:
        return (
            not self.empty
            and isinstance(ph, (int, float))
            and self.lo - 1e-9 <= ph <= self.hi + 1e-9
        )

    def __str__(self) -> str:
        return "none" if self.empty else f"pH {self.lo:.2f}-{self.hi:.2f}"


_EMPTY = Window(math.nan, math.nan)


def as_molecule(item: Molecule | str, conditions: Conditions | None, **options: Any) -> Molecule:
    """A :class:`Molecule` at ``conditions`` from a Molecule or any text input."""
    if isinstance(item, Molecule):
        if (
            conditions is None
            or item.conditions == conditions
            or (item.conditions is None and conditions.is_reference)
        ):
            return item
        return Molecule(
            item.reference_sites,
            name=item.name,
            kind=item.kind,
            scale=item.scale,
            notes=(),
            info=item.info,
            conditions=conditions,
        )
    if isinstance(item, str):
        from .inputs import molecule_from_text

        return molecule_from_text(item, conditions=conditions, **options)
    raise ParameterError(
        "target",
        "plan_ion_exchange",
        "a Molecule or a text (sequence, ProForma, SMILES)",
        f"<{type(item).__name__}>",
    )


def _quiet_pi(m: Molecule) -> tuple[float | None, str]:
    """pI without a warning: (value or None, reason)."""
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always", ZwitterWarning)
        value = m.isoelectric_point()
    reason = "; ".join(str(w.message) for w in caught if issubclass(w.category, ZwitterWarning))
    return value, reason


def _crossing(grid: npt.NDArray[np.float64], z: npt.NDArray[np.float64], level: float) -> float:
    """pH where a falling charge curve crosses ``level`` (linear interpolation; +-inf outside)."""
    above = z >= level
    if above.all():
        return math.inf
    if not above.any():
        return -math.inf
    i = int(np.flatnonzero(~above)[0])  # first grid point below the level
    if i == 0:
        return -math.inf
    x0, x1, y0, y1 = grid[i - 1], grid[i], z[i - 1], z[i]
    return float(x0 + (y0 - level) * (x1 - x0) / (y0 - y1))


def _binding_windows(
    grid: npt.NDArray[np.float64],
    z: npt.NDArray[np.float64],
    pi: float | None,
    threshold: float,
    margin: float,
) -> dict[str, Window]:
    lo_g, hi_g = float(grid[0]), float(grid[-1])
    # cation exchanger: Z >= threshold (below the pI) and pH <= pI - margin
    up = min(_crossing(grid, z, threshold), hi_g)
    if pi is not None:
        up = min(up, pi - margin)
    cation = Window(lo_g, up) if up >= lo_g else _EMPTY
    # anion exchanger: Z <= -threshold and pH >= pI + margin
    down = max(_crossing(grid, z, -threshold), lo_g)
    if pi is not None:
        down = max(down, pi + margin)
    anion = Window(down, hi_g) if down <= hi_g else _EMPTY
    return {"cation": cation, "anion": anion}


def _unique_names(mols: Sequence[Molecule]) -> list[str]:
    names: list[str] = []
    for i, m in enumerate(mols):
        base = m.name or f"molecule {i + 1}"
        name = base if base not in names else f"{base} #{i + 1}"
        names.append(name)
    return names


@dataclass(frozen=True)
class Plan:
    """An ion-exchange plan for a target (and its contaminants).

    Attributes
    ----------
    target, contaminants
        The molecules, at the plan's conditions.
    names
        Display names: target first.
    pi
        Isoelectric point of the target (None when its charge never crosses zero).
    threshold, margin, stability
        The binding criteria used (net charges, pH units, pH window).
    windows
        Binding windows per exchanger ("cation", "anion") from charge and margin alone.
    usable
        The binding windows intersected with the stability window.
    exchanger
        Recommended exchanger ("cation" or "anion"), or None when neither window is usable.
    working_ph
        Recommended pH: with contaminants, the best-separating pH inside the usable window;
        without, the edge of the usable window nearest the pI (binds, yet elutes at low salt).
    buffers
        Compatible buffers at the working pH (pKa within 1 unit; forms of the right sign).
    separation_ph, separation_gap
        pH of the largest minimum |charge difference| between target and contaminants inside
        the usable windows, and that gap (NaN without contaminants).
    curves
        Charge of every molecule over the pH grid, and the gap.
    notes
        Why the plan looks as it does (no pI, empty windows, ...).
    """

    target: Molecule
    contaminants: tuple[Molecule, ...]
    names: tuple[str, ...]
    conditions: Conditions
    pi: float | None
    threshold: float
    margin: float
    stability: tuple[float, float]
    windows: dict[str, Window]
    usable: dict[str, Window]
    exchanger: str | None
    working_ph: float
    buffers: pd.DataFrame
    separation_ph: float
    separation_gap: float
    curves: pd.DataFrame
    notes: tuple[str, ...] = field(default=())

    @property
    def ph_range(self) -> Window:
        """The recommended pH range: the usable window of the recommended exchanger."""
        return self.usable[self.exchanger] if self.exchanger else _EMPTY

    def charges(self, ph: float) -> dict[str, float]:
        """Net charge of every molecule at ``ph``, by display name."""
        mols = (self.target, *self.contaminants)
        return {n: float(m.charge(ph)) for n, m in zip(self.names, mols)}

    def elution_order(self, ph: float | None = None, exchanger: str | None = None) -> pd.DataFrame:
        """Predicted order off the column in a rising salt gradient at ``ph`` (see module doc)."""
        ph = self.working_ph if ph is None else ph
        ex = exchanger or self.exchanger or "cation"
        return elution_order(
            (self.target, *self.contaminants), ph, ex, names=self.names, threshold=self.threshold
        )

    def to_frame(self) -> pd.DataFrame:
        """One row per exchanger: binding window, usable window, recommendation, buffers."""
        import pandas as pd

        rows = []
        for ex, fixed in EXCHANGERS.items():
            w, u = self.windows[ex], self.usable[ex]
            chosen = ex == self.exchanger
            rows.append(
                {
                    "exchanger": ex,
                    "fixed_charge": fixed,
                    "binds_from_ph": w.lo if not w.empty else math.nan,
                    "binds_to_ph": w.hi if not w.empty else math.nan,
                    "usable_from_ph": u.lo if not u.empty else math.nan,
                    "usable_to_ph": u.hi if not u.empty else math.nan,
                    "recommended": chosen,
                    "working_ph": self.working_ph if chosen else math.nan,
                    "charge_at_working_ph": float(self.target.charge(self.working_ph))
                    if chosen
                    else math.nan,
                    "buffers": ", ".join(self.buffers["buffer"].head(5)) if chosen else "",
                }
            )
        return pd.DataFrame(rows)


def elution_order(
    molecules: Sequence[Molecule],
    ph: float,
    exchanger: str = "cation",
    *,
    names: Sequence[str] | None = None,
    threshold: float = 0.0,
) -> pd.DataFrame:
    """Order of elution from ``exchanger`` at ``ph`` in a rising salt gradient.

    Molecules whose charge has the binding sign (positive on a cation exchanger, negative on an
    anion exchanger) bind; they elute in order of increasing charge of that sign. The others flow
    through (order 0). ``weak`` flags bound molecules below ``threshold`` charges.
    """
    import pandas as pd

    if exchanger not in EXCHANGERS:
        raise ParameterError("exchanger", "elution_order", "'cation' or 'anion'", exchanger)
    labels = list(names) if names is not None else _unique_names(molecules)
    z = np.array([float(m.charge(ph)) for m in molecules])
    sign = 1.0 if exchanger == "cation" else -1.0
    strength = sign * z  # > 0 binds
    binds = strength > 0
    order = np.zeros(len(z), dtype=int)
    ranked = sorted(np.flatnonzero(binds).tolist(), key=lambda i: (strength[i], i))
    for rank, i in enumerate(ranked, start=1):
        order[i] = rank
    frame = pd.DataFrame(
        {
            "molecule": labels,
            "charge": z,
            "binds": binds,
            "weak": binds & (strength < threshold),
            "elution_order": order,
        }
    )
    frame = frame.sort_values(["elution_order", "charge"], kind="stable").reset_index(drop=True)
    frame.insert(0, "ph", float(ph))
    frame.insert(1, "exchanger", exchanger)
    return frame


def separation_ph(
    target: Molecule, others: Sequence[Molecule], ph: npt.ArrayLike | None = None
) -> tuple[float, float, npt.NDArray[np.float64]]:
    """(pH, gap, gap curve): the pH of the grid where min_i |Z_target - Z_i| is largest."""
    grid = GRID if ph is None else np.atleast_1d(np.asarray(ph, dtype=np.float64))
    if not others:
        raise ParameterError("others", "separation_ph", "at least one other molecule", others)
    zt = np.asarray(target.charge(grid), dtype=np.float64)
    gap = np.min(np.abs(np.vstack([np.asarray(o.charge(grid)) for o in others]) - zt), axis=0)
    i = int(np.argmax(gap))
    return float(grid[i]), float(gap[i]), gap


def _check_window(stability: Any) -> tuple[float, float]:
    allowed = "a pair (lo, hi) of pH values with 0 <= lo < hi <= 14"
    if isinstance(stability, str):
        raise ParameterError("stability", "plan_ion_exchange", allowed, stability)
    try:
        lo, hi = (float(x) for x in stability)
    except (TypeError, ValueError):
        raise ParameterError("stability", "plan_ion_exchange", allowed, stability) from None
    if not (math.isfinite(lo) and math.isfinite(hi) and 0 <= lo < hi <= 14):
        raise ParameterError("stability", "plan_ion_exchange", allowed, stability)
    return lo, hi


def plan_ion_exchange(
    target: Molecule | str,
    contaminants: Iterable[Molecule | str] | Molecule | str = (),
    conditions: Conditions | None = None,
    stability: tuple[float, float] | None = None,
    threshold: float | None = None,
    *,
    margin: float = DEFAULT_MARGIN,
    buffer_within: float = 1.0,
    **options: Any,
) -> Plan:
    """Plan an ion-exchange step for ``target`` (and against ``contaminants``).

    Parameters
    ----------
    target, contaminants
        :class:`Molecule` objects or text that :func:`zwitter.inputs.molecule_from_text` reads
        (sequence, ProForma, SMILES); ``options`` (``scale``, ``cys``, ...) go to the reader.
    conditions
        Temperature and ionic strength of the loading buffer (default 25 C, I = 0).
    stability
        pH window the target tolerates (default pH 4-9, common practice for proteins).
    threshold
        Net charge (magnitude) needed to bind; default one per 100 residues, at least 1.
    margin
        Minimum distance from the pI, pH units (default 1).
    buffer_within
        Largest |pKa - working pH| of a compatible buffer (default 1).

    Examples
    --------
    >>> plan = plan_ion_exchange("KKKKGGGGKKKK", scale="lehninger")
    >>> plan.exchanger
    'cation'
    """
    cond = conditions if conditions is not None else Conditions()
    lo_s, hi_s = _check_window(DEFAULT_STABILITY if stability is None else stability)
    if isinstance(margin, bool) or not isinstance(margin, (int, float)) or not 0 <= margin <= 7:
        raise ParameterError(
            "margin", "plan_ion_exchange", "a number of pH units in [0, 7]", margin
        )
    if isinstance(contaminants, (str, Molecule)):
        contaminants = (contaminants,)
    tmol = as_molecule(target, cond, **options)
    others = tuple(as_molecule(c, cond, **options) for c in contaminants)
    if threshold is None:
        n = residue_count(tmol)
        thr = max(1.0, (n or 0) / 100.0)
    else:
        if (
            isinstance(threshold, bool)
            or not isinstance(threshold, (int, float))
            or not (0 <= threshold < 1e4)
        ):
            raise ParameterError(
                "threshold", "plan_ion_exchange", "a number of charges >= 0", threshold
            )
        thr = float(threshold)

    notes: list[str] = []
    pi, reason = _quiet_pi(tmol)
    if pi is None:
        notes.append(f"target: {reason}")
    z = np.asarray(tmol.charge(GRID), dtype=np.float64)
    windows = _binding_windows(GRID, z, pi, thr, float(margin))
    usable = {ex: w.intersect(lo_s, hi_s) for ex, w in windows.items()}

    import pandas as pd

    names = _unique_names((tmol, *others))
    curves = pd.DataFrame({"ph": GRID, names[0]: z})
    sep_ph, sep_gap = math.nan, math.nan
    exchanger: str | None = None
    working = math.nan
    if others:
        _, _, gap = separation_ph(tmol, others, GRID)
        for name, m in zip(names[1:], others):
            curves[name] = np.asarray(m.charge(GRID))
        curves["gap"] = gap
        inside = np.zeros(GRID.size, dtype=bool)
        which = np.full(GRID.size, "", dtype=object)
        for ex, w in usable.items():
            if not w.empty:
                hit = (GRID >= w.lo - 1e-9) & (GRID <= w.hi + 1e-9)
                inside |= hit
                which[hit] = ex
        if inside.any():
            masked = np.where(inside, gap, -np.inf)
            i = int(np.argmax(masked))
            sep_ph, sep_gap = float(GRID[i]), float(gap[i])
            exchanger, working = str(which[i]), sep_ph
    if exchanger is None:
        candidates = [(ex, w) for ex, w in usable.items() if not w.empty]
        if candidates:
            ex, w = max(
                candidates,
                key=lambda c: (round(c[1].width, 6), -abs(0.5 * (c[1].lo + c[1].hi) - 7.0)),
            )
            exchanger = ex
            if pi is None:
                working = 0.5 * (w.lo + w.hi)
            else:
                working = w.hi if ex == "cation" else w.lo
    if exchanger is None:
        notes.append(
            "neither exchanger binds the target inside the stability window "
            f"(pH {lo_s:g}-{hi_s:g}) with a net charge of at least {thr:.3g} and {margin:g} pH "
            "unit(s) from the pI: widen the window, lower the threshold or try another mode"
        )
        buffers = pd.DataFrame(columns=["buffer", "step", "pka", "distance"])
    else:
        from .buffers import suitable_buffers

        buffers = suitable_buffers(
            working, cond, within=buffer_within, charge=EXCHANGERS[exchanger]
        )
        if buffers.empty:
            notes.append(f"no packaged buffer fits pH {working:.2f} on the {exchanger} exchanger")
    if others and math.isfinite(sep_gap) and sep_gap < 1.0:
        notes.append(
            f"the best charge gap is only {sep_gap:.2f} charges: ion exchange may not resolve "
            "the target from its nearest contaminant"
        )
    return Plan(
        target=tmol,
        contaminants=others,
        names=tuple(names),
        conditions=cond,
        pi=pi,
        threshold=thr,
        margin=float(margin),
        stability=(lo_s, hi_s),
        windows=windows,
        usable=usable,
        exchanger=exchanger,
        working_ph=working,
        buffers=buffers,
        separation_ph=sep_ph,
        separation_gap=sep_gap,
        curves=curves,
        notes=tuple(notes),
    )
