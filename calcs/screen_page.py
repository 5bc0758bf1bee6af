"""Outputs of ``freerun screen``: the terminal table, screen.csv and the screen.html page.

The page is self-contained (house style inlined, chart as an inline PNG, no scripts, nothing
fetched) and every piece of text from a weather file is escaped. Files are written to a
temporary name beside the target and renamed into place, so a failure never leaves a
half-written file over a good one.
"""

from __future__ import annotations

import base64
import os
from pathlib import Path
from typing import Any

import altair as alt
import pandas as pd

from calcs import __version__, charts
from calcs.paths import templates_dir
from calcs.present import esc, num, table_html
from calcs.screen import ScreenOptions

__all__ = ["CSV_NAME", "HTML_NAME", "terminal_table", "screen_chart", "page_html", "write_outputs",
           "settings_rows"]

CSV_NAME = "screen.csv"
HTML_NAME = "screen.html"
#: Most files drawn in the chart (the table lists them all).
CHART_MAX = 60


def settings_rows(options: ScreenOptions) -> list[tuple[str, str, str]]:
    """(item, value, source) of every setting the files were screened against."""
    occ, out = options.occupancy, options.outdoor
    rows = [
        ("Outdoor band", f"{num(out.band_low)}–{num(out.band_high)} °C dry bulb, ends included",
         "common practice, no source"),
        ("Dew point ceiling", f"{num(out.dew_point_max)} °C",
         "ASHRAE 55-2010 humidity ratio limit 0.012 kg/kg ≈ 16.8 °C dew point [from memory]"),
        ("Wind speed ceiling", f"{num(out.wind_speed_max)} m/s at the weather station",
         "design assumption, no published source"),
        ("Rain ceiling", f"{num(out.rain_max)} mm/h (not applied to files without rain data)",
         "design assumption, no published source"),
        ("Occupied hours", f"{', '.join(occ.days)} {occ.start}–{occ.end}, {len(occ.holidays)} holidays, "
                           f"calendar year {occ.calendar_year}", "screen options"),
        ("Night for night cooling", f"{out.night_start}–{out.night_end}, minimum below "
                                    f"{num(out.night_cooling_below)} °C", "design assumption, no published source"),
        ("A month can open up", f"≥ {num(out.suitable_month_pct, 0)} % of its occupied hours suitable",
         "design assumption, no published source"),
    ]
    if options.future is not None:
        rows.append(("Future climate", options.future.label, options.future.source))
    return rows


def _months(text: Any) -> str:
    return str(text) if isinstance(text, str) and text else "none"


def terminal_table(frame: pd.DataFrame, errors: list[dict[str, str]], options: ScreenOptions) -> str:
    """The ranked table as plain text for the terminal, then the skipped files."""
    heads = ["rank", "location", "file", "mean °C", "occ h", "in band %", "suitable %", "months open",
             "night cool %"]
    if options.future is not None:
        heads += ["future suitable %", "future months"]
    lines_: list[list[str]] = []
    for rank, row in frame.iterrows():
        cells = [str(rank), str(row["location"]), Path(str(row["file"])).name, num(row["annual_mean_C"]),
                 f"{int(row['occupied_hours'])}", num(row["occupied_in_band_pct"]),
                 num(row["occupied_nv_suitable_pct"]), _months(row["months_can_open"]),
                 num(row["night_cooling_pct"])]
        if options.future is not None:
            cells += [num(row["future_occupied_nv_suitable_pct"]), _months(row["future_months_can_open"])]
        lines_.append(cells)
    widths = [max(len(h), *(len(c[i]) for c in lines_)) if lines_ else len(h) for i, h in enumerate(heads)]
    numeric = {0, 3, 4, 5, 6, 8, 9}

    def fmt(cells: list[str]) -> str:
        return "  ".join(c.rjust(w) if i in numeric else c.ljust(w)
                         for i, (c, w) in enumerate(zip(cells, widths))).rstrip()

    out = [fmt(heads), fmt(["-" * w for w in widths])] + [fmt(c) for c in lines_] if lines_ else []
    band = f"{num(options.outdoor.band_low)}–{num(options.outdoor.band_high)} °C"
    out.append(f"Shares are of occupied hours ({', '.join(options.occupancy.days)} {options.occupancy.start}–"
               f"{options.occupancy.end}); band {band}; suitable = in band and within the dew point, wind "
               f"and rain limits; ranked by suitable share.")
    if options.future is not None:
        out.append(f"Future: {options.future.label} (source: {options.future.source}).")
    if errors:
        out.append(f"Skipped {len(errors)} file{'s' if len(errors) != 1 else ''}:")
        out += [f"  {e['error']}" for e in errors]
    return "\n".join(out)


