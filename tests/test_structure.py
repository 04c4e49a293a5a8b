"""SMILES path: reading, standardisation, group detection, pKa assignment, forms, files, CLI.

Outside references: data/reference/small_molecule_pka.csv (CRC Handbook, Perrin's and Albert &
Serjeant's compilations, Clarke's, Good 1966, Martell & Smith for the chelators; source per row),
data/reference/free_amino_acids.csv (Nelson & Cox, Lehninger 4th ed., Table 3-1), RDKit
(parsing, canonical SMILES, formal charges, its bundled NCI sample file and SDF), and zwitter's
sequence path with a published scale (Thurlkill et al. 2006) for peptides drawn as SMILES.
"""

from __future__ import annotations

import csv
import math
import os
import pickle
import re
import time
import warnings
from collections import defaultdict
from pathlib import Path
from typing import Any

import numpy as np
import pytest
from hypothesis import HealthCheck, assume, given, settings
from hypothesis import strategies as st
from rdkit import Chem, RDConfig, rdBase

import zwitter
from zwitter.conditions import davies_pka_shift
from zwitter.errors import (
    InputFileError,
    ParameterError,
    ScaleError,
    StructureError,
    ZwitterError,
    ZwitterWarning,
)
from zwitter.microstates import Microstates
from zwitter.structure import (
    StructureMolecule,
    from_smiles,
    group_keys,
    group_types,
    iter_smiles_file,
    reactions,
    substituents,
)

ROOT = Path(__file__).resolve().parents[1]
REFERENCE = ROOT / "data" / "reference" / "small_molecule_pka.csv"
AMINO_ACIDS = ROOT / "data" / "reference" / "free_amino_acids.csv"
NCI = Path(RDConfig.RDDataDir) / "NCI" / "first_5K.smi"
NCI_SDF = Path(RDConfig.RDDataDir) / "NCI" / "first_200.props.sdf"


def _rows() -> list[dict[str, str]]:
    with open(REFERENCE, encoding="utf-8") as fh:
        return list(csv.DictReader(line for line in fh if not line.startswith("#")))


ROWS = _rows()


def _row_conditions(row: dict[str, str]) -> zwitter.Conditions | None:
    """The conditions a reference row was measured at (column ionic_strength; empty: I -> 0)."""
    if not row["ionic_strength"]:
        return None
    return zwitter.Conditions(ionic_strength=float(row["ionic_strength"]), ph_scale="concentration")


def _quiet(smiles: Any, **kw: Any) -> StructureMolecule:
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", ZwitterWarning)
        return from_smiles(smiles, **kw)


# -- the packaged tables -------------------------------------------------------------------------
def test_group_library_has_at_least_40_types_with_sources() -> None:
    groups = group_types()
    assert len(groups) >= 40
    keys = group_keys()
    assert len(keys) == len(set(keys)) == len(groups)
    kinds = {g.kind for g in groups}
    assert kinds == {"acid", "base"}
    for g in groups:
        assert g.source and g.label, g.key
        assert g.charge in (0, 1)
        assert g.lfer == "none" or g.lfer in reactions()
    # the list of group families is covered
    for key in (
        "carboxylic_acid",
        "aromatic_carboxylic_acid",
        "phenol",
        "thiol",
        "amine_primary",
        "amine_secondary",
        "amine_tertiary",
        "amine_secondary_cyclic",
        "aniline",
        "pyridine",
        "imidazole",
        "benzimidazole",
        "amidine",
        "guanidine",
        "tetrazole",
        "sulfonamide",
        "acylsulfonamide",
        "sulfonylurea",
        "imide",
        "hydroxamic_acid",
        "barbiturate",
        "uracil",
        "beta_diketone",
        "phosphoric_acid",
        "phosphonic_acid",
        "phosphate_monoester",
        "sulfonic_acid",
        "sulfuric_acid",
        "boronic_acid",
        "hydrazine",
        "amidoxime",
    ):
        assert key in keys


def test_substituent_and_reaction_tables_load_with_sources() -> None:
    subs = substituents()
    assert len(subs) >= 30
    for s in subs:
        if s.sigma_m is not None or s.sigma_p is not None:
            assert s.source_hammett
        if s.sigma_star is not None:
            assert s.source_taft
    r = reactions()
    # Hammett 1937 J. Am. Chem. Soc. 59:96: rho = 1 for benzoic acids by definition
    assert r["hammett_benzoic"].rho == 1.0
    assert {x.kind for x in r.values()} == {"hammett", "taft"}


def test_malformed_smarts_is_reported_with_file_and_line() -> None:
    from zwitter.structure import _query
    from zwitter.tables import read_csv_text

    row = read_csv_text("key,smarts\nbad,[C:1](\n", "demo.csv", ("key", "smarts"))[0]
    with pytest.raises(
        ScaleError, match=r"demo\.csv, line 2, column 'smarts': invalid group SMARTS"
    ):
        _query(row["smarts"], row, "group")


def test_bad_saturation_factor_and_class_smarts_are_reported(
    monkeypatch: pytest.MonkeyPatch,
) -> None:
    import zwitter.structure as zs
    from zwitter.tables import read_csv_text

    text = "key,kind,rho,smarts\ntaft_saturation,saturation,1.2,\nc,coupling,1.5,[N:1](\n"
    rows = tuple(read_csv_text(text, "demo.csv", ("key", "kind", "rho")))
    monkeypatch.setattr(zs, "packaged_csv", lambda *a, **k: rows)
    with pytest.raises(
        ScaleError, match=r"demo\.csv, line 2, column 'rho': saturation factor must be in \(0, 1\]"
    ):
        zs.taft_saturation.__wrapped__()
    with pytest.raises(
        ScaleError, match=r"demo\.csv, line 3, column 'smarts': invalid coupling-class SMARTS"
    ):
        zs._class_query.__wrapped__("[N:1](")
    text = "key,kind,rho,smarts\nn,shift,0.5,[N:1]\nm,shift,0.5,\n"
    rows = tuple(read_csv_text(text, "demo.csv", ("key", "kind", "rho")))
    monkeypatch.setattr(zs, "packaged_csv", lambda *a, **k: rows)
    with pytest.raises(ScaleError, match=r"demo\.csv, line 3, column 'smarts': a shift row needs"):
        zs.intrinsic_shifts.__wrapped__()


# -- reference table: detection and accuracy -----------------------------------------------------
@pytest.mark.parametrize("row", ROWS, ids=[r["name"] for r in ROWS])
def test_every_group_is_found_and_none_invented(row: dict[str, str]) -> None:
    m = _quiet(row["smiles"])
    found = sorted(s.group.key for s in m.structure_sites)
    assert found == sorted(row["groups"].split()), row["name"]
    assert len(m.pkas()) == len(row["pkas"].split(";")), "one macroscopic pKa per step"


def _errors() -> tuple[dict[str, list[float]], list[float], list[float]]:
    """(absolute errors by group type, all scored errors, errors of role=test rows), each row
    scored at its own conditions (the chelators at I = 0.1 M, concentration scale)."""
    by_group: dict[str, list[float]] = defaultdict(list)
    scored: list[float] = []
    tests: list[float] = []
    for row in ROWS:
        pred = _quiet(row["smiles"], conditions=_row_conditions(row)).pkas()
        for p, ref, group in zip(pred, row["pkas"].split(";"), row["pka_groups"].split(";")):
            if ref == "nd":
                continue
            err = abs(p - float(ref))
            scored.append(err)
            if row["role"] != "parent":
                by_group[group].append(err)
            if row["role"] == "test":
                tests.append(err)
    return by_group, scored, tests


def test_reference_table_mean_absolute_error() -> None:
    by_group, scored, tests = _errors()
    assert len(scored) >= 200 and len(tests) >= 150
    overall = float(np.mean(scored))
    held_out = float(np.mean(tests))
    # The target is an overall MAE below 0.6; the rows that were used for nothing but
    # testing must meet it on their own too (parents are exact by construction).
    assert overall < 0.6, overall
    assert held_out < 0.6, held_out
    # a per-group table exists for every group type that has test or calibration rows
    assert {"carboxylic_acid", "phenol", "aniline", "pyridine", "amine_primary"} <= set(by_group)


