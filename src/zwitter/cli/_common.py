"""Options shared by the commands, and the scoring of mixed text inputs.

Plain sequences are scored together in one vectorised call; ProForma and SMILES inputs are read
one by one (``zwitter.inputs.molecule_from_text``). Rows keep the order of the inputs, and a bad
input becomes a row with its error (and a line on stderr) instead of stopping the others.
"""

from __future__ import annotations

import enum
import math
import sys
import warnings
from collections.abc import Callable, Iterator
from contextlib import contextmanager
from pathlib import Path
from typing import Annotated, Any, TypeVar

import typer

from ..errors import ZwitterError
from ._app import fail

T = TypeVar("T")


@contextmanager
def cautions() -> Iterator[None]:
    """Library warnings become one 'zwitter: warning:' line each on stderr."""
    from ..errors import ZwitterWarning

    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always", ZwitterWarning)
        yield
    for text in dict.fromkeys(
        str(w.message) for w in caught if issubclass(w.category, ZwitterWarning)
    ):
        sys.stderr.write(f"zwitter: warning: {text}\n")


def run_or_fail(fn: Callable[[], T]) -> T:
    """Call ``fn``; a ZwitterError becomes one line on stderr and exit 2."""
    try:
        return fn()
    except ZwitterError as exc:
        fail(str(exc))


class CysMode(str, enum.Enum):
    free = "free"
    bonded = "bonded"


class InputKind(str, enum.Enum):
    auto = "auto"
    sequence = "sequence"
    proforma = "proforma"
    smiles = "smiles"


ScaleOpt = Annotated[
    str | None,
    typer.Option(
        "--scale", "-s", help="pKa scale: a name from `zwitter scales` or a .csv/.toml file."
    ),
]
CysOpt = Annotated[
    CysMode,
    typer.Option(
        "--cys", help="Cysteines: free thiols, or all bonded in disulfides (no thiol site)."
    ),
]
KindOpt = Annotated[
    InputKind,
    typer.Option("--kind", help="How to read the inputs (auto detects sequence/ProForma/SMILES)."),
]
TempOpt = Annotated[
    float | None,
    typer.Option("--temp", help="Temperature in deg C (default: the pKa sources' 25 deg C)."),
]
IonicOpt = Annotated[
    float | None,
    typer.Option(
        "--ionic-strength", help="Ionic strength in mol/L (default: 0, infinite dilution)."
    ),
]


PlotOpt = Annotated[
    Path | None,
    typer.Option(
        "--plot", help="Also draw a figure to this file (.png, .svg or .pdf).", dir_okay=False
    ),
]

#: At most this many molecules are drawn on one charge plot (the table has them all).
PLOT_LIMIT = 12


def plot_charges(
    items: list[tuple[str, str, str]], path: Path, scale: Any, *, cys: str, kind: str,
    conditions: Any,
) -> None:  # fmt: skip
    """Charge curves of the (good) inputs on one figure, written to ``path``."""
    from ..inputs import molecule_from_text
    from ..plots import charge_plot

    mols: list[Any] = []
    names: list[str] = []
    for ident, text, error in items:
        if error or len(mols) >= PLOT_LIMIT:
            continue
        try:
            with warnings.catch_warnings():
                warnings.simplefilter("ignore")
                mols.append(
                    molecule_from_text(text, kind, scale=scale, cys=cys, conditions=conditions)
                )
            names.append(ident)
        except ZwitterError:
            continue
    if not mols:
        fail("nothing to plot: every input has an error")
    if len(items) > PLOT_LIMIT:
        sys.stderr.write(f"zwitter: the plot shows the first {PLOT_LIMIT} inputs\n")
    save_plot(lambda: charge_plot(mols, names=names, path=path), path)


def save_plot(draw: Any, path: Path) -> None:
    """Run a plotting call; a bad file type or unwritable path is one line and exit 2."""
    try:
        draw()
    except ZwitterError as exc:
        fail(str(exc))
    except (OSError, ValueError) as exc:
        fail(f"cannot write the figure {str(path)!r}: {exc}")
    sys.stderr.write(f"zwitter: wrote {path}\n")


def conditions_from(temp: float | None, ionic_strength: float | None) -> Any:
    """A Conditions object, or None when neither option was given."""
    if temp is None and ionic_strength is None:
        return None
    from ..conditions import Conditions

    try:
        return Conditions(
            temperature=25.0 if temp is None else temp,
            ionic_strength=0.0 if ionic_strength is None else ionic_strength,
        )
    except ZwitterError as exc:
        fail(str(exc))


