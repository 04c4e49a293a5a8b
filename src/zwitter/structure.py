"""SMILES / RDKit molecules -> titratable sites, with the reasoning behind every pKa.

The path from a structure to its charge:

1. **Read** the SMILES (or take an RDKit ``Mol``); RDKit's own log messages are captured and become
   the text of a :class:`~zwitter.errors.StructureError`, never stray lines on stderr.
2. **Standardise**: bonds to metals are broken (a :class:`~zwitter.errors.ZwitterWarning` says
   so); the largest organic fragment is kept and the other fragments (counter-ions, solvent) are
   reported in ``removed_fragments`` (``keep_fragments=True`` keeps them all); then the molecule
   is brought to a *neutral reference protonation*: a charged atom that carries a hydrogen gives
   it up (``[NH3+]`` -> ``N``); an anionic O/N/S/C atom takes one back (``C(=O)[O-]`` ->
   ``C(=O)O``) unless it is the negative end of a charge-separated bond to a hydrogen-free
   cation (nitro, N-oxide, azide); an OH on such a cation becomes O- (protonated N-oxide ->
   N-oxide). Charges that no proton change removes (quaternary ammonium, N-alkylpyridinium) stay
   as permanent charges. The answer therefore does not depend on the protonation state drawn.
3. **Find the ionizable groups** with the SMARTS library ``data/ionizable_groups.csv``. Groups are
   tried from the highest priority down (file order within one priority); a titrating atom belongs
   to the first site that claims it, so a sulfonylurea NH is not also counted as an imide.
4. **Assign a pKa** to each site: the group's parent value, then the linear free-energy corrections
   of its reaction class (``data/lfer_reactions.csv``): Hammett sums over ring substituents, Taft
   sigma* sums with attenuation per bond over aliphatic substituents, each recorded with its source
   (``site_table()``, ``explain()``). Repeated polar substituents of one site saturate: ranked by
   size, the k-th Taft term counts f**(k - 1), f = 0.83 from Taft's sigma* of ClCH2, Cl2CH, Cl3C
   (lfer_reactions.csv row ``taft_saturation``; three arms on one amine N, three Cl on one carbon).
   A class of sites may carry an intrinsic shift (lfer_reactions.csv kind ``shift``: row
   ``aminocarboxylate_nitrogen``, the tertiary N of an iminodiacetate unit as in EDTA and NTA).
   Substituents that are themselves ionizable enter in their neutral form; their charge acts
   through the coupling of step 5, never twice.
5. **Couple the sites** (:mod:`zwitter.microstates`): charged sites interact with a strength that
   falls with the number of bonds between them (two aminocarboxylate nitrogens, as in EDTA, repel
   more: row ``coupling_aminocarboxylate``); microstates are enumerated exactly (up to 2**16),
   giving populations, the dominant form as a SMILES, macroscopic pKa values and the pI.
6. **Conditions** (``conditions=``): the temperature moves each site's pKa (van 't Hoff); an ionic
   strength acts on whole forms, not on sites: each microstate's weight takes the Davies activity
   coefficient of its net charge (:func:`zwitter.conditions.davies_species_terms`), so glycine's
   zwitterion-to-anion step moves as a 0/-1 step, EDTA's last step as a 3-/4- step. A molecule
   whose forms may carry more than :data:`WHOLE_FORM_MAX_CHARGE` charges takes it per site, as
   sequences do (Davies is meant for small ions).

Peptides drawn as SMILES: the residues of a peptide (alpha-amine and alpha-carboxyl of the termini,
the ionizable side chains of a residue whose alpha carbon carries an amide bond) have their own rows
(family ``peptide``, the values of the Thurlkill et al. 2006 peptide scale) above the generic ones;
two of them couple at the reduced strength of ``lfer_reactions.csv`` row ``coupling_peptide``.
A non-natural residue gives whatever generic groups it contains.

Known limits (documented in data/reference/README.md with measured errors): no tautomer
normalisation (a group is recognised in the tautomer drawn), ortho substituents use para constants,
no geometry (cis/trans diacids look alike; CDTA is drawn like EDTA), secondary aminocarboxylate
amines can come out too basic (EDDA's upper step by 0.6 at I = 0.1 M, where its table was measured).
"""

from __future__ import annotations

import csv
import dataclasses
import gzip
import io
import math
import re
import warnings
from collections.abc import Iterator, Sequence
from dataclasses import dataclass, field
from functools import cache
from pathlib import Path
from typing import TYPE_CHECKING, Any, NamedTuple

import numpy as np
import numpy.typing as npt

from . import equilibrium as eq
from .conditions import Conditions, davies_species_terms
from .equilibrium import DominantForm
from .errors import InputFileError, ParameterError, ScaleError, StructureError, ZwitterWarning
from .microstates import Coupling, Microstates, PairTable, coupling_matrix, default_coupling
from .molecule import Molecule
from .sites import Site, SiteSet
from .tables import Row, packaged_csv

if TYPE_CHECKING:
    import pandas as pd

__all__ = [
    "GroupType",
    "Substituent",
    "Reaction",
    "Correction",
    "StructureSite",
    "StructureForm",
    "StructureMolecule",
    "Explanation",
    "SmilesRecord",
    "group_types",
    "group_keys",
    "substituents",
    "reactions",
    "from_smiles",
    "iter_smiles_file",
]

_GROUPS_FILE = "ionizable_groups.csv"
_SUBST_FILE = "substituent_constants.csv"
_LFER_FILE = "lfer_reactions.csv"

#: Metals (alkali, alkaline earth, transition, post-transition, lanthanides, actinides).
_METALS = frozenset(
    [3, 4, 11, 12, 13, 19, 20, *range(21, 31), 31, 37, 38, *range(39, 49), 49, 50, 55, 56]
    + [*range(57, 81), 81, 82, 83, 84, *range(87, 104)]
)
_METAL_SMARTS = "[" + ",".join(f"#{z}" for z in sorted(_METALS)) + "]"
_TIMESTAMP = re.compile(r"^\[\d\d:\d\d:\d\d\]\s*")


# ---------------------------------------------------------------------------------------------
# Data tables
# ---------------------------------------------------------------------------------------------
def _rdkit() -> Any:
    from rdkit import Chem

    return Chem


def _query(smarts: str, row: Row, what: str) -> Any:
    from rdkit import rdBase

    Chem = _rdkit()
    with rdBase.BlockLogs(), rdBase.CaptureErrorLog() as cap:
        q = Chem.MolFromSmarts(smarts)
    if q is None:
        msg = " ".join(_TIMESTAMP.sub("", m).strip() for m in str(cap.messages).splitlines() if m)
        raise ScaleError(f"invalid {what} SMARTS {smarts!r}: {msg}", row.path, row.line, "smarts")
    return q


def _required_elements(query: Any) -> frozenset[int]:
    # Element numbers every match must contain (atoms of OR-queries and wildcards give 0: no need).
    return frozenset(z for z in (a.GetAtomicNum() for a in query.GetAtoms()) if z > 1)


@dataclass(frozen=True, eq=False)
class GroupType:
    """One row of ``ionizable_groups.csv``: a group type found by SMARTS."""

    key: str
    label: str
    kind: str
    smarts: str
    pkas: tuple[float, ...]
    charge: int
    priority: int
    lfer: str
    source: str
    query: Any = field(repr=False)
    titrating: tuple[int, ...]  # positions (in the query) of the titrating atoms, in step order
    claims: tuple[int, ...]  # positions of atoms the site claims without titrating them (map 9)
    requires: frozenset[int]
    line: int = 0
    family: str = ""  # "peptide": residues of a peptide (their pairwise coupling is scaled)
    screen: str = ""  # SMARTS every match contains: a molecule without it skips the row
    screen_query: Any = field(default=None, repr=False)

    def __post_init__(self) -> None:
        where = f"zwitter/data/{_GROUPS_FILE}"
        if self.family not in ("", "peptide"):
            raise ScaleError(
                f"family must be empty or peptide, got {self.family!r}", where, self.line, "family"
            )
        if self.kind not in ("acid", "base"):
            raise ScaleError(
                f"kind must be acid or base, got {self.kind!r}", where, self.line, "kind"
            )
        if len(self.titrating) != len(self.pkas):
            raise ScaleError(
                f"{len(self.titrating)} titrating atom(s) (map numbers) but {len(self.pkas)} pKa "
                "step(s): give one map number per step",
                where,
                self.line,
                "smarts",
            )
        if list(self.pkas) != sorted(self.pkas):
            raise ScaleError("pKa steps must be ascending", where, self.line, "pkas")


@dataclass(frozen=True, eq=False)
class Substituent:
    """One row of ``substituent_constants.csv``."""

    key: str
    label: str
    priority: int
    sigma_m: float | None
    sigma_p: float | None
    sigma_p_minus: float | None
    sigma_star: float | None
    source_hammett: str
    source_taft: str
    query: Any = field(repr=False)
    requires: frozenset[int]

    def hammett(self, position: int, para_constant: str) -> float | None:
        """sigma for ring position 1 (ortho), 2 (meta) or 3 (para); ortho uses the para value."""
        if position == 2:
            return self.sigma_m
        if para_constant == "sigma_p_minus" and self.sigma_p_minus is not None:
            return self.sigma_p_minus
        return self.sigma_p


@dataclass(frozen=True)
class Reaction:
    """One row of ``lfer_reactions.csv`` (hammett or taft)."""

    key: str
    kind: str
    rho: float
    d0: int
    attenuation: float
    para_constant: str
    source: str


def _opt_number(row: Row, key: str) -> float | None:
    return None if row[key] == "" else row.number(key)


def _expand_source(text: str, header: dict[str, str]) -> str:
    # The tables abbreviate their most cited sources (see each file's header).
    return re.sub(r"\b(" + "|".join(header) + r")\b", lambda m: header[m.group(1)], text)


