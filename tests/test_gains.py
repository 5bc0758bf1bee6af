"""Tests of calcs.gains.

Outside references used here:
- ASHRAE Handbook—Fundamentals (SI) 2009/2013, ch.18 Table 1, people heat
  gains (values as transcribed in REFERENCES.md §9 from scans [DOC]); the
  note that sensible heat falls ~20 % at 27 °C is [MEM];
- the Gregorian calendar (2023 starts on a Sunday and has 260 weekdays);
- ISO 13790:2008 ρ_a·c_a = 1200 J m⁻³ K⁻¹ [MEM], also used in that form by
  RC_BuildingSimulator (1200·V·ACH/3600) [DOC, REFERENCES.md §7];
- hand arithmetic for everything else.
"""

import numpy as np
import pandas as pd
import pytest
from numpy.testing import assert_allclose

from calcs import gains
from calcs.errors import ProjectError

YEAR_2023 = pd.date_range("2023-01-01 00:00", "2023-12-31 23:00", freq="h")


# --------------------------------------------------------------------------
# people
# --------------------------------------------------------------------------
# ASHRAE HoF (SI) 2009/2013 ch.18 Table 1: sensible, latent, adjusted M/F total [W]
ASHRAE_TABLE_1 = {
    "seated_very_light": (70.0, 45.0, 115.0),         # "Seated, very light work"
    "office_moderately_active": (75.0, 55.0, 130.0),  # "Moderately active office work"
    "standing_light_or_walking": (75.0, 55.0, 130.0), # "Standing, light work; walking"
    "seated_theatre_night": (70.0, 35.0, 105.0),      # "Seated at theatre, night"
}


@pytest.mark.parametrize("activity", sorted(ASHRAE_TABLE_1))
def test_people_gains_match_ashrae_table_1(activity):
    sens, lat, total = ASHRAE_TABLE_1[activity]
    g = gains.people_gain(activity)
    assert_allclose([g.sensible, g.latent], [sens, lat], atol=1e-9)
    # the table's adjusted total is the sum of its sensible and latent columns
    assert_allclose(g.sensible + g.latent, total, atol=1e-9)
    assert "ch.18 Table 1" in g.source


@pytest.mark.parametrize("activity", sorted(ASHRAE_TABLE_1))
def test_people_gains_at_27C_keep_total(activity):
    # ASHRAE Table 1 note [MEM]: at 27 °C sensible falls ~20 %, latent rises
    # accordingly (total unchanged, = the table's adjusted total)
    sens, lat, total = ASHRAE_TABLE_1[activity]
    g = gains.people_gain(activity, room_temperature=27.0)
    assert_allclose(g.sensible, 0.8 * sens, atol=1e-9)
    assert_allclose(g.sensible + g.latent, total, atol=1e-9)


def test_people_gain_between_24_and_27C_is_linear():
    # our documented straight line (common practice, no source): at 25.5 °C
    # half the 20 % drop → 70 × 0.9 = 63 W sensible, 45 + 7 = 52 W latent
    g = gains.people_gain("seated_very_light", room_temperature=25.5)
    assert_allclose([g.sensible, g.latent], [63.0, 52.0], atol=1e-9)


@pytest.mark.parametrize("t, expected_sensible", [(22.0, 70.0), (30.0, 56.0)])
def test_people_gain_outside_range_warns_and_holds_end_value(t, expected_sensible):
    with pytest.warns(UserWarning, match="outside the 24–27 °C"):
        g = gains.people_gain("seated_very_light", room_temperature=t)
    assert_allclose(g.sensible, expected_sensible, atol=1e-9)


@pytest.mark.parametrize("bad", ["typing", "Seated_very_light", None])
def test_people_gain_unknown_activity(bad):
    with pytest.raises(ProjectError, match="activity must be one of"):
        gains.people_gain(bad)


def test_people_gain_bad_temperature():
    with pytest.raises(ProjectError, match="room_temperature"):
        gains.people_gain("seated_very_light", room_temperature="warm")


# --------------------------------------------------------------------------
# schedules
# --------------------------------------------------------------------------
NINE_TO_FIVE = [1.0 if 9 <= h < 17 else 0.0 for h in range(24)]  # 8 hours
MIDNIGHT_ONLY = [1.0] + [0.0] * 23


