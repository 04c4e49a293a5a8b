"""The scripts in examples/ run, write their files and report what the library computes.

Each script's ``main(out_dir)`` runs once per module (fixtures below); the tests then check that
every file it names exists and is non-empty, that the numbers it returns equal the library
called directly, and a few facts from outside the project (sources beside them). One script also
runs as ``python examples/<script>.py OUT_DIR`` to cover the ``__main__`` path.
"""

from __future__ import annotations

import importlib.util
import math
import subprocess
import sys
from importlib import resources
from pathlib import Path
from types import ModuleType
from typing import Any

import numpy as np
import pytest

import zwitter
from zwitter.fasta import read_fasta

ROOT = Path(__file__).resolve().parent.parent
EXAMPLES = ROOT / "examples"
SCRIPTS = [
    "choose_column_and_buffer",
    "score_proteome",
    "small_molecule_forms",
    "modified_peptide",
]
PNG_MAGIC = b"\x89PNG\r\n\x1a\n"


def load(name: str) -> ModuleType:
    """Import examples/<name>.py by path (examples/ is not a package)."""
    spec = importlib.util.spec_from_file_location(
        f"zwitter_example_{name}", EXAMPLES / f"{name}.py"
    )
    assert spec is not None and spec.loader is not None
    module = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(module)
    return module


def run(name: str, factory: pytest.TempPathFactory) -> tuple[ModuleType, dict[str, Any], Path]:
    module = load(name)
    out = factory.mktemp(name)
    return module, module.main(out), out


def assert_files(files: list[Path], out: Path) -> None:
    assert files, "the script names no output files"
    for f in files:
        f = Path(f)
        assert f.parent == out, f"{f} is not in the output folder {out}"
        assert f.is_file() and f.stat().st_size > 0, f"{f} missing or empty"
        if f.suffix == ".png":
            assert f.read_bytes()[:8] == PNG_MAGIC, f"{f} is not a PNG file"


def test_every_script_is_listed_and_tested() -> None:
    on_disk = sorted(p.stem for p in EXAMPLES.glob("*.py"))
    assert on_disk == sorted(SCRIPTS)
    readme = (EXAMPLES / "README.md").read_text(encoding="utf-8")
    for name in SCRIPTS:
        assert f"{name}.py" in readme
        assert load(name).__doc__, f"{name}.py has no module docstring"
        assert "estimate" in load(name).__doc__


# -- choose_column_and_buffer ---------------------------------------------------------------------
@pytest.fixture(scope="module")
def column(tmp_path_factory: pytest.TempPathFactory) -> tuple[ModuleType, dict[str, Any], Path]:
    return run("choose_column_and_buffer", tmp_path_factory)


def demo_molecules(conditions: zwitter.Conditions) -> list[zwitter.Molecule]:
    source = resources.files("zwitter").joinpath("data", "demo", "marsh_extract.fasta")
    with resources.as_file(source) as path:
        records = list(read_fasta(path))
    return [zwitter.from_sequence(r.sequence, name=r.id, conditions=conditions) for r in records]


def test_column_files(column: tuple[ModuleType, dict[str, Any], Path]) -> None:
    _, result, out = column
    assert_files(result["files"], out)
    assert result["cautions"] == []


def test_column_plan_equals_library(column: tuple[ModuleType, dict[str, Any], Path]) -> None:
    module, result, _ = column
    loading = zwitter.Conditions(temperature=4.0, ionic_strength=0.05)
    mols = demo_molecules(loading)
    assert mols[0].name == result["target"] == "MRN1_HIS"
    assert result["contaminants"] == [m.name for m in mols[1:]]
    plan = zwitter.plan_ion_exchange(mols[0], mols[1:], conditions=loading, stability=(5.5, 8.5))
    assert result["exchanger"] == plan.exchanger == "cation"
    assert result["working_ph"] == plan.working_ph
    assert 5.5 <= result["working_ph"] <= 8.5  # inside the stability window asked for
    assert result["pi"] == pytest.approx(mols[0].isoelectric_point(), abs=1e-9)
    assert result["target_charge"] == pytest.approx(float(mols[0].charge(plan.working_ph)))
    assert result["buffers"] == list(plan.buffers["buffer"])
    order = plan.elution_order()
    assert result["elution_order"] == list(order.loc[order["binds"], "molecule"])
    # the most positive molecule at the working pH binds a cation exchanger most firmly
    charges = plan.charges(plan.working_ph)
    assert result["elution_order"][-1] == max(charges, key=charges.get)
    assert set(result["flow_through"]) == {n for n, z in charges.items() if z <= 0}