_SOURCE_ABBREVIATIONS = {
    "HLT": "Hansch, Leo & Taft 1991 Chem. Rev. 91:165 (from memory)",
    "TAFT": "Taft, in Perrin, Dempsey & Serjeant 1981 (from memory)",
    "SIGMA_I": "sigma_I/0.45, sigma_I of Charton 1981 Prog. Phys. Org. Chem. 13:119 (from memory)",
    "PDS": "Perrin, Dempsey & Serjeant 1981 (from memory)",
}


@cache
def group_types() -> tuple[GroupType, ...]:
    """The packaged ionizable-group library, highest priority first (file order within one)."""
    rows = packaged_csv(
        _GROUPS_FILE,
        ("key", "label", "kind", "smarts", "pkas", "charge", "priority", "lfer", "source"),
    )
    out = []
    seen: set[str] = set()
    reaction_keys = set(reactions())
    for r in rows:
        if r["key"] in seen:
            raise ScaleError(f"duplicate group key {r['key']!r}", r.path, r.line, "key")
        seen.add(r["key"])
        q = _query(r["smarts"], r, "group")
        mapped = sorted(
            (a.GetAtomMapNum(), a.GetIdx()) for a in q.GetAtoms() if 0 < a.GetAtomMapNum() < 9
        )
        claims = tuple(a.GetIdx() for a in q.GetAtoms() if a.GetAtomMapNum() == 9)
        try:
            pkas = tuple(float(x) for x in r["pkas"].split(";"))
        except ValueError:
            raise ScaleError(
                f"pkas must be numbers separated by ';', got {r['pkas']!r}", r.path, r.line, "pkas"
            ) from None
        lfer = r["lfer"] or "none"
        if lfer != "none" and lfer not in reaction_keys:
            raise ScaleError(
                f"unknown reaction class {lfer!r} (not in {_LFER_FILE})", r.path, r.line, "lfer"
            )
        out.append(
            GroupType(
                r["key"],
                r["label"],
                r["kind"],
                r["smarts"],
                pkas,
                int(r.number("charge")),
                int(r.number("priority")),
                lfer,
                r["source"],
                q,
                tuple(i for _, i in mapped),
                claims,
                _required_elements(q),
                r.line,
                r["family"],
                r["screen"],
                _query(r["screen"], r, "screen") if r["screen"] else None,
            )
        )
    order = sorted(range(len(out)), key=lambda i: (-out[i].priority, i))
    return tuple(out[i] for i in order)


def group_keys() -> list[str]:
    """Keys of every group type, in file order (SiteSet.groups takes these values)."""
    return [g.key for g in sorted(group_types(), key=lambda g: g.line)]


@cache
def substituents() -> tuple[Substituent, ...]:
    """The substituent constants, highest priority first."""
    rows = packaged_csv(
        _SUBST_FILE,
        ("key", "smarts", "priority", "sigma_m", "sigma_p", "sigma_p_minus", "sigma_star"),
    )
    out = []
    for r in rows:
        q = _query(r["smarts"], r, "substituent")
        out.append(
            Substituent(
                r["key"],
                r["label"],
                int(r.number("priority")),
                _opt_number(r, "sigma_m"),
                _opt_number(r, "sigma_p"),
                _opt_number(r, "sigma_p_minus"),
                _opt_number(r, "sigma_star"),
                _expand_source(r["source_hammett"], _SOURCE_ABBREVIATIONS),
                _expand_source(r["source_taft"], _SOURCE_ABBREVIATIONS),
                q,
                _required_elements(q),
            )
        )
    out.sort(key=lambda s: -s.priority)
    return tuple(out)


@cache
def reactions() -> dict[str, Reaction]:
    """Hammett and Taft reaction classes by key."""
    out = {}
    for r in packaged_csv(_LFER_FILE, ("key", "kind", "rho", "d0", "attenuation", "para_constant")):
        if r["kind"] not in ("hammett", "taft", "coupling", "saturation", "shift"):
            raise ScaleError(f"unknown kind {r['kind']!r}", r.path, r.line, "kind")
        if r["kind"] in ("coupling", "saturation", "shift"):
            continue
        out[r["key"]] = Reaction(
            r["key"],
            r["kind"],
            r.number("rho"),
            int(r.number("d0")) if r["d0"] else 0,
            r.number("attenuation") if r["attenuation"] else 1.0,
            r["para_constant"] or "sigma_p",
            _expand_source(r["source"], _SOURCE_ABBREVIATIONS),
        )
    return out


@cache
def taft_saturation() -> tuple[float, str]:
    """(f, source) of row ``taft_saturation``: the k-th polar term of one site counts f**(k - 1).

    1.0 (no saturation) when the row is absent.
    """
    for r in packaged_csv(_LFER_FILE, ("key", "kind", "rho")):
        if r["kind"] == "saturation":
            f = r.number("rho")
            if not 0.0 < f <= 1.0:
                raise ScaleError(
                    f"saturation factor must be in (0, 1], got {f:g}", r.path, r.line, "rho"
                )
            return f, _expand_source(r["source"], _SOURCE_ABBREVIATIONS)
    return 1.0, ""


@cache
def intrinsic_shifts() -> tuple[tuple[str, float, str, str], ...]:
    """(key, shift, SMARTS, source) of the ``shift`` rows of ``lfer_reactions.csv``.

    A shift row adds its rho (pK units) to the intrinsic pKa of every site whose titrating atom is
    the first atom of a match of its SMARTS (row ``aminocarboxylate_nitrogen``).
    """
    out = []
    for r in packaged_csv(_LFER_FILE, ("key", "kind", "rho")):
        if r["kind"] == "shift":
            if not r["smarts"]:
                raise ScaleError("a shift row needs a smarts", r.path, r.line, "smarts")
            source = _expand_source(r["source"], _SOURCE_ABBREVIATIONS)
            out.append((r["key"], r.number("rho"), r["smarts"], source))
    return tuple(out)


@cache
def _class_query(smarts: str) -> Any:
    """Compiled SMARTS of a coupling class (lfer_reactions.csv column smarts)."""
    rows = packaged_csv(_LFER_FILE, ("key", "kind", "rho"))
    row = next((r for r in rows if r["smarts"] == smarts), Row({}, _LFER_FILE, 0))
    return _query(smarts, row, "coupling-class")


_ELEMENT_TOKEN = re.compile(r"^\[(#\d+|Cl|Br|[A-Z][a-z]?|[a-z])")


def _anchor_smarts(group: GroupType) -> str:
    """A coarse single-atom query every titrating atom of ``group`` matches.

    Built from the primitives of the titrating atom's own query before any recursive part:
    element (aromatic or not), whether it carries hydrogens, its charge sign. A molecule with no
    such atom cannot contain the group, so the group's full pattern is not tried.
    """
    text = group.query.GetAtomWithIdx(group.titrating[0]).GetSmarts()
    head = text.split(";$", 1)[0].split("&$", 1)[0]
    m = _ELEMENT_TOKEN.match(head)
    if m is None:
        return "[*]"
    parts = [m.group(1)]
    rest = head[m.end() :]
    if re.search(r"H0(?!\d)", rest):
        parts.append("H0")
    elif re.search(r"H[1-9]", rest):
        parts.append("!H0")
    if "+0" in rest:
        parts.append("+0")
    elif re.search(r"-(?!\d*\])|-\d", rest) or rest.endswith("-") or "-:" in rest:
        parts.append("-")
    return "[" + ";".join(parts) + "]"


@cache
def _anchors() -> tuple[tuple[Any, frozenset[str]], ...]:
    """Groups bundled by a coarse query of their titrating atom (see :func:`_anchor_smarts`)."""
    Chem = _rdkit()
    bundles: dict[str, set[str]] = {}
    for g in group_types():
        bundles.setdefault(_anchor_smarts(g), set()).add(g.key)
    return tuple((Chem.MolFromSmarts(k), frozenset(v)) for k, v in bundles.items())


@cache
def _compiled() -> tuple[Any, Any, Any]:
    Chem = _rdkit()
    params = Chem.SubstructMatchParameters()
    params.uniquify = False
    params.maxMatches = 100000
    metal = Chem.MolFromSmarts(_METAL_SMARTS)
    charged = Chem.MolFromSmarts("[!+0]")
    return params, metal, charged


# ---------------------------------------------------------------------------------------------
# Reading and standardising
# ---------------------------------------------------------------------------------------------
def _messages(cap: Any) -> str:
    lines = [_TIMESTAMP.sub("", m).strip() for m in str(cap.messages).splitlines()]
    seen: list[str] = []
    for line in lines:
        if line and line not in seen and not set(line) <= set("^~ "):
            seen.append(line)
    return "; ".join(seen)


def _parse(item: Any, name: str) -> tuple[Any, str]:
    from rdkit import rdBase

    Chem = _rdkit()
    if isinstance(item, str):
        text = item.strip()
        if not text:
            raise StructureError(f"empty SMILES ({item!r}): give a structure", record=name)
        with rdBase.BlockLogs():
            mol = Chem.MolFromSmiles(text)
        if mol is None:
            # Read again to capture RDKit's reason (capturing its log costs about 20 us a
            # molecule, a few percent of the whole path: only for the ones that fail).
            with rdBase.BlockLogs(), rdBase.CaptureErrorLog() as cap:
                Chem.MolFromSmiles(text)
            detail = _messages(cap) or "RDKit could not read it"
            raise StructureError(f"cannot read SMILES: {detail}", smiles=text, record=name)
        return mol, text
    if isinstance(item, Chem.Mol):
        mol = Chem.Mol(item)
        with rdBase.BlockLogs(), rdBase.CaptureErrorLog() as cap:
            problem = Chem.SanitizeMol(mol, catchErrors=True)
        if problem != Chem.SanitizeFlags.SANITIZE_NONE:
            detail = _messages(cap) or str(problem)
            raise StructureError(f"the molecule does not sanitize: {detail}", record=name)
        with rdBase.BlockLogs():
            text = Chem.MolToSmiles(mol)
        return mol, text
    raise ParameterError(
        "smiles_or_mol",
        "from_smiles",
        "a SMILES string or an RDKit Mol",
        f"<{type(item).__name__}>",
    )


