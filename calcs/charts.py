"""Report charts: our house style, chart builders and static rendering.

Charts are built with altair and rendered to PNG with vl-convert, so the
report carries images only (no scripts, nothing fetched). The palette is
chosen to stay distinct in greyscale print and for the common forms of
colour-blindness: categories differ in lightness as well as hue.
"""

from __future__ import annotations

from collections.abc import Sequence

import altair as alt
import pandas as pd

alt.data_transformers.disable_max_rows()

FONT = "DejaVu Sans"
INK = "#222222"
GRID = "#d9d9d9"
# Dark to light; hue steps from a colour-blind-safe set, lightness steps for greyscale.
DARK = "#1b4965"  # deep blue
MID = "#5fa8d3"  # sky blue
WARM = "#d9822b"  # amber
LIGHT = "#e8e2d0"  # sand
GREY = "#8c8c8c"
BAND = "#bfd8b8"  # pale green band fill

MONTHS = ("Jan", "Feb", "Mar", "Apr", "May", "Jun", "Jul", "Aug", "Sep", "Oct", "Nov", "Dec")


def style(chart: alt.TopLevelMixin, title: str, subtitle: str = "") -> alt.TopLevelMixin:
    """Apply the house style and a title that states the finding."""
    params = {"text": title, "anchor": "start", "fontSize": 14, "font": FONT, "color": INK}
    if subtitle:
        params.update(subtitle=subtitle, subtitleFont=FONT, subtitleColor="#555555", subtitleFontSize=11)
    return (
        chart.properties(title=alt.TitleParams(**params))
        .configure(font=FONT, background="white")
        .configure_axis(labelFont=FONT, titleFont=FONT, labelColor=INK, titleColor=INK, gridColor=GRID,
                        labelFontSize=10, titleFontSize=11)
        .configure_legend(labelFont=FONT, titleFont=FONT, labelFontSize=10, titleFontSize=11, orient="bottom")
        .configure_view(stroke=None)
    )


def render_png(chart: alt.TopLevelMixin, scale: float = 2.0) -> bytes:
    """Render a chart to PNG bytes (offline; by a build's chart renderer where there is one)."""
    from .chart_renderer import render

    return render(chart.to_json(), scale=scale)


class BackgroundCharts:
    """Renders a stage's charts in a background thread while the notebook goes on.

    vl-convert releases the interpreter lock while it renders, so the kernel keeps calculating.
    :meth:`show` serialises the chart at once (later changes to its data cannot leak in) and
    shows a placeholder output in the notebook; the thread renders the PNG and writes it to the
    stage folder. :meth:`wait` — called by ``Stage.finish`` in the template's last cell — waits
    for every chart, re-raises the first rendering error, and replaces each placeholder with its
    image (an IPython display update sent from the kernel's main thread, so the notebook client
    records it in the executed notebook).
    """

    def __init__(self, warm_up: bool = False) -> None:
        from concurrent.futures import ThreadPoolExecutor

        self._pool = ThreadPoolExecutor(max_workers=1, thread_name_prefix="charts")
        self._pending: list = []
        if warm_up:
            self._pool.submit(_warm_up)

    def show(self, chart: alt.TopLevelMixin, path, alt_text: str, scale: float = 2.0) -> None:
        """Render ``chart`` to ``path`` (PNG) in the background and show it under ``alt_text``."""
        from pathlib import Path

        from IPython.display import display

        spec = chart.to_json()
        handle = display({"text/plain": f"{alt_text} (chart rendering)"}, raw=True, display_id=True)

        def job() -> bytes:
            from .chart_renderer import render

            png = render(spec, scale=scale)
            Path(path).write_bytes(png)
            return png

        self._pending.append((handle, alt_text, self._pool.submit(job)))

    def wait(self) -> int:
        """Wait for every chart and show it; returns how many. Re-raises a rendering error."""
        import base64

        pending, self._pending = self._pending, []
        for handle, alt_text, future in pending:
            png = future.result()
            if handle is not None:
                handle.update({"image/png": base64.b64encode(png).decode("ascii"), "text/plain": alt_text}, raw=True)
        return len(pending)


def _warm_up() -> None:
    """Render one tiny chart: vl-convert's first rendering in a process starts its JavaScript engine.

    That start costs about 0.6 s and holds the interpreter lock throughout (measured: the
    calling kernel's main thread stood still for 0.55 s), where later renderings release it. A
    stage opens its chart thread with this job before it waits at its build gate
    (:func:`calcs.stage.open_stage`), so the start falls in the wait, not in the first chart
    cell — unless a build's chart renderer draws the charts (:mod:`calcs.chart_renderer`).
    """
    import os

    from .chart_renderer import ENV, start_engine

    if not os.environ.get(ENV):
        start_engine()


