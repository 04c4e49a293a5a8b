"""Commands for buffers and purification: ``buffer`` (recipes, suitable buffers) and ``plan``."""

from __future__ import annotations

import enum
import json
import math
import sys
from pathlib import Path
from typing import Annotated, Any, TypeVar

import typer

from ._app import app, fail
from ._common import CysMode, cautions, run_or_fail
from ._output import CAUTION, OutputFormat, emit

T = TypeVar("T")

LAB_CAUTION = (
    CAUTION + " Confirm with a pilot run; handle acids, bases and buffer substances (some, such as "
    "cacodylate, are toxic) as your lab's safety rules and local regulations require."
)

FormatOpt = Annotated[
    OutputFormat,
    typer.Option("--format", "-f", help="Output format: table for people, csv/tsv/json."),
]
TempOpt = Annotated[
    float, typer.Option("--temp", help="Temperature, deg C (0-100).", show_default=True)
]
IonicOpt = Annotated[
    float,
    typer.Option(
        "--ionic-strength", help="Ionic strength of the solution, mol/L (0.15 = 150 mM NaCl)."
    ),
]


class Method(str, enum.Enum):
    auto = "auto"
    mix = "mix"
    titrate = "titrate"


class Exchanger(str, enum.Enum):
    cation = "cation"
    anion = "anion"


def _plain(value: Any) -> Any:
    """numpy scalars -> Python numbers (for JSON and the shared rounding)."""
    if hasattr(value, "item") and not isinstance(value, (str, bytes)):
        value = value.item()
    if isinstance(value, float) and math.isinf(value):
        return None
    return value


def _rows(frame: Any) -> list[dict[str, Any]]:
    return [{k: _plain(v) for k, v in r.items()} for r in frame.to_dict(orient="records")]


def _conditions(temp: float, ionic: float) -> Any:
    from ..conditions import Conditions

    return run_or_fail(lambda: Conditions(temperature=temp, ionic_strength=ionic))


