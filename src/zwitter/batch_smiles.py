"""SMILES batches: ``.smi``, ``.csv``/``.tsv`` (with a SMILES column) and ``.sdf`` inputs.

The main process reads records with :func:`zwitter.structure.iter_smiles_file` (bad rows are kept
with their error), turns SDF molecules into SMILES text, and cuts blocks of ``chunk_size``
records; workers score each record with :func:`zwitter.structure.from_smiles`. Structures do not
share site types, so this is a loop over molecules inside a block (the sequence path is the
vectorised one). Every record gets exactly one output row, in input order.

Columns: input, id, smiles (as given), dominant_form and dominant_charge at the first ``--ph``,
average and monoisotopic mass of the kept fragment (neutral reference form; RDKit), pI, charge
at each pH, number of acidic, basic and permanently charged sites, removed fragments, warnings,
error.
"""

from __future__ import annotations

import json
import math
import warnings
from collections.abc import Iterator
from typing import Any

import numpy as np

from .batch import BatchOptions, Block, Columns, InputFormat, charge_column, register_input_format
from .errors import ZwitterError

__all__ = ["smiles_format", "smiles_columns", "SMILES_SUFFIXES", "SMILES_CHUNK_SIZE"]

SMILES_SUFFIXES = (".smi", ".smiles", ".sdf", ".sd", ".csv", ".tsv")
#: Records per block by default: a structure costs about 1 ms (RDKit parsing, group search,
#: microstates; benchmarks/README.md), so a block is a quarter of a second of work, and even a
#: few thousand molecules keep every worker busy (10,000 per block, the sequence default, made
#: one block of RDKit's 5,000-molecule NCI sample: one worker did it all).
SMILES_CHUNK_SIZE = 250


def smiles_columns(options: BatchOptions) -> list[tuple[str, str]]:
    """(name, kind) of the output columns of SMILES records."""
    cols = [("input", "str"), ("id", "str"), ("smiles", "str"), ("dominant_form", "str")]
    cols += [("dominant_charge", "float"), ("average_mass", "float")]
    cols += [("monoisotopic_mass", "float"), ("pI", "float")]
    cols += [(charge_column(p), "float") for p in options.ph]
    cols += [("n_acidic_sites", "int"), ("n_basic_sites", "int"), ("n_permanent", "int")]
    cols += [("removed_fragments", "str"), ("warnings", "str"), ("error", "str")]
    return cols


def smiles_format(column: str | None = None, id_column: str | None = None) -> InputFormat:
    """The SMILES input format, reading the SMILES (and id) from the named CSV/TSV columns."""

    def split(path: str, label: str, input_index: int, chunk_size: int) -> Iterator[Block]:
        return _split(path, label, input_index, chunk_size, column, id_column)

    return InputFormat(
        "smiles", SMILES_SUFFIXES, split, smiles_columns, _sniff, chunk_size=SMILES_CHUNK_SIZE
    )


def _sniff(head: bytes) -> bool:
    text = head.decode("utf-8", errors="replace").lstrip()
    if not text or text.startswith(">"):
        return False
    first = text.splitlines()[0]
    return "$$$$" in text or first.lower().split(",")[0].strip() in ("smiles", "id")


def _split(
    path: str, label: str, input_index: int, chunk_size: int, column: str | None,
    id_column: str | None,
) -> Iterator[Block]:  # fmt: skip
    from .structure import _rdkit, iter_smiles_file

    chem = None
    batch: list[tuple[str, str, str]] = []
    number = 0
    for rec in iter_smiles_file(path, column=column, id_column=id_column):
        number += 1
        mol = rec.molecule
        error = "" if rec.error is None else str(rec.error)
        if mol is not None and not isinstance(mol, str):  # an SDF record: RDKit Mol
            chem = chem or _rdkit()
            try:
                mol = chem.MolToSmiles(mol)
            except Exception as exc:  # noqa: BLE001 - RDKit raises its own types
                mol, error = "", f"cannot write SMILES for the SDF record: {exc}"
        batch.append((str(rec.id), "" if mol is None else str(mol), error))
        if len(batch) >= chunk_size:
            yield _block(label, input_index, batch, number - len(batch) + 1)
            batch = []
    if batch:
        yield _block(label, input_index, batch, number - len(batch) + 1)


