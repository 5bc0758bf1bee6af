"""Compiled hourly loops of the 5R1C model (ISO 13790:2008 Annex C), for large batches.

The time recurrence of :func:`calcs.thermal.simulate` cannot be vectorised over the hours, so
for the batches of the comfort and energy stages (zones × variants × Monte Carlo samples) it is
compiled with numba: one loop over hours and zones, scalar arithmetic, no temporary arrays.
Two loops live here:

* :func:`march_fixed` — H_ve given for every hour (the vectorised numpy loop of
  :mod:`calcs.thermal` does the same thing and is kept as the reference it is tested against);
* :func:`march_windows` — H_ve from window control that depends on the indoor air temperature
  (the flow law of :class:`calcs.operation.WindowVentilation`), each hour solved by the same
  safeguarded fixed-point iteration as :func:`calcs.thermal.simulate` with a callable H_ve.

Both follow ISO 13790:2008 Annex C, C.1–C.12, with heating and cooling by §C.4.2 in the closed
form documented in :class:`calcs.thermal._Block` (the network is linear in φ_HC). The functions
are private building blocks: call :func:`calcs.thermal.simulate`, which checks every input.

Compiled code is cached on disk by numba (``cache=True``), so only the first run on a machine
pays the compilation (a few seconds); set ``NUMBA_CACHE_DIR`` to move that cache.
"""

from __future__ import annotations

import math

import numba as nb
import numpy as np

_OPERATIVE_AIR_WEIGHT = 0.3  # C.12 (same constant as calcs.thermal)
_AIR_HEAT_CAPACITY = 1200.0  # J m⁻³ K⁻¹ (ISO 13790:2008 §9.3.1; same as calcs.thermal)
_KELVIN = 273.15

_jit = nb.njit(cache=True, nogil=True, error_model="numpy")

# Explicit signatures: every input is a read-only array of any layout (broadcast views of
# per-hour or per-zone values are passed without copying), so each loop compiles once.
_F = nb.float64
_B = nb.boolean
_I = nb.int64
_RF2 = nb.types.Array(_F, 2, "A", readonly=True)
_RB2 = nb.types.Array(_B, 2, "A", readonly=True)
_RF1 = nb.types.Array(_F, 1, "A", readonly=True)
_RB1 = nb.types.Array(_B, 1, "A", readonly=True)
_OF2 = nb.types.Array(_F, 2, "C")
_OB2 = nb.types.Array(_B, 2, "C")
_OI1 = nb.types.Array(_I, 1, "C")
_OF1 = nb.types.Array(_F, 1, "C")
_ZONE = (_RF1,) * 7  # h_is, h_w, h_ms, h_em, cap, f_m, f_st
_OUT = (_OF2,) * 6  # θ_air, θ_s, θ_m, θ_op, heating, cooling


def _sig(ret, *args):
    return nb.njit([ret(*args)], cache=True, nogil=True, error_model="numpy")


