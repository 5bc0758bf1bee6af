"""Tests of calcs.weather: EPW and freerun CSV reading, checks, gap filling and writing.

Reference data used (all outside the project):

* pvlib's bundled typical-year files (``pvlib/data``): 723170TYA.CSV
  (Greensboro NC) and 703165TY.csv (Sand Point AK), TMY3; 12839.tm2 (Miami
  FL), TMY2. Read with pvlib's own readers.
* pvlib.iotools.read_epw as the oracle for reading EPW text.
* psychrolib (ASHRAE Handbook Fundamentals 2017 ch. 1 psychrometrics) as the
  oracle for dew point and relative humidity.
* tests/data/weather_epw_missing_markers.csv: EPW missing-value markers from
  the EPW data dictionary (EnergyPlus Auxiliary Programs).
"""

from __future__ import annotations

import importlib.util
import re
from pathlib import Path

import numpy as np
import pandas as pd
import psychrolib
import pvlib
import pytest
from numpy.testing import assert_allclose

from calcs.errors import FreerunError, WeatherError
from public_data import tmy3_frame
from calcs.weather import (
    COLUMNS,
    dew_point_magnus_alduchov96,
    read_epw,
    read_weather,
    read_weather_csv,
    relative_humidity_magnus_alduchov96,
    write_epw,
    write_weather_csv,
)

PVLIB_DATA = Path(pvlib.__file__).parent / "data"
DATA = Path(__file__).parent / "data"
REPO = Path(__file__).resolve().parents[1]
YEAR = 2023  # any non-leap year; the typical-year data are stamped onto it

# Half the last decimal written by write_epw (EPW precision), plus float slack.
EPW_ATOL = {
    "temp_air": 0.05,
    "temp_dew": 0.05,
    "relative_humidity": 0.5,
    "pressure": 0.5,
    "wind_speed": 0.05,
    "wind_direction": 0.5,
    "ghi": 0.5,
    "dni": 0.5,
    "dhi": 0.5,
    "rain": 0.05,
}
# Half the last decimal written by write_weather_csv.
CSV_ATOL = {
    "temp_air": 0.005,
    "temp_dew": 0.005,
    "relative_humidity": 0.005,
    "pressure": 0.5,
    "wind_speed": 0.005,
    "wind_direction": 0.05,
    "ghi": 0.05,
    "dni": 0.05,
    "dhi": 0.05,
    "rain": 0.005,
}
SLACK = 1e-9
PVLIB_EPW_NAMES = {"pressure": "atmospheric_pressure", "rain": "liquid_precipitation_depth"}

psychrolib.SetUnitSystem(psychrolib.SI)


# ---------------------------------------------------------------------------
# public typical-year data as freerun frames


def _tmy2_frame(fname):
    """pvlib's TMY2 file as a freerun frame (read_tmy2 labels hour starts; tenths → units)."""
    df, meta = pvlib.iotools.read_tmy2(PVLIB_DATA / fname)
    frame = pd.DataFrame(
        {
            "temp_air": df["DryBulb"] / 10.0,
            "temp_dew": df["DewPoint"] / 10.0,
            "relative_humidity": df["RHum"],
            "pressure": df["Pressure"] * 100.0,
            "wind_speed": df["Wspd"] / 10.0,
            "wind_direction": df["Wdir"],
            "ghi": df["GHI"],
            "dni": df["DNI"],
            "dhi": df["DHI"],
        }
    ).astype(float)
    frame.index = df.index.tz_localize(None)
    site = {
        "location": meta["City"],
        "latitude": meta["latitude"],
        "longitude": meta["longitude"],
        "utc_offset": float(meta["TZ"]),
        "elevation": float(meta["altitude"]),
    }
    return frame, site


PUBLIC_FILES = {
    "723170TYA.CSV": tmy3_frame,  # TMY3 Greensboro
    "703165TY.csv": tmy3_frame,  # TMY3 Sand Point (precipitation mostly missing)
    "12839.tm2": _tmy2_frame,  # TMY2 Miami
}


