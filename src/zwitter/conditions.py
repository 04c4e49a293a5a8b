"""Solution conditions: temperature and ionic strength applied to the pKa values of a SiteSet.

Published pKa values refer to 25 C and infinite dilution (I -> 0). :class:`Conditions` moves them
to the solution at hand in two steps, per site type and per deprotonation step:

1. **Temperature** - the integrated van 't Hoff equation with the standard ionization enthalpy dH
   and heat-capacity change dCp of the group (``data/ionization_enthalpies.csv``; buffers carry
   their own in ``data/buffers.csv``)::

       pKa(T) = pKa(T0) + dH/(R ln10) (1/T - 1/T0) - dCp/(R ln10) (ln(T/T0) + T0/T - 1)

2. **Ionic strength** - the Davies equation for the activity coefficients of the acid form
   (charge z_a) and the base form (z_a - 1) of the step. With ``ph_scale="activity"`` (default)
   the pH is the one a calibrated glass electrode reads, -log10 a(H+), and the constant is the
   "mixed" one, pKm = pKa - A F(I) (1 - 2 z_a); with ``ph_scale="concentration"`` the pH is
   -log10 [H+] and pKc = pKa - 2 A F(I) (1 - z_a), where F(I) = sqrt(I)/(1 + sqrt(I)) - 0.3 I.
   This per-site form is the one for sequences (independent sites). Structures (coupled sites,
   :mod:`zwitter.microstates`) take it per whole species instead: each form's activity coefficient
   follows from its net charge (:func:`davies_species_terms`), and their sites get only step 1.

For proteins an optional smeared-charge term (``electrostatics="sphere"``) adds the work of
charging a sphere of the molecule's size in a Debye-Hueckel ion atmosphere (Linderstrom-Lang 1924;
Tanford 1957): pKa_app = pKa_int - 0.868 w Z, where Z is the net charge. Z depends on the pKa
values, so the charge is solved self-consistently at each pH (:class:`SphereModel`). At Z = 0 the
term vanishes, so it leaves the isoelectric point unchanged and flattens the titration curve.

Examples
--------
>>> c = Conditions(temperature=5.0)
>>> c.temperature, c.ionic_strength
(5.0, 0.0)
>>> round(davies_log_gamma(1, 0.1), 4)
-0.1074
"""

from __future__ import annotations

import functools
import math
import re
import warnings
from dataclasses import dataclass
from typing import TYPE_CHECKING, Any

import numpy as np
import numpy.typing as npt

from .errors import ConditionsError, ScaleError, ZwitterWarning
from .sites import SiteSet

if TYPE_CHECKING:
    import pandas as pd

    from .molecule import Molecule

__all__ = [
    "Conditions",
    "SphereModel",
    "REFERENCE_TEMPERATURE",
    "debye_huckel_a",
    "davies_log_gamma",
    "davies_pka_shift",
    "davies_species_terms",
    "van_t_hoff",
    "pkw",
    "water_permittivity",
    "bjerrum_length",
    "debye_kappa",
    "ionization_enthalpy",
    "residue_count",
    "molecule_mass",
]

FloatArray = npt.NDArray[np.float64]

#: Reference temperature of tabulated pKa values, deg C.
REFERENCE_TEMPERATURE = 25.0
_T0 = 298.15  # K
_KELVIN = 273.15
# Molar gas constant, J/(K mol): CODATA 2018 exact value.
_R = 8.314462618
_LN10 = math.log(10.0)

#: Allowed ranges. Liquid water at 1 atm (0-100 C); Davies is an empirical fit good to about
#: I = 0.1-0.5 M (Davies 1962, Ion Association, Butterworths): warn beyond 0.5 M, refuse beyond
#: 5 M (no aqueous activity model of this kind means anything there; common practice).
TEMPERATURE_RANGE = (0.0, 100.0)
DAVIES_WARN_ABOVE = 0.5
IONIC_STRENGTH_MAX = 5.0

PH_SCALES = ("activity", "concentration")
ELECTROSTATICS = ("sphere",)