@nb.njit(inline="always", error_model="numpy")  # inlined so that the lane loop below vectorises
def _hour(v, te, tsup, gi, gs, tm_prev, sp_h, sp_c, heat_on, cool_on, max_h, max_c,
          h_is, h_w, h_ms, h_em, cap, f_m, f_st):
    """One hour of one zone for H_ve = v: (θ_air, θ_s, θ_m, θ_op, θ_m,t, heating, cooling)."""
    w = 1.0 / (v + h_is)
    r = h_is * w  # H_tr,1 / H_ve
    h2 = v * r + h_w  # C.6, C.7
    d = 1.0 / (h2 + h_ms)
    md = d * h_ms
    half = 0.5 * (h2 * md + h_em)  # ½(H_tr,3 + H_tr,em), C.8
    g = 1.0 / (cap + half)
    a = (cap - half) * g  # C.4
    e = md * r * g
    phi_ia = 0.5 * gi  # C.1
    base = phi_ia + gs
    s0 = base * f_st + h_w * te + (h2 - h_w) * tsup + r * phi_ia  # C.3, C.10 numerator
    b = (base * f_m + h_em * te + md * s0) * g  # C.2, C.5
    k = w * (h_is * d * (0.5 * h_ms * b + s0) + v * tsup + phi_ia)
    heat = 0.0
    cool = 0.0
    if heat_on or cool_on:
        m = w * (1.0 + h_is * (0.5 * md * e + d * r))
        ta0 = k + e * cap * tm_prev  # θ_air,0 of §C.4.2
        if heat_on:
            heat = min(max((sp_h - ta0) / m, 0.0), max_h)
        if cool_on:
            cool = min(max((ta0 - sp_c) / m, 0.0), max_c)
    phi = heat - cool
    tm_next = a * tm_prev + b + e * phi  # C.4
    tm = 0.5 * (tm_prev + tm_next)  # C.9
    ts = (h_ms * tm + s0 + r * phi) * d  # C.10
    ta = (h_is * ts + v * tsup + phi_ia + phi) * w  # C.11
    top = _OPERATIVE_AIR_WEIGHT * ta + (1.0 - _OPERATIVE_AIR_WEIGHT) * ts  # C.12
    return ta, ts, tm, top, tm_next, heat, cool


#: Zones computed together by :func:`march_fixed`: one hour of LANES zones is a loop of fixed
#: length over contiguous buffers, which LLVM turns into SIMD instructions (8 lanes of float64
#: with AVX-512, 4 with AVX2); the arithmetic per zone is that of :func:`_hour`, unchanged, so
#: the numbers are the same bit for bit as a zone-by-zone loop.
LANES = 32
# rows of the lane buffer (each LANES long): hour inputs, θ_m at the start of the hour, zone constants
_V, _TE, _TSUP, _GI, _GS, _SPH, _SPC, _HON, _CON, _TM, _HIS, _HW, _HMS, _HEM, _CAP, _FM, _FST, _MAXH, _MAXC = range(19)
_IN_ROWS = 19
# rows of the lane output: θ_air, θ_s, θ_m, θ_op, heating, cooling, θ_m,t (the next hour's start)
_OTA, _OTS, _OTM, _OTOP, _OHEAT, _OCOOL, _OTN = range(7)
_OUT_ROWS = 7


@nb.njit(inline="always", error_model="numpy")  # inlined: literal ``control`` and ``lanes`` fold away
def _lanes(x, o, control, lanes):
    """One hour of ``lanes`` zones: :func:`_hour` lane by lane, ``x`` (rows × lanes) to ``o`` (_OUT_ROWS × lanes).

    Row _V of ``x`` holds H_ve; rows _V.._MAXC are read. ``control`` False leaves out heating
    and cooling (two divisions fewer per zone-hour).
    """
    for k in range(lanes):
        ta, ts, tm, top, tm_next, heat, cool = _hour(
            x[_V * lanes + k], x[_TE * lanes + k], x[_TSUP * lanes + k], x[_GI * lanes + k],
            x[_GS * lanes + k], x[_TM * lanes + k], x[_SPH * lanes + k], x[_SPC * lanes + k],
            control and x[_HON * lanes + k] != 0.0, control and x[_CON * lanes + k] != 0.0,
            x[_MAXH * lanes + k], x[_MAXC * lanes + k], x[_HIS * lanes + k], x[_HW * lanes + k],
            x[_HMS * lanes + k], x[_HEM * lanes + k], x[_CAP * lanes + k], x[_FM * lanes + k],
            x[_FST * lanes + k])
        o[_OTA * lanes + k] = ta
        o[_OTS * lanes + k] = ts
        o[_OTM * lanes + k] = tm
        o[_OTOP * lanes + k] = top
        o[_OHEAT * lanes + k] = heat
        o[_OCOOL * lanes + k] = cool
        o[_OTN * lanes + k] = tm_next


