"""Protein and peptide modifications and what each does to the ionizable groups.

The packaged table ``data/modifications.csv`` (schema and sources in its header) has one row per
(modification, position): the Unimod name and accession, accepted aliases, the target position,
the ionizable group(s) it removes there, and the group it creates (label, pKa steps, charge of the
most protonated state, source of the pKa). This module reads the rows into validated frozen
:class:`Modification` objects and answers two questions for the ProForma reader:

* which row does a name or accession mean on a given residue (:meth:`ModificationTable.match`);
* which :class:`~zwitter.sites.Site` does that row add, with a given pKa scale
  (:meth:`Modification.added_site`): a pKa written ``scale:X`` is the value the scale gives group
  ``X`` in the same context (the N-terminal amine takes the pKa the scale gives the chain's first
  residue, as a terminus-specific scale does for an unmodified chain).

Names match without regard to case (as ProForma 2.0 asks of modification names).

Examples
--------
>>> table = load_modifications()
>>> row = table.match("Phospho", "S")
>>> row.accession, row.removes, row.add_pka
('UNIMOD:21', (), (1.2, 5.7))
>>> table.match("UNIMOD:37", "K").name
'Trimethyl'
"""

from __future__ import annotations

import functools
import math
from collections.abc import Iterable
from dataclasses import dataclass, field

from .errors import ScaleError
from .scales import AMINO_ACIDS, GROUPS, Scale
from .sites import Site
from .tables import Row, packaged_csv

__all__ = [
    "GROUP_CODES",
    "Modification",
    "ModificationTable",
    "load_modifications",
    "list_modifications",
    "scale_pka",
]

#: Group codes a row may remove or take its pKa from (``scale:X``).
GROUP_CODES = tuple(GROUPS)
_COLUMNS = (
    "name", "unimod", "aliases", "target", "removes", "add_label", "add_pka", "add_charge",
    "mono_delta", "avg_delta", "pka_source", "source",
)  # fmt: skip
_PATH = "zwitter/data/modifications.csv"

#: Short conventional prefixes for member names (``pS12`` for phosphoserine 12; common practice
#: in the phosphoproteomics and sulfation literature). Others are named ``K12[Trimethyl]``.
MEMBER_PREFIX = {"Phospho": "p", "Sulfo": "s"}


def _fail(reason: str, path: str, line: int, column: str) -> ScaleError:
    return ScaleError(reason, path, line, column)