@app.command()
def buffer(
    name: Annotated[
        str | None,
        typer.Argument(
            help="Buffer name or alias (e.g. Tris, HEPES, phosphate).", show_default=False
        ),
    ] = None,
    ph: Annotated[
        float | None, typer.Option("--ph", help="Target pH at the working temperature.")
    ] = None,
    conc: Annotated[
        float, typer.Option("--conc", help="Total buffer concentration, mol/L.")
    ] = 0.05,
    volume: Annotated[float, typer.Option("--volume", help="Final volume, litres.")] = 1.0,
    salt: Annotated[float, typer.Option("--salt", help="Added NaCl, mol/L.")] = 0.0,
    temp: TempOpt = 25.0,
    ionic: IonicOpt = 0.0,
    method: Annotated[
        Method, typer.Option("--method", help="mix two forms, or titrate one with acid/base.")
    ] = Method.auto,
    stock: Annotated[float, typer.Option("--stock", help="Strong acid/base stock, mol/L.")] = 1.0,
    exchanger: Annotated[
        Exchanger | None,
        typer.Option("--exchanger", help="With --ph and no name: only buffers compatible with it."),
    ] = None,
    within: Annotated[
        float, typer.Option("--within", help="With --ph and no name: largest |pKa - pH|.")
    ] = 1.0,
    list_all: Annotated[
        bool, typer.Option("--list", help="List the packaged buffer table.")
    ] = False,
    fmt: FormatOpt = OutputFormat.table,
) -> None:
    """Buffer recipes, pKa values at your conditions, and buffers suitable for a pH.

    NAME --ph 7.4: a recipe.  NAME alone: its pKa values at --temp/--ionic-strength.
    --ph alone: buffers with a pKa near that pH.  --list: the whole table.
    """
    from ..buffers import buffer_pkas, buffer_recipe, buffer_table, get_buffer, suitable_buffers

    cond = _conditions(temp, ionic)
    if list_all:
        table = buffer_table()
        rows = [
            {
                "buffer": r["buffer"],
                "step": int(r["step"]),
                "pKa25": r["pka25"],
                "dH_kJ/mol": r["dH_kJ_per_mol"],
                "charges": f"{r['charge_acid']:+d}/{r['charge_base']:+d}",
                "useful_range": r["useful_range"],
                "source": r["source"],
            }
            for r in _rows(table)
        ]
        emit(rows, fmt, title="Packaged buffers (25 C, I = 0)", caption=LAB_CAUTION)
        return
    if name is None and ph is None:
        fail("give a buffer NAME, --ph, or --list (see `zwitter buffer --help`)")
    if name is None:
        assert ph is not None
        charge = (
            None
            if exchanger is None
            else ("negative" if exchanger is Exchanger.cation else "positive")
        )
        frame = run_or_fail(lambda: suitable_buffers(ph, cond, within=within, charge=charge))
        keys = ["buffer", "step", "pka", "distance", "forms_present", "temperature_dependence"]
        if fmt is not OutputFormat.table:
            keys.append("notes")  # long: machines only (people see them with `zwitter buffer NAME`)
        rows = [{k: r[k] for k in keys} for r in _rows(frame)]
        if not rows:
            fail(f"no packaged buffer has a pKa within {within:g} of pH {ph:g} at these conditions")
        label = (
            f" for {'an anion' if exchanger is Exchanger.anion else 'a cation'} exchanger"
            if exchanger
            else ""
        )
        emit(
            rows,
            fmt,
            title=f"Buffers for pH {ph:g}{label} at {temp:g} C, I = {ionic:g} M",
            caption=LAB_CAUTION,
        )
        return
    if ph is None:
        with cautions():
            buf = run_or_fail(lambda: get_buffer(name))
            pkas = run_or_fail(lambda: buffer_pkas(name, cond))
        rows = [
            {
                "buffer": buf.name,
                "step": s.step,
                "pKa25": s.pka25,
                "pKa": p,
                "charges": f"{s.charge_acid:+d}/{s.charge_acid - 1:+d}",
                "source": s.source,
            }
            for s, p in zip(buf.steps, pkas)
        ]
        emit(rows, fmt, title=f"{buf.name} at {temp:g} C, I = {ionic:g} M", caption=buf.notes)
        return
    with cautions():
        recipe = run_or_fail(
            lambda: buffer_recipe(
                name,
                ph=ph,
                concentration=conc,
                volume=volume,
                conditions=cond,
                salt=salt,
                method=method.value,
                stock=stock,
            )
        )
    rows = _rows(recipe.to_frame())
    if fmt is OutputFormat.json:
        doc = {
            "buffer": recipe.buffer,
            "ph": recipe.ph,
            "temperature": recipe.temperature,
            "concentration": recipe.concentration,
            "volume_l": recipe.volume,
            "method": recipe.method,
            "steps": [
                {k: (round(v, 4) if isinstance(v, float) else v) for k, v in r.items()}
                for r in rows
            ],
            "warnings": list(recipe.warnings),
            "notes": recipe.notes,
            "caution": LAB_CAUTION,
        }
        sys.stdout.write(json.dumps(doc, indent=2) + "\n")
        return
    title = (
        f"{recipe.buffer} {recipe.concentration * 1000:g} mM, pH {recipe.ph:g} at "
        f"{recipe.temperature:g} C, {recipe.volume * 1000:g} mL ({recipe.method})"
    )
    caption = LAB_CAUTION + (f"\nNotes on {recipe.buffer}: {recipe.notes}" if recipe.notes else "")
    emit(rows, fmt, title=title, caption=caption)


