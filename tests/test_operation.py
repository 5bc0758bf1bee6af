"""Window control and changeover: consistency with the published flow methods and adaptive limits.

The control rules themselves are our design assumptions (documented in calcs/operation.py);
the checks here are against the published equations they rest on (BS 5925 / Warren flow methods
via calcs.airflow, EN 16798-1 and ASHRAE 55 adaptive limits) and hand-worked sequences.
"""

from __future__ import annotations

import numpy as np
import pytest
from numpy.testing import assert_allclose

from calcs import airflow, operation, thermal
from calcs.errors import ProjectError

ARRANGEMENTS = ["single_sided", "single_sided_two_level", "cross", "stack"]


def _coefficients(wind_met, wind_bld):
    return operation.opening_flow_coefficients(
        ARRANGEMENTS, wind_speed_met=wind_met, wind_speed_building=wind_bld,
        opening_height=[1.2, 1.0, 1.4, 1.0], stack_height=[0.0, 1.6, 2.0, 6.0],
        cp_windward=0.5, cp_leeward=-0.3, discharge_coefficient=[0.61, 0.6, 0.61, 0.55],
    )


def test_full_opening_flow_equals_the_published_methods():
    rng = np.random.default_rng(1)
    wind_met = rng.uniform(0, 8, 50)
    wind_bld = np.column_stack([wind_met * 0.7] * 4)
    coeff = _coefficients(wind_met, wind_bld)
    heights = dict(zip(ARRANGEMENTS, [(1.2, 0.0, 0.61), (1.0, 1.6, 0.6), (1.4, 2.0, 0.61), (1.0, 6.0, 0.55)]))
    for hour in range(50):
        temp_out = rng.uniform(5, 30)
        temp_in = rng.uniform(15, 32, 4)
        got = operation.full_opening_flow(coeff, hour, [10.0, 8.0, 20.0, 5.0], temp_in, temp_out)
        for z, arrangement in enumerate(ARRANGEMENTS):
            h, s, cd = heights[arrangement]
            expected = airflow.arrangement_flow(
                arrangement, [10.0, 8.0, 20.0, 5.0][z], wind_speed_met=wind_met[hour],
                wind_speed_building=wind_bld[hour, z], temp_in=temp_in[z], temp_air=temp_out, opening_height=h,
                stack_height=s, cp_windward=0.5, cp_leeward=-0.3, discharge_coefficient=cd)
            # BS 5925 flows ∝ √(ΔT/T̄) (stack) and ∝ U (wind); the split reproduces them exactly
            assert_allclose(got[z], expected, rtol=1e-9, atol=1e-12)


@pytest.mark.parametrize(
    ("temp_in", "temp_out", "allowed", "expected"),
    [
        (25.0, 20.0, True, 1.0),  # 25 ≥ 21 + 2: fully open
        (22.0, 20.0, True, 0.5),  # (22 − 21)/2
        (20.5, 18.0, True, 0.0),  # below the low set-point: closed
        (25.0, 27.0, True, 0.0),  # outdoor warmer: opening would heat the room
        (25.0, 20.0, False, 0.0),  # outdoor air not acceptable (rain, wind, humidity)
    ],
)
def test_window_opening_fraction_hand_cases(temp_in, temp_out, allowed, expected):
    got = operation.window_opening_fraction(temp_in, temp_out, allowed, low_setpoint=21.0, control_band=2.0)
    assert_allclose(got, expected, atol=1e-12)


def test_criterion_limits_follow_the_adaptive_equations():
    rm = np.array([12.0, 20.0, 28.0])
    pm = np.array([12.0, 20.0, 28.0])
    top = np.full(3, 24.0)
    en = operation.criterion_limits("en16798_cat2", temp_op=top, temp_air=top, running_mean=rm, prevailing_mean=pm)
    # EN 16798-1:2019 Annex B.2: θc = 0.33·θrm + 18.8; category II +3 / −4
    assert_allclose(en.upper, 0.33 * rm + 18.8 + 3, atol=1e-9)
    assert_allclose(en.lower[1:], 0.33 * rm[1:] + 18.8 - 4, atol=1e-9)
    # below θrm 15 °C the EN lower limit does not apply [MEM]: the fixed lower limit (heating) stands in
    assert en.lower[0] == 20.0 and en.in_range.all()
    ash = operation.criterion_limits("ashrae55_80", temp_op=top, temp_air=top, running_mean=rm, prevailing_mean=pm)
    # ASHRAE 55-2020 §5.4: 0.31·t_pma + 17.8 ± 3.5
    assert_allclose(ash.upper, 0.31 * pm + 21.3, atol=1e-9)
    assert_allclose(ash.lower, 0.31 * pm + 14.3, atol=1e-9)
    band = operation.criterion_limits("outdoor_band", temp_op=top, temp_air=np.array([10.0, 20.0, 30.0]),
                                      running_mean=rm, prevailing_mean=pm, band=(16.0, 26.0))
    assert_allclose(band.value, [10, 20, 30]) and assert_allclose(band.upper, 26.0)
    with pytest.raises(ProjectError, match="criterion must be one of"):
        operation.criterion_limits("comfy", temp_op=top, temp_air=top, running_mean=rm, prevailing_mean=pm)


