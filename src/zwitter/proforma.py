"""ProForma 2.0 input: modified peptides, disulfides and multi-chain complexes -> a Molecule.

ProForma 2.0 is the HUPO-PSI notation for peptidoforms and proteoforms. zwitter reads the subset
below, turns every modification into what it does to ionizable groups (the packaged table,
:mod:`zwitter.modifications`) and builds one :class:`~zwitter.molecule.Molecule`.

Supported
---------
* Residues: the one-letter codes of :mod:`zwitter.sequence` (20 standard, U, O, and the ambiguous
  B, Z, J, X with the same policy), either case; whitespace between residues is ignored.
* Named modifications in brackets after a residue, by Unimod name or accession, any case:
  ``S[Phospho]``, ``S[U:Phospho]``, ``S[UNIMOD:21]``, ``S[Unimod:21]``, ``K[Trimethyl]``; several
  on one residue (``K[Methyl][Acetyl]`` is refused only because both need the amine).
  A residue-specific terminal row matches on the terminal residue: ``Q[Gln->pyro-Glu]PEP`` and
  ``[Gln->pyro-Glu]-QPEP`` both mean N-terminal pyroglutamate.
* N-terminal ``[Acetyl]-PEP`` and C-terminal ``PEP-[Amidated]`` modifications (several allowed).
* Global fixed modifications at the very start: ``<[Carbamidomethyl]@C>``, several targets
  ``<[Oxidation]@M,W>``, terminal targets ``<[Acetyl]@N-term>``. They apply to every target
  position of every chain that carries no modification of its own in the string (a cysteine
  written ``C[#XL1]`` stays in its disulfide).
* Chains separated by ``//``; each chain has its own N- and C-terminus.
* Stoichiometry (a zwitter extension; ProForma 2.0 has none): a chain may start with ``Nx``,
  ``2xHEAVY//2xLIGHT``, meaning N copies of that chain. ``2xA//B`` is the same molecule as
  ``A//A//B``.
* Disulfides as cross-links: two cysteines (or selenocysteines) carrying the same ``#XL`` label,
  ``C[#XL1]...C[#XL1]``, in one chain or in two chains; both thiols are removed. The first
  occurrence may name the bond: ``C[Dehydro#XL1]`` (Unimod 374), ``C[UNIMOD:374#XL1]``,
  ``C[Disulfide#XL1]``, ``C[MOD:00034#XL1]`` or ``C[L-cystine (cross-link)#XL1]`` (PSI-MOD
  L-cystine; accessions from memory). A label in a chain with ``Nx`` pairs copy k with copy k
  of the partner chain, so both chains need the same number of copies.

Not supported (each gives a :class:`~zwitter.errors.ProFormaError` naming the feature and its
1-based character position in the text; nothing is skipped silently)
---------------------------------------------------------------------------------------------------
mass shifts ``[+79.966]`` and observed masses ``[Obs:+79.966]`` (name the modification instead),
formulas ``[Formula:HPO3]``, glycan compositions ``[Glycan:Hex]`` and GNOme ``[G:...]``, PSI-MOD
``[MOD:...]``/``[M:...]``, RESID ``[R:...]`` and XL-MOD ``[X:...]`` names (except the disulfide
names above), INFO tags ``[INFO:...]``, alternative descriptors ``[Phospho|+79.97]``, ambiguity and
localisation groups ``[Phospho#g1]``, branches ``#BRANCH``, cross-links other than disulfides,
sequence ambiguity ``(?DQ)`` and ranges ``(PEP)[...]``, unlocalised ``[Phospho]?PEP`` and
multiplied ``[Phospho]^2`` modifications, labile modifications ``{Glycan:Hex}``, isotope labels
``<13C>``, charge states ``PEP/2`` and chimeric ``PEP+PEP`` entries. Modifications outside the
table, or on a residue they cannot modify, are errors too (with close names suggested).

Site naming: side chains are named by residue and position (``K12``), created groups get the
conventional prefix when there is one (``pS12`` phosphoserine, ``sY5`` sulfotyrosine) and
otherwise the ProForma-like ``K12[Trimethyl]``; termini are ``N-term A1`` / ``C-term K5``. In a
complex of several chains every name starts with its chain, ``chain2:C7``.

Examples
--------
>>> m = from_proforma("[Acetyl]-PEPS[Phospho]TIDE-[Amidated]", scale="lehninger")
>>> [label for label in m.sites.labels]
['D', 'E', 'phosphoserine']
>>> m.info["modifications"][1]["site"]
'pS4'
"""

from __future__ import annotations