#: Peptide side-chain groups: their values are the peptide scale's (Thurlkill et al. 2006), and
#: they are checked against the sequence path on the peptides of the peptide test below, not by
#: rows of the small-molecule table (no handbook value of such a peptide was at hand).
PEPTIDE_SIDE_CHAINS = {
    "peptide_asp": "D",
    "peptide_glu": "E",
    "peptide_tyr": "Y",
    "peptide_his": "H",
    "peptide_lys": "K",
    "peptide_arg": "R",
}


def test_reference_table_covers_every_group_type() -> None:
    covered = {g for row in ROWS for g in row["groups"].split()}
    assert set(group_keys()) - set(PEPTIDE_SIDE_CHAINS) <= covered
    assert {"peptide_n_terminus", "peptide_c_terminus", "peptide_cys"} <= covered
    for code in PEPTIDE_SIDE_CHAINS.values():  # the peptide test holds each of them
        assert any(code in seq for seq in PEPTIDES), code
    assert len({r["name"] for r in ROWS}) >= 80


# -- polyprotic molecules ------------------------------------------------------------------------
def _close(pred: list[float], ref: list[float], tol: float) -> None:
    assert len(pred) == len(ref)
    for p, r in zip(pred, ref):
        assert abs(p - r) <= tol, (pred, ref)


def test_phosphoric_acid_crc() -> None:
    # CRC Handbook, dissociation constants of inorganic acids: 2.15, 7.20, 12.35
    _close(from_smiles("OP(=O)(O)O").pkas(), [2.15, 7.20, 12.35], 0.5)


def test_citric_acid_crc() -> None:
    # CRC Handbook, dissociation constants of organic acids: 3.13, 4.76, 6.40
    _close(from_smiles("OC(=O)CC(O)(CC(=O)O)C(=O)O").pkas(), [3.13, 4.76, 6.40], 0.5)


def test_glycine_lehninger() -> None:
    # Nelson & Cox 2005, Lehninger 4th ed., Table 3-1: 2.34, 9.60 (data/reference)
    with open(AMINO_ACIDS, encoding="utf-8") as fh:
        row = next(
            r for r in csv.DictReader(x for x in fh if not x.startswith("#")) if r["residue"] == "G"
        )
    m = from_smiles("NCC(=O)O")
    _close(m.pkas(), [float(row["pk_cooh"]), float(row["pk_nh3"])], 0.5)
    assert m.isoelectric_point() == pytest.approx(float(row["pi_listed"]), abs=0.5)


def test_ethylenediamine_crc() -> None:
    # CRC Handbook: 6.85, 9.93 (ethylenediamine is also a calibration row of the coupling)
    _close(from_smiles("NCCN").pkas(), [6.85, 9.93], 0.5)


EDTA = "OC(=O)CN(CC(=O)O)CCN(CC(=O)O)CC(=O)O"


NTA = "OC(=O)CN(CC(=O)O)CC(=O)O"

#: Where Martell & Smith measured the chelator values (I = 0.1 M, concentration constants: pH as
#: -log10 [H+]; data/reference/README.md): the chelator tests evaluate the model there.
TABLES = zwitter.Conditions(ionic_strength=0.1, ph_scale="concentration")


def test_edta_carboxyl_steps_crc() -> None:
    # CRC Handbook / Martell & Smith, Critical Stability Constants vol. 1 (I = 0.1 M): 0.0, 1.5,
    # 2.00, 2.69 for the four carboxyls; all six EDTA values and NTA's four fit the chelator
    # parameters (the aminopolycarboxylic acid value among them) with the model at I = 0.1 M.
    # Measured at I = 0.1 M (concentration scale): 0.67, 1.16, 1.75, 2.25. The two lowest steps
    # (measured in strong acid, one decimal) are held to 0.7, the other two to 0.5.
    m = from_smiles(EDTA, conditions=TABLES)
    assert [s.group.key for s in m.structure_sites].count("aminopolycarboxylic_acid") == 4
    pred = m.pkas()
    _close(pred[:2], [0.0, 1.5], 0.7)
    _close(pred[2:4], [2.00, 2.69], 0.5)


def test_nta_carboxyl_steps_crc() -> None:
    # CRC / Martell & Smith (I = 0.1 M): 1.0, 1.89, 2.49 (calibration values). Measured at
    # I = 0.1 M: 0.98, 1.92, 2.85.
    _close(from_smiles(NTA, conditions=TABLES).pkas()[:3], [1.0, 1.89, 2.49], 0.5)


def test_edta_amine_steps_crc() -> None:
    # CRC Handbook / Martell & Smith, Critical Stability Constants vol. 1 (I = 0.1 M): 6.13 and
    # 10.37. Their spread (4.24; ethylenediamine's is 3.08) fits the aminocarboxylate coupling
    # factor, their level the aminocarboxylate nitrogen shift (lfer_reactions.csv), so both come
    # back closely at I = 0.1 M: measured 6.11 and 10.31.
    m = from_smiles(EDTA, conditions=TABLES)
    _close(m.pkas()[-2:], [6.13, 10.37], 0.1)
    # the factor acts on the N-N pair only: EDTA's two amines are aminocarboxylate nitrogens
    kinds = {kind for i, j, kind, w in m._couplings() if w > 3.0}
    assert kinds == {"cation"}
    # and both amines carry the shift, with its source
    shifted = [s for s in m.structure_sites if any(c.kind == "shift" for c in s.corrections)]
    assert [s.group.key for s in shifted] == ["amine_tertiary", "amine_tertiary"]
    assert all("I = 0.1 M" in c.source for s in shifted for c in s.corrections if c.kind == "shift")


def test_edta_all_steps_within_half_a_unit() -> None:
    # CRC / Martell & Smith (I = 0.1 M): 2.00, 2.69, 6.13, 10.37. Measured at I = 0.1 M:
    # 1.75, 2.25, 6.11, 10.31 (with the parameters fitted at I -> 0 against the same values:
    # 1.41, 1.91, 5.48, 9.48).
    _close(from_smiles(EDTA, conditions=TABLES).pkas()[2:], [2.00, 2.69, 6.13, 10.37], 0.5)


def test_nta_amine_step_within_half_a_unit() -> None:
    # CRC / Martell & Smith (I = 0.1 M): 9.73 (a calibration value). Measured at I = 0.1 M: 9.78
    # (8.95 with the parameters fitted at I -> 0 against the same values).
    _close(from_smiles(NTA, conditions=TABLES).pkas()[3:], [9.73], 0.5)


def test_chelator_rows_are_scored_at_the_ionic_strength_of_their_tables() -> None:
    # The reference rows whose source is Martell & Smith at I = 0.1 M carry ionic_strength 0.1
    # (scored at TABLES); every other row is at I -> 0 (column empty).
    at_salt = {r["name"] for r in ROWS if r["ionic_strength"]}
    assert at_salt == {r["name"] for r in ROWS if "I = 0.1 M" in r["source"]}
    assert {"EDTA", "nitrilotriacetic acid", "EGTA"} <= at_salt and len(at_salt) == 10
    assert {float(r["ionic_strength"]) for r in ROWS if r["ionic_strength"]} == {0.1}
    assert _row_conditions(next(r for r in ROWS if r["name"] == "EDTA")) == TABLES


def _reference(name: str) -> tuple[list[float], list[float | None]]:
    """(zwitter's macroscopic pKa values at the row's conditions, the row's values, None for nd)."""
    row = next(r for r in ROWS if r["name"] == name)
    ref = [None if x == "nd" else float(x) for x in row["pkas"].split(";")]
    return _quiet(row["smiles"], conditions=_row_conditions(row)).pkas(), ref


