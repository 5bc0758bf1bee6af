"""Public typical-year data shipped with pvlib, as freerun weather frames (test helper).

pvlib's data folder holds real TMY3 files (723170TYA.CSV Greensboro NC,
703165TY.csv Sand Point AK) and a TMY2 file (12839.tm2 Miami FL): open data
sets from NREL used as outside references by the tests.
"""

from __future__ import annotations

from pathlib import Path

import pandas as pd
import pvlib

PVLIB_DATA = Path(pvlib.__file__).parent / "data"


def tmy3_frame(fname, year=2023):
    """A pvlib TMY3 file as a freerun frame: hour-start labels, SI units, NaN for missing.

    TMY3 stamps each hour at its END (01:00 = 00:00–01:00; Wilcox & Marion
    2008, NREL/TP-581-43156; pvlib read_tmy3 docstring warning), so the
    labels move back one hour. Pressure is in mbar (×100 → Pa); -9900 is the
    TMY3 missing value for precipitation.
    """
    df, meta = pvlib.iotools.read_tmy3(PVLIB_DATA / fname, coerce_year=year)
    frame = pd.DataFrame(
        {
            "temp_air": df["temp_air"],
            "temp_dew": df["temp_dew"],
            "relative_humidity": df["relative_humidity"],
            "pressure": df["pressure"] * 100.0,
            "wind_speed": df["wind_speed"],
            "wind_direction": df["wind_direction"],
            "ghi": df["ghi"],
            "dni": df["dni"],
            "dhi": df["dhi"],
            "rain": df["Lprecip depth (mm)"].where(df["Lprecip depth (mm)"] > -9900),
        }
    ).astype(float)
    frame.index = (df.index - pd.Timedelta(hours=1)).tz_localize(None)
    site = {
        "location": meta["Name"].strip('"'),
        "latitude": meta["latitude"],
        "longitude": meta["longitude"],
        "utc_offset": meta["TZ"],
        "elevation": meta["altitude"],
    }
    return frame, site
