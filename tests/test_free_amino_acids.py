"""Free amino acids: pI from a textbook table's own pK values against that table's listed pI.

data/reference/free_amino_acids.csv: Nelson & Cox 2005, Lehninger Principles of Biochemistry
4th ed., Table 3-1 (values as recalled; see data/reference/README.md). The tabulated pK1, pK2 and
pKR of a free amino acid are macroscopic constants of one polyprotic molecule, so each amino acid
is one site with successive steps; its most protonated form carries +1, or +2 with a basic side
chain (H, K, R).
"""

from __future__ import annotations

import pytest

from zwitter import Molecule, Site, SiteSet
from zwitter.tables import read_csv_text


def rows(reference_dir):
    path = reference_dir / "free_amino_acids.csv"
    return read_csv_text(path.read_text(), str(path), ("residue", "pk_cooh", "pk_nh3", "pi_listed"))


def test_twenty_amino_acids_listed_pi(reference_dir) -> None:
    table = rows(reference_dir)
    assert len(table) == 20
    for row in table:
        steps = [row.number("pk_cooh"), row.number("pk_nh3")]
        if row["pk_r"]:
            steps.append(row.number("pk_r"))
        charge = 2 if row["residue"] in "HKR" else 1
        mol = Molecule(SiteSet.from_sites([Site(row["residue"], tuple(sorted(steps)), charge)]))
        assert mol.isoelectric_point() == pytest.approx(row.number("pi_listed"), abs=0.02), row[
            "residue"
        ]