import re
from collections.abc import Iterable, Sequence
from dataclasses import dataclass, field
from typing import TYPE_CHECKING, Any

import numpy as np

from .errors import ProFormaError, SequenceError
from .modifications import MEMBER_PREFIX, Modification, ModificationTable, load_modifications
from .scales import GROUPS, Scale, get_scale
from .sequence import VALID, check_cys, clean_sequence, sites_for_sequence
from .sites import Site, SiteSet

if TYPE_CHECKING:
    from .molecule import Molecule

__all__ = [
    "ModTag",
    "Residue",
    "Chain",
    "GlobalMod",
    "Peptidoform",
    "parse_proforma",
    "to_proforma",
    "from_proforma",
    "merge_sites",
]

#: Names accepted for the first end of a disulfide cross-link (case-insensitive); see docstring.
DISULFIDE_NAMES = frozenset(
    {"", "dehydro", "unimod:374", "disulfide", "mod:00034", "l-cystine (cross-link)"}
)
#: Residues a cross-link label may join (a disulfide, diselenide or selenylsulfide bond).
CROSSLINK_RESIDUES = "CU"

_MASS = re.compile(r"^[+-]\s*(\d|\.\d)")
_XL_LABEL = re.compile(r"^XL[A-Za-z0-9_]+$")
# Prefix (case-insensitive) -> the feature it introduces, for the unsupported ones.
_UNSUPPORTED_PREFIX = {
    "formula": ("chemical formulas", ""),
    "glycan": ("glycan compositions", ""),
    "g": ("GNOme glycan names", ""),
    "gno": ("GNOme glycan accessions", ""),
    "info": ("INFO tags", ""),
    "obs": ("observed mass shifts", "; name the modification instead"),
    "m": ("PSI-MOD names", "; use the Unimod name"),
    "mod": ("PSI-MOD accessions", "; use the Unimod name or accession"),
    "r": ("RESID names", "; use the Unimod name"),
    "resid": ("RESID accessions", "; use the Unimod name or accession"),
    "x": ("XL-MOD names", "; only disulfides are read, as C[#XL1]...C[#XL1]"),
    "xlmod": ("XL-MOD accessions", "; only disulfides are read, as C[#XL1]...C[#XL1]"),
}


# -- parsed form ---------------------------------------------------------------------------------
@dataclass(frozen=True)
class ModTag:
    """One bracketed modification as written.

    ``text`` is the content between the brackets, ``position`` the 1-based index of ``[`` in the
    input. ``name`` is the name to look up (``""`` when given by accession), ``accession`` the
    Unimod number or None, ``label`` a cross-link label such as ``"XL1"`` or ``""``.
    """

    text: str
    position: int
    name: str = ""
    accession: int | None = None
    label: str = ""

    @property
    def key(self) -> str | int:
        return self.accession if self.accession is not None else self.name

    @property
    def is_crosslink(self) -> bool:
        return bool(self.label)


@dataclass(frozen=True)
class Residue:
    letter: str
    position: int  # 1-based index in the text
    mods: tuple[ModTag, ...] = ()


@dataclass(frozen=True)
class Chain:
    residues: tuple[Residue, ...]
    nterm: tuple[ModTag, ...] = ()
    cterm: tuple[ModTag, ...] = ()
    copies: int = 1
    position: int = 1

    @property
    def sequence(self) -> str:
        return "".join(r.letter for r in self.residues)


@dataclass(frozen=True)
class GlobalMod:
    tag: ModTag
    targets: tuple[str, ...]  # residue letters, "N-term", "C-term"
    position: int


@dataclass(frozen=True)
class Peptidoform:
    """A parsed ProForma string: global modifications and chains (syntax only, no chemistry)."""

    text: str
    chains: tuple[Chain, ...]
    globals: tuple[GlobalMod, ...] = field(default=())

    def to_text(self) -> str:
        """Canonical ProForma text (upper-case residues, no whitespace); parses back the same."""
        out = [f"<[{g.tag.text}]@{','.join(g.targets)}>" for g in self.globals]
        chains = []
        for ch in self.chains:
            part = f"{ch.copies}x" if ch.copies != 1 else ""
            part += "".join(f"[{t.text}]" for t in ch.nterm) + ("-" if ch.nterm else "")
            part += "".join(r.letter + "".join(f"[{t.text}]" for t in r.mods) for r in ch.residues)
            part += ("-" if ch.cterm else "") + "".join(f"[{t.text}]" for t in ch.cterm)
            chains.append(part)
        return "".join(out) + "//".join(chains)


