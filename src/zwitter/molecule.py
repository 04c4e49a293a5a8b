"""The molecule object of the public API: sites plus the questions people ask about them.

:class:`Molecule` wraps a one-molecule :class:`~zwitter.sites.SiteSet` and answers with the
independent-site solver of :mod:`zwitter.equilibrium`. Readers (sequence, ProForma, SMILES)
construct it; nothing here knows about file formats.
"""

from __future__ import annotations

import math
import warnings
from collections.abc import Sequence
from typing import TYPE_CHECKING, Any

import numpy as np
import numpy.typing as npt

from . import equilibrium as eq
from .errors import ZwitterWarning
from .sites import SiteSet

if TYPE_CHECKING:  # pandas is imported only by the methods that return tables
    import pandas as pd

__all__ = ["Molecule"]

# (member, site label, group, steps, charge of the top state, dominant state, its population,
#  mean charge, count) of one group, for residue_states
_GroupState = tuple[str, str, str, int, float, int, float, float, float]


class Molecule:
    """Titratable sites of one molecule and what they do at any pH.

    Parameters
    ----------
    sites
        The molecule's site types (one-molecule SiteSet).
    name
        A label for reports (record id, sequence, SMILES).
    kind
        ``"sequence"``, ``"proforma"``, ``"smiles"``, ...
    scale
        Key or title of the pKa scale used (for reports).
    notes
        Cautions from reading the input (shown with results, re-emitted as warnings once).
    info
        Extra facts readers want shown (e.g. which cysteines were treated as bonded).
    conditions
        A :class:`zwitter.Conditions` (temperature, ionic strength); its ``apply(sites)`` gives
        the sites with their pKa values at those conditions. None keeps the reference values.
    """

    def __init__(
        self,
        sites: SiteSet,
        *,
        name: str = "",
        kind: str = "",
        scale: str = "",
        notes: Sequence[str] = (),
        info: dict[str, Any] | None = None,
        conditions: Any = None,
    ) -> None:
        if sites.is_batch:
            raise ValueError("a Molecule holds one molecule; use zwitter.batch for many")
        #: sites as read, at the reference conditions of their pKa sources (25 C, I -> 0)
        self.reference_sites = sites
        self.conditions = conditions
        if conditions is not None:
            sites = self._apply_conditions(sites, conditions)
        self.sites = sites
        self.name = name
        self.kind = kind
        self.scale = scale
        self.notes = tuple(notes)
        self.info = dict(info or {})
        #: smeared-charge model when conditions.electrostatics is set (see zwitter.conditions)
        self._sphere = (
            conditions.sphere_model(self) if getattr(conditions, "electrostatics", False) else None
        )
        for note in self.notes:
            warnings.warn(f"{name}: {note}" if name else note, ZwitterWarning, stacklevel=3)

    def __repr__(self) -> str:
        label = self.name if len(self.name) <= 40 else self.name[:37] + "..."
        return f"<Molecule {label!r}: {self.sites.n_types} site types, scale {self.scale!r}>"

    def condition_corrections(self) -> pd.DataFrame | None:
        """The corrections the conditions make to each site step (reference pKa, shifts, the
        pKa used, sources), or None without conditions that can say."""
        cond = self.conditions
        if cond is None or not hasattr(cond, "corrections"):
            return None
        frame: pd.DataFrame = cond.corrections(self.reference_sites)
        return frame

    def _apply_conditions(self, sites: SiteSet, conditions: Any) -> SiteSet:
        """The sites with pKa values at ``conditions``: here every correction per site.

        A hook for readers whose solver takes part of the correction itself (structures: the
        ionic strength acts on whole forms, see :class:`zwitter.structure.StructureMolecule`).
        """
        out: SiteSet = conditions.apply(sites)
        return out

    # -- numbers --------------------------------------------------------------------------------
    def charge(self, ph: npt.ArrayLike) -> Any:
        """Average net charge at ``ph`` (a float, or an array for an array of pH values).

        >>> import zwitter
        >>> m = zwitter.from_sequence("DK", scale="lehninger")
        >>> abs(round(m.charge(7.0), 2))
        0.0
        """
        if self._sphere is not None:
            z, _ = self._sphere.solve(eq.check_ph(ph, "charge"), self.sites)
            return z
        z = eq.net_charge(ph, self.sites, where="charge")
        return float(z) if np.ndim(z) == 0 else z

    def _site_ph(self, ph: Any, where: str) -> Any:
        """The pH the groups see: ``ph`` itself, or with the smeared-charge term pH + 0.868 w Z
        (always between ``ph`` and the pI, so inside the accepted pH range)."""
        if self._sphere is None:
            return ph
        _, eff = self._sphere.solve(eq.check_ph(ph, where), self.sites)
        return eff

    def isoelectric_point(self) -> float | None:
        """pH of zero net charge to 1e-4 or better; None (with a warning saying why) if none."""
        # The smeared-charge term vanishes at zero net charge: it leaves the pI where it is.
        return eq.pi_or_none(self.sites)

    def pkas(self) -> list[float]:
        """Macroscopic pKa values of the molecule, ascending."""
        return [float(x) for x in eq.macroscopic_pkas(self.sites)]

    def dominant(self, ph: float) -> eq.DominantForm:
        """The most populated protonation form at ``ph``: charge, population, per-site states."""
        if self._sphere is not None:
            import dataclasses

            z, eff = self._sphere.solve(eq.check_ph(ph, "dominant"), self.sites)
            dom = eq.dominant_form(float(np.clip(eff, eq.PH_MIN, eq.PH_MAX)), self.sites)
            return dataclasses.replace(dom, ph=float(ph), mean_charge=float(z))
        return eq.dominant_form(ph, self.sites)

    # -- tables ---------------------------------------------------------------------------------
    def site_table(self, ph: float = 7.0) -> pd.DataFrame:
        """One row per site type: count, pKa step(s), protonation and charge at ``ph``."""
        import pandas as pd

        eq.check_ph(ph, "site_table")
        s = self.sites
        at = self._site_ph(ph, "site_table")
        lost = eq.mean_protons_lost(at, s.pkas) if s.pkas.shape[-1] else np.zeros(s.n_types)
        rows = []
        for k in range(s.n_types):
            n = int(s.nsteps[k])
            bound = n - float(lost[k]) if n else 0.0
            per_group = float(s.charges[k] - (lost[k] if n else 0.0))
            rows.append(
                {
                    "site": s.labels[k],
                    "count": float(s.counts[k]),
                    "pka": "; ".join(f"{p:.2f}" for p in s.pkas[k, :n]) if n else "permanent",
                    "charge_protonated": int(s.charges[k]),
                    "fraction_protonated": bound / n if n else math.nan,
                    "charge_per_group": per_group,
                    "charge": per_group * float(s.counts[k]),
                    "members": " ".join(s.members[k]),
                    "source": s.sources[k],
                }
            )
        return pd.DataFrame(rows)

    def species(self, ph: float, *, top: int | None = None) -> pd.DataFrame:
        """Charge states (macrostates) and their populations at ``ph``, most populated first."""
        import pandas as pd

        eq.check_ph(ph, "species")
        charges, pops = eq.charge_state_populations(self._site_ph(ph, "species"), self.sites)
        bound = np.arange(charges.size)
        order = np.argsort(-pops, kind="stable")
        if top is not None:
            order = order[:top]
        return pd.DataFrame(
            {
                "charge": charges[order],
                "protons_bound": bound[order],
                "population": pops[order],
            }
        ).reset_index(drop=True)

    def curve(self, ph: npt.ArrayLike | None = None) -> pd.DataFrame:
        """Charge and per-site fraction protonated over a pH grid (default 0-14 in 0.05 steps)."""
        import pandas as pd

        grid = np.linspace(0.0, 14.0, 281) if ph is None else np.atleast_1d(np.asarray(ph, float))
        grid = eq.check_ph(grid, "curve")
        s = self.sites
        data: dict[str, Any] = {"ph": grid, "charge": self.charge(grid)}
        if s.pkas.shape[-1]:
            lost = eq.mean_protons_lost(self._site_ph(grid, "curve")[:, None], s.pkas)  # (M, K)
            for k in range(s.n_types):
                n = int(s.nsteps[k])
                if n:
                    data[f"fraction_protonated:{s.labels[k]}"] = (n - lost[:, k]) / n
        return pd.DataFrame(data)

    # -- readable dominant form -----------------------------------------------------------------
    def residue_states(self, ph: float) -> pd.DataFrame:
        """One row per individual group: its dominant protonation state at ``ph``.

        Columns: ``member`` (e.g. ``K12``, ``pS4``, ``N-term A1``), ``site`` (site type label),
        ``group``, ``state`` (``protonated``, ``deprotonated``, ``1 of 2 H+ lost``, ``permanent``,
        ``disulfide``), ``charge`` (of one group in that state), ``population`` (fraction of
        molecules with the group in that state), ``mean_charge`` (average charge of the group) and
        ``count`` (1; a site type with more groups than names, such as half an Asp from a B
        residue, adds one unnamed row with the rest). Cysteines a reader took as disulfide-bonded
        (``info["bonded_cysteines"]``) are listed with state ``disulfide`` and no charge.

        >>> import zwitter
        >>> m = zwitter.from_sequence("DK", scale="lehninger")
        >>> m.residue_states(7.0)[["member", "state", "charge"]].values.tolist()
        [['N-term D1', 'protonated', 1.0], ['C-term K2', 'deprotonated', -1.0], \
['D1', 'deprotonated', -1.0], ['K2', 'protonated', 1.0]]
        """
        import pandas as pd

        eq.check_ph(ph, "residue_states")
        rows = [
            {
                "member": name, "site": label, "group": group, "state": _state_name(n, j),
                "charge": q0 - j, "population": p, "mean_charge": mean, "count": count,
            }
            for name, label, group, n, q0, j, p, mean, count in self._group_states(ph)
        ]  # fmt: skip
        for name in self.info.get("bonded_cysteines", ()):
            rows.append(
                {"member": name, "site": "Cys (disulfide)", "group": "C", "state": "disulfide",
                 "charge": 0.0, "population": 1.0, "mean_charge": 0.0, "count": 1.0}
            )  # fmt: skip
        columns = [
            "member",
            "site",
            "group",
            "state",
            "charge",
            "population",
            "mean_charge",
            "count",
        ]
        return pd.DataFrame(rows, columns=columns)

    def _group_states(self, ph: float) -> list[_GroupState]:
        s = self.sites
        at = self._site_ph(ph, "residue_states")
        fr = eq.state_fractions(at, s.pkas) if s.pkas.shape[-1] else np.ones((s.n_types, 1))
        out: list[_GroupState] = []
        for k in range(s.n_types):
            n = int(s.nsteps[k])
            f = fr[k, : n + 1]
            j = int(np.argmax(f))
            q0 = float(s.charges[k])
            mean = q0 - float(f @ np.arange(n + 1)) if n else q0
            names = list(s.members[k])
            count = float(s.counts[k])
            rest = count - len(names)
            if rest < -1e-9:  # more names than groups (a reader's choice): share the count
                per = count / len(names)
                out.extend(
                    (m, s.labels[k], s.groups[k], n, q0, j, float(f[j]), mean, per) for m in names
                )
                continue
            out.extend(
                (m, s.labels[k], s.groups[k], n, q0, j, float(f[j]), mean, 1.0) for m in names
            )
            if rest > 1e-9:
                out.append(("", s.labels[k], s.groups[k], n, q0, j, float(f[j]), mean, rest))
        return out

    def microstates(self, ph: float, top: int = 10) -> pd.DataFrame:
        """The ``top`` most populated microstates at ``ph``, exactly, most populated first.

        A microstate gives every individual group one protonation state. With independent sites
        its population is the product of the groups' state populations, so the most populated
        ones are found by a best-first search over deviations from the most populated state of
        each group (groups ordered by the cost of their first deviation; each popped state has at
        most three successors, and every microstate has exactly one parent), which costs
        O(top x log top) steps plus a sort of the groups, whatever the number of groups: no
        enumeration of all 2^n states. Meant for peptides up to about 30 residues; for proteins
        even the most populated microstate holds a tiny fraction of the molecules.

        Columns: ``rank``, ``population``, ``log10_population``, ``charge``, ``charged`` (every
        charged group with its charge, e.g. ``N-term G1 +1, D3 -1``) and ``differs`` (groups
        whose state differs from rank 1, e.g. ``H5 +1 -> 0``). Site types whose count is not a
        whole number of groups are rounded (with a warning) as for macroscopic pKa values.

        >>> import zwitter
        >>> m = zwitter.from_sequence("GH", scale="lehninger")
        >>> m.microstates(6.0, top=2)[["rank", "charge", "differs"]].values.tolist()
        [[1, 1.0, ''], [2, 0.0, 'H2 +1 -> 0']]
        """
        import heapq

        import pandas as pd

        eq.check_ph(ph, "microstates")
        if int(top) != top or top < 1:
            from .errors import ParameterError

            raise ParameterError("top", "microstates", "a whole number >= 1", top)
        s = self.sites
        at = self._site_ph(ph, "microstates")
        fr = eq.state_fractions(at, s.pkas) if s.pkas.shape[-1] else np.ones((s.n_types, 1))
        groups: list[tuple[str, float, np.ndarray]] = []  # (name, charge of top state, fractions)
        rounded = False
        for k in range(s.n_types):
            n = int(s.nsteps[k])
            count = float(s.counts[k])
            whole = int(round(count))
            rounded |= abs(whole - count) > 1e-9
            names = list(s.members[k])[:whole]
            names += [f"{s.labels[k]} #{i + 1}" for i in range(len(names), whole)]
            groups.extend((m, float(s.charges[k]), fr[k, : n + 1]) for m in names)
        if rounded:
            warnings.warn(
                "fractional site counts (ambiguous residues such as B or Z) were rounded to whole "
                "groups for the microstate list",
                ZwitterWarning,
                stacklevel=2,
            )
        # per group: states by falling population, and the log10 cost of each deviation
        with np.errstate(divide="ignore"):
            order = [np.argsort(-f, kind="stable") for _, _, f in groups]
            logs = [np.log10(f[o]) for (_, _, f), o in zip(groups, order, strict=True)]
        base_log = float(sum(lg[0] for lg in logs))
        base_state = [int(o[0]) for o in order]
        movable = [g for g in range(len(groups)) if len(order[g]) > 1 and np.isfinite(logs[g][1])]
        cost = {g: logs[g][0] - logs[g] for g in movable}
        movable.sort(key=lambda g: float(cost[g][1]))
        found: list[tuple[float, tuple[tuple[int, int], ...]]] = []
        heap: list[tuple[float, int, tuple[tuple[int, int], ...]]] = [(0.0, 0, ())]
        tick = 1
        while heap and len(found) < top:
            c, _, state = heapq.heappop(heap)
            found.append((c, state))
            nexts: list[tuple[float, tuple[tuple[int, int], ...]]] = []
            if not state:
                if movable:
                    nexts.append((c + float(cost[movable[0]][1]), ((0, 1),)))
            else:
                pos, rank = state[-1]
                g = movable[pos]
                if rank + 1 < len(cost[g]) and np.isfinite(cost[g][rank + 1]):
                    step = float(cost[g][rank + 1] - cost[g][rank])
                    nexts.append((c + step, state[:-1] + ((pos, rank + 1),)))
                if pos + 1 < len(movable):
                    h = movable[pos + 1]
                    nexts.append((c + float(cost[h][1]), state + ((pos + 1, 1),)))
                    if rank == 1:
                        swap = float(cost[h][1] - cost[g][1])
                        nexts.append((c + swap, state[:-1] + ((pos + 1, 1),)))
            for item in nexts:
                heapq.heappush(heap, (item[0], tick, item[1]))
                tick += 1
        rows = []
        for rank_no, (c, state) in enumerate(found, start=1):
            states = list(base_state)
            for pos, rank in state:
                g = movable[pos]
                states[g] = int(order[g][rank])
            charges = [q0 - j for (_, q0, _), j in zip(groups, states, strict=True)]
            charged = ", ".join(f"{groups[g][0]} {_signed(q)}" for g, q in enumerate(charges) if q)
            differs = ", ".join(
                f"{groups[g][0]} {_signed(groups[g][1] - base_state[g])} -> {_signed(charges[g])}"
                for g in range(len(groups))
                if states[g] != base_state[g]
            )
            log_pop = base_log - c
            rows.append(
                {"rank": rank_no, "population": 10.0**log_pop, "log10_population": log_pop,
                 "charge": float(sum(charges)), "charged": charged, "differs": differs}
            )  # fmt: skip
        return pd.DataFrame(
            rows, columns=["rank", "population", "log10_population", "charge", "charged", "differs"]
        )


def _signed(charge: float) -> str:
    return "0" if charge == 0 else f"{charge:+g}"


def _state_name(nsteps: int, lost: int) -> str:
    """Readable name of the state that has lost ``lost`` of ``nsteps`` protons."""
    if nsteps == 0:
        return "permanent"
    if nsteps == 1:
        return "protonated" if lost == 0 else "deprotonated"
    if lost == 0:
        return "fully protonated"
    if lost == nsteps:
        return "fully deprotonated"
    return f"{lost} of {nsteps} H+ lost"
