"""Commands for structures: ``explain`` (how every pKa was assigned) and ``species`` (microstates).

Both take one SMILES. ``zwitter forms`` (sequence_cmds) also accepts SMILES; ``species`` is the
structure-specific view: the most populated microstates drawn as SMILES with formal charges.
"""

from __future__ import annotations

import json
import sys
import warnings
from typing import Annotated, Any

import typer

from ..errors import ZwitterError
from ._app import app, fail
from ._common import IonicOpt, PlotOpt, TempOpt, conditions_from, save_plot
from ._output import CAUTION, OutputFormat, emit, rounded

SmilesArg = Annotated[str, typer.Argument(help="One SMILES (quote it in the shell).")]
PhOpt = Annotated[float, typer.Option("--ph", help="pH value.")]
KeepOpt = Annotated[
    bool,
    typer.Option(
        "--keep-fragments/--largest-fragment",
        help="Keep every fragment, or (default) only the largest organic one (counter-ions "
        "removed and listed).",
    ),
]
FormatOpt = Annotated[
    OutputFormat,
    typer.Option("--format", "-f", help="Output format: table for people, csv/tsv/json."),
]


def _read(
    smiles: str, keep: bool, temp: float | None, ionic: float | None
) -> tuple[Any, list[str]]:
    """The molecule and the cautions raised while reading it (shown on stderr, not as warnings)."""
    from ..structure import from_smiles

    cond = conditions_from(temp, ionic)
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        try:
            mol = from_smiles(smiles, conditions=cond, keep_fragments=keep)
        except ZwitterError as exc:
            fail(str(exc))
    return mol, [str(w.message) for w in caught]


def _quiet(func: Any, *args: Any) -> tuple[Any, list[str]]:
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        value = func(*args)
    return value, [str(w.message) for w in caught]


def _notes_to_stderr(notes: list[str]) -> None:
    for note in dict.fromkeys(notes):
        sys.stderr.write(f"zwitter: note: {note}\n")


@app.command()
def explain(
    smiles: SmilesArg,
    ph: PhOpt = 7.4,
    keep_fragments: KeepOpt = False,
    temp: TempOpt = None,
    ionic_strength: IonicOpt = None,
    fmt: FormatOpt = OutputFormat.table,
) -> None:
    """Each ionizable site of a structure, its pKa and the reasoning: group, base value,
    every correction with its source, then the macroscopic pKa values of the coupled sites."""
    mol, notes = _read(smiles, keep_fragments, temp, ionic_strength)
    try:
        ex = mol.explain()
        table = mol.site_table(ph)
        charge = float(mol.charge(ph))
    except ZwitterError as exc:
        fail(str(exc))
    pi, more = _quiet(mol.isoelectric_point)
    notes += more
    macro = mol.pkas()
    if fmt is OutputFormat.json:
        doc = {
            "input": mol.input_smiles,
            "reference_smiles": mol.reference_smiles,
            "removed_fragments": list(mol.removed_fragments),
            "notes": list(dict.fromkeys(notes)),
            "ph": ph,
            "charge": rounded(charge),
            "isoelectric_point": rounded(pi) if pi is not None else None,
            "macroscopic_pkas": [rounded(p) for p in macro],
            "sites": [{k: rounded(v) for k, v in r.items()} for r in table.to_dict("records")],
            "reasoning": list(ex.rows),
            "caution": CAUTION,
        }
        sys.stdout.write(json.dumps(doc, indent=2, default=str) + "\n")
        return
    _notes_to_stderr(notes)
    emit(list(ex.rows), fmt, title=f"How the pKa values of {mol.name} were assigned")
    if fmt is OutputFormat.table:
        lines = [f"Reference structure: {mol.reference_smiles}"]
        if mol.removed_fragments:
            lines.append(f"Removed fragments: {', '.join(mol.removed_fragments)}")
        lines.append(
            "Macroscopic pKa: " + ("; ".join(f"{p:.2f}" for p in macro) if macro else "none")
        )
        lines.append(f"Net charge at pH {ph:g}: {charge:+.3f}")
        lines.append("pI: " + (f"{pi:.2f}" if pi is not None else "none (see note)"))
        sys.stdout.write("\n".join(lines) + "\n" + CAUTION + "\n")


@app.command()
def species(
    smiles: SmilesArg,
    ph: PhOpt = 7.4,
    top: Annotated[int, typer.Option("--top", help="How many microstates to list.", min=1)] = 10,
    keep_fragments: KeepOpt = False,
    temp: TempOpt = None,
    ionic_strength: IonicOpt = None,
    fmt: FormatOpt = OutputFormat.table,
    plot: PlotOpt = None,
) -> None:
    """The dominant form of a structure at a pH and its most populated microstates, drawn as
    SMILES with formal charges."""
    mol, notes = _read(smiles, keep_fragments, temp, ionic_strength)
    try:
        dom = mol.dominant(ph)
        table = mol.species(ph, top=top)
    except ZwitterError as exc:
        fail(str(exc))
    if plot is not None:
        from ..plots import species_plot

        save_plot(lambda: species_plot(mol, path=plot), plot)
    rows = [
        {
            "rank": i + 1,
            "smiles": r.smiles,
            "charge": float(r.charge),
            "protons_lost": int(r.protons_lost),
            "population": float(r.population),
        }
        for i, r in enumerate(table.itertuples())
    ]
    if fmt is OutputFormat.json:
        doc = {
            "input": mol.input_smiles,
            "removed_fragments": list(mol.removed_fragments),
            "notes": list(dict.fromkeys(notes)),
            "ph": ph,
            "mean_charge": rounded(dom.mean_charge),
            "dominant": {
                "smiles": dom.smiles,
                "charge": dom.charge,
                "population": rounded(dom.population),
            },
            "microstates": [{k: rounded(v) for k, v in r.items()} for r in rows],
            "caution": CAUTION,
        }
        sys.stdout.write(json.dumps(doc, indent=2) + "\n")
        return
    _notes_to_stderr(notes)
    emit(rows, fmt, title=f"Microstates of {mol.name} at pH {ph:g}")
    if fmt is OutputFormat.table:
        sys.stdout.write(
            f"Dominant form: {dom.smiles} (charge {dom.charge:+g}, {dom.population:.1%}); "
            f"mean charge {dom.mean_charge:+.3f}.\n{CAUTION}\n"
        )