#: Aminopolycarboxylic acids of data/reference/small_molecule_pka.csv that fitted nothing (role
#: test), all from Martell & Smith, Critical Stability Constants vol. 1, I = 0.1 M (from memory),
#: model at I = 0.1 M: every scored value within 0.5. Measured (reference): PDTA 1.82, 2.26, 7.82,
#: 10.19 (1.88, 2.67, 7.91, 10.27); EGTA 1.94, 2.30, 8.78, 9.24 (2.00, 2.68, 8.85, 9.46); MIDA
#: amine 10.04 (9.59).
CHELATORS_HELD_OUT = [
    "1,3-propylenediaminetetraacetic acid (PDTA, trimethylenediaminetetraacetic acid)",
    "EGTA",
    "N-methyliminodiacetic acid (MIDA)",
]


@pytest.mark.parametrize("name", CHELATORS_HELD_OUT)
def test_held_out_chelators_within_half_a_unit(name: str) -> None:
    pred, ref = _reference(name)
    assert next(r for r in ROWS if r["name"] == name)["role"] == "test"
    scored = [(p, r) for p, r in zip(pred, ref) if r is not None]
    assert scored
    _close([p for p, _ in scored], [r for _, r in scored], 0.5)


def test_iminodiacetic_acid_amine_step_within_half_a_unit() -> None:
    # IDA (held out; Martell & Smith, I = 0.1 M, from memory): amine 9.34. Measured at I = 0.1 M:
    # 9.53 (its secondary N carries no intrinsic shift: the class is the tertiary iminodiacetate
    # N). Its carboxyl steps 1.82, 2.61 come out 1.16, 2.22: the class value is set by NTA and
    # EDTA, whose N carry three and two arms plus a third substituent.
    pred, ref = _reference("iminodiacetic acid (IDA)")
    assert ref[-1] is not None
    assert abs(pred[-1] - ref[-1]) <= 0.5, (pred, ref)


@pytest.mark.xfail(
    reason="EDDA (held out; Martell & Smith, I = 0.1 M, low confidence, 6.53 and 9.57 also "
    "recalled): lower amine step 5.88 against 6.42 at I = 0.1 M (7.26 with the plain coupling: "
    "the aminocarboxylate factor moves it the right way, 0.54 too far); upper step 10.08 against "
    "9.46: secondary aminocarboxylate amines come out too basic (see data/reference/README.md)",
    strict=True,
)
@pytest.mark.parametrize("step", [-2, -1])
def test_edda_amine_steps_within_half_a_unit(step: int) -> None:
    pred, ref = _reference("ethylenediamine-N,N'-diacetic acid (EDDA)")
    expected = ref[step]
    assert expected is not None
    assert abs(pred[step] - expected) <= 0.5, (pred, ref)


@pytest.mark.xfail(
    reason="CDTA at I = 0.1 M: 10.31 against 12.35 and carboxyls 1.75, 2.25 against 2.43, 3.52: a "
    "through-bond model sees CDTA as EDTA; the rigid trans-1,2-cyclohexane bridge (which holds the "
    "two N gauche, where the usual explanation puts an N-H...N hydrogen bond; from memory) is "
    "geometry it does not have",
    strict=True,
)
def test_cdta_within_half_a_unit() -> None:
    pred, ref = _reference("trans-1,2-cyclohexanediaminetetraacetic acid (CDTA)")
    _close([p for p, r in zip(pred, ref) if r is not None], [r for r in ref if r is not None], 0.5)


def test_hedta_chose_the_coupling_class_and_fits() -> None:
    # Martell & Smith, I = 0.1 M (from memory): HEDTA 2.62, 5.37, 9.81. Role calibration: it
    # chose (with DTPA) the aminocarboxylate class of the coupling factor (any N-CH2-CO2H
    # nitrogen) over the narrower iminodiacetate N (tests/test_microstates.py). Measured at
    # I = 0.1 M: 2.59, 5.19, 9.87.
    name = "N-(2-hydroxyethyl)ethylenediamine-N,N',N'-triacetic acid (HEDTA)"
    pred, ref = _reference(name)
    assert next(r for r in ROWS if r["name"] == name)["role"] == "calibration"
    _close([p for p, r in zip(pred, ref) if r is not None], [r for r in ref if r is not None], 0.5)


@pytest.mark.xfail(
    reason="DTPA's forms carry up to 5 charges, so at I = 0.1 M the ionic strength is taken per "
    "site (WHOLE_FORM_MAX_CHARGE = 4), which leaves ammonium steps where they are on the "
    "concentration scale: 3.99, 9.67, 11.18 against 4.27, 8.60, 10.58; the intrinsic shift of its "
    "two iminodiacetate N (fitted on EDTA and NTA, whose forms take the salt whole) is not taken "
    "back by the salt (data/reference/README.md)",
    strict=True,
)
def test_dtpa_within_half_a_unit() -> None:
    name = "diethylenetriaminepentaacetic acid (DTPA)"
    pred, ref = _reference(name)
    assert next(r for r in ROWS if r["name"] == name)["role"] == "calibration"
    _close([p for p, r in zip(pred, ref) if r is not None], [r for r in ref if r is not None], 0.5)


@pytest.mark.parametrize(
    ("name", "before"),
    [
        ("tris(hydroxymethyl)aminomethane (Tris)", 7.41),
        ("triethanolamine", 7.34),
        ("trichloroacetic acid", -0.34),
    ],
)
def test_repeated_polar_substituents_saturate(name: str, before: float) -> None:
    # Held-out checks of the saturation rule (role test rows, CRC; Good et al. 1966 for Tris):
    # three OH on one carbon, three HOCH2CH2 arms on one N, three Cl on one carbon. Additive Taft
    # terms gave the 'before' values (0.66, 0.42, 1.00 off); measured now 0.14, 0.13, 0.18 off.
    pred, ref = _reference(name)
    assert ref[0] is not None and abs(before - ref[0]) > 0.4
    assert abs(pred[0] - ref[0]) <= 0.3, (pred, ref)
    site = _quiet(next(r for r in ROWS if r["name"] == name)["smiles"]).structure_sites[0]
    assert sum("polar term no." in c.detail for c in site.corrections) == 2


def test_free_amino_acids_lehninger() -> None:
    # Nelson & Cox 2005 (data/reference/free_amino_acids.csv): every listed pKa of the 20 amino
    # acids drawn as SMILES (RDKit's MolFromSequence on the one-letter code, an amino acid).
    with open(AMINO_ACIDS, encoding="utf-8") as fh:
        rows = list(csv.DictReader(x for x in fh if not x.startswith("#")))
    errors = []
    for r in rows:
        smi = Chem.MolToSmiles(Chem.MolFromSequence(r["residue"]))
        ref = sorted(float(r[k]) for k in ("pk_cooh", "pk_nh3", "pk_r") if r[k])
        pred = _quiet(smi).pkas()
        if r["residue"] in "YCKHRDE":
            assert len(pred) == 3, r["name"]
        else:
            assert len(pred) == 2, r["name"]
        errors.extend(abs(p - q) for p, q in zip(pred, ref))
    assert float(np.mean(errors)) < 0.5


# -- microstates, dominant form ------------------------------------------------------------------
@settings(max_examples=30, deadline=None)
@given(
    smiles=st.sampled_from(
        [
            "NCC(=O)O",
            EDTA,
            "OC(=O)CC(O)(CC(=O)O)C(=O)O",
            "NCCCC[C@H](N)C(=O)O",
            "OP(=O)(O)OP(=O)(O)O",
            "Nc1ccc(cc1)C(=O)O",
        ]
    ),
    ph=st.floats(-2.0, 16.0),
)
def test_microstate_populations_sum_to_one(smiles: str, ph: float) -> None:
    m = _quiet(smiles)
    assert m.model.populations(ph).sum() == pytest.approx(1.0, abs=1e-9)
    assert m.species(ph, min_population=0.0).population.sum() == pytest.approx(1.0, abs=1e-6)
    frac = m.site_table(ph).fraction_protonated
    assert ((frac >= -1e-12) & (frac <= 1 + 1e-12)).all()


@pytest.mark.parametrize("ph", [1.0, 7.4, 12.0])
@pytest.mark.parametrize("row", ROWS[::3], ids=[r["name"] for r in ROWS[::3]])
def test_dominant_smiles_parses_with_the_reported_charge(row: dict[str, str], ph: float) -> None:
    d = _quiet(row["smiles"]).dominant(ph)
    mol = Chem.MolFromSmiles(d.smiles)  # RDKit reads it back ...
    assert mol is not None
    assert Chem.GetFormalCharge(mol) == d.charge  # ... with the charge zwitter reports
    assert 0 < d.population <= 1


