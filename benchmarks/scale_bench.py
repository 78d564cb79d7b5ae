"""A sweep streamed to Parquet, in this process and on a Dask LocalCluster, against the in-memory scorer.

    .venv/bin/python benchmarks/scale_bench.py [--filters 1000000] [--memory-filters 20000] [--workers 2]
                                               [--rounds 3] [--format parquet|csv] [--skip-cluster]
                                               [--out-dir DIR]

A quick run: ``--filters 20000 --memory-filters 8000 --skip-cluster`` (about half a minute).

Work: a notch sweep (centre x FWHM, depth 0.8) of ``--filters`` filters x the 99 CES surfaces x 4 observers
(normal, protanomalous, deuteranomalous, deuteranope), ``metrics="core"`` (photometry, road use, contrast
gains, discriminable and confused pairs), written as one Parquet row per filter x observer
(:func:`cvdfilter.score_to_file`, chunks of 1,024 filters built on the fly). Each phase runs in its own
subprocess so that its peak RSS is its own. Prints

* the reference: ``cvdfilter.score`` in memory on ``--memory-filters`` filters of the same sweep (at most
  50,000 per spec in memory): filters/s;
* the ratio streamed / in memory on ``--memory-filters`` filters, both alternated ``--rounds`` times in one
  process so that they share the machine's load (target >= 0.8; ``--format csv``: streamed to CSV): both
  from the same sweep spec, the in-memory run's building of its filters (``load_filters``, timed apart)
  counted as the streamed run's is (``score(spec)`` builds them too); then the ratio of the scoring alone
  (the in-memory run handed its filters), the CPU seconds of each run (all threads: less sensitive to other
  jobs than the wall time) and the load average around each round;
* the streamed run of ``--filters`` in this process (threads): wall time, rows/s, filters/s, peak RSS
  (target < 1 GB whatever the sweep length);
* the same on a LocalCluster of ``--workers`` worker processes (one thread each): wall time including the
  cluster's start, filters/s, the ratio to the local streamed run, the client's and each worker's peak RSS;
* per chunk: the Parquet part's size, the mean chunk time (wall x slots / chunks) and the bytes shipped to
  each worker once (the pickled chunk task).

The machine is shared: read the ratios, measured in the same run. No test asserts any of this.
"""

from __future__ import annotations

import argparse
import json
import os
import pathlib
import resource
import subprocess
import sys
import tempfile
import time

OBSERVERS = ["normal", "protanomalous", "deuteranomalous", "deuteranope"]
N_FWHM = 100


def sweep(n: int) -> str:
    """A notch sweep of about ``n`` filters: ``N_FWHM`` FWHMs (10-109 nm) x n / N_FWHM centres in 400-700 nm."""
    n_c = max(1, round(n / N_FWHM))
    step = 300.0 / n_c
    return f"notch:center=400..{400 + step * (n_c - 1):.6f}/{step:.6f},fwhm=10..{10 + N_FWHM - 1}/1,depth=0.8"


def _rss_mb() -> float:
    return resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024


def phase_memory(n: int) -> dict:
    import cvdfilter as cf

    fs = cf.load_filters(sweep(n))
    cf.score(sweep(2000), observers=OBSERVERS, metrics="core")  # warm the caches (and load a compiled kernel)
    t = time.perf_counter()
    card = cf.score(fs, observers=OBSERVERS, metrics="core")
    wall = time.perf_counter() - t
    return {"filters": len(card), "wall_s": wall, "filters_per_s": len(card) / wall, "peak_rss_mb": _rss_mb()}