def test_column_recipe(column: tuple[ModuleType, dict[str, Any], Path]) -> None:
    module, result, _ = column
    assert result["recipe_buffer"] in result["buffers"]
    assert result["recipe_buffer"] == "MES"  # the nearest Good's buffer in the plan's list
    recipe = zwitter.buffer_recipe(
        "MES", ph=result["working_ph"], concentration=0.02, volume=1.0,
        conditions=zwitter.Conditions(temperature=4.0), salt=0.05,
    )  # fmt: skip
    assert result["recipe"] == [(c.action, c.item, c.amount, c.unit) for c in recipe.components]
    assert result["ionic_strength"] == pytest.approx(recipe.ionic_strength)
    weighed = {c.item: c for c in recipe.components if c.action == "weigh"}
    # NaCl 58.44 g/mol (CRC Handbook of Chemistry and Physics, from memory): 0.05 mol in 1 L
    assert weighed["NaCl"].amount == pytest.approx(0.05 * 58.44, rel=1e-3)
    # MES free acid 195.24 g/mol (Good et al. 1966, Biochemistry 5:467; from memory)
    assert weighed["MES"].amount / weighed["MES"].moles == pytest.approx(195.24, abs=0.1)
    # the two forms add up to the 20 mM asked for, in the ratio Henderson-Hasselbalch gives
    acid, base = weighed["MES"].moles, weighed["MES sodium"].moles
    assert acid + base == pytest.approx(0.02, rel=1e-6)
    assert math.log10(base / acid) == pytest.approx(result["working_ph"] - recipe.pkas[0], abs=0.01)


# -- score_proteome -------------------------------------------------------------------------------
@pytest.fixture(scope="module")
def proteome(tmp_path_factory: pytest.TempPathFactory) -> tuple[ModuleType, dict[str, Any], Path]:
    return run("score_proteome", tmp_path_factory)


def test_proteome_files_and_counts(proteome: tuple[ModuleType, dict[str, Any], Path]) -> None:
    module, result, out = proteome
    assert_files(result["files"], out)
    assert result["n_records"] == module.N_RECORDS == 2000
    assert result["n_scored"] == 1999
    assert list(result["errors"]) == [module.BAD_ID]
    assert "'4' at position 11" in result["errors"][module.BAD_ID]
    assert sum(result["ief_counts"].values()) == result["n_scored"]


def test_proteome_input_is_reproducible(
    proteome: tuple[ModuleType, dict[str, Any], Path], tmp_path: Path
) -> None:
    module, result, _ = proteome
    again = module.write_invented_fasta(tmp_path / "again.fasta")
    assert again.read_bytes() == Path(result["fasta"]).read_bytes()


def test_proteome_numbers_equal_library(proteome: tuple[ModuleType, dict[str, Any], Path]) -> None:
    module, result, _ = proteome
    records = [r for r in read_fasta(result["fasta"]) if r.id != module.BAD_ID]
    assert len(records) == result["n_scored"]
    pis, binders, acidic = [], [], 0
    for r in records:
        m = zwitter.from_sequence(r.sequence)
        pi = m.isoelectric_point()
        z = float(m.charge(7.4))
        pis.append(pi)
        acidic += pi < 7.0
        if z >= max(1.0, len(r.sequence) / 100.0) and pi >= 8.4:
            binders.append(r.id)
    assert result["cation_binders_ph7.4"] == binders
    assert result["n_cation_binders_ph7.4"] == len(binders) > 0
    assert result["n_acidic"] == acidic
    assert result["pi_quantiles"]["median"] == pytest.approx(float(np.median(pis)), abs=1e-6)
    assert result["pi_quantiles"]["min"] == pytest.approx(min(pis), abs=1e-6)
    counts, _ = np.histogram(pis, bins=module.IEF_FRACTIONS)
    inner = [result["ief_counts"][str(i + 1)] for i in range(len(counts))]
    assert inner == counts.tolist()
    ids = {r.id: r.sequence for r in records}
    lo, hi = result["highlighted"]
    assert zwitter.from_sequence(ids[lo]).isoelectric_point() == pytest.approx(min(pis))
    assert zwitter.from_sequence(ids[hi]).isoelectric_point() == pytest.approx(max(pis))