def _reprotonate(smiles: str, choices: list[int]) -> str | None:
    """The same molecule with protons moved by RDKit alone: each neutral N/O/S either stays,
    loses a proton (if it has one) or gains one. None if RDKit rejects the result."""
    mol = Chem.RWMol(Chem.MolFromSmiles(smiles))
    cands = [
        a.GetIdx()
        for a in mol.GetAtoms()
        if a.GetAtomicNum() in (7, 8, 16) and a.GetFormalCharge() == 0
    ]
    for idx, c in zip(cands, choices):
        atom = mol.GetAtomWithIdx(idx)
        h = atom.GetTotalNumHs()
        if c == 1 and h > 0:
            atom.SetFormalCharge(-1)
            atom.SetNumExplicitHs(h - 1)
            atom.SetNoImplicit(True)
        elif c == 2:
            atom.SetFormalCharge(1)
            atom.SetNumExplicitHs(h + 1)
            atom.SetNoImplicit(True)
    try:
        Chem.SanitizeMol(mol)
    except Exception:  # noqa: BLE001 - RDKit's own exception types
        return None
    return str(Chem.MolToSmiles(mol))


PROTONATION_CASES = [
    "NCC(=O)O",
    "N[C@@H](Cc1c[nH]cn1)C(=O)O",
    "Nc1ccc(cc1)S(=O)(=O)Nc1ncccn1",
    "OC(=O)c1cccnc1",
    "NC(=N)NCCC[C@H](N)C(=O)O",
    "Oc1ccc(cc1)C[C@H](N)C(=O)O",
    "CN1CCC[C@H]1c1cccnc1",
    "OP(=O)(O)OCC(N)C(=O)O",
    "C[N+](C)(C)CC(=O)O",
    "[O-][n+]1ccccc1",
]


@settings(max_examples=60, deadline=None, suppress_health_check=[HealthCheck.filter_too_much])
@given(
    smiles=st.sampled_from(PROTONATION_CASES),
    choices=st.lists(st.integers(0, 2), min_size=12, max_size=12),
)
def test_answer_does_not_depend_on_the_protonation_drawn(smiles: str, choices: list[int]) -> None:
    other = _reprotonate(smiles, choices)
    assume(other is not None)
    a, b = _quiet(smiles), _quiet(other)
    assert b.reference_smiles == a.reference_smiles
    assert np.allclose(b.pkas(), a.pkas(), atol=1e-9)
    assert b.charge(7.4) == pytest.approx(a.charge(7.4), abs=1e-9)
    assert b.dominant(7.4).smiles == a.dominant(7.4).smiles


def test_charge_is_vectorised_and_falls_with_ph() -> None:
    m = from_smiles("NCCCC[C@H](N)C(=O)O")  # lysine
    ph = np.linspace(0, 14, 57)
    z = m.charge(ph)
    assert isinstance(z, np.ndarray) and z.shape == ph.shape
    assert np.all(np.diff(z) < 0)
    assert z[0] == pytest.approx(2.0, abs=0.05) and z[-1] == pytest.approx(-1.0, abs=0.05)
    assert isinstance(m.charge(7.0), float)
    curve = m.curve(ph=[2.0, 7.0])
    assert list(curve.columns[:2]) == ["ph", "charge"]
    assert curve.shape == (2, 2 + 3)


def test_isoelectric_point_of_an_ampholyte_is_where_the_charge_vanishes() -> None:
    m = from_smiles("N[C@@H](Cc1c[nH]cn1)C(=O)O")  # histidine, Lehninger pI 7.59
    pi = m.isoelectric_point()
    assert pi is not None and abs(m.charge(pi)) < 1e-4
    assert pi == pytest.approx(7.59, abs=0.5)


def test_site_table_explains_each_correction_with_its_source() -> None:
    m = from_smiles("OC(=O)c1ccc(cc1)[N+](=O)[O-]")  # 4-nitrobenzoic acid, CRC 3.44
    t = m.site_table(7.0)
    assert list(t.columns) == [
        "site",
        "group",
        "kind",
        "atoms",
        "base_pka",
        "base_source",
        "corrections",
        "correction_total",
        "pka",
        "fraction_protonated",
        "charge",
    ]
    row = t.iloc[0]
    assert row.group == "aromatic_carboxylic_acid" and row.base_pka == "4.20"
    assert "para nitro" in row.corrections and "Hansch, Leo & Taft 1991" in row.corrections
    assert row.correction_total == pytest.approx(-0.78)  # rho 1.00 x sigma_p(NO2) 0.78
    assert m.pkas()[0] == pytest.approx(3.44, abs=0.1)
    ex = m.explain()
    steps = [r["step"] for r in ex.rows]
    assert steps[0] == "base pKa" and "site pKa" in steps and "macroscopic pKa" in steps
    assert all(r["source"] for r in ex.rows)
    assert "para nitro" in str(ex)


def test_species_merges_symmetry_equivalent_microstates() -> None:
    m = from_smiles("OC(=O)CC(O)(CC(=O)O)C(=O)O")  # citric acid: two equivalent outer carboxyls
    sp = m.species(5.0)
    assert sp.smiles.is_unique
    assert list(sp.population) == sorted(sp.population, reverse=True)
    d = m.dominant(5.0)
    assert d.smiles == sp.smiles[0] and d.population == pytest.approx(sp.population[0])
    assert d.population == pytest.approx(2 * d.microstate_population)
    assert len(m.microstates(5.0, top=3)) == 3


def test_residue_states_of_the_base_class_use_the_coupled_model() -> None:
    rs = from_smiles("NCC(=O)O").residue_states(7.0)
    assert list(rs.member) == ["N0", "O4"]
    assert list(rs.state) == ["protonated", "deprotonated"]


# -- reading, standardising, bad input -----------------------------------------------------------
def test_counter_ions_are_removed_and_reported() -> None:
    m = from_smiles("CC(=O)[O-].[Na+]")
    assert m.removed_fragments == ("[Na+]",)
    assert m.info["removed_fragments"] == ["[Na+]"]
    assert m.charge(7.0) == pytest.approx(-1.0, abs=0.01)
    both = from_smiles("CC(=O)[O-].[Na+]", keep_fragments=True)
    assert both.removed_fragments == ()
    assert both.charge(7.0) == pytest.approx(0.0, abs=0.01)  # Na+ is a permanent +1


def test_hydrochloride_salt_gives_the_free_base_reference() -> None:
    m = from_smiles("C[NH3+].[Cl-]")
    assert m.reference_smiles == "CN" and m.removed_fragments == ("[Cl-]",)


def test_permanent_charges_stay() -> None:
    quat = from_smiles("C[N+](C)(C)C")
    assert quat.charge(np.array([1.0, 13.0])) == pytest.approx([1.0, 1.0])
    with pytest.warns(ZwitterWarning, match="no titratable group"):
        assert quat.isoelectric_point() is None
    betaine = from_smiles("C[N+](C)(C)CC(=O)[O-]")
    assert betaine.charge(7.0) == pytest.approx(0.0, abs=0.01)
    with pytest.warns(ZwitterWarning, match="stays at or above zero"):
        assert betaine.isoelectric_point() is None
    noxide = from_smiles("[O-][n+]1ccccc1")  # pyridine N-oxide drawn charge-separated
    assert noxide.reference_smiles == "[O-][n+]1ccccc1"
    assert noxide.charge(7.0) == pytest.approx(0.0, abs=0.01)


def test_no_ionizable_group() -> None:
    m = from_smiles("CCO")
    assert m.charge(7.0) == 0.0 and m.pkas() == []
    with pytest.warns(ZwitterWarning, match="no titratable group: the charge does not change"):
        assert m.isoelectric_point() is None
    assert m.dominant(7.0).smiles == "CCO"


