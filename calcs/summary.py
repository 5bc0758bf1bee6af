"""The executive summary: verdict, headline numbers, largest risks, decisions asked.

Pure functions from the merged results (``results.json``) and the validated
project to a small :class:`Summary` of sentences and printed numbers, which
the report template renders as the page after the cover. Nothing here
calculates physics: every number printed is a value of results.json, shown
at the stated precision (``Printed`` records the key, the value and the
decimals, so a test can hold the page to results.json).

It degrades honestly: a stage whose results say ``"not yet calculated"``
(or are absent) is named as pending, and the verdict says which part of
the question waits for it. Keys read when present:

* ``climate.occupied_nv_suitable_pct``, ``.monthly_occupied_nv_suitable_pct``,
  ``.months_can_open``, ``.occupied_above_band_pct``;
* ``loads.<zone>.peak_sensible_W_m2``;
* ``openings.<zone>.area_ok``, ``.provided_free_area_m2``,
  ``.required_free_area_m2``, ``.depth_ok``, ``.code_share_ok``;
* ``comfort.building.nv_mode_pct``, ``comfort.<zone>.nv_mode_pct``,
  ``comfort.<zone>.max_operative_C``, ``comfort.<zone>.tm52.pass``,
  ``comfort.method.changeover_criterion``;
* ``energy.savings_pct_p10`` / ``_p50`` / ``_p90``, ``energy.simple_payback_years``.

The verdict rule is freerun's own screening rule (no published source), and
the page says so: worth pursuing when natural ventilation carries at least
:data:`WORTH_PCT` % of occupied hours, marginal from :data:`MARGINAL_PCT` %,
unlikely below; a median energy saving of zero or less overrides.
"""

from __future__ import annotations

import json
from collections.abc import Collection, Mapping, Sequence
from pathlib import Path
from dataclasses import dataclass, field
from typing import Any

from .present import num

#: Screening thresholds of the verdict [% of occupied hours in natural ventilation] (freerun's rule, no source).
WORTH_PCT = 50.0
MARGINAL_PCT = 25.0
#: Results keys that are not zone names.
RESERVED = frozenset({"building", "method", "status", "zones"})
NOT_YET = "not yet calculated"

CRITERIA = {
    "outdoor_band": "the outdoor dry-bulb band",
    "fixed_indoor": "a fixed indoor band",
    "ashrae55_80": "ASHRAE 55 adaptive, 80 % acceptability",
    "ashrae55_90": "ASHRAE 55 adaptive, 90 % acceptability",
    "ashrae55_80_fans": "ASHRAE 55 adaptive, 80 % acceptability with ceiling fans",
    "en16798_cat1": "EN 16798-1 adaptive category I",
    "en16798_cat2": "EN 16798-1 adaptive category II",
    "en16798_cat3": "EN 16798-1 adaptive category III",
}

PENDING = {
    "climate": "Climate: not yet calculated — there is no verdict until the outdoor climate is assessed.",
    "loads": "Heat gains and loads: not yet calculated — the peak cooling loads wait for the loads stage.",
    "openings": "Ventilation openings: not yet calculated — whether the openings are large enough waits for the "
                "openings stage.",
    "comfort": "Comfort hours: not yet calculated — the share of occupied hours the building can run in natural "
               "ventilation waits for the comfort stage; until then the verdict rests on the outdoor air alone.",
    "energy": "Energy savings: not yet calculated — the verdict on running-cost savings and payback waits for "
              "the energy stage.",
}


@dataclass(frozen=True)
class Printed:
    """One number as printed: its results key, its value and the decimals shown."""

    key: str
    value: float
    digits: int
    unit: str = ""

    @property
    def text(self) -> str:
        return num(self.value, self.digits, self.unit)


@dataclass(frozen=True)
class Figure:
    """A headline row: what, the value, its range, what it is a share of or based on."""

    label: str
    value: str
    range: str = ""
    basis: str = ""
    printed: tuple[Printed, ...] = ()


@dataclass(frozen=True)
class Summary:
    verdict: str
    assumptions: tuple[str, ...]
    figures: tuple[Figure, ...]
    risks: tuple[str, ...]
    decisions: tuple[str, ...]
    pending: tuple[str, ...]
    rule: str
    printed: tuple[Printed, ...] = field(default=())


# --------------------------------------------------------------------------- reading results