# -- physical constants of water ---------------------------------------------------------------
def debye_huckel_a(temperature: float = REFERENCE_TEMPERATURE) -> float:
    """Debye-Hueckel limiting-law constant A (log10 basis, kg^1/2 mol^-1/2) at ``temperature`` C.

    Alberty's fit of the ln-basis constant, alpha = 1.10708 - 1.54508e-3 T + 5.95584e-6 T^2
    (T in K; Clarke & Glew 1980, J. Chem. Soc. Faraday Trans. 1 76:1911, as used by Alberty 2001,
    Arch. Biochem. Biophys. 389:94 and by Goldberg, Kishore & Lennen 2002; from memory), divided by
    ln 10. It gives A = 0.5107 at 25 C (0.5085 and 0.5091 are other common 25 C values).

    >>> round(debye_huckel_a(25.0), 4)
    0.5107
    """
    t = float(temperature) + _KELVIN
    alpha = 1.10708 - 1.54508e-3 * t + 5.95584e-6 * t * t
    return alpha / _LN10


def _davies_f(ionic_strength: npt.ArrayLike) -> Any:
    s = np.sqrt(np.asarray(ionic_strength, dtype=np.float64))
    # Davies 1962, Ion Association (Butterworths): log10 g = -A z^2 (sqrt(I)/(1 + sqrt(I)) - 0.3 I)
    return s / (1.0 + s) - 0.3 * np.asarray(ionic_strength, dtype=np.float64)


def davies_log_gamma(
    charge: npt.ArrayLike, ionic_strength: npt.ArrayLike, temperature: float = REFERENCE_TEMPERATURE
) -> Any:
    """log10 of the activity coefficient of an ion of ``charge`` by the Davies equation.

    >>> round(float(davies_log_gamma(2, 0.15)), 3)
    -0.478
    """
    z = np.asarray(charge, dtype=np.float64)
    out = -debye_huckel_a(temperature) * z * z * _davies_f(ionic_strength)
    return float(out) if np.ndim(out) == 0 else out


def davies_pka_shift(
    acid_charge: npt.ArrayLike,
    ionic_strength: float,
    temperature: float = REFERENCE_TEMPERATURE,
    ph_scale: str = "activity",
) -> Any:
    """Change of a step's pKa from I = 0 to ``ionic_strength`` (Davies), by acid-form charge.

    Step HA(z) = A(z - 1) + H+. ``activity``: pKm = pKa + log g(A) - log g(HA), the constant that
    goes with a glass-electrode pH; ``concentration``: pKc adds log g(H+), for pH = -log10 [H+].

    >>> round(float(davies_pka_shift(0, 0.1)), 3)   # acetic acid: falls by A F
    -0.107
    >>> round(float(davies_pka_shift(1, 0.1)), 3)   # Tris-H+: rises
    0.107
    """
    za = np.asarray(acid_charge, dtype=np.float64)
    zb = za - 1.0
    a_f = debye_huckel_a(temperature) * _davies_f(ionic_strength)
    delta = -(zb * zb - za * za) * a_f  # log g(B) - log g(HA)
    if ph_scale == "concentration":
        delta = delta - a_f  # + log g(H+)
    elif ph_scale != "activity":
        raise ConditionsError("ph_scale", f"one of {', '.join(PH_SCALES)}", ph_scale)
    return float(delta) if np.ndim(delta) == 0 else delta