@pytest.mark.parametrize(
    ("bad", "match"),
    [
        ("C1CC", r"cannot read SMILES: SMILES Parse Error: unclosed ring .*\(SMILES 'C1CC'\)"),
        ("xyz", r"cannot read SMILES: SMILES Parse Error: syntax error.*\(SMILES 'xyz'\)"),
        ("c1cccc1", r"cannot read SMILES: Can't kekulize mol.*\(SMILES 'c1cccc1'\)"),
        ("CN(C)(C)(C)C", r"Explicit valence for atom # 1 N, 5, is greater than permitted"),
        ("", r"^empty SMILES \(''\): give a structure$"),
        ("   ", r"^empty SMILES \('   '\): give a structure$"),
    ],
)
def test_bad_smiles_raise_a_structure_error_naming_the_input(bad: str, match: str) -> None:
    with pytest.raises(StructureError, match=match):
        from_smiles(bad)


def test_structure_errors_name_the_record_and_pickle(capfd: pytest.CaptureFixture[str]) -> None:
    with pytest.raises(StructureError) as info:
        from_smiles("C1CC", name="row 7")
    assert str(info.value).startswith("record 'row 7': cannot read SMILES")
    again = pickle.loads(pickle.dumps(info.value))
    assert str(again) == str(info.value)
    assert isinstance(info.value, ValueError)
    # RDKit's own log lines were captured: nothing reached the terminal
    out, err = capfd.readouterr()
    assert out == "" and err == ""


def test_wrong_input_type_is_a_parameter_error() -> None:
    with pytest.raises(ParameterError, match="'smiles_or_mol' parameter of from_smiles must be"):
        from_smiles(42)


def test_rdkit_mol_input_is_copied_not_changed() -> None:
    mol = Chem.MolFromSmiles("[NH3+]CC(=O)[O-]")
    before = Chem.MolToSmiles(mol)
    m = from_smiles(mol)
    assert Chem.MolToSmiles(mol) == before
    assert m.reference_smiles == "NCC(=O)O"


@pytest.mark.parametrize(
    ("smiles", "match"),
    [
        ("CC(=O)O[Na]", "bonds to metal atom\\(s\\) Na were broken"),
        ("CC(=O)O[Cu]OC(C)=O", "bonds to metal atom\\(s\\) Cu were broken"),
        ("C[Hg]C", "metal atom\\(s\\) Hg in the molecule"),
    ],
)
def test_metals_give_a_warning(smiles: str, match: str) -> None:
    with pytest.warns(ZwitterWarning) as caught:
        m = from_smiles(smiles)
    assert any(re.search(match, str(w.message)) for w in caught), [str(w.message) for w in caught]
    assert m.notes


def test_conditions_are_applied_to_site_pkas_before_the_microstates() -> None:
    seen = {}

    class Shift:  # the duck-typed conditions protocol: apply(SiteSet) -> SiteSet
        def apply(self, sites: zwitter.SiteSet) -> zwitter.SiteSet:
            seen["groups"], seen["atoms"] = sites.groups, sites.atoms
            return sites.with_pkas(sites.pkas + 1.0)

    plain = from_smiles("CC(=O)O")
    shifted = from_smiles("CC(=O)O", conditions=Shift())
    assert seen == {"groups": ("carboxylic_acid",), "atoms": ((3,),)}
    assert shifted.pkas()[0] == pytest.approx(plain.pkas()[0] + 1.0)
    assert shifted.reference_sites.pkas[0, 0] == pytest.approx(4.76)
    assert "conditions" in [r["step"] for r in shifted.explain().rows]


def test_real_conditions_object() -> None:
    from zwitter.conditions import Conditions

    m = from_smiles("NCC(=O)O", conditions=Conditions(temperature=37.0, ionic_strength=0.15))
    # van 't Hoff: the ammonium (large ionization enthalpy) falls with temperature
    assert m.pkas()[1] < from_smiles("NCC(=O)O").pkas()[1] - 0.2


def test_large_molecules_fall_back_to_mean_field_with_a_warning() -> None:
    smiles = "NCC(=O)" + "NCCC(N)C(=O)" * 9 + "O"  # 1 + 9 x 1 amines, one acid: 2**11 states
    assert _quiet(smiles).model.exact
    big = "OC(=O)" + "CC(C(=O)O)" * 17 + "C"  # 18 carboxylic acids: 2**18 microstates
    with pytest.warns(ZwitterWarning, match="mean-field"):
        m = from_smiles(big)
    assert not m.model.exact
    assert -18.0 <= m.charge(7.0) <= 0.0
    d = m.dominant(7.0)
    assert Chem.GetFormalCharge(Chem.MolFromSmiles(d.smiles)) == d.charge


# -- ionic strength: activity coefficients of whole forms ------------------------------------------
def _davies_a(ionic: float, temperature: float = 25.0) -> float:
    """A F(I) written out: Davies 1962, Ion Association (Butterworths), log10 g = -A z^2 F(I),
    F(I) = sqrt(I)/(1 + sqrt(I)) - 0.3 I; A from Alberty's fit of the ln-basis constant,
    alpha = 1.10708 - 1.54508e-3 T + 5.95584e-6 T^2 (Clarke & Glew 1980, J. Chem. Soc. Faraday
    Trans. 1 76:1911, as used by Alberty 2001, Arch. Biochem. Biophys. 389:94; from memory),
    divided by ln 10: the source zwitter.conditions.debye_huckel_a names."""
    t = temperature + 273.15
    a = (1.10708 - 1.54508e-3 * t + 5.95584e-6 * t * t) / math.log(10.0)
    s = math.sqrt(ionic)
    return a * (s / (1.0 + s) - 0.3 * ionic)


def _step_shift(acid_charge: float, ionic: float, scale: str, temperature: float = 25.0) -> float:
    """Davies shift of a step HA(z) = A(z - 1) + H+: log10 g(A) - log10 g(HA) (mixed constant,
    glass-electrode pH), plus log10 g(H+) for pH = -log10 [H+] (concentration constant)."""
    af = _davies_a(ionic, temperature)
    shift = -af * ((acid_charge - 1.0) ** 2 - acid_charge**2)
    return shift - af if scale == "concentration" else shift


def _salt(ionic: float, scale: str = "activity", temperature: float = 25.0) -> zwitter.Conditions:
    return zwitter.Conditions(temperature=temperature, ionic_strength=ionic, ph_scale=scale)


class _PerSite:
    """The per-site Davies treatment (what structures had before): a duck-typed conditions object
    whose apply() moves every site step by the charges of that site's own two forms."""

    def __init__(self, conditions: zwitter.Conditions) -> None:
        self.conditions = conditions

    def apply(self, sites: zwitter.SiteSet) -> zwitter.SiteSet:
        out: zwitter.SiteSet = self.conditions.apply(sites)
        return out


@pytest.mark.parametrize("scale", ["activity", "concentration"])
@pytest.mark.parametrize(("ionic", "temperature"), [(0.1, 25.0), (0.15, 25.0), (0.15, 37.0)])
@pytest.mark.parametrize(
    ("smiles", "acid_charge"),
    [("CC(=O)O", 0), ("CN", 1)],  # acetic acid HA/A-, methylamine BH+/B
    ids=["acetic acid", "methylamine"],
)
def test_one_site_shift_is_the_analytical_davies_value(
    smiles: str, acid_charge: int, ionic: float, temperature: float, scale: str
) -> None:
    # One site: the two forms of the site are the two forms of the molecule, so the
    # whole-form and the per-site corrections are the same thing (the exact identity tested).
    plain = from_smiles(smiles, conditions=zwitter.Conditions(temperature=temperature))
    salty = from_smiles(smiles, conditions=_salt(ionic, scale, temperature))
    per_site = from_smiles(smiles, conditions=_PerSite(_salt(ionic, scale, temperature)))
    expected = _step_shift(acid_charge, ionic, scale, temperature)
    assert salty.pkas()[0] - plain.pkas()[0] == pytest.approx(expected, abs=1e-9)
    assert per_site.pkas()[0] - plain.pkas()[0] == pytest.approx(expected, abs=1e-9)
    # the site itself is not moved by the salt (no double counting)
    assert salty.sites.pkas[0, 0] == pytest.approx(plain.sites.pkas[0, 0], abs=1e-12)