def _stage(results: Mapping[str, Any], stage: str) -> dict[str, Any] | None:
    """A stage's results, or None when absent or not yet calculated."""
    node = results.get(stage)
    if not isinstance(node, dict) or not node or node.get("status") == NOT_YET:
        return None
    return node


def _number(node: Any, *path: str) -> float | None:
    for part in path:
        if not isinstance(node, dict) or part not in node:
            return None
        node = node[part]
    if isinstance(node, bool) or not isinstance(node, (int, float)) or node != node:
        return None
    return float(node)


def _zones(stage: Mapping[str, Any] | None, project: Any = None) -> list[str]:
    """Zone names of a stage's results, in the project's order where known."""
    if not stage:
        return []
    names = [k for k, v in stage.items() if k not in RESERVED and isinstance(v, dict)]
    order = [z.name for z in getattr(project, "zones", ())] if project is not None else []
    return sorted(names, key=lambda n: (order.index(n) if n in order else len(order), n))


def _names(names: Sequence[str], limit: int = 3) -> str:
    names = list(names)
    if len(names) > limit:
        return ", ".join(names[:limit]) + f" and {len(names) - limit} more"
    if len(names) <= 1:
        return "".join(names)
    return ", ".join(names[:-1]) + " and " + names[-1]


def _zone_range(stage: Mapping[str, Any], zones: Sequence[str], key: str, stage_name: str, digits: int,
                unit: str) -> tuple[str, tuple[Printed, ...]]:
    """"zones a–b unit" over the zones holding ``key`` (empty when fewer than two)."""
    values = [(z, _number(stage, z, key)) for z in zones]
    values = [(z, v) for z, v in values if v is not None]
    if len(values) < 2:
        return "", ()
    low = min(values, key=lambda zv: zv[1])
    high = max(values, key=lambda zv: zv[1])
    lo = Printed(f"{stage_name}.{low[0]}.{key}", low[1], digits, unit)
    hi = Printed(f"{stage_name}.{high[0]}.{key}", high[1], digits, unit)
    return f"zones {num(lo.value, digits)}–{hi.text}", (lo, hi)


# --------------------------------------------------------------------------- the summary


