"""The command line on bad input: one clear line, exit code 2, nothing written.

The checks run the real ``freerun`` entry point (``calcs.cli.main``) on small
projects over public weather data (pvlib's Greensboro TMY3 file rewritten as EPW).
"""

from __future__ import annotations

import subprocess
import sys
from pathlib import Path

import pytest

from calcs.cli import EXIT_BAD_INPUT, main

EPW_HEADER_LINES = 8
DRY_BULB, RH = 6, 8  # EPW data fields (0-based), EnergyPlus EPW data dictionary


def _edit_epw(folder: Path, edit) -> None:
    path = next((folder / "weather").glob("*.epw"))
    lines = path.read_text(encoding="latin-1").splitlines()
    head, rows = lines[:EPW_HEADER_LINES], [line.split(",") for line in lines[EPW_HEADER_LINES:]]
    rows = edit(rows)
    path.write_text("\n".join(head + [",".join(r) for r in rows]) + "\n", encoding="latin-1")


def _to_fahrenheit(rows):
    for row in rows:
        row[DRY_BULB] = f"{float(row[DRY_BULB]) * 9 / 5 + 32:.1f}"
    return rows


def _long_gap(rows):
    for row in rows[4000:4010]:  # ten hours of the EPW missing marker 99.9 in mid-June
        row[DRY_BULB] = "99.9"
    return rows


def _bad_rh(rows):
    rows[100][RH] = "150"
    return rows


def _set(path: list[str], value):
    def edit(data):
        node = data
        for part in path[:-1]:
            node = node.setdefault(part, {}) if not isinstance(node, list) else node[int(part)]
        node[path[-1] if not isinstance(node, list) else int(path[-1])] = value

    return edit


def _delete(path: list[str]):
    def edit(data):
        node = data
        for part in path[:-1]:
            node = node[part]
        del node[path[-1]]

    return edit


PROJECT_CASES = {
    "unknown key": (_set(["outdoor", "band_hi"], 27.0), "unknown key 'outdoor.band_hi'"),
    "missing key": (_delete(["site", "latitude"]), "required key 'site.latitude' is missing"),
    "latitude out of range": (_set(["site", "latitude"], 123.0), "site.latitude = 123.0"),
    "negative floor area": (_set(["zones", "0", "floor_area"], -5.0), "zones['north'].floor_area = -5.0"),
    "text floor area": (_set(["zones", "0", "floor_area"], "big"), "zones['north'].floor_area = 'big'"),
    "end before start": (_set(["occupancy", "end"], "07:00"), "end (07:00) must be later than start (08:00)"),
    "holiday outside year": (_set(["occupancy", "holidays"], [__import__("datetime").date(2025, 12, 25)]),
                             "not in calendar_year 2026"),
    "duplicate zone": (_set(["zones", "1", "name"], "north"), "'north' appears twice"),
    "job number with slash": (_set(["project", "job_number"], "A/B"), "project.job_number = 'A/B'"),
    "weather file missing": (_set(["site", "weather_file"], "weather/none.epw"), "file not found"),
    "utc offset mismatch": (_set(["site", "utc_offset"], 0.0), "does not match the weather file"),
    "band inverted": (_set(["outdoor", "band_low"], 30.0), "must be above band_low"),
    "unknown leap-day option": (_set(["site", "leap_day"], "maybe"), "site.leap_day = 'maybe'"),
    "window-to-wall ratio above 1": (
        _set(["zones", "0", "facades"], [{"name": "n", "azimuth": 0.0, "length": 10.0, "window_to_wall_ratio": 1.2}]),
        "zones['north'].facades['n'].window_to_wall_ratio = 1.2"),
    "opening on a missing façade": (
        _set(["zones", "0", "openings"], [{"name": "w1", "facade": "east", "free_area": 1.0}]),
        "opening 'w1' is on façade 'east', which the zone does not have"),
    "unknown mass class": (_set(["zones", "0", "mass_class"], "massive"), "zones['north'].mass_class = 'massive'"),
    "stack without height": (_set(["zones", "0", "ventilation"], "stack"), "needs stack_height > 0 m"),
    "reserved zone name": (_set(["zones", "1", "name"], "building"), "'building' is reserved"),
}

WEATHER_CASES = {
    "weather in °F": (_to_fahrenheit, "°F"),
    "weather rows missing": (lambda rows: rows[:-100], "8660"),
    "weather long gap": (_long_gap, "temp_air"),
    "weather RH out of range": (_bad_rh, "relative_humidity"),
}


def _run(args, capsys):
    code = main(args)
    err = capsys.readouterr().err.strip()
    return code, err


def _assert_one_line_refusal(code, err, expected, out: Path):
    assert code == EXIT_BAD_INPUT, err
    assert len(err.splitlines()) == 1, err
    assert err.startswith("freerun: ")
    assert expected in err, err
    assert "Traceback" not in err
    assert not out.exists(), "a refused build must write nothing"