# -- parsing -------------------------------------------------------------------------------------
class _Scanner:
    def __init__(self, text: str) -> None:
        self.text = text
        self.i = 0

    def error(self, reason: str, index: int | None = None) -> ProFormaError:
        return ProFormaError(reason, self.text, (self.i if index is None else index) + 1)

    def peek(self, k: int = 0) -> str:
        j = self.i + k
        return self.text[j] if j < len(self.text) else ""

    def skip_space(self) -> None:
        while self.i < len(self.text) and self.text[self.i].isspace():
            self.i += 1

    def at_end(self) -> bool:
        return self.i >= len(self.text)

    def bracket(self) -> ModTag:
        """Read ``[...]`` at the cursor (nested square brackets inside are kept)."""
        start = self.i
        depth = 0
        for j in range(start, len(self.text)):
            if self.text[j] == "[":
                depth += 1
            elif self.text[j] == "]":
                depth -= 1
                if depth == 0:
                    self.i = j + 1
                    return _tag(self.text[start + 1 : j], start + 1, self)
        raise self.error("unclosed '[': a modification must end with ']'", start)


def _tag(content: str, position: int, sc: _Scanner) -> ModTag:
    at = position - 1  # 0-based index of '['
    body = content.strip()
    if not body:
        raise sc.error("empty modification '[]'", at)
    if "|" in body:
        raise sc.error(f"alternative descriptors separated by '|' ([{body}]) are not supported", at)
    name, _, label = body.partition("#")
    name = name.strip()
    if label:
        if label.upper() == "BRANCH":
            raise sc.error(f"branches ([{body}]) are not supported", at)
        if not _XL_LABEL.match(label):
            raise sc.error(
                f"ambiguity/localisation group labels ('#{label}' in [{body}]) are not supported; "
                "the only labels read are cross-links #XL1, #XL2, ...",
                at,
            )
        if name.casefold() not in DISULFIDE_NAMES:
            raise sc.error(
                f"cross-link {name!r} ([{body}]) is not supported: zwitter reads cross-links as "
                "disulfides only, written C[#XL1]...C[#XL1]",
                at,
            )
        return ModTag(body, position, name, None, label.upper())
    if _MASS.match(name):
        raise sc.error(f"mass shifts are not supported, name the modification ([{body}])", at)
    accession: int | None = None
    prefix, colon, rest = name.partition(":")
    if colon:
        key = prefix.strip().casefold()
        rest = rest.strip()
        if key in _UNSUPPORTED_PREFIX:
            feature, hint = _UNSUPPORTED_PREFIX[key]
            raise sc.error(f"{feature} ([{body}]) are not supported{hint}", at)
        if key == "u":
            if _MASS.match(rest):
                raise sc.error(
                    f"mass shifts are not supported, name the modification ([{body}])", at
                )
            name = rest
        elif key == "unimod":
            if not rest.isdigit():
                raise sc.error(
                    f"a Unimod accession is a number, as in [UNIMOD:21]; got [{body}]", at
                )
            accession, name = int(rest), ""
        # any other colon belongs to the name itself (Unimod names such as Label:13C(6))
    if not name and accession is None:
        raise sc.error(f"empty modification name in [{body}]", at)
    return ModTag(body, position, name, accession, "")


_FEATURES_OUTSIDE = {
    "(": "sequence ambiguity '(?...)' and modification ranges '(...)' are not supported",
    "{": "labile modifications '{...}' are not supported",
    "?": "modifications of unknown position ('[...]?') are not supported",
    "^": "modification multiplicities ('^n') are not supported",
    "+": "chimeric entries ('+') are not supported: give one molecule, chains separated by '//'",
    "<": "global modifications '<...>' must come first, before every chain",
    "@": "'@' is allowed only in a global modification such as <[Carbamidomethyl]@C>",
    ">": "unexpected '>' outside a global modification",
    "]": "unexpected ']' without a matching '['",
    "*": "'*' (stop) is not part of ProForma",
}


def parse_proforma(text: str) -> Peptidoform:
    """Parse ProForma text (the subset in the module docstring) without looking up any name.

    Errors are :class:`~zwitter.errors.ProFormaError` with the 1-based character position.

    >>> pf = parse_proforma("<[Carbamidomethyl]@C>2xAC[#XL1]KC[#XL1]//CD-[Amidated]")
    >>> [(c.sequence, c.copies) for c in pf.chains], pf.globals[0].targets
    ([('ACKC', 2), ('CD', 1)], ('C',))
    """
    if not isinstance(text, str):
        raise ProFormaError(f"ProForma text must be a string, got {type(text).__name__}")
    sc = _Scanner(text)
    sc.skip_space()
    if sc.at_end():
        raise ProFormaError("empty ProForma string", text, 0)
    globals_: list[GlobalMod] = []
    while sc.peek() == "<":
        globals_.append(_global(sc))
        sc.skip_space()
    chains = [_chain(sc)]
    while not sc.at_end():
        # _chain stops only at '//' or the end
        sc.i += 2
        chains.append(_chain(sc))
    pf = Peptidoform(text, tuple(chains), tuple(globals_))
    _check_crosslinks(pf)
    return pf


