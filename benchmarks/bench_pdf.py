"""Benchmark: rendering report.pdf (and the table exports) of the demo, against the notebook stages.

Run on demand (not part of the test suite)::

    .venv/bin/python benchmarks/bench_pdf.py [--repeat 3]

Builds the invented demo once without a PDF (printing the time of each stage
notebook), then renders its report.pdf from report.html ``--repeat`` times
with :func:`calcs.pdf.write_pdf` and writes the exports with
:func:`calcs.exports.write_exports`, and prints the medians, the page count
and the PDF time as a share of the stage time.
"""

from __future__ import annotations

import argparse
import statistics
import sys
import tempfile
import time
from pathlib import Path

REPO = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(REPO))

from calcs.build import build  # noqa: E402
from calcs.exports import write_exports  # noqa: E402
from calcs.pdf import write_pdf  # noqa: E402


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--repeat", type=int, default=3)
    args = parser.parse_args()
    import pypdfium2

    with tempfile.TemporaryDirectory() as tmp:
        result = build(REPO / "demo_project", Path(tmp) / "P01", pdf=False)
        stages = sum(result.stage_seconds.values())
        print("stages: " + "  ".join(f"{s} {t:.2f} s" for s, t in result.stage_seconds.items())
              + f"  (total {stages:.2f} s)")
        pdf_times, export_times = [], []
        for run in range(args.repeat):
            t0 = time.perf_counter()
            path = write_pdf(result.folder)
            pdf_times.append(time.perf_counter() - t0)
            t0 = time.perf_counter()
            write_exports(result.folder)
            export_times.append(time.perf_counter() - t0)
            print(f"run {run + 1}: report.pdf {pdf_times[-1]:.2f} s, exports {export_times[-1]:.2f} s")
        pages = len(pypdfium2.PdfDocument(str(path)))
        size = path.stat().st_size / 1e6
        pdf_median = statistics.median(pdf_times)
        print(f"report.pdf: {pages} pages, {size:.2f} MB; render median of {args.repeat}: {pdf_median:.2f} s "
              f"(min {min(pdf_times):.2f}, max {max(pdf_times):.2f})")
        print(f"exports (CSV + xlsx): median {statistics.median(export_times):.2f} s")
        print(f"PDF render as a share of the notebook stages: {100 * pdf_median / stages:.0f} %")


if __name__ == "__main__":
    main()
