"""Wall time of `zwitter pi SEQ` (a fresh process each time), median of repeated runs.

Target: well under half a second. Run: python benchmarks/startup.py [repeats]
"""

from __future__ import annotations

import shutil
import statistics
import subprocess
import sys
import time


def main() -> None:
    repeats = int(sys.argv[1]) if len(sys.argv) > 1 else 15
    exe = shutil.which("zwitter")
    cmd = (
        [exe, "pi", "MKWVTFISLLFLFSSAYS"]
        if exe
        else [sys.executable, "-m", "zwitter", "pi", "MKWV"]
    )
    times = []
    for _ in range(repeats):
        t0 = time.perf_counter()
        subprocess.run(cmd, check=True, capture_output=True)
        times.append(time.perf_counter() - t0)
    base = []
    for _ in range(repeats):
        t0 = time.perf_counter()
        subprocess.run([sys.executable, "-c", "pass"], check=True)
        base.append(time.perf_counter() - t0)
    print(
        f"`{' '.join(cmd[1:])}`: median {statistics.median(times) * 1000:.0f} ms, "
        f"min {min(times) * 1000:.0f} ms over {repeats} runs "
        f"(bare Python start-up: {statistics.median(base) * 1000:.0f} ms)"
    )
    proc = subprocess.run(
        [sys.executable, "-X", "importtime", "-c", "import zwitter.cli"],
        capture_output=True,
        text=True,
        check=True,
    )
    heavy = [
        ln
        for ln in proc.stderr.splitlines()
        if any(m in ln for m in ("pandas", "rdkit", "matplotlib"))
    ]
    print("pandas / rdkit / matplotlib imported at start-up:", "yes" if heavy else "no")


if __name__ == "__main__":
    main()