def davies_species_terms(
    ionic_strength: float,
    temperature: float = REFERENCE_TEMPERATURE,
    ph_scale: str = "activity",
) -> tuple[float, float]:
    """(a, h): the whole-species activity correction of a coupled-site (microstate) model.

    ``a`` = A F(I): a species of net charge z has log10 g = -a z**2 (Davies); ``h`` is
    log10 g(H+) when pH means -log10 [H+] (``ph_scale="concentration"``), 0 on the glass-electrode
    scale. A form that has lost L protons and carries net charge z then has the log10 weight
    L pH - G + a z**2 - h L, where G is its free energy at I = 0 (see the derivation below).

    >>> a, h = davies_species_terms(0.1)
    >>> round(a, 4), h
    (0.1074, 0.0)
    >>> round(davies_species_terms(0.1, ph_scale="concentration")[1], 4)
    -0.1074
    """
    # Derivation (the mixed and concentration constants of Albert & Serjeant, The Determination of
    # Ionization Constants, Chapman & Hall 1984, chapter on activity corrections; from memory):
    # a form s that lost L protons from the fully protonated form R is in equilibrium R = s + L H+
    # with the thermodynamic constant K_s = a(s) a(H+)**L / a(R), log10 K_s = -G(s). So
    #     [s] / [R] = K_s a(H+)**-L g(R) / g(s),
    # and g(R) is common to every form: it cancels when the populations are normalised.
    # Glass-electrode pH (-log10 a(H+)): log10 [s] = L pH - G(s) - log10 g(z_s) + const.
    # Concentration pH (-log10 [H+], a(H+) = g(H+) [H+]): a further - L log10 g(H+).
    # With Davies, -log10 g(z) = a z**2. For one site this is davies_pka_shift exactly.
    if ph_scale not in PH_SCALES:
        raise ConditionsError("ph_scale", f"one of {', '.join(PH_SCALES)}", ph_scale)
    a = float(debye_huckel_a(temperature) * _davies_f(ionic_strength))
    h = -a if ph_scale == "concentration" else 0.0
    return a, h


def van_t_hoff(
    pka: npt.ArrayLike,
    dh: npt.ArrayLike,
    dcp: npt.ArrayLike,
    temperature: float,
    reference: float = REFERENCE_TEMPERATURE,
) -> Any:
    """pKa at ``temperature`` (C) from pKa at ``reference`` (C), dH (kJ/mol) and dCp (J/(K mol)).

    Integrated van 't Hoff equation with a temperature-independent dCp (the form used by
    Goldberg, Kishore & Lennen 2002, J. Phys. Chem. Ref. Data 31:231)::

        pKa(T) = pKa(T0) + dH/(R ln10) (1/T - 1/T0) - dCp/(R ln10) (ln(T/T0) + T0/T - 1)

    >>> round(float(van_t_hoff(8.072, 47.45, -59.0, 5.0)), 3)   # Tris at 5 C
    8.677
    """
    t = float(temperature) + _KELVIN
    t0 = float(reference) + _KELVIN
    dh_j = np.asarray(dh, dtype=np.float64) * 1000.0
    cp = np.asarray(dcp, dtype=np.float64)
    out = (
        np.asarray(pka, dtype=np.float64)
        + dh_j / (_R * _LN10) * (1.0 / t - 1.0 / t0)
        - cp / (_R * _LN10) * (math.log(t / t0) + t0 / t - 1.0)
    )
    return float(out) if np.ndim(out) == 0 else out


def pkw(temperature: float = REFERENCE_TEMPERATURE) -> float:
    """Ionic product of water, pKw, at ``temperature`` C (I = 0).

    pKw = 4470.99/T - 6.0875 + 0.01706 T (Harned & Robinson 1940, Trans. Faraday Soc. 36:973;
    from memory): 13.995 at 25 C, 14.73 at 5 C, 13.62 at 37 C.

    >>> round(pkw(25.0), 3)
    13.995
    """
    t = float(temperature) + _KELVIN
    return 4470.99 / t - 6.0875 + 0.01706 * t


def water_permittivity(temperature: float = REFERENCE_TEMPERATURE) -> float:
    """Relative permittivity of water at ``temperature`` C.

    eps = 87.740 - 0.40008 t + 9.398e-4 t^2 - 1.410e-6 t^3 (Malmberg & Maryott 1956,
    J. Res. Natl. Bur. Stand. 56:1; from memory): 78.30 at 25 C.
    """
    t = float(temperature)
    return 87.740 - 0.40008 * t + 9.398e-4 * t * t - 1.410e-6 * t**3