@pytest.fixture(scope="module")
def public_epws(tmp_path_factory):
    """Each public typical-year file rewritten as EPW by write_epw: name → (frame, site, path)."""
    out = {}
    folder = tmp_path_factory.mktemp("public")
    for fname, reader in PUBLIC_FILES.items():
        frame, site = reader(fname)
        path = folder / f"weather_{Path(fname).stem}.epw"
        write_epw(frame, path, comment="public typical-year data rewritten for a test", **site)
        out[fname] = (frame, site, path)
    return out


@pytest.fixture(params=sorted(PUBLIC_FILES))
def public_epw(request, public_epws):
    return (request.param, *public_epws[request.param])


@pytest.fixture(scope="module")
def greensboro(tmp_path_factory):
    """Greensboro TMY3 frame with its EPW and CSV texts (a valid base to break)."""
    frame, site = tmy3_frame("723170TYA.CSV")
    folder = tmp_path_factory.mktemp("greensboro")
    epw = folder / "base.epw"
    csv_path = folder / "base.csv"
    write_epw(frame, epw, **site)
    write_weather_csv(frame, csv_path, **site)
    return {
        "frame": frame,
        "site": site,
        "epw": epw.read_text(encoding="utf-8"),
        "csv": csv_path.read_text(encoding="utf-8"),
    }


def _set_epw_field(text, rows, position, value):
    """Set 1-based ``position`` of data rows ``rows`` (0-based) of an EPW text."""
    lines = text.split("\n")
    for r in rows:
        fields = lines[8 + r].split(",")
        fields[position - 1] = value
        lines[8 + r] = ",".join(fields)
    return "\n".join(lines)


def _pvlib_epw(path):
    df, meta = pvlib.iotools.read_epw(path, coerce_year=YEAR)
    df.index = df.index.tz_localize(None)
    return df, meta


# ---------------------------------------------------------------------------
# (a) our EPW reader against pvlib's, on public data


def test_read_epw_agrees_with_pvlib_reader(public_epw):
    fname, frame, site, path = public_epw
    ours = read_epw(path, YEAR)
    pv, meta = _pvlib_epw(path)
    # pvlib.iotools.read_epw labels EPW hour h as (h - 1):00, i.e. by the hour start.
    pd.testing.assert_index_equal(ours.data.index, pv.index, check_names=False, check_freq=False)
    markers = {"temp_air": 99.9, "temp_dew": 99.9, "relative_humidity": 999, "pressure": 999999,
               "ghi": 9999, "dni": 9999, "dhi": 9999, "wind_direction": 999, "wind_speed": 999,
               "rain": 999}  # EPW data dictionary missing markers
    for c in COLUMNS:
        raw = pv[PVLIB_EPW_NAMES.get(c, c)].to_numpy(dtype=float)
        if c in ours.data:
            assert not (raw >= markers[c]).any()  # nothing was filled: values read as-is
            assert_allclose(ours.data[c].to_numpy(), raw, rtol=0, atol=SLACK, err_msg=c)
        else:
            assert c in ours.qa.unavailable
            assert (raw >= markers[c]).any(), f"{c} dropped though pvlib reads no marker"
    assert ours.location == meta["city"]
    assert_allclose(ours.latitude, meta["latitude"], atol=SLACK)
    assert_allclose(ours.longitude, meta["longitude"], atol=SLACK)
    assert_allclose(ours.utc_offset, meta["TZ"], atol=SLACK)
    assert_allclose(ours.elevation, meta["altitude"], atol=SLACK)
    assert ours.qa.source_format == "epw"
    assert ours.qa.rows_in_file == 8760


def test_epw_round_trip_keeps_public_values(public_epw):
    fname, frame, site, path = public_epw
    ours = read_epw(path, YEAR)
    expected_index = pd.date_range(f"{YEAR}-01-01", periods=8760, freq="h")
    assert (ours.data.index == expected_index).all()
    # TMY2 files mix years per month: the calendar order of month/day/hour is kept.
    source = frame.copy()
    source.index = pd.to_datetime(
        pd.DataFrame({"year": YEAR, "month": frame.index.month, "day": frame.index.day,
                      "hour": frame.index.hour})
    )
    source = source.sort_index()
    for c in ours.data.columns:
        assert_allclose(
            ours.data[c].to_numpy(), source[c].to_numpy(), rtol=0,
            atol=EPW_ATOL[c] + SLACK, err_msg=f"{fname} {c}",
        )


