"""Buffer substances: the packaged table, pKa at solution conditions, and buffer recipes.

The table (``data/buffers.csv``) has one row per ionization step with pKa, dH and dCp at 25 C and
I = 0 (Goldberg, Kishore & Lennen 2002; Good et al. 1966), the charge of each form and the forms
sold. :func:`buffer_pkas` moves the pKa values to a temperature (van 't Hoff) and ionic strength
(Davies) with the same code as the sites of molecules (:mod:`zwitter.conditions`).

A recipe (:func:`buffer_recipe`) solves the proton balance of the solution at the target pH::

    C * nbar(pH) + [H+] - [OH-] = protons put in (forms weighed, strong acid) - strong base

where nbar is the mean number of protons a buffer molecule holds (counted from its fully
deprotonated form). The ionic strength follows from the species and counter-ions present and
changes the pKa values (Davies), so the two are iterated to self-consistency.

Examples
--------
>>> [round(p, 2) for p in buffer_pkas("tris", conditions=None)]
[8.07]
>>> get_buffer("HEPPS").name
'EPPS'
"""

from __future__ import annotations

import difflib
import functools
import math
import re
import warnings
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field
from typing import TYPE_CHECKING, Any

import numpy as np

from .conditions import (
    Conditions,
    davies_log_gamma,
    davies_pka_shift,
    pkw,
    van_t_hoff,
)
from .errors import BufferLookupError, ParameterError, RecipeError, ScaleError, ZwitterWarning

if TYPE_CHECKING:
    import pandas as pd

__all__ = [
    "BufferForm",
    "BufferStep",
    "Buffer",
    "buffer_names",
    "get_buffer",
    "buffer_table",
    "buffer_pkas",
    "suitable_buffers",
    "Component",
    "Recipe",
    "buffer_recipe",
    "mixture_ph",
]

_LN10 = math.log(10.0)
#: NaCl molar mass, g/mol, from the IUPAC 2005 standard atomic weights (Na 22.990, Cl 35.453).
NACL_MW = 58.44
#: A recipe is refused when the target pH is further than this from every pKa (the buffer then
#: holds less than about 4 % of its best capacity; common practice), warned beyond 1 unit.
UNREACHABLE_DISTANCE = 2.0
WARN_DISTANCE = 1.0


@dataclass(frozen=True)
class BufferForm:
    """A form of the substance as sold: name, molar mass, protons and buffer units per formula."""

    name: str
    mw: float
    protons: float
    units: float = 1.0

    @property
    def protons_per_unit(self) -> float:
        return self.protons / self.units

    @property
    def counterion_charge(self) -> int:
        """Charge magnitude of the counter-ion (sulfate 2, everything else in the table 1)."""
        return 2 if "SO4" in self.name else 1

    @property
    def family(self) -> str:
        """Counter-ion family used to pair forms: 'Na', 'K', 'NH4', 'Cl' or '' (free form)."""
        if "NH4" in self.name:
            return "NH4"
        if "HCl" in self.name:
            return "Cl"
        if re.search(r"sodium|Na(?![a-z])", self.name):
            return "Na"
        if re.search(r"potassium|K(?![a-z])", self.name):
            return "K"
        return ""


@dataclass(frozen=True)
class BufferStep:
    """One ionization step: HnA(charge_acid) = Hn-1A(charge_acid - 1) + H+."""

    step: int
    pka25: float
    dh: float | None
    dcp: float
    charge_acid: int
    useful_range: str
    source: str


