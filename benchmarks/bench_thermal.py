"""Throughput of the hourly 5R1C model (calcs.thermal): run on demand, not a test.

Runs, in one process:

1. :func:`calcs.thermal.simulate` (compiled engine, the default) for 1,000
   design variants over 8,760 hours, with hourly-varying ventilation (window
   opening), occupied-hours heating and cooling set-points and limited plant
   power; the same with the numpy engine for comparison;
2. the same set-up free-floating (no set-points), and with the 7-day warm-up;
3. the scalar per-hour Python loop :func:`calcs.thermal.simulate_loop_reference`
   for one of the variants, checked against the batch result;
4. the window-controlled free-running year (indoor-temperature-dependent H_ve,
   fixed-point per hour) of :func:`calcs.operation.simulate_free_running`,
   compiled, for the same 1,000 variants; and a plain Python callable H_ve on
   the numpy engine for 100 variants (``--callable-variants``).

It prints zone-hours per second for each and the batch/loop ratio. The compiled runs are timed
on one thread and on all CPUs (``threads=``, the zones split into column blocks; the numbers are
the same bit for bit), and the ratios are given for both.
Targets of issue 8: ≥ 20 million zone-hours/s in the batch, ≥ 100× the loop.

The inputs are constructed (sinusoidal outdoor temperature, office schedules,
a half-sine solar gain, random but seeded variant parameters); they are not
measured data and serve only to load the model realistically.

Usage::

    .venv/bin/python benchmarks/bench_thermal.py [--variants 1000] [--repeat 3] [--callable-variants 100]
"""

from __future__ import annotations

import argparse
import os
import time

import numpy as np

from calcs import operation, thermal

HOURS = 8760


def constructed_inputs(n_variants: int, seed: int = 7):
    """Seeded constructed year of inputs for ``n_variants`` zones."""
    rng = np.random.default_rng(seed)
    t = np.arange(HOURS)
    hour_of_day = t % 24
    day = t // 24
    weekday = (day % 7) < 5
    temp_air = (
        11.0
        - 9.0 * np.cos(2 * np.pi * (day - 15) / 365.0)
        - 4.0 * np.cos(2 * np.pi * (hour_of_day - 3) / 24.0)
    )
    occupied_1d = weekday & (hour_of_day >= 8) & (hour_of_day < 18)
    floor_area = rng.uniform(30.0, 300.0, n_variants)
    classes = rng.choice(list(thermal.MASS_CLASSES), n_variants)
    params = thermal.zone_parameters(
        floor_area,
        h_tr_op=floor_area * rng.uniform(0.2, 0.8, n_variants),
        h_tr_w=floor_area * rng.uniform(0.3, 1.2, n_variants),
        mass_class=list(classes),
    )
    gains_internal = np.where(occupied_1d[:, None], 25.0, 3.0) * floor_area[None, :]
    sun = np.clip(np.sin(np.pi * (hour_of_day - 6) / 12.0), 0.0, None)
    season = 0.6 + 0.4 * np.sin(2 * np.pi * (day - 80) / 365.0)
    gains_solar = (sun * season)[:, None] * (floor_area * rng.uniform(5.0, 25.0, n_variants))[None, :]
    # ventilation: background rate, windows opened in occupied warm hours (per-variant threshold)
    base = thermal.ventilation_heat_transfer(floor_area * 3.0 * 0.5 / 3600.0)
    opened = occupied_1d[:, None] & (temp_air[:, None] > rng.uniform(12.0, 20.0, n_variants)[None, :])
    h_ve = base[None, :] * np.where(opened, rng.uniform(4.0, 10.0, n_variants)[None, :], 1.0)
    controls = dict(
        heating_setpoint=20.0,
        cooling_setpoint=26.0,
        max_heating=60.0 * floor_area,
        max_cooling=50.0 * floor_area,
        occupied=occupied_1d,
    )
    return params, temp_air, gains_internal, gains_solar, h_ve, controls