def test_sand_point_rain_with_long_gaps_is_unavailable(public_epws):
    frame, site, path = public_epws["703165TY.csv"]
    ours = read_epw(path, YEAR)
    # 703165TY.csv: 8011 of 8760 precipitation values are the TMY3 missing value -9900.
    assert int(frame["rain"].isna().sum()) == 8011
    assert "rain" not in ours.data.columns
    assert ours.qa.unavailable == ("rain",)
    assert any(n.startswith("rain has") and "treated as unavailable" in n for n in ours.qa.notes)


def test_write_epw_layout_follows_epw_data_dictionary(greensboro):
    # EPW data dictionary: 8 header records; 35 fields per data line; Hour 1 is 00:01-01:00.
    lines = greensboro["epw"].rstrip("\n").split("\n")
    assert len(lines) == 8 + 8760
    heads = ["LOCATION", "DESIGN CONDITIONS", "TYPICAL/EXTREME PERIODS", "GROUND TEMPERATURES",
             "HOLIDAYS/DAYLIGHT SAVINGS", "COMMENTS 1", "COMMENTS 2", "DATA PERIODS"]
    for line, head in zip(lines[:8], heads):
        assert line.split(",")[0] == head
    counts = {len(line.split(",")) for line in lines[8:]}
    assert counts == {35}
    first = lines[8].split(",")
    assert first[:4] == [str(YEAR), "1", "1", "1"]  # the hour starting 00:00 is EPW hour 1
    row_13h = lines[8 + 13].split(",")
    assert row_13h[3] == "14"  # 13:00-14:00 is EPW hour 14
    # DATA PERIODS start weekday: the weekday of the first day written
    assert lines[7].split(",")[4] == pd.Timestamp(f"{YEAR}-01-01").day_name()


def test_write_epw_converts_a_timezone_aware_index(greensboro, tmp_path):
    frame, site = greensboro["frame"], greensboro["site"]
    aware = frame.copy()
    aware.index = aware.index.tz_localize("Etc/GMT+5").tz_convert("UTC")
    write_epw(aware, tmp_path / "aware.epw", **site)
    assert (tmp_path / "aware.epw").read_text(encoding="utf-8") == greensboro["epw"]


# ---------------------------------------------------------------------------
# (b) freerun CSV round trip equals the EPW path


def test_csv_round_trip_equals_epw_path(public_epw, tmp_path):
    fname, frame, site, path = public_epw
    via_epw = read_epw(path, YEAR)
    csv_path = tmp_path / "weather_round_trip.csv"
    meta = {k: getattr(via_epw, k) for k in ("location", "latitude", "longitude", "utc_offset", "elevation")}
    write_weather_csv(via_epw.data, csv_path, **meta)
    via_csv = read_weather(csv_path, YEAR)
    assert via_csv.qa.source_format == "csv"
    pd.testing.assert_index_equal(via_csv.data.index, via_epw.data.index)
    assert list(via_csv.data.columns) == list(via_epw.data.columns)
    for c in via_epw.data.columns:
        assert_allclose(via_csv.data[c].to_numpy(), via_epw.data[c].to_numpy(), rtol=0,
                        atol=CSV_ATOL[c] + SLACK, err_msg=c)
    assert via_csv.location == via_epw.location
    for key in ("latitude", "longitude", "utc_offset", "elevation"):
        assert_allclose(getattr(via_csv, key), getattr(via_epw, key), rtol=0, atol=1e-9)
    assert via_csv.qa.unavailable == via_epw.qa.unavailable


def test_read_weather_dispatches_on_suffix_case_insensitively(greensboro, tmp_path):
    path = tmp_path / "UPPER.EPW"
    path.write_text(greensboro["epw"], encoding="utf-8")
    w = read_weather(path, YEAR)
    assert w.qa.source_format == "epw"
    assert_allclose(w.data["temp_air"].to_numpy(), greensboro["frame"]["temp_air"].to_numpy(),
                    atol=EPW_ATOL["temp_air"])


# ---------------------------------------------------------------------------
# (c) missing markers → NaN → interpolation, counted

MARKERS = pd.read_csv(DATA / "weather_epw_missing_markers.csv")
GAP_ROWS = [4500, 4501, 4502, 6000, 6001]  # two gaps: 3 h (Jul 7) and 2 h (Sep 7)


