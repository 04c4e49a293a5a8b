"""Score a whole FASTA file in one batch, summarise it and draw it.

The input is INVENTED: about 2,000 random protein sequences drawn with a seeded random number
generator (their composition scattered around average amino-acid frequencies), written to
``invented_proteome.fasta`` in the output folder. They correspond to no real protein. One record
carries a deliberate typo to show that a bad record keeps its row, with the error named. This
script shows

* ``zwitter.score_fasta`` with ``ph=[5.0, 7.4]``: one row per record (pI, charges, masses,
  residue counts, warnings, errors), in input order, written as CSV;
* summary statistics: the pI distribution and how many records would bind a cation exchanger
  at pH 7.4 (the same rule as ``zwitter.plan_ion_exchange``: net charge of at least one per 100
  residues, and at least 1, with the pI at least 1 unit above the pH; common practice);
* ``zwitter.plots.gel_plot`` (pI versus mass, laid out like a two-dimensional gel) and
  ``zwitter.plots.pi_histogram`` with isoelectric-focusing fraction boundaries, as PNG files.

Every number is an estimate from published pKa values and a simple model (independent sites,
Henderson-Hasselbalch); real proteins deviate, so verify with an IEF gel or a pilot column.

Run::

    python examples/score_proteome.py [OUT_DIR]      # default OUT_DIR: example-output
"""

from __future__ import annotations

import sys
import warnings
from pathlib import Path
from typing import Any

import numpy as np

import zwitter
from zwitter.plots import gel_plot, ief_fractions, pi_histogram

N_RECORDS = 2000  # including the one bad record
SEED = 20240607
PH = [5.0, 7.4]
#: Boundaries (pH) of the isoelectric-focusing fractions to count and draw.
IEF_FRACTIONS = [3.0, 4.5, 5.5, 6.5, 7.5, 8.5, 9.5, 11.0]
RESIDUES = "ARNDCQEGHILKMFPSTWYV"
#: Average residue frequencies (percent) that the invented sequences scatter around: rounded
#: values of the kind UniProtKB release statistics report (from memory); they only shape the
#: invented data, nothing is computed from them.
FREQUENCIES = [8.3, 5.5, 4.1, 5.5, 1.4, 3.9, 6.7, 7.1, 2.3, 5.9,
               9.7, 5.8, 2.4, 3.9, 4.7, 6.6, 5.3, 1.1, 2.9, 6.9]  # fmt: skip
BAD_ID = "INV_TYPO"


def write_invented_fasta(path: Path, n: int = N_RECORDS, seed: int = SEED) -> Path:
    """Write ``n`` invented records (the last one with a typo) to ``path``; return it."""
    rng = np.random.default_rng(seed)
    base = np.asarray(FREQUENCIES) / sum(FREQUENCIES)
    letters = np.array(list(RESIDUES))
    lines = []
    for i in range(n - 1):
        # each invented protein gets its own composition around the average (Dirichlet draw),
        # so that acidic and basic ones both occur, and a log-normal length
        weights = rng.dirichlet(base * 120.0)
        length = int(np.clip(rng.lognormal(np.log(300.0), 0.6), 30, 1500))
        body = "M" + "".join(letters[rng.choice(20, size=length - 1, p=weights)])
        lines.append(f">INV{i + 1:05d} invented random protein {i + 1} (demo data, not real)")
        lines.extend(body[j : j + 60] for j in range(0, len(body), 60))
    lines.append(f">{BAD_ID} invented record with a typo (a digit in the sequence)")
    lines.append("MKTAYIAKQR4QISFVKSHFSRQ")
    path.write_text("\n".join(lines) + "\n", encoding="utf-8")
    return path


def binds_cation_exchanger(frame: Any, ph: float = 7.4, margin: float = 1.0) -> Any:
    """Boolean Series: records that would bind a cation exchanger at ``ph``.

    The rule of ``zwitter.plan_ion_exchange`` (common practice): net charge at least
    max(1, length / 100) and pI at least ``margin`` above ``ph``.
    """
    threshold = np.maximum(1.0, frame["length"] / 100.0)
    return (frame[f"charge_ph{ph:.1f}"] >= threshold) & (frame["pI"] >= ph + margin)