def executive_summary(results: Mapping[str, Any], project: Any = None,
                      defaults: Collection[str] | None = None) -> Summary:
    """The executive summary of a build from its results (and the project, for names and settings).

    Parameters
    ----------
    results : mapping
        The merged results.json content.
    project : calcs.project.Project, optional
        The validated project (zone order, operation and energy settings); None reads results only.
    defaults : collection of str, optional
        Key paths the project file left to their defaults (a build's ``inputs/defaults_used.json``,
        see :func:`read_defaults`); None: taken from the project's record of the fields given.
    """
    climate, loads, openings = _stage(results, "climate"), _stage(results, "loads"), _stage(results, "openings")
    comfort, energy = _stage(results, "comfort"), _stage(results, "energy")
    figures: list[Figure] = []

    # -- headline numbers
    nv_share: Printed | None = None
    criterion = str((comfort or {}).get("method", {}).get("changeover_criterion", "")) if comfort else ""
    if criterion == "" and project is not None:
        criterion = str(getattr(getattr(project, "operation", None), "changeover_criterion", ""))
    criterion_label = CRITERIA.get(criterion, criterion.replace("_", " "))
    comfort_zones = _zones(comfort, project)
    building_nv = _number(comfort, "building", "nv_mode_pct") if comfort else None
    if building_nv is not None:
        nv_share = Printed("comfort.building.nv_mode_pct", building_nv, 1, "%")
        spread, extra = _zone_range(comfort, comfort_zones, "nv_mode_pct", "comfort", 1, "%")
        low, high = _number(energy, "nv_mode_pct_p10"), _number(energy, "nv_mode_pct_p90")
        if low is not None and high is not None:
            band = (Printed("energy.nv_mode_pct_p10", low, 1, "%"), Printed("energy.nv_mode_pct_p90", high, 1, "%"))
            spread = f"P10–P90 {num(low)}–{band[1].text}" + (f"; {spread}" if spread else "")
            extra = (*band, *extra)
        figures.append(Figure("Occupied hours run in natural ventilation", nv_share.text, spread,
                              "operating year, floor-area weighted; air-conditioning when the criterion fails",
                              (nv_share, *extra)))

    suitable = _number(climate, "occupied_nv_suitable_pct") if climate else None
    suitable_p = Printed("climate.occupied_nv_suitable_pct", suitable, 1, "%") if suitable is not None else None
    if suitable_p is not None:
        monthly = [v for v in (climate or {}).get("monthly_occupied_nv_suitable_pct") or []
                   if isinstance(v, (int, float)) and not isinstance(v, bool)]
        spread = f"months {num(min(monthly))}–{num(max(monthly), 1, '%')}" if monthly else ""
        figures.append(Figure("Occupied hours with outdoor air suitable for natural ventilation", suitable_p.text,
                              spread, "outdoor air only (band, dew point, wind, rain)",
                              (suitable_p,)))
        months = (climate or {}).get("months_can_open")
        if isinstance(months, list):
            figures.append(Figure("Months in which the windows can open", f"{len(months)} of 12",
                                  ", ".join(str(m) for m in months) or "none",
                                  "months whose occupied hours are mostly suitable"))

    if energy:
        figures.extend(_energy_figures(energy, project))
    else:
        figures.append(Figure("Energy saving against full air-conditioning", "not yet calculated", "",
                              "waits for the energy stage"))

    load_zones = _zones(loads, project)
    if loads:
        peaks = [(z, _number(loads, z, "peak_sensible_W_m2")) for z in load_zones]
        peaks = [(z, v) for z, v in peaks if v is not None]
        if peaks:
            hi = max(peaks, key=lambda zv: zv[1])
            lo = min(peaks, key=lambda zv: zv[1])
            p_hi = Printed(f"loads.{hi[0]}.peak_sensible_W_m2", hi[1], 1, "W/m²")
            p_lo = Printed(f"loads.{lo[0]}.peak_sensible_W_m2", lo[1], 1, "W/m²")
            spread = f"{hi[0]}; lowest {p_lo.text} ({lo[0]})" if len(peaks) > 1 else hi[0]
            figures.append(Figure("Highest peak sensible cooling load", p_hi.text, spread,
                                  "simple steady peak, occupied hours",
                                  (p_hi, p_lo) if len(peaks) > 1 else (p_hi,)))

    opening_zones = _zones(openings, project)
    short = [z for z in opening_zones if (openings or {}).get(z, {}).get("area_ok") is False]
    if openings and opening_zones:
        figures.append(Figure("Zones whose openings carry the airflow needed",
                              f"{len(opening_zones) - len(short)} of {len(opening_zones)}",
                              ("short: " + _names(short)) if short else "",
                              "free area provided vs sized at the design condition"))

    hottest: tuple[str, float] | None = None
    tm52_fail: list[str] = []
    if comfort:
        temps = [(z, _number(comfort, z, "max_operative_C")) for z in comfort_zones]
        temps = [(z, v) for z, v in temps if v is not None]
        if temps:
            hottest = max(temps, key=lambda zv: zv[1])
            p = Printed(f"comfort.{hottest[0]}.max_operative_C", hottest[1], 1, "°C")
            tm52_fail = [z for z in comfort_zones if comfort.get(z, {}).get("tm52", {}).get("pass") is False]
            judged = [z for z in comfort_zones if isinstance(comfort.get(z, {}).get("tm52", {}).get("pass"), bool)]
            figures.append(Figure("Highest free-running operative temperature", p.text,
                                  hottest[0] + (f"; CIBSE TM52 failed in {len(tm52_fail)} of {len(judged)} zones"
                                                if judged else ""),
                                  "free-running (no cooling), occupied hours", (p,)))

    # -- verdict
    share = nv_share or suitable_p
    conditions: list[str] = []
    if nv_share is not None:
        basis = f"in the simulated operating year under {criterion_label}"
        if short:
            conditions.append(f"with the openings as designed, which fall short of the free area sized for "
                              f"{_names(short)}")
    elif suitable_p is not None:
        basis = "judged on the outdoor air alone (indoor comfort is not yet calculated)"
    p50 = _number(energy, "savings_pct_p50") if energy else None
    payback = _number(energy, "simple_payback_years") if energy else None
    npv = _number(energy, "npv") if energy else None
    life = getattr(getattr(project, "energy", None), "life", None)
    if energy is None:
        energy_clause = "the verdict on running-cost savings waits for the energy stage"
    else:
        energy_clause = ""
        if p50 is not None:
            energy_clause = f"it would cut the energy use of full air-conditioning by {num(p50, 0, '%')} (median)"
            if payback is not None:
                energy_clause += f", paying back its extra cost in {num(payback, 1, 'years')}"
    if share is None:
        verdict = ("No verdict yet: the climate stage holds no results, so it is not known how often the outdoor "
                   "air suits natural ventilation here.")
    else:
        if p50 is not None and p50 <= 0:
            tier = "Mixed mode looks unlikely to pay here"
        elif payback is not None and life and payback > life:
            tier = f"Mixed mode saves energy here but looks unlikely to pay back within its {life}-year life"
        elif share.value >= WORTH_PCT and (npv is None or npv >= 0):
            tier = "Mixed mode looks worth pursuing here"
        elif share.value >= MARGINAL_PCT:
            tier = "Mixed mode may be worth pursuing here, but the case is marginal"
        else:
            tier = "Mixed mode looks unlikely to be worth pursuing here"
        verdict = f"{tier}: natural ventilation would carry {share.text} of occupied hours {basis}"
        if conditions:
            verdict += ", " + ", ".join(conditions)
        verdict += (f"; {energy_clause}." if energy_clause else ".")

    assumptions = _assumptions(project, criterion_label, comfort is not None)
    risks = _risks(results, climate, openings, comfort, energy, opening_zones, comfort_zones, short, tm52_fail,
                   hottest, share, project, defaults=defaults)
    decisions = _decisions(project, criterion_label, comfort, energy, openings, opening_zones, short, tm52_fail,
                           defaults=defaults)
    pending = tuple(PENDING[s] for s in ("climate", "loads", "openings", "comfort", "energy")
                    if _stage(results, s) is None)
    rule = (f"Verdict rule (freerun's screening rule, no published source): worth pursuing at ≥ {num(WORTH_PCT, 0)} % "
            f"of occupied hours in natural ventilation, marginal at {num(MARGINAL_PCT, 0)}–{num(WORTH_PCT, 0)} %, "
            "unlikely below; overridden by a median saving ≤ 0, a payback beyond the life or a negative net present "
            "value. A screening judgement, not a design decision.")
    printed = tuple(p for f in figures for p in f.printed)
    return Summary(verdict=verdict, assumptions=assumptions, figures=tuple(figures), risks=risks,
                   decisions=decisions, pending=pending, rule=rule, printed=printed)


