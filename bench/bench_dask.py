"""Benchmark: a batch of 4 plates screened through Dask distributed on 1 and on 2 worker processes.

Both runs use a LocalCluster started here (one thread per worker, no dashboard) and the same
plates; the figure is the ratio of the two wall times measured in the same run (goal: at
least 1.8x on 2 free cores). Each timing starts once the cluster's workers have imported
nmrcheck, so worker start-up is not counted.

    python bench/bench_dask.py [--wells 24] [--points 32768] [--out DIR]
"""

from __future__ import annotations

import argparse
import tempfile
import time
from pathlib import Path


def plate_wells(n: int):
    from nmrcheck.demo import COMPOUNDS, DemoWell

    names = list(COMPOUNDS)
    wells = [f"{r}{c}" for r in "ABCDEFGH" for c in range(1, 13)][:n]
    return tuple(DemoWell(w, names[i % len(names)], names[i % len(names)], [0.5, 1.0, 2.0][i % 3]) for i, w in enumerate(wells))


def _warm(client) -> None:
    """Import the screening stack on every worker before timing."""

    def load():
        import nmrcheck.plate.runner as runner

        runner._preload()
        return True

    client.run(load)


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--wells", type=int, default=24, help="wells per plate (of 96)")
    ap.add_argument("--points", type=int, default=32768, help="complex points per FID")
    ap.add_argument("--out", default=None)
    args = ap.parse_args()

    from distributed import Client, LocalCluster

    from nmrcheck.demo import build_demo_plate
    from nmrcheck.plate import read_manifest
    from nmrcheck.plate.runner import run_plates

    root = Path(args.out or tempfile.mkdtemp(prefix="nmrcheck-bench-dask-"))
    manifests = []
    for k in range(4):
        path = build_demo_plate(root / f"plate{k}", points=args.points, wells=plate_wells(args.wells), seed=11 + k)
        manifests.append(read_manifest(path))
    print(f"batch: 4 plates x {args.wells} wells x {args.points} points ({root})")

    times = {}
    for n in (1, 2):
        with LocalCluster(n_workers=n, threads_per_worker=1, processes=True, dashboard_address=None) as cluster, Client(cluster) as client:
            _warm(client)
            t = time.perf_counter()
            cpu = time.process_time()
            summaries = run_plates([(m, root / f"results-{n}-{k}") for k, m in enumerate(manifests)], executor=client.get_executor(pure=False), redo=True)
            times[n] = time.perf_counter() - t
            own_cpu = time.process_time() - cpu
        screened = sum(s.screened for s in summaries)
        print(f"Dask, {n} worker(s): {times[n]:.1f} s for {screened} wells (the process feeding the cluster and storing results used {own_cpu:.1f} s of CPU)")
    ratio = times[1] / times[2]
    print(f"speed-up 2 workers vs 1: {ratio:.2f}x (goal >= 1.8x on 2 free cores: {'met' if ratio >= 1.8 else 'not met'})")


if __name__ == "__main__":
    main()
