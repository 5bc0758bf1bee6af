"""Benchmark: the energy stage's Monte Carlo batch (500 samples of the demo, 3 zones each).

Run on demand (not part of the test suite)::

    .venv/bin/python benchmarks/bench_uncertainty.py [--samples 500] [--repeat 2]

Builds the demo once (to have the climate, loads and openings outputs), then times the batch the
energy template runs: assembling the columns, the free-running year (window control, fixed-point
per hour), the changeover, the two operating years with set-points, and the energy accounts.
"""

from __future__ import annotations

import argparse
import statistics
import sys
import tempfile
import time
from pathlib import Path

import numpy as np

REPO = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(REPO))

from calcs import batch  # noqa: E402
from calcs.build import build  # noqa: E402
from calcs.project import load_project  # noqa: E402
from calcs.stage import read_table  # noqa: E402


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--samples", type=int, default=500)
    parser.add_argument("--repeat", type=int, default=2)
    parser.add_argument("--from-build", type=Path, help="an existing build folder of the demo (skips the build)")
    args = parser.parse_args()
    with tempfile.TemporaryDirectory() as tmp:
        out = args.from_build or build(REPO / "demo_project", Path(tmp) / "P01", pdf=False).folder
        project = load_project(out / "inputs" / "project.resolved.json")
        ch = read_table(out / "climate" / "hourly.csv")
        gains = read_table(out / "loads" / "hourly_gains.csv")
        import json

        loads = json.loads((out / "loads" / "results.json").read_text())["loads"]
        openings = read_table(out / "openings" / "zones.csv", index_col="zone")
    rng = np.random.default_rng(1)
    variants = [{"gains_scale": float(g), "solar_scale": float(s), "area_scale": float(a)}
                for g, s, a in rng.normal(1, 0.15, (args.samples, 3)).clip(0.3, 3)]
    temp_air = ch["temp_air"].to_numpy()
    times = {k: [] for k in ("assemble", "free_running", "changeover", "operating_years", "accounts", "total")}
    for _ in range(args.repeat):
        t0 = time.perf_counter()
        b = batch.build_batch(project, ch, gains, loads, openings, variants)
        t1 = time.perf_counter()
        free = batch.free_running(b, project, temp_air)
        t2 = time.perf_counter()
        modes = batch.changeover(b, project, ch, free.result.temp_op)
        t3 = time.perf_counter()
        years = batch.operating_years(b, project, temp_air, modes)
        t4 = time.perf_counter()
        batch.energy_accounts(b, project, ch.index, temp_air, years, modes)
        t5 = time.perf_counter()
        for key, value in zip(times, (t1 - t0, t2 - t1, t3 - t2, t4 - t3, t5 - t4, t5 - t0)):
            times[key].append(value)
    columns = b.zone.size
    for key, values in times.items():
        print(f"{key:16s} median {statistics.median(values):6.2f} s")
    total = statistics.median(times["total"])
    print(f"{args.samples} samples × {len(project.zones)} zones = {columns} columns × 8760 h: {total:.1f} s "
          f"({3 * columns * 8760 / total / 1e6:.2f} M zone-hours/s over the three simulations)")


if __name__ == "__main__":
    main()
