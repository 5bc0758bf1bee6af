"""``freerun screen`` (calcs.screen, calcs.screen_page) on public typical-year data.

Outside references: pvlib's bundled TMY3 Greensboro NC and Sand Point AK and TMY2 Miami FL files
(NREL), rewritten as EPW (tests/public_data.py, tests/test_weather.py). The expected figures are
independent pandas computations written here: the EPW text is parsed with pandas.read_csv
(field positions from the EnergyPlus EPW data dictionary), not with freerun's reader, and the
occupancy, band, limits and night-cooling rules are coded again from their definitions
(DEVELOPERS.md results.json contract; calcs.climate docstrings).
"""

from __future__ import annotations

import datetime as dt
import re
import shutil
import sys
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from numpy.testing import assert_allclose

from calcs.cli import EXIT_BAD_INPUT, EXIT_OK, main
from calcs.errors import ProjectError
from calcs.morph import FutureClimate
from calcs.screen import screen_file, screen_files, screen_options, weather_paths
from calcs.screen_page import CSV_NAME, HTML_NAME
from calcs.weather import write_epw
from test_weather import PUBLIC_FILES

YEAR = 2026
# EPW data dictionary field positions (0-based): month 1, day 2, hour 3, dry bulb 6, dew point 7,
# wind speed 21, liquid precipitation depth 33 (999 = missing).
EPW_COLS = {1: "month", 2: "day", 3: "hour", 6: "temp_air", 7: "temp_dew", 21: "wind_speed", 33: "rain"}


@pytest.fixture(scope="module")
def public_paths(tmp_path_factory) -> dict[str, Path]:
    """The three public typical-year files rewritten as EPW: pvlib file name → path."""
    folder = tmp_path_factory.mktemp("screen_public")
    out = {}
    for fname, reader in PUBLIC_FILES.items():
        frame, site = reader(fname)
        path = folder / f"weather_{Path(fname).stem}.epw"
        write_epw(frame, path, comment="public typical-year data rewritten for a test", **site)
        out[fname] = path
    return out


def independent(path: Path, *, band=(16.0, 26.0), days=(0, 1, 2, 3, 4), hours=(8, 18), holidays=(),
                dew_max=17.0, wind_max=10.0, rain_max=0.5, night_below=18.0, open_pct=50.0) -> dict:
    """Screening figures of one EPW file with pandas only (definitions restated, not imported)."""
    raw = pd.read_csv(path, skiprows=8, header=None, usecols=list(EPW_COLS)).rename(columns=EPW_COLS)
    idx = pd.to_datetime(pd.DataFrame({"year": YEAR, "month": raw["month"], "day": raw["day"],
                                       "hour": raw["hour"] - 1}))  # EPW hour h covers (h−1):00–h:00
    s = raw.set_index(pd.DatetimeIndex(idx)).drop(columns=["month", "day", "hour"])
    t = s["temp_air"]
    occ = (s.index.day_of_week.isin(days) & (s.index.hour >= hours[0]) & (s.index.hour < hours[1])
           & ~pd.Index(s.index.date).isin(list(holidays)))
    rain_ok = (s["rain"] <= rain_max) if (s["rain"] < 999).all() else True  # rain judged only if complete
    in_band = t.between(*band)
    suitable = in_band & (s["temp_dew"] <= dew_max) & (s["wind_speed"] <= wind_max) & rain_ok
    daily = t.groupby(s.index.date).agg(["max", "min"])
    month_share = 100 * suitable[occ].groupby(s.index.month[occ]).mean()
    months = [m for m in range(1, 13) if month_share.get(m, 0.0) >= open_pct]
    # the night before day d: 22:00–23:00 of d−1 and 00:00–06:00 of d; 1 Jan takes 31 Dec's evening
    evening = t[t.index.hour >= 22]
    evening.index = evening.index + pd.Timedelta(days=1)
    evening.index = evening.index.map(lambda x: x.replace(year=YEAR))  # 31 Dec → 1 Jan (typical year wraps)
    night = pd.concat([evening, t[t.index.hour < 7]])
    night_min = night.groupby(night.index.date).min()
    occ_days = pd.Series(occ, index=s.index).groupby(s.index.date).any()
    cool = night_min.reindex(occ_days.index) < night_below
    return {
        "annual_mean_C": t.mean(),
        "mean_diurnal_range_K": (daily["max"] - daily["min"]).mean(),
        "occupied_hours": int(occ.sum()),
        "occupied_in_band_pct": 100 * in_band[occ].mean(),
        "occupied_below_band_pct": 100 * (t[occ] < band[0]).mean(),
        "occupied_above_band_pct": 100 * (t[occ] > band[1]).mean(),
        "occupied_nv_suitable_pct": 100 * suitable[occ].mean(),
        "months_can_open": " ".join(pd.Timestamp(YEAR, m, 1).strftime("%b") for m in months),
        "night_cooling_pct": 100 * cool[occ_days].mean(),
        "rain_assessed": bool((s["rain"] < 999).all()),
    }