def _energy_figures(energy: Mapping[str, Any], project: Any) -> list[Figure]:
    """Savings (median and P10–P90), yearly cost saving and payback, as far as the energy stage gives them."""
    out: list[Figure] = []
    p50 = _number(energy, "savings_pct_p50")
    p10, p90 = _number(energy, "savings_pct_p10"), _number(energy, "savings_pct_p90")
    if p50 is not None:
        printed = [Printed("energy.savings_pct_p50", p50, 0, "%")]
        spread = ""
        if p10 is not None and p90 is not None:
            printed += [Printed("energy.savings_pct_p10", p10, 0, "%"), Printed("energy.savings_pct_p90", p90, 0, "%")]
            spread = f"P10–P90 {num(p10, 0)}–{num(p90, 0, '%')}"
        out.append(Figure("Energy saving against full air-conditioning (median)", printed[0].text, spread,
                          "delivered energy; Monte Carlo over uncertain inputs", tuple(printed)))
    currency = str(energy.get("currency") or "")
    c50 = _number(energy, "savings_cost_p50")
    c10, c90 = _number(energy, "savings_cost_p10"), _number(energy, "savings_cost_p90")
    if c50 is not None:
        printed = [Printed("energy.savings_cost_p50", c50, 0, currency)]
        spread = ""
        if c10 is not None and c90 is not None:
            printed += [Printed("energy.savings_cost_p10", c10, 0, currency),
                        Printed("energy.savings_cost_p90", c90, 0, currency)]
            spread = f"P10–P90 {num(c10, 0)}–{num(c90, 0, currency)}"
        out.append(Figure("Running-cost saving per year (median)", printed[0].text, spread,
                          "at the project's tariffs", tuple(printed)))
    payback = _number(energy, "simple_payback_years")
    if payback is not None:
        pb = Printed("energy.simple_payback_years", payback, 1, "years")
        printed = [pb]
        spread = ""
        discounted = _number(energy, "discounted_payback_years")
        if discounted is not None:
            printed.append(Printed("energy.discounted_payback_years", discounted, 1, "years"))
            spread = f"discounted {printed[-1].text}"
        life = getattr(getattr(project, "energy", None), "life", None)
        basis = "extra capital ÷ yearly saving" + (f"; life {life} years" if life else "")
        out.append(Figure("Payback of the mixed-mode extras", pb.text, spread, basis, tuple(printed)))
    return out