def _set_charge(atom: Any, charge: int, hydrogens: int) -> None:
    atom.SetFormalCharge(int(charge))
    atom.SetNumExplicitHs(int(max(0, hydrogens)))
    atom.SetNoImplicit(True)


@cache
def _neutralise_queries() -> tuple[Any, Any]:
    Chem = _rdkit()
    return (
        Chem.MolFromSmarts("[!+0]"),
        Chem.MolFromSmarts("[O,S;H1;X1;+0]-[#7+;H0]"),
    )


def _neutralise(mol: Any) -> Any:
    """Neutral reference protonation (rules in the module docstring); returns a new Mol."""
    Chem = _rdkit()
    charged_q, oh_on_cation_q = _neutralise_queries()
    rw = Chem.RWMol(mol)
    charged = [m[0] for m in rw.GetSubstructMatches(charged_q)]
    changed = False
    # 1. cations that carry hydrogens give them up (N, O, P, S; aromatic [nH+] included)
    for i in charged:
        atom = rw.GetAtomWithIdx(i)
        q = atom.GetFormalCharge()
        h = atom.GetTotalNumHs()
        if q > 0 and h > 0 and atom.GetAtomicNum() in (7, 8, 15, 16, 33, 34):
            n = min(q, h)
            _set_charge(atom, q - n, h - n)
            changed = True
    # 2. anions take protons back unless bonded to a (now) positive atom: a charge-separated bond
    for i in charged:
        atom = rw.GetAtomWithIdx(i)
        q = atom.GetFormalCharge()
        if q < 0 and atom.GetAtomicNum() in (6, 7, 8, 16, 34):
            if any(nb.GetFormalCharge() > 0 for nb in atom.GetNeighbors()):
                continue
            _set_charge(atom, 0, atom.GetTotalNumHs() - q)
            changed = True
    # 3. an OH (or SH) on a hydrogen-free N+ is the protonated form of an N-oxide-like group
    for m in rw.GetSubstructMatches(oh_on_cation_q):
        _set_charge(rw.GetAtomWithIdx(m[0]), -1, 0)
        changed = True
    if not changed:
        return mol
    out = rw.GetMol()
    Chem.SanitizeMol(out)
    return out


def _standardise(
    mol: Any, text: str, name: str, keep_fragments: bool, elements: frozenset[int] | None = None
) -> tuple[Any, tuple[str, ...], list[str]]:
    from rdkit import rdBase

    Chem = _rdkit()
    params, metal_q, charged_q = _compiled()
    notes: list[str] = []
    removed: list[str] = []
    has_metal = bool((elements if elements is not None else _elements(mol)) & _METALS)
    if has_metal:
        metals = sorted({a.GetSymbol() for a in mol.GetAtoms() if a.GetAtomicNum() in _METALS})
        bonded = any(a.GetAtomicNum() in _METALS and a.GetDegree() > 0 for a in mol.GetAtoms())
        if bonded:
            from rdkit.Chem.MolStandardize import rdMolStandardize

            with rdBase.BlockLogs():
                parted = rdMolStandardize.MetalDisconnector().Disconnect(mol)
            if parted.GetNumBonds() < mol.GetNumBonds():
                notes.append(
                    f"bonds to metal atom(s) {', '.join(metals)} were broken and the metal "
                    "treated as an ion: metal binding is not modelled"
                )
            mol = parted
    several = "." in text or has_metal  # a metal disconnection can split the molecule
    frags = Chem.GetMolFrags(mol, asMols=True) if several else (mol,)
    if len(frags) > 1 and not keep_fragments:

        def score(f: Any) -> tuple[int, int]:
            organic = any(a.GetAtomicNum() == 6 for a in f.GetAtoms())
            return (int(organic), f.GetNumHeavyAtoms())

        best = max(range(len(frags)), key=lambda i: (score(frags[i]), -i))
        with rdBase.BlockLogs():
            removed = [Chem.MolToSmiles(f) for i, f in enumerate(frags) if i != best]
        mol = frags[best]
        if not any(a.GetAtomicNum() == 6 for a in mol.GetAtoms()):
            notes.append("no fragment contains carbon: the largest fragment was kept")
    # A metal still bonded after the disconnection (organometallic): warn. A free ion kept with
    # keep_fragments is just a permanent charge.
    kept_metals = (
        sorted(
            {
                a.GetSymbol()
                for a in mol.GetAtoms()
                if a.GetAtomicNum() in _METALS and a.GetDegree() > 0
            }
        )
        if has_metal and mol.HasSubstructMatch(metal_q)
        else []
    )
    if kept_metals:
        notes.append(
            f"metal atom(s) {', '.join(kept_metals)} in the molecule: treated as fixed charges; "
            "metal binding is not modelled"
        )
    # SMILES write charges inside brackets: no '+' or '-' in the text means no charged atom.
    maybe_charged = "+" in text or "-" in text or has_metal
    if maybe_charged and mol.HasSubstructMatch(charged_q):
        try:
            with rdBase.BlockLogs(), rdBase.CaptureErrorLog() as cap:
                mol = _neutralise(mol)
        except Exception as exc:  # RDKit raises its own types (e.g. AtomValenceException)
            raise StructureError(
                f"cannot bring the structure to its neutral reference protonation: "
                f"{_messages(cap) or exc}",
                smiles=text,
                record=name,
            ) from None
    return mol, tuple(removed), notes


_FORMULA_ELEMENT = re.compile(r"[A-Z][a-z]?")


@cache
def _atomic_number(symbol: str) -> int:
    return int(_rdkit().GetPeriodicTable().GetAtomicNumber(symbol))


def _elements(mol: Any) -> frozenset[int]:
    """Element numbers present (from the molecular formula: one C++ call, no atom loop)."""
    from rdkit.Chem import rdMolDescriptors

    formula = rdMolDescriptors.CalcMolFormula(mol)
    return frozenset(_atomic_number(sym) for sym in _FORMULA_ELEMENT.findall(formula))


# ---------------------------------------------------------------------------------------------
# Sites and their pKa values
# ---------------------------------------------------------------------------------------------
@dataclass(frozen=True)
class Correction:
    """One term added to a site's base pKa, with the reasoning and its source."""

    kind: str  # "hammett", "taft" or "shift"
    substituent: str
    atom: int
    detail: str
    value: float
    source: str


@dataclass(frozen=True)
class StructureSite:
    """A titratable site found in a structure."""

    group: GroupType
    atoms: tuple[int, ...]  # titrating atoms, in step order
    match: tuple[int, ...]  # every atom of the group's pattern
    base: tuple[float, ...]
    corrections: tuple[Correction, ...]
    ref_lost: int  # protons lost in the neutral reference structure (0 acids, 1 bases, 1 N-oxides)
    symbol: str

    @property
    def pkas(self) -> tuple[float, ...]:
        shift = sum(c.value for c in self.corrections)
        return tuple(p + shift for p in self.base)

    @property
    def label(self) -> str:
        return f"{self.group.label} ({self.symbol}{self.atoms[0]})"


def _detect(
    mol: Any, elements: frozenset[int]
) -> list[tuple[GroupType, tuple[int, ...], tuple[int, ...]]]:
    params = _compiled()[0]
    present: set[str] = set()
    for anchor, keys in _anchors():
        if mol.HasSubstructMatch(anchor):
            present |= keys
    claimed: set[int] = set()
    found = []
    screened: dict[str, bool] = {}  # screen SMARTS -> does the molecule contain it
    for g in group_types():
        if g.key not in present or not g.requires <= elements:
            continue
        if g.screen_query is not None:
            ok = screened.get(g.screen)
            if ok is None:
                ok = screened[g.screen] = bool(mol.HasSubstructMatch(g.screen_query))
            if not ok:
                continue
        matches = mol.GetSubstructMatches(g.query, params)
        if not matches:
            continue
        seen: set[tuple[int, ...]] = set()
        for m in matches:
            atoms = tuple(m[i] for i in g.titrating)
            key = tuple(sorted(atoms))
            extra = [m[i] for i in g.claims]
            if key in seen or any(a in claimed for a in atoms) or any(a in claimed for a in extra):
                continue
            seen.add(key)
            claimed.update(atoms)
            claimed.update(extra)
            found.append((g, atoms, tuple(m)))
    found.sort(key=lambda x: x[1][0])
    return found


class _SubstituentIndex:
    """Every substituent match by attachment atom, highest priority first.

    A substituent is seen from the atom it hangs on (the ring atom, or the chain atom towards the
    group): ``lookup(x, via)`` returns the first row with a match that starts at ``x`` and does not
    contain ``via``. So ring-O-CH3 is a methoxy seen from the ring and an aryloxy seen from the CH3.
    """

    def __init__(self, mol: Any, elements: frozenset[int]) -> None:
        self.by_atom: dict[int, list[tuple[Substituent, frozenset[int]]]] = {}
        for sub in substituents():
            if sub.key == "other" or not sub.requires <= elements:
                continue
            for m in mol.GetSubstructMatches(sub.query):
                self.by_atom.setdefault(m[0], []).append((sub, frozenset(m)))

    def lookup(self, x: int, via: int) -> tuple[Substituent, frozenset[int]] | None:
        for sub, atoms in self.by_atom.get(x, ()):
            if via not in atoms:
                return sub, atoms
        return None