@pytest.mark.parametrize("row", MARKERS.to_dict("records"), ids=list(MARKERS["column"]))
def test_missing_markers_become_counted_interpolated_gaps(row, greensboro, tmp_path):
    col, marker = row["column"], f"{row['marker']:g}"
    path = tmp_path / f"weather_marker_{col}.epw"
    path.write_text(_set_epw_field(greensboro["epw"], GAP_ROWS, row["field_position"], marker),
                    encoding="utf-8")
    pv, _ = _pvlib_epw(path)
    raw = pv[PVLIB_EPW_NAMES.get(col, col)].to_numpy(dtype=float)
    assert_allclose(raw[GAP_ROWS], float(marker), atol=0)  # pvlib leaves markers as numbers
    w = read_epw(path, YEAR)
    got = w.data[col].to_numpy()
    assert not np.isnan(got).any()
    assert w.qa.filled_hours == {col: 5}
    good = np.setdiff1d(np.arange(8760), GAP_ROWS)
    if col == "temp_dew":
        # Dew points are computed from dry bulb and RH: psychrolib as oracle.
        raw_t = pv["temp_air"].to_numpy(dtype=float)[GAP_ROWS]
        raw_rh = pv["relative_humidity"].to_numpy(dtype=float)[GAP_ROWS]
        expected = psychrolib.GetTDewPointFromRelHum(raw_t, raw_rh / 100.0)
        assert (expected > 0).all() and (raw_t > 0).all()  # above freezing: water, not ice
        assert_allclose(got[GAP_ROWS], expected, atol=0.2)
        assert "5 hours of temp_dew computed from temp_air and relative_humidity" in " ".join(w.qa.notes)
    elif col == "wind_direction":
        rad = np.deg2rad(raw[good])
        s = np.interp(GAP_ROWS, good, np.sin(rad))
        c = np.interp(GAP_ROWS, good, np.cos(rad))
        expected = np.rad2deg(np.arctan2(s, c)) % 360.0
        diff = (got[GAP_ROWS] - expected + 180.0) % 360.0 - 180.0
        assert_allclose(diff, 0.0, atol=1e-6)
        assert "5 hours of wind_direction interpolated across 2 gaps." in w.qa.notes
    else:
        expected = np.interp(GAP_ROWS, good, raw[good])  # straight line between public neighbours
        assert_allclose(got[GAP_ROWS], expected, rtol=0, atol=1e-9)
        assert f"5 hours of {col} interpolated across 2 gaps." in w.qa.notes
    assert_allclose(got[good], raw[good], rtol=0, atol=SLACK)  # other hours untouched


def test_gap_at_year_start_interpolates_from_december(greensboro, tmp_path):
    path = tmp_path / "weather_gap_start.csv"
    lines = greensboro["csv"].split("\n")
    header_at = next(i for i, line in enumerate(lines) if line.startswith("time,"))
    for r in (0, 1):  # blank temp_air at Jan 1 00:00 and 01:00
        f = lines[header_at + 1 + r].split(",")
        f[1] = ""
        lines[header_at + 1 + r] = ",".join(f)
    path.write_text("\n".join(lines), encoding="utf-8")
    w = read_weather_csv(path, YEAR)
    t = greensboro["frame"]["temp_air"].to_numpy()
    # straight line from Dec 31 23:00 (position -1) to Jan 1 02:00 (position 2)
    expected = t[-1] + (t[2] - t[-1]) * np.array([1.0, 2.0]) / 3.0
    assert_allclose(w.data["temp_air"].to_numpy()[:2], expected, atol=1e-9)
    assert w.qa.filled_hours == {"temp_air": 2}
    assert "2 hours of temp_air interpolated across 1 gap." in w.qa.notes


def test_six_hour_gap_is_filled_and_seven_is_refused(greensboro, tmp_path):
    six = tmp_path / "weather_gap6.epw"
    six.write_text(_set_epw_field(greensboro["epw"], range(3000, 3006), 22, "999"), encoding="utf-8")
    assert read_epw(six, YEAR).qa.filled_hours == {"wind_speed": 6}
    seven = tmp_path / "weather_gap7.epw"
    seven.write_text(_set_epw_field(greensboro["epw"], range(3000, 3007), 22, "999"), encoding="utf-8")
    with pytest.raises(WeatherError, match=r"wind_speed has 1 gap longer than 6 hours"):
        read_epw(seven, YEAR)


