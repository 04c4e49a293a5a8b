"""SMILES batches through `zwitter batch`: .smi, .csv with a column name, .sdf; nothing lost."""

from __future__ import annotations

import csv
import json
import math
import warnings

import pytest
from typer.testing import CliRunner

import zwitter
from zwitter.cli import app

# Handbook pKa values are not asserted here (tests/test_structure.py does that); these rows
# check record accounting and that the batch numbers equal the single-molecule API.
SMILES_ROWS = [
    ("glycine", "NCC(=O)O"),
    ("acetic_acid", "CC(=O)O"),
    ("bad_ring", "C1CC"),
    ("salt", "CC(=O)[O-].[Na+]"),
    ("empty", ""),
    ("ethylamine", "CCN"),
]


def single(smiles: str, ph: float) -> tuple[float, float]:
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        mol = zwitter.from_smiles(smiles)
        pi = mol.isoelectric_point()
        return (math.nan if pi is None else pi), float(mol.charge(ph))


def read(path) -> list[dict[str, str]]:
    with open(path, newline="") as handle:
        return list(csv.DictReader(handle))


def test_smi_file_every_row_in_order(tmp_path) -> None:
    smi = tmp_path / "set.smi"
    smi.write_text("".join(f"{s} {name}\n" if s else "\n" for name, s in SMILES_ROWS))
    out = tmp_path / "out.csv"
    res = CliRunner().invoke(app, ["batch", str(smi), "-o", str(out), "--ph", "7.4"])
    assert res.exit_code == 0, res.output
    rows = read(out)
    names = [n for n, s in SMILES_ROWS if s]  # a blank line in a .smi file is not a record
    assert [r["id"] for r in rows] == names
    by_id = {r["id"]: r for r in rows}
    assert "bad_ring" in by_id and by_id["bad_ring"]["error"]
    for name, smiles in SMILES_ROWS:
        if not smiles or name == "bad_ring":
            continue
        pi, charge = single(smiles, 7.4)
        row = by_id[name]
        assert not row["error"]
        assert float(row["charge_ph7.4"]) == pytest.approx(charge, abs=1e-9)
        if not math.isnan(pi):
            assert float(row["pI"]) == pytest.approx(pi, abs=1e-9)
    assert by_id["salt"]["removed_fragments"] == "[Na+]"
    assert by_id["glycine"]["dominant_form"] == "[NH3+]CC(=O)[O-]"
    assert float(by_id["glycine"]["average_mass"]) == pytest.approx(75.07, abs=0.01)  # C2H5NO2


def test_csv_with_named_columns_and_sdf(tmp_path) -> None:
    table = tmp_path / "set.csv"
    table.write_text("name,structure\n" + "".join(f"{n},{s}\n" for n, s in SMILES_ROWS))
    out = tmp_path / "out.tsv"
    res = CliRunner().invoke(
        app,
        [
            "batch",
            str(table),
            "-o",
            str(out),
            "--smiles-column",
            "structure",
            "--id-column",
            "name",
        ],
    )
    assert res.exit_code == 0, res.output
    with open(out, newline="") as handle:
        rows = list(csv.DictReader(handle, delimiter="\t"))
    assert [r["id"] for r in rows] == [n for n, _ in SMILES_ROWS]  # the empty cell is a bad row
    assert rows[4]["error"] and rows[2]["error"]
    from rdkit import Chem

    sdf = tmp_path / "set.sdf"
    writer = Chem.SDWriter(str(sdf))
    for name, smiles in SMILES_ROWS:
        mol = Chem.MolFromSmiles(smiles) if smiles and name != "bad_ring" else None
        if mol is not None:
            mol.SetProp("_Name", name)
            writer.write(mol)
    writer.close()
    out2 = tmp_path / "sdf.csv"
    res = CliRunner().invoke(app, ["batch", str(sdf), "-o", str(out2)])
    assert res.exit_code == 0, res.output
    assert [r["id"] for r in read(out2)] == ["glycine", "acetic_acid", "salt", "ethylamine"]


def test_mixing_fasta_and_smiles_inputs_is_refused(tmp_path, test_data_dir) -> None:
    smi = tmp_path / "a.smi"
    smi.write_text("CCO ethanol\n")
    res = CliRunner().invoke(
        app,
        [
            "batch",
            str(test_data_dir / "batch_proteins.fasta"),
            str(smi),
            "-o",
            str(tmp_path / "o.csv"),
        ],
    )
    assert res.exit_code == 2
    assert not (tmp_path / "o.csv").exists()


def test_structures_come_in_smaller_chunks_by_default(tmp_path) -> None:
    # A structure costs about a millisecond, a sequence a few microseconds: without a chunk size
    # a SMILES file is cut into blocks of 250 records, so that several workers share even a
    # few thousand molecules; a FASTA file into blocks of 10,000.
    from zwitter import batch as zb

    path = tmp_path / "many.smi"
    path.write_text("".join(f"{'C' * (1 + i % 7)}C(=O)O acid{i}\n" for i in range(600)))
    formats = zb._formats([str(path)], "auto")
    assert formats[0].name == "smiles" and formats[0].chunk_size == 250
    sizes = [len(json.loads(b.data)) for b in zb._blocks([str(path)], formats, None)]
    assert sizes == [250, 250, 100]
    fasta = zb._formats([str(tmp_path / "x.fasta")], "auto")[0]
    assert fasta.chunk_size == zb.DEFAULT_CHUNK_SIZE == 10_000
    out_one, out_two = tmp_path / "one.csv", tmp_path / "two.csv"
    zb.score_files(path, out_one, jobs=1)
    zb.score_files(path, out_two, jobs=2)
    assert out_one.read_bytes() == out_two.read_bytes()
    assert len(read(out_two)) == 600
