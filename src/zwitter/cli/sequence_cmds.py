"""Commands for sequences: ``pi``, ``charge``, ``forms``, ``scales``, ``demo``."""

from __future__ import annotations

import sys
from pathlib import Path
from typing import Annotated, Any

import typer

from ..errors import ZwitterError
from ._app import EXIT_BAD_INPUT, app, fail
from ._output import CAUTION, OutputFormat, emit, rounded

ScaleOpt = Annotated[
    str | None,
    typer.Option(
        "--scale", "-s", help="pKa scale: a name from `zwitter scales` or a .csv/.toml file."
    ),
]
FormatOpt = Annotated[
    OutputFormat,
    typer.Option("--format", "-f", help="Output format: table for people, csv/tsv/json."),
]
InputOpt = Annotated[
    Path | None,
    typer.Option(
        "--input",
        "-i",
        help="Read sequences from a FASTA file or one per line ('-' = stdin).",
        dir_okay=False,
    ),
]
SeqArgs = Annotated[
    list[str] | None, typer.Argument(help="Sequences (one-letter codes).", show_default=False)
]


def _records(seqs: list[str] | None, input_file: Path | None) -> list[tuple[str, str]]:
    from ..fasta import read_sequences

    items: list[tuple[str, str]] = []
    for text in seqs or []:
        label = text if len(text) <= 24 else text[:21] + "..."
        items.append((label, text))
    if input_file is not None:
        for rec in read_sequences(input_file):
            items.append((rec.id, rec.sequence))
    if not items:
        fail("no sequence given: pass sequences as arguments or --input FILE")
    return items


def _scale(scale: str | None) -> Any:
    from ..scales import get_scale

    try:
        return get_scale(scale)
    except ZwitterError as exc:
        fail(str(exc))


def _score(
    items: list[tuple[str, str]], ph: list[float], scale: Any
) -> tuple[list[dict[str, Any]], int]:
    from ..scoring import score_sequences

    try:
        scores = score_sequences([s for _, s in items], ph, scale, [i for i, _ in items])
    except ZwitterError as exc:
        fail(str(exc))
    rows = []
    bad = 0
    notes = scores.warnings()
    for i, (ident, _) in enumerate(items):
        err = scores.errors[i]
        if err:
            bad += 1
            sys.stderr.write(f"zwitter: error: {err}\n")
        row: dict[str, Any] = {"id": ident, "length": int(scores.composition.lengths[i])}
        row["pI"] = float(scores.pi[i])
        for j, p in enumerate(scores.ph):
            row[f"charge@pH{p:g}"] = float(scores.charge[i, j])
        row["note"] = err or "; ".join(notes[i])
        rows.append(row)
    return rows, bad


@app.command()
def pi(
    sequences: SeqArgs = None,
    input_file: InputOpt = None,
    scale: ScaleOpt = None,
    fmt: FormatOpt = OutputFormat.table,
) -> None:
    """Isoelectric point of each sequence."""
    sc = _scale(scale)
    rows, bad = _score(_records(sequences, input_file), [7.0], sc)
    for r in rows:
        r.pop("charge@pH7")
    emit(rows, fmt, title=f"Isoelectric point (scale {sc.key})", caption=CAUTION)
    if bad:
        raise typer.Exit(EXIT_BAD_INPUT)


@app.command()
def charge(
    sequences: SeqArgs = None,
    ph: Annotated[list[float], typer.Option("--ph", help="pH value; repeat for several.")] = [7.4],  # noqa: B006
    input_file: InputOpt = None,
    scale: ScaleOpt = None,
    fmt: FormatOpt = OutputFormat.table,
) -> None:
    """Average net charge of each sequence at one or more pH values."""
    sc = _scale(scale)
    rows, bad = _score(_records(sequences, input_file), ph, sc)
    emit(rows, fmt, title=f"Net charge (scale {sc.key})", caption=CAUTION)
    if bad:
        raise typer.Exit(EXIT_BAD_INPUT)


