"""Per-scale pI error on the measured-pI reference table (how the default scale was chosen).

Run: python benchmarks/scale_accuracy.py [--markdown]
Reads data/reference/measured_pi.csv (sources in data/reference/README.md); plain sequences,
cysteines free (what a user gets from a bare sequence). Results are recorded in README.md.
"""

from __future__ import annotations

import sys
from pathlib import Path

import zwitter
from zwitter.validation import load_measured_pi, scale_errors

ROOT = Path(__file__).resolve().parent.parent


def main() -> None:
    rows = load_measured_pi(ROOT / "data" / "reference" / "measured_pi.csv")
    results = sorted((scale_errors(s, rows) for s in zwitter.scale_names()), key=lambda e: e.rmsd)
    print("| scale | n | RMSD | MAE | max abs error |")
    print("|---|---|---|---|---|")
    for e in results:
        mark = " (default)" if e.scale == zwitter.DEFAULT_SCALE else ""
        print(f"| {e.scale}{mark} | {e.n} | {e.rmsd:.2f} | {e.mae:.2f} | {e.max_abs:.2f} |")
    if "--residuals" in sys.argv:
        best = results[0]
        for ident, measured, predicted in best.residuals:
            print(f"{ident:22s} measured {measured:5.2f} predicted {predicted:5.2f}")


if __name__ == "__main__":
    main()