@dataclass(frozen=True)
class Buffer:
    """A buffer substance: its steps (ascending pKa), forms sold, notes."""

    name: str
    aliases: tuple[str, ...]
    steps: tuple[BufferStep, ...]
    mw_free: float | None
    forms: tuple[BufferForm, ...]
    notes: str

    @property
    def n_steps(self) -> int:
        return len(self.steps)

    @property
    def charge_protonated(self) -> int:
        """Charge of the fully protonated form."""
        return self.steps[0].charge_acid

    def charge_of(self, protons: float) -> float:
        """Net charge of the form holding ``protons`` (counted from the fully deprotonated form)."""
        return self.charge_protonated - self.n_steps + protons

    def free_form(self) -> BufferForm | None:
        if self.mw_free is None:
            return None
        for f in self.forms:
            if abs(f.mw - self.mw_free) < 0.02 and f.units == 1:
                return f
        return None

    def form(self, name: str) -> BufferForm:
        for f in self.forms:
            if f.name.casefold() == name.casefold():
                return f
        raise RecipeError(
            f"{self.name} is not sold as {name!r} in the table; forms: "
            + ", ".join(f.name for f in self.forms)
        )

    def pkas(self, conditions: Conditions | None = None, *, warn: bool = True) -> list[float]:
        """pKa of each step at ``conditions`` (temperature, ionic strength, pH scale), ascending."""
        c = conditions if conditions is not None else Conditions()
        missing = [s.step for s in self.steps if s.dh is None]
        if missing and c.temperature != 25.0 and warn:
            warnings.warn(
                f"{self.name}: no tabulated ionization enthalpy for step(s) "
                f"{', '.join(map(str, missing))}; their pKa stays at the 25 C value",
                ZwitterWarning,
                stacklevel=3,
            )
        return self.pkas_at(c.temperature, c.ionic_strength, c.ph_scale)

    def pkas_at(
        self, temperature: float, ionic_strength: float, ph_scale: str = "activity"
    ) -> list[float]:
        """pKa of each step at a temperature (C) and ionic strength (mol/L), without checks."""
        out = []
        for s in self.steps:
            p = s.pka25 if s.dh is None else van_t_hoff(s.pka25, s.dh, s.dcp, temperature)
            p += davies_pka_shift(s.charge_acid, ionic_strength, temperature, ph_scale)
            out.append(float(p))
        return sorted(out)


# -- the table ------------------------------------------------------------------------------------
def _key(name: str) -> str:
    # case, spaces, hyphens and underscores do not matter: "bis tris" = "BIS-TRIS" = "bistris"
    return re.sub(r"[\s\-_]+", "", name.casefold())


def _parse_forms(text: str, row: Any) -> tuple[BufferForm, ...]:
    forms = []
    for item in filter(None, text.split("|")):
        parts = item.split(":")  # name:MW:protons[:units]; names hold no ':'
        if len(parts) not in (3, 4):
            raise ScaleError(
                f"salt entry {item!r} is not name:MW:protons[:units]", row.path, row.line, "salts"
            )
        try:
            mw, protons = float(parts[1]), float(parts[2])
            units = float(parts[3]) if len(parts) == 4 else 1.0
        except ValueError:
            raise ScaleError(
                f"salt entry {item!r} has a non-numeric field", row.path, row.line, "salts"
            ) from None
        forms.append(BufferForm(parts[0], mw, protons, units))
    return tuple(forms)