# e^2 / (4 pi eps0 k_B) in Angstrom * K, from CODATA 2018 constants (e, eps0, k_B).
_E2_OVER_4PI_EPS0_KB = 1.602176634e-19**2 / (4 * math.pi * 8.8541878128e-12 * 1.380649e-23) * 1e10
_AVOGADRO = 6.02214076e23


def bjerrum_length(temperature: float = REFERENCE_TEMPERATURE) -> float:
    """Bjerrum length of water in Angstrom: e^2 / (4 pi eps0 eps_r k_B T) (7.16 at 25 C)."""
    t = float(temperature) + _KELVIN
    return _E2_OVER_4PI_EPS0_KB / (water_permittivity(temperature) * t)


def debye_kappa(ionic_strength: float, temperature: float = REFERENCE_TEMPERATURE) -> float:
    """Debye screening constant kappa in 1/Angstrom: kappa^2 = 8 pi l_B N_A I (I in mol/L).

    >>> round(1.0 / debye_kappa(0.1), 2)   # Debye length at 0.1 M, 25 C
    9.61
    """
    per_a3 = float(ionic_strength) * 1000.0 * _AVOGADRO * 1e-30  # mol/L -> ions per A^3
    return math.sqrt(8.0 * math.pi * bjerrum_length(temperature) * per_a3)


# -- ionization enthalpies ----------------------------------------------------------------------
@dataclass(frozen=True)
class Enthalpy:
    """dH (kJ/mol) and dCp (J/(K mol)) of one step, with the table row it came from."""

    dh: float
    dcp: float
    key: str
    model: str
    source: str


@dataclass(frozen=True)
class _Fallback:
    name: str
    acid_charge: str
    pka_min: float
    pka_max: float
    value: Enthalpy


_CHARGE_CLASSES = ("cationic", "neutral", "anionic")


@functools.cache
def _enthalpy_table() -> tuple[dict[tuple[str, int], Enthalpy], tuple[_Fallback, ...]]:
    from .tables import packaged_csv

    name = "ionization_enthalpies.csv"
    named: dict[tuple[str, int], Enthalpy] = {}
    fallbacks: list[_Fallback] = []
    for row in packaged_csv(name, ("group", "step", "dH", "dCp", "source")):
        group = row["group"]
        step_raw = row["step"]
        if not step_raw.isdigit() or int(step_raw) < 1:
            raise ScaleError(
                f"step must be 1, 2, ...; got {step_raw!r}", row.path, row.line, "step"
            )
        dh = row.number("dH")
        dcp = row.number("dCp") if row["dCp"] else 0.0
        if not row["source"]:
            raise ScaleError("every row needs a source", row.path, row.line, "source")
        value = Enthalpy(dh, dcp, group, row["model"], row["source"])
        if group.startswith("fallback:"):
            if row["acid_charge"] not in _CHARGE_CLASSES:
                raise ScaleError(
                    f"acid_charge must be one of {', '.join(_CHARGE_CLASSES)}",
                    row.path,
                    row.line,
                    "acid_charge",
                )
            fallbacks.append(
                _Fallback(
                    group, row["acid_charge"], row.number("pka_min"), row.number("pka_max"), value
                )
            )
            continue
        key = (group.casefold(), int(step_raw))
        if key in named:
            raise ScaleError(
                f"duplicate row for group {group!r} step {step_raw}", row.path, row.line
            )
        named[key] = value
    return named, tuple(fallbacks)


def ionization_enthalpy(
    group: str, step: int, acid_charge: float, pka: float, label: str = ""
) -> Enthalpy:
    """dH and dCp of step ``step`` (1-based) of a site group.

    Looked up by group key, then by label (case-insensitive); a group without a row for this step
    falls back to its class: acid-form charge (cationic / neutral / anionic) and pKa range, as the
    ``fallback:`` rows of ``data/ionization_enthalpies.csv`` document.

    >>> ionization_enthalpy("K", 1, 1, 10.5).dh
    46.0
    >>> ionization_enthalpy("an amine", 1, 1, 9.8).key
    'fallback:aliphatic ammonium'
    """
    named, fallbacks = _enthalpy_table()
    for name in (group, label):
        if name and (name.casefold(), step) in named:
            return named[(name.casefold(), step)]
    cls = "cationic" if acid_charge > 0 else "neutral" if acid_charge == 0 else "anionic"
    for fb in fallbacks:
        if fb.acid_charge == cls and fb.pka_min <= pka < fb.pka_max:
            return fb.value
    raise ScaleError(f"no ionization enthalpy (not even a fallback) for {group!r} step {step}")


