"""Quick climate ranking of many weather files (``freerun screen``), without building reports.

Each file is read and checked by :func:`calcs.weather.read_weather` and summarised by
:func:`calcs.keyfigures.climate_key_figures` (the climate stage's own calculation), optionally
also after morphing to a future climate (:func:`calcs.morph.morph_weather`). A bad file gives
an error row naming the file and the problem; it never stops the run.

Files are screened in parallel by :func:`calcs.sweep.map_chunks`: on a local process pool by
default, or on a Dask distributed cluster when a scheduler is named (the optional ``dask``
extra; imported only then).
"""

from __future__ import annotations

import os
from collections.abc import Iterable, Sequence
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import pandas as pd
import pydantic

from calcs import sweep
from calcs.errors import FreerunError, ProjectError
from calcs.keyfigures import climate_key_figures
from calcs.morph import FutureClimate, morph_weather
from calcs.project import Occupancy, Outdoor
from calcs.weather import read_weather

__all__ = [
    "ScreenOptions",
    "screen_options",
    "screen_file",
    "screen_files",
    "weather_paths",
    "LOCAL_CLUSTER",
    "COLUMNS",
    "FUTURE_COLUMNS",
]

#: ``scheduler`` value that starts a Dask LocalCluster on this machine.
LOCAL_CLUSTER = sweep.LOCAL_CLUSTER

#: Columns of a screened row, in order (unit after the last underscore; ``pct`` of occupied
#: hours, ``night_cooling_pct`` of occupied days).
COLUMNS = (
    "file", "location", "latitude", "longitude", "hours", "annual_mean_C", "mean_diurnal_range_K",
    "occupied_hours", "occupied_below_band_pct", "occupied_in_band_pct", "occupied_above_band_pct",
    "occupied_nv_suitable_pct", "months_can_open_count", "months_can_open", "night_cooling_pct",
    "rain_assessed", "weather_filled_hours",
)
#: Extra columns when a future climate is given (figures of the morphed year).
FUTURE_COLUMNS = (
    "future_annual_mean_C", "future_mean_diurnal_range_K", "future_occupied_in_band_pct",
    "future_occupied_nv_suitable_pct", "future_months_can_open_count", "future_months_can_open",
    "future_night_cooling_pct",
)
_WEATHER_SUFFIXES = (".epw", ".csv")


@dataclass(frozen=True)
class ScreenOptions:
    """What every file is screened against (picklable: sent to worker processes).

    Attributes
    ----------
    occupancy : calcs.project.Occupancy
        Occupied days, hours, holidays and the calendar year the files are stamped onto.
    outdoor : calcs.project.Outdoor
        Outdoor band, dew-point, wind and rain limits, night window and threshold.
    future : calcs.morph.FutureClimate or None
        Monthly changes applied to every file, or None.
    leap_day : {"drop", "keep"}
        What to do with Feb 29 in a file that has one.
    """

    occupancy: Occupancy = Occupancy()
    outdoor: Outdoor = Outdoor()
    future: FutureClimate | None = None
    leap_day: str = "drop"


def _one_line(exc: pydantic.ValidationError, names: dict[str, str]) -> str:
    err = exc.errors()[0]
    key = str(err["loc"][0]) if err["loc"] else ""
    reason = err["msg"]
    if reason.startswith("Value error, "):
        reason = reason[len("Value error, "):]
    option = names.get(key, "")
    if not option:  # a check across fields: name the option it concerns
        option = next((o for k, o in names.items() if k in reason), "")
    if option and "input" in err and not isinstance(err["input"], dict):
        return f"{option} {err['input']!r}: {reason}"
    return f"{option or 'screen options'}: {reason}"


