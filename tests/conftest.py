"""Shared fixtures: small projects on public weather data, and TOML writing."""

from __future__ import annotations

import atexit
import datetime as dt
import shutil
import tempfile
from pathlib import Path
from typing import Any

import pytest

from calcs.weather import write_epw
from public_data import tmy3_frame

REPO = Path(__file__).resolve().parents[1]
DEMO_SOURCE = REPO / "demo_project"


def _quick_demo() -> Path:
    """A copy of the demo project with a 50-sample Monte Carlo run (the demo itself uses 500).

    The end-to-end tests build the demo several times; the Monte Carlo batch dominates a build,
    and its code path does not depend on the sample count. `make demo` builds the real demo.
    """
    folder = Path(tempfile.mkdtemp(prefix="freerun-demo-")) / "demo_project"
    shutil.copytree(DEMO_SOURCE, folder)
    with open(folder / "project.toml", "a", encoding="utf-8") as handle:
        handle.write("\n[uncertainty]\nsamples = 50  # tests only: keeps end-to-end builds quick\n")
    atexit.register(shutil.rmtree, folder.parent, True)
    return folder


DEMO = _quick_demo()
CALENDAR_YEAR = 2026


def _toml_value(value: Any) -> str:
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, (int, float)):
        return repr(value)
    if isinstance(value, dt.date):
        return value.isoformat()
    if isinstance(value, (list, tuple)):
        return "[" + ", ".join(_toml_value(v) for v in value) + "]"
    text = str(value).replace("\\", "\\\\").replace('"', '\\"')
    return f'"{text}"'


def toml_dumps(data: dict[str, Any]) -> str:
    """Minimal TOML writer for project files: tables, arrays of tables, scalars, lists, dates."""
    lines: list[str] = []

    def table(prefix: str, node: dict[str, Any]) -> None:
        scalars = {k: v for k, v in node.items() if not isinstance(v, dict) and not _is_table_list(v)}
        for key, value in scalars.items():
            lines.append(f"{key} = {_toml_value(value)}")
        for key, value in node.items():
            name = f"{prefix}.{key}" if prefix else key
            if isinstance(value, dict):
                lines.append(f"\n[{name}]")
                table(name, value)
            elif _is_table_list(value):
                for item in value:
                    lines.append(f"\n[[{name}]]")
                    table(name, item)

    table("", data)
    return "\n".join(lines).lstrip() + "\n"


def _is_table_list(value: Any) -> bool:
    return isinstance(value, list) and bool(value) and all(isinstance(v, dict) for v in value)


@pytest.fixture(scope="session")
def greensboro_epw(tmp_path_factory) -> tuple[Path, dict[str, Any]]:
    """pvlib's Greensboro NC TMY3 file (public NREL data) rewritten as an EPW."""
    frame, site = tmy3_frame("723170TYA.CSV", year=CALENDAR_YEAR)
    path = tmp_path_factory.mktemp("weather") / "greensboro_tmy3.epw"
    write_epw(frame, path, comment="pvlib bundled TMY3 723170TYA (NREL), rewritten for tests", **site)
    return path, site


def project_dict(site: dict[str, Any], weather_name: str) -> dict[str, Any]:
    return {
        "project": {
            "job_number": "TEST-1", "title": "Test building", "client": "Test client", "site_name": "Test site",
            "design_stage": "concept design", "revision": "P01", "date": dt.date(2026, 12, 1), "author": "Tester",
        },
        "site": {
            "latitude": float(site["latitude"]), "longitude": float(site["longitude"]),
            "elevation": float(site["elevation"]), "utc_offset": float(site["utc_offset"]),
            "weather_file": f"weather/{weather_name}",
        },
        "occupancy": {"calendar_year": CALENDAR_YEAR, "holidays": [dt.date(2026, 1, 1), dt.date(2026, 12, 25)]},
        "zones": [{"name": "north", "floor_area": 400.0}, {"name": "south", "floor_area": 200.0}],
        "uncertainty": {"samples": 20},  # small Monte Carlo batch to keep end-to-end tests quick
    }


@pytest.fixture
def make_project(tmp_path, greensboro_epw):
    """Write a project folder on the Greensboro weather; ``edit(data)`` may change the dict first."""
    epw, site = greensboro_epw

    def make(edit=None, name: str = "project") -> Path:
        folder = tmp_path / name
        (folder / "weather").mkdir(parents=True)
        shutil.copy(epw, folder / "weather" / epw.name)
        data = project_dict(site, epw.name)
        if edit is not None:
            edit(data)
        (folder / "project.toml").write_text(toml_dumps(data), encoding="utf-8")
        return folder

    return make
