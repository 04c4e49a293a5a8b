"""Throughput of the SMILES path: dominant form and net charge at pH 7.4 for RDKit's NCI sample.

Usage::

    python benchmarks/smiles_throughput.py [--repeat 3] [--limit N] [--profile]

Reads RDKit's bundled ``Data/NCI/first_5K.smi`` (4999 rows), then times, on one core:

* the floor: ``Chem.MolFromSmiles`` alone on every row (RDKit's parsing, logs blocked);
* zwitter: ``from_smiles`` (parse, standardise, find groups, assign pKa values, couple the sites)
  followed by ``charge(7.4)`` and ``dominant(7.4)`` (the top microstate drawn as SMILES).

Every row is processed; rows that fail are counted (they raise StructureError and are reported
by the batch layer). The best of ``--repeat`` runs is printed. Results are recorded in
benchmarks/README.md.
"""

from __future__ import annotations

import argparse
import os
import platform
import sys
import time
import warnings


def _rows(limit: int | None) -> list[str]:
    from rdkit import RDConfig

    path = os.path.join(RDConfig.RDDataDir, "NCI", "first_5K.smi")
    with open(path) as fh:
        rows = [line.split()[0] for line in fh if line.strip()]
    return rows[:limit] if limit else rows


def floor(rows: list[str]) -> float:
    from rdkit import Chem, rdBase

    t = time.perf_counter()
    with rdBase.BlockLogs():
        for smi in rows:
            Chem.MolFromSmiles(smi)
    return time.perf_counter() - t


def full(rows: list[str]) -> tuple[float, int]:
    from zwitter.errors import ZwitterError
    from zwitter.structure import from_smiles

    bad = 0
    t = time.perf_counter()
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")  # notes (metals, ...) are warnings; counted elsewhere
        for smi in rows:
            try:
                m = from_smiles(smi)
                m.charge(7.4)
                m.dominant(7.4)
            except ZwitterError:
                bad += 1
    return time.perf_counter() - t, bad


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--repeat", type=int, default=3)
    ap.add_argument("--limit", type=int, default=None)
    ap.add_argument("--profile", action="store_true", help="cProfile one run of the zwitter path")
    args = ap.parse_args()
    rows = _rows(args.limit)
    import zwitter.structure as st

    st.group_types(), st.substituents(), st.reactions()  # load the tables outside the timing
    full(rows[:50])  # warm caches
    if args.profile:
        import cProfile
        import pstats

        cProfile.runctx("full(rows)", globals(), {"rows": rows, "full": full}, "/tmp/zw.prof")
        pstats.Stats("/tmp/zw.prof").sort_stats("tottime").print_stats(20)
        return
    f = min(floor(rows) for _ in range(args.repeat))
    best = None
    bad = 0
    for _ in range(args.repeat):
        dt, bad = full(rows)
        best = dt if best is None else min(best, dt)
    assert best is not None
    n = len(rows)
    print(
        f"python {platform.python_version()}, rdkit {__import__('rdkit').__version__}, "
        f"{platform.processor() or platform.machine()}, one process"
    )
    print(f"rows: {n} (failed: {bad}, reported as StructureError)")
    print(f"RDKit MolFromSmiles alone : {n / f:8.0f} molecules/s ({f * 1e6 / n:6.0f} us each)")
    print(
        f"zwitter dominant + charge : {n / best:8.0f} molecules/s ({best * 1e6 / n:6.0f} us each)"
    )
    print(f"ratio to the parsing floor: {best / f:.1f}x")
    sys.stdout.flush()


if __name__ == "__main__":
    main()