FLOAT_KEYS = ("annual_mean_C", "mean_diurnal_range_K", "occupied_in_band_pct", "occupied_below_band_pct",
              "occupied_above_band_pct", "occupied_nv_suitable_pct", "night_cooling_pct")


def check_row(row: dict, expected: dict) -> None:
    for key in FLOAT_KEYS:
        # same values, same arithmetic up to summation order: 1e-9 is far below any shown digit
        assert_allclose(row[key], expected[key], rtol=0, atol=1e-9, err_msg=key)
    for key in ("occupied_hours", "months_can_open", "rain_assessed"):
        assert row[key] == expected[key], key
    assert row["months_can_open_count"] == len(expected["months_can_open"].split())


@pytest.mark.parametrize("fname", sorted(PUBLIC_FILES))
def test_screen_file_matches_independent_pandas_defaults(public_paths, fname):
    row = screen_file(public_paths[fname], screen_options())
    assert "error" not in row
    check_row(row, independent(public_paths[fname]))


def test_screen_options_match_independent_pandas(public_paths):
    # every option changed from its default, on Greensboro (the file with complete rain data)
    path = public_paths["723170TYA.CSV"]
    holidays = ("2026-05-25", "2026-07-03")
    opts = screen_options(band=(18.0, 25.0), days=("mon", "tue", "wed", "thu", "fri", "sat"), hours=(9, 17),
                          holidays=holidays, dew_max=15.0, wind_max=6.0, rain_max=0.2, night_below=16.0)
    expected = independent(path, band=(18.0, 25.0), days=(0, 1, 2, 3, 4, 5), hours=(9, 17),
                           holidays=[dt.date.fromisoformat(h) for h in holidays], dew_max=15.0, wind_max=6.0,
                           rain_max=0.2, night_below=16.0)
    assert expected["rain_assessed"]
    check_row(screen_file(path, opts), expected)


def test_sand_point_and_miami_are_screened_without_rain(public_paths):
    # Sand Point: 8011 of 8760 precipitation values missing in the TMY3 file; Miami TMY2 has none.
    for fname in ("703165TY.csv", "12839.tm2"):
        assert screen_file(public_paths[fname], screen_options())["rain_assessed"] is False


def test_ranking_is_by_suitable_share_best_first(public_paths):
    frame, errors = screen_files(list(public_paths.values()), screen_options(), jobs=2)
    assert not errors and len(frame) == 3
    assert list(frame.index) == [1, 2, 3]
    shares = [independent(Path(f))["occupied_nv_suitable_pct"] for f in frame["file"]]
    assert shares == sorted(shares, reverse=True)