def screen_options(*, band: Sequence[float] | None = None, days: Sequence[str] | None = None,
                   hours: tuple[int, int] | None = None, holidays: Sequence[str] = (),
                   year: int | None = None, dew_max: float | None = None, wind_max: float | None = None,
                   rain_max: float | None = None, night_below: float | None = None,
                   future: FutureClimate | None = None, leap_day: str = "drop") -> ScreenOptions:
    """Build :class:`ScreenOptions`; anything not given takes the project file's default.

    Parameters
    ----------
    band : (float, float), optional
        Outdoor dry-bulb band [°C]; default ``outdoor.band_low``/``band_high`` of the project
        schema.
    days : sequence of str, optional
        Occupied days ``"mon"`` … ``"sun"``.
    hours : (int, int), optional
        First occupied hour and end hour, e.g. (8, 18) [h].
    holidays : sequence of str
        Dates YYYY-MM-DD in ``year``.
    year : int, optional
        Calendar year the typical years are stamped onto.
    dew_max, wind_max, rain_max, night_below : float, optional
        Dew-point ceiling [°C], wind ceiling [m s⁻¹], rain ceiling [mm h⁻¹], night-cooling
        threshold [°C].
    future : FutureClimate, optional
    leap_day : {"drop", "keep"}

    Raises
    ------
    calcs.errors.ProjectError
        One line naming the option, the value and what is allowed (the checks of the
        project schema's Occupancy and Outdoor sections).
    """
    occ: dict[str, Any] = {}
    if days is not None:
        occ["days"] = tuple(str(d).strip().lower() for d in days)
    if hours is not None:
        start, end = hours
        occ["start"], occ["end"] = f"{int(start):02d}:00", f"{int(end):02d}:00"
    if holidays:
        occ["holidays"] = tuple(holidays)
    if year is not None:
        occ["calendar_year"] = year
    out: dict[str, Any] = {}
    if band is not None:
        out["band_low"], out["band_high"] = band
    for key, value in (("dew_point_max", dew_max), ("wind_speed_max", wind_max), ("rain_max", rain_max),
                       ("night_cooling_below", night_below)):
        if value is not None:
            out[key] = value
    try:
        occupancy = Occupancy(**occ)
    except pydantic.ValidationError as exc:
        names = {"holidays": "--holidays", "days": "--days", "start": "--hours", "end": "--hours",
                 "calendar_year": "--year"}
        raise ProjectError(_one_line(exc, names)) from None
    try:
        outdoor = Outdoor(**out)
    except pydantic.ValidationError as exc:
        names = {"band_low": "--band", "band_high": "--band", "dew_point_max": "--dew-max",
                 "wind_speed_max": "--wind-max", "rain_max": "--rain-max", "night_cooling_below": "--night-below"}
        raise ProjectError(_one_line(exc, names)) from None
    if leap_day not in ("drop", "keep"):
        msg = f"leap_day must be 'drop' or 'keep', got {leap_day!r}"
        raise ProjectError(msg)
    return ScreenOptions(occupancy=occupancy, outdoor=outdoor, future=future, leap_day=leap_day)


def _error_row(path: str, message: str) -> dict[str, Any]:
    message = " ".join(str(message).split())  # one line
    if not message.startswith(path):
        message = f"{path}: {message}"
    return {"file": path, "error": message}


def screen_file(path: str | os.PathLike, options: ScreenOptions = ScreenOptions()) -> dict[str, Any]:
    """Screen one weather file.

    Parameters
    ----------
    path : str or path-like
        An EPW or freerun weather CSV file.
    options : ScreenOptions

    Returns
    -------
    dict
        A row with the keys of :data:`COLUMNS` (and :data:`FUTURE_COLUMNS` when
        ``options.future`` is set); ``months_can_open`` is the month abbreviations joined by
        spaces. For a file that cannot be screened: ``{"file": path, "error": message}``,
        the message one line naming the file and the problem. Never raises for a bad file.
    """
    name = str(path)
    try:
        weather = read_weather(name, options.occupancy.calendar_year, leap_day=options.leap_day)
        today = climate_key_figures(weather, options.occupancy, options.outdoor)
        row: dict[str, Any] = {
            "file": name, "location": weather.location, "latitude": float(weather.latitude),
            "longitude": float(weather.longitude),
        }
        for key in COLUMNS[4:]:
            if key == "months_can_open_count":
                row[key] = len(today["months_can_open"])
            elif key == "months_can_open":
                row[key] = " ".join(today["months_can_open"])
            else:
                row[key] = today[key]
        if options.future is not None:
            future = climate_key_figures(morph_weather(weather, options.future), options.occupancy, options.outdoor)
            for key in FUTURE_COLUMNS:
                base = key[len("future_"):]
                if base == "months_can_open_count":
                    row[key] = len(future["months_can_open"])
                elif base == "months_can_open":
                    row[key] = " ".join(future["months_can_open"])
                else:
                    row[key] = future[base]
        return row
    except FreerunError as exc:
        return _error_row(name, str(exc))
    except MemoryError:
        raise
    except Exception as exc:  # an unreadable file must not stop a run of many
        return _error_row(name, f"could not be screened ({type(exc).__name__}: {exc})")