def phase_stream(n: int, out: str, scheduler: str | None) -> dict:
    import cvdfilter as cf

    cf.score(sweep(2000), observers=OBSERVERS, metrics="core")  # warm the caches, as the reference
    t = time.perf_counter()
    ex = None
    if scheduler:
        from cvdfilter.execution import executor

        ex = executor(scheduler)
    t_start = time.perf_counter() - t
    manifest = cf.score_to_file(sweep(n), out, observers=OBSERVERS, metrics="core", scheduler=ex)
    wall = time.perf_counter() - t
    res = {"filters": manifest["filters"], "rows": manifest["rows"], "chunks": len(manifest["chunks"]),
           "wall_s": wall, "cluster_start_s": t_start if scheduler else 0.0,
           "filters_per_s": manifest["filters"] / wall, "rows_per_s": manifest["rows"] / wall,
           "peak_rss_mb": _rss_mb(), "file_mb": pathlib.Path(out).stat().st_size / 1e6,
           "part_kb_mean": sum(c["bytes"] for c in manifest["chunks"]) / len(manifest["chunks"]) / 1e3,
           "shipped_kb": manifest["shipped_bytes"] / 1e3, "slots": ex.slots() if ex else None}
    if ex is not None:
        res["worker_peak_rss_mb"] = sorted(v / 1024 for v in ex.client.run(
            lambda: resource.getrusage(resource.RUSAGE_SELF).ru_maxrss).values())
        ex.close()
    return res


def phase_ratio(n: int, rounds: int, out_dir: str, fmt: str = "parquet") -> dict:
    """In-memory and streamed runs of the same ``n`` filters, alternated ``rounds`` times in one process (the
    machine is shared: alternating puts both under the same load); per round, streamed / in memory."""
    import cvdfilter as cf

    spec = sweep(n)
    cf.score(sweep(2000), observers=OBSERVERS, metrics="core")  # warm: caches, and a compiled kernel loaded
    cf.score_to_file(sweep(2000), pathlib.Path(out_dir) / f"warm.{fmt}", observers=OBSERVERS, metrics="core")
    mem, streamed, mem_cpu, streamed_cpu, build = [], [], [], [], []
    n_filters = 0
    load = [os.getloadavg()[0]]
    for r in range(rounds):
        t = time.perf_counter()
        fs = cf.load_filters(spec)  # outside the in-memory timing (the streamed run builds its filters inside)
        build.append(time.perf_counter() - t)
        n_filters = len(fs)
        t, c = time.perf_counter(), time.process_time()
        cf.score(fs, observers=OBSERVERS, metrics="core")
        mem.append(n_filters / (time.perf_counter() - t))
        mem_cpu.append(time.process_time() - c)
        del fs
        t, c = time.perf_counter(), time.process_time()
        cf.score_to_file(spec, pathlib.Path(out_dir) / f"round{r}.{fmt}", observers=OBSERVERS, metrics="core")
        streamed.append(n_filters / (time.perf_counter() - t))
        streamed_cpu.append(time.process_time() - c)
        load.append(os.getloadavg()[0])
    with_build = [n_filters / (n_filters / m + b) for m, b in zip(mem, build)]
    return {"filters": n_filters, "memory": mem, "streamed": streamed, "memory_cpu_s": mem_cpu,
            "streamed_cpu_s": streamed_cpu, "load": load, "ratios": [s / m for s, m in zip(streamed, mem)],
            "ratios_with_build": [s / m for s, m in zip(streamed, with_build)], "build_s": build}


