"""Commands for sequences: ``pi``, ``charge``, ``forms``, ``scales``, ``demo``."""

from __future__ import annotations

import sys
from pathlib import Path
from typing import Annotated, Any

import typer

from ..errors import ZwitterError
from ._app import EXIT_BAD_INPUT, app, fail
from ._common import (
    CysMode,
    CysOpt,
    InputKind,
    IonicOpt,
    KindOpt,
    PlotOpt,
    ScaleOpt,
    TempOpt,
    conditions_from,
    get_scale_or_fail,
    plot_charges,
    read_items,
    save_plot,
    score_items,
)
from ._output import CAUTION, OutputFormat, emit, rounded

FormatOpt = Annotated[
    OutputFormat,
    typer.Option("--format", "-f", help="Output format: table for people, csv/tsv/json."),
]
InputOpt = Annotated[
    Path | None,
    typer.Option(
        "--input",
        "-i",
        help="Read inputs from a FASTA file or one per line ('-' = stdin).",
        dir_okay=False,
    ),
]
SeqArgs = Annotated[
    list[str] | None,
    typer.Argument(help="Sequences, ProForma strings or SMILES.", show_default=False),
]


@app.command()
def pi(
    sequences: SeqArgs = None,
    input_file: InputOpt = None,
    scale: ScaleOpt = None,
    cys: CysOpt = CysMode.free,
    kind: KindOpt = InputKind.auto,
    temp: TempOpt = None,
    ionic_strength: IonicOpt = None,
    fmt: FormatOpt = OutputFormat.table,
    plot: PlotOpt = None,
) -> None:
    """Isoelectric point of each input (sequence, ProForma or SMILES)."""
    sc = get_scale_or_fail(scale)
    cond = conditions_from(temp, ionic_strength)
    items = read_items(sequences, input_file)
    rows, bad = score_items(items, [7.0], sc, cys=cys.value, kind=kind.value, conditions=cond)
    for r in rows:
        r.pop("charge@pH7")
    emit(rows, fmt, title=f"Isoelectric point (scale {sc.key}{_cond_text(cond)})", caption=CAUTION)
    if plot is not None:
        plot_charges(items, plot, sc, cys=cys.value, kind=kind.value, conditions=cond)
    if bad:
        raise typer.Exit(EXIT_BAD_INPUT)


def _cond_text(cond: Any) -> str:
    if cond is None:
        return ""
    return f", {cond.temperature:g} deg C, I = {cond.ionic_strength:g} M"


@app.command()
def charge(
    sequences: SeqArgs = None,
    ph: Annotated[list[float], typer.Option("--ph", help="pH value; repeat for several.")] = [7.4],  # noqa: B006
    input_file: InputOpt = None,
    scale: ScaleOpt = None,
    cys: CysOpt = CysMode.free,
    kind: KindOpt = InputKind.auto,
    temp: TempOpt = None,
    ionic_strength: IonicOpt = None,
    fmt: FormatOpt = OutputFormat.table,
    plot: PlotOpt = None,
) -> None:
    """Average net charge of each input at one or more pH values."""
    sc = get_scale_or_fail(scale)
    cond = conditions_from(temp, ionic_strength)
    items = read_items(sequences, input_file)
    rows, bad = score_items(items, ph, sc, cys=cys.value, kind=kind.value, conditions=cond)
    emit(rows, fmt, title=f"Net charge (scale {sc.key}{_cond_text(cond)})", caption=CAUTION)
    if plot is not None:
        plot_charges(items, plot, sc, cys=cys.value, kind=kind.value, conditions=cond)
    if bad:
        raise typer.Exit(EXIT_BAD_INPUT)