def test_changeover_modes_hand_sequence():
    """Limits 20–26 °C, dead band 1 K, occupied 08–12 on two days (hand-worked)."""
    value = np.array([25.0, 26.5, 25.5, 24.8, 24.0, 23.0, 26.4, 27.0])
    hours = np.arange(8)
    limits = operation.Limits(value=value, lower=np.full(8, 20.0), upper=np.full(8, 26.0),
                              in_range=np.ones(8, bool), judged="operative")
    occupied = np.array([True, True, True, True, True, True, True, False])
    days = np.array([1, 1, 1, 1, 1, 2, 2, 2])
    modes = operation.changeover_modes(limits, occupied, days, dead_band=1.0)
    # 25 NV; 26.5 > 26 → AC; 25.5 > 25 stays AC; 24.8 ≤ 25 → NV; 24 NV; new day 23 NV; 26.4 → AC; unoccupied → False
    assert modes.tolist() == [True, False, False, True, True, True, False, False]
    assert hours.size == modes.size


def test_changeover_out_of_range_hours_go_to_air_conditioning():
    value = np.array([22.0, 22.0])
    limits = operation.Limits(value=value, lower=np.full(2, 20.0), upper=np.full(2, 26.0),
                              in_range=np.array([True, False]), judged="operative")
    assert operation.changeover_modes(limits, [True, True], [1, 1]).tolist() == [True, False]


# ---------------------------------------------------------------- free running with window control

T = 24 * 10


def _box(area=(10.0,), mass="medium"):
    n = len(area)
    params = thermal.zone_parameters(np.full(n, 200.0), np.full(n, 60.0), np.full(n, 80.0), mass)
    hours = np.arange(T)
    temp_air = 22.0 + 5.0 * np.sin(2 * np.pi * (hours % 24 - 9) / 24)  # constructed warm days, 17–27 °C
    occupied = ((hours % 24) >= 8) & ((hours % 24) < 18)
    gains = np.where(occupied, 200.0 * 35.0, 200.0 * 3.0)[:, None] * np.ones(n)
    coeff = operation.opening_flow_coefficients(["single_sided"] * n, wind_speed_met=np.full(T, 2.0),
                                                wind_speed_building=np.full((T, n), 1.5),
                                                opening_height=1.2, stack_height=0.0, cp_windward=0.5,
                                                cp_leeward=-0.3, discharge_coefficient=0.61)
    return params, temp_air, occupied, gains, coeff


def _run(area, mass="medium", allowed=True, temp_m_initial=None):
    params, temp_air, occupied, gains, coeff = _box(area, mass)
    n = len(area)
    allow = np.broadcast_to(np.asarray(allowed) & occupied[:, None], (T, n))
    return operation.simulate_free_running(
        params, temp_air=temp_air, gains_internal=gains, gains_solar=np.zeros((T, n)), coefficients=coeff,
        free_area=np.asarray(area), secure_area=np.zeros(n), infiltration_flow=np.full(n, 0.05),
        background_flow=np.where(occupied, 0.2, 0.0)[:, None] * np.ones(n), allowed_day=allow,
        allowed_night=np.zeros((T, n), bool), low_setpoint=21.0, night_low_setpoint=19.0,
        temp_m_initial=temp_m_initial)


def test_more_openable_area_never_raises_the_temperature():
    run = _run((2.0, 5.0, 10.0, 20.0))
    temps = run.result.temp_air_in
    assert (np.diff(temps, axis=1) <= 1e-6).all()
    assert temps[:, 0].max() - temps[:, 3].max() > 0.5  # and it matters
    assert (run.result.unconverged_hours == 0).all()


def test_closed_windows_equal_the_plain_model():
    """Windows never allowed: the same as a 5R1C run with constant H_ve (ISO 13790 Annex C)."""
    run = _run((10.0,), allowed=False, temp_m_initial=25.0)
    params, temp_air, occupied, gains, _ = _box((10.0,))
    h_ve = thermal.ventilation_heat_transfer(0.05 + np.where(occupied, 0.2, 0.0))[:, None]
    plain = thermal.simulate(params, temp_air, gains, np.zeros((T, 1)), h_ve, temp_m_initial=25.0)
    assert_allclose(run.result.temp_air_in, plain.temp_air_in, atol=1e-9)
    assert_allclose(run.window_flow, 0.0, atol=1e-15)


def test_windows_throttle_to_avoid_overcooling():
    run = _run((40.0,))
    occupied = ((np.arange(T) % 24) >= 8) & ((np.arange(T) % 24) < 18)
    # with a very large opening the room may not be driven far below the 21 °C low set-point
    assert run.result.temp_air_in[occupied, 0].min() > 20.0
    consistent = operation.window_opening_fraction(run.result.temp_air_in[:, 0], _box()[1], occupied,
                                                   low_setpoint=21.0, control_band=2.0)
    assert ((consistent > 0) == (run.window_flow[:, 0] > 0)).all()