def _screen_chunk(paths: Sequence[str], options: ScreenOptions) -> list[dict[str, Any]]:
    return [screen_file(p, options) for p in paths]


def weather_paths(items: Iterable[str | os.PathLike]) -> list[str]:
    """The weather files named: files as given, folders expanded to their .epw and .csv files
    (sorted by name); duplicates dropped, order kept."""
    out: list[str] = []
    seen: set[str] = set()
    for item in items:
        p = Path(item)
        found = (sorted(str(q) for q in p.iterdir() if q.is_file() and q.suffix.lower() in _WEATHER_SUFFIXES)
                 if p.is_dir() else [str(p)])
        for f in found:
            if f not in seen:
                seen.add(f)
                out.append(f)
    return out


def _frame(rows: list[dict[str, Any]], options: ScreenOptions) -> pd.DataFrame:
    columns = list(COLUMNS) + (list(FUTURE_COLUMNS) if options.future is not None else [])
    frame = pd.DataFrame(rows, columns=columns)
    if len(frame):
        frame = frame.sort_values(["occupied_nv_suitable_pct", "file"], ascending=[False, True],
                                  na_position="last", kind="mergesort")
    frame.index = pd.RangeIndex(1, len(frame) + 1, name="rank")
    return frame


def _chunks(paths: list[str], jobs: int | None) -> list[list[str]]:
    # a few chunks per worker: little start-up overhead, still balanced when files differ
    workers = max(1, min(jobs or os.cpu_count() or 1, len(paths)))
    size = max(1, -(-len(paths) // (4 * workers)))
    return [paths[i:i + size] for i in range(0, len(paths), size)]


def _screen_chunk_of(options: ScreenOptions, paths: Sequence[str]) -> list[dict[str, Any]]:
    return _screen_chunk(paths, options)


def screen_files(paths: Iterable[str | os.PathLike], options: ScreenOptions = ScreenOptions(),
                 scheduler: str | None = None, jobs: int | None = None) -> tuple[pd.DataFrame, list[dict[str, str]]]:
    """Screen many weather files in parallel.

    Parameters
    ----------
    paths : iterable of str or path-like
        Weather files (duplicates are screened once).
    options : ScreenOptions
    scheduler : str, optional
        None: a local process pool (``concurrent.futures.ProcessPoolExecutor``).
        ``"local-cluster"``: a Dask ``LocalCluster`` started on this machine and closed after.
        Otherwise the address of a running Dask scheduler (``tcp://host:8786``). Dask is
        imported only here.
    jobs : int, optional
        Worker processes for the local pool or the local cluster (default: CPU count).

    Returns
    -------
    (pandas.DataFrame, list of dict)
        The screened files ranked by ``occupied_nv_suitable_pct``, best first (ties by file
        name), index ``rank`` from 1, columns :data:`COLUMNS` (+ :data:`FUTURE_COLUMNS`); and
        the files that could not be screened as ``{"file", "error"}`` dicts, in input order.
        The figures are the same whichever way the work is run.

    Raises
    ------
    calcs.errors.ProjectError
        Bad ``jobs``, Dask not installed, or no connection to the scheduler.
    """
    names: list[str] = []
    for p in paths:
        if str(p) not in names:
            names.append(str(p))
    sweep.check_jobs(jobs)
    sweep.check_scheduler(scheduler)
    if not names:
        return _frame([], options), []
    results = sweep.map_chunks(_screen_chunk_of, _chunks(names, jobs), context=options, scheduler=scheduler,
                               jobs=jobs)
    rows = [row for chunk in results for row in chunk]
    good = [r for r in rows if "error" not in r]
    errors = [{"file": r["file"], "error": r["error"]} for r in rows if "error" in r]
    return _frame(good, options), errors