@app.command()
def forms(
    text: Annotated[str, typer.Argument(help="One sequence, ProForma string or SMILES.")],
    ph: Annotated[float, typer.Option("--ph", help="pH value.")] = 7.4,
    scale: ScaleOpt = None,
    cys: CysOpt = CysMode.free,
    kind: KindOpt = InputKind.auto,
    temp: TempOpt = None,
    ionic_strength: IonicOpt = None,
    top: Annotated[int, typer.Option("--top", help="How many forms to list.", min=1)] = 5,
    fmt: FormatOpt = OutputFormat.table,
    plot: PlotOpt = None,
) -> None:
    """Dominant protonation form at a pH: the state of every group and the top forms."""
    import json

    from ..inputs import molecule_from_text

    cond = conditions_from(temp, ionic_strength)
    try:
        mol = molecule_from_text(
            text, kind.value, scale=get_scale_or_fail(scale), cys=cys.value, conditions=cond
        )
        dom = mol.dominant(ph)
        if hasattr(mol, "residue_states") and mol.kind in ("sequence", "proforma"):
            groups = mol.residue_states(ph)
            group_rows = [
                {"group": r.member, "site": r.site, "state": r.state, "charge": float(r.charge),
                 "population": float(r.population)}
                for r in groups.itertuples()
            ]  # fmt: skip
            n_res = sum(len(c.get("sequence", "")) for c in mol.info.get("chains", [])) or len(
                mol.name
            )
            if n_res <= 30:
                micro = mol.microstates(ph, top=top)
                form_rows = [
                    {"rank": int(r.rank), "charge": float(r.charge),
                     "population": float(r.population), "charged_groups": r.charged}
                    for r in micro.itertuples()
                ]  # fmt: skip
                form_title = f"Most populated microstates at pH {ph:g}"
            else:
                species = mol.species(ph, top=top)
                form_rows = [
                    {"charge": float(c), "protons_bound": int(b), "population": float(p)}
                    for c, b, p in zip(
                        species["charge"], species["protons_bound"], species["population"]
                    )
                ]
                form_title = f"Most populated charge states at pH {ph:g}"
        else:  # structures: the molecule's own species table (microstates with SMILES)
            table = mol.site_table(ph)
            group_rows = table.to_dict("records")
            form_rows = mol.species(ph).head(top).to_dict("records")
            form_title = f"Most populated microstates at pH {ph:g}"
    except ZwitterError as exc:
        fail(str(exc))
    if plot is not None:
        from ..plots import species_plot

        save_plot(lambda: species_plot(mol, path=plot), plot)
    bonded = list(mol.info.get("bonded_cysteines", ()))
    facts = {
        "input": mol.name, "kind": mol.kind, "ph": ph, "scale": mol.scale,
        "mean_charge": rounded(dom.mean_charge), "dominant_charge": dom.charge,
        "dominant_population": rounded(dom.population), "bonded_cysteines": bonded,
    }  # fmt: skip
    if fmt is OutputFormat.json:
        doc = dict(facts)
        doc["groups"] = [{k: rounded(v) for k, v in r.items()} for r in group_rows]
        doc["forms"] = [{k: rounded(v) for k, v in r.items()} for r in form_rows]
        doc["modifications"] = mol.info.get("modifications", [])
        doc["disulfides"] = [list(p) for p in mol.info.get("disulfides", ())]
        doc["caution"] = CAUTION
        sys.stdout.write(json.dumps(doc, indent=2, default=str) + "\n")
        return
    emit(group_rows, fmt, title=f"Groups at pH {ph:g} (scale {mol.scale})")
    if fmt is OutputFormat.table:
        emit(form_rows, fmt, title=form_title)
        note = f"Mean charge {dom.mean_charge:+.3f}; most populated charge state {dom.charge:+g} "
        note += f"({dom.population:.1%})."
        if bonded:
            note += f" Cysteines treated as bonded: {', '.join(bonded)}."
        sys.stdout.write(note + "\n" + CAUTION + "\n")


