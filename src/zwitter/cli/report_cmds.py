"""The ``report`` command: one self-contained HTML file for a molecule, a plan or a batch."""

from __future__ import annotations

import enum
import sys
from pathlib import Path
from typing import Annotated, Any, TypeVar

import typer

from ._app import app, fail
from ._common import CysMode, cautions, run_or_fail
from ._common import InputKind as Kind

T = TypeVar("T")

#: Suffixes (optionally + .gz) that mark INPUT as a batch file name.
BATCH_SUFFIXES = (".fasta", ".fa", ".faa", ".fas", ".fna", ".mpfa", ".smi", ".smiles")


class FigureFormat(str, enum.Enum):
    png = "png"
    svg = "svg"


def _batch_path(text: str) -> Path | None:
    """The input as a batch file, or None when it is molecule text; exits on a missing file.

    An existing file is a batch; a name ending like a FASTA or SMILES file that does not exist
    is an error (not a molecule with a strange name); anything else is molecule text.
    """
    path = Path(text)
    try:
        if path.is_file():
            return path
    except OSError:  # a long sequence is not a usable file name ("File name too long")
        return None
    base = text[:-3] if text.lower().endswith(".gz") else text
    if base.lower().endswith(BATCH_SUFFIXES):
        fail(f"input file {text!r} not found")
    return None


def _fractions(text: str | None) -> list[float] | None:
    if text is None:
        return None
    try:
        values = [float(x) for x in text.replace(";", ",").split(",") if x.strip()]
    except ValueError:
        raise typer.BadParameter(
            f"expected pH values separated by commas, e.g. 4,5,6,7; got {text!r}",
            param_hint="--fractions",
        ) from None
    return values


@app.command()
def report(
    source: Annotated[
        str,
        typer.Argument(
            metavar="INPUT",
            help="Sequence, ProForma or SMILES text; or a FASTA / .smi file for a batch summary.",
        ),
    ],
    output: Annotated[
        Path, typer.Option("--output", "-o", help="HTML file to write.", dir_okay=False)
    ] = Path("report.html"),
    kind: Annotated[
        Kind, typer.Option("--kind", help="How to read INPUT text (auto detects).")
    ] = Kind.auto,
    ph: Annotated[
        list[float] | None,
        typer.Option("--ph", help="pH for the key numbers / batch charge columns; repeat."),
    ] = None,
    scale: Annotated[
        str | None,
        typer.Option("--scale", "-s", help="pKa scale: a name from `zwitter scales` or a file."),
    ] = None,
    cys: Annotated[
        CysMode, typer.Option("--cys", help="Cysteines free, or all in disulfides.")
    ] = CysMode.free,
    temp: Annotated[float, typer.Option("--temp", help="Temperature, deg C (0-100).")] = 25.0,
    ionic: Annotated[
        float, typer.Option("--ionic-strength", help="Ionic strength, mol/L (0.15 = 150 mM NaCl).")
    ] = 0.0,
    plan: Annotated[
        bool, typer.Option("--plan", help="Report an ion-exchange plan for INPUT as the target.")
    ] = False,
    contaminant: Annotated[
        list[str] | None,
        typer.Option("--contaminant", "-c", help="A contaminant for --plan (repeat for several)."),
    ] = None,
    contaminants_file: Annotated[
        Path | None,
        typer.Option(
            "--contaminants", help="Contaminants for --plan from a FASTA file.", dir_okay=False
        ),
    ] = None,
    stability: Annotated[
        tuple[float, float] | None,
        typer.Option("--stability", help="With --plan: pH window the target tolerates, LO HI."),
    ] = None,
    threshold: Annotated[
        float | None,
        typer.Option("--threshold", help="With --plan: net charges needed to bind."),
    ] = None,
    margin: Annotated[
        float, typer.Option("--margin", help="With --plan: pH units from the pI.")
    ] = 1.0,
    fractions: Annotated[
        str | None,
        typer.Option("--fractions", help="Batch: IEF fraction boundaries, e.g. 3,4,5,6,7,8,9,10."),
    ] = None,
    highlight: Annotated[
        list[str] | None,
        typer.Option("--highlight", help="Batch: record id to mark on the pI-mass map; repeat."),
    ] = None,
    figure_format: Annotated[
        FigureFormat, typer.Option("--figures", help="Embed figures as png or svg.")
    ] = FigureFormat.png,
    title: Annotated[str | None, typer.Option("--title", help="Page title.")] = None,
) -> None:
    """Write one self-contained HTML report: a molecule, an ion-exchange plan, or a batch.

    One file with figures, tables, conditions, pKa sources and cautions; opens offline.
    """
    from ..conditions import Conditions

    cond = run_or_fail(lambda: Conditions(temperature=temp, ionic_strength=ionic))
    if output.suffix.lower() not in (".html", ".htm"):
        raise typer.BadParameter(f"{str(output)!r} must end in .html", param_hint="--output")
    if not output.parent.is_dir():
        fail(f"folder of --output {str(output.parent)!r} does not exist")
    bounds = _fractions(fractions)
    batch = _batch_path(source)
    plan_options = contaminant or contaminants_file or stability or threshold is not None
    if batch is not None and (plan or plan_options):
        fail("--plan and its options need a target molecule as INPUT, not a batch file")
    if batch is None and (bounds is not None or highlight):
        fail("--fractions and --highlight apply to a batch file INPUT")
    if plan_options and not plan:
        fail("--contaminant, --contaminants, --stability and --threshold need --plan")
    options: dict[str, Any] = {"cys": cys.value}
    if scale is not None:
        options["scale"] = scale
    fmt = figure_format.value

    def build() -> str:
        from .. import report as rp

        if batch is not None:
            from ..batch import score_fasta
            from ..scales import get_scale

            sc = get_scale(scale)
            frame = score_fasta(batch, ph=ph or [7.0], scale=sc, cys=cys.value, conditions=cond)
            return rp.batch_report(
                frame,
                source=batch.name,
                scale=sc,
                conditions=cond,
                cys=cys.value,
                fractions=bounds,
                highlight=highlight or (),
                title=title,
                figure_format=fmt,
            )
        from ..inputs import molecule_from_text

        if plan:
            from ..purification import plan_ion_exchange

            target = molecule_from_text(source, kind=kind.value, conditions=cond, **options)
            others: list[Any] = list(contaminant or [])
            if contaminants_file is not None:
                from ..fasta import read_sequences

                others += [
                    molecule_from_text(r.sequence, kind="sequence", name=r.id, **options)
                    for r in read_sequences(contaminants_file)
                ]
            result = plan_ion_exchange(
                target,
                others,
                conditions=cond,
                stability=stability,
                threshold=threshold,
                margin=margin,
                **options,
            )
            return rp.plan_report(result, title=title, figure_format=fmt)
        mol = molecule_from_text(source, kind=kind.value, conditions=cond, **options)
        return rp.molecule_report(mol, ph=ph or [7.4], title=title, figure_format=fmt)

    with cautions():
        text = run_or_fail(build)
        from ..report import write_html

        run_or_fail(lambda: write_html(text, output))
    sys.stderr.write(f"zwitter: wrote {output}\n")
