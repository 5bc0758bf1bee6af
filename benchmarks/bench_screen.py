"""Throughput of ``freerun screen`` (calcs.screen.screen_files): run on demand, not a test.

Generates N weather files (default 100) into a temporary folder: copies of pvlib's bundled
Greensboro TMY3 file (public NREL data) with the dry bulb shifted by a seeded random offset of
−3…+3 K, the dew point by the same offset capped at the dry bulb, and the wind speed scaled by
0.8…1.2. The generated files are benchmark load only, not weather of any real place; their
location names say "generated". Then it times ``screen_files`` on them and prints files per
second: the local process pool (``--jobs``, default the CPU count) and, with ``--dask``, a Dask
LocalCluster of the same size (cluster start-up included and reported separately).

Informational target: at least 10 files per second on the 2-core development machine.

Usage::

    .venv/bin/python benchmarks/bench_screen.py [--files 100] [--repeat 3] [--jobs 2] [--dask]
"""

from __future__ import annotations

import argparse
import os
import statistics
import sys
import tempfile
import time
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parents[1] / "tests"))

from public_data import tmy3_frame  # noqa: E402

from calcs import screen  # noqa: E402
from calcs.weather import write_epw  # noqa: E402


def generate(folder: Path, n: int, seed: int = 11) -> list[str]:
    """Write ``n`` perturbed copies of the Greensboro TMY3 year as EPW files; return their paths."""
    frame, site = tmy3_frame("723170TYA.CSV", year=2026)
    rng = np.random.default_rng(seed)
    paths = []
    for i in range(n):
        offset = rng.uniform(-3.0, 3.0)
        scale = rng.uniform(0.8, 1.2)
        f = frame.copy()
        f["temp_air"] = frame["temp_air"] + offset
        f["temp_dew"] = np.minimum(frame["temp_dew"] + offset, f["temp_air"])
        f["wind_speed"] = frame["wind_speed"] * scale
        path = folder / f"generated_{i:03d}.epw"
        write_epw(f, path, **{**site, "location": f"Generated copy {i:03d} of Greensboro TMY3 ({offset:+.1f} K)"},
                  comment="generated benchmark load: perturbed copy of public TMY3 data, not a real place")
        paths.append(str(path))
    return paths


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    ap.add_argument("--files", type=int, default=100)
    ap.add_argument("--repeat", type=int, default=3)
    ap.add_argument("--jobs", type=int, default=os.cpu_count() or 1)
    ap.add_argument("--dask", action="store_true", help="also time a Dask LocalCluster")
    args = ap.parse_args()

    options = screen.screen_options()
    with tempfile.TemporaryDirectory() as tmp:
        t0 = time.perf_counter()
        paths = generate(Path(tmp), args.files)
        print(f"generated {len(paths)} EPW files in {time.perf_counter() - t0:.1f} s")

        one = time.perf_counter()
        screen.screen_file(paths[0], options)
        print(f"one file in this process: {time.perf_counter() - one:.3f} s")

        times = []
        for _ in range(args.repeat):
            t = time.perf_counter()
            frame, errors = screen.screen_files(paths, options, jobs=args.jobs)
            times.append(time.perf_counter() - t)
            assert len(frame) == len(paths) and not errors
        med = statistics.median(times)
        print(f"local process pool, {args.jobs} workers: {len(paths) / med:.1f} files/s "
              f"(median {med:.2f} s of {args.repeat}: {', '.join(f'{x:.2f}' for x in times)})")

        if args.dask:
            from dask.distributed import Client, LocalCluster

            t = time.perf_counter()
            with LocalCluster(n_workers=args.jobs, threads_per_worker=1, dashboard_address=None) as cluster, \
                    Client(cluster):
                start = time.perf_counter() - t
                times = []
                for _ in range(args.repeat):
                    t = time.perf_counter()
                    frame_d, errors = screen.screen_files(paths, options, scheduler=cluster.scheduler_address)
                    times.append(time.perf_counter() - t)
                med = statistics.median(times)
                same = frame_d.equals(frame)
            print(f"dask LocalCluster, {args.jobs} workers (start-up {start:.1f} s, not counted): "
                  f"{len(paths) / med:.1f} files/s (median {med:.2f} s); same table as local: {same}")


if __name__ == "__main__":
    main()