@functools.cache
def _buffers() -> tuple[dict[str, Buffer], dict[str, str]]:
    from .tables import packaged_csv

    required = (
        "buffer",
        "aliases",
        "step",
        "pka25",
        "dH",
        "dCp",
        "charge_acid",
        "mw_free",
        "salts",
        "notes",
        "source",
    )
    rows = packaged_csv("buffers.csv", required)
    grouped: dict[str, list[Any]] = {}
    for row in rows:
        grouped.setdefault(row["buffer"], []).append(row)
    table: dict[str, Buffer] = {}
    index: dict[str, str] = {}
    for name, items in grouped.items():
        steps = []
        first = items[0]
        for row in items:
            steps.append(
                BufferStep(
                    int(row.number("step")),
                    row.number("pka25"),
                    row.number("dH") if row["dH"] else None,
                    row.number("dCp") if row["dCp"] else 0.0,
                    int(row.number("charge_acid")),
                    row["useful_range"],
                    row["source"],
                )
            )
        steps.sort(key=lambda s: s.step)
        for a, b in zip(steps, steps[1:]):
            if b.charge_acid != a.charge_acid - 1 or b.pka25 < a.pka25:
                raise ScaleError(
                    f"buffer {name!r}: step {b.step} must have charge_acid "
                    f"{a.charge_acid - 1} and a pKa above the step before",
                    items[0].path,
                    items[0].line,
                    "charge_acid",
                )
        aliases = tuple(a.strip() for a in first["aliases"].split("|") if a.strip())
        buf = Buffer(
            name,
            aliases,
            tuple(steps),
            first.number("mw_free") if first["mw_free"] else None,
            _parse_forms(first["salts"], first),
            first["notes"],
        )
        table[name] = buf
        for alias in (name, *aliases):
            k = _key(alias)
            if index.get(k, name) != name:
                raise ScaleError(
                    f"name {alias!r} of buffer {name!r} is already used by {index[k]!r}",
                    first.path,
                    first.line,
                    "aliases",
                )
            index[k] = name
    # Forms sold ("Tris-HCl", "NaH2PO4", "HEPES sodium") also name their buffer when unambiguous.
    form_names: dict[str, set[str]] = {}
    for buf in table.values():
        for f in buf.forms:
            form_names.setdefault(_key(f.name), set()).add(buf.name)
    for k, owners in form_names.items():
        if len(owners) == 1 and k not in index:
            index[k] = next(iter(owners))
    return table, index


def buffer_names() -> list[str]:
    """Canonical names of the packaged buffers, in table order (ascending first pKa)."""
    return list(_buffers()[0])


def get_buffer(name: str) -> Buffer:
    """A buffer by name or alias (case, spaces and hyphens ignored; a trailing 'buffer' too).

    >>> get_buffer("tham").name
    'Tris'
    >>> get_buffer("Tris-HCl").name
    'Tris'
    """
    if not isinstance(name, str):
        raise BufferLookupError(repr(name))
    table, index = _buffers()
    k = _key(name)
    for cand in (k, re.sub(r"buffer$", "", k), re.sub(r"^(sodium|potassium)", "", k)):
        if cand in index:
            return table[index[cand]]
    labels = {_key(a): a for b in table.values() for a in b.aliases}
    labels.update({_key(b.name): b.name for b in table.values()})  # canonical names win
    close = difflib.get_close_matches(k, list(labels), n=4, cutoff=0.6)
    contains = [key for key in labels if len(k) >= 3 and (k in key or key in k)]
    names: list[str] = []
    for key in close + contains:
        canonical = table[index[key]].name
        label = labels[key] if labels[key] == canonical else f"{labels[key]} ({canonical})"
        if label not in names:
            names.append(label)
    raise BufferLookupError(name, tuple(names[:4]))


def buffer_table() -> pd.DataFrame:
    """The packaged buffer table: one row per ionization step (25 C, I = 0) with its source.

    Columns: buffer, aliases, step, pka25, dH_kJ_per_mol, dCp_J_per_K_mol, charge_acid,
    charge_base, mw_free, forms, useful_range, notes, source.
    """
    import pandas as pd

    rows = []
    for buf in _buffers()[0].values():
        for s in buf.steps:
            rows.append(
                {
                    "buffer": buf.name,
                    "aliases": "|".join(buf.aliases),
                    "step": s.step,
                    "pka25": s.pka25,
                    "dH_kJ_per_mol": math.nan if s.dh is None else s.dh,
                    "dCp_J_per_K_mol": s.dcp,
                    "charge_acid": s.charge_acid,
                    "charge_base": s.charge_acid - 1,
                    "mw_free": math.nan if buf.mw_free is None else buf.mw_free,
                    "forms": "|".join(f.name for f in buf.forms),
                    "useful_range": s.useful_range,
                    "notes": buf.notes,
                    "source": s.source,
                }
            )
    return pd.DataFrame(rows)


def buffer_pkas(name: str, conditions: Conditions | None = None) -> list[float]:
    """pKa values of a buffer at ``conditions``, one per step, ascending.

    Temperature by van 't Hoff with the tabulated dH and dCp; ionic strength by Davies with the
    charges of the two forms of each step, on the pH scale of ``conditions`` (glass-electrode
    activity scale by default).

    >>> [round(p, 3) for p in buffer_pkas("Tris", Conditions(temperature=37.0))]
    [7.753]
    """
    return get_buffer(name).pkas(conditions)