def _global(sc: _Scanner) -> GlobalMod:
    start = sc.i
    sc.i += 1
    sc.skip_space()
    if sc.peek() != "[":
        end = sc.text.find(">", start)
        inner = sc.text[start + 1 : end] if end > 0 else sc.text[start + 1 :]
        raise sc.error(
            f"isotope labels and other global settings ('<{inner}>') are not supported; "
            "global fixed modifications are written <[Name]@C>",
            start,
        )
    tag = sc.bracket()
    if tag.is_crosslink:
        raise sc.error("a cross-link cannot be a global modification", tag.position - 1)
    sc.skip_space()
    if sc.peek() != "@":
        raise sc.error("a global modification needs its targets, as in <[Carbamidomethyl]@C>")
    sc.i += 1
    end = sc.text.find(">", sc.i)
    if end < 0:
        raise sc.error("unclosed '<': a global modification must end with '>'", start)
    targets: list[str] = []
    cursor = sc.i
    for raw in sc.text[sc.i : end].split(","):
        item = raw.strip()
        norm = item.upper()
        if norm in ("N-TERM", "C-TERM"):
            targets.append(norm[0] + "-term")
        elif len(norm) == 1 and norm in VALID:
            targets.append(norm)
        else:
            raise sc.error(
                f"global modification target {item!r}: write one-letter residues, N-term or "
                "C-term separated by commas",
                cursor,
            )
        cursor += len(raw) + 1
    sc.i = end + 1
    return GlobalMod(tag, tuple(targets), start + 1)


def _brackets(sc: _Scanner) -> list[ModTag]:
    tags = []
    while sc.peek() == "[":
        tags.append(sc.bracket())
    return tags


def _chain(sc: _Scanner) -> Chain:
    sc.skip_space()
    start = sc.i
    copies = 1
    if sc.peek().isdigit():
        j = sc.i
        while j < len(sc.text) and sc.text[j].isdigit():
            j += 1
        if j >= len(sc.text) or sc.text[j] != "x":
            raise sc.error(
                "a number outside brackets: stoichiometry is written like '2xPEPTIDE' "
                "(a zwitter extension)",
                start,
            )
        copies = int(sc.text[sc.i : j])
        if copies < 1:
            raise sc.error(f"stoichiometry must be at least 1, got {copies}x", start)
        sc.i = j + 1
        sc.skip_space()
    nterm: list[ModTag] = []
    if sc.peek() == "[":
        nterm = _brackets(sc)
        if sc.peek() == "?":
            raise sc.error(_FEATURES_OUTSIDE["?"])
        if sc.peek() != "-":
            raise sc.error(
                "a modification before the first residue must be followed by '-' "
                "(N-terminal modification, as in [Acetyl]-PEPTIDE)"
            )
        sc.i += 1
    residues: list[Residue] = []
    cterm: list[ModTag] = []
    while True:
        sc.skip_space()
        ch = sc.peek()
        if ch == "" or sc.text.startswith("//", sc.i):
            break
        if ch.isalpha():
            letter = ch.upper()
            if letter not in VALID:
                raise sc.error(f"invalid residue {ch!r}")
            pos = sc.i + 1
            sc.i += 1
            mods = _brackets(sc)
            residues.append(Residue(letter, pos, tuple(mods)))
            continue
        if ch == "-":
            if not residues:
                raise sc.error("'-' before any residue")
            sc.i += 1
            if sc.peek() != "[":
                raise sc.error(
                    "'-' must be followed by a C-terminal modification, as in -[Amidated]"
                )
            cterm = _brackets(sc)
            sc.skip_space()
            if not (sc.at_end() or sc.text.startswith("//", sc.i)):
                raise sc.error("nothing may follow a C-terminal modification but '//' or the end")
            break
        if ch == "[":
            raise sc.error(
                "a modification must follow a residue (or end with '-' before the first)"
            )
        if ch == "/":
            raise sc.error("charge states ('/n') are not supported; chains are separated by '//'")
        if ch in _FEATURES_OUTSIDE:
            raise sc.error(_FEATURES_OUTSIDE[ch])
        if ch.isdigit():
            raise sc.error("a number outside brackets (stoichiometry goes before a chain, as '2x')")
        raise sc.error(f"unexpected character {ch!r}")
    if not residues:
        raise sc.error("empty chain: every chain between '//' needs residues", start)
    return Chain(tuple(residues), tuple(nterm), tuple(cterm), copies, start + 1)