# -- conditions ---------------------------------------------------------------------------------
def _number(value: object, parameter: str, allowed: str) -> float:
    if isinstance(value, bool) or not isinstance(value, (int, float, np.integer, np.floating)):
        raise ConditionsError(parameter, allowed, value)
    out = float(value)
    if not math.isfinite(out):
        raise ConditionsError(parameter, allowed, value)
    return out


@dataclass(frozen=True)
class Conditions:
    """Temperature and ionic strength of the solution (and the optional protein electrostatics).

    Parameters
    ----------
    temperature
        Degrees Celsius, 0-100 (default 25, the reference of the tables).
    ionic_strength
        mol/L, 0-5 (default 0, infinite dilution). Davies is fitted up to about 0.5 M: beyond it a
        :class:`~zwitter.errors.ZwitterWarning` is raised.
    electrostatics
        False (default) or ``"sphere"`` (``True`` means ``"sphere"``): the smeared-charge work term
        for proteins, solved self-consistently with the net charge (see :class:`SphereModel`).
    ph_scale
        ``"activity"`` (default): pH values are what a calibrated glass electrode reads,
        -log10 a(H+); ``"concentration"``: pH means -log10 [H+].

    Examples
    --------
    >>> Conditions(temperature=37.0, ionic_strength=0.15)
    Conditions(temperature=37.0, ionic_strength=0.15, electrostatics=False, ph_scale='activity')
    >>> Conditions(temperature=120)  # doctest: +ELLIPSIS
    Traceback (most recent call last):
    ...
    zwitter.errors.ConditionsError: The 'temperature' condition must be ... Got 120 instead.
    """

    temperature: float = REFERENCE_TEMPERATURE
    ionic_strength: float = 0.0
    electrostatics: bool | str = False
    ph_scale: str = "activity"

    def __post_init__(self) -> None:
        lo, hi = TEMPERATURE_RANGE
        allowed_t = f"degrees Celsius in [{lo:g}, {hi:g}] (liquid water)"
        t = _number(self.temperature, "temperature", allowed_t)
        if not lo <= t <= hi:
            raise ConditionsError("temperature", allowed_t, self.temperature)
        allowed_i = f"mol/L in [0, {IONIC_STRENGTH_MAX:g}]"
        i = _number(self.ionic_strength, "ionic_strength", allowed_i)
        if i < 0:
            raise ConditionsError(
                "ionic_strength",
                allowed_i,
                self.ionic_strength,
                "Ionic strength is half the sum of c z^2 over all ions: it cannot be negative.",
            )
        if i > IONIC_STRENGTH_MAX:
            raise ConditionsError(
                "ionic_strength",
                allowed_i,
                self.ionic_strength,
                "Check the units: the value is in mol/L (150 mM NaCl is 0.15).",
            )
        if i > DAVIES_WARN_ABOVE:
            warnings.warn(
                f"ionic strength {i:g} M is beyond the range of the Davies equation "
                f"(about {DAVIES_WARN_ABOVE:g} M): activity corrections are rough estimates",
                ZwitterWarning,
                stacklevel=3,
            )
        e = self.electrostatics
        if e is True:
            e = "sphere"
        elif e is None or e is False or e == "" or e == "none":
            e = False
        elif e not in ELECTROSTATICS:
            raise ConditionsError("electrostatics", "False or 'sphere'", self.electrostatics)
        if self.ph_scale not in PH_SCALES:
            raise ConditionsError("ph_scale", f"one of {', '.join(PH_SCALES)}", self.ph_scale)
        object.__setattr__(self, "temperature", t)
        object.__setattr__(self, "ionic_strength", i)
        object.__setattr__(self, "electrostatics", e)

    @property
    def is_reference(self) -> bool:
        """True at 25 C and I = 0 without electrostatics (apply() changes nothing)."""
        return (
            self.temperature == REFERENCE_TEMPERATURE
            and self.ionic_strength == 0.0
            and not self.electrostatics
        )

    # -- pKa corrections -------------------------------------------------------------------------
    def _step_arrays(
        self, sites: SiteSet
    ) -> tuple[FloatArray, FloatArray, FloatArray, list[Enthalpy]]:
        """(dH, dCp, acid charge) arrays shaped like the (K, S) step grid, and the rows used."""
        k, s = sites.pkas.shape[-2], sites.pkas.shape[-1]
        dh = np.zeros((k, s))
        dcp = np.zeros((k, s))
        za = np.zeros((k, s))
        rows: list[Enthalpy] = []
        ref = sites.pkas if sites.pkas.ndim == 2 else sites.pkas[0]
        for i in range(k):
            for j in range(int(sites.nsteps[i])):
                za[i, j] = sites.charges[i] - j
                e = ionization_enthalpy(
                    sites.groups[i], j + 1, za[i, j], float(ref[i, j]), sites.labels[i]
                )
                dh[i, j], dcp[i, j] = e.dh, e.dcp
                rows.append(e)
        return dh, dcp, za, rows

    def pka_shifts(
        self,
        sites: SiteSet,
        *,
        reference_temperature: float = REFERENCE_TEMPERATURE,
        reference_ionic_strength: float = 0.0,
    ) -> tuple[FloatArray, FloatArray]:
        """(temperature shift, ionic-strength shift) of every step, each shaped (K, S).

        The temperature shift is evaluated at each site's reference pKa; shifts are zero in the
        NaN padding of sites with fewer steps.
        """
        dh, dcp, za, _ = self._step_arrays(sites)
        mask = np.arange(sites.pkas.shape[-1])[None, :] < sites.nsteps[:, None]
        # van 't Hoff shift does not depend on the pKa itself: evaluate it on zeros.
        dt = van_t_hoff(np.zeros_like(dh), dh, dcp, self.temperature, reference_temperature)
        di = davies_pka_shift(za, self.ionic_strength, self.temperature, self.ph_scale)
        if reference_ionic_strength:
            di = di - davies_pka_shift(
                za, reference_ionic_strength, reference_temperature, self.ph_scale
            )
        dt = np.where(mask, dt, 0.0)
        di = np.where(mask, di, 0.0)
        return np.asarray(dt, dtype=np.float64), np.asarray(di, dtype=np.float64)

    def apply(
        self,
        sites: SiteSet,
        *,
        reference_temperature: float = REFERENCE_TEMPERATURE,
        reference_ionic_strength: float = 0.0,
    ) -> SiteSet:
        """The sites with pKa values at these conditions (one molecule or a batch).

        ``reference_*`` state the conditions of the sites' pKa values (25 C and I = 0 for the
        packaged tables). For a batch the (K, S) pKa grid is shared, so every molecule gets the same
        shift per site type; per-molecule (N, K, S) pKa values are shifted alike.
        """
        if (
            self.temperature == reference_temperature
            and self.ionic_strength == reference_ionic_strength
        ) or sites.pkas.shape[-1] == 0:
            return sites
        dt, di = self.pka_shifts(
            sites,
            reference_temperature=reference_temperature,
            reference_ionic_strength=reference_ionic_strength,
        )
        new = sites.pkas + dt + di
        # Steps stay in ascending order unless two steps of one group come within a shift of each
        # other (rare): sort each row, keeping NaN padding at the end.
        new = np.sort(new, axis=-1)
        return sites.with_pkas(new)

    def corrections(self, sites: SiteSet) -> pd.DataFrame:
        """One row per site step: reference pKa, dH, dCp, their source, both shifts, final pKa."""
        import pandas as pd

        dh, dcp, za, rows = self._step_arrays(sites)
        dt, di = self.pka_shifts(sites)
        ref = sites.pkas if sites.pkas.ndim == 2 else sites.pkas[0]
        out = []
        n = 0
        for i in range(sites.n_types):
            for j in range(int(sites.nsteps[i])):
                e = rows[n]
                n += 1
                out.append(
                    {
                        "site": sites.labels[i],
                        "group": sites.groups[i],
                        "step": j + 1,
                        "acid_charge": int(za[i, j]),
                        "pka_reference": float(ref[i, j]),
                        "dH_kJ_per_mol": e.dh,
                        "dCp_J_per_K_mol": e.dcp,
                        "enthalpy_row": e.key,
                        "enthalpy_source": e.source,
                        "shift_temperature": float(dt[i, j]),
                        "shift_ionic_strength": float(di[i, j]),
                        "pka": float(ref[i, j] + dt[i, j] + di[i, j]),
                    }
                )
        return pd.DataFrame(out)

    # -- electrostatics --------------------------------------------------------------------------
    def sphere_model(self, molecule: Molecule, *, mass: float | None = None) -> SphereModel:
        """The smeared-charge model of ``molecule`` at these conditions (radius from its mass)."""
        return SphereModel.for_mass(
            mass if mass is not None else molecule_mass(molecule),
            self.ionic_strength,
            self.temperature,
        )