@app.command()
def plan(
    target: Annotated[str, typer.Argument(help="Target: sequence, ProForma or SMILES.")],
    contaminant: Annotated[
        list[str] | None,
        typer.Option("--contaminant", "-c", help="A contaminant (repeat for several)."),
    ] = None,
    input_file: Annotated[
        Path | None,
        typer.Option("--input", "-i", help="Contaminants from a FASTA file.", dir_okay=False),
    ] = None,
    temp: TempOpt = 25.0,
    ionic: IonicOpt = 0.0,
    stability: Annotated[
        tuple[float, float] | None,
        typer.Option("--stability", help="pH window the target tolerates: LO HI (default 4 9)."),
    ] = None,
    threshold: Annotated[
        float | None,
        typer.Option(
            "--threshold", help="Net charges needed to bind (default 1 per 100 residues)."
        ),
    ] = None,
    margin: Annotated[float, typer.Option("--margin", help="pH units from the pI.")] = 1.0,
    scale: Annotated[str | None, typer.Option("--scale", "-s", help="pKa scale.")] = None,
    cys: Annotated[
        CysMode, typer.Option("--cys", help="Cysteines free or all bonded.")
    ] = CysMode.free,
    fmt: FormatOpt = OutputFormat.table,
    plot: Annotated[
        Path | None,
        typer.Option(
            "--plot",
            dir_okay=False,
            help="Also draw the charge curves with the binding windows (.png/.svg/.pdf).",
        ),
    ] = None,
) -> None:
    """Ion-exchange plan: exchanger, pH window, buffers; elution order against contaminants."""
    from ..purification import plan_ion_exchange

    cond = _conditions(temp, ionic)
    others: list[Any] = list(contaminant or [])
    if input_file is not None:
        from ..fasta import read_sequences

        records = run_or_fail(lambda: list(read_sequences(input_file)))
        others.extend(("fasta", r.id, r.sequence) for r in records)
    options: dict[str, Any] = {"cys": cys.value}
    if scale is not None:
        options["scale"] = scale

    def build() -> Any:
        from ..inputs import molecule_from_text

        mols = [
            molecule_from_text(o[2], kind="sequence", name=o[1], **options)
            if isinstance(o, tuple)
            else o
            for o in others
        ]
        return plan_ion_exchange(
            target,
            mols,
            conditions=cond,
            stability=stability,
            threshold=threshold,
            margin=margin,
            **options,
        )

    with cautions():
        result = run_or_fail(build)
    if plot is not None:
        from ..plots import plan_plot
        from ._common import save_plot

        save_plot(lambda: plan_plot(result, path=plot), plot)
    summary = _rows(result.to_frame())
    keys = ["buffer", "step", "pka", "distance", "forms_present"]
    if fmt is not OutputFormat.table:
        keys.append("notes")
    buffers = (
        [{k: r[k] for k in keys} for r in _rows(result.buffers)] if not result.buffers.empty else []
    )
    order = _rows(result.elution_order()) if result.contaminants and result.exchanger else []
    if fmt is OutputFormat.json:
        doc = {
            "target": result.names[0],
            "pI": result.pi,
            "threshold": result.threshold,
            "margin": result.margin,
            "stability": list(result.stability),
            "temperature": cond.temperature,
            "ionic_strength": cond.ionic_strength,
            "exchanger": result.exchanger,
            "working_ph": None if math.isnan(result.working_ph) else round(result.working_ph, 3),
            "separation_ph": None if math.isnan(result.separation_ph) else result.separation_ph,
            "separation_gap": None
            if math.isnan(result.separation_gap)
            else round(result.separation_gap, 3),
            "exchangers": summary,
            "buffers": buffers,
            "elution_order": order,
            "notes": list(result.notes),
            "caution": LAB_CAUTION,
        }
        sys.stdout.write(json.dumps(doc, indent=2, default=str) + "\n")
        return
    pi = "none" if result.pi is None else f"{result.pi:.2f}"
    head = (
        f"Ion exchange for {_short(result.names[0])} (pI {pi}, "
        f"threshold {result.threshold:.3g} charges)"
    )
    if fmt is not OutputFormat.table:
        emit(summary, fmt)
        return
    people = [
        {
            "exchanger": f"{r['exchanger']} ({r['fixed_charge']} groups)",
            "binds": _window(r["binds_from_ph"], r["binds_to_ph"]),
            "usable": _window(r["usable_from_ph"], r["usable_to_ph"]),
            "recommended": "yes" if r["recommended"] else "",
            "working_pH": r["working_ph"],
            "charge": r["charge_at_working_ph"],
        }
        for r in summary
    ]
    emit(people, fmt, title=head)
    if buffers:
        emit(buffers, fmt, title=f"Compatible buffers at pH {result.working_ph:.2f}")
    if order:
        shown = [
            {
                "order": r["elution_order"] or "flow-through",
                "molecule": _short(r["molecule"]),
                "charge": r["charge"],
                "binds": "weakly" if r["weak"] else ("yes" if r["binds"] else "no"),
            }
            for r in order
        ]
        emit(
            shown,
            fmt,
            title=f"Elution order at pH {result.working_ph:.2f} on the {result.exchanger} "
            f"exchanger (best charge gap {result.separation_gap:.2f})",
        )
    notes = "\n".join(result.notes)
    sys.stdout.write((notes + "\n" if notes else "") + LAB_CAUTION + "\n")


def _short(name: str, width: int = 24) -> str:
    return name if len(name) <= width else name[: width - 3] + "..."


def _window(lo: Any, hi: Any) -> str:
    if lo is None or hi is None or (isinstance(lo, float) and math.isnan(lo)):
        return "none"
    return f"pH {lo:.2f}-{hi:.2f}"