def _check_crosslinks(pf: Peptidoform) -> None:
    uses: dict[str, list[tuple[int, int, ModTag]]] = {}
    for c, chain in enumerate(pf.chains):
        for tag in chain.nterm + chain.cterm:
            if tag.is_crosslink:
                raise ProFormaError(
                    f"cross-link #{tag.label} on a terminus: zwitter reads cross-links as "
                    "disulfides between cysteines",
                    pf.text,
                    tag.position,
                )
        for r, res in enumerate(chain.residues):
            for tag in res.mods:
                if not tag.is_crosslink:
                    continue
                if res.letter not in CROSSLINK_RESIDUES:
                    raise ProFormaError(
                        f"cross-link #{tag.label} on {res.letter}: zwitter reads cross-links as "
                        "disulfides between cysteines (C, or selenocysteine U)",
                        pf.text,
                        tag.position,
                    )
                uses.setdefault(tag.label, []).append((c, r, tag))
    for label, ends in uses.items():
        if len(ends) == 1:
            raise ProFormaError(
                f"cross-link label #{label} is used once: a disulfide needs two cysteines "
                "with the same label",
                pf.text,
                ends[0][2].position,
            )
        if len(ends) > 2:
            raise ProFormaError(
                f"cross-link label #{label} is used {len(ends)} times: one label joins "
                "exactly two cysteines",
                pf.text,
                ends[2][2].position,
            )
        (c1, r1, _), (c2, r2, t2) = ends
        if (c1, r1) == (c2, r2):
            raise ProFormaError(
                f"cross-link label #{label} twice on the same residue", pf.text, t2.position
            )
        if pf.chains[c1].copies != pf.chains[c2].copies:
            raise ProFormaError(
                f"cross-link #{label} joins a chain of {pf.chains[c1].copies} copies to one of "
                f"{pf.chains[c2].copies}: copy k pairs with copy k, so give both the same "
                "stoichiometry",
                pf.text,
                t2.position,
            )


def to_proforma(molecule: str | Sequence[str] | Peptidoform) -> str:
    """ProForma text of a plain sequence, of several chains, or of a parsed :class:`Peptidoform`.

    >>> to_proforma("mkw vt*")
    'MKWVT'
    >>> to_proforma(["GIVEQ", "FVNQH"])
    'GIVEQ//FVNQH'
    """
    if isinstance(molecule, Peptidoform):
        return molecule.to_text()
    chains = [molecule] if isinstance(molecule, str) else list(molecule)
    if not chains:
        raise SequenceError("empty sequence")
    return "//".join(clean_sequence(c) for c in chains)


# -- chemistry -----------------------------------------------------------------------------------
@dataclass
class _ChainState:
    """One expanded chain (one copy) while modifications are applied."""

    name: str  # "" for a single-chain molecule, else "chain2"
    chain: Chain
    present: list[set[str]]  # ionizable groups still present at each residue
    removed: list[str] = field(default_factory=list)  # member names removed
    added: list[Site] = field(default_factory=list)
    touched: set[tuple[str, int]] = field(default_factory=set)  # ("res", i), ("N", 0), ("C", 0)

    def member(self, group: str, i: int) -> str:
        seq = self.chain.sequence
        if group == "Nterm":
            return f"N-term {seq[0]}1"
        if group == "Cterm":
            return f"C-term {seq[-1]}{len(seq)}"
        return f"{seq[i]}{i + 1}"


def _initial_groups(seq: str) -> list[set[str]]:
    present = [{ch} if ch in GROUPS and ch not in ("Nterm", "Cterm") else set() for ch in seq]
    present[0].add("Nterm")
    present[-1].add("Cterm")
    return present