def _labels(frame: pd.DataFrame) -> list[str]:
    return [f"{rank}. {row['location']}" for rank, row in frame.iterrows()]


def screen_chart(frame: pd.DataFrame, options: ScreenOptions) -> alt.TopLevelMixin:
    """Horizontal bars, best first: share of occupied hours in the band (pale) with the share
    also within the humidity, wind and rain limits (dark); with a future climate, today's and the
    future's suitable shares side by side."""
    shown = frame.head(CHART_MAX)
    labels = _labels(shown)
    y = alt.Y("label:N", sort=labels, title=None, axis=alt.Axis(labelLimit=260))
    height = max(60, 16 * len(shown) * (2 if options.future is not None else 1))
    if options.future is None:
        data = pd.DataFrame({"label": labels, "in_band": shown["occupied_in_band_pct"].to_numpy(),
                             "suitable": shown["occupied_nv_suitable_pct"].to_numpy()})
        long = data.melt("label", var_name="share", value_name="pct")
        long["share"] = long["share"].map({"in_band": "dry bulb in the band",
                                           "suitable": "also within dew point, wind and rain limits"})
        order = ["dry bulb in the band", "also within dew point, wind and rain limits"]
        # overlaid, not stacked: suitable hours are a subset of the in-band hours (drawn on top)
        chart = alt.Chart(long).mark_bar(size=11).encode(
            x=alt.X("pct:Q", title="Occupied hours [%]", scale=alt.Scale(domain=[0, 100]), stack=None),
            y=y,
            color=alt.Color("share:N", title=None, scale=alt.Scale(domain=order, range=[charts.LIGHT, charts.DARK]),
                            legend=alt.Legend(labelLimit=400)),
        )
        subtitle = "Pale: outdoor dry bulb in the band; dark: suitable for natural ventilation (in band and within limits)"
    else:
        data = pd.DataFrame({"label": labels, "today": shown["occupied_nv_suitable_pct"].to_numpy(),
                             "future": shown["future_occupied_nv_suitable_pct"].to_numpy()})
        long = data.melt("label", var_name="climate", value_name="pct")
        chart = alt.Chart(long).mark_bar(size=9).encode(
            x=alt.X("pct:Q", title="Occupied hours suitable for natural ventilation [%]",
                    scale=alt.Scale(domain=[0, 100])),
            y=y,
            yOffset=alt.YOffset("climate:N", sort=["today", "future"]),
            color=alt.Color("climate:N", title=None, sort=["today", "future"],
                            scale=alt.Scale(domain=["today", "future"], range=[charts.DARK, charts.WARM])),
        )
        subtitle = f"Dark: today's weather; amber: morphed to {options.future.label}"
    best = shown.iloc[0]
    title = (f"{best['location']} ranks first: {num(best['occupied_nv_suitable_pct'])} % of occupied hours "
             f"suitable for natural ventilation")
    if len(frame) > CHART_MAX:
        subtitle += f"; the best {CHART_MAX} of {len(frame)} files"
    return charts.style(chart.properties(width=520, height=height), title, subtitle)


_COLUMNS = {
    "location": "Location in file", "file_name": "File", "annual_mean_C": "Annual mean [°C]",
    "mean_diurnal_range_K": "Mean daily range [K]", "occupied_hours": "Occupied hours",
    "occupied_in_band_pct": "Occupied in band [%]", "occupied_nv_suitable_pct": "Occupied suitable [%]",
    "months_can_open_text": "Months that can open up", "night_cooling_pct": "Days after a cool night [%]",
    "rain_assessed": "Rain data",
}
_FUTURE_COLUMNS = {
    "future_annual_mean_C": "Future annual mean [°C]",
    "future_occupied_nv_suitable_pct": "Future occupied suitable [%]",
    "future_months_text": "Future months that can open up",
    "future_night_cooling_pct": "Future days after a cool night [%]",
}