# -- smeared-charge electrostatics ----------------------------------------------------------------
#: Common practice for proteins: partial specific volume 0.73 mL/g, mean residue mass 110 Da,
#: closest approach of the ion atmosphere 2.5 A beyond the protein surface (the radius of a small
#: hydrated ion; Tanford 1961, Physical Chemistry of Macromolecules, chapter on electrostatic
#: interactions; from memory).
PARTIAL_SPECIFIC_VOLUME = 0.73  # mL/g
MEAN_RESIDUE_MASS = 110.0  # Da
ION_EXCLUSION = 2.5  # Angstrom


@dataclass(frozen=True)
class SphereModel:
    """Linderstrom-Lang / Tanford smeared-charge sphere.

    The work of charging a sphere of radius b with charge Z e, with ions kept beyond a = b + 2.5 A,
    is W = Z^2 w k_B T with (Tanford 1957, J. Am. Chem. Soc. 79:5333; from memory)::

        w = (l_B / 2) (1/b - kappa / (1 + kappa a))

    l_B the Bjerrum length, kappa the Debye constant. Every group then sees
    pKa_app = pKa_int - 0.868 w Z (0.868 = 2 / ln 10), i.e. the pH shifted by +0.868 w Z.

    Attributes
    ----------
    radius
        b in Angstrom, from the mass: 4/3 pi b^3 = M v / N_A with v = 0.73 mL/g.
    w
        Electrostatic interaction factor (dimensionless).
    """

    radius: float
    w: float
    mass: float = math.nan

    @classmethod
    def for_mass(
        cls, mass: float, ionic_strength: float, temperature: float = REFERENCE_TEMPERATURE
    ) -> SphereModel:
        if not (math.isfinite(mass) and mass > 0):
            raise ConditionsError("mass", "a positive number of daltons", mass)
        volume = mass * PARTIAL_SPECIFIC_VOLUME / _AVOGADRO * 1e24  # A^3
        b = (3.0 * volume / (4.0 * math.pi)) ** (1.0 / 3.0)
        kappa = debye_kappa(ionic_strength, temperature)
        a = b + ION_EXCLUSION
        w = 0.5 * bjerrum_length(temperature) * (1.0 / b - kappa / (1.0 + kappa * a))
        return cls(radius=b, w=w, mass=float(mass))

    @property
    def slope(self) -> float:
        """0.868 w: pH units of shift per unit of net charge."""
        return 2.0 * self.w / _LN10

    def solve(self, ph: npt.ArrayLike, sites: SiteSet, *, tol: float = 1e-9) -> tuple[Any, Any]:
        """(net charge, pH the groups see) at each pH, solved self-consistently.

        Z = Z_int(pH + 0.868 w Z): the right side falls as Z rises, so the root is unique and a
        vectorised bisection between the charge bounds finds it.
        """
        from .equilibrium import mean_protons_lost

        if sites.is_batch:
            raise ValueError("the sphere model needs one molecule")
        h = np.asarray(ph, dtype=np.float64)
        low, high = (float(x) for x in sites.charge_bounds())
        lo = np.full(h.shape, low)
        hi = np.full(h.shape, high)
        c = self.slope

        def excess(z: FloatArray) -> FloatArray:
            eff = h + c * z
            if sites.pkas.shape[-1]:
                lost = mean_protons_lost(eff[..., None], sites.pkas)
            else:
                lost = np.zeros(eff.shape + (sites.n_types,))
            return np.asarray(z - (sites.charges - lost) @ sites.counts)

        iterations = max(1, math.ceil(math.log2(max(high - low, 1e-12) / tol)))
        for _ in range(min(iterations, 80)):
            mid = 0.5 * (lo + hi)
            above = excess(mid) > 0
            hi = np.where(above, mid, hi)
            lo = np.where(above, lo, mid)
        z = 0.5 * (lo + hi)
        eff = h + c * z
        if h.ndim == 0:
            return float(z), float(eff)
        return z, eff