@pytest.mark.parametrize("case", sorted(PROJECT_CASES))
def test_bad_project_file(case, make_project, tmp_path, capsys):
    edit, expected = PROJECT_CASES[case]
    folder = make_project(edit)
    out = tmp_path / "out"
    code, err = _run(["build", str(folder), "--out", str(out)], capsys)
    _assert_one_line_refusal(code, err, expected, out)
    assert "project.toml" in err


@pytest.mark.parametrize("case", sorted(WEATHER_CASES))
def test_bad_weather_file(case, make_project, tmp_path, capsys):
    edit, expected = WEATHER_CASES[case]
    folder = make_project()
    _edit_epw(folder, edit)
    out = tmp_path / "out"
    code, err = _run(["build", str(folder), "--out", str(out)], capsys)
    _assert_one_line_refusal(code, err, expected, out)
    assert "greensboro_tmy3.epw" in err


@pytest.mark.parametrize(
    ("text", "expected"),
    [
        ("[project\njob_number = 'x'\n", "not valid TOML"),
        ("title = \"\xff\"\n", "not UTF-8"),
    ],
)
def test_unreadable_project_file(text, expected, make_project, tmp_path, capsys):
    folder = make_project()
    (folder / "project.toml").write_bytes(text.encode("latin-1"))
    out = tmp_path / "out"
    code, err = _run(["build", str(folder), "--out", str(out)], capsys)
    _assert_one_line_refusal(code, err, expected, out)


def test_unknown_weather_suffix(make_project, tmp_path, capsys):
    folder = make_project(_set(["site", "weather_file"], "weather/site.txt"))
    (folder / "weather" / "site.txt").write_text("not weather\n", encoding="utf-8")
    out = tmp_path / "out"
    code, err = _run(["build", str(folder), "--out", str(out)], capsys)
    _assert_one_line_refusal(code, err, ".txt", out)


def test_missing_project_folder(tmp_path, capsys):
    out = tmp_path / "out"
    code, err = _run(["build", str(tmp_path / "nowhere"), "--out", str(out)], capsys)
    _assert_one_line_refusal(code, err, "project file not found", out)


@pytest.mark.parametrize(
    ("override", "expected"),
    [
        ("zones.east.floor_area=10", "no zones item named 'east'"),
        ("outdoor.band_high", "expected KEY.PATH=VALUE"),
        ("zones.north.floor_area=-1", "zones['north'].floor_area = -1"),
        ("outdoor.band_hgih=27", "unknown key 'outdoor.band_hgih'"),
    ],
)
def test_bad_override(override, expected, make_project, tmp_path, capsys):
    folder = make_project()
    out = tmp_path / "out"
    code, err = _run(["build", str(folder), "--out", str(out), "--set", override], capsys)
    _assert_one_line_refusal(code, err, expected, out)


def test_wrong_option_is_one_line_exit_2():
    """Through the installed console script, as a user types it."""
    done = subprocess.run(
        [sys.executable, "-m", "calcs.cli", "build", "x", "--frobnicate"], capture_output=True, text=True, check=False
    )
    assert done.returncode == EXIT_BAD_INPUT
    assert len(done.stderr.strip().splitlines()) == 1
    assert "--frobnicate" in done.stderr


@pytest.mark.parametrize(("option", "expected"), [
    (["--scheduler", "not an address"], "not a scheduler address; allowed: tcp://HOST:PORT"),
    (["--jobs", "0"], "must be a whole number of worker processes"),
    (["--jobs", "two"], "must be a whole number of worker processes"),
])
def test_bad_sweep_option_is_one_line_exit_2_and_writes_nothing(option, expected, make_project, tmp_path, capsys):
    folder = make_project()
    out = tmp_path / "out" / "P01"
    try:
        code = main(["build", str(folder), "--out", str(out), "--no-pdf", *option])
    except SystemExit as exc:  # argparse refuses an option value itself
        code = exc.code
    assert code == EXIT_BAD_INPUT
    err = capsys.readouterr().err
    assert err.count("\n") == 1 and expected in err
    assert not out.parent.exists()


def test_schema_lists_keys(capsys):
    assert main(["schema"]) == 0
    out = capsys.readouterr().out
    assert "outdoor.band_low  (number, °C, default 16.0)" in out
    assert "common practice, no source" in out


def test_new_writes_starter_and_refuses_overwrite(tmp_path, capsys):
    folder = tmp_path / "job"
    assert main(["new", str(folder)]) == 0
    text = (folder / "project.toml").read_text(encoding="utf-8")
    assert "[project]" in text and "weather_file" in text
    from calcs.project import load_project

    assert load_project(folder).zones[0].name == "Zone 1"
    capsys.readouterr()
    code, err = _run(["new", str(folder)], capsys)
    assert code == EXIT_BAD_INPUT and "already exists" in err
    assert (folder / "project.toml").read_text(encoding="utf-8") == text