@pytest.mark.parametrize(
    ("ionic", "scale", "expected"),
    [
        # data/reference/ionic_strength.csv, Davies rows (Davies 1962; A = 0.5108 at 25 C):
        # acetate 4.756 at I = 0 -> 4.649 (mixed) and 4.541 (concentration) at 0.1 M,
        # 4.636 and 4.517 at 0.15 M
        (0.1, "activity", 4.649 - 4.756),
        (0.1, "concentration", 4.541 - 4.756),
        (0.15, "activity", 4.636 - 4.756),
        (0.15, "concentration", 4.517 - 4.756),
    ],
)
def test_acetic_acid_shift_matches_the_worked_davies_rows(
    ionic: float, scale: str, expected: float
) -> None:
    shift = from_smiles("CC(=O)O", conditions=_salt(ionic, scale)).pkas()[0]
    assert shift - from_smiles("CC(=O)O").pkas()[0] == pytest.approx(expected, abs=0.002)


@pytest.mark.parametrize("scale", ["activity", "concentration"])
@pytest.mark.parametrize("ionic", [0.1, 0.15])
def test_glycine_macroscopic_steps_shift_by_the_charges_of_the_whole_forms(
    ionic: float, scale: str
) -> None:
    # Glycine: cation (+1) -> zwitterion (0) -> anion (-1). Each macroscopic step moves by the
    # Davies shift of its two whole forms (exact here: one species, the activity term depends on
    # the number of protons lost only).
    plain = from_smiles("NCC(=O)O").pkas()
    salty = from_smiles("NCC(=O)O", conditions=_salt(ionic, scale)).pkas()
    expected = [_step_shift(1, ionic, scale), _step_shift(0, ionic, scale)]
    for got, before, want in zip(salty, plain, expected):
        assert got - before == pytest.approx(want, abs=1e-9)
    # The per-site treatment moves the carboxyl step as a 0/-1 step and the amine step as a +1/0
    # step: it gets both macroscopic shifts wrong, by about 2 A F(I) (the test can fail).
    per_site = from_smiles("NCC(=O)O", conditions=_PerSite(_salt(ionic, scale))).pkas()
    for got, before, want in zip(per_site, plain, expected):
        assert abs((got - before) - want) > 1.5 * _davies_a(ionic)


@pytest.mark.parametrize("scale", ["activity", "concentration"])
def test_edta_last_step_moves_as_a_three_minus_to_four_minus_step(scale: str) -> None:
    # HY3- -> Y4- (EDTA's upper amine step): Davies -7 A F (mixed) or -8 A F (concentration),
    # about -0.86 at 0.1 M on the concentration scale; per site (an ammonium, +1/0) it would be
    # +A F or 0.
    plain = from_smiles(EDTA).pkas()
    salty = from_smiles(EDTA, conditions=_salt(0.1, scale)).pkas()
    expected = _step_shift(-3, 0.1, scale)
    assert salty[-1] - plain[-1] == pytest.approx(expected, abs=1e-9)
    if scale == "concentration":
        assert expected == pytest.approx(-0.86, abs=0.01)
    per_site = from_smiles(EDTA, conditions=_PerSite(_salt(0.1, scale))).pkas()
    assert abs((per_site[-1] - plain[-1]) - expected) > 0.7


@pytest.mark.parametrize("scale", ["activity", "concentration"])
def test_phosphoric_acid_shifts_match_the_buffer_table(scale: str) -> None:
    # zwitter.buffers treats phosphate by the charges of the two forms of each macroscopic step
    # (0/-1, -1/-2, -2/-3; data/buffers.csv): the structure drawn as SMILES moves alike.
    from zwitter.buffers import buffer_pkas

    cond = _salt(0.1, scale)
    buffer_shift = np.subtract(
        buffer_pkas("phosphate", cond), buffer_pkas("phosphate", zwitter.Conditions())
    )
    smiles_shift = np.subtract(
        from_smiles("OP(=O)(O)O", conditions=cond).pkas(), from_smiles("OP(=O)(O)O").pkas()
    )
    assert len(smiles_shift) == 3
    assert np.allclose(smiles_shift, buffer_shift, atol=0.01)
    assert np.allclose(buffer_shift, [_step_shift(z, 0.1, scale) for z in (0, -1, -2)], atol=1e-9)


def test_zero_ionic_strength_gives_exactly_the_old_numbers() -> None:
    grid = np.linspace(0.0, 14.0, 57)
    for smiles in ("NCC(=O)O", EDTA, "C[N+](C)(C)CC(=O)O", "OP(=O)(O)OP(=O)(O)O"):
        old = from_smiles(smiles)
        new = from_smiles(smiles, conditions=zwitter.Conditions(ionic_strength=0.0))
        assert new.activity == (0.0, 0.0)
        assert new.pkas() == old.pkas()
        assert np.array_equal(new.charge(grid), old.charge(grid))
        assert np.array_equal(new.model.g, old.model.g)
        with warnings.catch_warnings():
            warnings.simplefilter("ignore", ZwitterWarning)  # betaine: no pI, either way
            assert new.isoelectric_point() == old.isoelectric_point()
        assert new.dominant(7.4) == old.dominant(7.4)


@settings(max_examples=40, deadline=None, suppress_health_check=[HealthCheck.filter_too_much])
@given(
    smiles=st.sampled_from(PROTONATION_CASES + [EDTA]),
    choices=st.lists(st.integers(0, 2), min_size=12, max_size=12),
    ph=st.floats(-2.0, 16.0),
    scale=st.sampled_from(["activity", "concentration"]),
)
def test_with_salt_populations_sum_to_one_and_the_drawn_protonation_does_not_matter(
    smiles: str, choices: list[int], ph: float, scale: str
) -> None:
    other = _reprotonate(smiles, choices)
    assume(other is not None)
    cond = _salt(0.15, scale)
    a, b = _quiet(smiles, conditions=cond), _quiet(other, conditions=cond)
    assert a.model.populations(ph).sum() == pytest.approx(1.0, abs=1e-9)
    assert a.species(ph, min_population=0.0).population.sum() == pytest.approx(1.0, abs=1e-6)
    assert np.allclose(b.pkas(), a.pkas(), atol=1e-9)
    assert b.charge(ph) == pytest.approx(a.charge(ph), abs=1e-9)
    assert b.dominant(7.4).smiles == a.dominant(7.4).smiles
    # every reader of the populations agrees: the mean charge is the population-weighted charge
    ms = a.model
    pops = ms.populations(ph)
    assert float(pops @ ms.state_charge(ms.states)) == pytest.approx(a.charge(ph), abs=1e-9)
    lost = a.site_table(ph).fraction_protonated
    assert ((lost >= -1e-12) & (lost <= 1 + 1e-12)).all()


def test_salt_keeps_the_pi_where_the_charge_vanishes() -> None:
    m = from_smiles("N[C@@H](Cc1c[nH]cn1)C(=O)O", conditions=_salt(0.15))  # histidine
    pi = m.isoelectric_point()
    assert pi is not None and abs(m.charge(pi)) < 1e-4


def test_fragments_kept_together_are_separate_species() -> None:
    # Acetic acid and glycine in one SMILES (keep_fragments): two molecules in solution, each
    # with the activity coefficient of its own charge, so the charges add exactly. One species
    # of the summed charge would not (the test can fail: checked below).
    cond = _salt(0.1)
    both = _quiet("CC(=O)O.NCC(=O)O", keep_fragments=True, conditions=cond)
    grid = np.linspace(0.0, 14.0, 29)
    alone = from_smiles("CC(=O)O", conditions=cond).charge(grid) + from_smiles(
        "NCC(=O)O", conditions=cond
    ).charge(grid)
    assert np.allclose(both.charge(grid), alone, atol=1e-9)
    ms = both.model
    one = Microstates(
        ms.pkas, ms.nsteps, ms.charges, ms.pairs, activity=ms.activity
    )  # both fragments as one species
    assert np.max(np.abs(one.charge(grid) - alone)) > 0.05