def page_html(frame: pd.DataFrame, errors: list[dict[str, str]], options: ScreenOptions,
              chart_png: bytes | None) -> str:
    """The whole screen.html page (escaped, self-contained)."""
    css = (templates_dir() / "report.css").read_text(encoding="utf-8")
    shown = frame.assign(file_name=[Path(str(f)).name for f in frame["file"]],
                         months_can_open_text=[_months(m) for m in frame["months_can_open"]])
    columns = dict(_COLUMNS)
    if options.future is not None:
        shown = shown.assign(future_months_text=[_months(m) for m in frame["future_months_can_open"]])
        columns.update(_FUTURE_COLUMNS)
    n = len(frame) + len(errors)
    parts = [
        "<!DOCTYPE html>", '<html lang="en"><head><meta charset="utf-8">',
        f"<title>Climate screening of {n} weather files</title>", f"<style>{css}</style></head><body>",
        '<p class="kicker">freerun climate screening</p>',
        f"<h1>Climate screening of {n} weather file{'s' if n != 1 else ''}</h1>",
        '<p class="notice">A quick comparison of outdoor climates for mixed-mode ventilation: how often the '
        "outdoor air would suit opening windows during the occupied hours below. It is a screening aid for "
        "choosing or comparing sites and weather files, not a design calculation: it says nothing about the "
        "building, its heat gains or its openings.</p>",
    ]
    if len(frame):
        parts.append(f"<p>{len(frame)} file{'s' if len(frame) != 1 else ''} screened, ranked by the share of "
                     "occupied hours suitable for natural ventilation, best first"
                     + (f"; {len(errors)} skipped (listed at the end)" if errors else "") + ".</p>")
    if chart_png:
        alt_text = "Ranked bar chart of the share of occupied hours suitable for natural ventilation per file"
        parts.append(f'<figure><img alt="{esc(alt_text)}" src="data:image/png;base64,'
                     f'{base64.b64encode(chart_png).decode("ascii")}"><figcaption class="small">'
                     f"{esc(alt_text)}</figcaption></figure>")
    if len(frame):
        notes = ["Shares are of each file's occupied hours; days after a cool night are a share of occupied days.",
                 "Suitable: dry bulb in the band and within the dew point, wind and rain limits (rain only where "
                 "the file has rain data)."]
        if options.future is not None:
            notes.append(options.future.describe())
        parts.append(table_html(shown, caption="Screened weather files", columns=columns,
                                formats={"occupied_hours": 0}, index_label="Rank", notes=notes))
    settings = pd.DataFrame(settings_rows(options), columns=["item", "value", "source"]).set_index("item")
    parts.append(table_html(settings, caption="Settings used for every file",
                            columns={"value": "Value", "source": "Source"}, index_label="Setting"))
    if errors:
        items = "".join(f"<li>{esc(e['error'])}</li>" for e in errors)
        parts.append(f'<h2>Skipped files</h2><div class="warn"><p>These files could not be screened; the reason '
                     f"is given for each.</p><ul>{items}</ul></div>")
    parts.append(f'<p class="page-foot">freerun {esc(__version__)} — screen.csv beside this page holds the same '
                 "figures to four decimals.</p></body></html>")
    return "\n".join(parts) + "\n"


def _replace(path: Path, data: bytes) -> None:
    tmp = path.with_name(f".{path.name}.partial-{os.getpid()}")
    try:
        tmp.write_bytes(data)
        os.replace(tmp, path)
    finally:
        if tmp.exists():
            tmp.unlink()


def write_outputs(frame: pd.DataFrame, errors: list[dict[str, str]], options: ScreenOptions,
                  out_dir: str | os.PathLike) -> tuple[Path, Path]:
    """Write screen.csv and screen.html into ``out_dir`` (created if needed).

    Both are made in memory first, then each is written to a temporary file and renamed into
    place. The CSV holds the screened rows (index ``rank``), floats to 4 decimals; the skipped
    files appear on the page and in the terminal only.
    """
    out = Path(out_dir)
    csv_text = frame.to_csv(float_format="%.4f", lineterminator="\n")
    png = charts.render_png(screen_chart(frame, options)) if len(frame) else None
    html_text = page_html(frame, errors, options, png)
    out.mkdir(parents=True, exist_ok=True)
    csv_path, html_path = out / CSV_NAME, out / HTML_NAME
    _replace(csv_path, csv_text.encode("utf-8"))
    _replace(html_path, html_text.encode("utf-8"))
    return csv_path, html_path