def _apply(
    state: _ChainState,
    mod: Modification,
    i: int,
    scale: Scale,
    tag: ModTag,
    text: str,
    applied: list[dict[str, Any]],
    how: str,
) -> None:
    seq = state.chain.sequence
    n = len(seq)
    for code in mod.removes:
        at = 0 if code == "Nterm" else n - 1 if code == "Cterm" else i
        if code not in state.present[at]:
            raise ProFormaError(
                f"{mod.name} on {seq[i]}{i + 1}: the {GROUPS[code][1]} it modifies is already "
                "removed by another modification",
                text,
                tag.position,
            )
        state.present[at].discard(code)
        state.removed.append(state.member(code, at))
        state.touched.add(
            ("N", 0) if code == "Nterm" else ("C", 0) if code == "Cterm" else ("res", at)
        )
    if mod.terminus == "N-term":
        where = f"N-term {seq[0]}1[{mod.name}]"
    elif mod.terminus == "C-term":
        where = f"C-term {seq[-1]}{n}[{mod.name}]"
    elif mod.name in MEMBER_PREFIX:
        where = f"{MEMBER_PREFIX[mod.name]}{seq[i]}{i + 1}"
    else:
        where = f"{seq[i]}{i + 1}[{mod.name}]"
    site = mod.added_site(scale, seq[i], at_nterm=i == 0, at_cterm=i == n - 1, member=where)
    if site is not None:
        state.added.append(site)
    applied.append(
        {
            "modification": mod.name,
            "accession": mod.accession,
            "site": f"{state.name}:{where}" if state.name else where,
            "how": how,
            "effect": mod.effect(),
        }
    )


def _resolve(
    table: ModificationTable,
    tag: ModTag,
    residue: str,
    text: str,
    *,
    position: str,
    first: bool,
    last: bool,
    where: str,
) -> Modification:
    rows = table.rows_for(tag.key)
    shown = tag.text
    if not rows:
        hint = ""
        if tag.name:
            close = table.suggestions(tag.name)
            hint = f" Did you mean {', '.join(close)}?" if close else ""
        raise ProFormaError(
            f"unknown modification [{shown}]: not in zwitter's modification table "
            f"(zwitter.modifications.list_modifications() lists it).{hint}",
            text,
            tag.position,
        )
    mod = table.match(tag.key, residue, position=position, first=first, last=last)
    if mod is None:
        targets = ", ".join(table.targets(tag.key))
        raise ProFormaError(
            f"modification [{shown}] cannot modify {where}; {rows[0].name} applies to {targets}",
            text,
            tag.position,
        )
    return mod


def _remove_members(sites: SiteSet, names: Iterable[str]) -> SiteSet:
    drop = set(names)
    counts = np.array(sites.counts, dtype=float)
    members = []
    for k in range(sites.n_types):
        hit = sum(1 for m in sites.members[k] if m in drop)
        counts[k] -= hit
        members.append(tuple(m for m in sites.members[k] if m not in drop))
        drop.difference_update(sites.members[k])
    if drop:  # pragma: no cover - a member the sequence reader did not name
        raise RuntimeError(f"internal error: groups {sorted(drop)} not found in the chain")
    counts = np.where(np.abs(counts) < 1e-9, 0.0, counts)
    return SiteSet(
        sites.labels, sites.pkas, sites.nsteps, sites.charges, counts, sites.sources,
        sites.groups, tuple(members), sites.atoms, sites.notes,
    ).compact()  # fmt: skip


def merge_sites(parts: Iterable[SiteSet | Iterable[Site]], notes: Sequence[str] = ()) -> SiteSet:
    """One SiteSet from several, adding up site types with the same label, pKa, charge, source.

    Members are concatenated in order; the first occurrence fixes the order of the types.
    """
    merged: dict[tuple[Any, ...], list[Any]] = {}
    for part in parts:
        items = part.sites() if isinstance(part, SiteSet) else list(part)
        for s in items:
            key = (s.label, s.group, s.pkas, s.charge, s.source)
            if key in merged:
                entry = merged[key]
                entry[0] += s.count
                entry[1].extend(s.members)
                entry[2].extend(s.atoms)
            else:
                merged[key] = [s.count, list(s.members), list(s.atoms)]
    sites = [
        Site(lab, pk, q, count, src, grp, tuple(mem), tuple(at))
        for (lab, grp, pk, q, src), (count, mem, at) in merged.items()
    ]
    return SiteSet.from_sites(sites, notes)


def _prefixed(sites: SiteSet, name: str) -> SiteSet:
    if not name:
        return sites
    members = tuple(tuple(f"{name}:{m}" for m in ms) for ms in sites.members)
    return SiteSet(
        sites.labels, sites.pkas, sites.nsteps, sites.charges, sites.counts, sites.sources,
        sites.groups, members, sites.atoms, sites.notes,
    )  # fmt: skip