def _child(args: list) -> dict:
    cmd = [sys.executable, __file__, "--phase", *args]
    out = subprocess.run(cmd, check=True, capture_output=True, text=True)
    return json.loads(out.stdout.strip().splitlines()[-1])


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--filters", type=int, default=1_000_000)
    ap.add_argument("--memory-filters", type=int, default=20_000)
    ap.add_argument("--workers", type=int, default=2)
    ap.add_argument("--rounds", type=int, default=3)
    ap.add_argument("--format", choices=["parquet", "csv"], default="parquet",
                    help="the streamed format of the ratio rounds (the long runs are Parquet)")
    ap.add_argument("--skip-cluster", action="store_true")
    ap.add_argument("--out-dir", default=None)
    ap.add_argument("--phase", nargs="+", help=argparse.SUPPRESS)
    args = ap.parse_args()
    if args.phase:
        kind, *rest = args.phase
        if kind == "memory":
            res = phase_memory(int(rest[0]))
        elif kind == "ratio":
            res = phase_ratio(int(rest[0]), int(rest[1]), rest[2], *rest[3:])
        else:
            res = phase_stream(int(rest[0]), rest[1], rest[2] if len(rest) > 2 else None)
        print(json.dumps(res))
        return

    out_dir = pathlib.Path(args.out_dir or tempfile.mkdtemp(prefix="cvdfilter-scale-"))
    print(f"sweep: {sweep(args.filters)} ({os.cpu_count()} CPUs, load {os.getloadavg()[0]:.1f})")
    rat = _child(["ratio", str(args.memory_filters), str(args.rounds), str(out_dir), args.format])
    ratios = sorted(rat["ratios"])
    with_build = sorted(rat["ratios_with_build"])
    print(f"streamed ({args.format}) / in memory, {rat['filters']:,} filters from the same sweep spec (both build "
          f"their filters from it), {args.rounds} alternated rounds in one process: ratios "
          f"{', '.join(f'{r:.2f}' for r in rat['ratios_with_build'])} "
          f"(median {with_build[len(with_build) // 2]:.2f}; target >= 0.8)")
    print(f"  scoring alone (the in-memory run handed its filters, built in "
          f"{', '.join(f'{x:.2f}' for x in rat['build_s'])} s): ratios {', '.join(f'{r:.2f}' for r in rat['ratios'])} "
          f"(median {ratios[len(ratios) // 2]:.2f}); in memory {', '.join(f'{x:,.0f}' for x in rat['memory'])} "
          f"filters/s, streamed {', '.join(f'{x:,.0f}' for x in rat['streamed'])} filters/s")
    print(f"  CPU seconds (all threads): in memory {', '.join(f'{x:.2f}' for x in rat['memory_cpu_s'])}, streamed "
          f"{', '.join(f'{x:.2f}' for x in rat['streamed_cpu_s'])}: streaming adds "
          f"{sorted(s / m - 1 for s, m in zip(rat['streamed_cpu_s'], rat['memory_cpu_s']))[args.rounds // 2]:+.0%} "
          f"CPU (median; the streamed run also builds its filters, the in-memory one is handed them); "
          f"load average {', '.join(f'{x:.1f}' for x in rat['load'])} before and after each round")
    mem = _child(["memory", str(args.memory_filters)])
    print(f"in memory: {mem['filters']:,} filters in {mem['wall_s']:.1f} s = {mem['filters_per_s']:,.0f} filters/s, "
          f"peak RSS {mem['peak_rss_mb']:,.0f} MB")
    loc = _child(["stream", str(args.filters), str(out_dir / "local.parquet")])
    print(f"streamed, local: {loc['filters']:,} filters, {loc['rows']:,} rows in {loc['wall_s']:.1f} s = "
          f"{loc['rows_per_s']:,.0f} rows/s, {loc['filters_per_s']:,.0f} filters/s "
          f"({loc['filters_per_s'] / mem['filters_per_s']:.2f}x the in-memory run above, at another moment), "
          f"peak RSS {loc['peak_rss_mb']:,.0f} MB (target < 1,000), file {loc['file_mb']:.1f} MB")
    print(f"  per chunk: {loc['filters'] // loc['chunks'] if loc['chunks'] else 0:,} filters, Parquet part "
          f"{loc['part_kb_mean']:.0f} kB, {loc['wall_s'] * (loc['slots'] or 2) / loc['chunks']:.2f} s per chunk "
          f"per thread; chunk task {loc['shipped_kb']:.0f} kB (shipped once per worker on a cluster)")
    if args.skip_cluster:
        return
    clu = _child(["stream", str(args.filters), str(out_dir / "cluster.parquet"), f"local:{args.workers}"])
    same = (out_dir / "local.parquet").read_bytes() == (out_dir / "cluster.parquet").read_bytes()
    print(f"streamed, LocalCluster of {args.workers}: {clu['wall_s']:.1f} s "
          f"(cluster start {clu['cluster_start_s']:.1f} s) = {clu['filters_per_s']:,.0f} filters/s, "
          f"{clu['filters_per_s'] / loc['filters_per_s']:.2f}x the local streamed run; "
          f"client peak RSS {clu['peak_rss_mb']:,.0f} MB, workers "
          f"{', '.join(f'{r:,.0f}' for r in clu['worker_peak_rss_mb'])} MB; same bytes as local: {same}")
    print(f"  per chunk on the cluster: {clu['wall_s'] * clu['slots'] / clu['chunks']:.2f} s per chunk per worker, "
          f"{clu['part_kb_mean']:.0f} kB back to the client")


if __name__ == "__main__":
    main()
