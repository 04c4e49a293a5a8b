"""Proteome-scale batch throughput and memory (issue 4 benchmark; not a test).

Generates a synthetic proteome in FASTA (60 residues per line): residue frequencies of
UniProtKB/Swiss-Prot release statistics (from memory), lengths log-normal with median 400
(sigma 0.6 in ln units, clipped to 20-5,000 residues; invented to look like a proteome, not fitted
to one). Then measures, in one run:

1. ``zwitter batch`` (the command, a fresh process) with ``--jobs 1`` and ``--jobs 2`` on 200,000
   records, CSV output: wall time, records/s, peak memory;
2. a Biopython per-sequence loop over the same file (Bio.SeqIO parsing, then
   ``ProteinAnalysis(seq).isoelectric_point()`` and ``.charge_at_pH(7.0)`` of
   Bio.SeqUtils.ProtParam and ``Bio.SeqUtils.molecular_weight`` for each record), on the first
   ``--bio-sample`` records, extrapolated to the whole file (stated in the output);
3. peak memory of ``zwitter batch --jobs 1`` on 200,000 versus 1,000,000 records.

Each zwitter measurement is repeated (``--repeat``, default 3) and the fastest run is reported,
since other work on a shared machine only ever slows a run down; memory is the largest seen.
Files go to /dev/shm when it exists (``--workdir`` to change), so that disk write-back does not
stall the runs.

Peak memory is reported two ways: the peak RSS of the largest process (its VmHWM, what
``/usr/bin/time -v`` prints as maximum resident set size), and the peak of the summed RSS of the
whole process tree (main process + workers), sampled every 0.05 s with psutil.

Besides the two files it runs a one-record file (the fixed cost of starting and stopping),
reports the steady-state rate (the records the large file adds over the small one, divided by
the extra time: start-up, warm-up and shutdown cancel out), and measures the ceiling for two
jobs on this machine: the large file cut in two halves, each scored by its own one-job process,
both started together (no coordination at all; what two cores give this workload).

Run: python benchmarks/batch_throughput.py [--records 200000] [--big 1000000] [--bio-sample 20000]
Results are recorded in benchmarks/README.md.
"""

from __future__ import annotations

import argparse
import os
import platform
import resource
import shutil
import subprocess
import sys
import tempfile
import threading
import time
from pathlib import Path
from typing import Any

import numpy as np

# Swiss-Prot amino-acid composition, percent (UniProtKB/Swiss-Prot release statistics, from memory)
FREQ = dict(A=8.25, R=5.53, N=4.06, D=5.45, C=1.37, Q=3.93, E=6.75, G=7.07, H=2.27, I=5.96,
            L=9.66, K=5.84, M=2.42, F=3.86, P=4.70, S=6.56, T=5.34, W=1.08, Y=2.92,
            V=6.87)  # fmt: skip
MEDIAN_LENGTH = 400
SIGMA = 0.6


def generate(path: Path, n: int, seed: int = 4) -> int:
    """Write n records; returns the number of residues. Memory stays small (blocks of 20,000)."""
    rng = np.random.default_rng(seed)
    letters = np.frombuffer("".join(FREQ).encode(), dtype=np.uint8)
    p = np.array(list(FREQ.values()))
    p /= p.sum()
    total = 0
    with path.open("wb") as out:
        for start in range(0, n, 20_000):
            m = min(20_000, n - start)
            lengths = np.clip(
                np.rint(rng.lognormal(np.log(MEDIAN_LENGTH), SIGMA, size=m)), 20, 5000
            ).astype(np.int64)
            residues = rng.choice(letters, size=int(lengths.sum()), p=p).tobytes()
            total += len(residues)
            pos = 0
            parts = []
            for i, length in enumerate(lengths.tolist()):
                seq = residues[pos : pos + length]
                pos += length
                parts.append(b">SYN%07d synthetic protein %d OS=Nowhere\n" % (start + i, start + i))
                parts.append(b"\n".join(seq[j : j + 60] for j in range(0, length, 60)) + b"\n")
            out.write(b"".join(parts))
    return total