def _assumptions(project: Any, criterion_label: str, comfort_done: bool) -> tuple[str, ...]:
    out: list[str] = []
    if project is None:
        return ()
    site = getattr(project, "site", None)
    if site is not None:
        out.append(f"One typical weather year ({site.weather_file}); heat waves and future climates are not covered.")
    occ = getattr(project, "occupancy", None)
    if occ is not None:
        out.append(f"Occupied {', '.join(occ.days)} {occ.start}–{occ.end}, {len(occ.holidays)} holidays.")
    op = getattr(project, "operation", None)
    if op is not None:
        word = "Windows" if comfort_done else "The comfort stage will let windows"
        out.append(f"{word} open while {criterion_label} is met; air-conditioning takes over otherwise "
                   f"(ceiling fans {'yes' if op.ceiling_fans else 'no'}, night cooling "
                   f"{'yes' if op.night_purge else 'no'}).")
    return tuple(out)


def _risks(results: Mapping[str, Any], climate: dict[str, Any] | None, openings: dict[str, Any] | None,
           comfort: dict[str, Any] | None, energy: dict[str, Any] | None, opening_zones: Sequence[str],
           comfort_zones: Sequence[str], short: Sequence[str], tm52_fail: Sequence[str],
           hottest: tuple[str, float] | None, share: Printed | None, project: Any, *,
           defaults: Collection[str] | None = None) -> tuple[str, ...]:
    """The three largest risks to the mixed-mode case, ranked (overheating, then airflow, then the rest)."""
    found: list[tuple[float, str]] = []
    if tm52_fail and hottest is not None:
        found.append((3.0 + len(tm52_fail) / max(len(comfort_zones), 1),
                      f"Overheating without cooling: {len(tm52_fail)} of {len(comfort_zones)} zones fail CIBSE TM52 "
                      f"when free-running (up to {num(hottest[1], 1, '°C')} operative in {hottest[0]}); in hot "
                      "spells mixed mode depends on the cooling plant."))
    if energy is not None:
        p10 = _number(energy, "savings_pct_p10")
        if p10 is not None and p10 < 0:
            found.append((2.5, f"The saving may be negative: the P10 energy cost saving is {num(p10, 0, '%')}."))
    if energy is not None:
        npv = _number(energy, "npv")
        discounted = _number(energy, "discounted_payback_years")
        life = getattr(getattr(project, "energy", None), "life", None)
        currency = str(energy.get("currency") or "")
        if npv is not None and (npv < 0 or (discounted is not None and life and discounted > 0.75 * life)):
            text = f"Thin financial case: net present value {num(npv, 0, currency)}"
            if discounted is not None:
                text += f", discounted payback {num(discounted, 1, 'years')}"
            text += (f" on a {life}-year life" if life else "")
            text += "; tariffs and capital costs are placeholders." if _placeholder_costs(project, defaults) else "."
            found.append((2.4 if npv >= 0 else 2.8, text))
    if short and openings:
        ratios = []
        for z in short:
            provided, required = _number(openings, z, "provided_free_area_m2"), _number(openings, z, "required_free_area_m2")
            if provided is not None and required:
                ratios.append((provided / required, z, provided, required))
        if ratios:
            ratio, zone, provided, required = min(ratios)
            found.append((2.0 + (1.0 - ratio),
                          f"Openings too small: {len(short)} of {len(opening_zones)} zones cannot carry the airflow "
                          f"needed at the design condition; {zone} provides {num(provided, 1, 'm²')} of free area "
                          f"against {num(required, 1, 'm²')} needed."))
        else:
            found.append((2.0, f"Openings too small in {_names(short)} for the airflow needed."))
    deep = [z for z in opening_zones if (openings or {}).get(z, {}).get("depth_ok") is False]
    if deep:
        found.append((1.6, f"Plan too deep for its ventilation arrangement in {_names(deep)} (CIBSE AM10 rule of "
                           "thumb): the far side of the room will not be ventilated by the windows alone."))
    code = [z for z in opening_zones if (openings or {}).get(z, {}).get("code_share_ok") is False]
    if code:
        minimum = getattr(getattr(project, "sizing", None), "code_min_free_area_pct", None)
        what = f"the project's code minimum of {num(minimum, 1, '%')} of floor area" if minimum is not None else \
            "the project's code minimum"
        found.append((1.4, f"Free area below {what} in {len(code)} of {len(opening_zones)} zones: the authority may "
                           "not accept natural ventilation as the means of ventilation there."))
    if share is not None and share.value < WORTH_PCT:
        found.append((1.0 + (WORTH_PCT - share.value) / WORTH_PCT,
                      f"Natural ventilation carries only {share.text} of occupied hours: the saving may not repay "
                      "the openable façade and controls."))
    above = _number(climate, "occupied_above_band_pct") if climate else None
    if above is not None and above >= 10.0:
        found.append((1.0 + above / 100.0,
                      f"{num(above, 1, '%')} of occupied hours are warmer outdoors than the band: the cooling plant "
                      "is still needed at full size."))
    unconverged = _number(comfort, "method", "unconverged_hours") if comfort else None
    if unconverged:
        found.append((0.9, f"The operating-year model did not converge in {unconverged:,.0f} hours; treat the comfort "
                           "figures with care."))
    if climate is not None:
        filled = _number(climate, "weather_filled_hours")
        if filled:
            found.append((0.8, f"{filled:,.0f} hours of the weather file were gaps filled by freerun."))
        if climate.get("rain_assessed") is False:
            found.append((0.8, "The weather file has no rain data: rain ingress through open windows is not judged."))
    if energy is None:
        found.append((0.5, "Running-cost savings are unproven until the energy stage is calculated."))
    found.sort(key=lambda sv: -sv[0])  # stable: ties keep the order above
    return tuple(text for _, text in found[:3])


