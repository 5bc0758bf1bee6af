"""The ``freerun`` command line: parses, calls, reports. No calculations here.

Exit codes (the one place they are defined):

* 0 — done.
* 1 — checks failed: ``freerun verify`` found a file that does not match the
  manifest or a re-run that does not reproduce results.json; ``freerun compare
  --fail-above PCT`` found a headline result that moved by more than PCT %.
* 2 — bad input or usage: a malformed project or weather file, a wrong option,
  a missing or damaged build folder, a refused operation (signing a build whose
  files no longer match its manifest, signing out of order or twice, the same
  person signing two roles, rebuilding a signed build).
* 3 — a stage notebook failed while executing (the partial build is kept).
"""

from __future__ import annotations

import argparse
import os
import shutil
import sys
from importlib import resources
from pathlib import Path

from . import __version__
from . import screen_cli as _screen_verb
from .screen_cli import _positive_int
from .errors import FreerunError, StageError

EXIT_OK, EXIT_CHECKS_FAILED, EXIT_BAD_INPUT, EXIT_STAGE_FAILED = 0, 1, 2, 3


class _Parser(argparse.ArgumentParser):
    """argparse that reports usage errors in one line with exit code 2."""

    def error(self, message: str) -> None:  # type: ignore[override]
        self.exit(EXIT_BAD_INPUT, f"freerun: {message} (see `{self.prog} --help`)\n")