class TreeMemory:
    """Peak of the summed RSS of a process and its descendants, sampled in a thread, and the
    largest peak RSS of any one of them (VmHWM, which the kernel keeps: nothing is missed)."""

    def __init__(self, pid: int):
        import psutil

        self.proc = psutil.Process(pid)
        self.peak = 0
        self.largest = 0
        self._stop = threading.Event()
        self._thread = threading.Thread(target=self._run, daemon=True)
        self._thread.start()

    @staticmethod
    def _hwm(pid: int) -> int:
        try:
            with open(f"/proc/{pid}/status") as fh:
                for line in fh:
                    if line.startswith("VmHWM:"):
                        return int(line.split()[1]) * 1024
        except OSError:
            pass
        return 0

    def _run(self) -> None:
        import psutil

        while not self._stop.is_set():
            try:
                procs = [self.proc, *self.proc.children(recursive=True)]
                rss = 0
                for p in procs:
                    try:
                        rss += p.memory_info().rss
                        self.largest = max(self.largest, self._hwm(p.pid))
                    except psutil.Error:
                        pass
                self.peak = max(self.peak, rss)
            except psutil.Error:
                pass
            self._stop.wait(0.05)

    def stop(self) -> int:
        self._stop.set()
        self._thread.join()
        return self.peak


def _spin(seconds: float, out: Any) -> None:
    t0, n = time.perf_counter(), 0
    while time.perf_counter() - t0 < seconds:
        n += 1
    out.put(n)


def free_cores() -> float:
    """How many cores this run gets now: 2-process spin throughput over 1-process (max 2)."""
    import multiprocessing as mp

    def spin(k: int) -> int:
        q: Any = mp.Queue()
        procs = [mp.Process(target=_spin, args=(1.0, q)) for _ in range(k)]
        for pr in procs:
            pr.start()
        total = sum(q.get() for _ in procs)
        for pr in procs:
            pr.join()
        return total

    return spin(2) / spin(1)


def run_zwitter(fasta: Path, out: Path, jobs: int, records: int) -> dict[str, float]:
    exe = shutil.which("zwitter")
    cmd = [exe] if exe else [sys.executable, "-c", "from zwitter.cli import main; main()"]
    cmd += ["batch", str(fasta), "-o", str(out), "--jobs", str(jobs), "--ph", "7.0", "--ph", "7.4"]
    before = resource.getrusage(resource.RUSAGE_CHILDREN)
    t0 = time.perf_counter()
    proc = subprocess.Popen(cmd, stdout=subprocess.DEVNULL, stderr=subprocess.PIPE)
    tree = TreeMemory(proc.pid)
    _, err = proc.communicate()
    seconds = time.perf_counter() - t0
    peak_tree = tree.stop()
    after = resource.getrusage(resource.RUSAGE_CHILDREN)
    if proc.returncode != 0:
        raise SystemExit(f"zwitter batch failed ({proc.returncode}): {err.decode()}")
    cpu = (after.ru_utime - before.ru_utime) + (after.ru_stime - before.ru_stime)
    return {
        "seconds": seconds,
        "records_per_s": records / seconds,
        "maxrss_mib": tree.largest / 2**20,  # the largest process's own peak
        "tree_peak_mib": peak_tree / 2**20,
        "cpu_s": cpu,
        "summary": err.decode().strip().splitlines()[-1],
    }


