"""A synthetic, modified peptide written in ProForma, compared with its plain sequence.

The peptide is INVENTED for this example (11 residues, no biological meaning). Its ProForma
string has an acetylated N-terminus, an amidated C-terminus, a phosphoserine and a disulfide
between its two cysteines::

    [Acetyl]-C[#XL1]RKS[Phospho]PEYC[#XL1]HDG-[Amidated]

This script shows

* ``zwitter.from_proforma``: what the reader understood (modifications, bonded cysteines);
* the net charge at several pH values, the pI and the macroscopic pKa values, next to those of
  the unmodified sequence ``CRKSPEYCHDG`` (``zwitter.from_sequence``): the caps remove the
  terminal amine and carboxyl, the phosphate adds up to two negative charges, the disulfide
  removes two thiols;
* ``residue_states`` (the dominant state of every group at pH 7.4) and ``microstates`` (the most
  populated combinations of group states);
* ``zwitter.plots.titration_plot`` (fraction protonated of each group type) and a
  ``charge_plot`` comparing both forms, as PNG files.

Every number is an estimate from published pKa values and the independent-site model; neighbours,
structure and salt shift real pKa values. Verify with a titration or an electrophoretic run.

Run::

    python examples/modified_peptide.py [OUT_DIR]      # default OUT_DIR: example-output
"""

from __future__ import annotations

import sys
import warnings
from pathlib import Path
from typing import Any

import zwitter
from zwitter.plots import charge_plot, titration_plot

PROFORMA = "[Acetyl]-C[#XL1]RKS[Phospho]PEYC[#XL1]HDG-[Amidated]"
PLAIN = "CRKSPEYCHDG"
PH = [2.0, 5.0, 7.4, 9.0, 11.0]
STATES_PH = 7.4
TOP = 5


def signed(charge: float) -> str:
    """A charge as people write it: +1, -2, 0."""
    return f"{charge:+g}" if charge else "0"


def main(out_dir: Path) -> dict[str, Any]:
    """Compare the modified and the plain peptide; write tables and figures into ``out_dir``."""
    out_dir = Path(out_dir)
    out_dir.mkdir(parents=True, exist_ok=True)
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always", zwitter.ZwitterWarning)

        modified = zwitter.from_proforma(PROFORMA, name="modified")
        plain = zwitter.from_sequence(PLAIN, name="plain")
        print(f"Modified peptide: {PROFORMA}  (invented)")
        for mod in modified.info["modifications"]:
            print(f"  {mod['site']}: {mod['modification']} ({mod['accession']}): {mod['effect']}")
        bonded = list(modified.info["bonded_cysteines"])
        print(f"  disulfide-bonded cysteines: {', '.join(bonded)}")

        charges = {
            name: [float(m.charge(p)) for p in PH]
            for name, m in (("modified", modified), ("plain", plain))
        }
        pis = {"modified": modified.isoelectric_point(), "plain": plain.isoelectric_point()}
        pkas = {"modified": modified.pkas(), "plain": plain.pkas()}
        print("\n  pH      " + "".join(f"{p:>8g}" for p in PH) + "      pI")
        for name in ("modified", "plain"):
            row = "".join(f"{z:+8.2f}" for z in charges[name])
            print(f"  {name:<8}{row}    {pis[name]:.2f}")
        for name in ("modified", "plain"):
            print(f"  macroscopic pKa ({name}): " + ", ".join(f"{p:.2f}" for p in pkas[name]))

        states = modified.residue_states(STATES_PH)
        states.to_csv(out_dir / "residue_states.csv", index=False)
        print(f"\n  groups of the modified peptide at pH {STATES_PH:g}:")
        for row in states.itertuples():
            print(
                f"    {row.member:<6} {row.site:<16} {row.state:<18} charge {signed(row.charge)} "
                f"({100 * row.population:.1f}%)"
            )

        micro = modified.microstates(STATES_PH, top=TOP)
        micro.to_csv(out_dir / "microstates.csv", index=False)
        print(f"  top {TOP} microstates at pH {STATES_PH:g}:")
        for row in micro.itertuples():
            change = f"  ({row.differs})" if row.differs else "  (most populated)"
            print(f"    {row.rank}. {row.population:7.2%}  charge {signed(row.charge)}{change}")

        titration_plot(
            modified, title="Modified peptide: titration by group", path=out_dir / "titration.png"
        )
        charge_plot(
            [modified, plain],
            names=["acetyl/amide, pS, S-S", "plain CRKSPEYCHDG"],
            title="Modified versus plain peptide",
            path=out_dir / "charge_comparison.png",
        )

    cautions = [str(w.message) for w in caught]
    for text in cautions:
        print(f"caution: {text}")
    print("All numbers are estimates: confirm with a titration or an electrophoretic run.")
    phospho = states[states["member"] == "pS4"].iloc[0]
    return {
        "proforma": PROFORMA,
        "plain": PLAIN,
        "ph": PH,
        "charges": charges,
        "pi": pis,
        "pkas": pkas,
        "bonded_cysteines": bonded,
        "modifications": [m["modification"] for m in modified.info["modifications"]],
        "phosphoserine_state": (str(phospho["state"]), float(phospho["charge"])),
        "residue_states": states[["member", "state", "charge"]].values.tolist(),
        "top_microstate": (float(micro["charge"].iloc[0]), float(micro["population"].iloc[0])),
        "cautions": cautions,
        "files": [out_dir / n for n in ("residue_states.csv", "microstates.csv",
                                        "titration.png", "charge_comparison.png")],
    }  # fmt: skip


if __name__ == "__main__":
    result = main(Path(sys.argv[1] if len(sys.argv) > 1 else "example-output"))
    print(
        f"\npI {result['pi']['modified']:.2f} (modified) versus {result['pi']['plain']:.2f} "
        "(plain); wrote " + ", ".join(str(f) for f in result["files"])
    )