def _count_paths(mol: Any, dm: npt.NDArray[np.float64], src: int, dst: int, cap: int) -> int:
    """Number of shortest bond paths from src to dst (capped)."""
    d = dm[src, dst]
    if not math.isfinite(d) or d > 60:
        return 0
    memo: dict[int, int] = {}

    def count(a: int) -> int:
        if a == dst:
            return 1
        if a in memo:
            return memo[a]
        total = 0
        da = dm[a, dst]
        for nb in mol.GetAtomWithIdx(a).GetNeighbors():
            j = nb.GetIdx()
            if dm[j, dst] == da - 1:
                total += count(j)
                if total >= cap:
                    break
        memo[a] = min(total, cap)
        return memo[a]

    return count(src)


def _hammett(
    mol: Any, site_match: frozenset[int], ipso: int, reaction: Reaction, subs: _SubstituentIndex
) -> list[Correction]:
    ring = None
    for r in mol.GetRingInfo().AtomRings():
        if len(r) == 6 and ipso in r and all(mol.GetAtomWithIdx(a).GetIsAromatic() for a in r):
            ring = r
            break
    if ring is None:
        return []
    i0 = ring.index(ipso)
    ring_set = set(ring)
    names = {1: "ortho", 2: "meta", 3: "para"}
    out = []
    for pos_i, a in enumerate(ring):
        k = min((pos_i - i0) % 6, (i0 - pos_i) % 6)
        if k == 0:
            continue
        for nb in mol.GetAtomWithIdx(a).GetNeighbors():
            j = nb.GetIdx()
            if j in ring_set or j in site_match:
                continue
            found = subs.lookup(j, a)
            if found is None:
                continue
            sub = found[0]
            sigma = sub.hammett(k, reaction.para_constant)
            if sigma is None or sigma == 0.0:
                continue
            which = (
                "sigma_m"
                if k == 2
                else (
                    "sigma_p-"
                    if reaction.para_constant == "sigma_p_minus" and sub.sigma_p_minus is not None
                    else "sigma_p"
                )
            )
            note = " (ortho: para constant used)" if k == 1 else ""
            out.append(
                Correction(
                    "hammett",
                    sub.key,
                    j,
                    f"{names[k]} {sub.label}: -rho x {which} = -{reaction.rho:g} x {sigma:g}{note}",
                    -reaction.rho * sigma,
                    f"sigma: {sub.source_hammett}; rho: {reaction.source}",
                )
            )
    return out


def _taft(
    mol: Any,
    dm: npt.NDArray[np.float64],
    site_match: frozenset[int],
    atom: int,
    reaction: Reaction,
    subs: _SubstituentIndex,
) -> list[Correction]:
    """Taft corrections: substituents X reached through the chain, nearest first.

    X counts when it is ``d0 <= d <= d0 + 3`` bonds from the titrating atom and is reached from a
    chain atom (not through a substituent already counted: the ring atoms beyond a phenyl, the O of
    a carboxy). Substituents without sigma* (alkyl, vinyl) are part of the chain. Repeated terms
    saturate (:func:`_saturate`).
    """
    out = []
    lo, hi = reaction.d0, reaction.d0 + 3
    row = dm[atom]
    candidates = [int(a) for a in np.flatnonzero((row >= lo) & (row <= hi)) if a not in site_match]
    candidates.sort(key=lambda a: (row[a], a))
    blocked: set[int] = set()
    for x in candidates:
        d = row[x]
        vias = [
            nb.GetIdx() for nb in mol.GetAtomWithIdx(x).GetNeighbors() if row[nb.GetIdx()] == d - 1
        ]
        if not vias or all(v in blocked for v in vias):
            continue
        found = None
        for v in vias:
            if v not in blocked:
                found = subs.lookup(x, v)
                if found is not None:
                    break
        if found is None or found[0].sigma_star is None:
            continue
        sub, atoms = found
        blocked.update(atoms)
        sigma_star = float(sub.sigma_star or 0.0)
        paths = _count_paths(mol, dm, atom, x, 3)
        factor = reaction.attenuation ** (d - reaction.d0) * paths
        value = -reaction.rho * sigma_star * factor
        where = f"{int(d)} bonds away" + (f", {paths} paths" if paths > 1 else "")
        out.append(
            Correction(
                "taft",
                sub.key,
                x,
                f"{sub.label} {where}: -rho* x sigma* x {reaction.attenuation:g}^"
                f"{int(d - reaction.d0)}{' x ' + str(paths) if paths > 1 else ''}"
                f" = -{reaction.rho:g} x {sigma_star:g} x {factor:.3g}",
                value,
                f"sigma*: {sub.source_taft}; rho*: {reaction.source}",
            )
        )
    return _saturate(out)


def _saturate(terms: list[Correction]) -> list[Correction]:
    """Repeated polar substituents of one site count less than additively.

    Taft's sigma* of ClCH2, Cl2CH and Cl3C (1.05, 1.94, 2.65) grow by 0.85 and then 0.68 of the
    first chlorine's value: each added electron-withdrawing group pulls on a centre the others have
    already made poorer in electrons. Terms of one sign are ranked by size; the k-th is multiplied
    by f**(k - 1) (f: lfer_reactions.csv row taft_saturation, fitted to those sigma* values).
    """
    f, source = taft_saturation()
    if f == 1.0 or len(terms) < 2:
        return terms
    out = list(terms)
    for sign in (1.0, -1.0):
        same = [i for i, c in enumerate(terms) if c.value * sign > 0]
        same.sort(key=lambda i: -abs(terms[i].value))  # stable: nearest first among equals
        for rank, i in enumerate(same[1:], start=1):
            c = terms[i]
            # Saturation: the k-th term times f**(k - 1) (Taft 1956 sigma* of Cl-substituted
            # methyls, lfer_reactions.csv row taft_saturation).
            out[i] = Correction(
                c.kind,
                c.substituent,
                c.atom,
                f"{c.detail}; polar term no. {rank + 1} of this site: x {f:g}^{rank}",
                c.value * f**rank,
                f"{c.source}; saturation: {source}",
            )
    return out


def _ipso(mol: Any, group: GroupType, match: tuple[int, ...]) -> int | None:
    for a in match:
        at = mol.GetAtomWithIdx(a)
        if at.GetIsAromatic() and at.IsInRingSize(6):
            return int(a)
    return None


@dataclass
class _Analysis:
    mol: Any
    sites: list[StructureSite]
    dm: npt.NDArray[np.float64] | None
    permanent: list[tuple[int, int]]  # (atom, charge) of charges that interact with sites
    permanent_total: int
    charged: list[tuple[int, int]]  # (atom, formal charge) of every charged atom


def _analyse(mol: Any, elements: frozenset[int] | None = None) -> _Analysis:
    Chem = _rdkit()
    if elements is None:
        elements = _elements(mol)
    raw = _detect(mol, elements)
    charged_atoms = [
        (m[0], mol.GetAtomWithIdx(m[0]).GetFormalCharge())
        for m in mol.GetSubstructMatches(_compiled()[2])
    ]
    titrating = {a for _, atoms, _ in raw for a in atoms}
    permanent_all = [(i, q) for i, q in charged_atoms if i not in titrating]
    permanent_total = sum(q for _, q in permanent_all)
    # Charge-separated pairs (nitro, N-oxide drawn N+-O- with the O a site, azide) are dipoles:
    # their effect is in the substituent constants, so they do not interact as charges.
    charge_of = dict(charged_atoms)
    permanent = []
    for i, q in permanent_all:
        atom = mol.GetAtomWithIdx(i)
        if any(charge_of.get(nb.GetIdx(), 0) * q < 0 for nb in atom.GetNeighbors()):
            continue
        permanent.append((i, q))
    needs_lfer = any(g.lfer != "none" for g, _, _ in raw)
    needs_dm = (
        len(raw) > 1
        or bool(permanent and raw)
        or any(reactions()[g.lfer].kind == "taft" for g, _, _ in raw if g.lfer != "none")
    )
    dm = np.asarray(Chem.GetDistanceMatrix(mol), dtype=np.float64) if needs_dm else None
    if dm is not None:
        dm[dm > 1e6] = np.inf  # disconnected fragments
    subs = _SubstituentIndex(mol, elements) if needs_lfer else None
    shifts = {
        row: {m[0] for m in mol.GetSubstructMatches(_class_query(row[2]))}
        for row in (intrinsic_shifts() if raw else ())
    }
    sites = []
    for g, atoms, match in raw:
        corrections: list[Correction] = []
        if g.lfer != "none":
            reaction = reactions()[g.lfer]
            mset = frozenset(match)
            assert subs is not None
            if reaction.kind == "hammett":
                ipso = _ipso(mol, g, match)
                if ipso is not None:
                    corrections = _hammett(mol, mset, ipso, reaction, subs)
            elif dm is not None:
                corrections = _taft(mol, dm, mset, atoms[0], reaction, subs)
        for (key, shift, _, source), members in shifts.items():
            if atoms[0] in members:
                # An intrinsic shift of a class of sites (lfer_reactions.csv, kind shift; row
                # aminocarboxylate_nitrogen is fitted on EDTA and NTA at I = 0.1 M).
                detail = f"site of class {key}: intrinsic shift {shift:+g}"
                corrections.append(Correction("shift", key, atoms[0], detail, shift, source))
        ref_charge = sum(mol.GetAtomWithIdx(a).GetFormalCharge() for a in atoms)
        ref_lost = g.charge - ref_charge
        symbol = mol.GetAtomWithIdx(atoms[0]).GetSymbol()
        sites.append(StructureSite(g, atoms, match, g.pkas, tuple(corrections), ref_lost, symbol))
    return _Analysis(mol, sites, dm, permanent, permanent_total, charged_atoms)


