"""Benchmark: cold build of the demo report, and how much of it is kernel start-up and imports.

Run on demand (not part of the test suite)::

    .venv/bin/python benchmarks/bench_build.py [--repeat 3]

Each run measures, back to back, the "floor" — the same five stage notebooks
executed by papermill one after another with only their parameter and import
cells (kernel start-up + imports, no calculation) — and a cold build of the demo
without and with the PDF; it prints each run's times and ratios to its floor,
then the rebuilds with nothing changed and after a tariff change (without and
with the PDF, each against a cold build of the same kind; ``--rebuilds`` of each,
alternating, a new tariff each time; medians), and the medians of the runs.
The machine's speed drifts (a shared VM), hence ratios run by run.
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
    parser.add_argument("--repeat", type=int, default=3)
    parser.add_argument("--rebuilds", type=int, default=3, help="no-change and tariff rebuilds of each kind (medians)")
    args = parser.parse_args()
    # The machine's speed drifts by tens of per cent over minutes (a shared VM), so each run measures
    # the floor and both cold builds back to back, and the ratios are taken run by run.
    rows, stages = [], {s: [] for s in STAGES}
    for run in range(args.repeat):
        floor = floor_seconds()
        with tempfile.TemporaryDirectory() as tmp:
            plain = build(REPO / "demo_project", Path(tmp) / "P01", pdf=False)
        with tempfile.TemporaryDirectory() as tmp:
            full = build(REPO / "demo_project", Path(tmp) / "P01")
        for stage, seconds in plain.stage_seconds.items():
            stages[stage].append(seconds)
        rows.append((floor, plain.total_seconds, full.total_seconds))
        print(f"run {run + 1}: floor {floor:.2f} s; cold build without PDF {plain.total_seconds:.2f} s "
              f"({plain.total_seconds / floor:.2f} x floor), with PDF {full.total_seconds:.2f} s "
              f"({full.total_seconds / floor:.2f} x floor; PDF and exports {full.render_seconds:.2f} s)")
        print("       stages without PDF: " + "  ".join(f"{s} {t:.2f}" for s, t in plain.stage_seconds.items()))
    for pdf in (False, True):  # rebuilds against a cold build of the same kind, in one folder (its caches)
        with tempfile.TemporaryDirectory() as tmp:
            cold = build(REPO / "demo_project", Path(tmp) / "P01", pdf=pdf)
            unchanged, tariffs = [], []
            for i in range(args.rebuilds):  # each rebuild once per round: the machine's drift hits all alike
                t0 = time.perf_counter()
                build(REPO / "demo_project", Path(tmp) / "P01", pdf=pdf)
                unchanged.append(time.perf_counter() - t0)
                t0 = time.perf_counter()
                tariff = build(REPO / "demo_project", Path(tmp) / "P01-tariff", pdf=pdf,
                               overrides=[f"energy.electricity_price={0.30 + 0.01 * i:.2f}"])  # a new tariff each time
                tariffs.append(time.perf_counter() - t0)
                print(f"  tariff rebuild {i + 1}: {tariffs[-1]:.2f} s (energy stage {tariff.stage_seconds['energy']:.2f} s, "
                      f"report{' and PDF' if pdf else ''} {tariff.render_seconds:.2f} s)")
        kind = "with PDF" if pdf else "without PDF"
        share = 100 * statistics.median(tariffs) / cold.total_seconds
        print(f"cold build {kind} {cold.total_seconds:.2f} s; rebuild with nothing changed, median of "
              f"{args.rebuilds}: {statistics.median(unchanged):.2f} s (target < 3 s); rebuild after a tariff change, "
              f"median {statistics.median(tariffs):.2f} s (range {min(tariffs):.2f}–{max(tariffs):.2f}) = {share:.0f} % "
              f"of cold (target < 25 %)")
    med = statistics.median
    floors, plains, fulls = zip(*rows)
    print(f"medians of {args.repeat} runs: floor {med(floors):.2f} s (kernel start-up + imports of the five "
          f"templates, one after another); cold build without PDF {med(plains):.2f} s; with PDF {med(fulls):.2f} s")
    for stage, values in stages.items():
        print(f"  {stage:9s} median {med(values):.2f} s")
    print(f"ratio build / floor, median of the runs' ratios: {med(p / f for f, p, _ in rows):.2f} without PDF "
          f"(target ≤ 1.5; range {min(p / f for f, p, _ in rows):.2f}–{max(p / f for f, p, _ in rows):.2f}); "
          f"{med(x / f for f, _, x in rows):.2f} with the PDF, which the floor does not include")


if __name__ == "__main__":
    main()