def test_proteome_binding_rule_matches_plan(
    proteome: tuple[ModuleType, dict[str, Any], Path],
) -> None:
    module, result, _ = proteome
    binders = set(result["cation_binders_ph7.4"])
    records = [r for r in read_fasta(result["fasta"]) if r.id != module.BAD_ID][::100]
    assert any(r.id in binders for r in records) and any(r.id not in binders for r in records)
    for r in records:
        plan = zwitter.plan_ion_exchange(r.sequence, stability=(2, 12))
        assert (7.4 in plan.windows["cation"]) == (r.id in binders), r.id


# -- small_molecule_forms -------------------------------------------------------------------------
@pytest.fixture(scope="module")
def small(tmp_path_factory: pytest.TempPathFactory) -> tuple[ModuleType, dict[str, Any], Path]:
    return run("small_molecule_forms", tmp_path_factory)


def test_small_molecule_files(small: tuple[ModuleType, dict[str, Any], Path]) -> None:
    module, result, out = small
    assert_files(result["files"], out)
    assert list(result["molecules"]) == list(module.COMPOUNDS)


@pytest.mark.parametrize("name", ["glycine", "ibuprofen", "propranolol", "cetirizine"])
def test_small_molecule_equals_library(
    small: tuple[ModuleType, dict[str, Any], Path], name: str
) -> None:
    module, result, _ = small
    info = result["molecules"][name]
    m = zwitter.from_smiles(module.COMPOUNDS[name], name=name)
    form = m.dominant(7.4)
    assert info["dominant_smiles"] == form.smiles
    assert info["dominant_charge"] == form.charge
    assert info["charge"] == pytest.approx(float(m.charge(7.4)))
    assert info["pkas"] == pytest.approx(m.pkas())
    micro = m.microstates(7.4, top=module.TOP)
    assert [s for s, _, _ in info["microstates"]] == list(micro["smiles"])
    pops = [p for _, p, _ in info["microstates"]]
    assert pops == sorted(pops, reverse=True) and sum(pops) <= 1 + 1e-9
    if info["pi"] is None:
        with pytest.warns(zwitter.ZwitterWarning, match="no isoelectric point"):
            assert m.isoelectric_point() is None
        assert any("no isoelectric point" in c for c in info["cautions"])
    else:
        assert info["pi"] == pytest.approx(m.isoelectric_point(), abs=1e-9)
        assert info["cautions"] == []


def test_small_molecule_textbook_forms(small: tuple[ModuleType, dict[str, Any], Path]) -> None:
    mols = small[1]["molecules"]
    # At pH 7.4 glycine is the zwitterion (any biochemistry textbook, e.g. Lehninger Principles
    # of Biochemistry, amino-acid chapter; from memory) with pI 5.97 (same table, from memory).
    assert mols["glycine"]["dominant_smiles"] == "[NH3+]CC(=O)[O-]"
    assert abs(mols["glycine"]["pi"] - 5.97) < 0.5
    # ibuprofen (carboxylic acid, pKa about 4.5; from memory) is an anion and has no pI;
    # propranolol (secondary amine, pKa about 9.5; from memory) a cation with no pI
    assert mols["ibuprofen"]["dominant_charge"] == -1 and mols["ibuprofen"]["pi"] is None
    assert mols["propranolol"]["dominant_charge"] == 1 and mols["propranolol"]["pi"] is None
    # cetirizine: carboxylate and protonated piperazine, net zero (a zwitterion; from memory)
    cet = mols["cetirizine"]["dominant_smiles"]
    assert mols["cetirizine"]["dominant_charge"] == 0 and "[O-]" in cet and "[NH+]" in cet


