"""A small molecule's forms at physiological pH, from its SMILES.

Four common, public molecules stand for four kinds of behaviour: glycine (an amino acid), ibuprofen
(a carboxylic-acid drug), propranolol (an amine drug) and cetirizine (a zwitterionic drug). For
each, the script prints what zwitter PREDICTS at pH 7.4 from its group library (no measured
value is quoted here):

* the dominant form as SMILES, its charge and population, and the average net charge;
* the top microstates (every group in one protonation state) with their populations;
* the macroscopic pKa values and the isoelectric point (or the reason there is none: a molecule
  with only an acid, or only a base, never crosses zero charge; the ZwitterWarning that says so
  is caught and printed as a caution);

and saves a ``zwitter.plots.species_plot`` (populations of the forms from pH 0 to 14) for each.

These are estimates from group pKa values with substituent corrections and site coupling; real
pKa values can differ by a unit or more. Verify with a measured pKa (titration, capillary
electrophoresis, a handbook value with its source) before relying on a number.

Run::

    python examples/small_molecule_forms.py [OUT_DIR]      # default OUT_DIR: example-output
"""

from __future__ import annotations

import sys
import warnings
from pathlib import Path
from typing import Any

import zwitter
from zwitter.plots import species_plot

PH = 7.4  # physiological pH (common practice: blood plasma)
TOP = 3  # microstates to show
#: name -> SMILES of the neutral structure (public structures of well-known compounds)
COMPOUNDS = {
    "glycine": "NCC(=O)O",
    "ibuprofen": "CC(C)Cc1ccc(cc1)C(C)C(=O)O",
    "propranolol": "CC(C)NCC(O)COc1cccc2ccccc12",
    "cetirizine": "OC(=O)COCCN1CCN(CC1)C(c1ccccc1)c1ccc(Cl)cc1",
}


def signed(charge: float) -> str:
    """A charge as people write it: +1, -2, 0."""
    return f"{charge:+g}" if charge else "0"


def describe(name: str, smiles: str, out_dir: Path) -> dict[str, Any]:
    """Print and return what zwitter predicts for one molecule; save its species plot."""
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always", zwitter.ZwitterWarning)
        m = zwitter.from_smiles(smiles, name=name)
        form = m.dominant(PH)
        micro = m.microstates(PH, top=TOP)
        pkas = m.pkas()
        pi = m.isoelectric_point()
        figure = out_dir / f"species_{name}.png"
        species_plot(m, title=f"Forms of {name} (predicted)", path=figure)
    cautions = [str(w.message) for w in caught]

    print(f"\n{name}  {smiles}")
    print(
        f"  dominant form at pH {PH:g}: {form.smiles}  charge {signed(form.charge)}, "
        f"{100 * form.population:.1f}% of molecules"
    )
    print(f"  average net charge: {float(m.charge(PH)):+.3f}")
    print("  macroscopic pKa: " + (", ".join(f"{p:.2f}" for p in pkas) or "none"))
    print(f"  pI: {pi:.2f}" if pi is not None else "  pI: none")
    print(f"  top {TOP} microstates:")
    for row in micro.itertuples():
        print(f"    {row.rank}. {row.population:9.3%}  charge {signed(row.charge)}  {row.smiles}")
    for text in cautions:
        print(f"  caution: {text}")
    return {
        "smiles": smiles,
        "dominant_smiles": form.smiles,
        "dominant_charge": form.charge,
        "dominant_population": form.population,
        "charge": float(m.charge(PH)),
        "pkas": pkas,
        "pi": pi,
        "microstates": [(r.smiles, r.population, r.charge) for r in micro.itertuples()],
        "cautions": cautions,
        "figure": figure,
    }


def main(out_dir: Path) -> dict[str, Any]:
    """Describe every compound, save one species plot each in ``out_dir``; return key numbers."""
    out_dir = Path(out_dir)
    out_dir.mkdir(parents=True, exist_ok=True)
    print(f"Forms at pH {PH:g} predicted by zwitter (estimates, not measurements)")
    molecules = {name: describe(name, smi, out_dir) for name, smi in COMPOUNDS.items()}
    print("\nAll numbers are estimates: check them against measured pKa values.")
    return {
        "ph": PH,
        "molecules": molecules,
        "files": [info["figure"] for info in molecules.values()],
    }


if __name__ == "__main__":
    result = main(Path(sys.argv[1] if len(sys.argv) > 1 else "example-output"))
    print()
    for name, info in result["molecules"].items():
        print(f"{name:<12} {signed(info['dominant_charge']):>2}  {info['dominant_smiles']}")
    print("wrote " + ", ".join(str(f) for f in result["files"]))