# ---------------------------------------------------------------------------
# (d) malformed inputs, each refused with a one-line message naming file and problem


def _drop_last_line(text):
    lines = text.rstrip("\n").split("\n")
    return "\n".join(lines[:-1]) + "\n"


def _epw_to_fahrenheit(text):
    lines = text.split("\n")
    for i in range(8, len(lines)):
        if lines[i]:
            f = lines[i].split(",")
            f[6] = f"{float(f[6]) * 1.8 + 32.0:.1f}"
            lines[i] = ",".join(f)
    return "\n".join(lines)


def _truncate_line(text, row, keep):
    lines = text.split("\n")
    lines[8 + row] = ",".join(lines[8 + row].split(",")[:keep])
    return "\n".join(lines)


def _csv_edit(text, fn):
    lines = text.split("\n")
    header_at = next(i for i, line in enumerate(lines) if line.startswith("time,"))
    return "\n".join(fn(lines, header_at))


def _csv_cell(lines, h, row, col, value):
    f = lines[h + 1 + row].split(",")
    f[col] = value
    lines[h + 1 + row] = ",".join(f)
    return lines


def _csv_drop_column(lines, h, name):
    header = lines[h].split(",")
    j = next(k for k, c in enumerate(header) if c.startswith(name + " "))
    return [",".join(f for k, f in enumerate(line.split(",")) if k != j) if i >= h and line else line
            for i, line in enumerate(lines)]


def _csv_header(lines, h, old, new):
    lines[h] = lines[h].replace(old, new)
    return lines


def _csv_duplicate_time(lines, h):
    prev = lines[h + 1 + 8].split(",")[0]
    return _csv_cell(lines, h, 9, 0, prev)


def _header(old, new):
    return lambda g: _csv_edit(g["csv"], lambda L, h: _csv_header(L, h, old, new))


def _cell(row, col, value):
    return lambda g: _csv_edit(g["csv"], lambda L, h: _csv_cell(L, h, row, col, value))


def _without_comment(key):
    return lambda g: "\n".join(x for x in g["csv"].split("\n") if not x.startswith(f"# {key}"))


def _csv_short_line(lines, h):
    lines[h + 11] = ",".join(lines[h + 11].split(",")[:4])
    return lines