# -- modified_peptide -----------------------------------------------------------------------------
@pytest.fixture(scope="module")
def peptide(tmp_path_factory: pytest.TempPathFactory) -> tuple[ModuleType, dict[str, Any], Path]:
    return run("modified_peptide", tmp_path_factory)


def test_peptide_files(peptide: tuple[ModuleType, dict[str, Any], Path]) -> None:
    _, result, out = peptide
    assert_files(result["files"], out)
    assert result["cautions"] == []


def test_peptide_equals_library(peptide: tuple[ModuleType, dict[str, Any], Path]) -> None:
    module, result, _ = peptide
    modified = zwitter.from_proforma(module.PROFORMA)
    plain = zwitter.from_sequence(module.PLAIN)
    assert result["pi"]["modified"] == pytest.approx(modified.isoelectric_point(), abs=1e-9)
    assert result["pi"]["plain"] == pytest.approx(plain.isoelectric_point(), abs=1e-9)
    assert result["charges"]["modified"] == pytest.approx([modified.charge(p) for p in module.PH])
    assert result["charges"]["plain"] == pytest.approx([plain.charge(p) for p in module.PH])
    assert result["pkas"]["modified"] == pytest.approx(modified.pkas())
    states = modified.residue_states(7.4)
    assert result["residue_states"] == states[["member", "state", "charge"]].values.tolist()
    top = modified.microstates(7.4, top=1)
    assert result["top_microstate"] == pytest.approx(
        (top["charge"].iloc[0], top["population"].iloc[0])
    )


def test_peptide_modifications(peptide: tuple[ModuleType, dict[str, Any], Path]) -> None:
    _, result, _ = peptide
    assert result["bonded_cysteines"] == ["C1", "C8"]
    assert sorted(result["modifications"]) == ["Acetyl", "Amidated", "Phospho"]
    # a phosphomonoester (second pKa near 6, from memory) is a dianion at pH 7.4
    assert result["phosphoserine_state"] == ("fully deprotonated", -2.0)
    members = [m for m, _, _ in result["residue_states"]]
    assert not any(m.startswith(("N-term", "C-term")) for m in members)  # both termini capped
    # capping removes roughly +1 and -1, the phosphate adds about -2: more negative at 7.4
    shift = result["charges"]["modified"][2] - result["charges"]["plain"][2]
    assert -2.5 < shift < -1.0
    # independent sites: modified = plain - termini - thiols + phosphoserine (diprotic HH)
    plain = zwitter.from_sequence(result["plain"]).residue_states(7.4)
    gone = plain[plain["member"].str.startswith(("N-term", "C-term")) | (plain["group"] == "C")]
    table = zwitter.from_proforma(result["proforma"]).site_table(7.4)
    pk1, pk2 = (
        float(x) for x in table.loc[table["site"] == "phosphoserine", "pka"].iloc[0].split(";")
    )
    w = np.array([1.0, 10 ** (7.4 - pk1), 10 ** (2 * 7.4 - pk1 - pk2)])
    phospho = -float(w @ [0, 1, 2] / w.sum())
    expected = result["charges"]["plain"][2] - gone["mean_charge"].sum() + phospho
    assert result["charges"]["modified"][2] == pytest.approx(expected, abs=1e-9)


def test_script_runs_as_main(tmp_path: Path) -> None:
    out = tmp_path / "out"
    done = subprocess.run(
        [sys.executable, "-W", "error", str(EXAMPLES / "modified_peptide.py"), str(out)],
        cwd=tmp_path, capture_output=True, text=True, timeout=120, check=False,
    )  # fmt: skip
    assert done.returncode == 0, done.stderr
    assert "pI" in done.stdout and "estimates" in done.stdout
    for name in ("residue_states.csv", "microstates.csv", "titration.png", "charge_comparison.png"):
        assert (out / name).stat().st_size > 0