def split_halves(fasta: Path, out_dir: Path) -> tuple[Path, Path]:
    """The file cut in two at the record boundary nearest its middle."""
    data = fasta.read_bytes()
    mid = data.index(b"\n>", len(data) // 2) + 1
    first, second = out_dir / "half1.fasta", out_dir / "half2.fasta"
    first.write_bytes(data[:mid])
    second.write_bytes(data[mid:])
    return first, second


def run_halves(halves: tuple[Path, Path], out_dir: Path) -> float:
    """Wall time of two independent one-job runs, one per half, started together: what two
    cores give this workload with no coordination at all (the ceiling for --jobs 2)."""
    exe = shutil.which("zwitter")
    base = [exe] if exe else [sys.executable, "-c", "from zwitter.cli import main; main()"]
    t0 = time.perf_counter()
    procs = [
        subprocess.Popen(
            [*base, "batch", str(h), "-o", str(out_dir / f"half{i}.csv"), "--ph", "7.0",
             "--ph", "7.4"],
            stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL,
        )
        for i, h in enumerate(halves)
    ]  # fmt: skip
    codes = [p.wait() for p in procs]
    if any(codes):
        raise SystemExit(f"zwitter batch on a half failed: {codes}")
    return time.perf_counter() - t0


def interleaved(
    fasta: Path,
    out_dir: Path,
    records: int,
    repeat: int,
    jobs_list: tuple[int, ...] = (1, 2),
    halves: tuple[Path, Path] | None = None,
) -> dict[int, dict[str, Any]]:
    """Run each --jobs value ``repeat`` times, alternating, and keep the fastest run of each.

    Alternating (1, 2, 1, 2, ...) spreads drifts of the machine's load over both settings; other
    work only ever slows a run down, so the fastest is the best estimate of the program's own
    cost. Memory is the largest peak seen.
    """
    runs: dict[int, list[dict[str, Any]]] = {j: [] for j in jobs_list}
    split: list[float] = []
    for _ in range(max(1, repeat)):
        for jobs in jobs_list:
            os.sync()
            runs[jobs].append(run_zwitter(fasta, out_dir / f"scores_j{jobs}.csv", jobs, records))
        if halves is not None:
            split.append(run_halves(halves, out_dir))
    top: dict[int, dict[str, Any]] = {}
    if split:
        top[0] = {"seconds": min(split), "all_seconds": [round(x, 2) for x in split]}
    for jobs, rs in runs.items():  # key 0: the two halves run apart
        r = dict(min(rs, key=lambda r: r["seconds"]))
        r["tree_peak_mib"] = max(x["tree_peak_mib"] for x in rs)
        r["maxrss_mib"] = max(x["maxrss_mib"] for x in rs)
        r["all_seconds"] = [round(x["seconds"], 2) for x in rs]
        top[jobs] = r
    return top


def run_biopython(fasta: Path, sample: int) -> dict[str, float]:
    from Bio import SeqIO
    from Bio.SeqUtils import molecular_weight
    from Bio.SeqUtils.ProtParam import ProteinAnalysis

    t0 = time.perf_counter()
    done = 0
    checksum = 0.0
    with fasta.open() as handle:
        for rec in SeqIO.parse(handle, "fasta"):
            seq = str(rec.seq)
            protein = ProteinAnalysis(seq)
            checksum += (
                protein.isoelectric_point() + protein.charge_at_pH(7.0)
                + molecular_weight(seq, "protein")
            )  # fmt: skip
            done += 1
            if done >= sample:
                break
    seconds = time.perf_counter() - t0
    return {"records": done, "seconds": seconds, "records_per_s": done / seconds, "check": checksum}


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--records", type=int, default=200_000)
    ap.add_argument("--big", type=int, default=1_000_000)
    ap.add_argument("--bio-sample", type=int, default=20_000)
    ap.add_argument("--workdir", type=Path, default=None)
    ap.add_argument("--repeat", type=int, default=3)
    args = ap.parse_args()
    n = args.records

    shm = Path("/dev/shm")
    base = str(shm) if shm.is_dir() else None
    work = args.workdir or Path(tempfile.mkdtemp(prefix="zwitter-bench-", dir=base))
    work.mkdir(parents=True, exist_ok=True)
    small, big = work / "proteome_small.fasta", work / "proteome_big.fasta"
    try:
        import threadpoolctl  # noqa: F401

        blas = "threadpoolctl installed (in-process BLAS limited to 1 thread)"
    except ImportError:
        blas = "threadpoolctl not installed (in-process BLAS threads as numpy starts them)"
    py = platform.python_version()
    print(f"machine: {platform.platform()}, {os.cpu_count()} CPUs, Python {py}")
    print(f"{blas}; load average before: {os.getloadavg()[0]:.2f}; free cores now: "
          f"{free_cores():.2f} (2-process / 1-process spin throughput)")  # fmt: skip
    t0 = time.perf_counter()
    residues = generate(small, n)
    size = small.stat().st_size / 2**20
    print(f"generated {n:,} records, {residues:,} residues ({size:.0f} MiB) in "
          f"{time.perf_counter() - t0:.0f} s")  # fmt: skip

    tiny = work / "one_record.fasta"
    tiny.write_text(">one\nMKWVTFISLLFLFSSAYS\n")
    fixed = interleaved(tiny, work, 1, args.repeat + 2)
    print(f"start-up and shutdown (one record): --jobs 1 {fixed[1]['seconds']:.2f} s, "
          f"--jobs 2 {fixed[2]['seconds']:.2f} s (runs {fixed[1]['all_seconds']}, "
          f"{fixed[2]['all_seconds']})")  # fmt: skip

    results = interleaved(small, work, n, args.repeat, halves=split_halves(small, work))
    small_apart = results.pop(0)
    for jobs, r in results.items():
        print(f"zwitter batch --jobs {jobs}: {r['seconds']:.2f} s (runs {r['all_seconds']}), "
              f"{r['records_per_s']:,.0f} records/s, CPU {r['cpu_s']:.1f} s, peak RSS: largest "
              f"process {r['maxrss_mib']:.0f} MiB, tree {r['tree_peak_mib']:.0f} MiB")  # fmt: skip
    same = (work / "scores_j1.csv").read_bytes() == (work / "scores_j2.csv").read_bytes()
    print(f"--jobs 1 and --jobs 2 outputs identical: {same}")
    print(f"speed-up with 2 jobs: {results[1]['seconds'] / results[2]['seconds']:.2f}x; the "
          f"two halves scored apart at once: {small_apart['seconds']:.2f} s (runs "
          f"{small_apart['all_seconds']}), {results[1]['seconds'] / small_apart['seconds']:.2f}x "
          f"one job")  # fmt: skip

    bio = run_biopython(small, args.bio_sample)
    rate = bio["records_per_s"]
    print(f"Biopython loop (SeqIO + ProtParam pI, charge at 7.0, MW): {bio['records']:,} records "
          f"in {bio['seconds']:.1f} s = {rate:,.0f} records/s; extrapolated to {n:,}: "
          f"{n / rate:.0f} s")  # fmt: skip
    one, two = results[1]["records_per_s"] / rate, results[2]["records_per_s"] / rate
    print(f"zwitter vs Biopython: --jobs 1 {one:.1f}x, --jobs 2 {two:.1f}x")

    if args.big:
        t0 = time.perf_counter()
        generate(big, args.big, seed=5)
        size = big.stat().st_size / 2**20
        print(
            f"generated {args.big:,} records ({size:.0f} MiB) in {time.perf_counter() - t0:.0f} s"
        )
        halves = split_halves(big, work)
        large = interleaved(big, work, args.big, max(1, args.repeat - 1), halves=halves)
        apart = large.pop(0)
        for jobs, r in large.items():
            small_peak = results[jobs]["tree_peak_mib"]
            print(f"zwitter batch --jobs {jobs} on {args.big:,}: {r['seconds']:.1f} s (runs "
                  f"{r['all_seconds']}), {r['records_per_s']:,.0f} records/s, peak RSS process "
                  f"tree {r['tree_peak_mib']:.0f} MiB ({n:,}: {small_peak:.0f} MiB), largest "
                  f"process {r['maxrss_mib']:.0f} MiB")  # fmt: skip
        print(f"speed-up with 2 jobs on {args.big:,}: "
              f"{large[1]['seconds'] / large[2]['seconds']:.2f}x")  # fmt: skip
        ceiling = large[1]["seconds"] / apart["seconds"]
        print(f"the ceiling: the two halves scored by two independent one-job runs at once: "
              f"{apart['seconds']:.1f} s (runs {apart['all_seconds']}), {ceiling:.2f}x one job; "
              f"--jobs 2 reaches {apart['seconds'] / large[2]['seconds']:.0%} of it")  # fmt: skip
        for h in halves:
            h.unlink()
        # The records between the two files cost the difference of the run times: start-up,
        # warm-up and shutdown cancel out (the steady-state rate of each setting).
        extra = args.big - n
        marginal = {j: extra / (large[j]["seconds"] - results[j]["seconds"]) for j in (1, 2)}
        ratio, versus = marginal[2] / marginal[1], marginal[1] / rate
        print(f"steady state (the {extra:,} records the large file adds): --jobs 1 "
              f"{marginal[1]:,.0f} records/s, --jobs 2 {marginal[2]:,.0f} records/s, "
              f"{ratio:.2f}x; one job {versus:.1f}x Biopython")  # fmt: skip
        big.unlink()
    print(f"load average after: {os.getloadavg()[0]:.2f}; free cores now: {free_cores():.2f}; "
          f"files in {work}")  # fmt: skip


if __name__ == "__main__":
    main()