def _parser() -> argparse.ArgumentParser:
    parser = _Parser(
        prog="freerun",
        description="Mixed-mode ventilation feasibility reports from one project file.",
        epilog="Exit codes: 0 done; 1 checks failed; 2 bad input or usage; 3 a stage failed.",
    )
    parser.add_argument("--version", action="version", version=f"freerun {__version__}")
    verbs = parser.add_subparsers(dest="verb", metavar="VERB", parser_class=_Parser)

    new = verbs.add_parser(
        "new", help="start a project folder",
        description="Write a new project folder DIR holding a commented starter project.toml. "
                    "Reads nothing; refuses to overwrite an existing project.toml.",
    )
    new.add_argument("folder", metavar="DIR")

    build = verbs.add_parser(
        "build", help="build the report of a project",
        description="Read PROJECT_DIR/project.toml and its weather file, run the five stage notebooks "
                    "(climate, loads, openings, comfort, energy) and write report.html, report.pdf, exports/ "
                    "(every report table as CSV and one .xlsx workbook), results.json, "
                    "manifest.json, the executed notebooks and data tables into the build folder "
                    "(default build/<job number>/<revision>/ under the current folder; with --set, "
                    "build/<job number>/<revision>-check/).",
    )
    build.add_argument("project", metavar="PROJECT_DIR")
    build.add_argument("--out", metavar="DIR", help="build folder to write (replaced only when the build succeeds)")
    build.add_argument(
        "--set", dest="overrides", action="append", default=[], metavar="KEY.PATH=VALUE",
        help="override one project value for a check run, e.g. --set zones.north.floor_area=420 "
             "(validated like the file; the project file is never changed)",
    )
    build.add_argument(
        "--new-revision", metavar="REV",
        help="build the project as revision REV into its own folder (build/<job number>/REV/), e.g. after the "
             "previous revision was signed; recorded in manifest.json as revision_override; the project file is "
             "never changed",
    )
    build.add_argument("--no-pdf", action="store_true",
                       help="write no report.pdf (report.html and the table exports in exports/ are always written)")
    build.add_argument("--fresh", action="store_true",
                       help="execute every stage, reusing nothing from the stage cache (build/<job>/.stage-cache/)")
    build.add_argument("--jobs", type=_positive_int, metavar="N",
                       help="worker processes for the sensitivity and uncertainty batches (default: CPU count)")
    build.add_argument("--scheduler", metavar="ADDRESS",
                       help="run those batches on a Dask distributed cluster: a scheduler address (tcp://host:8786) "
                            "or 'local-cluster' to start one on this machine (needs the optional dask extra)")
    build.add_argument("--quiet", action="store_true", help="print no progress")

    compare = verbs.add_parser(
        "compare", help="compare two builds: inputs that differ, results that moved",
        description="Read BUILD_A and BUILD_B (each a build folder: manifest.json, inputs/project.resolved.json, "
                    "results.json) and print the inputs that differ (key path, A, B; input files by SHA-256) and "
                    "the results that moved (key, A, B, change, % change relative to A). Writes nothing unless "
                    "--html or --json is given. Headline results are the numbers directly under a key of "
                    "results.json (not list elements such as monthly values, not true/false flags, not counts of "
                    "hours).",
        epilog="Exit codes: 0 compared (and nothing above --fail-above); 1 a headline result moved by more than "
               "--fail-above PCT; 2 a build folder is missing or damaged, or a wrong option.",
    )
    compare.add_argument("build_a", metavar="BUILD_A")
    compare.add_argument("build_b", metavar="BUILD_B")
    compare.add_argument("--fail-above", metavar="PCT", type=_percent,
                         help="exit 1 when any headline result moved by more than PCT %% (a move away from 0 "
                              "always counts)")
    compare.add_argument("--html", metavar="FILE", help="also write the comparison as a self-contained HTML page")
    compare.add_argument("--json", metavar="FILE", help="also write the comparison as JSON")

    sign = verbs.add_parser(
        "sign", help="sign a build as prepared, checked or approved",
        description="Check BUILD's files against its manifest.json, then record the signature (role, name, note, "
                    "time, the manifest's calculation digest) in BUILD/signatures.json and re-render "
                    "BUILD/report.html (with report.pdf if the build has one, and exports/) with the signatures "
                    "and status (DRAFT -> CHECKED -> APPROVED) on the cover. "
                    "Roles sign in the order prepared, checked, approved, each once; one person signs one role "
                    "(the checker is not the preparer, the approver is neither). Refused for a check run, and "
                    "when any file no longer matches the manifest. Changes no calculation file.",
    )
    sign.add_argument("build", metavar="BUILD")
    sign.add_argument("--role", required=True, choices=("prepared", "checked", "approved"))
    sign.add_argument("--name", required=True, metavar="NAME", help="the signatory's name as it appears on the cover")
    sign.add_argument("--note", default="", metavar="TEXT", help="optional remark shown under the name")

    verify = verbs.add_parser(
        "verify", help="re-hash a build against its manifest and re-execute it",
        description="Re-hash every file of BUILD listed in its manifest.json (reporting each missing, changed or "
                    "added file), check the signatures' digests, then re-execute the calculation from "
                    "BUILD/inputs/ in a temporary folder and confirm that results.json comes out identical "
                    "(values compared exactly) and every data table byte-identical. Never writes into BUILD.",
        epilog="Exit codes: 0 both checks hold (with --files-only: the files match); 1 a file does not match or "
               "the re-run differs; 2 BUILD is missing or not a build folder, or a wrong option.",
    )
    verify.add_argument("build", metavar="BUILD")
    verify.add_argument("--files-only", action="store_true",
                        help="only re-hash the files (fast); no re-execution")
    verify.add_argument("--keep", metavar="DIR",
                        help="keep the re-executed build in DIR (a new folder) for inspection")
    verify.add_argument("--quiet", action="store_true", help="print no progress of the re-run")

    _screen_verb.add_parser(verbs)

    verbs.add_parser(
        "schema", help="list every project-file key",
        description="Print every key of project.toml with its type, unit, default, meaning and source. Reads nothing.",
    )
    return parser


def main(argv: list[str] | None = None) -> int:
    parser = _parser()
    args = parser.parse_args(argv)
    if args.verb is None:
        parser.print_help()
        return EXIT_BAD_INPUT
    try:
        verbs = {"new": _new, "build": _build, "schema": _schema, "compare": _compare, "sign": _sign,
                 "verify": _verify, "screen": _screen_verb.run}
        return verbs[args.verb](args)
    except StageError as exc:
        print(f"freerun: {exc}", file=sys.stderr)
        return EXIT_STAGE_FAILED
    except FreerunError as exc:
        print(f"freerun: {exc}", file=sys.stderr)
        return EXIT_BAD_INPUT
    except KeyboardInterrupt:
        print("freerun: interrupted", file=sys.stderr)
        return 130