@dataclass(frozen=True)
class Modification:
    """One row of the modification table: a modification at one kind of position.

    Attributes
    ----------
    name, unimod, aliases
        Unimod name (as written in ProForma), accession number and other accepted names.
    target
        A one-letter residue (side chain), ``"N-term"``, ``"C-term"``, or ``"X@N-term"`` /
        ``"X@C-term"`` (residue X, only at that terminus).
    removes
        Group codes (``Nterm Cterm D E C Y H K R U``) abolished at that position.
    add_label, add_pka, add_scale_group, add_charge
        The group created: label, pKa steps (ascending; empty for a permanent charge or when the
        pKa is the scale's value for ``add_scale_group``) and charge of its most protonated state.
        ``add_label`` empty: nothing is created.
    mono_delta, avg_delta
        Monoisotopic and average mass change in Da (Unimod).
    pka_source, source
        Where the pKa comes from; Unimod accession, composition and chemistry note.
    """

    name: str
    unimod: int
    target: str
    removes: tuple[str, ...] = ()
    add_label: str = ""
    add_pka: tuple[float, ...] = ()
    add_scale_group: str = ""
    add_charge: int | None = None
    mono_delta: float = 0.0
    avg_delta: float = 0.0
    aliases: tuple[str, ...] = ()
    pka_source: str = ""
    source: str = ""
    path: str = field(default=_PATH, compare=False)
    line: int = field(default=0, compare=False)

    def __post_init__(self) -> None:
        where = (self.path, self.line)
        if not self.name:
            raise _fail("empty modification name", *where, "name")
        if self.unimod <= 0:
            raise _fail(
                f"Unimod accession must be a positive integer, got {self.unimod}", *where, "unimod"
            )
        residue, terminus = _split_target(self.target)
        if residue is None:
            raise _fail(
                f"target {self.target!r} must be a one-letter residue, N-term, C-term, X@N-term or "
                "X@C-term",
                *where,
                "target",
            )
        for code in self.removes:
            if code not in GROUPS:
                raise _fail(
                    f"removes {code!r}: allowed group codes are {', '.join(GROUP_CODES)}",
                    *where,
                    "removes",
                )
            if code == "Nterm" and terminus != "N-term":
                raise _fail("only an N-terminal target can remove Nterm", *where, "removes")
            if code == "Cterm" and terminus != "C-term":
                raise _fail("only a C-terminal target can remove Cterm", *where, "removes")
            if code not in ("Nterm", "Cterm") and code != residue:
                raise _fail(
                    f"a modification of {residue or 'a terminus'} cannot remove the {code} "
                    "side chain",
                    *where,
                    "removes",
                )
        if len(set(self.removes)) != len(self.removes):
            raise _fail("a group is listed twice in removes", *where, "removes")
        if bool(self.add_label) != (self.add_charge is not None):
            raise _fail("add_charge must be given exactly when add_label is", *where, "add_charge")
        if self.add_pka and self.add_scale_group:
            raise _fail("add_pka is either numbers or scale:X, not both", *where, "add_pka")
        if (self.add_pka or self.add_scale_group) and not self.add_label:
            raise _fail("add_pka given without add_label", *where, "add_pka")
        if any(not math.isfinite(p) or not -2.0 < p < 15.0 for p in self.add_pka):
            raise _fail(f"add_pka values {self.add_pka} must lie in (-2, 15)", *where, "add_pka")
        if list(self.add_pka) != sorted(set(self.add_pka)):
            raise _fail(
                f"add_pka steps {self.add_pka} must be strictly ascending", *where, "add_pka"
            )
        if self.add_scale_group:
            if self.add_scale_group not in GROUPS:
                raise _fail(
                    f"scale:{self.add_scale_group}: allowed groups are {', '.join(GROUP_CODES)}",
                    *where,
                    "add_pka",
                )
            if self.add_charge != GROUPS[self.add_scale_group][0]:
                raise _fail(
                    f"scale:{self.add_scale_group} needs add_charge "
                    f"{GROUPS[self.add_scale_group][0]}, got {self.add_charge}",
                    *where,
                    "add_charge",
                )
        if (
            self.add_label
            and not self.add_pka
            and not self.add_scale_group
            and self.add_charge == 0
        ):
            raise _fail("a permanent charge (no pKa) cannot be 0", *where, "add_charge")
        if self.add_label and not self.pka_source:
            raise _fail("a created group needs its pka_source", *where, "pka_source")
        for value, column in ((self.mono_delta, "mono_delta"), (self.avg_delta, "avg_delta")):
            if not math.isfinite(value):
                raise _fail(f"{column} must be finite", *where, column)

    # -- what it is ---------------------------------------------------------------------------
    @property
    def accession(self) -> str:
        return f"UNIMOD:{self.unimod}"

    @property
    def residue(self) -> str:
        """The residue the row needs (``""`` for any residue at a terminus)."""
        return _split_target(self.target)[0] or ""

    @property
    def terminus(self) -> str:
        """``"N-term"``, ``"C-term"`` or ``""`` (a side chain anywhere)."""
        return _split_target(self.target)[1]

    @property
    def is_permanent(self) -> bool:
        return bool(self.add_label) and not self.add_pka and not self.add_scale_group

    @property
    def changes_sites(self) -> bool:
        """True when the row removes or creates an ionizable group."""
        return bool(self.removes or self.add_label)

    def effect(self) -> str:
        """A one-line description of what the row does to ionizable groups."""
        parts = []
        if self.removes:
            parts.append("removes " + ", ".join(GROUPS[c][1] for c in self.removes))
        if self.add_label:
            if self.is_permanent:
                parts.append(f"adds {self.add_label} (permanent {self.add_charge:+d})")
            elif self.add_scale_group:
                parts.append(f"adds {self.add_label} (pKa of scale group {self.add_scale_group})")
            else:
                steps = "; ".join(f"{p:g}" for p in self.add_pka)
                parts.append(f"adds {self.add_label} (pKa {steps})")
        return "; ".join(parts) if parts else "no ionizable group changes"

    def added_site(
        self,
        scale: Scale,
        residue: str,
        *,
        at_nterm: bool = False,
        at_cterm: bool = False,
        member: str = "",
    ) -> Site | None:
        """The site this row creates at ``residue`` (None when it creates none).

        ``residue`` is the residue carrying the modification (for a terminal target, the terminal
        residue); ``at_nterm``/``at_cterm`` say whether it is the chain's first/last residue, which
        picks terminus-specific values for ``scale:X`` pKa values.
        """
        if not self.add_label or self.add_charge is None:
            return None
        members = (member,) if member else ()
        if self.add_scale_group:
            pka, source = scale_pka(scale, self.add_scale_group, residue, at_nterm, at_cterm)
            return Site(
                self.add_label, (pka,), self.add_charge, 1.0,
                f"{source} (scale {scale.key}, group {self.add_scale_group}); {self.pka_source}",
                self.add_scale_group, members,
            )  # fmt: skip
        return Site(
            self.add_label, self.add_pka, self.add_charge, 1.0, self.pka_source,
            f"{self.name}@{self.target}", members,
        )  # fmt: skip