def _species(ph: float, pkas: Sequence[float]) -> np.ndarray:
    """Fractions of the forms that have lost 0, 1, ..., S protons (successive steps)."""
    p = np.asarray(pkas, dtype=np.float64)
    logw = np.concatenate([[0.0], np.arange(1, p.size + 1) * ph - np.cumsum(p)])
    logw -= logw.max()
    w = 10.0**logw
    out: np.ndarray = w / w.sum()
    return out


def suitable_buffers(
    ph: float,
    conditions: Conditions | None = None,
    *,
    within: float = 1.0,
    charge: str | None = None,
    min_population: float = 0.02,
) -> pd.DataFrame:
    """Buffers with a step pKa within ``within`` of ``ph`` at ``conditions``, nearest first.

    ``charge="negative"`` keeps buffers whose forms present at ``ph`` (population at least
    ``min_population``) are all neutral or negative (for a cation exchanger, whose fixed charge is
    negative), ``"positive"`` the reverse (anion exchanger). Common practice: the buffering ion
    should carry the same sign as the exchanger's fixed groups so that it does not bind.
    """
    import pandas as pd

    if charge not in (None, "negative", "positive"):
        raise ParameterError("charge", "suitable_buffers", "None, 'negative' or 'positive'", charge)
    rows = []
    for buf in _buffers()[0].values():
        pkas = buf.pkas(conditions, warn=False)
        distances = [abs(p - ph) for p in pkas]
        j = int(np.argmin(distances))
        if distances[j] > within:
            continue
        fr = _species(ph, pkas)
        charges = [buf.charge_protonated - i for i in range(buf.n_steps + 1)]
        present = [q for q, f in zip(charges, fr) if f >= min_population]
        if charge == "negative" and any(q > 0 for q in present):
            continue
        if charge == "positive" and any(q < 0 for q in present):
            continue
        step = buf.steps[j]
        rows.append(
            {
                "buffer": buf.name,
                "step": step.step,
                "pka": pkas[j],
                "distance": distances[j],
                "charge_acid": step.charge_acid,
                "charge_base": step.charge_acid - 1,
                "forms_present": "/".join(f"{q:+d}" for q in present),
                "temperature_dependence": "not tabulated"
                if step.dh is None
                else f"{-step.dh * 1000 / (8.314462618 * _LN10 * 298.15**2):+.3f} per K",
                "notes": buf.notes,
            }
        )
    frame = pd.DataFrame(rows)
    if frame.empty:
        return pd.DataFrame(
            columns=[
                "buffer",
                "step",
                "pka",
                "distance",
                "charge_acid",
                "charge_base",
                "forms_present",
                "temperature_dependence",
                "notes",
            ]
        )
    return frame.sort_values("distance", kind="stable").reset_index(drop=True)


# -- recipes --------------------------------------------------------------------------------------
@dataclass(frozen=True)
class Component:
    """One line of a recipe."""

    action: str  # "weigh", "add", "fill to"
    item: str
    amount: float
    unit: str
    moles: float = math.nan  # mol in the final volume
    note: str = ""


