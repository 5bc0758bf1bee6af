"""The ``freerun screen`` verb: options, then calls :mod:`calcs.screen` and :mod:`calcs.screen_page`.

Kept out of :mod:`calcs.cli` so that the main parser stays small; building the parser imports
only the project schema (for the defaults it quotes); pandas and the climate code load when the
verb runs, and Dask only with ``--scheduler``.
"""

from __future__ import annotations

import argparse
import datetime as dt
import re
import sys

__all__ = ["add_parser", "run"]

_HOURS = re.compile(r"^(\d{1,2})(?::00)?-(\d{1,2})(?::00)?$")
_DAYS = ("mon", "tue", "wed", "thu", "fri", "sat", "sun")


def _hours(text: str) -> tuple[int, int]:
    m = _HOURS.match(text.strip())
    if not m:
        msg = f"--hours {text!r}: write the occupied hours as START-END in whole hours, e.g. 08-18"
        raise argparse.ArgumentTypeError(msg)
    start, end = int(m.group(1)), int(m.group(2))
    if not (0 <= start <= 23 and 1 <= end <= 24 and start < end):
        msg = f"--hours {text!r}: need 0 <= START < END <= 24 (occupancy across midnight is not supported)"
        raise argparse.ArgumentTypeError(msg)
    return start, end


def _days(text: str) -> tuple[str, ...]:
    days = tuple(d.strip().lower() for d in text.split(",") if d.strip())
    bad = [d for d in days if d not in _DAYS]
    if not days or bad:
        msg = f"--days {text!r}: give a comma-separated list of {','.join(_DAYS)}"
        raise argparse.ArgumentTypeError(msg)
    return days


def _dates(text: str) -> tuple[str, ...]:
    out = []
    for item in (s.strip() for s in text.split(",") if s.strip()):
        try:
            out.append(dt.date.fromisoformat(item).isoformat())
        except ValueError:
            msg = f"--holidays {text!r}: {item!r} is not a date YYYY-MM-DD"
            raise argparse.ArgumentTypeError(msg) from None
    return tuple(out)


def _positive_int(text: str) -> int:
    try:
        value = int(text)
    except ValueError:
        value = 0
    if value < 1:
        msg = f"--jobs {text!r}: must be a whole number of worker processes, 1 or more"
        raise argparse.ArgumentTypeError(msg)
    return value


def _year(text: str) -> int:
    try:
        return int(text)
    except ValueError:
        msg = f"--year {text!r}: must be a calendar year, e.g. 2026"
        raise argparse.ArgumentTypeError(msg) from None


def add_parser(verbs) -> argparse.ArgumentParser:
    """Add the ``screen`` verb to the main parser's sub-parsers (defaults quoted from the project schema)."""
    from .project import Occupancy, Outdoor

    occ, out = Occupancy(), Outdoor()
    p = verbs.add_parser(
        "screen", help="rank the climates of many weather files for natural ventilation",
        description="Read each WEATHER_FILE (EPW or freerun CSV; a folder stands for the .epw and .csv files in "
                    "it) and rank them by the share of occupied hours whose outdoor air suits natural "
                    "ventilation, with the annual mean, the shares in and around the outdoor band, the months "
                    "that can open up and the night-cooling potential. Prints the ranked table and writes "
                    "screen.csv and screen.html (a self-contained page with a chart) into --out. Files are "
                    "screened in parallel; a bad file is reported with its reason and skipped. Settings not "
                    "given take the project-file defaults (see `freerun schema`, sections occupancy and "
                    "outdoor). No report is built; no project file is read.",
        epilog="Exit codes: 0 at least one file was screened (skipped files are listed); 2 no file could be "
               "screened, or a wrong option or future-climate file (nothing is written then).",
    )
    p.add_argument("files", nargs="+", metavar="WEATHER_FILE")
    p.add_argument("--band", nargs=2, type=float, metavar=("LOW", "HIGH"),
                   help=f"outdoor dry-bulb band [°C] (default {out.band_low:g} {out.band_high:g}, common practice, no source)")
    p.add_argument("--days", type=_days, metavar="mon,tue,...", help=f"occupied days (default {','.join(occ.days)})")
    p.add_argument("--hours", type=_hours, metavar="START-END", help=f"occupied hours (default {occ.start_hour:02d}-{occ.end_hour:02d})")
    p.add_argument("--holidays", type=_dates, default=(), metavar="DATE,...",
                   help="dates without occupancy, YYYY-MM-DD, in the calendar year")
    p.add_argument("--year", type=_year, metavar="YEAR", help=f"calendar year the files are stamped onto (default {occ.calendar_year})")
    p.add_argument("--dew-max", type=float, metavar="C", help=f"dew point ceiling [°C] (default {out.dew_point_max:g})")
    p.add_argument("--wind-max", type=float, metavar="M_S", help=f"wind speed ceiling [m/s] (default {out.wind_speed_max:g})")
    p.add_argument("--rain-max", type=float, metavar="MM_H", help=f"rain ceiling [mm/h] (default {out.rain_max:g})")
    p.add_argument("--night-below", type=float, metavar="C",
                   help=f"a night is useful for night cooling when its minimum is below this [°C] "
                        f"(default {out.night_cooling_below:g})")
    p.add_argument("--future", metavar="FUTURE.toml",
                   help="also screen every file morphed to a future climate: a TOML file with label, source and "
                        "12 monthly changes each of delta_mean, delta_max, delta_min [K]")
    p.add_argument("--out", default="screen", metavar="DIR", help="folder for screen.csv and screen.html (default ./screen/)")
    p.add_argument("--jobs", type=_positive_int, metavar="N", help="worker processes (default: CPU count)")
    p.add_argument("--scheduler", metavar="ADDRESS",
                   help="run on a Dask distributed cluster: a scheduler address (tcp://host:8786) or "
                        "'local-cluster' to start one on this machine (needs the optional dask extra)")
    return p


def run(args: argparse.Namespace) -> int:
    """Carry out ``freerun screen``; returns the exit code (FreerunError propagates to the caller)."""
    from .cli import EXIT_BAD_INPUT, EXIT_OK
    from .morph import load_future_climate
    from .screen import screen_files, screen_options, weather_paths
    from .screen_page import terminal_table, write_outputs

    future = load_future_climate(args.future) if args.future else None
    options = screen_options(band=args.band, days=args.days, hours=args.hours, holidays=args.holidays,
                             year=args.year, dew_max=args.dew_max, wind_max=args.wind_max,
                             rain_max=args.rain_max, night_below=args.night_below, future=future)
    paths = weather_paths(args.files)
    frame, errors = screen_files(paths, options, scheduler=args.scheduler, jobs=args.jobs)
    print(terminal_table(frame, errors, options))
    if frame.empty:
        print(f"freerun: none of the {len(paths)} weather file{'s' if len(paths) != 1 else ''} could be screened "
              f"(reasons above); nothing written", file=sys.stderr)
        return EXIT_BAD_INPUT
    csv_path, html_path = write_outputs(frame, errors, options, args.out)
    print(f"wrote {csv_path} and {html_path}")
    return EXIT_OK