@app.command()
def forms(
    sequence: Annotated[str, typer.Argument(help="One sequence.")],
    ph: Annotated[float, typer.Option("--ph", help="pH value.")] = 7.4,
    scale: ScaleOpt = None,
    top: Annotated[int, typer.Option("--top", help="How many charge states to list.")] = 5,
    fmt: FormatOpt = OutputFormat.table,
) -> None:
    """Dominant protonation form at a pH: per-site states and the most populated charge states."""
    import json

    from ..sequence import from_sequence

    try:
        mol = from_sequence(sequence, scale=_scale(scale))
        dom = mol.dominant(ph)
        table = mol.site_table(ph)
        species = mol.species(ph, top=top)
    except ZwitterError as exc:
        fail(str(exc))
    site_rows = [
        {
            "site": lab,
            "count": float(table["count"][i]),
            "pKa": table["pka"][i],
            "dominant_state": "protonated" if lost == 0 else f"lost {lost} H+",
            "charge_per_group": q,
            "population": pop,
            "members": table["members"][i],
        }
        for i, (lab, lost, q, pop) in enumerate(dom.sites)
    ]
    state_rows = [
        {"charge": float(c), "protons_bound": int(b), "population": float(p)}
        for c, b, p in zip(species["charge"], species["protons_bound"], species["population"])
    ]
    if fmt is OutputFormat.json:
        doc = {
            "sequence": mol.name, "ph": ph, "scale": mol.scale,
            "mean_charge": round(dom.mean_charge, 3),
            "dominant_charge_state": {"charge": dom.charge, "population": round(dom.population, 3)},
            "sites": [{k: rounded(v) for k, v in r.items()} for r in site_rows],
            "charge_states": [{k: rounded(v) for k, v in r.items()} for r in state_rows],
            "caution": CAUTION,
        }  # fmt: skip
        sys.stdout.write(json.dumps(doc, indent=2) + "\n")
        return
    emit(site_rows, fmt, title=f"Sites at pH {ph:g} (scale {mol.scale})")
    if fmt is OutputFormat.table:
        emit(
            state_rows,
            fmt,
            title=f"Charge states at pH {ph:g}; mean charge {dom.mean_charge:+.3f}",
            caption=CAUTION,
        )


@app.command()
def scales(
    key: Annotated[str | None, typer.Argument(help="Show the values of one scale.")] = None,
    fmt: FormatOpt = OutputFormat.table,
) -> None:
    """List the packaged pKa scales and their sources (or the values of one scale)."""
    from ..scales import DEFAULT_SCALE, get_scale, list_scales

    if key is None:
        rows = [
            {"scale": s.key + (" (default)" if s.key == DEFAULT_SCALE else ""), "kind": s.kind,
             "terminus_specific": "yes" if s.terminus_specific else "no",
             "title": s.title} | ({"citation": s.citation} if fmt is not OutputFormat.table else {})
            for s in list_scales()
        ]  # fmt: skip
        emit(rows, fmt, title="Packaged pKa scales",
             caption="`zwitter scales KEY` shows one scale's values with the source of each.")
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
    fmt: FormatOpt = OutputFormat.table,
) -> None:
    """Run the main job on built-in demo data (an invented purification scenario)."""
    from importlib import resources

    from ..fasta import read_fasta
    from ..scales import get_scale
    from ..scoring import score_sequences

    source = resources.files("zwitter").joinpath("data", "demo", "marsh_extract.fasta")
    with resources.as_file(source) as fasta:
        records = list(read_fasta(fasta))
    sc = get_scale(None)
    ph = [5.0, 7.4, 9.0]
    scores = score_sequences([r.sequence for r in records], ph, sc, [r.id for r in records])
    rows: list[dict[str, Any]] = []
    for i, rec in enumerate(records):
        row: dict[str, Any] = {
            "id": rec.id,
            "length": int(scores.composition.lengths[i]),
            "pI": float(scores.pi[i]),
        }
        for j, p in enumerate(ph):
            row[f"charge@pH{p:g}"] = float(scores.charge[i, j])
        row["description"] = rec.description
        rows.append(row)
    rows.sort(key=lambda r: r["pI"])
    if fmt is OutputFormat.table:
        sys.stdout.write(
            "Demo (invented scenario): the fictional Marsh Lab purifies 'marinase', a His-tagged\n"
            "nuclease, from a host-cell extract. Which proteins carry which charge?\n\n"
        )
    shown = (
        rows
        if fmt is not OutputFormat.table
        else [{k: v for k, v in r.items() if k != "description"} for r in rows]
    )
    emit(shown, fmt, title=f"Demo extract, ordered by pI (scale {sc.key})", caption=CAUTION)
    out.mkdir(parents=True, exist_ok=True)
    target = out / "demo_scores.csv"
    tmp = target.with_suffix(".csv.tmp")
    with tmp.open("w", encoding="utf-8") as handle:
        emit(rows, OutputFormat.csv, stream=handle)
    tmp.replace(target)
    sys.stderr.write(f"zwitter: wrote {target}\n")