def _broken_copies(folder: Path, good: Path) -> list[Path]:
    bad_rh = folder / "bad_rh.epw"
    lines = good.read_text(encoding="utf-8").splitlines()
    fields = lines[108].split(",")
    fields[8] = "150"  # relative humidity 150 % (EPW field 9)
    lines[108] = ",".join(fields)
    bad_rh.write_text("\n".join(lines) + "\n", encoding="utf-8")
    not_epw = folder / "notes.epw"
    not_epw.write_text("this is not a weather file\n", encoding="utf-8")
    odd = folder / "weather.txt"
    odd.write_text("x", encoding="utf-8")
    return [bad_rh, not_epw, folder / "missing.epw", odd]


def test_bad_files_are_reported_and_skipped(public_paths, tmp_path):
    good = list(public_paths.values())
    bad = _broken_copies(tmp_path, good[0])
    paths = [good[0], bad[0], good[1], bad[1], bad[2], good[2], bad[3]]
    frame, errors = screen_files(paths, screen_options(), jobs=2)
    assert sorted(frame["file"]) == sorted(str(p) for p in good)
    assert [e["file"] for e in errors] == [str(p) for p in bad]  # input order
    for e in errors:
        assert e["error"].startswith(e["file"] + ":") and "\n" not in e["error"]
    assert "relative_humidity" in errors[0]["error"] and "150" in errors[0]["error"]
    assert "not found" in errors[2]["error"]
    assert "allowed: .epw, .csv" in errors[3]["error"]


def test_local_pool_and_in_process_give_the_same_table(public_paths):
    paths = list(public_paths.values())
    one, _ = screen_files(paths, screen_options(), jobs=1)
    two, _ = screen_files(paths, screen_options(), jobs=2)
    pd.testing.assert_frame_equal(one, two, check_exact=True)


def test_dask_cluster_gives_the_same_numbers_as_the_local_pool(public_paths, tmp_path):
    distributed = pytest.importorskip("dask.distributed")
    paths = list(public_paths.values()) + _broken_copies(tmp_path, public_paths["723170TYA.CSV"])[:2]
    fc = FutureClimate(label="Test changes (invented)", source="invented for a unit test",
                       delta_mean=(1.5,) * 12, delta_max=(2.0,) * 12, delta_min=(1.0,) * 12)
    opts = screen_options(future=fc)
    local, local_errors = screen_files(paths, opts, jobs=2)
    with distributed.LocalCluster(n_workers=1, processes=False, dashboard_address=None) as cluster:
        remote, remote_errors = screen_files(paths, opts, scheduler=cluster.scheduler_address)
    pd.testing.assert_frame_equal(local, remote, check_exact=True)
    assert local_errors == remote_errors and len(local_errors) == 2


def test_command_line_on_a_local_dask_cluster(public_paths, tmp_path, capsys):
    pytest.importorskip("dask.distributed")
    paths = [str(p) for p in public_paths.values()]
    assert main(["screen", *paths, "--out", str(tmp_path / "a")]) == EXIT_OK
    assert main(["screen", *paths, "--out", str(tmp_path / "b"), "--scheduler", "local-cluster",
                 "--jobs", "1"]) == EXIT_OK
    capsys.readouterr()
    assert (tmp_path / "a" / CSV_NAME).read_bytes() == (tmp_path / "b" / CSV_NAME).read_bytes()


def test_missing_dask_gives_one_line(public_paths, monkeypatch, capsys):
    monkeypatch.setitem(sys.modules, "dask.distributed", None)  # import fails as if not installed
    code = main(["screen", str(public_paths["723170TYA.CSV"]), "--scheduler", "local-cluster"])
    err = capsys.readouterr().err
    assert code == EXIT_BAD_INPUT and err.count("\n") == 1 and "pip install 'freerun[dask]'" in err


def test_unreachable_scheduler_address_is_refused_in_one_line(public_paths, capsys):
    code = main(["screen", str(public_paths["723170TYA.CSV"]), "--scheduler", "not an address"])
    err = capsys.readouterr().err
    assert code == EXIT_BAD_INPUT and err.count("\n") == 1 and "not a scheduler address" in err