def _decisions(project: Any, criterion_label: str, comfort: dict[str, Any] | None, energy: dict[str, Any] | None,
               openings: dict[str, Any] | None, opening_zones: Sequence[str], short: Sequence[str],
               tm52_fail: Sequence[str], *, defaults: Collection[str] | None = None) -> tuple[str, ...]:
    """The decisions this report asks the client to make, most consequential first."""
    out: list[str] = []
    if criterion_label:
        out.append(f"Confirm the comfort standard the building must hold in natural ventilation (this report uses "
                   f"{criterion_label}); a stricter one means more air-conditioned hours.")
    if short:
        out.append(f"Accept larger openable areas in {_names(short)} (façade design and cost), or accept more "
                   "air-conditioned hours there.")
    if tm52_fail:
        op = getattr(project, "operation", None)
        measures = [m for m, on in (("night cooling through secure openings", getattr(op, "night_purge", True)),
                                    ("ceiling fans", getattr(op, "ceiling_fans", True))) if not on]
        extra = (", and whether to test " + " and ".join(measures)) if measures else ""
        out.append("Decide how hot spells are met: every zone that overheats free-running needs the cooling plant "
                   "sized for its full load" + extra + ".")
    if _placeholder_costs(project, defaults):
        out.append("Provide the client's electricity and gas tariffs and the cost planner's rates for openings, "
                   "actuators and controls (placeholders are in use).")
    deep = [z for z in opening_zones if (openings or {}).get(z, {}).get("depth_ok") is False]
    if deep:
        out.append(f"For {_names(deep)}: choose cross or stack ventilation, a shallower plan, or mechanical "
                   "ventilation of the deep part.")
    if any((openings or {}).get(z, {}).get("code_share_ok") is False for z in opening_zones):
        out.append("Confirm with the authority having jurisdiction the openable area it requires for natural "
                   "ventilation.")
    return tuple(out[:5])


PLACEHOLDER_KEYS = ("electricity_price", "gas_price", "openable_area_cost", "actuator_cost", "controls_cost")


def _placeholder_costs(project: Any, defaults: Collection[str] | None = None) -> bool:
    """True when the project left a tariff or capital rate to freerun's invented placeholders."""
    if defaults is not None:
        return any(f"energy.{k}" in defaults for k in PLACEHOLDER_KEYS)
    en = getattr(project, "energy", None)
    if en is None:
        return False
    given = set(getattr(en, "model_fields_set", set()))
    return not set(PLACEHOLDER_KEYS) <= given


def read_defaults(build_dir: str | Path) -> set[str] | None:
    """Key paths a build's project file left to their defaults (``inputs/defaults_used.json``), or None."""
    path = Path(build_dir) / "inputs" / "defaults_used.json"
    try:
        rows = json.loads(path.read_text(encoding="utf-8")).get("defaults_used", [])
        return {str(r["key"]) for r in rows if isinstance(r, dict) and "key" in r}
    except (OSError, ValueError, AttributeError, TypeError):
        return None