def test_schedule_hand_counts_2023():
    # calendar: 2023 has 365 days = 52 weeks + 1 day (Sunday 1 Jan) →
    # 260 weekdays, 105 weekend days
    s = gains.hourly_schedule(YEAR_2023, NINE_TO_FIVE, MIDNIGHT_ONLY)
    assert s.index.equals(YEAR_2023)
    assert s.name == "fraction"
    assert_allclose(s.sum(), 260 * 8 + 105 * 1, atol=1e-9)
    # the 00:00 row is the hour 00:00–01:00 of Sunday 1 January: weekend entry 0
    assert_allclose(s.iloc[0], 1.0, atol=0)
    assert_allclose(s.loc["2023-01-02 09:00"], 1.0, atol=0)  # Monday, first hour
    assert_allclose(s.loc["2023-01-02 17:00"], 0.0, atol=0)  # Monday, hour after


def test_schedule_holidays_follow_weekend_profile():
    # hand: 2 Jan and 25 Dec 2023 are Mondays → 258 weekdays, 107 weekend-type days
    hol = ["2023-01-02", pd.Timestamp("2023-12-25 15:30")]  # time of day ignored
    s = gains.hourly_schedule(YEAR_2023, NINE_TO_FIVE, MIDNIGHT_ONLY, holidays=hol)
    assert_allclose(s.sum(), 258 * 8 + 107 * 1, atol=1e-9)
    # a single date given as a string is one holiday: 259 weekdays, 106 others
    s = gains.hourly_schedule(YEAR_2023, NINE_TO_FIVE, MIDNIGHT_ONLY, holidays="2023-01-02")
    assert_allclose(s.sum(), 259 * 8 + 106 * 1, atol=1e-9)


def test_default_office_profiles_hand_counts():
    # hand: occupancy weekday 0.1+0.5+1+1+1+0.8+1+1+1+1+0.5+0.1 = 9.0 equivalent hours
    occ = gains.OFFICE_OCCUPANCY
    assert_allclose(sum(occ.weekday), 9.0, atol=1e-12)
    s = gains.hourly_schedule(YEAR_2023, occ.weekday, occ.weekend)
    assert_allclose(s.sum(), 260 * 9.0, atol=1e-9)
    for prof in (gains.OFFICE_OCCUPANCY, gains.OFFICE_LIGHTING_USE, gains.OFFICE_EQUIPMENT_USE):
        assert len(prof.weekday) == 24 and len(prof.weekend) == 24
        assert prof.source.startswith("common practice, no source")


@pytest.mark.parametrize(
    "weekday, word",
    [
        ([1.0] * 23, "24 hourly values"),
        ([1.0] * 23 + [1.5], "lie in"),
        ([np.nan] * 24, "lie in"),
    ],
)
def test_schedule_bad_profiles(weekday, word):
    with pytest.raises(ProjectError, match=word):
        gains.hourly_schedule(YEAR_2023, weekday, MIDNIGHT_ONLY)


def test_schedule_bad_index_and_holidays():
    with pytest.raises(ProjectError, match="DatetimeIndex"):
        gains.hourly_schedule(range(24), NINE_TO_FIVE, NINE_TO_FIVE)
    with pytest.raises(ProjectError, match="holidays"):
        gains.hourly_schedule(YEAR_2023, NINE_TO_FIVE, NINE_TO_FIVE, holidays=["Christmas"])