@nb.njit(inline="always", error_model="numpy")
def _load_zone(x, k, lanes, j, tm0, h_is, h_w, h_ms, h_em, cap, f_m, f_st, max_h, max_c):
    """Lane k of a lane buffer: zone j's constants and its θ_m at the start."""
    x[_TM * lanes + k] = tm0[j]
    x[_HIS * lanes + k] = h_is[j]
    x[_HW * lanes + k] = h_w[j]
    x[_HMS * lanes + k] = h_ms[j]
    x[_HEM * lanes + k] = h_em[j]
    x[_CAP * lanes + k] = cap[j]
    x[_FM * lanes + k] = f_m[j]
    x[_FST * lanes + k] = f_st[j]
    x[_MAXH * lanes + k] = max_h[j]
    x[_MAXC * lanes + k] = max_c[j]


@nb.njit(inline="always", error_model="numpy")
def _load_hour(x, k, lanes, t, j, te, tsup, gi, gs, sp_h, sp_c, heat_on, cool_on, occ):
    """Lane k of a lane buffer: zone j's inputs of hour t."""
    on = occ[t, j]
    x[_TE * lanes + k] = te[t, j]
    x[_TSUP * lanes + k] = tsup[t, j]
    x[_GI * lanes + k] = gi[t, j]
    x[_GS * lanes + k] = gs[t, j]
    x[_SPH * lanes + k] = sp_h[t, j]
    x[_SPC * lanes + k] = sp_c[t, j]
    x[_HON * lanes + k] = 1.0 if heat_on and on else 0.0
    x[_CON * lanes + k] = 1.0 if cool_on and on else 0.0


@nb.njit(inline="always", error_model="numpy")
def _store_lane(o, k, lanes, t, j, out_ta, out_ts, out_tm, out_top, out_heat, out_cool):
    """Lane k of a lane output into zone j, hour t of the outputs."""
    out_ta[t, j] = o[_OTA * lanes + k]
    out_ts[t, j] = o[_OTS * lanes + k]
    out_tm[t, j] = o[_OTM * lanes + k]
    out_top[t, j] = o[_OTOP * lanes + k]
    out_heat[t, j] = o[_OHEAT * lanes + k]
    out_cool[t, j] = o[_OCOOL * lanes + k]


@_sig(nb.types.none, _RF2, _RF2, _RF2, _RF2, _RF2, _RF2, _RF2, _B, _B, _RB2, _RF1, _RF1,
      *_ZONE, _RF1, _I, _I, *_OUT, _OF1)
def march_fixed(hv, te, tsup, gi, gs, sp_h, sp_c, heat_on, cool_on, occ, max_h, max_c,
                h_is, h_w, h_ms, h_em, cap, f_m, f_st, tm0, j0, j1,
                out_ta, out_ts, out_tm, out_top, out_heat, out_cool, tm_end):
    """March zones j0 ≤ j < j1 over T hours with H_ve given; fills their columns of the outputs.

    Inputs are (T, n) arrays (broadcast views allowed) and (n,) zone constants; ``occ`` (T, n)
    gates the set-points; ``heat_on``/``cool_on`` say whether a heating or cooling set-point
    is given at all. θ_m at the end of the last hour goes to ``tm_end[j0:j1]``. Calls on
    disjoint column ranges touch disjoint memory, so they may run in parallel threads (the
    loop holds no GIL).

    The zones go in blocks of LANES (see :func:`_lanes`); the lanes of the last block past
    j1 repeat zone j1 − 1 and are not stored.
    """
    t_len = out_ta.shape[0]
    n_blocks = (j1 - j0 + LANES - 1) // LANES
    buf = np.empty((n_blocks, _IN_ROWS * LANES))
    res = np.empty(_OUT_ROWS * LANES)
    for blk in range(n_blocks):
        x = buf[blk]
        for k in range(LANES):
            _load_zone(x, k, LANES, min(j0 + blk * LANES + k, j1 - 1), tm0, h_is, h_w, h_ms, h_em, cap, f_m, f_st,
                       max_h, max_c)
    for t in range(t_len):
        for blk in range(n_blocks):
            x = buf[blk]
            first = j0 + blk * LANES
            for k in range(LANES):
                j = min(first + k, j1 - 1)
                x[_V * LANES + k] = hv[t, j]
                _load_hour(x, k, LANES, t, j, te, tsup, gi, gs, sp_h, sp_c, heat_on, cool_on, occ)
            if heat_on or cool_on:
                _lanes(x, res, True, LANES)
            else:
                _lanes(x, res, False, LANES)
            for k in range(min(LANES, j1 - first)):
                _store_lane(res, k, LANES, t, first + k, out_ta, out_ts, out_tm, out_top, out_heat, out_cool)
            for k in range(LANES):
                x[_TM * LANES + k] = res[_OTN * LANES + k]
    for blk in range(n_blocks):
        first = j0 + blk * LANES
        for k in range(min(LANES, j1 - first)):
            tm_end[first + k] = buf[blk, _TM * LANES + k]