def _site_set(an: _Analysis, notes: Sequence[str]) -> SiteSet:
    items = [
        Site(
            s.label,
            s.pkas,
            s.group.charge,
            1.0,
            s.group.source,
            s.group.key,
            (f"{s.symbol}{s.atoms[0]}",),
            s.atoms,
        )
        for s in an.sites
    ]
    if an.permanent_total:
        titrating = {a for s in an.sites for a in s.atoms}
        atoms = tuple(i for i, _ in an.charged if i not in titrating)
        items.append(
            Site(
                "permanent charge",
                (),
                an.permanent_total,
                1.0,
                "formal charges of the neutral reference structure",
                "permanent",
                (),
                atoms,
            )
        )
    return SiteSet.from_sites(items, notes)


#: The largest net charge (either sign) a molecule's forms may carry for the ionic strength to act
#: on whole forms. The Davies equation is an extension of Debye-Hueckel for small ions (it is
#: tabulated and tested for charges up to about 4: EDTA's Y4-, ATP4-); a form carrying many more
#: charges is a polyelectrolyte (a peptide or a polyacid drawn as SMILES), whose activity is far
#: from -A z**2 F(I) (at 0.1 M a form of charge -16 would get log10 g = -27). Such molecules take
#: the salt per site, as sequences do (common practice for proteins; the limit is a rule of thumb).
WHOLE_FORM_MAX_CHARGE = 4


def _salt_on_whole_forms(sites: SiteSet, conditions: Any) -> bool:
    """Whether the ionic strength of ``conditions`` acts on whole forms (else per site)."""
    if not isinstance(conditions, Conditions) or conditions.ionic_strength <= 0:
        return False
    low, high = sites.charge_bounds()
    return bool(max(abs(float(low)), abs(float(high))) <= WHOLE_FORM_MAX_CHARGE + 1e-9)


def _activity_terms(conditions: Any) -> tuple[float, float]:
    """(a, h) of :func:`zwitter.conditions.davies_species_terms` for ``conditions``."""
    return davies_species_terms(
        conditions.ionic_strength, conditions.temperature, conditions.ph_scale
    )


def _species_of_sites(an: _Analysis) -> tuple[list[int] | None, list[float] | None]:
    """Species (disconnected fragment) of each site and the permanent charge of each species.

    (None, None) for one fragment: the sites and all permanent charges form one species.
    """
    frags = _rdkit().GetMolFrags(an.mol)
    if len(frags) < 2:
        return None, None
    frag_of = {a: f for f, atoms in enumerate(frags) for a in atoms}
    titrating = {a for s in an.sites for a in s.atoms}
    charges = [0.0] * len(frags)
    for atom, q in an.charged:
        if atom not in titrating:
            charges[frag_of[atom]] += q
    return [frag_of[s.atoms[0]] for s in an.sites], charges