# --------------------------------------------------------------------------
# internal gains
# --------------------------------------------------------------------------
def test_internal_gains_hand_arithmetic_with_defaults():
    res = gains.internal_gains(YEAR_2023, floor_area=100.0)
    assert list(res.columns) == [
        "people_sensible", "people_latent", "lighting", "equipment", "total_sensible"
    ]
    # Monday 10:00, full use: 100 m² / 10 m² per person = 10 people;
    # 10 × 70 W = 700 W sensible, 10 × 45 W = 450 W latent (ASHRAE Table 1);
    # lighting 8 W m⁻² × 100 = 800 W; equipment 15 × 100 = 1500 W
    row = res.loc["2023-01-02 10:00"]
    assert_allclose(row.to_numpy(), [700.0, 450.0, 800.0, 1500.0, 3000.0], atol=1e-9)
    # Sunday 10:00: nobody; lights 5 % = 40 W, equipment 20 % = 300 W
    row = res.loc["2023-01-01 10:00"]
    assert_allclose(row.to_numpy(), [0.0, 0.0, 40.0, 300.0, 340.0], atol=1e-9)
    # annual people sensible: 10 people × 70 W × 260 days × 9.0 h = 1 638 000 Wh
    assert_allclose(res["people_sensible"].sum(), 1_638_000.0, rtol=1e-12)
    a = res.attrs["assumptions"]
    assert a["lighting"]["source"] == gains.DEFAULT_LIGHTING.source
    assert a["equipment"]["source"] == gains.DEFAULT_EQUIPMENT.source
    assert a["people_density"]["source"] == gains.DEFAULT_PEOPLE_DENSITY.source
    assert a["occupancy"]["source"] == gains.OFFICE_OCCUPANCY.source


@pytest.mark.parametrize("kind", ["scalar", "array", "series"])
def test_internal_gains_schedule_types(kind):
    idx = YEAR_2023[:48]
    if kind == "scalar":
        occ = 0.5
    elif kind == "array":
        occ = np.full(48, 0.5)
    else:
        occ = pd.Series(0.5, index=idx)
    res = gains.internal_gains(idx, 200.0, people_density=8.0, activity="office_moderately_active",
                               lighting=6.0, equipment=10.0, occupancy=occ, lighting_use=1.0,
                               equipment_use=np.zeros(48))
    # hand: 200/8 × 0.5 = 12.5 people × 75 W = 937.5 W; × 55 W = 687.5 W latent;
    # lighting 6 × 200 = 1200 W; equipment 0
    assert_allclose(res["people_sensible"], 937.5, atol=1e-9)
    assert_allclose(res["people_latent"], 687.5, atol=1e-9)
    assert_allclose(res["total_sensible"], 2137.5, atol=1e-9)
    assert res.index.equals(idx)
    assert res.attrs["assumptions"]["lighting"]["source"] == "project input"


def test_internal_gains_holidays_reach_default_schedule():
    res = gains.internal_gains(YEAR_2023, 100.0, holidays=["2023-01-02"])
    assert_allclose(res.loc["2023-01-02 10:00", "people_sensible"], 0.0, atol=0)


@pytest.mark.parametrize(
    "kwargs, word",
    [
        ({"floor_area": 0}, "floor_area"),
        ({"floor_area": -5}, "floor_area"),
        ({"people_density": 0}, "people_density"),
        ({"lighting": -1}, "lighting"),
        ({"equipment": "lots"}, "equipment"),
        ({"activity": "dancing"}, "activity"),
        ({"occupancy": 1.2}, "occupancy"),
        ({"occupancy": np.ones(5)}, "occupancy"),
        ({"lighting_use": pd.Series(1.0, index=YEAR_2023[1:49])}, "lighting_use"),
    ],
)
def test_internal_gains_bad_arguments(kwargs, word):
    args = {"floor_area": 100.0} | kwargs
    with pytest.raises(ProjectError, match=word):
        gains.internal_gains(YEAR_2023[:48], **args)


def test_defaults_listed_with_sources():
    for name, d in gains.GAINS_DEFAULTS.items():
        assert d.source, name
    assert gains.DEFAULT_EQUIPMENT.value == 15.0 and "[DOC" in gains.DEFAULT_EQUIPMENT.source
    assert "[MEM]" in gains.DEFAULT_PEOPLE_DENSITY.source
    assert "[MEM]" in gains.PEOPLE_WARM_SENSIBLE_DROP.source


# --------------------------------------------------------------------------
# heat transfer coefficients
# --------------------------------------------------------------------------
def test_fabric_htc_hand():
    # hand: 50 m² × 0.3 + 20 m² × 1.4 + 100 m² × 0.2 = 15 + 28 + 20 = 63 W/K
    elements = {"wall": (50.0, 0.3), "window": (20.0, 1.4), "roof": (100.0, 0.2)}
    assert_allclose(gains.fabric_htc(elements), 63.0, atol=1e-12)
    assert_allclose(gains.fabric_htc(list(elements.values())), 63.0, atol=1e-12)
    assert gains.fabric_htc({}) == 0.0