def scale_pka(
    scale: Scale, group: str, residue: str, at_nterm: bool, at_cterm: bool
) -> tuple[float, str]:
    """(pKa, source) a scale gives ``group`` on ``residue`` in its chain context.

    The alpha-amino pKa takes the scale's value for the N-terminal ``residue`` when it has one,
    the alpha-carboxyl the value for the C-terminal residue; a side chain at a terminus takes the
    terminal side-chain value (C-terminal first, as :mod:`zwitter.sequence` does).
    """
    if group not in scale.pka:
        raise ScaleError(
            f"scale {scale.key!r} gives no pKa for group {group!r}, which a modification needs"
        )
    if group == "Nterm" and residue in scale.nterm:
        return scale.nterm[residue], scale.source_of(group, residue)
    if group == "Cterm" and residue in scale.cterm:
        return scale.cterm[residue], scale.source_of(group, residue)
    if group not in ("Nterm", "Cterm"):
        if at_cterm and group in scale.side_cterm:
            return scale.side_cterm[group], scale.source_of(group, "Cterm")
        if at_nterm and group in scale.side_nterm:
            return scale.side_nterm[group], scale.source_of(group, "Nterm")
    return scale.pka[group], scale.source_of(group)


def _readable_target(target: str) -> str:
    residue, terminus = _split_target(target)
    if residue and terminus:
        return f"{residue} at the {terminus}inus"
    return target


def _split_target(target: str) -> tuple[str | None, str]:
    """(residue or '' for any, terminus or '') of a target; residue None when malformed."""
    if target in ("N-term", "C-term"):
        return "", target
    if len(target) == 1:
        return (target, "") if target in AMINO_ACIDS else (None, "")
    if len(target) == 8 and target[1] == "@" and target[2:] in ("N-term", "C-term"):
        return (target[0], target[2:]) if target[0] in AMINO_ACIDS else (None, "")
    return None, ""


def _row_to_modification(row: Row) -> Modification:
    def integer(column: str, *, optional: bool = False) -> int | None:
        raw = row[column]
        if optional and raw == "":
            return None
        try:
            return int(raw)
        except ValueError:
            raise _fail(f"expected an integer, got {raw!r}", row.path, row.line, column) from None

    raw_pka = row["add_pka"]
    pkas: tuple[float, ...] = ()
    scale_group = ""
    if raw_pka.startswith("scale:"):
        scale_group = raw_pka[len("scale:") :]
    elif raw_pka:
        try:
            pkas = tuple(float(p) for p in raw_pka.split(";"))
        except ValueError:
            raise _fail(
                f"add_pka must be numbers separated by ';' or scale:X, got {raw_pka!r}",
                row.path, row.line, "add_pka",
            ) from None  # fmt: skip
    unimod = integer("unimod")
    assert unimod is not None
    return Modification(
        name=row["name"],
        unimod=unimod,
        target=row["target"],
        removes=tuple(c.strip() for c in row["removes"].split(";") if c.strip()),
        add_label=row["add_label"],
        add_pka=pkas,
        add_scale_group=scale_group,
        add_charge=integer("add_charge", optional=True),
        mono_delta=row.number("mono_delta"),
        avg_delta=row.number("avg_delta"),
        aliases=tuple(a.strip() for a in row["aliases"].split("|") if a.strip()),
        pka_source=row["pka_source"],
        source=row["source"],
        path=row.path,
        line=row.line,
    )