@_jit
def _window_h_ve(x, t_out, wind, stack, ref_temp, free, secure, day, night, low_day, low_night, band,
                 base, floor, open_ok, sealed):
    """(H_ve [W K⁻¹], window flow [m³ s⁻¹]) of one zone-hour at indoor air temperature x.

    The law of :class:`calcs.operation.WindowVentilation`.
    """
    windows = 0.0
    if t_out < x and (day or night):
        delta = abs(x - t_out)
        q_stack = stack * math.sqrt(delta * ref_temp / (0.5 * (x + t_out) + _KELVIN))
        q_unit = max(wind, q_stack)
        if day:
            windows += min(max((x - low_day) / band, 0.0), 1.0) * free * q_unit
        if night:
            windows += min(max((x - low_night) / band, 0.0), 1.0) * secure * q_unit
    if not open_ok:
        return _AIR_HEAT_CAPACITY * sealed, windows
    return _AIR_HEAT_CAPACITY * (base + max(floor, windows)), windows


#: Zones iterated together by :func:`march_windows` (a block of the lane buffer, as for
#: :func:`march_fixed`): every lane follows its own fixed-point iteration, a lane that has
#: converged keeps its values while the others go on, and the block moves to the next hour when
#: every lane is done. Fewer lanes than :data:`LANES`, so that one slow zone-hour holds up fewer
#: converged ones.
WINDOW_LANES = 16
# rows of the window lane buffer after the first _IN_ROWS (whose row _V holds the H_ve in use):
# window law of the hour, its zone constants, and the iteration state of each lane
(_WIND, _DAY, _NIGHT, _FLOOR, _OPEN, _SEALED, _FIXED, _STACK, _FREE, _SECURE, _LOWD, _LOWN, _BASE,
 _X, _LO, _HI, _RLO, _RHI, _DONE, _WIN) = range(_IN_ROWS, _IN_ROWS + 20)
_WIN_ROWS = _IN_ROWS + 20


@nb.njit(inline="always", error_model="numpy")
def _window_lanes(x, t_out, ref_temp, band, lanes):
    """H_ve and window flow of every lane at its air temperature in row _X, into rows _V and _WIN."""
    for k in range(lanes):
        v, win = _window_h_ve(x[_X * lanes + k], t_out, x[_WIND * lanes + k], x[_STACK * lanes + k], ref_temp,
                              x[_FREE * lanes + k], x[_SECURE * lanes + k], x[_DAY * lanes + k] != 0.0,
                              x[_NIGHT * lanes + k] != 0.0, x[_LOWD * lanes + k], x[_LOWN * lanes + k], band,
                              x[_BASE * lanes + k], x[_FLOOR * lanes + k], x[_OPEN * lanes + k] != 0.0,
                              x[_SEALED * lanes + k])
        x[_V * lanes + k] = v
        x[_WIN * lanes + k] = win