_CTERM_MEMBER = re.compile(r"^(?:chain\d+:)?C-term [A-Za-z](\d+)$")


def _chain_sequences(molecule: Molecule) -> list[str]:
    """Residue sequences the readers recorded: ``info['sequence']``, ``info['chains']``, or the
    name of a plain-sequence molecule when it is the sequence itself."""
    seq = molecule.info.get("sequence")
    if isinstance(seq, str) and seq:
        return [seq]
    chains = molecule.info.get("chains")
    if isinstance(chains, (list, tuple)) and chains:
        out = [c.get("sequence", "") for c in chains if isinstance(c, dict)]
        if all(out):
            return out
    if molecule.kind == "sequence" and molecule.name.isalpha() and molecule.name.isupper():
        if _cterm_position(molecule) == len(molecule.name):
            return [molecule.name]
    return []


def _cterm_position(molecule: Molecule) -> int:
    best = 0
    for members in molecule.sites.members:
        for m in members:
            found = _CTERM_MEMBER.match(m)
            if found:
                best = max(best, int(found.group(1)))
    return best


def residue_count(molecule: Molecule) -> int | None:
    """Residues of a polypeptide: ``info['length']``, the recorded chain sequences, else the
    position of the C-terminal residue the sequence reader records in the site members."""
    for key in ("length", "residues", "n_residues"):
        value = molecule.info.get(key)
        if isinstance(value, (int, float)) and value > 0:
            return int(value)
    chains = _chain_sequences(molecule)
    if chains:
        return sum(len(c) for c in chains)
    return _cterm_position(molecule) or None


def molecule_mass(molecule: Molecule) -> float:
    """Mass in Da for the sphere radius.

    ``info['mass']`` (or ``average_mass``) when a reader or the caller set it; else the average
    mass of the recorded chain sequences (:func:`zwitter.masses.sequence_mass`); else the residue
    count x 110 Da (mean residue mass, common practice).
    """
    for key in ("mass", "average_mass", "avg_mass"):
        value = molecule.info.get(key)
        if isinstance(value, (int, float)) and value > 0:
            return float(value)
    chains = _chain_sequences(molecule)
    if chains:
        from .masses import sequence_mass

        total = sum(sequence_mass(c) for c in chains)
        if math.isfinite(total) and total > 0:
            return total
    n = residue_count(molecule)
    if n is None:
        raise ConditionsError(
            "electrostatics",
            "used with a molecule of known size",
            "sphere",
            f"The size of {molecule.name or 'the molecule'!r} is unknown: give its mass in daltons "
            "as info['mass'] (or use electrostatics=False).",
        )
    return n * MEAN_RESIDUE_MASS