class ModificationTable:
    """The modification rows, indexed by name, alias and accession (case-insensitive)."""

    def __init__(self, rows: Iterable[Modification]) -> None:
        self.rows = tuple(rows)
        self._by_key: dict[str, list[Modification]] = {}
        seen: dict[tuple[str, str], Modification] = {}
        for mod in self.rows:
            keys = {mod.name.casefold(), mod.accession.casefold()}
            keys.update(a.casefold() for a in mod.aliases)
            for key in keys:
                clash = seen.get((key, mod.target))
                if clash is not None and clash is not mod:
                    raise _fail(
                        f"{key!r} on {mod.target} already means {clash.name} (line {clash.line})",
                        mod.path, mod.line, "aliases",
                    )  # fmt: skip
                seen[(key, mod.target)] = mod
                self._by_key.setdefault(key, []).append(mod)

    def __len__(self) -> int:
        return len(self.rows)

    def names(self) -> list[str]:
        """Distinct modification names, in table order."""
        return list(dict.fromkeys(m.name for m in self.rows))

    def rows_for(self, key: str | int) -> tuple[Modification, ...]:
        """Every row a name, alias or accession (``21``, ``"UNIMOD:21"``) refers to."""
        k = f"unimod:{key}" if isinstance(key, int) else key.strip().casefold()
        return tuple(self._by_key.get(k, ()))

    def targets(self, key: str | int) -> tuple[str, ...]:
        """Targets of a name, readable (for error messages): ``('S', 'T', 'Y', 'H')`` for Phospho,
        ``('Q at the N-terminus',)`` for Gln->pyro-Glu."""
        return tuple(dict.fromkeys(_readable_target(m.target) for m in self.rows_for(key)))

    def match(
        self,
        key: str | int,
        residue: str,
        *,
        position: str = "side",
        first: bool = False,
        last: bool = False,
    ) -> Modification | None:
        """The row ``key`` means at a position, or None when it cannot modify it.

        ``position`` is ``"side"`` (the modification follows ``residue``), ``"N-term"`` or
        ``"C-term"`` (a terminal modification; ``residue`` is then the terminal residue).
        ``first``/``last`` say whether ``residue`` is the chain's first/last residue: a row whose
        target is ``X@N-term`` (pyroglutamate from Q) matches a side modification of the first
        residue and an N-terminal modification alike.
        """
        if position == "side":
            wanted = [residue]
            if first:
                wanted.append(f"{residue}@N-term")
            if last:
                wanted.append(f"{residue}@C-term")
        elif position in ("N-term", "C-term"):
            wanted = [position, f"{residue}@{position}"]
        else:
            raise ValueError(f"position must be side, N-term or C-term, got {position!r}")
        rows = self.rows_for(key)
        for target in wanted:
            for mod in rows:
                if mod.target == target:
                    return mod
        return None

    def suggestions(self, key: str, n: int = 3) -> list[str]:
        """Known names close to ``key`` (for 'did you mean')."""
        import difflib

        names = {m.name.casefold(): m.name for m in self.rows}
        names.update({a.casefold(): a for m in self.rows for a in m.aliases})
        close = difflib.get_close_matches(key.casefold(), list(names), n=n, cutoff=0.6)
        return [names[c] for c in close]


@functools.cache
def load_modifications() -> ModificationTable:
    """The packaged modification table (cached); a malformed row fails with file, line, column."""
    rows = packaged_csv("modifications.csv", _COLUMNS)
    return ModificationTable(_row_to_modification(r) for r in rows)


def list_modifications() -> list[Modification]:
    """Every row of the packaged table, in file order."""
    return list(load_modifications().rows)