def test_future_columns_shift_the_annual_mean_by_the_hour_weighted_deltas(public_paths):
    # The monthly mean moves by ΔTmean_m exactly (shift-and-stretch), so the annual mean moves by
    # Σ n_m ΔTmean_m / Σ n_m with n_m the hours of month m (arithmetic, no reference needed).
    deltas = np.linspace(1.0, 3.2, 12)
    fc = FutureClimate(label="Test changes (invented)", source="invented for a unit test",
                       delta_mean=tuple(deltas), delta_max=tuple(deltas + 0.4), delta_min=tuple(deltas - 0.4))
    row = screen_file(public_paths["723170TYA.CSV"], screen_options(future=fc))
    hours = np.array([pd.Timestamp(YEAR, m, 1).days_in_month * 24 for m in range(1, 13)])
    assert_allclose(row["future_annual_mean_C"] - row["annual_mean_C"], (hours * deltas).sum() / 8760, atol=1e-9)
    assert_allclose(row["future_mean_diurnal_range_K"] - row["mean_diurnal_range_K"], 0.8, atol=1e-9)
    assert row["future_occupied_nv_suitable_pct"] != row["occupied_nv_suitable_pct"]


# --------------------------------------------------------------------------- command line and outputs


def test_command_line_writes_csv_and_html_and_lists_skipped(public_paths, tmp_path, capsys):
    good = [str(p) for p in public_paths.values()]
    bad = _broken_copies(tmp_path, public_paths["723170TYA.CSV"])[:2]
    out = tmp_path / "out"
    code = main(["screen", *good, *map(str, bad), "--out", str(out)])
    printed = capsys.readouterr().out
    assert code == EXIT_OK
    assert "Skipped 2 files:" in printed and str(bad[0]) in printed and str(bad[1]) in printed
    table = pd.read_csv(out / CSV_NAME, index_col="rank")
    expected = {Path(p).name: independent(Path(p)) for p in good}
    for _, row in table.iterrows():
        e = expected[Path(row["file"]).name]
        # the CSV holds 4 decimals
        assert_allclose(row["occupied_nv_suitable_pct"], e["occupied_nv_suitable_pct"], atol=5e-5)
        assert_allclose(row["annual_mean_C"], e["annual_mean_C"], atol=5e-5)
    page = (out / HTML_NAME).read_text(encoding="utf-8")
    assert "<script" not in page.lower() and "http://" not in page and "https://" not in page
    assert re.search(r'<img alt="[^"]+" src="data:image/png;base64,', page)
    assert "Skipped files" in page and "line 1 must be the EPW LOCATION header" in page
    assert not list(out.glob(".*partial*"))  # no temporary files left


def test_text_from_weather_files_is_escaped(public_paths, tmp_path, capsys):
    frame, site = PUBLIC_FILES["723170TYA.CSV"]("723170TYA.CSV")
    path = tmp_path / "markup.epw"
    write_epw(frame, path, **{**site, "location": "<b>Tower</b> & <img src=x>"})
    assert main(["screen", str(path), "--out", str(tmp_path / "out")]) == EXIT_OK
    capsys.readouterr()
    page = (tmp_path / "out" / HTML_NAME).read_text(encoding="utf-8")
    assert "<b>Tower</b>" not in page and "<img src=x>" not in page
    assert "&lt;b&gt;Tower&lt;/b&gt; &amp; &lt;img src=x&gt;" in page


def test_no_file_screened_exits_2_and_leaves_earlier_outputs(public_paths, tmp_path, capsys):
    out = tmp_path / "out"
    assert main(["screen", str(public_paths["723170TYA.CSV"]), "--out", str(out)]) == EXIT_OK
    before = {n: (out / n).read_bytes() for n in (CSV_NAME, HTML_NAME)}
    bad = _broken_copies(tmp_path, public_paths["723170TYA.CSV"])
    capsys.readouterr()
    code = main(["screen", *map(str, bad), "--out", str(out)])
    captured = capsys.readouterr()
    assert code == EXIT_BAD_INPUT
    assert "none of the 4 weather files could be screened" in captured.err and captured.err.count("\n") == 1
    assert "Traceback" not in captured.err + captured.out
    assert {n: (out / n).read_bytes() for n in (CSV_NAME, HTML_NAME)} == before