def day_hour_map(
    index: pd.DatetimeIndex,
    category: Sequence[str],
    *,
    order: Sequence[str],
    colours: Sequence[str],
    legend_title: str,
) -> alt.Chart:
    """A day-of-year × hour-of-day map of an hourly category (one cell per hour)."""
    day = index.day_of_year.to_numpy()
    frame = pd.DataFrame({"day": day, "day_end": day + 1, "hour": index.hour, "hour_end": index.hour + 1,
                          "category": list(category)})
    starts = [int(pd.Timestamp(year=index[0].year, month=m, day=1).day_of_year) for m in range(1, 13)]
    label = "{" + ", ".join(f"{d}: '{MONTHS[i]}'" for i, d in enumerate(starts)) + "}"
    return (
        alt.Chart(frame)
        .mark_rect()
        .encode(
            x=alt.X("day:Q", title=None, scale=alt.Scale(domain=[1, int(day.max()) + 1], nice=False),
                    axis=alt.Axis(values=starts, labelExpr=f"{label}[datum.value]", grid=False)),
            x2="day_end:Q",
            y=alt.Y("hour:Q", title="Hour starting", scale=alt.Scale(domain=[0, 24], nice=False),
                    axis=alt.Axis(values=list(range(0, 25, 3)), grid=False)),
            y2="hour_end:Q",
            color=alt.Color("category:N", title=legend_title,
                            scale=alt.Scale(domain=list(order), range=list(colours))),
        )
        .properties(width=640, height=220)
    )


def monthly_ranges(monthly: pd.DataFrame, band: tuple[float, float]) -> alt.LayerChart:
    """Mean daily minimum–maximum and monthly mean per month, against the outdoor band.

    ``monthly`` has columns ``mean_C``, ``mean_daily_min_C``, ``mean_daily_max_C`` and one row per month 1–12.
    """
    frame = monthly.reset_index(drop=True).assign(month=list(MONTHS[: len(monthly)]))
    x = alt.X("month:N", sort=list(MONTHS), title=None, axis=alt.Axis(labelAngle=0))
    band_frame = pd.DataFrame({"low": [band[0]], "high": [band[1]]})
    shade = alt.Chart(band_frame).mark_rect(color=BAND, opacity=0.6).encode(y="low:Q", y2="high:Q")
    low = min(float(frame["mean_daily_min_C"].min()), band[0])
    high = max(float(frame["mean_daily_max_C"].max()), band[1])
    domain = [5 * ((low - 1) // 5), 5 * (-((-high - 1) // 5))]
    bars = alt.Chart(frame).mark_bar(color=MID, size=18).encode(
        x=x,
        y=alt.Y("mean_daily_min_C:Q", title="Outdoor dry bulb [°C]", scale=alt.Scale(domain=domain, nice=False)),
        y2="mean_daily_max_C:Q",
    )
    ticks = alt.Chart(frame).mark_tick(color=DARK, thickness=3, size=22).encode(x=x, y="mean_C:Q")
    return alt.layer(shade, bars, ticks).properties(width=560, height=240)


def monthly_bars(monthly: pd.DataFrame, column: str, axis_title: str, highlight: float | None = None) -> alt.Chart:
    """One bar per month of ``column``; months at or above ``highlight`` drawn dark."""
    frame = monthly.reset_index(drop=True).assign(month=list(MONTHS[: len(monthly)]))
    if highlight is None:
        colour = alt.value(DARK)
    else:
        frame["met"] = frame[column] >= highlight
        colour = alt.Color(
            "met:N",
            title=None,
            scale=alt.Scale(domain=[True, False], range=[DARK, LIGHT]),
            legend=alt.Legend(labelExpr=f"datum.value ? 'at or above {highlight:g} %' : 'below {highlight:g} %'"),
        )
    return (
        alt.Chart(frame)
        .mark_bar(stroke=INK, strokeWidth=0.5)
        .encode(
            x=alt.X("month:N", sort=list(MONTHS), title=None, axis=alt.Axis(labelAngle=0)),
            y=alt.Y(f"{column}:Q", title=axis_title),
            color=colour,
        )
        .properties(width=560, height=220)
    )
