"""Whole-process start-up times of the command line, against importing colour-science.

Prints the median wall time of:
  * ``cvdfilter --help``                       (target: under 0.3 s)
  * ``cvdfilter inspect larkhill-notch-575``   (a bundled filter, warm reference cache)
  * ``python -c "import colour"``              (the floor this tool avoids, measured in the same run)
and the ratios of the first two to the third. Timings, not assertions: machines are shared and noisy.

Usage: python benchmarks/startup.py [--repeat N]
"""

from __future__ import annotations

import argparse
import os
import statistics
import subprocess
import sys
import time


def median_time(cmd: list[str], repeat: int) -> float:
    times = []
    for _ in range(repeat):
        t0 = time.perf_counter()
        subprocess.run(cmd, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL, check=True)
        times.append(time.perf_counter() - t0)
    return statistics.median(times)


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--repeat", type=int, default=7)
    args = ap.parse_args()
    py = sys.executable
    cli = [py, "-m", "cvdfilter"]
    # Warm the reference-data cache once so 'inspect' measures the steady state.
    subprocess.run(cli + ["inspect", "larkhill-notch-575"], stdout=subprocess.DEVNULL, check=True)
    help_t = median_time(cli + ["--help"], args.repeat)
    inspect_t = median_time(cli + ["inspect", "larkhill-notch-575"], args.repeat)
    colour_t = median_time([py, "-c", "import colour"], args.repeat)
    print(f"python {sys.version.split()[0]}, {os.cpu_count()} CPUs, median of {args.repeat} runs")
    print(f"cvdfilter --help                      {help_t * 1000:8.0f} ms   ({help_t / colour_t:5.2f} x import colour)"
          f"   target < 300 ms: {'met' if help_t < 0.3 else 'NOT met'}")
    print(f"cvdfilter inspect larkhill-notch-575  {inspect_t * 1000:8.0f} ms   "
          f"({inspect_t / colour_t:5.2f} x import colour)")
    print(f"python -c 'import colour' (floor)     {colour_t * 1000:8.0f} ms")


if __name__ == "__main__":
    main()
