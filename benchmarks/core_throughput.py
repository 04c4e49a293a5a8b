"""Vectorised scoring versus per-sequence loops (issue: core engine benchmark).

pI and charge at pH 5, 7.4 and 9 for 100,000 generated sequences (lengths 50-1,000, uniform;
residue frequencies of UniProtKB/Swiss-Prot release statistics, from memory) three ways:

1. zwitter, one vectorised call over all sequences (zwitter.scoring.score_sequences);
2. zwitter's per-molecule API in a Python loop (from_sequence + isoelectric_point + charge);
3. Biopython's isoelectric point (Bio.SeqUtils.ProtParam.ProteinAnalysis), one sequence at a
   time.

The loops run on a random subsample and are extrapolated to 100,000 (stated in the output).
Run: python benchmarks/core_throughput.py [N]
"""

from __future__ import annotations

import random
import resource
import sys
import time

import numpy as np

import zwitter
from zwitter.scoring import score_sequences

# Swiss-Prot amino-acid composition, percent (UniProtKB/Swiss-Prot release statistics, from memory)
FREQ = dict(A=8.25, R=5.53, N=4.06, D=5.45, C=1.37, Q=3.93, E=6.75, G=7.07, H=2.27, I=5.96,
            L=9.66, K=5.84, M=2.42, F=3.86, P=4.70, S=6.56, T=5.34, W=1.08, Y=2.92,
            V=6.87)  # fmt: skip


def generate(n: int, seed: int = 1) -> list[str]:
    rng = np.random.default_rng(seed)
    letters = np.frombuffer("".join(FREQ).encode(), dtype=np.uint8)
    p = np.array(list(FREQ.values()))
    p /= p.sum()
    lengths = rng.integers(50, 1001, size=n)
    codes = rng.choice(letters, size=int(lengths.sum()), p=p)
    text = codes.tobytes().decode()
    bounds = np.concatenate([[0], np.cumsum(lengths)])
    return [text[bounds[i] : bounds[i + 1]] for i in range(n)]


def main() -> None:
    n = int(sys.argv[1]) if len(sys.argv) > 1 else 100_000
    seqs = generate(n)
    ph = [5.0, 7.4, 9.0]
    scale = zwitter.get_scale("bjellqvist")
    t0 = time.perf_counter()
    scores = score_sequences(seqs, ph, scale)
    t_vec = time.perf_counter() - t0
    sample = random.Random(2).sample(range(n), min(n, 2000))
    t0 = time.perf_counter()
    for i in sample:
        m = zwitter.from_sequence(seqs[i], scale=scale)
        m.isoelectric_point()
        m.charge(np.array(ph))
    t_loop = (time.perf_counter() - t0) / len(sample) * n
    from Bio.SeqUtils.ProtParam import ProteinAnalysis

    t0 = time.perf_counter()
    worst = 0.0
    for i in sample:
        pi = ProteinAnalysis(seqs[i]).isoelectric_point()
        if 4.1 < scores.pi[i] < 11.9:
            worst = max(worst, abs(pi - scores.pi[i]))
    t_bio = (time.perf_counter() - t0) / len(sample) * n
    peak = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024
    print(f"sequences: {n:,} (mean length {np.mean([len(s) for s in seqs]):.0f}), pH {ph}")
    print(f"zwitter vectorised, one call : {t_vec:8.2f} s  ({n / t_vec:,.0f} seq/s)")
    print(
        f"zwitter per-sequence loop    : {t_loop:8.2f} s  ({n / t_loop:,.0f} seq/s; "
        f"{len(sample)} timed, extrapolated)"
    )
    print(
        f"Biopython per-sequence pI    : {t_bio:8.2f} s  ({n / t_bio:,.0f} seq/s; "
        f"{len(sample)} timed, extrapolated; pI only)"
    )
    print(f"speed-up vs loop {t_loop / t_vec:.0f}x, vs Biopython {t_bio / t_vec:.0f}x")
    print(f"max |pI - Biopython pI| on the sample (same Bjellqvist set): {worst:.4f}")
    print(f"peak RSS: {peak:,.0f} MiB")


if __name__ == "__main__":
    main()
