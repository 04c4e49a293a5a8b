"""One entry point for any text input: plain sequence, ProForma or SMILES.

Detection rule (``kind="auto"``), documented for users:

* only amino-acid letters (any case), whitespace and an optional final ``*`` -> plain sequence;
* upper-case letters with ProForma markup (``[...]`` modifications holding a name or accession,
  ``-`` terminal modifications, ``//`` chains, ``<...>`` global modifications, a ``2x`` prefix)
  -> ProForma;
* anything else -> SMILES.

Pass ``kind`` explicitly when a short string could be both (``"CCO"`` is the peptide Cys-Cys-Pyl
as a sequence and ethanol as SMILES: auto reads it as a sequence).
"""

from __future__ import annotations

import re
from typing import Any

from .errors import ParameterError
from .molecule import Molecule

__all__ = ["KINDS", "detect_kind", "molecule_from_text"]

KINDS = ("auto", "sequence", "proforma", "smiles")

_SEQUENCE = re.compile(r"^[A-Za-z\s]+\*?\s*$")
_PROFORMA_HINT = re.compile(
    r"(^\s*\d+x)|(//)|(^<\[)|(\[[A-Za-z#+\-][^\]]*\])|(^\s*\[[^\]]+\]-)|(-\[[^\]]+\]\s*$)"
)


_SMILES_ATOM = re.compile(
    r"^\d*[A-Z][a-z]?(@{1,2})?(H\d*)?([+-]\d*)*(:\d+)?$|^\d*[a-z]{1,2}([+-]\d*)?$"
)


def detect_kind(text: str) -> str:
    """``"sequence"``, ``"proforma"`` or ``"smiles"`` for a text (see module docstring)."""
    if not text.strip() or _SEQUENCE.match(text):
        return "sequence"
    stripped = text.strip()
    if any(_SMILES_ATOM.match(inner) for inner in re.findall(r"\[([^\]]*)\]", stripped)):
        return "smiles"
    letters_outside = re.sub(r"\[[^\]]*\]|<[^>]*>|\{[^}]*\}|\([^)]*\)", "", stripped)
    if _PROFORMA_HINT.search(stripped) and not re.search(
        r"[a-z0-9=#@+\\/]", _plain(letters_outside)
    ):
        return "proforma"
    return "smiles"


def _plain(text: str) -> str:
    # Drop what ProForma allows outside brackets besides residues: chain separators, the terminal
    # dashes next to brackets, stoichiometry prefixes.
    text = re.sub(r"(^|//)\s*\d+x", r"\1", text)
    return text.replace("//", "").replace("-", "")


def molecule_from_text(text: str, kind: str = "auto", **options: Any) -> Molecule:
    """Read any supported input into a :class:`Molecule`.

    ``options`` go to the reader: ``scale``, ``cys``, ``conditions`` for sequences and ProForma,
    ``conditions`` and structure options for SMILES.
    """
    if kind not in KINDS:
        raise ParameterError("kind", "molecule_from_text", f"one of {', '.join(KINDS)}", kind)
    auto = kind == "auto"
    if auto:
        kind = detect_kind(text)
    if kind == "sequence":
        from .sequence import from_sequence

        return from_sequence(text, **options)
    if kind == "proforma":
        from .proforma import from_proforma

        peptide: Molecule = from_proforma(text, **options)
        return peptide
    from .errors import StructureError
    from .structure import from_smiles

    structure_options = {k: v for k, v in options.items() if k not in ("scale", "cys")}
    try:
        molecule: Molecule = from_smiles(text, **structure_options)
    except StructureError:
        if auto and _mostly_residues(text):
            # "MKWV1TF" is a mistyped sequence far more often than a SMILES: say what is wrong
            # with it as a sequence (the character and its position).
            from .sequence import from_sequence

            return from_sequence(text, **options)
        raise
    return molecule


def _mostly_residues(text: str) -> bool:
    """Upper-case residue letters with a few stray characters and none of SMILES' bond, branch
    or bracket marks: a sequence with a typo rather than a SMILES."""
    chars = [c for c in text if not c.isspace()]
    if not chars or any(c in "()[]=#@+\\/.%" for c in chars):
        return False
    if all(c in "BCNOPSFI" for c in chars if c.isalpha()):
        return False  # only SMILES organic-subset atoms ("C1CC"): a SMILES, not a sequence
    residues = sum(c in "ACDEFGHIKLMNPQRSTVWYUOBZJX" for c in chars)
    return residues >= 2 and residues >= 0.6 * len(chars)