def test_a_polyelectrolyte_takes_the_salt_per_site() -> None:
    # 18 carboxylic acids (2**18 microstates, mean field): forms of up to 18 negative charges,
    # far beyond what the Davies equation is meant for (at 0.1 M a form of charge -18 would get
    # log10 g = -0.107 * 324 = -35): the salt is taken per site, as for a sequence, and says so.
    big = "OC(=O)" + "CC(C(=O)O)" * 17 + "C"
    with pytest.warns(ZwitterWarning, match="mean-field"):
        plain = from_smiles(big)
    with pytest.warns(ZwitterWarning) as caught:
        m = from_smiles(big, conditions=_salt(0.1))
    texts = [str(w.message) for w in caught]
    assert any("more than 4 charges: the ionic strength is taken per site" in t for t in texts)
    assert any("mean-field" in t for t in texts)
    assert not m.salt_on_whole_forms and m.activity == (0.0, 0.0) and not m.model.exact
    # per site, a carboxyl step (0/-1) moves by -A F(I) on the glass-electrode scale
    # (davies_pka_shift): the polyacid loses a little more of its protons, not 14 more
    shift = float(davies_pka_shift(0, 0.1))
    assert shift == pytest.approx(-0.107, abs=0.002)  # A = 0.5108 at 25 C, F(0.1) = 0.2103
    assert np.asarray(m.sites.pkas[:18, 0]) == pytest.approx(
        np.asarray(plain.sites.pkas[:18, 0]) + shift, abs=1e-9
    )
    assert plain.charge(4.0) - 1.0 < m.charge(4.0) < plain.charge(4.0)
    assert len(m.pkas()) == 18


@pytest.mark.parametrize(
    ("smiles", "whole"),
    [
        ("OC(=O)CN(CC(=O)O)CCN(CC(=O)O)CC(=O)O", True),  # EDTA: forms from +2 to -4
        ("OP(=O)(O)O", True),  # phosphoric acid: 0 to -3
        ("OC(=O)CN(CC(=O)O)CCN(CC(=O)O)CCN(CC(=O)O)CC(=O)O", False),  # DTPA: +3 to -5
    ],
)
def test_the_charge_limit_of_whole_form_salt(smiles: str, whole: bool) -> None:
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", ZwitterWarning)
        m = from_smiles(smiles, conditions=_salt(0.1))
    assert m.salt_on_whole_forms is whole
    assert (m.activity[0] > 0) is whole
    corrections = m.condition_corrections()
    assert corrections is not None
    assert bool((corrections["shift_ionic_strength"] == 0).all()) is whole


def test_explain_and_site_table_say_how_the_ionic_strength_enters() -> None:
    m = from_smiles("NCC(=O)O", conditions=_salt(0.1, "concentration", 37.0))
    rows = {r["step"]: r for r in m.explain().rows}
    assert "Davies 1962" in rows["ionic strength"]["source"]
    assert "whole form" in rows["ionic strength"]["source"]
    assert "-log10 [H+]" in rows["ionic strength"]["source"]
    step = "ionic-strength shift of each macroscopic step (acid/base charge)"
    # +1/0 on the concentration scale: 0 exactly; 0/-1: -2 A F (37 C)
    assert (
        rows[step]["value"] == f"+1/0 +0.00; 0/-1 {_step_shift(0, 0.1, 'concentration', 37):+.2f}"
    )
    assert rows["conditions"]["source"].startswith("conditions: temperature (van 't Hoff")
    assert "ionic strength" in str(m.explain())
    table = m.site_table(7.0)
    assert table.corrections.str.contains("acts on whole forms, not on this site").all()
    # the site pKa carries the temperature only
    warm = from_smiles("NCC(=O)O", conditions=zwitter.Conditions(temperature=37.0))
    assert list(table.pka) == list(warm.site_table(7.0).pka)
    assert "ionic strength" not in warm.site_table(7.0).corrections.str.cat()


# -- peptides drawn as SMILES --------------------------------------------------------------------
#: Standard peptides, drawn as SMILES by RDKit (Chem.MolFromSequence -> MolToSmiles), every one of
#: them checked (none left out): the first 13 were chosen when the structure path was written,
#: the other 14 when the peptide rows were added.
PEPTIDES = [
    "GG",
    "AK",
    "DE",
    "GLSDGEWQQVLNVWGK",
    "ACDEFGHIKLMNPQRSTVWY",
    "KKKK",
    "DDDD",
    "YGGFL",
    "RPPGFSPFR",
    "HHHH",
    "EAAAK",
    "CGYGPKKKRKVGG",
    "DRVYIHPF",
    "RPKPQQFFGLM",
    "CYIQNCPLG",
    "EEEE",
    "DAHK",
    "DYKDDDDK",
    "KLVFFAE",
    "CDPGYIGSR",
    "HSQGTFTSDYSKYLDSRRAQDFVQWLMNT",
    "HGEGTFTSDVSSYLEGQAAKEFIAWLVKGR",
    "YEEEEY",
    "KEKEKEKE",
    "HHHHHH",
    "DDDDDDDDDD",
    "GSHMCCKK",
]
_RESIDUE_GROUP = {v: k for k, v in PEPTIDE_SIDE_CHAINS.items()} | {"C": "peptide_cys"}


def _peptide_pis(seq: str) -> tuple[StructureMolecule, float, float]:
    m = _quiet(Chem.MolToSmiles(Chem.MolFromSequence(seq)))
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", ZwitterWarning)
        ref = zwitter.from_sequence(seq, scale="thurlkill").isoelectric_point()
    pi = m.isoelectric_point()
    assert pi is not None and ref is not None
    return m, pi, ref


@pytest.mark.parametrize("seq", PEPTIDES)
def test_peptide_as_smiles_agrees_with_the_sequence_path(seq: str) -> None:
    # The sequence path with the Thurlkill et al. 2006 scale (alanine pentapeptides), whose values
    # the peptide rows of ionizable_groups.csv carry: the same groups, the pI within 0.3.
    m, pi, ref = _peptide_pis(seq)
    expected = ["peptide_n_terminus", "peptide_c_terminus"] + [
        _RESIDUE_GROUP[a] for a in seq if a in _RESIDUE_GROUP
    ]
    assert sorted(s.group.key for s in m.structure_sites) == sorted(expected)
    assert abs(pi - ref) <= 0.3, (seq, pi, ref)


def test_peptide_path_agreement_summary() -> None:
    # Measured with coupling_peptide 0.45: mean 0.08, max 0.28 (DE, DAHK, glucagon) over the 27.
    diffs = np.array([abs(p - r) for _, p, r in (_peptide_pis(s) for s in PEPTIDES)])
    assert len(diffs) >= 10 and float(diffs.mean()) <= 0.15


def test_peptide_rows_take_the_scale_values_and_say_so() -> None:
    m = from_smiles(Chem.MolToSmiles(Chem.MolFromSequence("AKA")))
    t = m.site_table(7.0).set_index("group")
    assert float(t.loc["peptide_lys", "base_pka"]) == 10.4  # Thurlkill et al. 2006, Lys
    assert float(t.loc["peptide_n_terminus", "base_pka"]) == 8.0
    assert float(t.loc["peptide_c_terminus", "base_pka"]) == 3.67
    assert "Thurlkill et al. 2006" in t.loc["peptide_lys", "base_source"]
    assert t.loc["peptide_lys", "corrections"] == ""  # the backbone is in the measured value
    # the coupling between two residues is scaled (lfer_reactions.csv row coupling_peptide)
    assert "coupling_peptide" in m.coupling.source


def test_free_amino_acids_keep_the_generic_rows() -> None:
    # A free amino acid is not a peptide residue: lysine's amines are generic primary amines.
    keys = sorted(s.group.key for s in from_smiles("NCCCC[C@H](N)C(=O)O").structure_sites)
    assert keys == ["amine_primary", "amine_primary", "carboxylic_acid"]