@dataclass(frozen=True)
class Recipe:
    """A buffer recipe and the state of the solution it makes.

    Attributes
    ----------
    buffer, ph, temperature, concentration, volume, salt, method
        What was asked (mol/L, litres, deg C).
    components
        What to weigh and add, then fill to volume.
    pkas
        pKa values at the final temperature and ionic strength (the pH scale of the conditions).
    ionic_strength
        Of the final solution, mol/L (buffer species, counter-ions, salt, H+ and OH-).
    buffer_capacity
        van Slyke beta = dC_base/dpH, mol/(L pH): ln10 ([H+] + [OH-] + C var(n)).
    fractions
        Populations of the buffer forms, most protonated first.
    warnings
        Cautions (also raised as ZwitterWarning).
    """

    buffer: str
    ph: float
    temperature: float
    concentration: float
    volume: float
    salt: float
    method: str
    components: tuple[Component, ...]
    pkas: tuple[float, ...]
    ionic_strength: float
    buffer_capacity: float
    fractions: tuple[float, ...]
    iterations: int
    warnings: tuple[str, ...] = field(default=())
    notes: str = ""
    ph_scale: str = "activity"

    def to_frame(self) -> pd.DataFrame:
        """Steps to follow, then the resulting ionic strength, buffer capacity and pKa values."""
        import pandas as pd

        rows = [
            {"action": c.action, "item": c.item, "amount": c.amount, "unit": c.unit, "note": c.note}
            for c in self.components
        ]
        rows.append(
            {
                "action": "result",
                "item": "pH",
                "amount": self.ph,
                "unit": "",
                "note": f"at {self.temperature:g} C, "
                + ("glass-electrode scale" if self.ph_scale == "activity" else "-log10 [H+]"),
            }
        )
        rows.append(
            {
                "action": "result",
                "item": "ionic strength",
                "amount": self.ionic_strength,
                "unit": "mol/L",
                "note": "buffer species, counter-ions, salt",
            }
        )
        rows.append(
            {
                "action": "result",
                "item": "buffer capacity",
                "amount": self.buffer_capacity,
                "unit": "mol/(L pH)",
                "note": "van Slyke beta",
            }
        )
        for i, p in enumerate(self.pkas, start=1):
            rows.append(
                {
                    "action": "result",
                    "item": f"pKa{i}",
                    "amount": p,
                    "unit": "",
                    "note": f"at {self.temperature:g} C and I = {self.ionic_strength:.3g} M",
                }
            )
        return pd.DataFrame(rows)


def _positive(value: object, parameter: str, where: str, allowed: str = "a number > 0") -> float:
    if isinstance(value, bool) or not isinstance(value, (int, float, np.integer, np.floating)):
        raise ParameterError(parameter, where, allowed, value)
    v = float(value)
    if not math.isfinite(v) or v <= 0:
        raise ParameterError(parameter, where, allowed, value)
    return v


@dataclass
class _State:
    pkas: list[float]
    fractions: np.ndarray
    nbar: float
    h: float  # [H+], mol/L
    oh: float  # [OH-], mol/L
    var_n: float


def _state(buf: Buffer, ph: float, c: Conditions, ionic: float) -> _State:
    pk = buf.pkas_at(c.temperature, ionic, c.ph_scale)
    fr = _species(ph, pk)
    n = buf.n_steps - np.arange(buf.n_steps + 1)  # protons held by each form
    nbar = float(fr @ n)
    var_n = float(fr @ (n - nbar) ** 2)
    log_gh = davies_log_gamma(1, ionic, c.temperature)
    kw = pkw(c.temperature)
    if c.ph_scale == "activity":
        h = 10.0 ** (-ph - log_gh)
        oh = 10.0 ** (ph - kw - log_gh)
    else:
        h = 10.0**-ph
        oh = 10.0 ** (ph - kw - 2 * log_gh)
    return _State(pk, fr, nbar, h, oh, var_n)


def _ionic_strength(
    buf: Buffer, conc: float, st: _State, counter: float, background: float
) -> float:
    """I = 1/2 sum c z^2: buffer forms, counter-ions (sum c z^2 given), H+, OH-, other solutes."""
    charges = buf.charge_protonated - np.arange(buf.n_steps + 1)
    species = conc * float(st.fractions @ charges**2)
    return 0.5 * (species + counter + st.h + st.oh) + background


def _counter_sq(forms: Sequence[tuple[BufferForm, float]], buf: Buffer) -> tuple[float, float]:
    """(sum c z^2 of the counter-ions, their net charge in mol/L) of forms weighed (mol units/L)."""
    sq = 0.0
    net = 0.0
    for f, units in forms:
        q = buf.charge_of(f.protons_per_unit)  # charge of one buffer unit in this form
        zc = f.counterion_charge
        ions = abs(q) * units / zc
        sq += ions * zc * zc
        net -= q * units
    return sq, net


