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
            sites = conditions.apply(sites)
        self.sites = sites
        self.name = name
        self.kind = kind
        self.scale = scale
        self.notes = tuple(notes)
        self.info = dict(info or {})
        for note in self.notes:
            warnings.warn(f"{name}: {note}" if name else note, ZwitterWarning, stacklevel=3)

    def __repr__(self) -> str:
        label = self.name if len(self.name) <= 40 else self.name[:37] + "..."
        return f"<Molecule {label!r}: {self.sites.n_types} site types, scale {self.scale!r}>"

    # -- numbers --------------------------------------------------------------------------------
    def charge(self, ph: npt.ArrayLike) -> Any:
        """Average net charge at ``ph`` (a float, or an array for an array of pH values).

        >>> import zwitter
        >>> m = zwitter.from_sequence("DK", scale="lehninger")
        >>> round(m.charge(7.0), 2)
        0.0
        """
        z = eq.net_charge(ph, self.sites, where="charge")
        return float(z) if np.ndim(z) == 0 else z

    def isoelectric_point(self) -> float | None:
        """pH of zero net charge to 1e-4 or better; None (with a warning saying why) if none."""
        return eq.pi_or_none(self.sites)

    def pkas(self) -> list[float]:
        """Macroscopic pKa values of the molecule, ascending."""
        return [float(x) for x in eq.macroscopic_pkas(self.sites)]

    def dominant(self, ph: float) -> eq.DominantForm:
        """The most populated protonation form at ``ph``: charge, population, per-site states."""
        return eq.dominant_form(ph, self.sites)

    # -- tables ---------------------------------------------------------------------------------
    def site_table(self, ph: float = 7.0) -> pd.DataFrame:
        """One row per site type: count, pKa step(s), protonation and charge at ``ph``."""
        import pandas as pd

        eq.check_ph(ph, "site_table")
        s = self.sites
        lost = eq.mean_protons_lost(ph, s.pkas) if s.pkas.shape[-1] else np.zeros(s.n_types)
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
        charges, pops = eq.charge_state_populations(ph, self.sites)
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
        data: dict[str, Any] = {"ph": grid, "charge": eq.net_charge(grid, s, where="curve")}
        if s.pkas.shape[-1]:
            lost = eq.mean_protons_lost(grid[:, None], s.pkas)  # (M, K)
            for k in range(s.n_types):
                n = int(s.nsteps[k])
                if n:
                    data[f"fraction_protonated:{s.labels[k]}"] = (n - lost[:, k]) / n
        return pd.DataFrame(data)