def best_of(repeat: int, fn):
    times, out = [], None
    for _ in range(repeat):
        t0 = time.perf_counter()
        out = fn()
        times.append(time.perf_counter() - t0)
    return min(times), out


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--variants", type=int, default=1000)
    parser.add_argument("--repeat", type=int, default=3)
    parser.add_argument("--callable-variants", type=int, default=100)
    args = parser.parse_args()
    n = args.variants
    params, temp_air, gi, gs, h_ve, controls = constructed_inputs(n)
    zone_hours = n * HOURS
    tm0 = 20.0

    cpus = thermal.thread_count()
    t_ctrl1, _ = best_of(
        args.repeat,
        lambda: thermal.simulate(params, temp_air, gi, gs, h_ve, temp_m_initial=tm0, threads=1, **controls),
    )
    t_ctrl, res = best_of(
        args.repeat,
        lambda: thermal.simulate(params, temp_air, gi, gs, h_ve, temp_m_initial=tm0, **controls),
    )
    t_numpy, _ = best_of(
        1,
        lambda: thermal.simulate(params, temp_air, gi, gs, h_ve, temp_m_initial=tm0, engine="numpy", **controls),
    )
    t_free1, _ = best_of(
        args.repeat,
        lambda: thermal.simulate(params, temp_air, gi, gs, h_ve, temp_m_initial=tm0, threads=1),
    )
    t_free, _ = best_of(
        args.repeat,
        lambda: thermal.simulate(params, temp_air, gi, gs, h_ve, temp_m_initial=tm0),
    )
    t_warm, _ = best_of(
        args.repeat,
        lambda: thermal.simulate(params, temp_air, gi, gs, h_ve, **controls),
    )

    j = 0
    loop_kw = dict(
        heating_setpoint=controls["heating_setpoint"],
        cooling_setpoint=controls["cooling_setpoint"],
        max_heating=float(controls["max_heating"][j]),
        max_cooling=float(controls["max_cooling"][j]),
        occupied=controls["occupied"],
    )
    t_loop, ref = best_of(
        args.repeat,
        lambda: thermal.simulate_loop_reference(
            params, temp_air, gi[:, j], gs[:, j], h_ve[:, j], zone=j, temp_m_initial=tm0, **loop_kw
        ),
    )
    max_diff = float(np.max(np.abs(ref.temp_air_in[:, 0] - res.temp_air_in[:, j])))
    t_loop_free, _ = best_of(
        args.repeat,
        lambda: thermal.simulate_loop_reference(
            params, temp_air, gi[:, j], gs[:, j], h_ve[:, j], zone=j, temp_m_initial=tm0
        ),
    )

    n_cb = min(n, args.callable_variants)
    p_cb, te_cb, gi_cb, gs_cb, h_cb, ctl_cb = constructed_inputs(n_cb)
    base = h_cb.min(axis=0)

    def window_controller(hour, temp_in):
        # proportional opening above 24 °C, full at 27 °C, only when outdoor is cooler
        opening = np.clip((temp_in - 24.0) / 3.0, 0.0, 1.0) * (temp_in > te_cb[hour])
        return base * (1.0 + 9.0 * opening)

    t_cb, res_cb = best_of(
        1,
        lambda: thermal.simulate(p_cb, te_cb, gi_cb, gs_cb, window_controller, temp_m_initial=tm0),
    )

    rng = np.random.default_rng(3)
    coeff = operation.opening_flow_coefficients(
        ["single_sided"] * n, wind_speed_met=3.0 + 2.0 * np.sin(np.arange(HOURS) / 7.0),
        wind_speed_building=np.broadcast_to(2.0 + np.sin(np.arange(HOURS) / 7.0)[:, None], (HOURS, n)),
        opening_height=1.2, stack_height=0.0, cp_windward=0.5, cp_leeward=-0.3, discharge_coefficient=0.61)
    occ = controls["occupied"]
    area = params.floor_area
    night = ~occ & ((np.arange(HOURS) % 24 >= 22) | (np.arange(HOURS) % 24 < 6))
    def windows(threads):
        return operation.simulate_free_running(
            params, temp_air=temp_air + 6.0, gains_internal=gi, gains_solar=gs, coefficients=coeff,
            free_area=free_area, secure_area=area * 0.005,
            infiltration_flow=area * 3 * 0.3 / 3600, background_flow=np.where(occ[:, None], area * 0.0012, 0.0),
            allowed_day=np.broadcast_to(occ[:, None], (HOURS, n)), allowed_night=np.broadcast_to(night[:, None], (HOURS, n)),
            low_setpoint=21.0, night_low_setpoint=18.0, temp_m_initial=tm0, threads=threads)

    free_area = area * rng.uniform(0.01, 0.05, n)
    t_win1, _ = best_of(args.repeat, lambda: windows(1))
    t_win, res_win = best_of(args.repeat, lambda: windows(None))

    rate_loop = HOURS / t_loop
    rate_loop_free = HOURS / t_loop_free

    def row(label, seconds, loop_rate=None):
        rate = zone_hours / seconds
        ratio = f"  {rate / loop_rate:6.0f} x the loop" if loop_rate else ""
        print(f"  {label:<52s}: {seconds:8.3f} s  {rate / 1e6:8.2f} M zone-h/s{ratio}")

    print(f"hourly 5R1C benchmark: {n} variants x {HOURS} h = {zone_hours:,} zone-hours (best of {args.repeat})")
    row("compiled, set-points + limits + hourly H_ve, 1 thread", t_ctrl1, rate_loop)
    row(f"compiled, the same, {cpus} threads", t_ctrl, rate_loop)
    row("numpy engine, the same", t_numpy)
    row("compiled, free-floating, hourly H_ve, 1 thread", t_free1, rate_loop_free)
    row(f"compiled, free-floating, {cpus} threads", t_free, rate_loop_free)
    row(f"compiled, set-points, with 7-day warm-up, {cpus} threads", t_warm)
    print(f"  {'scalar Python loop, 1 variant, set-points':<52s}: {t_loop:8.3f} s  {rate_loop / 1e6:8.4f} M zone-h/s")
    print(f"  {'scalar Python loop, 1 variant, free-floating':<52s}: {t_loop_free:8.3f} s  "
          f"{rate_loop_free / 1e6:8.4f} M zone-h/s")
    print(f"  max |θ_air compiled − loop| (variant {j})             : {max_diff:.2e} K")
    row("window-controlled (fixed point), compiled, 1 thread", t_win1)
    row(f"window-controlled (fixed point), compiled, {cpus} thr.", t_win)
    print(f"  unconverged zone-hours of the window-controlled run    : {int(res_win.result.unconverged_hours.sum())}")
    print(
        f"  Python callable H_ve, numpy, {n_cb:4d} variants  : {t_cb:8.3f} s  "
        f"{n_cb * HOURS / t_cb / 1e6:8.3f} M zone-h/s, unconverged zone-hours {int(res_cb.unconverged_hours.sum())}"
    )
    print("  targets: >= 20 M zone-h/s in the batch, >= 100 x the loop")
    load = os.getloadavg()[0] if hasattr(os, "getloadavg") else float("nan")
    print(f"  machine: {os.cpu_count()} CPUs, 1-min load average {load:.2f} (timings are best-of, wall clock)")


if __name__ == "__main__":
    main()