@app.command()
def scales(
    key: Annotated[str | None, typer.Argument(help="Show the values of one scale.")] = None,
    fmt: FormatOpt = OutputFormat.table,
) -> None:
    """List the packaged pKa scales and their sources (or the values of one scale)."""
    from ..scales import DEFAULT_SCALE, get_scale, list_scales

    rows: list[dict[str, Any]]
    if key is None:
        rows = [
            {"scale": s.key + (" (default)" if s.key == DEFAULT_SCALE else ""), "kind": s.kind,
             "terminus_specific": "yes" if s.terminus_specific else "no",
             "title": s.title} | ({"citation": s.citation} if fmt is not OutputFormat.table else {})
            for s in list_scales()
        ]  # fmt: skip
        emit(
            rows,
            fmt,
            title="Packaged pKa scales",
            caption="`zwitter scales KEY` shows one scale's values with the source of each.",
        )
        return
    try:
        sc = get_scale(key)
    except ZwitterError as exc:
        fail(str(exc))
    rows = [
        {"group": g, "context": "", "pKa": v, "source": sc.source_of(g)} for g, v in sc.pka.items()
    ]
    for label, table, group in (("Nterm", sc.nterm, "Nterm"), ("Cterm", sc.cterm, "Cterm")):
        rows += [{"group": group, "context": f"{label} residue {r}", "pKa": v,
                  "source": sc.source_of(group, r)} for r, v in table.items()]  # fmt: skip
    for ctx, table in (("Nterm", sc.side_nterm), ("Cterm", sc.side_cterm)):
        rows += [{"group": g, "context": f"side chain at {ctx}", "pKa": v,
                  "source": sc.source_of(g, ctx)} for g, v in table.items()]  # fmt: skip
    emit(rows, fmt, title=f"{sc.key}: {sc.title}", caption=sc.notes)


@app.command()
def demo(
    out: Annotated[
        Path,
        typer.Option("--out", "-o", help="Folder for the demo's output files.", file_okay=False),
    ] = Path("zwitter-demo"),
) -> None:
    """Run the main jobs on built-in demo data (an invented purification scenario)."""
    from ..demo import DEMO_CONDITIONS, DEMO_STABILITY, run_demo

    try:
        result = run_demo(out)
    except ZwitterError as exc:
        fail(str(exc))
    w = sys.stdout.write
    w(
        "Demo (an invented scenario): the fictional Marsh Lab purifies 'marinase', a His-tagged\n"
        "nuclease, from a host-cell extract. The column runs at "
        f"{DEMO_CONDITIONS['temperature']:g} deg C with "
        f"{DEMO_CONDITIONS['ionic_strength'] * 1000:g} mM NaCl; marinase is stable at pH "
        f"{DEMO_STABILITY[0]:g}-{DEMO_STABILITY[1]:g}.\n\n"
    )
    frame = result.extract
    rows = [
        {"id": r["id"], "length": int(r["length"]), "mass_kDa": float(r["average_mass"]) / 1000,
         "pI": float(r["pI"]), "charge@pH5": float(r["charge_ph5.0"]),
         "charge@pH7.4": float(r["charge_ph7.4"]), "charge@pH9": float(r["charge_ph9.0"])}
        for _, r in frame.sort_values("pI").iterrows()
    ]  # fmt: skip
    emit(rows, OutputFormat.table, title="1. The extract, ordered by pI")
    plan = result.plan
    if plan.exchanger:
        there = float(plan.target.charge(plan.working_ph))
        w(
            f"\n2. Column: {plan.exchanger} exchanger at pH {plan.working_ph:.1f} "
            f"(marinase pI {plan.pi:.2f}; charge there {there:+.1f}).\n"
        )
        order = plan.elution_order()
        emit(
            [{k: (float(v) if isinstance(v, float) else v) for k, v in r.items()}
             for r in order.to_dict("records")],
            OutputFormat.table, title=f"Predicted elution order at pH {plan.working_ph:.1f}",
        )  # fmt: skip
    else:
        w("\n2. Column: no exchanger binds marinase inside its stability window.\n")
    if result.recipe is not None:
        rec = result.recipe
        w(f"\n3. Buffer: {rec.buffer}, 25 mM, pH {rec.ph:g} at {rec.temperature:g} deg C, 1 L:\n")
        for c in rec.components:
            w(f"   {c.action} {c.item}: {c.amount:.4g} {c.unit}\n")
    w("\n4. Small molecules in the buffers at pH 7.4:\n")
    for a in result.additives:
        w(f"   {a['additive']}: {a['dominant form at pH 7.4']} (charge {a['charge']:+g}, "
          f"{a['population']:.0%}); mean charge {a['mean charge']:+.2f}\n")  # fmt: skip
    w("\nWrote:\n" + "".join(f"   {p}\n" for p in result.files))
    w("\n" + CAUTION + "\n")