def read_items(texts: list[str] | None, input_file: Path | None) -> list[tuple[str, str, str]]:
    """(id, text, error) for every input: arguments first, then the records of ``input_file``."""
    from ..fasta import read_sequences

    items: list[tuple[str, str, str]] = []
    for text in texts or []:
        label = text if len(text) <= 24 else text[:21] + "..."
        items.append((label, text, ""))
    if input_file is not None:
        try:
            for rec in read_sequences(input_file):
                items.append((rec.id, rec.sequence, rec.error))
        except ZwitterError as exc:
            fail(str(exc))
    if not items:
        fail("no input given: pass sequences (or ProForma, SMILES) as arguments or --input FILE")
    return items


def get_scale_or_fail(scale: str | None) -> Any:
    from ..scales import get_scale

    try:
        return get_scale(scale)
    except ZwitterError as exc:
        fail(str(exc))


def score_items(
    items: list[tuple[str, str, str]],
    ph: list[float],
    scale: Any,
    *,
    cys: str = "free",
    kind: str = "auto",
    conditions: Any = None,
) -> tuple[list[dict[str, Any]], int]:
    """Rows with id, kind, length, pI, charge at each pH and a note; and the number of bad rows."""
    import numpy as np

    from ..equilibrium import check_ph
    from ..inputs import detect_kind, molecule_from_text
    from ..scoring import score_composition
    from ..sequence import compose

    try:
        check_ph(ph, "charge")
    except ZwitterError as exc:
        fail(str(exc))
    kinds = [kind if kind != "auto" else detect_kind(text) for _, text, _ in items]
    rows: list[dict[str, Any]] = [{} for _ in items]
    plain = [i for i, k in enumerate(kinds) if k == "sequence" and not items[i][2]]
    if plain:
        comp = compose([items[i][1] for i in plain], scale, [items[i][0] for i in plain])
        sites = comp.sites
        if cys == "bonded":
            counts = np.array(sites.counts)
            counts[:, [k for k, g in enumerate(sites.groups) if g == "C"]] = 0.0
            sites = sites.with_counts(counts)
        if conditions is not None:
            sites = conditions.apply(sites)
        scores = score_composition(comp, ph, sites)
        notes = scores.warnings()
        for j, i in enumerate(plain):
            rows[i] = {
                "pI": float(scores.pi[j]),
                **{f"charge@pH{p:g}": float(scores.charge[j, m]) for m, p in enumerate(ph)},
                "length": int(comp.lengths[j]),
                "note": scores.errors[j] or "; ".join(notes[j]),
                "_bad": bool(scores.errors[j]),
            }
    for i, (ident, text, error) in enumerate(items):
        if rows[i]:
            continue
        if error:
            rows[i] = {"note": f"record {ident!r}: {error}", "_bad": True}
            continue
        try:
            with warnings.catch_warnings(record=True) as caught:
                warnings.simplefilter("always")
                # the user's kind ("auto" by default), so that a mistyped sequence read as
                # SMILES is reported as a sequence error
                mol = molecule_from_text(text, kind, scale=scale, cys=cys, conditions=conditions)
                pi = mol.isoelectric_point()
                charges = mol.charge(np.asarray(ph, dtype=float))
            rows[i] = {
                "pI": math.nan if pi is None else float(pi),
                **{f"charge@pH{p:g}": float(c) for p, c in zip(ph, np.atleast_1d(charges))},
                "length": len(mol.info.get("chains", [])) or None,
                "note": "; ".join(dict.fromkeys(str(w.message) for w in caught)),
                "_bad": False,
            }
            seq = "".join(c.get("sequence", "") for c in mol.info.get("chains", []))
            rows[i]["length"] = len(seq) if seq else None
        except ZwitterError as exc:
            rows[i] = {"note": f"record {ident!r}: {exc}", "_bad": True}
    out = []
    bad = 0
    for i, (ident, _, _) in enumerate(items):
        r = rows[i]
        if r.pop("_bad", False):
            bad += 1
            sys.stderr.write(f"zwitter: error: {r['note']}\n")
        row: dict[str, Any] = {"id": ident, "kind": kinds[i], "length": r.get("length")}
        row["pI"] = r.get("pI", math.nan)
        for p in ph:
            row[f"charge@pH{p:g}"] = r.get(f"charge@pH{p:g}", math.nan)
        row["note"] = r.get("note", "")
        out.append(row)
    return out, bad