def _choose_pair(buf: Buffer, target: float) -> tuple[BufferForm, BufferForm] | None:
    """Two forms whose protons per unit bracket ``target``, same counter-ion family preferred."""
    best: tuple[float, BufferForm, BufferForm] | None = None
    forms = [f for f in buf.forms if f.family != "NH4"]
    for a in forms:
        for b in forms:
            pa, pb = a.protons_per_unit, b.protons_per_unit
            if not pa < pb or not pa - 1e-9 <= target <= pb + 1e-9:
                continue
            fam = {a.family, b.family} - {""}
            score = (pb - pa) * 10.0  # adjacent forms first
            score += 0.0 if len(fam) <= 1 else 5.0  # one counter-ion kind
            score += 0.0 if fam <= {"Na", "Cl"} else 1.0  # sodium / chloride salts first
            score += 0.5 * (("." in a.name) + ("." in b.name))  # anhydrous first
            if best is None or score < best[0]:
                best = (score, a, b)
    return None if best is None else (best[1], best[2])


def buffer_recipe(
    name: str,
    ph: float,
    concentration: float = 0.05,
    volume: float = 1.0,
    conditions: Conditions | None = None,
    salt: float = 0.0,
    *,
    method: str = "auto",
    stock: float = 1.0,
    forms: Sequence[str] | None = None,
    acid: str = "HCl",
    base: str = "NaOH",
) -> Recipe:
    """How to make ``volume`` litres of ``concentration`` mol/L buffer at ``ph``.

    Parameters
    ----------
    name
        Buffer name or alias (``zwitter.buffer_table()`` lists them).
    ph
        Target pH at the working temperature (what a calibrated pH meter reads there).
    concentration
        Total buffer concentration (all forms), mol/L.
    volume
        Final volume, litres.
    conditions
        Temperature (default 25 C) and pH scale. A non-zero ``ionic_strength`` is taken as the
        contribution of other solutes (not this buffer or ``salt``).
    salt
        Added NaCl, mol/L (part of the ionic strength; the amount to weigh is listed).
    method
        ``"mix"``: weigh two forms (e.g. NaH2PO4 + Na2HPO4, Tris + Tris-HCl); ``"titrate"``:
        weigh one form (``forms[0]`` or the free acid/base) and add strong acid or base stock;
        ``"auto"`` (default): mix when two sold forms bracket the target, else titrate.
    stock
        Concentration of the strong acid/base stock, mol/L.
    forms
        Forms to use (names from the table), overriding the automatic choice.
    acid, base
        Names of the monovalent strong acid and base (labels; their ions count as 1:1).

    Raises
    ------
    RecipeError
        The pH is further than 2 units from every pKa of the buffer, the chosen forms cannot
        reach it, or the stock volume would exceed the final volume.
    """
    where = "buffer_recipe"
    buf = get_buffer(name)
    if (
        isinstance(ph, bool)
        or not isinstance(ph, (int, float, np.integer, np.floating))
        or not (0.0 <= float(ph) <= 14.0)
    ):
        raise ParameterError("ph", where, "a number in [0, 14]", ph)
    ph = float(ph)
    conc = _positive(concentration, "concentration", where, "a number of mol/L > 0")
    if conc > 3.0:
        raise ParameterError("concentration", where, "a number of mol/L in (0, 3]", concentration)
    vol = _positive(volume, "volume", where, "a number of litres > 0")
    stock_c = _positive(stock, "stock", where, "a number of mol/L > 0")
    if isinstance(salt, bool) or not isinstance(salt, (int, float)) or not (0 <= salt <= 5):
        raise ParameterError("salt", where, "a number of mol/L in [0, 5]", salt)
    if method not in ("auto", "mix", "titrate"):
        raise ParameterError("method", where, "'auto', 'mix' or 'titrate'", method)
    c = conditions if conditions is not None else Conditions()
    background = c.ionic_strength
    notes: list[str] = []
    missing = [s.step for s in buf.steps if s.dh is None]
    if missing and c.temperature != 25.0:
        notes.append(
            f"no tabulated ionization enthalpy for step(s) {', '.join(map(str, missing))}: "
            "their pKa stays at the 25 C value"
        )

    # First pass at the salt's ionic strength, to judge reachability.
    st = _state(buf, ph, c, float(salt) + background)
    nearest = min(abs(p - ph) for p in st.pkas)
    if nearest > UNREACHABLE_DISTANCE:
        raise RecipeError(
            f"pH {ph:g} cannot be made with {buf.name}: its pKa values at {c.temperature:g} C are "
            f"{', '.join(f'{p:.2f}' for p in st.pkas)}, more than {UNREACHABLE_DISTANCE:g} units "
            "away (it would not buffer). Choose a buffer with a pKa near the target "
            "(zwitter.suitable_buffers)."
        )

    chosen = [buf.form(f) for f in forms] if forms else []
    if method == "mix" and forms is not None and len(chosen) != 2:
        raise ParameterError("forms", where, "two form names for method='mix'", forms)

    ionic = float(salt) + background
    plan: dict[str, Any] = {}
    iterations = 0
    for _ in range(100):
        iterations += 1
        st = _state(buf, ph, c, ionic)
        protons = conc * st.nbar + st.h - st.oh  # mol/L of protons held, relative to base + water
        target = protons / conc
        mode = method
        pair: tuple[BufferForm, BufferForm] | None = None
        if mode in ("auto", "mix"):
            if len(chosen) == 2:
                pair = (
                    (chosen[0], chosen[1])
                    if chosen[0].protons_per_unit < chosen[1].protons_per_unit
                    else (chosen[1], chosen[0])
                )
                if not pair[0].protons_per_unit - 1e-9 <= target <= pair[1].protons_per_unit + 1e-9:
                    raise RecipeError(
                        f"pH {ph:g} needs {target:.3f} protons per {buf.name} unit; "
                        f"{pair[0].name} and {pair[1].name} hold "
                        f"{pair[0].protons_per_unit:g} and {pair[1].protons_per_unit:g}: "
                        "they cannot be mixed to reach it "
                        "(add strong acid or base: method='titrate')"
                    )
            else:
                pair = _choose_pair(buf, target)
            if pair is None and mode == "mix":
                raise RecipeError(
                    f"no two forms of {buf.name} in the table bracket pH {ph:g} "
                    f"({target:.3f} protons per unit): use method='titrate'"
                )
            mode = "mix" if pair is not None else "titrate"
        if mode == "mix":
            assert pair is not None
            lo, hi = pair
            x_hi = (
                conc * (target - lo.protons_per_unit) / (hi.protons_per_unit - lo.protons_per_unit)
            )
            x_hi = min(max(x_hi, 0.0), conc)
            weighed = [(lo, conc - x_hi), (hi, x_hi)]
            strong = 0.0
        else:
            start = chosen[0] if chosen else (buf.free_form() or _nearest_form(buf, target))
            weighed = [(start, conc)]
            strong = protons - conc * start.protons_per_unit  # > 0: acid to add, < 0: base
        sq, _ = _counter_sq(weighed, buf)
        sq += abs(strong)  # Cl- from HCl or Na+ from NaOH, monovalent
        new = _ionic_strength(buf, conc, st, sq, float(salt) + background)
        plan = {"mode": mode, "weighed": weighed, "strong": strong}
        if abs(new - ionic) < 1e-9:
            ionic = new
            break
        ionic = new
    st = _state(buf, ph, c, ionic)

    comps: list[Component] = []
    for f, units in plan["weighed"]:
        if units <= 0:
            continue
        mol_formula = units / f.units * vol
        note = f"{units:.4g} mol/L of {buf.name}"
        comps.append(Component("weigh", f.name, mol_formula * f.mw, "g", mol_formula, note))
    strong = plan["strong"]
    if abs(strong) * vol > 0 and plan["mode"] == "titrate":
        ml = abs(strong) * vol / stock_c * 1000.0
        if ml > vol * 1000.0:
            raise RecipeError(
                f"the recipe needs {ml:.0f} mL of {stock_c:g} M {acid if strong > 0 else base}, "
                f"more than the final volume ({vol * 1000:g} mL): use a more concentrated stock"
            )
        what = acid if strong > 0 else base
        comps.append(
            Component(
                "add",
                f"{stock_c:g} M {what}",
                ml,
                "mL",
                abs(strong) * vol,
                "add slowly while stirring; adjust to the target pH with the meter at the "
                "working temperature",
            )
        )
    if salt:
        comps.append(Component("weigh", "NaCl", salt * vol * NACL_MW, "g", salt * vol))
    comps.append(Component("fill to", "water", vol * 1000.0, "mL", note="then check the pH"))

    cautions = list(notes)
    if ionic > 0.5:
        cautions.append(
            f"the ionic strength of this buffer ({ionic:.2f} M) is beyond the range of the Davies "
            "equation (about 0.5 M): the pH estimate is rough"
        )
    dist = min(abs(p - ph) for p in st.pkas)
    if dist > WARN_DISTANCE:
        cautions.append(
            f"pH {ph:g} is {dist:.2f} units from the nearest pKa of {buf.name} at "
            f"{c.temperature:g} C: weak buffering (choose a buffer with a pKa within 1 unit)"
        )
    for msg in cautions:
        warnings.warn(f"{buf.name} recipe: {msg}", ZwitterWarning, stacklevel=2)
    beta = _LN10 * (st.h + st.oh + conc * st.var_n)
    return Recipe(
        buffer=buf.name,
        ph=ph,
        temperature=c.temperature,
        concentration=conc,
        volume=vol,
        salt=float(salt),
        method=plan["mode"],
        components=tuple(comps),
        pkas=tuple(st.pkas),
        ionic_strength=ionic,
        buffer_capacity=beta,
        fractions=tuple(float(x) for x in st.fractions),
        iterations=iterations,
        warnings=tuple(cautions),
        notes=buf.notes,
        ph_scale=c.ph_scale,
    )