# name: (file name, builder of the file text from the valid base, regex the message must match)
MALFORMED = {
    "wrong row count": (
        "weather_short.epw", lambda g: _drop_last_line(g["epw"]),
        r"has 8759 hourly data rows; a full year needs 8760"),
    "looks like fahrenheit": (
        "weather_fahrenheit.epw", lambda g: _epw_to_fahrenheit(g["epw"]),
        r"temp_air annual mean is 5\d\.\d, which looks like °F"),
    "relative humidity out of range": (
        "weather_rh.epw", lambda g: _set_epw_field(g["epw"], [200, 201], 9, "130"),
        r"relative_humidity value 130 at 2023-01-09 08:00 \(line 209\) is outside the plausible "
        r"range 0…100 %; 2 rows out of range"),
    "long gap with its date range": (
        "weather_gap.epw", lambda g: _set_epw_field(g["epw"], range(1416, 1426), 22, "999"),
        r"wind_speed has 1 gap longer than 6 hours.*"
        r"2023-03-01 00:00 to 2023-03-01 09:00 \(10 h\)"),
    "bad header cell": (
        "weather_badhead.csv", _header("temp_air [°C]", "temp_air °C"),
        r"header cell 'temp_air °C' is not 'name \[unit\]'"),
    "non-numeric cell": (
        "weather_text.csv", _cell(99, 5, "calm"),
        r"line 106: wind_speed value 'calm' is not a finite number"),
    "non-finite number": (
        "weather_inf.csv", _cell(10, 1, "1e400"),
        r"line 17: temp_air value '1e400' is not a finite number"),
    "empty file": ("weather_empty.epw", lambda g: "", r"weather file is empty"),
    "truncated EPW line": (
        "weather_truncated.epw", lambda g: _truncate_line(g["epw"], 50, 20),
        r"line 59 has 20 fields; an EPW data line has 35"),
    "CSV line with too few fields": (
        "weather_short_line.csv", lambda g: _csv_edit(g["csv"], _csv_short_line),
        r"line 17 has 4 fields; the header has 11 columns"),
    "duplicate timestamps": (
        "weather_dup.csv", lambda g: _csv_edit(g["csv"], _csv_duplicate_time),
        r"duplicated timestamps: 2023-01-01T08:00 \(line 16\)"),
    "unknown suffix": (
        "weather_file.txt", lambda g: g["csv"],
        r"unknown weather file type '\.txt'; allowed: \.epw, \.csv"),
    "missing required column": (
        "weather_noghi.csv", lambda g: _csv_edit(g["csv"], lambda L, h: _csv_drop_column(L, h, "ghi")),
        r"required column ghi missing"),
    "all-missing required column in EPW": (
        "weather_noghi.epw", lambda g: _set_epw_field(g["epw"], range(8760), 14, "9999"),
        r"required column ghi missing or entirely empty"),
    "fahrenheit unit in CSV header": (
        "weather_degf.csv", _header("temp_air [°C]", "temp_air [°F]"),
        r"column temp_air is in °F; temperatures must be in °C, convert"),
    "wrong unit in CSV header": (
        "weather_kmh.csv", _header("wind_speed [m/s]", "wind_speed [km/h]"),
        r"column wind_speed has unit 'km/h'; allowed: m/s"),
    "missing latitude comment": (
        "weather_nolat.csv", _without_comment("latitude"),
        r"missing comment line '# latitude: \.\.\.'"),
    "time with UTC offset": (
        "weather_offset.csv", _cell(3, 0, "2023-01-01T03:00+01:00"),
        r"line 10: time '2023-01-01T03:00\+01:00' carries a UTC offset"),
    "not an EPW file": (
        "weather_notepw.epw", lambda g: g["csv"], r"line 1 must be the EPW LOCATION header"),
    "garbage bytes": (
        "weather_garbage.csv", lambda g: "\x00\x01binary,,,\n\x7f,\x02\n",
        r"line 1: header cell '\\x00\\x01binary' is not 'name \[unit\]'"),
}


@pytest.mark.parametrize("case", sorted(MALFORMED))
def test_malformed_input_is_refused_with_a_clear_line(case, greensboro, tmp_path):
    fname, build, pattern = MALFORMED[case]
    path = tmp_path / fname
    path.write_text(build(greensboro), encoding="utf-8")
    with pytest.raises(WeatherError) as info:
        read_weather(path, YEAR)
    message = str(info.value)
    assert fname in message
    assert "\n" not in message
    assert re.search(pattern, message), message
    assert isinstance(info.value, FreerunError)


@pytest.mark.parametrize("seed", range(6))
@pytest.mark.parametrize("kind", ["epw", "csv"])
def test_corrupted_files_raise_only_weather_errors(seed, kind, greensboro, tmp_path):
    """Random damage to a valid file: either it still reads, or a WeatherError is raised."""
    rng = np.random.default_rng(seed)
    lines = greensboro[kind].split("\n")
    for _ in range(3):
        i = int(rng.integers(0, len(lines)))
        line = lines[i]
        j = int(rng.integers(0, max(len(line), 1)))
        junk = rng.choice(["", ",", "x", "-", "1e9", ";", "\t", "99999", " ", "T"])
        lines[i] = line[:j] + junk + line[j + int(rng.integers(0, 4)):]
    path = tmp_path / f"weather_damaged_{seed}.{kind}"
    path.write_text("\n".join(lines), encoding="utf-8")
    try:
        w = read_weather(path, YEAR)
    except WeatherError as err:
        assert path.name in str(err) and "\n" not in str(err)
    else:
        assert len(w.data) == 8760 and not w.data.isna().any().any()


def test_leap_day_kept_on_a_non_leap_year_is_refused(leap_file):
    with pytest.raises(WeatherError, match=r"has Feb 29 but year 2023 is not a leap year") as info:
        read_weather(leap_file, 2023, leap_day="keep")
    assert leap_file.name in str(info.value)


