"""Choose an ion-exchange column and a buffer for a purification step.

Scenario (invented, the packaged demo data): the fictional Marsh Lab purifies 'marinase', an
invented His-tagged salt-tolerant nuclease, from a host-cell extract with invented contaminant
proteins and peptides (``zwitter/data/demo/marsh_extract.fasta``). This script shows

* ``zwitter.plan_ion_exchange`` with a stability window: the recommended exchanger, the working
  pH, the compatible buffers and the predicted elution order in a rising salt gradient;
* ``zwitter.buffer_recipe`` at the working pH for the cold room (4 deg C) with 50 mM NaCl: what
  to weigh, the resulting ionic strength and buffer capacity;
* ``zwitter.plots.plan_plot``: the charge curves with the usable binding windows, as a PNG.

Every number printed is an estimate from published pKa values and a simple model (independent
sites, Henderson-Hasselbalch, Davies activity correction). Real proteins have shifted pKa values
and charge patches; verify with a pilot run (a small column, a pH and salt scout) before scaling
up, and follow your lab's safety rules when making buffers.

Run::

    python examples/choose_column_and_buffer.py [OUT_DIR]      # default OUT_DIR: example-output
"""

from __future__ import annotations

import sys
import warnings
from importlib import resources
from pathlib import Path
from typing import Any

import zwitter
from zwitter.fasta import read_fasta
from zwitter.plots import plan_plot

#: The record of the target in the demo FASTA; every other record is treated as a contaminant.
TARGET_ID = "MRN1_HIS"
#: pH range the (invented) enzyme tolerates: part of the invented scenario, not a measurement.
STABILITY = (5.5, 8.5)
#: Cold room and loading salt of the scenario.
TEMPERATURE = 4.0  # deg C
NACL = 0.050  # mol/L
#: Buffer strength and volume to make (common practice for ion-exchange loading buffers).
BUFFER_CONCENTRATION = 0.020  # mol/L
VOLUME = 1.0  # L


def demo_records() -> list[Any]:
    """The records of the packaged demo FASTA, found with importlib.resources."""
    source = resources.files("zwitter").joinpath("data", "demo", "marsh_extract.fasta")
    with resources.as_file(source) as path:
        return list(read_fasta(path))


def pick_buffer(buffers: Any) -> str:
    """The first compatible buffer that is one of Good's buffers, else the nearest pKa.

    Common practice: Good's buffers (Good et al. 1966, Biochemistry 5:467) bind few metal ions
    and absorb little UV, which matters for an enzyme and for monitoring a column at 280 nm.
    ``buffers`` is the plan's table, nearest pKa first.
    """
    good = buffers[buffers["notes"].str.contains("Good's buffer", regex=False)]
    return str((good if not good.empty else buffers).iloc[0]["buffer"])