@nb.njit(inline="always", error_model="numpy")
def _iterate_lanes(x, o, it, tolerance, lanes):
    """One step of the safeguarded fixed-point iteration in every lane not yet done; returns how many are done.

    ``o`` holds F(x) (row _OTA) for H_ve(x) of row _V. A lane done keeps its x and its H_ve;
    the rest is :func:`march_windows`' step, written with selects so that the lanes run together.
    """
    done_count = 0
    for k in range(lanes):
        xk = x[_X * lanes + k]
        res = o[_OTA * lanes + k] - xk
        active = x[_DONE * lanes + k] == 0.0
        conv = x[_FIXED * lanes + k] != 0.0 or abs(res) <= tolerance
        step = active and not conv
        lo = xk if (step and res > 0) else x[_LO * lanes + k]
        r_lo = res if (step and res > 0) else x[_RLO * lanes + k]
        hi = xk if (step and res < 0) else x[_HI * lanes + k]
        r_hi = res if (step and res < 0) else x[_RHI * lanes + k]
        nxt = o[_OTA * lanes + k]
        bracketed = abs(lo) < np.inf and abs(hi) < np.inf  # both finite
        regula = lo - r_lo * (hi - lo) / (r_hi - r_lo)
        nxt = regula if (bracketed and not (lo < nxt < hi)) else nxt
        mid = 0.5 * (lo + hi)
        nxt = mid if (bracketed and it % 4 == 3) else nxt
        nxt = mid if (bracketed and not abs(nxt) < np.inf) else nxt
        x[_LO * lanes + k] = lo
        x[_RLO * lanes + k] = r_lo
        x[_HI * lanes + k] = hi
        x[_RHI * lanes + k] = r_hi
        x[_X * lanes + k] = nxt if step else xk
        done = not active or conv
        x[_DONE * lanes + k] = 1.0 if done else 0.0
        done_count += 1 if done else 0  # an integer sum: a floating-point one would not vectorise
    return done_count


@nb.njit(inline="always", error_model="numpy")
def _window_hour(x, o, t_out, ref_temp, band, tolerance, max_iterations, control, lanes):
    """Solve one hour of a block of lanes: ``o`` receives the hour (:func:`_lanes`), row _DONE which lanes converged."""
    for k in range(lanes):
        x[_LO * lanes + k] = -np.inf
        x[_HI * lanes + k] = np.inf
        x[_RLO * lanes + k] = 0.0
        x[_RHI * lanes + k] = 0.0
        x[_DONE * lanes + k] = 0.0
    for it in range(max_iterations):
        _window_lanes(x, t_out, ref_temp, band, lanes)
        _lanes(x, o, control, lanes)
        done = _iterate_lanes(x, o, it, tolerance, lanes)
        if done == lanes:
            break
    # ``o`` now holds every lane's hour for the H_ve in row _V: that of the converged iterate, or
    # of the last one for a lane that did not converge (as the zone-by-zone loop reports it)


@_sig(nb.types.none, _RF2, _RF2, _RF2, _RF2, _RF2, _RF2, _B, _B, _RB2, _RF1, _RF1,
      *_ZONE, _RF1, _RF1,
      _RF1, _RF2, _RF1, _F, _RF1, _RF1, _RB2, _RB2, _RF1, _RF1, _F, _RF1, _RF2, _RB2, _RF2, _F, _I, _I, _I,
      *_OUT, _OF2, _OF2, _OI1, _OF1)