def _new(args: argparse.Namespace) -> int:
    folder = Path(args.folder)
    target = folder / "project.toml"
    if target.exists():
        msg = f"{target}: already exists; choose another folder (nothing was changed)"
        raise FreerunError(msg)
    folder.mkdir(parents=True, exist_ok=True)
    (folder / "weather").mkdir(exist_ok=True)
    starter = resources.files("calcs") / "starter_project.toml"
    with resources.as_file(starter) as src:
        shutil.copyfile(src, target)
    print(f"wrote {target}; put your EPW weather file in {folder / 'weather'} and edit site.weather_file")
    return EXIT_OK


def _build(args: argparse.Namespace) -> int:
    from .build import build

    def say(text: str) -> None:
        if not args.quiet:
            print(text, file=sys.stderr, flush=True)

    result = build(args.project, args.out, overrides=args.overrides, new_revision=args.new_revision,
                   pdf=not args.no_pdf, fresh=args.fresh, progress=say, scheduler=args.scheduler, jobs=args.jobs)
    print(result.folder / "report.html")
    return EXIT_OK


def _percent(text: str) -> float:
    try:
        value = float(text)
    except ValueError:
        value = float("nan")
    if not value >= 0 or value == float("inf"):
        msg = f"{text!r} is not a percentage; give a finite number ≥ 0, e.g. 5"
        raise argparse.ArgumentTypeError(msg)
    return value


def _write_atomic(path: Path, text: str, option: str) -> None:
    try:
        path.parent.mkdir(parents=True, exist_ok=True)
        tmp = path.with_name(f".{path.name}.tmp")
        tmp.write_text(text, encoding="utf-8")
        os.replace(tmp, path)
    except OSError as exc:
        msg = f"{option} {path}: cannot be written ({exc.strerror})"
        raise FreerunError(msg) from None


def _compare(args: argparse.Namespace) -> int:
    from .compare import above, compare_builds, read_build, render_page, terminal_lines
    from .stage import dump_json

    a, b = read_build(args.build_a), read_build(args.build_b)
    comparison = compare_builds(a, b)
    names = (args.build_a, args.build_b)
    print("\n".join(terminal_lines(comparison, names)))
    if args.html:
        _write_atomic(Path(args.html), render_page(comparison, names), "--html")
        print(f"comparison page written to {args.html}")
    if args.json:
        _write_atomic(Path(args.json), dump_json(comparison), "--json")
    if args.fail_above is not None:
        moved = above(comparison, args.fail_above)
        if moved:
            keys = ", ".join(row["key"] for row in moved[:5]) + (" ..." if len(moved) > 5 else "")
            print(f"freerun: {len(moved)} headline result(s) moved by more than {args.fail_above:g} %: {keys}",
                  file=sys.stderr)
            return EXIT_CHECKS_FAILED
        print(f"no headline result moved by more than {args.fail_above:g} %")
    return EXIT_OK


def _sign(args: argparse.Namespace) -> int:
    from .signoff import sign

    done = sign(args.build, args.role, args.name, args.note)
    print(f"signed {args.build} as {args.role} by {done['signatures'][-1]['name']}; status {done['status']}; "
          f"report re-rendered: {done['report']}")
    return EXIT_OK


def _verify(args: argparse.Namespace) -> int:
    from .verify import report_lines, verify

    def say(text: str) -> None:
        if not args.quiet:
            print(text, file=sys.stderr, flush=True)

    result = verify(args.build, files_only=args.files_only, keep=args.keep, progress=say)
    print("\n".join(report_lines(result)))
    if result.passed or (args.files_only and not result.file_problems):
        return EXIT_OK
    return EXIT_CHECKS_FAILED


def _schema(args: argparse.Namespace) -> int:
    from .project import schema_rows

    rows = schema_rows()
    for row in rows:
        head = f"{row['key']}  ({row['type']}"
        head += f", {row['unit']}" if row["unit"] else ""
        head += f", default {row['default']})"
        print(head)
        print(f"    {row['meaning']}")
        if row["source"]:
            print(f"    source: {row['source']}")
    return EXIT_OK


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