def main(out_dir: Path) -> dict[str, Any]:
    """Write, score and draw the invented proteome in ``out_dir``; return key numbers."""
    out_dir = Path(out_dir)
    out_dir.mkdir(parents=True, exist_ok=True)
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always", zwitter.ZwitterWarning)

        fasta = write_invented_fasta(out_dir / "invented_proteome.fasta")
        scores = zwitter.score_fasta(fasta, ph=PH, jobs=1).reset_index(drop=True)
        scores.to_csv(out_dir / "scores.csv", index=False)

        bad = scores[scores["error"] != ""]
        ok = scores[scores["error"] == ""]
        pi = ok["pI"].to_numpy(dtype=float)
        quantiles = dict(zip(("min", "p10", "median", "p90", "max"),
                             np.nanquantile(pi, [0.0, 0.1, 0.5, 0.9, 1.0]).tolist()))  # fmt: skip
        cation = binds_cation_exchanger(ok, 7.4)
        acidic = int((pi < 7.0).sum())
        print(f"Scored {len(scores)} invented records from {fasta.name}")
        print(f"  {len(ok)} scored, {len(bad)} with an error:")
        for row in bad.itertuples():
            print(f"    {row.id}: {row.error}")
        print(
            "  pI: min {min:.2f}, 10% {p10:.2f}, median {median:.2f}, 90% {p90:.2f}, "
            "max {max:.2f}".format(**quantiles)
        )
        print(f"  acidic (pI < 7): {acidic}, basic (pI > 7): {int((pi > 7.0).sum())}")
        print(
            f"  bind a cation exchanger at pH 7.4: {int(cation.sum())} "
            f"({100.0 * cation.mean():.1f}%)"
        )
        print(f"  mean net charge at pH 5.0: {ok['charge_ph5.0'].mean():+.1f}, "
              f"at pH 7.4: {ok['charge_ph7.4'].mean():+.1f}")  # fmt: skip

        fractions = ief_fractions(ok, IEF_FRACTIONS)
        fractions.to_csv(out_dir / "ief_fractions.csv", index=False)
        print("  isoelectric-focusing fractions:")
        for row in fractions.itertuples():
            print(f"    {row.fraction:>5}  pH {row.from_ph:5.1f}-{row.to_ph:<5.1f} {row.count:5d}")

        # label the most acidic and the most basic record on the gel map
        extremes = [str(ok.loc[ok["pI"].idxmin(), "id"]), str(ok.loc[ok["pI"].idxmax(), "id"])]
        gel_plot(ok, highlight=extremes, title="Invented proteome: pI versus mass",
                 path=out_dir / "gel.png")  # fmt: skip
        pi_histogram(ok, fractions=IEF_FRACTIONS, title="Invented proteome: pI histogram",
                     path=out_dir / "pi_histogram.png")  # fmt: skip

    cautions = [str(w.message) for w in caught]
    for text in cautions:
        print(f"caution: {text}")
    print("All numbers are estimates: confirm with an IEF gel or a pilot run.")
    return {
        "fasta": fasta,
        "n_records": len(scores),
        "n_scored": len(ok),
        "errors": dict(zip(bad["id"], bad["error"])),
        "pi_quantiles": quantiles,
        "n_acidic": acidic,
        "n_cation_binders_ph7.4": int(cation.sum()),
        "cation_binders_ph7.4": [str(x) for x in ok.loc[cation, "id"]],
        "ief_counts": dict(zip(fractions["fraction"], fractions["count"].astype(int).tolist())),
        "highlighted": extremes,
        "cautions": cautions,
        "files": [out_dir / n for n in ("invented_proteome.fasta", "scores.csv",
                                        "ief_fractions.csv", "gel.png", "pi_histogram.png")],
    }  # fmt: skip


if __name__ == "__main__":
    result = main(Path(sys.argv[1] if len(sys.argv) > 1 else "example-output"))
    print(
        f"\n{result['n_scored']} of {result['n_records']} records scored, median pI "
        f"{result['pi_quantiles']['median']:.2f}, {result['n_cation_binders_ph7.4']} bind a "
        "cation exchanger at pH 7.4; wrote " + ", ".join(str(f) for f in result["files"])
    )
