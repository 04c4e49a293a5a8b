"""The built-in demo: the main jobs on packaged, invented data.

Scenario (invented for the demo; no real laboratory, protein or result): the fictional Marsh Lab
purifies *marinase*, an invented salt-tolerant nuclease expressed with an N-terminal His6 tag,
from a host-cell extract. The extract (``data/demo/marsh_extract.fasta``) holds the tagged enzyme,
five invented host-cell proteins and two peptides. The lab's notes (also invented) say marinase
is stable between pH 6.0 and 9.5 and the column runs in a 4 °C cold room with 50 mM NaCl.

The demo answers what that lab would ask: the charge of every protein in the extract, which
ion-exchange column at which pH separates marinase from the rest, how to make the buffer, and
the forms of the small molecules in the buffers (imidazole for the His-tag step, EDTA,
arginine).
It writes a report and figures into one folder. Every number is an estimate.
"""

from __future__ import annotations

import math
import warnings
from dataclasses import dataclass, field
from importlib import resources
from pathlib import Path
from typing import Any

from .errors import ZwitterWarning

__all__ = ["DemoResult", "run_demo", "DEMO_CONDITIONS", "DEMO_STABILITY", "ADDITIVES"]

#: The invented lab's column conditions: cold room, 50 mM NaCl.
DEMO_CONDITIONS: dict[str, float] = {"temperature": 4.0, "ionic_strength": 0.05}
#: The invented stability window of marinase (pH).
DEMO_STABILITY = (6.0, 9.5)
#: Small molecules in the lab's buffers (real reagents; SMILES from their structures).
ADDITIVES = {
    "imidazole (His-tag elution)": "c1c[nH]cn1",
    "EDTA (protease inhibitor cocktail)": "OC(=O)CN(CC(=O)O)CCN(CC(=O)O)CC(=O)O",
    "L-arginine (aggregation suppressor)": "N[C@@H](CCCNC(N)=N)C(=O)O",
}
TARGET_ID = "MRN1_HIS"


@dataclass
class DemoResult:
    """What the demo computed and where it wrote it."""

    folder: Path
    extract: Any  # pandas DataFrame, one row per record
    plan: Any  # zwitter.purification.Plan
    recipe: Any | None  # zwitter.buffers.Recipe
    additives: list[dict[str, Any]]
    files: list[Path] = field(default_factory=list)
    notes: list[str] = field(default_factory=list)


def demo_fasta() -> Path:
    """Path of the packaged demo FASTA file."""
    return Path(str(resources.files("zwitter").joinpath("data", "demo", "marsh_extract.fasta")))


def run_demo(folder: str | Path = "zwitter-demo") -> DemoResult:
    """Run the demo and write ``extract_scores.csv``, figures and ``report.html`` in ``folder``."""
    from .batch import score_fasta
    from .buffers import buffer_recipe
    from .conditions import Conditions
    from .fasta import read_fasta
    from .plots import charge_plot, gel_plot, plan_plot, species_plot
    from .purification import plan_ion_exchange
    from .report import plan_report, write_html
    from .sequence import from_sequence
    from .structure import from_smiles

    out = Path(folder)
    out.mkdir(parents=True, exist_ok=True)
    notes: list[str] = []
    cond = Conditions(
        temperature=DEMO_CONDITIONS["temperature"],
        ionic_strength=DEMO_CONDITIONS["ionic_strength"],
    )
    fasta = demo_fasta()
    records = list(read_fasta(fasta))
    extract = score_fasta(fasta, ph=[5.0, 7.4, 9.0], conditions=cond)
    csv_path = out / "extract_scores.csv"
    tmp = csv_path.with_name(csv_path.name + ".partial")
    extract.to_csv(tmp, index=False)
    tmp.replace(csv_path)
    files = [csv_path]

    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always", ZwitterWarning)
        mols = {r.id: from_sequence(r.sequence, name=r.id, conditions=cond) for r in records}
        target = mols[TARGET_ID]
        contaminants = [m for k, m in mols.items() if k != TARGET_ID]
        plan = plan_ion_exchange(
            target, contaminants=contaminants, conditions=cond, stability=DEMO_STABILITY
        )
        recipe = None
        if plan.exchanger and not plan.buffers.empty and math.isfinite(plan.working_ph):
            name = str(plan.buffers.iloc[0]["buffer"])
            recipe = buffer_recipe(
                name, ph=round(plan.working_ph, 1), concentration=0.025, volume=1.0,
                conditions=cond, salt=DEMO_CONDITIONS["ionic_strength"],
            )  # fmt: skip
        additives = []
        for label, smiles in ADDITIVES.items():
            mol = from_smiles(smiles, name=label)
            dom = mol.dominant(7.4)
            additives.append(
                {"additive": label, "dominant form at pH 7.4": dom.smiles,
                 "charge": dom.charge, "population": dom.population,
                 "mean charge": float(mol.charge(7.4)),
                 "pKa": "; ".join(f"{p:.2f}" for p in mol.pkas())}
            )  # fmt: skip
            if label.startswith("imidazole"):
                imidazole = mol
    notes.extend(dict.fromkeys(str(w.message) for w in caught))

    figures: dict[str, Any] = {
        "plan.png": lambda p: plan_plot(plan, path=p),
        "extract_gel.png": lambda p: gel_plot(extract, highlight=[TARGET_ID], path=p),
        "marinase_vs_tag.png": lambda p: charge_plot(
            [target, mols["TAGPEP1"]], names=["marinase (tagged)", "cleaved tag"], path=p
        ),
        "imidazole_forms.png": lambda p: species_plot(imidazole, path=p),
    }
    for name, draw in figures.items():
        draw(out / name)
        files.append(out / name)
    html = plan_report(plan, title="Demo: ion exchange for marinase (invented scenario)")
    files.append(write_html(html, out / "report.html"))
    return DemoResult(out, extract, plan, recipe, additives, files, notes)