def march_windows(te, tsup, gi, gs, sp_h, sp_c, heat_on, cool_on, occ, max_h, max_c,
                  h_is, h_w, h_ms, h_em, cap, f_m, f_st, tm0, est0,
                  t_out, wind, stack, ref_temp, free, secure, day, night, low_day, low_night, band,
                  base, floor, open_ok, sealed, tolerance, max_iterations, j0, j1,
                  out_ta, out_ts, out_tm, out_top, out_heat, out_cool, out_hv, out_win, unconverged, tm_end):
    """March n zones with window-controlled H_ve; each hour by safeguarded fixed-point iteration.

    Per zone-hour: x ← F(x), F(x) = θ_air solved with H_ve(x). Once F(x) − x has changed sign
    the root is bracketed; an iterate leaving the bracket is replaced by the regula-falsi point,
    and every fourth bracketed iterate by the midpoint (the algorithm of
    :func:`calcs.thermal.simulate` with a callable H_ve, zone by zone). Hours that do not reach
    ``tolerance`` keep the last iterate and are counted in ``unconverged`` (n,). ``out_win``
    receives the window flow at the reported air temperature [m³ s⁻¹]. Zones j0 ≤ j < j1 only,
    θ_m at the end into ``tm_end[j0:j1]``, as for :func:`march_fixed`.

    The zones go in blocks of :data:`WINDOW_LANES`, each lane with its own iteration (see
    :func:`_iterate_lanes`); a lane's numbers are those of the same zone iterated alone.
    """
    lanes = WINDOW_LANES
    t_len = out_ta.shape[0]
    n_blocks = (j1 - j0 + lanes - 1) // lanes
    buf = np.empty((n_blocks, _WIN_ROWS * lanes))
    res = np.empty(_OUT_ROWS * lanes)
    for blk in range(n_blocks):
        x = buf[blk]
        for k in range(lanes):
            j = min(j0 + blk * lanes + k, j1 - 1)
            _load_zone(x, k, lanes, j, tm0, h_is, h_w, h_ms, h_em, cap, f_m, f_st, max_h, max_c)
            x[_X * lanes + k] = est0[j]
            x[_STACK * lanes + k] = stack[j]
            x[_FREE * lanes + k] = free[j]
            x[_SECURE * lanes + k] = secure[j]
            x[_LOWD * lanes + k] = low_day[j]
            x[_LOWN * lanes + k] = low_night[j]
            x[_BASE * lanes + k] = base[j]
    for t in range(t_len):
        to = t_out[t]
        for blk in range(n_blocks):
            x = buf[blk]
            first = j0 + blk * lanes
            for k in range(lanes):
                j = min(first + k, j1 - 1)
                _load_hour(x, k, lanes, t, j, te, tsup, gi, gs, sp_h, sp_c, heat_on, cool_on, occ)
                x[_WIND * lanes + k] = wind[t, j]
                x[_DAY * lanes + k] = 1.0 if day[t, j] else 0.0
                x[_NIGHT * lanes + k] = 1.0 if night[t, j] else 0.0
                x[_FLOOR * lanes + k] = floor[t, j]
                x[_OPEN * lanes + k] = 1.0 if open_ok[t, j] else 0.0
                x[_SEALED * lanes + k] = sealed[t, j]
                # windows shut whatever the temperature: H_ve is fixed and one solve is exact
                x[_FIXED * lanes + k] = 1.0 if (not open_ok[t, j] or not (day[t, j] or night[t, j])) else 0.0
            if heat_on or cool_on:
                _window_hour(x, res, to, ref_temp, band, tolerance, max_iterations, True, lanes)
            else:
                _window_hour(x, res, to, ref_temp, band, tolerance, max_iterations, False, lanes)
            for k in range(min(lanes, j1 - first)):
                j = first + k
                _store_lane(res, k, lanes, t, j, out_ta, out_ts, out_tm, out_top, out_heat, out_cool)
                out_hv[t, j] = x[_V * lanes + k]
                if x[_DONE * lanes + k] == 0.0:
                    unconverged[j] += 1
            # window flow at the reported air temperature; the next hour starts from it
            for k in range(lanes):
                x[_TM * lanes + k] = res[_OTN * lanes + k]
                x[_X * lanes + k] = res[_OTA * lanes + k]
            _window_lanes(x, to, ref_temp, band, lanes)
            for k in range(min(lanes, j1 - first)):
                out_win[t, first + k] = x[_WIN * lanes + k]
    for blk in range(n_blocks):
        first = j0 + blk * lanes
        for k in range(min(lanes, j1 - first)):
            tm_end[first + k] = buf[blk, _TM * lanes + k]


@_sig(nb.types.none, _RB2, _RB2, _RB2, _RB1, _OB2)
def changeover_march(inside, well_inside, occ, new_day, modes):
    """The natural-ventilation / air-conditioning state machine of calcs.operation.changeover_modes."""
    t_len, n = modes.shape
    for j in range(n):
        state = True
        for t in range(t_len):
            if new_day[t]:
                state = True
            state = inside[t, j] if state else well_inside[t, j]
            modes[t, j] = state and occ[t, j]
