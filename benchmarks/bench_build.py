"""Benchmark: cold build of the demo report, and how much of it is kernel start-up and imports.

Run on demand (not part of the test suite)::

    .venv/bin/python benchmarks/bench_build.py [--repeat 3]

Prints, for each run, the whole build time and the time per stage; then the
"floor": the same five stage notebooks executed by papermill with only their
import cells (kernel start-up + imports, no calculation), and the ratio of the
build to that floor.
"""

from __future__ import annotations

import argparse
import statistics
import sys
import tempfile
import time
from pathlib import Path

import nbformat

REPO = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(REPO))

from calcs.build import build  # noqa: E402
from calcs.paths import STAGES, stage_template  # noqa: E402


def floor_seconds() -> float:
    """Execute each stage template cut down to its parameters and import cells."""
    import papermill

    total = 0.0
    with tempfile.TemporaryDirectory() as tmp:
        for stage in STAGES:
            nb = nbformat.read(str(stage_template(stage)), as_version=4)
            cells = [c for c in nb.cells if c.cell_type == "code"]
            keep = []
            for cell in cells:
                lines = [ln for ln in cell.source.splitlines() if ln.startswith(("import ", "from "))]
                if "parameters" in cell.metadata.get("tags", []):
                    keep.append(nbformat.v4.new_code_cell(cell.source, metadata=cell.metadata))
                elif lines:
                    keep.append(nbformat.v4.new_code_cell("\n".join(lines)))
            nb.cells = keep
            src = Path(tmp) / f"{stage}-imports.ipynb"
            nbformat.write(nb, str(src))
            t0 = time.perf_counter()
            papermill.execute_notebook(str(src), str(src.with_suffix(".out.ipynb")), kernel_name="python3",
                                       progress_bar=False, extra_arguments=["--IPKernelApp.log_level=ERROR"])
            total += time.perf_counter() - t0
    return total


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--repeat", type=int, default=2)
    args = parser.parse_args()
    totals, stages = [], {s: [] for s in STAGES}
    for run in range(args.repeat):
        with tempfile.TemporaryDirectory() as tmp:
            result = build(REPO / "demo_project", Path(tmp) / "P01")
        totals.append(result.total_seconds)
        for stage, seconds in result.stage_seconds.items():
            stages[stage].append(seconds)
        print(f"run {run + 1}: cold build {result.total_seconds:.2f} s  "
              + "  ".join(f"{s} {t:.2f}" for s, t in result.stage_seconds.items()))
    with tempfile.TemporaryDirectory() as tmp:
        cold = build(REPO / "demo_project", Path(tmp) / "P01", pdf=False)
        t0 = time.perf_counter()
        build(REPO / "demo_project", Path(tmp) / "P01", pdf=False)
        unchanged = time.perf_counter() - t0
        t0 = time.perf_counter()
        build(REPO / "demo_project", Path(tmp) / "P01-tariff", pdf=False, overrides=["energy.electricity_price=0.3"])
        tariff = time.perf_counter() - t0
    print(f"cold build without PDF {cold.total_seconds:.2f} s; rebuild with nothing changed {unchanged:.2f} s "
          f"(target < 3 s); rebuild after a tariff change {tariff:.2f} s ({100 * tariff / cold.total_seconds:.0f} % "
          f"of cold; target < 25 %)")
    floors = [floor_seconds() for _ in range(args.repeat)]
    build_median, floor_median = statistics.median(totals), statistics.median(floors)
    print(f"cold build, median of {args.repeat}: {build_median:.2f} s (min {min(totals):.2f}, max {max(totals):.2f})")
    for stage, values in stages.items():
        print(f"  {stage:9s} median {statistics.median(values):.2f} s")
    print(f"floor (kernel start-up + imports of the five templates): median {floor_median:.2f} s")
    print(f"share of the build that is start-up and imports: {100 * floor_median / build_median:.0f} %")
    print(f"ratio build / floor: {build_median / floor_median:.2f} (with PDF); "
          f"{cold.total_seconds / floor_median:.2f} without PDF (target ≤ 1.5)")


if __name__ == "__main__":
    main()