def _coupling_inputs(an: _Analysis, coupling: Coupling) -> tuple[PairTable, PairTable]:
    """Site-site (K x K) and site-permanent-charge (K x P) coupling tables."""
    k = len(an.sites)
    dm = an.dm
    p = len(an.permanent)
    if dm is None or (k < 2 and not p):
        return PairTable.zeros(k), PairTable.zeros(k, p)
    # distance between sites: closest pair of titrating atoms; paths counted from that pair
    far = coupling.d0 + 12  # beyond this w < 1% of its value at d0: one path is enough
    dist = np.full((k, k), np.inf)
    paths = np.ones((k, k))
    for i in range(k):
        ai = np.array(an.sites[i].atoms)
        for j in range(i + 1, k):
            aj = np.array(an.sites[j].atoms)
            sub = dm[np.ix_(ai, aj)]
            flat = int(np.argmin(sub))
            d = float(sub.flat[flat])
            dist[i, j] = dist[j, i] = d
            if math.isfinite(d) and d <= far:
                src, dst = int(ai[flat // aj.size]), int(aj[flat % aj.size])
                paths[i, j] = paths[j, i] = max(1, _count_paths(an.mol, dm, src, dst, 3))
    pairs = coupling_matrix(dist, paths, coupling)
    if coupling.peptide != 1.0:
        # Two residues of a peptide interact more weakly than small-molecule sites at the same
        # bond distance (lfer_reactions.csv row coupling_peptide, fitted on peptide data).
        pep = np.array([s.group.family == "peptide" for s in an.sites])
        if pep.sum() > 1:
            scale = np.where(np.outer(pep, pep), coupling.peptide, 1.0)
            pairs = PairTable(pairs.anion * scale, pairs.cation * scale, pairs.opposite * scale)
    if coupling.aminocarboxylate != 1.0 and coupling.aminocarboxylate_smarts:
        # Two ammonium N that each carry a carboxylate arm (EDTA-like chelators) repel more than
        # two plain ammoniums at the same bond distance (lfer_reactions.csv row
        # coupling_aminocarboxylate, fitted on EDTA and NTA at I = 0.1 M; data/reference/README.md
        # gives the reasoning).
        cations = [i for i, s in enumerate(an.sites) if s.group.charge > 0]
        if len(cations) > 1:
            query = _class_query(coupling.aminocarboxylate_smarts)
            members = {m[0] for m in an.mol.GetSubstructMatches(query)}
            chel = np.zeros(k, dtype=bool)
            chel[[i for i in cations if an.sites[i].atoms[0] in members]] = True
            if chel.sum() > 1:
                scale = np.where(np.outer(chel, chel), coupling.aminocarboxylate, 1.0)
                pairs = PairTable(pairs.anion, pairs.cation * scale, pairs.opposite)
    fdist = np.full((k, p), np.inf)
    fpaths = np.ones((k, p))
    for i in range(k):
        site_atoms = set(an.sites[i].match)
        ai = np.array(an.sites[i].atoms)
        for c, (atom, _q) in enumerate(an.permanent):
            if atom in site_atoms:
                continue  # part of the group's own pattern: in its base value
            dcol = dm[ai, atom]
            t = int(np.argmin(dcol))
            d = float(dcol[t])
            fdist[i, c] = d
            if math.isfinite(d) and d <= far:
                fpaths[i, c] = max(1, _count_paths(an.mol, dm, int(ai[t]), atom, 3))
    field = coupling_matrix(fdist, fpaths, coupling, square=False)
    return pairs, field


def _check_ph(ph: Any, where: str) -> Any:
    # Scalar fast path of equilibrium.check_ph (same rule, same error).
    if type(ph) is float or type(ph) is int:
        if eq.PH_MIN <= ph <= eq.PH_MAX:
            return float(ph)
    return eq.check_ph(ph, where)


# ---------------------------------------------------------------------------------------------
# Results
# ---------------------------------------------------------------------------------------------
@dataclass(frozen=True)
class StructureForm(DominantForm):
    """The most populated microstate of a structure at one pH.

    ``charge`` and ``population`` are those of the top *microstate* (``microstate_population`` is
    the same number); ``charge_state_population`` is the population of all microstates with that
    charge. ``smiles`` draws the microstate with formal charges and explicit hydrogen counts;
    ``protons_lost`` gives, per site, the protons lost from its most protonated state.
    """

    smiles: str = ""
    protons_lost: tuple[int, ...] = ()
    charge_state_population: float = math.nan


@dataclass(frozen=True)
class Explanation:
    """What ``zwitter explain`` shows: one row per base value / correction / result, and text."""

    rows: tuple[dict[str, Any], ...]
    text: str

    def __str__(self) -> str:
        return self.text


class StructureMolecule(Molecule):
    """A molecule read from a structure: coupled sites, microstates, dominant form as SMILES.

    Use :func:`from_smiles` to build one. Attributes beyond :class:`~zwitter.molecule.Molecule`:
    ``mol`` (the neutral reference RDKit Mol), ``reference_smiles``, ``input_smiles``,
    ``removed_fragments``, ``structure_sites`` (one :class:`StructureSite` per titratable site) and
    ``activity`` ((a, h) of the whole-form activity correction at the conditions' ionic strength;
    (0, 0) at I = 0).
    """

    def __init__(
        self,
        analysis: _Analysis,
        *,
        name: str,
        input_smiles: str,
        removed: tuple[str, ...],
        notes: Sequence[str],
        conditions: Any = None,
        coupling: Coupling | None = None,
    ) -> None:
        self._analysis = analysis
        self.mol = analysis.mol
        self.structure_sites = tuple(analysis.sites)
        self.input_smiles = input_smiles
        self.removed_fragments = removed
        self._reference_smiles: str | None = None
        info: dict[str, Any] = {"removed_fragments": list(removed), "input_smiles": input_smiles}
        if getattr(conditions, "electrostatics", False):
            from rdkit.Chem import Descriptors

            info["mass"] = float(Descriptors.MolWt(analysis.mol))  # type: ignore[attr-defined]
            notes = [
                *notes,
                "the smeared-charge (sphere) electrostatics is meant for proteins: "
                "it is not applied to structures (site coupling is)",
            ]
        sites = _site_set(analysis, notes)
        #: whether the ionic strength acts on whole forms (the microstate model) or, for a
        #: molecule whose forms may carry more than WHOLE_FORM_MAX_CHARGE charges, per site
        self.salt_on_whole_forms = _salt_on_whole_forms(sites, conditions)
        if isinstance(conditions, Conditions) and conditions.ionic_strength > 0:
            if not self.salt_on_whole_forms:
                notes = [
                    *notes,
                    f"its forms may carry more than {WHOLE_FORM_MAX_CHARGE} charges: the ionic "
                    "strength is taken per site, as for sequences (Davies is meant for small "
                    "ions)",
                ]
        super().__init__(
            sites,
            name=name or input_smiles,
            kind="smiles",
            scale="structure (ionizable_groups.csv)",
            notes=notes,
            info=info,
            conditions=conditions,
        )
        #: the site-site coupling parameters used
        self.coupling = coupling or default_coupling()
        k = len(analysis.sites)
        pk = np.asarray(self.sites.pkas[:k], dtype=np.float64) if k else np.zeros((0, 0))
        pairs, field = _coupling_inputs(analysis, self.coupling)
        #: (a, h) of the whole-species activity correction (conditions.davies_species_terms);
        #: (0, 0) at I = 0, without a Conditions object, or with the salt taken per site
        self.activity = _activity_terms(conditions) if self.salt_on_whole_forms else (0.0, 0.0)
        species, species_charges = _species_of_sites(analysis) if self.activity[0] else (None, None)
        #: the coupled-site solver (:class:`zwitter.microstates.Microstates`)
        self.model = Microstates(
            pk,
            self.sites.nsteps[:k],
            self.sites.charges[:k],
            pairs,
            fixed=[q for _, q in analysis.permanent],
            field=field,
            fixed_charge=float(analysis.permanent_total),
            where=self.name,
            activity=self.activity[0],
            proton_log_gamma=self.activity[1],
            species=species,
            species_charges=species_charges,
        )
        self._ref_lost = np.array([s.ref_lost for s in analysis.sites], dtype=np.int64)

    def __repr__(self) -> str:
        label = self.name if len(self.name) <= 40 else self.name[:37] + "..."
        return f"<StructureMolecule {label!r}: {len(self.structure_sites)} sites>"

    def _apply_conditions(self, sites: SiteSet, conditions: Any) -> SiteSet:
        """Sites at ``conditions``: van 't Hoff per site; the ionic strength is left to the forms.

        Activity coefficients belong to whole species: the microstate model gives each form the
        one of its net charge (:func:`zwitter.conditions.davies_species_terms`), so the per-site
        Davies shift would count the salt twice.
        """
        if _salt_on_whole_forms(sites, conditions):
            conditions = dataclasses.replace(conditions, ionic_strength=0.0)
        out: SiteSet = conditions.apply(sites)
        return out

    def condition_corrections(self) -> pd.DataFrame | None:
        """The corrections the conditions make to the site pKa values (one row per step); with
        the ionic strength on whole forms, its per-site shift is 0 (explain() gives the shift of
        each macroscopic step)."""
        cond = self.conditions
        if not isinstance(cond, Conditions) or not self.salt_on_whole_forms:
            return super().condition_corrections()
        frame = dataclasses.replace(cond, ionic_strength=0.0).corrections(self.reference_sites)
        frame["shift_ionic_strength"] = 0.0
        return frame

    @property
    def reference_smiles(self) -> str:
        """Canonical SMILES of the neutral reference structure."""
        if self._reference_smiles is None:
            self._reference_smiles = _rdkit().MolToSmiles(self.mol)
        return self._reference_smiles

    # -- numbers --------------------------------------------------------------------------------
    def charge(self, ph: npt.ArrayLike) -> Any:
        """Average net charge at ``ph`` (float, or an array for an array of pH values).

        >>> m = from_smiles("NCC(=O)O")
        >>> round(m.charge(6.0), 2)
        0.0
        """
        h = _check_ph(ph, "charge")
        z = self.model.charge(h)
        return float(z) if np.ndim(z) == 0 else np.asarray(z)

    def isoelectric_point(self) -> float | None:
        """pH of zero net charge (bisection to 1e-6), or None with a ZwitterWarning saying why.

        >>> 5.5 < from_smiles("NCC(=O)O").isoelectric_point() < 6.5  # glycine (Lehninger: 5.97)
        True
        """
        lo, hi = eq.PH_MIN, eq.PH_MAX
        ms = self.model
        if ms.total_steps == 0:
            warnings.warn(
                f"{self.name}: no titratable group: the charge does not change with pH "
                f"(it is {ms.max_charge:+g} everywhere): no isoelectric point",
                ZwitterWarning,
                stacklevel=2,
            )
            return None
        z_lo, z_hi = float(ms.charge(lo)), float(ms.charge(hi))
        if not (z_lo > 0 > z_hi):
            side = ("at or below", z_lo, lo) if z_lo <= 0 else ("at or above", z_hi, hi)
            warnings.warn(
                f"{self.name}: the net charge stays {side[0]} zero from pH {lo:g} to {hi:g} "
                f"({side[1]:+.3g} at pH {side[2]:g}): no isoelectric point",
                ZwitterWarning,
                stacklevel=2,
            )
            return None
        a, b = lo, hi
        for _ in range(math.ceil(math.log2((hi - lo) / 1e-6))):
            mid = 0.5 * (a + b)
            if float(ms.charge(mid)) > 0:
                a = mid
            else:
                b = mid
        return 0.5 * (a + b)

    def pkas(self) -> list[float]:
        """Macroscopic pKa values (from the microstate free energies), ascending.

        >>> [round(x, 1) for x in from_smiles("OC(=O)CC(=O)O").pkas()]  # malonic acid
        [3.4, 5.6]
        """
        return [float(x) for x in self.model.macroscopic_pkas()]

    # -- forms ----------------------------------------------------------------------------------
    def _render(self, lost: npt.ArrayLike) -> str:
        from rdkit import rdBase

        Chem = _rdkit()
        state = np.asarray(lost, dtype=np.int64)
        delta = self._ref_lost - state  # protons to add to the reference structure, per site
        if not np.any(delta):
            return self.reference_smiles
        rw = Chem.RWMol(self.mol)
        for s, d in zip(self.structure_sites, delta):
            d = int(d)
            if d == 0:
                continue
            for a in s.atoms[: abs(d)] if d < 0 else s.atoms[::-1][:d]:
                atom = rw.GetAtomWithIdx(a)
                step = 1 if d > 0 else -1
                _set_charge(atom, atom.GetFormalCharge() + step, atom.GetTotalNumHs() + step)
        with rdBase.BlockLogs():
            rw.UpdatePropertyCache(strict=False)
            return str(Chem.MolToSmiles(rw))

    def _forms(
        self, ph: float, limit: int | None, min_population: float, stop_when_certain: bool
    ) -> list[tuple[str, float, npt.NDArray[np.int64], float]]:
        """Distinct forms at ``ph``: (SMILES, population, representative state, its charge).

        Microstates drawn alike (symmetry-equivalent sites: the two outer carboxyls of citric
        acid) are one form; their populations add. Microstates are taken most populated first;
        with ``stop_when_certain`` the walk ends once the leading form cannot be overtaken.
        """
        ms = self.model
        if ms.exact:
            pops = ms.populations(ph)
            order = np.argsort(-pops, kind="stable")
            states, values = ms.states[order], pops[order]
        else:
            states, values = ms.top(ph, 1)
        forms: dict[str, list[Any]] = {}
        remaining = 1.0
        for state, value in zip(states, values):
            pop = float(value)
            if forms and pop < min_population:
                break
            smi = self._render(state)
            remaining -= pop
            if smi in forms:
                forms[smi][1] += pop
            else:
                forms[smi] = [smi, pop, state, float(ms.max_charge - state.sum())]
            if stop_when_certain:
                ranked = sorted((f[1] for f in forms.values()), reverse=True)
                second = ranked[1] if len(ranked) > 1 else 0.0
                if ranked[0] - second >= remaining - 1e-12:
                    break
            elif limit is not None and len(forms) > limit and pop < 1e-3 * float(values[0]):
                break
        out = sorted(forms.values(), key=lambda f: -f[1])
        if limit is not None:
            out = out[:limit]
        return [(f[0], f[1], f[2], f[3]) for f in out]

    def dominant(self, ph: float) -> StructureForm:
        """The most populated form at ``ph``: SMILES, charge, population.

        Microstates that are drawn alike (symmetry-equivalent sites) count as one form.

        >>> f = from_smiles("NCC(=O)O").dominant(7.0)
        >>> f.smiles, f.charge
        ('[NH3+]CC(=O)[O-]', 0.0)
        """
        h = _check_ph(ph, "dominant")
        ms = self.model
        smiles, pop, state, charge = self._forms(h, 1, 0.0, True)[0]
        per = []
        if ms.exact:
            pops = ms.populations(h)
            micro = float(pops.max())
            for i, s in enumerate(self.structure_sites):
                j = int(state[i])
                frac = float(pops[ms.states[:, i] == j].sum())
                per.append((s.label, j, float(ms.charges[i] - j), frac))
            cs_pop = float(pops[ms.lost == state.sum()].sum())
        else:
            micro = pop
            for i, s in enumerate(self.structure_sites):
                j = int(state[i])
                per.append((s.label, j, float(ms.charges[i] - j), math.nan))
            cs_pop = math.nan
        return StructureForm(
            ph=h,
            charge=charge,
            population=pop,
            microstate_population=micro,
            sites=tuple(per),
            mean_charge=float(ms.charge(h)),
            smiles=smiles,
            protons_lost=tuple(int(x) for x in state),
            charge_state_population=cs_pop,
        )

    def species(
        self, ph: float, *, top: int | None = None, min_population: float = 1e-6
    ) -> pd.DataFrame:
        """Forms at ``ph``, most populated first: SMILES, charge, protons lost, population.

        Microstates drawn alike (symmetry-equivalent sites) are merged into one row. ``top``
        limits the rows; otherwise every form with a population of at least ``min_population``
        is listed (at most 1000 rows).
        """
        import pandas as pd

        h = _check_ph(ph, "species")
        limit = top if top is not None else 1000
        forms = self._forms(h, limit, 0.0 if top is not None else min_population, False)
        return pd.DataFrame(
            {
                "smiles": [f[0] for f in forms],
                "charge": [f[3] for f in forms],
                "protons_lost": [int(f[2].sum()) for f in forms],
                "population": [f[1] for f in forms],
            }
        )

    def microstates(self, ph: float, top: int = 10) -> pd.DataFrame:
        """The ``top`` most populated microstates at ``ph`` (coupled sites, exact enumeration).

        Columns as for :meth:`zwitter.molecule.Molecule.microstates` (``rank``, ``population``,
        ``log10_population``, ``charge``, ``charged``, ``differs``; groups are named by their
        titrating atom, e.g. ``O4``) plus ``smiles``, the microstate drawn with formal charges.
        """
        import pandas as pd

        _check_ph(ph, "microstates")
        if int(top) != top or top < 1:
            raise ParameterError("top", "microstates", "a whole number >= 1", top)
        ms = self.model
        states, pops = ms.top(float(ph), int(top))
        names = [f"{s.symbol}{s.atoms[0]}" for s in self.structure_sites]
        rows = []
        for rank, (state, pop) in enumerate(zip(states, pops), start=1):
            q = ms.charges - state
            charged = ", ".join(f"{n} {_signed(float(c))}" for n, c in zip(names, q) if c)
            differs = ", ".join(
                f"{n} {_signed(float(ms.charges[i] - states[0][i]))} -> {_signed(float(q[i]))}"
                for i, n in enumerate(names)
                if state[i] != states[0][i]
            )
            rows.append(
                {
                    "rank": rank,
                    "population": float(pop),
                    "log10_population": math.log10(pop) if pop > 0 else -math.inf,
                    "charge": float(ms.max_charge - state.sum()),
                    "charged": charged,
                    "differs": differs,
                    "smiles": self._render(state),
                }
            )
        return pd.DataFrame(
            rows,
            columns=[
                "rank",
                "population",
                "log10_population",
                "charge",
                "charged",
                "differs",
                "smiles",
            ],
        )

    def _group_states(self, ph: float) -> list[Any]:
        # For residue_states(): each site's most populated state from the coupled model.
        ms = self.model
        out: list[Any] = []
        if not ms.k:
            return out
        h = float(ph)
        if ms.exact:
            pops = ms.populations(h)
        for i, s in enumerate(self.structure_sites):
            n = int(ms.nsteps[i])
            if ms.exact:
                frac = np.array([float(pops[ms.states[:, i] == j].sum()) for j in range(n + 1)])
            else:
                frac = ms._mf_probs_grid(np.array([h]))[0, i, : n + 1]
            j = int(np.argmax(frac))
            q0 = float(ms.charges[i])
            mean = q0 - float(frac @ np.arange(n + 1))
            out.append(
                (
                    f"{s.symbol}{s.atoms[0]}",
                    s.label,
                    s.group.key,
                    n,
                    q0,
                    j,
                    float(frac[j]),
                    mean,
                    1.0,
                )
            )
        return out

    # -- tables ---------------------------------------------------------------------------------
    def _ionic_strength_note(self) -> tuple[str, str] | None:
        """(value, source) saying how the ionic strength enters; None at I = 0."""
        a, h = self.activity
        if not a:
            return None
        cond = self.conditions
        scale = (
            f"pH as -log10 [H+]: log10 g(H+) = {h:.4f} per proton lost"
            if h
            else "pH as a glass electrode reads it (activity scale)"
        )
        return (
            f"{cond.ionic_strength:g} M (log10 g = -{a:.4f} z^2 for a form of net charge z)",
            "Davies 1962, Ion Association (Butterworths), on the net charge of each whole form "
            "(microstate; each fragment its own species), not per site as for sequences; A at "
            f"{cond.temperature:g} C from zwitter.conditions.debye_huckel_a; {scale}",
        )

    def site_table(self, ph: float = 7.0) -> pd.DataFrame:
        """One row per site: atoms, group, base pKa, corrections with sources, pKa, state at pH.

        ``pka`` is the intrinsic site value at the temperature of the conditions; an ionic
        strength acts on whole forms (their net charge), not on a site's pKa, and the
        ``corrections`` text says so.
        """
        import pandas as pd

        _check_ph(ph, "site_table")
        ms = self.model
        lost = ms.site_lost(float(ph)) if ms.k else np.zeros(0)
        salt = self._ionic_strength_note()
        extra = (
            [
                f"ionic strength {salt[0]}: acts on whole forms, not on this site's pKa "
                "[Davies 1962, Ion Association (Butterworths); explain() gives the details]"
            ]
            if salt is not None
            else []
        )
        rows = []
        for i, s in enumerate(self.structure_sites):
            n = int(ms.nsteps[i])
            final = self.sites.pkas[i, :n]
            rows.append(
                {
                    "site": s.label,
                    "group": s.group.key,
                    "kind": s.group.kind,
                    "atoms": " ".join(str(a) for a in s.atoms),
                    "base_pka": "; ".join(f"{p:.2f}" for p in s.base),
                    "base_source": s.group.source,
                    "corrections": "; ".join(
                        [f"{c.detail} = {c.value:+.2f} [{c.source}]" for c in s.corrections] + extra
                    ),
                    "correction_total": float(sum(c.value for c in s.corrections)),
                    "pka": "; ".join(f"{p:.2f}" for p in final),
                    "fraction_protonated": float((n - lost[i]) / n),
                    "charge": float(ms.charges[i] - lost[i]),
                }
            )
        return pd.DataFrame(rows)

    def curve(self, ph: npt.ArrayLike | None = None) -> pd.DataFrame:
        """Charge and per-site fraction protonated over a pH grid (default 0-14 in 0.05 steps)."""
        import pandas as pd

        grid = np.linspace(0.0, 14.0, 281) if ph is None else np.atleast_1d(np.asarray(ph, float))
        grid = eq.check_ph(grid, "curve")
        ms = self.model
        data: dict[str, Any] = {"ph": grid, "charge": ms.charge(grid)}
        if ms.k:
            lost = ms.site_lost(grid)
            for i, s in enumerate(self.structure_sites):
                n = int(ms.nsteps[i])
                data[f"fraction_protonated:{s.label}"] = (n - lost[:, i]) / n
        return pd.DataFrame(data)

    def _level_shifts(self) -> list[tuple[float, float]]:
        """(acid-form charge, pKa shift) of each macroscopic step from the ionic strength.

        Exact for one species: the activity term depends on the number of protons lost only, so
        step L moves by log10 g(z - 1) - log10 g(z) + h. Empty for several fragments (each has its
        own charge, so a level has no single charge).
        """
        a, h = self.activity
        ms = self.model
        if not a or ms._species.shape[1] != 1:
            return []
        out = []
        for lost in range(ms.total_steps):
            z = ms.max_charge - lost
            out.append((z, a * (z * z - (z - 1.0) ** 2) + h))
        return out

    def _couplings(self, threshold: float = 0.05) -> list[tuple[int, int, str, float]]:
        """(site i, site j, pair kind, w) for every pair that interacts by more than threshold."""
        ms = self.model
        out = []
        for i in range(ms.k):
            qi = ms.state_charges[i, : int(ms.nsteps[i]) + 1]
            for j in range(i + 1, ms.k):
                qj = ms.state_charges[j, : int(ms.nsteps[j]) + 1]
                kinds = []
                if qi.max() > 0 and qj.max() > 0:
                    kinds.append(("cation", ms.pairs.cation[i, j]))
                if qi.min() < 0 and qj.min() < 0:
                    kinds.append(("anion", ms.pairs.anion[i, j]))
                if (qi.max() > 0 and qj.min() < 0) or (qi.min() < 0 and qj.max() > 0):
                    kinds.append(("opposite", ms.pairs.opposite[i, j]))
                for kind, w in kinds:
                    if w > threshold:
                        out.append((i, j, kind, float(w)))
        return out

    def explain(self) -> Explanation:
        """Every site's pKa and the reasoning: group, base value, each correction and its source."""
        rows: list[dict[str, Any]] = []
        lines = [f"{self.name}", f"  reference structure: {self.reference_smiles}"]
        if self.removed_fragments:
            lines.append(f"  removed fragments: {', '.join(self.removed_fragments)}")
        for note in self.notes:
            lines.append(f"  note: {note}")
        if not self.structure_sites:
            lines.append("  no ionizable group found")
        conditions_source = (
            "conditions: temperature (van 't Hoff, per site); the ionic strength acts on whole "
            "forms (row 'ionic strength')"
            if isinstance(self.conditions, Conditions)
            else "conditions (temperature, ionic strength)"
        )
        for i, s in enumerate(self.structure_sites):
            n = len(s.base)
            final = [float(x) for x in self.sites.pkas[i, :n]]
            lines.append(f"  site {i + 1}: {s.label} [{s.group.key}], atoms {list(s.atoms)}")
            base = "; ".join(f"{p:.2f}" for p in s.base)
            rows.append(
                {
                    "site": s.label,
                    "group": s.group.key,
                    "step": "base pKa",
                    "value": base,
                    "source": s.group.source,
                }
            )
            lines.append(f"    base pKa {base}  ({s.group.source})")
            for c in s.corrections:
                rows.append(
                    {
                        "site": s.label,
                        "group": s.group.key,
                        "step": c.detail,
                        "value": f"{c.value:+.2f}",
                        "source": c.source,
                    }
                )
                lines.append(f"    {c.value:+.2f}  {c.detail}  ({c.source})")
            shifted = [p + sum(c.value for c in s.corrections) for p in s.base]
            if any(abs(a - b) > 1e-9 for a, b in zip(shifted, final)):
                rows.append(
                    {
                        "site": s.label,
                        "group": s.group.key,
                        "step": "conditions",
                        "value": "; ".join(f"{b - a:+.2f}" for a, b in zip(shifted, final)),
                        "source": conditions_source,
                    }
                )
                lines.append(
                    "    conditions: " + "; ".join(f"{b - a:+.2f}" for a, b in zip(shifted, final))
                )
            text = "; ".join(f"{p:.2f}" for p in final)
            rows.append(
                {
                    "site": s.label,
                    "group": s.group.key,
                    "step": "site pKa",
                    "value": text,
                    "source": "base + corrections",
                }
            )
            lines.append(f"    site pKa {text} (intrinsic: every other site uncharged)")
        for i, j, kind, w in self._couplings():
            a, b = self.structure_sites[i], self.structure_sites[j]
            detail = f"coupling with {b.label}: {kind} charges, {w:.2f} pK units per unit charge"
            rows.append(
                {
                    "site": a.label,
                    "group": a.group.key,
                    "step": detail,
                    "value": f"{w:.2f}",
                    "source": self.coupling.source,
                }
            )
            lines.append(f"  coupling {a.label} <-> {b.label}: {w:.2f} ({kind} charges)")
        salt = self._ionic_strength_note()
        if salt is not None:
            rows.append(
                {
                    "site": "molecule",
                    "group": "",
                    "step": "ionic strength",
                    "value": salt[0],
                    "source": salt[1],
                }
            )
            lines.append(f"  ionic strength {salt[0]}: on whole forms, not per site")
            steps = self._level_shifts()
            if steps:
                text = "; ".join(f"{_signed(z)}/{_signed(z - 1)} {d:+.2f}" for z, d in steps)
                rows.append(
                    {
                        "site": "molecule",
                        "group": "",
                        "step": "ionic-strength shift of each macroscopic step (acid/base charge)",
                        "value": text,
                        "source": "log10 g(base) - log10 g(acid) (+ log10 g(H+) for pH as "
                        "-log10 [H+]), Davies on the net charges of the two forms",
                    }
                )
                lines.append(f"    macroscopic steps (acid/base charge): {text}")
        macro = self.pkas()
        if macro:
            text = "; ".join(f"{p:.2f}" for p in macro)
            rows.append(
                {
                    "site": "molecule",
                    "group": "",
                    "step": "macroscopic pKa",
                    "value": text,
                    "source": "microstate free energies with site coupling "
                    f"({self.coupling.source})",
                }
            )
            lines.append(f"  macroscopic pKa: {text} (coupled sites, microstate free energies)")
        return Explanation(tuple(rows), "\n".join(lines))


def _signed(charge: float) -> str:
    return "0" if charge == 0 else f"{charge:+g}"


# ---------------------------------------------------------------------------------------------
# Entry points
# ---------------------------------------------------------------------------------------------
def from_smiles(
    smiles_or_mol: Any,
    *,
    conditions: Any = None,
    keep_fragments: bool = False,
    name: str = "",
) -> StructureMolecule:
    """A molecule from a SMILES string or an RDKit ``Mol``.

    Parameters
    ----------
    smiles_or_mol
        SMILES text or an RDKit ``Mol`` (copied, never modified).
    conditions
        A :class:`zwitter.Conditions`: the temperature moves the intrinsic site pKa values; an
        ionic strength gives every form (microstate) the Davies activity coefficient of its net
        charge, on the pH scale of ``conditions.ph_scale``. Any other object whose
        ``apply(sites)`` returns the SiteSet at other conditions is applied to the site pKa values.
        None keeps 25 deg C, I -> 0.
    keep_fragments
        False (default): keep the largest organic fragment and report the others in
        ``removed_fragments``. True: keep every fragment (they do not interact).
    name
        Label for reports and error messages (defaults to the SMILES).

    Raises
    ------
    StructureError
        Empty or unreadable SMILES, a Mol that does not sanitize (the message names the input).

    Examples
    --------
    >>> m = from_smiles("CC(=O)O.[Na+]")
    >>> m.removed_fragments, round(m.charge(7.0), 2)
    (('[Na+]',), -0.99)
    """
    from rdkit import rdBase

    mol, text = _parse(smiles_or_mol, name)
    if mol.GetNumAtoms() == 0:
        raise StructureError("the structure has no atoms", smiles=text, record=name)
    with rdBase.BlockLogs(), rdBase.CaptureErrorLog() as cap:
        try:
            elements = _elements(mol)  # of the whole input: a superset is fine for screening
            mol, removed, notes = _standardise(mol, text, name, keep_fragments, elements)
            analysis = _analyse(mol, elements)
        except (RuntimeError, _rdkit().rdchem.MolSanitizeException) as exc:
            # RDKit's own failures (invariant violations, sanitization) name no input: we do.
            detail = _messages(cap) or str(exc).strip().splitlines()[0]
            raise StructureError(
                f"RDKit failed on this structure: {detail}", smiles=text, record=name
            ) from None
    return StructureMolecule(
        analysis,
        name=name or text,
        input_smiles=text,
        removed=removed,
        notes=notes,
        conditions=conditions,
    )


class SmilesRecord(NamedTuple):
    """One record of a structure file: its id, the SMILES or Mol (None if unreadable), the error."""

    id: str
    molecule: Any
    error: StructureError | None


def _open_text(path: Path) -> io.TextIOBase:
    if path.suffix == ".gz":
        return io.TextIOWrapper(gzip.open(path, "rb"), encoding="utf-8", errors="replace")
    return open(path, encoding="utf-8", errors="replace", newline="")  # noqa: SIM115


def iter_smiles_file(
    path: str | Path, *, column: str | None = None, id_column: str | None = None
) -> Iterator[SmilesRecord]:
    """Records of a ``.smi``, ``.csv``/``.tsv`` or ``.sdf`` file (optionally ``.gz``), in order.

    * ``.smi``: one SMILES per line, optionally followed by whitespace and an id (the line number
      otherwise); blank lines and lines starting with ``#`` are skipped.
    * ``.csv`` / ``.tsv``: a header row; ``column`` names the SMILES column (default: the first of
      ``smiles``, ``SMILES``, ``Smiles``), ``id_column`` the id column (default: row number).
    * ``.sdf``: each record's Mol (id from the title line or the record number).

    Bad rows are yielded with ``molecule=None`` and a :class:`StructureError`, never dropped; an
    empty SMILES cell is such a bad row. SMILES are not parsed here: :func:`from_smiles` does that.
    """
    p = Path(path)
    if not p.is_file():
        raise InputFileError("no such file", str(p))
    suffixes = [s.lower() for s in p.suffixes]
    kind = (
        suffixes[-2]
        if suffixes and suffixes[-1] == ".gz" and len(suffixes) > 1
        else (suffixes[-1] if suffixes else "")
    )
    if kind in (".smi", ".smiles", ".txt"):
        yield from _iter_smi(p)
    elif kind in (".csv", ".tsv"):
        yield from _iter_csv(p, column, id_column, "\t" if kind == ".tsv" else ",")
    elif kind in (".sdf", ".sd", ".mol"):
        yield from _iter_sdf(p)
    else:
        raise InputFileError(
            f"unknown structure file type {kind or '(none)'!r}: use .smi, .csv, .tsv or .sdf",
            str(p),
        )


def _iter_smi(p: Path) -> Iterator[SmilesRecord]:
    with _open_text(p) as fh:
        for number, line in enumerate(fh, start=1):
            text = line.strip()
            if not text or text.startswith("#"):
                continue
            parts = text.split(None, 1)
            ident = parts[1].strip() if len(parts) > 1 else str(number)
            yield SmilesRecord(ident, parts[0], None)


def _iter_csv(
    p: Path, column: str | None, id_column: str | None, delimiter: str
) -> Iterator[SmilesRecord]:
    with _open_text(p) as fh:
        reader = csv.reader(fh, delimiter=delimiter)
        try:
            header = [h.strip() for h in next(reader)]
        except StopIteration:
            raise InputFileError("the file is empty (no header row)", str(p)) from None
        if column is None:
            column = next((c for c in ("smiles", "SMILES", "Smiles") if c in header), None)
            if column is None:
                raise InputFileError(
                    f"no SMILES column: pass column= (the header has {', '.join(header)})",
                    str(p),
                    1,
                )
        if column not in header:
            raise InputFileError(
                f"no column {column!r} (the header has {', '.join(header)})", str(p), 1
            )
        if id_column is not None and id_column not in header:
            raise InputFileError(
                f"no column {id_column!r} (the header has {', '.join(header)})", str(p), 1
            )
        ci = header.index(column)
        ii = header.index(id_column) if id_column is not None else None
        for number, row in enumerate(reader, start=2):
            if not row or not any(cell.strip() for cell in row):
                continue
            ident = row[ii].strip() if ii is not None and ii < len(row) else str(number)
            smi = row[ci].strip() if ci < len(row) else ""
            if not smi:
                yield SmilesRecord(
                    ident,
                    None,
                    StructureError(
                        f"line {number}: empty SMILES cell in column {column!r}", record=ident
                    ),
                )
                continue
            yield SmilesRecord(ident, smi, None)


def _iter_sdf(p: Path) -> Iterator[SmilesRecord]:
    from rdkit import rdBase

    Chem = _rdkit()
    raw = gzip.open(p, "rb") if p.suffix == ".gz" else open(p, "rb")  # noqa: SIM115
    with raw:
        supplier = Chem.ForwardSDMolSupplier(raw, sanitize=False, removeHs=False)
        number = 0
        while True:
            with rdBase.BlockLogs(), rdBase.CaptureErrorLog() as cap:
                try:
                    mol = next(supplier)
                except StopIteration:
                    break
            number += 1
            if mol is None:
                ident = f"record {number}"
                yield SmilesRecord(
                    ident,
                    None,
                    StructureError(
                        f"cannot read SDF record {number}: {_messages(cap) or 'malformed block'}",
                        record=ident,
                    ),
                )
                continue
            title = mol.GetProp("_Name").strip() if mol.HasProp("_Name") else ""
            ident = title or f"record {number}"
            with rdBase.BlockLogs(), rdBase.CaptureErrorLog() as cap:
                problem = Chem.SanitizeMol(mol, catchErrors=True)
                if problem == Chem.SanitizeFlags.SANITIZE_NONE:
                    mol = Chem.RemoveHs(mol)
            if problem != Chem.SanitizeFlags.SANITIZE_NONE:
                yield SmilesRecord(
                    ident,
                    None,
                    StructureError(
                        f"SDF record {number} does not sanitize: {_messages(cap) or problem}",
                        record=ident,
                    ),
                )
                continue
            yield SmilesRecord(ident, mol, None)
