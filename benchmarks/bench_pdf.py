"""Benchmark: rendering report.pdf (and the table exports) of the demo, against the notebook stages.

Run on demand (not part of the test suite)::

    .venv/bin/python benchmarks/bench_pdf.py [--repeat 3]

Builds the invented demo once without a PDF (printing the time of each stage
notebook), then renders report.pdf from its report.html ``--repeat`` times each
way — in parts with the two helpers started ahead (as in a build), in parts with
helpers started for the rendering (as when signing), and as one document — and
writes the exports with :func:`calcs.exports.write_exports`; prints the medians,
the page count and sizes, and the PDF time as a share of the stage time. No
part cache is used.
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

from calcs import pdf_parts  # noqa: E402
from calcs.build import build  # noqa: E402
from calcs.exports import write_exports  # noqa: E402
from calcs.pdf import render_pdf, render_whole  # noqa: E402


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
        page = (result.folder / "report.html").read_text(encoding="utf-8")
        times: dict[str, list[float]] = {"parts, helpers started ahead (a build)": [],
                                         "parts, helpers started for it (signing)": [], "one document": []}
        export_times = []
        target = result.folder / "bench.pdf"
        for run in range(args.repeat):
            printers = pdf_parts.start()
            time.sleep(3)  # their import and fonts, as during a build's stages
            t0 = time.perf_counter()
            render_pdf(page, target, printers=printers)
            times["parts, helpers started ahead (a build)"].append(time.perf_counter() - t0)
            pdf_parts.close(printers)
            t0 = time.perf_counter()
            render_pdf(page, target)
            times["parts, helpers started for it (signing)"].append(time.perf_counter() - t0)
            t0 = time.perf_counter()
            render_whole(page, result.folder / "whole.pdf")
            times["one document"].append(time.perf_counter() - t0)
            t0 = time.perf_counter()
            write_exports(result.folder)
            export_times.append(time.perf_counter() - t0)
            print(f"run {run + 1}: " + ", ".join(f"{k} {v[-1]:.2f} s" for k, v in times.items())
                  + f", exports {export_times[-1]:.2f} s")
        pages = len(pypdfium2.PdfDocument(str(target)))
        for name, values in times.items():
            print(f"report.pdf {name}: median {statistics.median(values):.2f} s (min {min(values):.2f}, "
                  f"max {max(values):.2f})")
        size, whole = target.stat().st_size / 1e6, (result.folder / "whole.pdf").stat().st_size / 1e6
        print(f"{pages} pages; {size:.2f} MB in parts, {whole:.2f} MB as one document")
        print(f"exports (CSV + xlsx): median {statistics.median(export_times):.2f} s")
        parts = statistics.median(times["parts, helpers started ahead (a build)"])
        print(f"PDF in a build as a share of the notebook stages: {100 * parts / stages:.0f} %")


if __name__ == "__main__":
    main()