def test_bad_leap_day_option_is_refused(greensboro, tmp_path):
    path = tmp_path / "weather_ok.epw"
    path.write_text(greensboro["epw"], encoding="utf-8")
    with pytest.raises(WeatherError, match=r"leap_day must be 'drop' or 'keep', got 'skip'"):
        read_weather(path, YEAR, leap_day="skip")


def test_missing_file_is_refused(tmp_path):
    with pytest.raises(WeatherError, match=r"nowhere\.epw: weather file not found"):
        read_weather(tmp_path / "nowhere.epw", YEAR)


# ---------------------------------------------------------------------------
# (e) leap-year files


@pytest.fixture(scope="module")
def leap_frame(greensboro):
    """Greensboro TMY3 data on 2024 with a Feb 29 made by copying Feb 28 + 0.7 K."""
    frame = greensboro["frame"].copy()
    frame.index = frame.index.map(lambda t: t.replace(year=2024))
    feb29 = frame.loc["2024-02-28"].copy()
    feb29.index = feb29.index + pd.Timedelta(days=1)
    feb29["temp_air"] = feb29["temp_air"] + 0.7
    return pd.concat([frame, feb29]).sort_index()


@pytest.fixture(scope="module")
def leap_file(leap_frame, greensboro, tmp_path_factory):
    path = tmp_path_factory.mktemp("leap") / "weather_leap_2024.epw"
    write_epw(leap_frame, path, **greensboro["site"])
    return path


def test_leap_year_file_drops_feb_29_by_default(leap_file, greensboro):
    w = read_weather(leap_file, YEAR)
    assert len(w.data) == 8760
    assert w.qa.rows_in_file == 8784
    assert w.qa.leap_day_dropped is True
    assert "Feb 29 dropped: 24 hours." in w.qa.notes
    assert ((w.data.index.month == 2) & (w.data.index.day == 29)).sum() == 0
    assert (w.data.index == pd.date_range(f"{YEAR}-01-01", periods=8760, freq="h")).all()
    for c in w.data.columns:  # the other 365 days are the public values
        assert_allclose(w.data[c].to_numpy(), greensboro["frame"][c].to_numpy(), rtol=0,
                        atol=EPW_ATOL[c] + SLACK, err_msg=c)
    pv = pvlib.iotools.read_epw(leap_file)[0]  # pvlib reads all 8784 rows
    assert len(pv) == 8784


def test_leap_year_file_keeps_feb_29_on_a_leap_year(leap_file, leap_frame):
    w = read_weather(leap_file, 2024, leap_day="keep")
    assert len(w.data) == 8784
    assert w.qa.leap_day_dropped is False
    assert_allclose(w.data.loc["2024-02-29", "temp_air"].to_numpy(),
                    leap_frame.loc["2024-02-29", "temp_air"].to_numpy(), atol=EPW_ATOL["temp_air"])


def test_leap_year_csv_drops_feb_29(leap_frame, greensboro, tmp_path):
    path = tmp_path / "weather_leap.csv"
    write_weather_csv(leap_frame, path, **greensboro["site"])
    w = read_weather(path, YEAR)
    assert len(w.data) == 8760 and w.qa.leap_day_dropped
    assert_allclose(w.data["temp_air"].to_numpy(), greensboro["frame"]["temp_air"].to_numpy(),
                    atol=CSV_ATOL["temp_air"] + SLACK)


def test_typical_year_on_a_leap_calendar_year_skips_feb_29(greensboro, tmp_path):
    path = tmp_path / "weather_on_2024.epw"
    path.write_text(greensboro["epw"], encoding="utf-8")
    w = read_weather(path, 2024)
    assert len(w.data) == 8760
    assert not ((w.data.index.month == 2) & (w.data.index.day == 29)).any()
    assert w.data.index[0] == pd.Timestamp("2024-01-01 00:00")
    assert any("2024 is a leap year" in n for n in w.qa.notes)


# ---------------------------------------------------------------------------
# (f) dew point from relative humidity against psychrolib


def _psychrolib_cases():
    t, rh = np.meshgrid(np.arange(0.0, 46.0, 5.0), np.arange(10.0, 101.0, 10.0))
    t, rh = t.ravel(), rh.ravel()
    td = psychrolib.GetTDewPointFromRelHum(t, rh / 100.0)
    keep = td > 0.0  # psychrolib uses saturation over ice below 0 °C; Magnus here is over water
    return t[keep], rh[keep], td[keep]