@pytest.mark.parametrize(
    "elements, word",
    [
        ({"wall": (-1.0, 0.3)}, "area"),
        ({"wall": (10.0, 25.0)}, "U-value"),
        ({"wall": (10.0,)}, "pair"),
        (42, "mapping"),
    ],
)
def test_fabric_htc_bad(elements, word):
    with pytest.raises(ProjectError, match=word):
        gains.fabric_htc(elements)


def test_infiltration_htc_hand_and_iso_form():
    # hand: 1.2 × 1005 × 300 × 0.5 / 3600 = 50.25 W/K
    assert_allclose(gains.infiltration_htc(300.0, 0.5), 50.25, atol=1e-12)
    # ISO 13790 ρ_a·c_a = 1200 J m⁻³ K⁻¹ [MEM]; RC_BuildingSimulator
    # 1200·V·ACH/3600 [DOC]: 1200 × 300 × 0.5 / 3600 = 50.0 W/K
    assert_allclose(gains.infiltration_htc(300.0, 0.5, rho=1.2, cp=1000.0), 50.0, atol=1e-12)


@pytest.mark.parametrize("kind", ["scalar", "array", "series"])
def test_infiltration_and_ventilation_htc_types(kind):
    ach = [0.5, 1.0, 2.0]
    flow = [0.1, 0.2, 0.0]
    if kind == "array":
        ach, flow = np.array(ach), np.array(flow)
    elif kind == "series":
        idx = pd.Index(["north", "south", "core"])
        ach, flow = pd.Series(ach, index=idx), pd.Series(flow, index=idx)
    if kind == "scalar":
        assert_allclose(gains.infiltration_htc(300.0, 1.0), 100.5, atol=1e-12)
        # hand: 1.2 × 1005 × 0.1 = 120.6 W/K
        assert_allclose(gains.ventilation_htc(0.1), 120.6, atol=1e-12)
        assert isinstance(gains.ventilation_htc(0.1), float)
        return
    # hand: 300 m³ × 1206 / 3600 = 100.5 W/K per 1 h⁻¹
    assert_allclose(np.asarray(gains.infiltration_htc(300.0, ach)), [50.25, 100.5, 201.0],
                    atol=1e-12)
    assert_allclose(np.asarray(gains.ventilation_htc(flow)), [120.6, 241.2, 0.0], atol=1e-12)
    if kind == "series":
        assert list(gains.infiltration_htc(300.0, ach).index) == ["north", "south", "core"]
        assert list(gains.ventilation_htc(flow).index) == ["north", "south", "core"]


@pytest.mark.parametrize(
    "func, args, word",
    [
        (gains.infiltration_htc, (-300.0, 0.5), "volume"),
        (gains.infiltration_htc, (300.0, np.nan), "ach"),
        (gains.infiltration_htc, (300.0, 0.5, 0.0), "rho"),
        (gains.infiltration_htc, ([1.0, 2.0], [1.0, 2.0, 3.0]), "matching"),
        (gains.ventilation_htc, (-0.1,), "flow"),
        (gains.ventilation_htc, (0.1, 1.2, -1), "cp"),
    ],
)
def test_htc_bad(func, args, word):
    with pytest.raises(ProjectError, match=word):
        func(*args)


# --------------------------------------------------------------------------
# peak sensible cooling load
# --------------------------------------------------------------------------
def _three_hours():
    idx = pd.date_range("2023-07-03 13:00", periods=3, freq="h")
    internal = pd.Series([1000.0, 2000.0, 1500.0], index=idx)
    solar_gain = pd.Series([0.0, 500.0, 2000.0], index=idx)
    temp_air = pd.Series([20.0, 30.0, 28.0], index=idx)
    return idx, internal, solar_gain, temp_air