def _block(label: str, input_index: int, records: list[tuple[str, str, str]], first: int) -> Block:
    data = json.dumps(records, ensure_ascii=False).encode("utf-8")
    return Block(label, input_index, data, first, 0, _score_smiles_block)


def _score_smiles_block(block: Block, options: BatchOptions) -> Columns:
    from .structure import _rdkit, from_smiles

    records = json.loads(block.data.decode("utf-8"))
    n = len(records)
    chem = _rdkit()
    from rdkit.Chem import Descriptors, rdMolDescriptors

    average_mass = getattr(Descriptors, "MolWt")  # noqa: B009 - defined at run time by RDKit

    text = {k: np.full(n, "", dtype=object) for k in
            ("dominant_form", "removed_fragments", "warnings", "error")}  # fmt: skip
    floats = {k: np.full(n, math.nan) for k in
              ("dominant_charge", "average_mass", "monoisotopic_mass", "pI")}  # fmt: skip
    charges = np.full((n, len(options.ph)), math.nan)
    counts = {k: np.zeros(n, dtype=np.int64) for k in
              ("n_acidic_sites", "n_basic_sites", "n_permanent")}  # fmt: skip
    failed = np.zeros(n, dtype=bool)
    ph = np.asarray(options.ph, dtype=float)
    for i, (ident, smiles, error) in enumerate(records):
        if error:
            text["error"][i], failed[i] = error, True
            continue
        with warnings.catch_warnings(record=True) as caught:
            warnings.simplefilter("always")
            try:
                mol = from_smiles(smiles, conditions=options.conditions, name=ident)
                pi = mol.isoelectric_point()
                charges[i] = np.atleast_1d(mol.charge(ph))
                dom = mol.dominant(float(ph[0]))
            except ZwitterError as exc:
                text["error"][i], failed[i] = str(exc), True
                continue
        sites = mol.sites
        top = sites.charges  # charge of the most protonated state of each site
        titr = sites.nsteps > 0
        counts["n_acidic_sites"][i] = int(sites.counts[titr & (top <= 0)].sum())
        counts["n_basic_sites"][i] = int(sites.counts[titr & (top > 0)].sum())
        counts["n_permanent"][i] = int(sites.counts[~titr].sum())
        floats["pI"][i] = math.nan if pi is None else pi
        floats["dominant_charge"][i] = dom.charge
        text["dominant_form"][i] = getattr(dom, "smiles", "")
        if mol.mol is not None:
            neutral = chem.Mol(mol.mol)
            floats["average_mass"][i] = round(average_mass(neutral), 5)
            floats["monoisotopic_mass"][i] = round(rdMolDescriptors.CalcExactMolWt(neutral), 5)
        text["removed_fragments"][i] = " ".join(mol.removed_fragments)
        notes = [str(w.message) for w in caught if issubclass(w.category, UserWarning)]
        text["warnings"][i] = "; ".join(dict.fromkeys(notes))
    data: dict[str, Any] = {
        "input": np.full(n, block.source, dtype=object),
        "id": np.asarray([r[0] for r in records], dtype=object),
        "smiles": np.asarray([r[1] for r in records], dtype=object),
        "dominant_form": text["dominant_form"],
        "dominant_charge": floats["dominant_charge"],
        "average_mass": floats["average_mass"],
        "monoisotopic_mass": floats["monoisotopic_mass"],
        "pI": floats["pI"],
    }
    for j, p in enumerate(options.ph):
        data[charge_column(p)] = charges[:, j]
    for key, values in counts.items():
        data[key] = np.ma.MaskedArray(values, mask=failed.copy())
    for key in ("removed_fragments", "warnings", "error"):
        data[key] = text[key]
    return data


register_input_format(smiles_format())