def test_folder_argument_expands_to_its_weather_files(public_paths, tmp_path):
    folder = tmp_path / "folder"
    folder.mkdir()
    for p in public_paths.values():
        shutil.copy(p, folder / p.name)
    (folder / "readme.txt").write_text("not weather", encoding="utf-8")
    found = weather_paths([folder, folder / "weather_12839.epw"])
    assert [Path(p).name for p in found] == sorted(p.name for p in public_paths.values())


BAD_OPTIONS = {
    "band inverted": (["--band", "30", "20"], "--band: band_high (20.0) must be above band_low (30.0)"),
    "band one value": (["--band", "30"], "argument --band: expected 2 arguments"),
    "hours reversed": (["--hours", "18-08"], "need 0 <= START < END <= 24"),
    "hours text": (["--hours", "office"], "write the occupied hours as START-END"),
    "unknown day": (["--days", "mon,funday"], "give a comma-separated list of mon,tue"),
    "holiday not a date": (["--holidays", "2026-13-01"], "'2026-13-01' is not a date YYYY-MM-DD"),
    "holiday other year": (["--holidays", "2025-12-25"], "not in calendar_year 2026"),
    "year out of range": (["--year", "1800"], "--year 1800: Input should be greater than or equal to 1900"),
    "zero jobs": (["--jobs", "0"], "--jobs '0': must be a whole number of worker processes"),
    "negative wind": (["--wind-max", "-1"], "--wind-max -1.0: Input should be greater than 0"),
    "future file missing": (["--future", "nowhere.toml"], "nowhere.toml: future-climate file not found"),
}


@pytest.mark.parametrize("case", sorted(BAD_OPTIONS))
def test_bad_options_give_one_line_and_exit_2(public_paths, tmp_path, capsys, case):
    extra, expected = BAD_OPTIONS[case]
    out = tmp_path / "out"
    code = _run(["screen", str(public_paths["723170TYA.CSV"]), "--out", str(out), *extra])
    err = capsys.readouterr().err
    assert code == EXIT_BAD_INPUT
    assert err.count("\n") == 1 and expected in err and "Traceback" not in err
    assert not out.exists()


def _exit_code(argv) -> int:
    with pytest.raises(SystemExit) as info:
        main(argv)
    return info.value.code


def _run(argv) -> int:
    """Exit code of the command, whether it returns (freerun's checks) or exits (argparse's)."""
    try:
        return main(argv)
    except SystemExit as exc:
        return exc.code


def test_usage_errors_from_argparse_exit_2(capsys):
    assert _exit_code(["screen", "x.epw", "--hours", "25-26"]) == EXIT_BAD_INPUT
    assert "need 0 <= START < END <= 24" in capsys.readouterr().err


def test_help_says_what_it_reads_and_writes(capsys):
    assert _exit_code(["screen", "--help"]) == 0
    text = " ".join(capsys.readouterr().out.split())
    for phrase in ("Read each WEATHER_FILE", "writes screen.csv and screen.html", "--scheduler", "--future",
                   "Exit codes"):
        assert phrase in text


def test_screen_options_refuse_bad_jobs():
    with pytest.raises(ProjectError, match="--jobs"):
        screen_files(["x.epw"], screen_options(), jobs=0)


def test_dask_is_imported_only_with_a_scheduler(public_paths):
    # the optional extra must not be needed (nor loaded) for the local process pool
    import subprocess

    code = ("import sys; from calcs.screen import screen_files, screen_options; "
            f"frame, errors = screen_files([{str(public_paths['723170TYA.CSV'])!r}], screen_options(), jobs=1); "
            "assert len(frame) == 1 and not errors; "
            "print(sorted(m for m in sys.modules if m.split('.')[0] in ('dask', 'distributed')))")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True).stdout
    assert out.strip() == "[]"
