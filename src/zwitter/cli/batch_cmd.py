"""The ``batch`` command: score whole FASTA files into a CSV/TSV/Parquet/JSON-lines table.

Exit codes: 0 when the output was written (also when some records have errors: they are rows
with an ``error``), 2 for bad arguments and bad input data (a missing, truncated or corrupt input
file; with ``--strict``, the first bad record), 1 for failures (the output cannot be written, a
worker or the Dask scheduler fails). Whenever the exit code is not 0, no output file is left.
"""

from __future__ import annotations

import enum
import sys
from pathlib import Path
from typing import Annotated, Any

import typer

from ..errors import ParameterError, ZwitterError
from ._app import EXIT_BAD_INPUT, EXIT_FAILURE, EXIT_INTERRUPTED, app, fail
from ._common import CysMode, IonicOpt, TempOpt, conditions_from, save_plot


class EngineName(str, enum.Enum):
    local = "local"
    dask = "dask"


@app.command()
def batch(
    inputs: Annotated[
        list[str],
        typer.Argument(
            help="FASTA files, or SMILES files (.smi, .csv/.tsv with a SMILES column, .sdf), "
            "plain or gzip; '-' reads FASTA from standard input.",
            show_default=False,
            metavar="INPUT...",
        ),
    ],
    output: Annotated[
        Path,
        typer.Option(
            "--output",
            "-o",
            dir_okay=False,
            show_default=False,
            help="Output file; the format follows the suffix: .csv, .tsv, .jsonl (each may end in "
            ".gz) or .parquet.",
        ),
    ],
    ph: Annotated[
        list[float], typer.Option("--ph", help="pH for a charge column; repeat for several.")
    ] = [7.0],  # noqa: B006 - typer reads the default, it is never mutated
    scale: Annotated[
        str | None,
        typer.Option(
            "--scale", "-s", help="pKa scale: a name from `zwitter scales` or a .csv/.toml file."
        ),
    ] = None,
    cys: Annotated[
        CysMode,
        typer.Option(
            "--cys",
            help="free: every cysteine titrates; bonded: all in disulfides (no thiol site).",
        ),
    ] = CysMode.free,
    chunk_size: Annotated[
        int | None,
        typer.Option(
            "--chunk-size",
            min=1,
            help="Records per chunk (default: 10,000 sequences, 250 structures; memory grows "
            "with it).",
        ),
    ] = None,
    jobs: Annotated[
        int,
        typer.Option(
            "--jobs",
            "-j",
            min=0,
            help="Processes that score: 1 = this one; N > 1 = N workers while this one reads "
            "and writes; 0 = one per CPU core.",
        ),
    ] = 1,
    strict: Annotated[
        bool,
        typer.Option(
            "--strict",
            help="Stop at the first bad record (exit 2, no output) instead of "
            "writing it with an error.",
        ),
    ] = False,
    engine: Annotated[
        EngineName | None,
        typer.Option("--engine", help="local (default) or dask (a cluster; see --scheduler)."),
    ] = None,
    scheduler: Annotated[
        str | None,
        typer.Option(
            "--scheduler",
            help="Dask scheduler address, e.g. tcp://host:8786 (implies "
            "--engine dask); without it --engine dask starts a local cluster of --jobs workers.",
        ),
    ] = None,
    input_format: Annotated[
        str,
        typer.Option("--input-format", help="auto (by file name, then content), fasta or smiles."),
    ] = "auto",
    smiles_column: Annotated[
        str | None,
        typer.Option(
            "--smiles-column", help="SMILES column of a .csv/.tsv input (default: 'smiles')."
        ),
    ] = None,
    id_column: Annotated[
        str | None,
        typer.Option("--id-column", help="Id column of a .csv/.tsv input (default: row number)."),
    ] = None,
    temp: TempOpt = None,
    ionic_strength: IonicOpt = None,
    plot: Annotated[
        Path | None,
        typer.Option(
            "--plot",
            dir_okay=False,
            help="Also draw pI against mass (a virtual 2-D gel) to this .png/.svg/.pdf file.",
        ),
    ] = None,
    histogram: Annotated[
        Path | None,
        typer.Option("--histogram", dir_okay=False, help="Also draw a pI histogram to this file."),
    ] = None,
    fractions: Annotated[
        str | None,
        typer.Option(
            "--fractions",
            help="IEF fraction boundaries for --histogram, e.g. 4,5,6,7 (pH values).",
        ),
    ] = None,
) -> None:
    """Score every record of FASTA or SMILES files: masses, pI, charge at each --ph, sites.

    Every record appears once, in input order, bad ones with an error column. The output is
    written to a temporary file and renamed at the end; a summary goes to stderr.

    Exit codes: 0 written (also with bad records, unless --strict); 2 bad arguments or bad input
    (missing, truncated or corrupt file; with --strict the first bad record); 1 failure (cannot
    write, a worker or scheduler failed). On a non-zero exit no output file is left.
    """
    from .. import batch as zb

    if engine is EngineName.local and scheduler is not None:
        raise typer.BadParameter("--scheduler needs --engine dask", param_hint="--scheduler")
    engine_name = "dask" if scheduler is not None else (engine or EngineName.local).value
    seen: set[str] = set()
    for path in inputs:
        try:
            usable = path == "-" or Path(path).is_file()
            folder = not usable and Path(path).is_dir()
        except OSError:  # e.g. a name too long for the file system
            usable = folder = False
        if not usable:
            what = "is a directory" if folder else "does not exist"
            raise typer.BadParameter(f"{path!r} {what}", param_hint="INPUTS")
        if path in seen:
            raise typer.BadParameter(f"{path!r} is given twice", param_hint="INPUTS")
        seen.add(path)
    try:
        zb.output_format_for(output)
    except ParameterError:
        raise typer.BadParameter(
            f"{str(output)!r} must end in .csv, .tsv, .jsonl (optionally + .gz) or .parquet",
            param_hint="--output",
        ) from None
    if not output.parent.is_dir():
        raise typer.BadParameter(
            f"folder {str(output.parent)!r} does not exist", param_hint="--output"
        )
    if output.suffix.lower() == ".parquet":
        try:
            import pyarrow  # noqa: F401
        except ImportError:
            fail("Parquet output needs pyarrow: pip install 'zwitter[parquet]'")
    for figure in (plot, histogram):
        if figure is not None and figure.suffix.lower() not in (".png", ".svg", ".pdf"):
            raise typer.BadParameter(
                f"{str(figure)!r} must end in .png, .svg or .pdf", param_hint="--plot/--histogram"
            )
    bounds: list[float] | None = None
    if fractions is not None:
        try:
            bounds = sorted(float(x) for x in fractions.split(",") if x.strip())
        except ValueError:
            raise typer.BadParameter(
                f"{fractions!r} is not a comma-separated list of pH values",
                param_hint="--fractions",
            ) from None
    conditions = conditions_from(temp, ionic_strength)
    if smiles_column is not None or id_column is not None:
        from ..batch_smiles import smiles_format

        zb.register_input_format(smiles_format(smiles_column, id_column))
    try:
        options = zb.make_options(ph, scale, cys.value, conditions, where="batch")
    except ParameterError as exc:
        raise typer.BadParameter(str(exc), param_hint=f"--{exc.parameter}") from None
    except ZwitterError as exc:  # unknown scale, bad scale file
        fail(str(exc))
    if input_format != "auto":
        try:
            zb.input_format_for("-", input_format)
        except ParameterError as exc:
            raise typer.BadParameter(str(exc), param_hint="--input-format") from None

    def report(source: str, error: str) -> None:
        sys.stderr.write(f"zwitter: warning: {source}: {error}\n")

    try:
        summary = zb.score_files(
            inputs, output, options.ph, options.scale, options.cys, conditions,
            chunk_size=chunk_size, jobs=jobs, strict=strict, engine=engine_name,
            scheduler=scheduler, input_format=input_format, on_record_error=report,
        )  # fmt: skip
    except ZwitterError as exc:
        fail(f"{exc}; no output written", EXIT_BAD_INPUT)
    except ImportError as exc:
        fail(
            f"{exc}; --engine dask needs dask[distributed]: pip install 'zwitter[dask]'",
            EXIT_FAILURE,
        )
    except OSError as exc:  # writing the output, reaching the scheduler
        fail(f"{exc}; no output written", EXIT_FAILURE)
    except KeyboardInterrupt:
        # the run has removed its partial output and stopped its workers by now
        fail("interrupted; no output written", EXIT_INTERRUPTED)
    sys.stderr.write(f"zwitter: {summary.line()}\n")
    if plot is not None or histogram is not None:
        _figures(output, plot, histogram, bounds)
    if summary.errors > zb.MAX_REPORTED_ERRORS:
        sys.stderr.write(
            f"zwitter: {summary.errors - zb.MAX_REPORTED_ERRORS:,} more records with errors are "
            "not listed here: see the 'error' column\n"
        )


def _figures(output: Path, plot: Path | None, histogram: Path | None, bounds: Any) -> None:
    """Gel-like map and pI histogram from the written output (three columns read back)."""
    import pandas as pd

    from ..plots import gel_plot, pi_histogram

    suffix = output.suffix.lower()
    columns = ["id", "pI", "average_mass"]
    if suffix == ".parquet":
        frame = pd.read_parquet(output, columns=columns)
    elif suffix == ".jsonl" or output.name.lower().endswith(".jsonl.gz"):
        frame = pd.read_json(output, lines=True)[columns]
    else:
        sep = "\t" if ".tsv" in output.name.lower() else ","
        frame = pd.read_csv(output, sep=sep, usecols=columns)
    if plot is not None:
        save_plot(lambda: gel_plot(frame, path=plot), plot)
    if histogram is not None:
        save_plot(lambda: pi_histogram(frame, fractions=bounds, path=histogram), histogram)