def _explicit(
    st: _ChainState, table: ModificationTable, sc: Scale, text: str, applied: list[dict[str, Any]]
) -> None:
    """Apply the modifications written in one chain copy, in text order."""
    ch = st.chain
    seq = ch.sequence
    n = len(seq)
    for tag in ch.nterm:
        where = f"the N-terminus ({seq[0]}1)"
        mod = _resolve(
            table, tag, seq[0], text, position="N-term", first=True, last=n == 1, where=where
        )
        _apply(st, mod, 0, sc, tag, text, applied, "N-terminal")
        st.touched.add(("N", 0))
    for i, res in enumerate(ch.residues):
        for tag in res.mods:
            st.touched.add(("res", i))
            if tag.is_crosslink:
                continue
            where = f"{res.letter} ({res.letter}{i + 1})"
            mod = _resolve(
                table,
                tag,
                res.letter,
                text,
                position="side",
                first=i == 0,
                last=i == n - 1,
                where=where,
            )
            _apply(st, mod, i, sc, tag, text, applied, "explicit")
    for tag in ch.cterm:
        where = f"the C-terminus ({seq[-1]}{n})"
        mod = _resolve(
            table, tag, seq[-1], text, position="C-term", first=n == 1, last=True, where=where
        )
        _apply(st, mod, n - 1, sc, tag, text, applied, "C-terminal")
        st.touched.add(("C", 0))


def _check_global(table: ModificationTable, g: GlobalMod, text: str) -> None:
    """A global modification must be known and able to modify each of its targets."""
    rows = table.rows_for(g.tag.key)
    if not rows:
        _resolve(table, g.tag, "", text, position="side", first=False, last=False, where="")
    for target in g.targets:
        if target in ("N-term", "C-term"):
            ok = any(m.terminus == target for m in rows)
        else:
            ok = any(m.residue == target for m in rows)
        if not ok:
            raise ProFormaError(
                f"global modification [{g.tag.text}] cannot modify {target}; {rows[0].name} "
                f"applies to {', '.join(table.targets(g.tag.key))}",
                text,
                g.tag.position,
            )


def _global_apply(
    st: _ChainState,
    g: GlobalMod,
    table: ModificationTable,
    sc: Scale,
    text: str,
    applied: list[dict[str, Any]],
) -> None:
    seq = st.chain.sequence
    n = len(seq)
    for target in g.targets:
        if target == "N-term":
            spots = [(0, "N-term")] if ("N", 0) not in st.touched else []
        elif target == "C-term":
            spots = [(n - 1, "C-term")] if ("C", 0) not in st.touched else []
        else:
            spots = [
                (i, "side")
                for i, r in enumerate(seq)
                if r == target and ("res", i) not in st.touched
            ]
        for i, position in spots:
            residue = f"{seq[i]}{i + 1}"
            where = (
                f"{seq[i]} ({residue})" if position == "side" else f"the {position}inus ({residue})"
            )
            mod = _resolve(
                table,
                g.tag,
                seq[i],
                text,
                position=position,
                first=i == 0,
                last=i == n - 1,
                where=where,
            )
            _apply(st, mod, i, sc, g.tag, text, applied, "global fixed")


def _pair_disulfides(
    pf: Peptidoform, states: dict[tuple[int, int], _ChainState], text: str
) -> tuple[list[str], list[tuple[str, str]]]:
    """Remove the side chains joined by each cross-link label, copy k with copy k."""
    ends: dict[str, list[tuple[int, int, ModTag]]] = {}
    for w, ch in enumerate(pf.chains):
        for i, res in enumerate(ch.residues):
            for tag in res.mods:
                if tag.is_crosslink:
                    ends.setdefault(tag.label, []).append((w, i, tag))
    bonded: list[str] = []
    disulfides: list[tuple[str, str]] = []
    for label, pair in ends.items():  # _check_crosslinks made every label a pair
        for k in range(pf.chains[pair[0][0]].copies):
            names = []
            for w, i, tag in pair:
                st = states[(w, k)]
                letter = st.chain.sequence[i]
                if letter not in st.present[i]:
                    raise ProFormaError(
                        f"cross-link #{label} on {letter}{i + 1}: its side chain is already "
                        "modified",
                        text,
                        tag.position,
                    )
                st.present[i].discard(letter)
                member = st.member(letter, i)
                st.removed.append(member)
                names.append(f"{st.name}:{member}" if st.name else member)
            bonded.extend(names)
            disulfides.append((names[0], names[1]))
    return bonded, disulfides


def _bond_remaining_cysteines(states: Iterable[_ChainState]) -> list[str]:
    """cys="bonded": every cysteine without a modification of its own loses its thiol."""
    bonded = []
    for st in states:
        for i, r in enumerate(st.chain.sequence):
            if r == "C" and "C" in st.present[i] and ("res", i) not in st.touched:
                st.present[i].discard("C")
                member = st.member("C", i)
                st.removed.append(member)
                bonded.append(f"{st.name}:{member}" if st.name else member)
    return bonded