def main(out_dir: Path) -> dict[str, Any]:
    """Plan the column, write the recipe and the figure into ``out_dir``; return key numbers."""
    out_dir = Path(out_dir)
    out_dir.mkdir(parents=True, exist_ok=True)
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always", zwitter.ZwitterWarning)

        records = demo_records()
        # The loading buffer: 4 deg C; its ionic strength is roughly the added NaCl (the recipe
        # below reports the exact value, buffer ions included).
        loading = zwitter.Conditions(temperature=TEMPERATURE, ionic_strength=NACL)
        molecules = [
            zwitter.from_sequence(r.sequence, name=r.id, conditions=loading) for r in records
        ]
        target = next(m for m in molecules if m.name == TARGET_ID)
        contaminants = [m for m in molecules if m.name != TARGET_ID]

        plan = zwitter.plan_ion_exchange(
            target, contaminants, conditions=loading, stability=STABILITY
        )
        print("Ion-exchange plan for the invented enzyme 'marinase' (demo data)")
        print(f"  predicted pI of {TARGET_ID}: {plan.pi:.2f}")
        print(f"  stability window: pH {STABILITY[0]:g}-{STABILITY[1]:g}")
        print(f"  recommended exchanger: {plan.exchanger} (usable {plan.ph_range})")
        print(
            f"  working pH: {plan.working_ph:.2f} (largest charge gap to the nearest "
            f"contaminant: {plan.separation_gap:.1f} charges)"
        )
        print(f"  net charge of the target there: {float(target.charge(plan.working_ph)):+.1f}")
        buffers = list(plan.buffers["buffer"])
        print("  compatible buffers (pKa within 1 unit, same sign as the fixed groups):")
        print("    " + ", ".join(buffers))
        order = plan.elution_order()
        print("  predicted behaviour in a rising NaCl gradient:")
        for row in order.itertuples():
            what = f"elutes #{row.elution_order}" if row.binds else "flows through"
            print(f"    {row.molecule:<11} charge {row.charge:+6.1f}  {what}")
        for note in plan.notes:
            print(f"  note: {note}")
        plan.to_frame().to_csv(out_dir / "plan.csv", index=False)
        order.to_csv(out_dir / "elution_order.csv", index=False)

        buffer = pick_buffer(plan.buffers)
        cold_room = zwitter.Conditions(temperature=TEMPERATURE)
        recipe = zwitter.buffer_recipe(
            buffer,
            ph=plan.working_ph,
            concentration=BUFFER_CONCENTRATION,
            volume=VOLUME,
            conditions=cold_room,
            salt=NACL,
        )
        print(
            f"\nRecipe: {VOLUME:g} L of {BUFFER_CONCENTRATION * 1000:g} mM {recipe.buffer}, "
            f"{NACL * 1000:g} mM NaCl, pH {recipe.ph:.2f} at {recipe.temperature:g} C "
            f"({recipe.method})"
        )
        for c in recipe.components:
            note = f"  ({c.note})" if c.note else ""
            print(f"  {c.action:<8} {c.amount:10.4g} {c.unit:<3} {c.item}{note}")
        print(
            f"  ionic strength {recipe.ionic_strength:.3f} M, buffer capacity "
            f"{recipe.buffer_capacity * 1000:.1f} mM/pH, pKa at 4 C "
            + ", ".join(f"{p:.2f}" for p in recipe.pkas)
        )
        recipe.to_frame().to_csv(out_dir / "recipe.csv", index=False)

        figure = out_dir / "plan.png"
        plan_plot(plan, title="Marinase (invented) on ion exchange", path=figure)

    cautions = [str(w.message) for w in caught]
    for text in cautions:
        print(f"caution: {text}")
    print("All numbers are estimates: confirm with a pilot run.")
    return {
        "target": TARGET_ID,
        "contaminants": [m.name for m in contaminants],
        "stability": STABILITY,
        "pi": plan.pi,
        "exchanger": plan.exchanger,
        "working_ph": plan.working_ph,
        "target_charge": float(target.charge(plan.working_ph)),
        "buffers": buffers,
        "elution_order": [str(m) for m in order.loc[order["binds"], "molecule"]],
        "flow_through": [str(m) for m in order.loc[~order["binds"], "molecule"]],
        "recipe_buffer": recipe.buffer,
        "recipe": [(c.action, c.item, c.amount, c.unit) for c in recipe.components],
        "ionic_strength": recipe.ionic_strength,
        "buffer_capacity": recipe.buffer_capacity,
        "cautions": cautions,
        "files": [out_dir / n for n in ("plan.csv", "elution_order.csv", "recipe.csv", "plan.png")],
    }


if __name__ == "__main__":
    result = main(Path(sys.argv[1] if len(sys.argv) > 1 else "example-output"))
    print(
        f"\n{result['exchanger']} exchanger at pH {result['working_ph']:.2f} in "
        f"{result['recipe_buffer']}; wrote " + ", ".join(str(f) for f in result["files"])
    )