def _nearest_form(buf: Buffer, target: float) -> BufferForm:
    forms = [f for f in buf.forms if f.family != "NH4"] or list(buf.forms)
    return min(forms, key=lambda f: (abs(f.protons_per_unit - target), "." in f.name))


def mixture_ph(
    name: str,
    forms: Mapping[str, float],
    *,
    acid: float = 0.0,
    base: float = 0.0,
    conditions: Conditions | None = None,
    salt: float = 0.0,
) -> float:
    """pH of a solution made from forms of one buffer (mol/L of formula units) plus strong acid
    and base (mol/L, monovalent), solved with the ionic strength self-consistently.

    >>> round(mixture_ph("phosphate", {"NaH2PO4": 0.05, "Na2HPO4": 0.05}), 2)
    6.82
    """
    buf = get_buffer(name)
    c = conditions if conditions is not None else Conditions()
    items = [(buf.form(k), float(v) * buf.form(k).units) for k, v in forms.items()]
    conc = sum(u for _, u in items)
    if conc <= 0:
        raise ParameterError("forms", "mixture_ph", "amounts whose sum is > 0", dict(forms))
    held = sum(f.protons_per_unit * u for f, u in items) + acid - base
    sq, _ = _counter_sq(items, buf)
    sq += acid + base
    ionic = float(salt) + c.ionic_strength
    ph = 7.0
    for _ in range(100):
        lo, hi = -1.0, 15.0
        for _ in range(60):
            mid = 0.5 * (lo + hi)
            st = _state(buf, mid, c, ionic)
            if conc * st.nbar + st.h - st.oh > held:
                lo = mid  # holds too many protons: the pH must be higher
            else:
                hi = mid
        ph = 0.5 * (lo + hi)
        st = _state(buf, ph, c, ionic)
        new = _ionic_strength(buf, conc, st, sq, float(salt) + c.ionic_strength)
        if abs(new - ionic) < 1e-9:
            break
        ionic = new
    return ph