def test_dew_point_matches_psychrolib():
    t, rh, td = _psychrolib_cases()
    assert len(t) > 60
    assert_allclose(dew_point_magnus_alduchov96(t, rh), td, rtol=0, atol=0.2)


def test_relative_humidity_matches_psychrolib():
    t, rh, td = _psychrolib_cases()
    back = relative_humidity_magnus_alduchov96(t, td)
    # 0.5 %RH: half the 1 % resolution EPW files give relative humidity in
    assert_allclose(back, psychrolib.GetRelHumFromTDewPoint(t, td) * 100.0, rtol=0, atol=0.5)


def test_dew_point_keeps_series_index_and_scalars():
    s = pd.Series([20.0, 30.0], index=pd.date_range("2023-07-01", periods=2, freq="h"))
    out = dew_point_magnus_alduchov96(s, pd.Series([50.0, 60.0], index=s.index))
    assert isinstance(out, pd.Series) and out.index.equals(s.index)
    # psychrolib, ASHRAE Fundamentals 2017 ch. 1: 20 °C / 50 % → 9.27 °C
    assert_allclose(dew_point_magnus_alduchov96(20.0, 50.0),
                    psychrolib.GetTDewPointFromRelHum(20.0, 0.5), atol=0.2)
    assert isinstance(dew_point_magnus_alduchov96(20.0, 50.0), float)


def test_csv_without_dew_point_computes_it(greensboro, tmp_path):
    path = tmp_path / "weather_nodew.csv"
    path.write_text(_csv_edit(greensboro["csv"], lambda L, h: _csv_drop_column(L, h, "temp_dew")),
                    encoding="utf-8")
    w = read_weather_csv(path, YEAR)
    assert "temp_dew not in the file; computed from temp_air and relative_humidity" \
        " (Magnus formula, Alduchov & Eskridge 1996)." in w.qa.notes
    frame = greensboro["frame"]
    oracle = psychrolib.GetTDewPointFromRelHum(frame["temp_air"].to_numpy(),
                                               frame["relative_humidity"].to_numpy() / 100.0)
    above = oracle > 0.0
    assert above.sum() > 4000
    assert_allclose(w.data["temp_dew"].to_numpy()[above], oracle[above], rtol=0, atol=0.2)


# ---------------------------------------------------------------------------
# the invented demo weather generator: deterministic, and sun-consistent per pvlib


def _load_generator():
    spec = importlib.util.spec_from_file_location("make_weather", REPO / "demo_project" / "make_weather.py")
    module = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(module)
    return module


def test_demo_generator_is_deterministic_and_readable(tmp_path):
    gen = _load_generator()
    a, b = tmp_path / "a.epw", tmp_path / "b.epw"
    gen.main(a)
    gen.main(b)
    assert a.read_bytes() == b.read_bytes()
    w = read_epw(a, gen.YEAR)  # the nominal year of the file, so that the sun matches
    pv, meta = pvlib.iotools.read_epw(a)
    pv.index = pv.index.tz_localize(None)
    for c in w.data.columns:
        assert_allclose(w.data[c].to_numpy(), pv[PVLIB_EPW_NAMES.get(c, c)].to_numpy(dtype=float),
                        rtol=0, atol=SLACK, err_msg=c)
    # Sun position from pvlib at mid-hour: no daylight with the sun 1° or more below the horizon.
    mid = (w.data.index + pd.Timedelta(minutes=30)).tz_localize("Etc/GMT+1")
    zenith = pvlib.solarposition.get_solarposition(mid, w.latitude, w.longitude)["zenith"].to_numpy()
    ghi = w.data["ghi"].to_numpy()
    assert (ghi[zenith > 91.0] == 0).all()
    assert (ghi[zenith < 80.0] > 0).all()
    # closure GHI = DHI + DNI cos(zenith), within the EPW whole-unit rounding
    closure = w.data["dhi"] + w.data["dni"] * np.cos(np.deg2rad(zenith))
    day = zenith < 85.0
    assert_allclose(closure[day], ghi[day], atol=2.0)
    assert (w.data["temp_dew"] <= w.data["temp_air"] + 0.05).all()