def test_screens_skip_rows_without_changing_what_is_found(monkeypatch: pytest.MonkeyPatch) -> None:
    # A row's screen (ionizable_groups.csv) is a speed-up only: detection with every screen
    # removed finds the same sites, on the reference table, the peptides and RDKit's NCI sample.
    import dataclasses

    import zwitter.structure as zs

    with open(NCI, encoding="utf-8") as fh:
        nci = [x.split()[0] for x in fh if x.strip()][:600]
    smiles = [r["smiles"] for r in ROWS] + [
        Chem.MolToSmiles(Chem.MolFromSequence(s)) for s in PEPTIDES
    ]
    with rdBase.BlockLogs():  # a few NCI rows do not parse: RDKit's own messages stay quiet
        mols = [m for m in (Chem.MolFromSmiles(s) for s in smiles + nci) if m is not None]
    assert any(g.screen for g in zs.group_types())

    def found(m: Any) -> list[tuple[str, tuple[int, ...]]]:
        return [(g.key, atoms) for g, atoms, _ in zs._detect(m, zs._elements(m))]

    with_screens = [found(m) for m in mols]
    plain = tuple(dataclasses.replace(g, screen="", screen_query=None) for g in zs.group_types())
    monkeypatch.setattr(zs, "group_types", lambda: plain)
    assert [found(m) for m in mols] == with_screens


@pytest.mark.parametrize(
    ("smiles", "groups"),
    [
        # Ala-Orn-Ala: ornithine's delta-amine is not a Lys side chain -> the generic amine row
        (
            "C[C@H](N)C(=O)N[C@@H](CCCN)C(=O)N[C@@H](C)C(=O)O",
            ["amine_primary", "peptide_c_terminus", "peptide_n_terminus"],
        ),
        # Ac-Lys(Ac)-NH2: an acetylated Lys has no amine left; blocked termini give no site
        ("CC(=O)NCCCC[C@H](NC(C)=O)C(N)=O", []),
        # Gly-Sar (N-methylglycine C-terminal): still a peptide C-terminus
        ("NCC(=O)N(C)CC(=O)O", ["peptide_c_terminus", "peptide_n_terminus"]),
        # Pro-Gly: proline's secondary alpha-amine is an N-terminus
        ("O=C(O)CNC(=O)[C@@H]1CCCN1", ["peptide_c_terminus", "peptide_n_terminus"]),
    ],
)
def test_non_natural_and_blocked_residues(smiles: str, groups: list[str]) -> None:
    assert sorted(s.group.key for s in _quiet(smiles).structure_sites) == groups


def test_ring_substituents_still_correct_a_tyrosine() -> None:
    # 3-nitrotyrosine in a peptide: the Tyr row keeps its Hammett class; the nitro group ortho
    # to the OH lowers it (ortho takes the para constant, -2.23 x 1.27). Reference: the phenol of
    # 3-nitrotyrosine is about 7.2 (from memory; source not recalled).
    m = from_smiles("C[C@H](N)C(=O)N[C@@H](Cc1ccc(O)c(c1)[N+](=O)[O-])C(=O)N[C@@H](C)C(=O)O")
    tyr = next(s for s in m.structure_sites if s.group.key == "peptide_tyr")
    assert tyr.pkas[0] == pytest.approx(9.84 - 2.23 * 1.27, abs=0.01)
    assert abs(tyr.pkas[0] - 7.2) < 0.5


# -- files ---------------------------------------------------------------------------------------
def test_rdkit_ships_the_nci_sample() -> None:
    assert NCI.is_file(), f"RDKit's NCI sample is missing from {NCI.parent}"


def test_nci_sample_every_row_processed_and_reported() -> None:
    with open(NCI, encoding="utf-8") as fh:
        lines = [x for x in fh if x.strip()]
    t0 = time.perf_counter()
    records = list(iter_smiles_file(NCI))
    assert [r.id for r in records] == [x.split()[1] for x in lines]
    results: list[tuple[str, Any]] = []
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", ZwitterWarning)
        for rec in records:
            try:
                m = from_smiles(rec.molecule, name=rec.id)
                d = m.dominant(7.4)
                results.append((rec.id, (m.charge(7.4), d.smiles, d.charge)))
            except StructureError as exc:
                assert exc.record == rec.id and exc.smiles == rec.molecule
                results.append((rec.id, exc))
    elapsed = time.perf_counter() - t0
    assert [i for i, _ in results] == [r.id for r in records]  # every row present, in order
    bad = [v for _, v in results if isinstance(v, ZwitterError)]
    assert 0 < len(bad) < 25  # RDKit rejects a few rows (valence errors): reported, not dropped
    for _, v in results:
        if isinstance(v, tuple):
            mol = Chem.MolFromSmiles(v[1])
            assert mol is not None and Chem.GetFormalCharge(mol) == v[2]
            assert math.isfinite(v[0])
    assert elapsed < 60.0


def test_smi_csv_and_sdf_readers(tmp_path: Path) -> None:
    smi = tmp_path / "a.smi"
    smi.write_text("CCO ethanol\n\n# comment\nC1CC broken\nNCC(=O)O\n")
    recs = list(iter_smiles_file(smi))
    assert [(r.id, r.molecule) for r in recs] == [
        ("ethanol", "CCO"),
        ("broken", "C1CC"),
        ("5", "NCC(=O)O"),
    ]
    table = tmp_path / "b.csv"
    table.write_text("name,SMILES\nacetic,CC(=O)O\nnothing,\nglycine,NCC(=O)O\n")
    recs = list(iter_smiles_file(table, id_column="name"))
    assert [r.id for r in recs] == ["acetic", "nothing", "glycine"]
    assert recs[1].molecule is None and isinstance(recs[1].error, StructureError)
    assert "line 3: empty SMILES cell in column 'SMILES'" in str(recs[1].error)
    sdf = list(iter_smiles_file(NCI_SDF))
    assert len(sdf) == 200 and all(r.error is None for r in sdf)
    assert isinstance(sdf[0].molecule, Chem.Mol)
    assert math.isfinite(_quiet(sdf[0].molecule, name=sdf[0].id).charge(7.4))


def test_reader_errors(tmp_path: Path) -> None:
    with pytest.raises(InputFileError, match="no such file"):
        list(iter_smiles_file(tmp_path / "missing.smi"))
    odd = tmp_path / "x.xyz"
    odd.write_text("C\n")
    with pytest.raises(InputFileError, match="unknown structure file type '.xyz'"):
        list(iter_smiles_file(odd))
    table = tmp_path / "c.csv"
    table.write_text("a,b\n1,2\n")
    with pytest.raises(InputFileError, match="no SMILES column: pass column="):
        list(iter_smiles_file(table))
    bad_sdf = tmp_path / "bad.sdf"
    bad_sdf.write_text(
        "broken\n  nothing\n\n  1  0  0  0  0  0  0  0  0  0999 V2000\n"
        "    0.0000    0.0000    0.0000 Xx  0  0\nM  END\n$$$$\n"
    )
    recs = list(iter_smiles_file(bad_sdf))
    assert len(recs) == 1 and recs[0].molecule is None
    assert isinstance(recs[0].error, StructureError)


# -- CLI -----------------------------------------------------------------------------------------
def test_cli_explain_and_species() -> None:
    import json

    from typer.testing import CliRunner

    from zwitter.cli import app

    runner = CliRunner()
    res = runner.invoke(app, ["explain", "NCC(=O)O", "--format", "json"])
    assert res.exit_code == 0, res.output
    doc = json.loads(res.stdout)
    assert doc["macroscopic_pkas"] == [round(x, 3) for x in from_smiles("NCC(=O)O").pkas()]
    assert {r["step"] for r in doc["reasoning"]} >= {"base pKa", "site pKa", "macroscopic pKa"}
    res = runner.invoke(app, ["species", "CC(=O)O.[Na+]", "--ph", "7.4", "--format", "csv"])
    assert res.exit_code == 0
    assert res.stdout.splitlines()[:2] == [
        "rank,smiles,charge,protons_lost,population",
        "1,CC(=O)[O-],-1.0,1,0.998",
    ]
    res = runner.invoke(app, ["species", "C1CC"])
    assert res.exit_code == 2
    assert "cannot read SMILES" in res.output


def test_nci_path_environment() -> None:
    # the bundled data directory is where RDKit says it is (no download needed)
    assert os.path.isdir(RDConfig.RDDataDir)