def test_peak_cooling_load_hand():
    idx, internal, solar_gain, temp_air = _three_hours()
    res = gains.peak_sensible_cooling_load(internal, solar_gain, temp_air, 100.0, 50.0, 24.0)
    # hand: (100 + 50) W/K × (θe − 24): −600, +900, +600
    # loads 1000 − 600 = 400; 2000 + 500 + 900 = 3400; 1500 + 2000 + 600 = 4100
    assert_allclose(res.hourly.to_numpy(), [400.0, 3400.0, 4100.0], atol=1e-9)
    assert_allclose(res.peak, 4100.0, atol=1e-9)
    assert res.time == idx[2]
    assert_allclose([res.internal, res.solar, res.transmission, res.air],
                    [1500.0, 2000.0, 400.0, 200.0], atol=1e-9)
    masked = gains.peak_sensible_cooling_load(
        internal, solar_gain, temp_air, 100.0, 50.0, 24.0, hours=np.array([True, True, False])
    )
    assert_allclose(masked.peak, 3400.0, atol=1e-9)
    assert masked.time == idx[1]


def test_peak_cooling_load_arrays_and_default_setpoint():
    # default set-point 24 °C (UK NCM open office [DOC]); arrays give positions
    res = gains.peak_sensible_cooling_load([0.0, 0.0], [0.0, 0.0], [30.0, 34.0], 10.0, 0.0)
    assert_allclose(res.peak, 100.0, atol=1e-9)  # hand: 10 W/K × (34 − 24)
    assert res.time == 1


@pytest.mark.parametrize(
    "change, word",
    [
        ({"temp_air": [20.0, 21.0]}, "lengths differ"),
        ({"solar_gain": [np.nan, 0.0, 0.0]}, "solar_gain"),
        ({"fabric_htc": -1.0}, "fabric_htc"),
        ({"indoor_setpoint": 50.0}, "indoor_setpoint"),
        ({"hours": np.zeros(3, dtype=bool)}, "no hour"),
        ({"hours": [1, 0, 1]}, "booleans"),
    ],
)
def test_peak_cooling_load_bad(change, word):
    args = {"internal_sensible": [1.0, 2.0, 3.0], "solar_gain": [0.0, 0.0, 0.0],
            "temp_air": [20.0, 25.0, 30.0], "fabric_htc": 10.0, "air_htc": 5.0} | change
    with pytest.raises(ProjectError, match=word):
        gains.peak_sensible_cooling_load(**args)


# ---------------------------------------------------------------- schedules from the occupancy calendar


def _week_calendar():
    """Mon 2026-01-05 … Sun 2026-01-11, occupied Mon–Fri 08:00–18:00 (hand-made calendar)."""
    index = pd.date_range("2026-01-05", periods=7 * 24, freq="h")
    occupied = pd.Series((index.day_of_week < 5) & (index.hour >= 8) & (index.hour < 18), index=index)
    return index, occupied


def test_calendar_fractions_follow_occupied_hours():
    index, occupied = _week_calendar()
    f = gains.calendar_fractions(occupied, out_of_hours=0.05)
    # hand count: 5 days × 10 h at 1, the other 118 h at 0.05
    assert_allclose(f.sum(), 50 + 118 * 0.05, rtol=1e-12)
    assert f.index.equals(index)


def test_calendar_fractions_profile_on_occupied_days_only():
    index, occupied = _week_calendar()
    profile = [0.0] * 7 + [0.5] + [1.0] * 10 + [0.5] + [0.0] * 5
    f = gains.calendar_fractions(occupied, profile, out_of_hours=0.2)
    # weekdays: the profile sums to 11.0 per day; weekend: 48 h at 0.2
    assert_allclose(f.sum(), 5 * 11.0 + 48 * 0.2, rtol=1e-12)
    assert f["2026-01-10 12:00"] == 0.2 and f["2026-01-05 07:00"] == 0.5


@pytest.mark.parametrize(("profile", "base"), [([1.0] * 23, 0.0), ([1.5] * 24, 0.0), (None, 1.5)])
def test_calendar_fractions_bad_arguments(profile, base):
    _, occupied = _week_calendar()
    with pytest.raises(ProjectError):
        gains.calendar_fractions(occupied, profile, out_of_hours=base)
