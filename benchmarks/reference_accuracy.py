"""What modification and disulfide handling buys: per-scale pI error with and without it.

Run: python benchmarks/reference_accuracy.py [--write]

Reads data/reference/measured_pi.csv (every value cited in data/reference/README.md) and predicts
each molecule's pI three ways on every packaged scale:

* ``plain``: the ``sequence`` column, chains split at '//', every cysteine free, termini free
  (what a user gets from a bare database sequence);
* ``plain, cys bonded``: the same with ``cys="bonded"`` (every cysteine in a disulfide);
* ``proforma``: the ``proforma`` column through :func:`zwitter.proforma.from_proforma`, with the
  recorded disulfides (``#XL`` labels), blocked termini and modified residues.

``--write`` also writes the markdown table to .notes/issue3_accuracy.md.
"""

from __future__ import annotations

import math
import sys
import warnings
from dataclasses import dataclass
from pathlib import Path

import zwitter
from zwitter.errors import ZwitterWarning
from zwitter.proforma import from_proforma
from zwitter.validation import load_measured_pi

ROOT = Path(__file__).resolve().parent.parent
REFERENCE = ROOT / "data" / "reference" / "measured_pi.csv"
MODES = ("plain", "plain, cys bonded", "proforma")


@dataclass(frozen=True)
class ModeError:
    scale: str
    mode: str
    n: int
    rmsd: float
    mae: float
    residuals: tuple[tuple[str, float, float], ...]  # (id, measured, predicted)


def _predict(text: str, scale: str, mode: str) -> float:
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", ZwitterWarning)
        if mode == "proforma":
            m = from_proforma(text, scale=scale)
        else:
            # plain chains: drop nothing but split at '//', as a bare sequence would be read
            m = from_proforma(text, scale=scale, cys="bonded" if "bonded" in mode else "free")
        pi = m.isoelectric_point()
    return math.nan if pi is None else pi


def modification_comparison(path: Path = REFERENCE) -> list[ModeError]:
    """RMSD and MAE of the predicted pI per scale and mode (see module docstring)."""
    rows = load_measured_pi(path)
    out = []
    for scale in zwitter.scale_names():
        for mode in MODES:
            residuals = []
            for row in rows:
                text = row["proforma"] if mode == "proforma" else row["sequence"]
                residuals.append(
                    (row["id"], float(row["measured_pi"]), _predict(text, scale, mode))
                )
            diffs = [p - m for _, m, p in residuals if not math.isnan(p)]
            n = len(diffs)
            rmsd = math.sqrt(sum(d * d for d in diffs) / n) if n else math.nan
            mae = sum(abs(d) for d in diffs) / n if n else math.nan
            out.append(ModeError(scale, mode, n, rmsd, mae, tuple(residuals)))
    return out


def markdown(results: list[ModeError]) -> str:
    by = {(r.scale, r.mode): r for r in results}
    n_rows = max(r.n for r in results)
    changed = sorted(
        {
            ident
            for (scale, mode), r in by.items()
            if mode == "proforma"
            for (ident, _, p), (_, _, q) in zip(
                r.residuals, by[(scale, "plain")].residuals, strict=True
            )
            if abs(p - q) > 1e-6
        }
    )
    lines = [
        f"pI error against data/reference/measured_pi.csv ({n_rows} molecules), per scale.",
        "plain = bare sequence, cysteines free; plain, cys bonded = every cysteine in a disulfide;",
        "proforma = recorded disulfides, blocked termini and modified residues",
        "(the proforma column).",
        f"Molecules whose prediction the ProForma handling changes: {len(changed)} "
        f"({', '.join(changed)}).",
        "",
        "| scale | RMSD plain | RMSD plain, cys bonded | RMSD proforma | MAE plain | "
        "MAE plain, cys bonded | MAE proforma |",
        "|---|---|---|---|---|---|---|",
    ]
    for scale in zwitter.scale_names():
        mark = " (default)" if scale == zwitter.DEFAULT_SCALE else ""
        cells = [f"{by[(scale, m)].rmsd:.2f}" for m in MODES] + [
            f"{by[(scale, m)].mae:.2f}" for m in MODES
        ]
        lines.append(f"| {scale}{mark} | " + " | ".join(cells) + " |")
    lines += [
        "",
        f"The same, on the {len(changed)} molecules the handling changes (RMSD):",
        "",
        "| scale | plain | plain, cys bonded | proforma |",
        "|---|---|---|---|",
    ]
    for scale in zwitter.scale_names():
        cells = []
        for mode in MODES:
            d = [p - m for ident, m, p in by[(scale, mode)].residuals if ident in changed]
            cells.append(f"{math.sqrt(sum(x * x for x in d) / len(d)):.2f}" if d else "-")
        lines.append(f"| {scale} | " + " | ".join(cells) + " |")
    return "\n".join(lines) + "\n"


def main() -> None:
    if not REFERENCE.exists():
        sys.exit(f"{REFERENCE} not found")
    results = modification_comparison()
    table = markdown(results)
    sys.stdout.write(table)
    if "--residuals" in sys.argv:
        for r in results:
            if r.scale == zwitter.DEFAULT_SCALE:
                for ident, measured, predicted in r.residuals:
                    line = f"{r.mode:18s} {ident:22s} measured {measured:5.2f}"
                    print(f"{line} predicted {predicted:5.2f}")
    if "--write" in sys.argv:
        target = ROOT / ".notes" / "issue3_accuracy.md"
        target.write_text("# Issue 3: what modification/disulfide handling buys\n\n" + table)
        sys.stdout.write(f"written to {target}\n")


if __name__ == "__main__":
    main()