def _build_sites(states: Iterable[_ChainState], sc: Scale, text: str) -> tuple[SiteSet, list[str]]:
    """Sites chain by chain: the sequence reader's sites (which keep terminus-specific scale
    values and residue names), minus the removed groups, plus the created ones; then merged."""
    parts: list[SiteSet] = []
    notes: list[str] = []
    for st in states:
        try:
            base, chain_notes = sites_for_sequence(st.chain.sequence, sc)
        except SequenceError as exc:
            pos = exc.position
            at = st.chain.residues[pos - 1].position if 0 < pos <= len(st.chain.residues) else 0
            raise ProFormaError(exc.reason, text, at) from None
        chain_sites = _remove_members(base, st.removed)
        if st.added:
            chain_sites = merge_sites([chain_sites, st.added])
        parts.append(_prefixed(chain_sites, st.name))
        notes.extend(f"{st.name}: {n}" if st.name else n for n in chain_notes)
    return (parts[0] if len(parts) == 1 else merge_sites(parts)), notes


def from_proforma(
    text: str,
    scale: str | Scale | None = None,
    *,
    cys: str = "free",
    conditions: object | None = None,
    name: str = "",
) -> Molecule:
    """A molecule from ProForma 2.0 text (subset and extensions in the module docstring).

    Parameters
    ----------
    text
        ProForma, e.g. ``"[Acetyl]-PEPS[Phospho]TIDE-[Amidated]"`` or ``"A//B"`` for two chains.
    scale
        pKa scale (as in :func:`zwitter.from_sequence`); ``scale:X`` pKa values of modifications
        are taken from it.
    cys
        ``"free"`` (default) or ``"bonded"``: every cysteine that is not modified or cross-linked
        in the text is taken as disulfide-bonded (named in ``info["bonded_cysteines"]``).
    conditions
        Temperature and ionic strength; None keeps the reference values.
    name
        Label for reports (defaults to the text).

    Returns
    -------
    Molecule
        ``info`` holds ``cys``, ``bonded_cysteines`` (cross-linked and ``cys="bonded"`` ones),
        ``disulfides`` (pairs), ``modifications`` (one dict per applied modification), ``chains``
        (one dict per chain copy) and ``proforma`` (canonical text).

    Examples
    --------
    >>> m = from_proforma("GIVEQC[#XL1]C[#XL2]TSIC[#XL1]SLYQLENYCN//FVNQHLC[#XL2]GSHLVE")
    >>> m.info["bonded_cysteines"]
    ('chain1:C6', 'chain1:C11', 'chain1:C7', 'chain2:C7')
    """
    from .molecule import Molecule

    check_cys(cys, "from_proforma")
    sc = get_scale(scale)
    pf = parse_proforma(text)
    table = load_modifications()
    # expand stoichiometry: copy k of written chain w
    expanded: list[tuple[int, int]] = [
        (w, k) for w, ch in enumerate(pf.chains) for k in range(ch.copies)
    ]
    multi = len(expanded) > 1
    states: dict[tuple[int, int], _ChainState] = {}
    chain_info = []
    for e, (w, k) in enumerate(expanded, start=1):
        ch = pf.chains[w]
        label = f"chain{e}" if multi else ""
        states[(w, k)] = _ChainState(label, ch, _initial_groups(ch.sequence))
        chain_info.append(
            {"chain": label or "chain1", "sequence": ch.sequence, "written_chain": w + 1,
             "copy": k + 1, "copies": ch.copies}
        )  # fmt: skip
    applied: list[dict[str, Any]] = []
    for g in pf.globals:
        _check_global(table, g, text)
    for st in states.values():
        _explicit(st, table, sc, text, applied)
    bonded, disulfides = _pair_disulfides(pf, states, text)
    # global fixed modifications: every target position without a modification of its own
    for g in pf.globals:
        for st in states.values():
            _global_apply(st, g, table, sc, text, applied)
    if cys == "bonded":
        bonded.extend(_bond_remaining_cysteines(states.values()))
    sites, notes = _build_sites(states.values(), sc, text)
    info: dict[str, Any] = {
        "cys": cys,
        "bonded_cysteines": tuple(bonded),
        "disulfides": tuple(disulfides),
        "modifications": applied,
        "chains": chain_info,
        "proforma": pf.to_text(),
    }
    return Molecule(
        sites, name=name or text.strip(), kind="proforma", scale=sc.key, notes=notes, info=info,
        conditions=conditions,
    )  # fmt: skip
