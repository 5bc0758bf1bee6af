"""The compiled hourly loops (calcs.kernels) against the numpy loop and the literal Annex C loop.

Oracles: the scalar per-hour loop :func:`calcs.thermal.simulate_loop_reference`, which follows
ISO 13790:2008 Annex C C.1–C.13 and §C.4.2 literally (three solves per controlled hour), and the
vectorised numpy engine of :func:`calcs.thermal.simulate`, itself tested against that loop in
test_thermal.py. The inputs are constructed (random but seeded), not demo data.
"""

from __future__ import annotations

import numpy as np
import pytest
from numpy.testing import assert_allclose

from calcs import operation, thermal

T = 24 * 21


def _batch(n=12, seed=3):
    rng = np.random.default_rng(seed)
    area = rng.uniform(50, 400, n)
    params = thermal.zone_parameters(area, area * rng.uniform(0.2, 0.6, n), area * rng.uniform(0.1, 0.5, n),
                                     [("light", "medium", "heavy", "very_heavy")[i % 4] for i in range(n)])
    hours = np.arange(T)
    temp_air = 14.0 + 9.0 * np.sin(2 * np.pi * (hours % 24 - 9) / 24) + 3 * np.sin(2 * np.pi * hours / T)
    occupied = ((hours % 24) >= 8) & ((hours % 24) < 18) & ((hours // 24) % 7 < 5)
    gi = np.where(occupied[:, None], 30.0, 3.0) * area * rng.uniform(0.6, 1.4, (T, n))
    gs = np.clip(np.sin(2 * np.pi * (hours % 24 - 6) / 24), 0, None)[:, None] * area * rng.uniform(5, 25, n)
    return params, temp_air, occupied, gi, gs, area, rng


@pytest.mark.parametrize("control", ["free", "heating", "both", "limited"])
def test_compiled_fixed_loop_equals_numpy_loop(control):
    params, temp_air, occupied, gi, gs, area, rng = _batch()
    n = area.size
    h_ve = 1200 * area * 3 * rng.uniform(0.1, 2.0, (T, n)) / 3600
    kw = {}
    if control in ("heating", "both", "limited"):
        kw["heating_setpoint"] = 20.0
    if control in ("both", "limited"):
        kw["cooling_setpoint"] = np.full((1, n), 25.0)
        kw["occupied"] = occupied
    if control == "limited":
        kw["max_heating"] = 15.0 * area
        kw["max_cooling"] = 20.0 * area
    runs = [thermal.simulate(params, temp_air, gi, gs, h_ve, engine=e, **kw) for e in ("compiled", "numpy")]
    for name in ("temp_air_in", "temp_surface", "temp_mass", "temp_op", "heating_need", "cooling_need"):
        assert_allclose(getattr(runs[0], name), getattr(runs[1], name), rtol=1e-10, atol=1e-8, err_msg=name)
    assert_allclose(runs[0].temp_mass_final, runs[1].temp_mass_final, rtol=1e-10)
    if control == "limited":
        assert (runs[0].heating_need <= 15.0 * area + 1e-9).all() and runs[0].cooling_need.max() > 0


def test_compiled_fixed_loop_equals_the_literal_annex_c_loop():
    """Zone by zone against the scalar ISO 13790 Annex C loop (three solves of §C.4.2 per hour)."""
    params, temp_air, occupied, gi, gs, area, rng = _batch(n=4, seed=8)
    h_ve = np.full((T, 4), 150.0)
    run = thermal.simulate(params, temp_air, gi, gs, h_ve, heating_setpoint=21.0, cooling_setpoint=24.0,
                           occupied=occupied, max_cooling=25.0 * area, temp_m_initial=18.0)
    for z in range(4):
        ref = thermal.simulate_loop_reference(params, temp_air, gi[:, z], gs[:, z], 150.0, temp_m_initial=18.0,
                                              zone=z, heating_setpoint=21.0, cooling_setpoint=24.0,
                                              occupied=occupied, max_cooling=25.0 * area[z])
        assert_allclose(run.temp_air_in[:, z], ref.temp_air_in[:, 0], atol=1e-9)
        assert_allclose(run.heating_need[:, z], ref.heating_need[:, 0], atol=1e-6)
        assert_allclose(run.cooling_need[:, z], ref.cooling_need[:, 0], atol=1e-6)


def _window_inputs(n, rng):
    coeff = operation.opening_flow_coefficients(
        [("single_sided", "cross", "stack")[i % 3] for i in range(n)], wind_speed_met=rng.uniform(0, 6, T),
        wind_speed_building=rng.uniform(0, 4, (T, n)), opening_height=rng.uniform(0.6, 1.6, n),
        stack_height=rng.uniform(3, 9, n), cp_windward=0.5, cp_leeward=-0.3, discharge_coefficient=0.61)
    return coeff


def test_compiled_window_loop_equals_numpy_loop_free_running():
    params, temp_air, occupied, gi, gs, area, rng = _batch(n=9, seed=5)
    n = area.size
    coeff = _window_inputs(n, rng)
    night = (~occupied[:, None]) & (((np.arange(T) % 24) >= 22) | ((np.arange(T) % 24) < 6))[:, None]
    common = dict(temp_air=temp_air, gains_internal=gi, gains_solar=gs, coefficients=coeff,
                  free_area=area * rng.uniform(0.01, 0.06, n), secure_area=area * 0.01,
                  infiltration_flow=area * 3 * 0.3 / 3600,
                  background_flow=np.where(occupied[:, None], area * 0.0012, 0.0),
                  allowed_day=np.broadcast_to(occupied[:, None], (T, n)),
                  allowed_night=np.broadcast_to(night, (T, n)), low_setpoint=21.0, night_low_setpoint=18.0)
    fast = operation.simulate_free_running(params, **common, engine="compiled")
    slow = operation.simulate_free_running(params, **common, engine="numpy")
    # the same iteration zone by zone: equal to far better than the 0.01 K tolerance
    assert np.abs(fast.result.temp_air_in - slow.result.temp_air_in).max() < 1e-3
    assert np.abs(fast.window_flow - slow.window_flow).max() < 1e-3 * fast.window_flow.max()
    assert (fast.result.unconverged_hours == slow.result.unconverged_hours).all()
    assert fast.window_flow.max() > 0.1  # windows did open
    # the flow used is the law at the reported temperature, to the fixed-point tolerance (within
    # 0.01 K of it: where the stack flow is steep near ΔT = 0 a few hours differ by more than 5 %)
    law_hve = np.stack([thermal.ventilation_heat_transfer(
        common["infiltration_flow"] + np.maximum(common["background_flow"][h], fast.window_flow[h])) for h in range(T)])
    rel = np.abs(fast.result.h_ve / law_hve - 1)
    assert np.median(rel) < 1e-6 and (rel < 0.05).mean() > 0.99


def test_compiled_window_loop_equals_numpy_loop_operating_years():
    params, temp_air, occupied, gi, gs, area, rng = _batch(n=6, seed=11)
    n = area.size
    coeff = _window_inputs(n, rng)
    occ = np.broadcast_to(occupied[:, None], (T, n))
    nv = occ & (rng.uniform(size=(T, n)) < 0.7)
    common = dict(temp_air=temp_air + 4, gains_internal=gi, gains_solar=gs, coefficients=coeff,
                  free_area=area * 0.03, secure_area=area * 0.005, infiltration_flow=area * 3 * 0.3 / 3600,
                  fresh_air_flow=np.where(occ, area * 0.0012, 0.0), occupied=occ, nv_mode=nv, allowed_day=occ,
                  allowed_night=~occ, heating_setpoint=20.0, cooling_setpoint=25.0, heat_recovery=0.6,
                  max_cooling=40.0 * area)
    fast = operation.simulate_operating_years(params, **common, engine="compiled")
    slow = operation.simulate_operating_years(params, **common, engine="numpy")
    for year in ("baseline", "mixed"):
        a, b = getattr(fast, year), getattr(slow, year)
        assert np.abs(a.temp_air_in - b.temp_air_in).max() <= 0.01, year  # the fixed-point tolerance
        assert abs(a.cooling_need.sum() - b.cooling_need.sum()) <= 1e-4 * b.cooling_need.sum(), year
        assert abs(a.heating_need.sum() - b.heating_need.sum()) <= 1e-4 * max(b.heating_need.sum(), 1.0), year
    assert fast.baseline.cooling_need.sum() > fast.mixed.cooling_need.sum() > 0


def test_changeover_modes_compiled_state_machine_equals_a_plain_loop():
    """The rule of calcs.operation.changeover_modes written out as a plain Python loop."""
    rng = np.random.default_rng(2)
    t_len, n = 24 * 5, 7
    value = rng.uniform(18, 29, (t_len, n))
    lower, upper = np.full((t_len, n), 20.0), np.full((t_len, n), 26.0)
    valid = rng.uniform(size=(t_len, n)) < 0.9
    occ = ((np.arange(t_len) % 24) >= 8)[:, None] & np.ones(n, bool)
    days = np.arange(t_len) // 24
    got = operation.changeover_modes(operation.Limits(value, lower, upper, valid, "operative"), occ, days,
                                     dead_band=1.0)
    want = np.zeros((t_len, n), bool)
    for j in range(n):
        state = True
        for t in range(t_len):
            if t == 0 or days[t] != days[t - 1]:
                state = True
            inside = lower[t, j] <= value[t, j] <= upper[t, j] and valid[t, j]
            well = lower[t, j] + 1 <= value[t, j] <= upper[t, j] - 1 and valid[t, j]
            state = inside if state else well
            want[t, j] = state and occ[t, j]
    assert (got == want).all()


def test_unknown_engine_is_refused():
    params, temp_air, occupied, gi, gs, area, rng = _batch(n=2)
    with pytest.raises(thermal.ProjectError, match="engine must be"):
        thermal.simulate(params, temp_air, gi, gs, 100.0, engine="fortran")


# --- threads: the zones split into column blocks must give the same numbers, bit for bit ---

_OUTPUT_NAMES = ("temp_air_in", "temp_surface", "temp_mass", "temp_op", "heating_need", "cooling_need", "h_ve",
                 "temp_mass_final", "unconverged_hours")


def _assert_identical(a, b):
    for name in _OUTPUT_NAMES:
        assert np.array_equal(np.asarray(getattr(a, name)), np.asarray(getattr(b, name))), name


@pytest.mark.parametrize("threads", [2, 3, 7])
def test_threaded_fixed_loop_is_bit_identical_to_one_thread(monkeypatch, threads):
    monkeypatch.setattr(thermal, "MIN_ZONES_PER_THREAD", 2)  # split even this small batch
    params, temp_air, occupied, gi, gs, area, rng = _batch(n=11, seed=4)
    h_ve = 1200 * area * 3 * rng.uniform(0.1, 2.0, (T, 11)) / 3600
    kw = dict(heating_setpoint=20.0, cooling_setpoint=25.0, occupied=occupied, max_cooling=20.0 * area)
    one = thermal.simulate(params, temp_air, gi, gs, h_ve, threads=1, **kw)
    many = thermal.simulate(params, temp_air, gi, gs, h_ve, threads=threads, **kw)
    _assert_identical(one, many)
    assert len(thermal._column_blocks(11, threads)) == min(threads, 5)


def test_threaded_window_loop_is_bit_identical_to_one_thread(monkeypatch):
    monkeypatch.setattr(thermal, "MIN_ZONES_PER_THREAD", 2)
    params, temp_air, occupied, gi, gs, area, rng = _batch(n=9, seed=5)
    n = area.size
    coeff = _window_inputs(n, rng)
    common = dict(temp_air=temp_air + 3, gains_internal=gi, gains_solar=gs, coefficients=coeff,
                  free_area=area * 0.03, secure_area=area * 0.01, infiltration_flow=area * 3 * 0.3 / 3600,
                  background_flow=np.zeros((T, n)), allowed_day=np.broadcast_to(occupied[:, None], (T, n)),
                  allowed_night=np.broadcast_to(~occupied[:, None], (T, n)), low_setpoint=21.0,
                  night_low_setpoint=18.0)
    runs = []
    for threads in ("1", "4"):
        monkeypatch.setenv("FREERUN_THREADS", threads)
        runs.append(operation.simulate_free_running(params, **common))
    _assert_identical(runs[0].result, runs[1].result)
    assert np.array_equal(runs[0].window_flow, runs[1].window_flow) and runs[0].window_flow.max() > 0


def test_column_blocks_cover_every_zone_once():
    for n in (1, 63, 64, 127, 128, 1000, 1001):
        for threads in (1, 2, 3, 8):
            blocks = thermal._column_blocks(n, threads)
            assert blocks[0][0] == 0 and blocks[-1][1] == n
            assert all(a[1] == b[0] for a, b in zip(blocks, blocks[1:]))
            assert len(blocks) == 1 or min(j1 - j0 for j0, j1 in blocks) >= thermal.MIN_ZONES_PER_THREAD - 1
            assert len(blocks) <= threads


@pytest.mark.parametrize("value", ["0", "two", "-1", "1.5"])
def test_a_bad_thread_count_in_the_environment_is_refused(monkeypatch, value):
    monkeypatch.setenv("FREERUN_THREADS", value)
    with pytest.raises(thermal.ProjectError, match="FREERUN_THREADS=.*whole number of threads"):
        thermal.thread_count()


@pytest.mark.parametrize("value", [0, 2.0, True, "3"])
def test_a_bad_threads_argument_is_refused(value):
    with pytest.raises(thermal.ProjectError, match="simulate: threads=.*whole number"):
        thermal.thread_count(value)


def test_thread_count_defaults(monkeypatch):
    monkeypatch.delenv("FREERUN_THREADS", raising=False)
    assert thermal.thread_count() >= 1
    monkeypatch.setenv("FREERUN_THREADS", " 3 ")
    assert thermal.thread_count() == 3 and thermal.thread_count(1) == 1


def test_lane_blocks_give_each_zone_the_numbers_it_gets_alone():
    """70 zones = two full blocks of LANES and a partial one; each column equals that zone run alone."""
    from calcs import kernels

    n = 2 * kernels.LANES + 6
    rng = np.random.default_rng(21)
    area = rng.uniform(50, 400, n)
    h_op, h_w = area * rng.uniform(0.2, 0.6, n), area * rng.uniform(0.1, 0.5, n)
    mass = [("light", "medium", "heavy", "very_heavy")[i % 4] for i in range(n)]
    hours = np.arange(T)
    temp_air = 14.0 + 9.0 * np.sin(2 * np.pi * (hours % 24 - 9) / 24)
    occupied = ((hours % 24) >= 8) & ((hours % 24) < 18)
    gi = np.where(occupied[:, None], 30.0, 3.0) * area * rng.uniform(0.6, 1.4, (T, n))
    h_ve = 1200 * area * 3 * rng.uniform(0.1, 2.0, (T, n)) / 3600
    kw = dict(heating_setpoint=20.0, cooling_setpoint=24.0, occupied=occupied, temp_m_initial=18.0, threads=1)
    batch = thermal.simulate(thermal.zone_parameters(area, h_op, h_w, mass), temp_air, gi, 0.0, h_ve,
                             max_cooling=25.0 * area, **kw)
    for j in (0, kernels.LANES - 1, kernels.LANES, n - 1):
        alone = thermal.simulate(thermal.zone_parameters(area[j:j + 1], h_op[j:j + 1], h_w[j:j + 1], [mass[j]]),
                                 temp_air, gi[:, j:j + 1], 0.0, h_ve[:, j:j + 1], max_cooling=25.0 * area[j:j + 1],
                                 **kw)
        for name in ("temp_air_in", "temp_op", "heating_need", "cooling_need"):
            assert np.array_equal(getattr(batch, name)[:, j], getattr(alone, name)[:, 0]), (j, name)
    assert batch.cooling_need.max() > 0 and batch.heating_need.max() > 0


@pytest.mark.parametrize("tolerance", [0.01, 1e-7])
def test_window_lane_blocks_give_each_zone_the_numbers_it_gets_alone(tolerance):
    """Zones iterate together in blocks of WINDOW_LANES, each lane with its own fixed-point
    iteration; every column must equal that zone iterated alone, bit for bit, unconverged hours
    included. At a tolerance of 1e-7 K some zone-hours run out of iterations while the other
    lanes of their block converged long before (the masked lanes must not move)."""
    from calcs import kernels

    n = 2 * kernels.WINDOW_LANES + 5
    params, temp_air, occupied, gi, gs, area, rng = _batch(n=n, seed=17)
    coeff = _window_inputs(n, rng)
    night = (~occupied[:, None]) & (((np.arange(T) % 24) >= 22) | ((np.arange(T) % 24) < 6))[:, None]
    free = area * rng.uniform(0.005, 0.08, n)

    def run(cols):
        c = operation.FlowCoefficients(wind=coeff.wind[:, cols], stack=np.asarray(coeff.stack)[cols],
                                       ref_temp=coeff.ref_temp)
        k = len(cols)
        return operation.simulate_free_running(
            thermal.zone_parameters(area[cols], area[cols] * 0.4, area[cols] * 0.3,
                                    [("light", "medium", "heavy", "very_heavy")[i % 4] for i in cols]),
            temp_air=temp_air + 2, gains_internal=gi[:, cols], gains_solar=gs[:, cols], coefficients=c,
            free_area=free[cols], secure_area=area[cols] * 0.01, infiltration_flow=area[cols] * 3 * 0.3 / 3600,
            background_flow=np.zeros((T, k)), allowed_day=np.broadcast_to(occupied[:, None], (T, k)),
            allowed_night=np.broadcast_to(night, (T, k)), low_setpoint=21.0, night_low_setpoint=18.0,
            tolerance=tolerance, threads=1)

    together = run(list(range(n)))
    for j in (0, 3, kernels.WINDOW_LANES - 1, kernels.WINDOW_LANES, n - 1):
        alone = run([j])
        for name in ("temp_air_in", "temp_op", "temp_mass", "h_ve"):
            assert np.array_equal(getattr(together.result, name)[:, j], getattr(alone.result, name)[:, 0]), (j, name)
        assert np.array_equal(together.window_flow[:, j], alone.window_flow[:, 0]), j
        assert together.result.unconverged_hours[j] == alone.result.unconverged_hours[0], j
    assert together.window_flow.max() > 0.1
    if tolerance < 1e-3:
        misses = together.result.unconverged_hours
        assert misses.max() > 0 and misses.min() < misses.max()  # lanes of a block finished at different steps
