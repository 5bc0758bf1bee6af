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


@_jit
def _store(state, t, j, out_ta, out_ts, out_tm, out_top, out_heat, out_cool):
    """Write one zone-hour of :func:`_hour` into the outputs; return θ_m,t (the next hour's start)."""
    ta, ts, tmm, top, tm_next, heat, cool = state
    out_ta[t, j] = ta
    out_ts[t, j] = ts
    out_tm[t, j] = tmm
    out_top[t, j] = top
    out_heat[t, j] = heat
    out_cool[t, j] = cool
    return tm_next


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


@nb.njit(inline="always", error_model="numpy")  # inlined: a literal ``control`` folds the branch away
def _lanes(x, o, control):
    """One hour of LANES zones: :func:`_hour` lane by lane, ``x`` (_IN_ROWS·LANES) to ``o`` (_OUT_ROWS·LANES).

    ``control`` False leaves out heating and cooling (two divisions fewer per zone-hour).
    """
    for k in range(LANES):
        ta, ts, tm, top, tm_next, heat, cool = _hour(
            x[_V * LANES + k], x[_TE * LANES + k], x[_TSUP * LANES + k], x[_GI * LANES + k],
            x[_GS * LANES + k], x[_TM * LANES + k], x[_SPH * LANES + k], x[_SPC * LANES + k],
            control and x[_HON * LANES + k] != 0.0, control and x[_CON * LANES + k] != 0.0,
            x[_MAXH * LANES + k], x[_MAXC * LANES + k], x[_HIS * LANES + k], x[_HW * LANES + k],
            x[_HMS * LANES + k], x[_HEM * LANES + k], x[_CAP * LANES + k], x[_FM * LANES + k],
            x[_FST * LANES + k])
        o[_OTA * LANES + k] = ta
        o[_OTS * LANES + k] = ts
        o[_OTM * LANES + k] = tm
        o[_OTOP * LANES + k] = top
        o[_OHEAT * LANES + k] = heat
        o[_OCOOL * LANES + k] = cool
        o[_OTN * LANES + k] = tm_next


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
            j = min(j0 + blk * LANES + k, j1 - 1)
            x[_TM * LANES + k] = tm0[j]
            x[_HIS * LANES + k] = h_is[j]
            x[_HW * LANES + k] = h_w[j]
            x[_HMS * LANES + k] = h_ms[j]
            x[_HEM * LANES + k] = h_em[j]
            x[_CAP * LANES + k] = cap[j]
            x[_FM * LANES + k] = f_m[j]
            x[_FST * LANES + k] = f_st[j]
            x[_MAXH * LANES + k] = max_h[j]
            x[_MAXC * LANES + k] = max_c[j]
    for t in range(t_len):
        for blk in range(n_blocks):
            x = buf[blk]
            first = j0 + blk * LANES
            for k in range(LANES):
                j = min(first + k, j1 - 1)
                on = occ[t, j]
                x[_V * LANES + k] = hv[t, j]
                x[_TE * LANES + k] = te[t, j]
                x[_TSUP * LANES + k] = tsup[t, j]
                x[_GI * LANES + k] = gi[t, j]
                x[_GS * LANES + k] = gs[t, j]
                x[_SPH * LANES + k] = sp_h[t, j]
                x[_SPC * LANES + k] = sp_c[t, j]
                x[_HON * LANES + k] = 1.0 if heat_on and on else 0.0
                x[_CON * LANES + k] = 1.0 if cool_on and on else 0.0
            if heat_on or cool_on:
                _lanes(x, res, True)
            else:
                _lanes(x, res, False)
            for k in range(min(LANES, j1 - first)):
                j = first + k
                out_ta[t, j] = res[_OTA * LANES + k]
                out_ts[t, j] = res[_OTS * LANES + k]
                out_tm[t, j] = res[_OTM * LANES + k]
                out_top[t, j] = res[_OTOP * LANES + k]
                out_heat[t, j] = res[_OHEAT * LANES + k]
                out_cool[t, j] = res[_OCOOL * LANES + k]
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
    """
    t_len = out_ta.shape[0]
    tm = tm0.copy()
    est = est0.copy()
    for t in range(t_len):
        for j in range(j0, j1):
            on = occ[t, j]
            h_on = heat_on and on
            c_on = cool_on and on
            args_te, args_ts, args_gi, args_gs = te[t, j], tsup[t, j], gi[t, j], gs[t, j]
            x = est[j]
            lo = -np.inf
            hi = np.inf
            r_lo = 0.0
            r_hi = 0.0
            v_used = 0.0
            win = 0.0
            done = False
            # windows shut whatever the temperature: H_ve is fixed and one solve is exact
            fixed = not open_ok[t, j] or not (day[t, j] or night[t, j])
            for it in range(max_iterations):
                v, win = _window_h_ve(x, t_out[t], wind[t, j], stack[j], ref_temp, free[j], secure[j], day[t, j],
                                 night[t, j], low_day[j], low_night[j], band, base[j], floor[t, j], open_ok[t, j],
                                 sealed[t, j])
                fx = _hour(v, args_te, args_ts, args_gi, args_gs, tm[j], sp_h[t, j], sp_c[t, j], h_on, c_on,
                           max_h[j], max_c[j], h_is[j], h_w[j], h_ms[j], h_em[j], cap[j], f_m[j], f_st[j])[0]
                res = fx - x
                v_used = v
                if fixed or abs(res) <= tolerance:
                    done = True
                    break
                if res > 0:
                    lo = x
                    r_lo = res
                elif res < 0:
                    hi = x
                    r_hi = res
                nxt = fx
                if math.isfinite(lo) and math.isfinite(hi):
                    if not (lo < nxt < hi):
                        nxt = lo - r_lo * (hi - lo) / (r_hi - r_lo)
                    if it % 4 == 3:
                        nxt = 0.5 * (lo + hi)
                    if not math.isfinite(nxt):
                        nxt = 0.5 * (lo + hi)
                x = nxt
            if not done:
                unconverged[j] += 1
            state = _hour(v_used, args_te, args_ts, args_gi, args_gs, tm[j], sp_h[t, j], sp_c[t, j], h_on, c_on,
                          max_h[j], max_c[j], h_is[j], h_w[j], h_ms[j], h_em[j], cap[j], f_m[j], f_st[j])
            tm_next = _store(state, t, j, out_ta, out_ts, out_tm, out_top, out_heat, out_cool)
            ta = state[0]
            out_hv[t, j] = v_used
            out_win[t, j] = _window_h_ve(ta, t_out[t], wind[t, j], stack[j], ref_temp, free[j], secure[j], day[t, j],
                                         night[t, j], low_day[j], low_night[j], band, base[j], floor[t, j],
                                         open_ok[t, j], sealed[t, j])[1]
            tm[j] = tm_next
            est[j] = ta
    tm_end[j0:j1] = tm[j0:j1]


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
