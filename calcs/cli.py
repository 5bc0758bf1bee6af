"""The ``freerun`` command line: parses, calls, reports. No calculations here.

Exit codes (the one place they are defined):

* 0 — done.
* 1 — checks failed (a comparison or verification found differences).
* 2 — bad input or usage: a malformed project or weather file, a wrong option.
* 3 — a stage notebook failed while executing (the partial build is kept).
"""

from __future__ import annotations

import argparse
import shutil
import sys
from importlib import resources
from pathlib import Path

from . import __version__
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
                    "(climate, loads, openings, comfort, energy) and write report.html, results.json, "
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
    build.add_argument("--quiet", action="store_true", help="print no progress")

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
        return {"new": _new, "build": _build, "schema": _schema}[args.verb](args)
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

    result = build(args.project, args.out, overrides=args.overrides, progress=say)
    print(result.folder / "report.html")
    return EXIT_OK


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
