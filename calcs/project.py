"""The project file (``project.toml``): schema, validation and overrides.

Every key the project file may hold is declared here once, with its type,
unit, default and meaning; ``freerun schema`` prints this table and the
report's assumptions appendix lists the values used. Unknown keys are
errors (they are usually typos).

Errors are :class:`calcs.errors.ProjectError` with one line naming the file,
the key path, the value and what is allowed.
"""

from __future__ import annotations

import datetime as dt
import json
import re
import tomllib
import typing
from pathlib import Path
from collections.abc import Callable
from typing import Annotated, Any, Literal

import pydantic
from pydantic import AfterValidator, BaseModel, ConfigDict, Field, field_validator, model_validator

from .errors import ProjectError
from .morph import FutureClimate

PROJECT_FILE = "project.toml"
RESOLVED_FILE = "project.resolved.json"

WEEKDAYS = ("mon", "tue", "wed", "thu", "fri", "sat", "sun")
_SAFE_NAME = re.compile(r"^[A-Za-z0-9][A-Za-z0-9._-]{0,63}$")
_CLOCK = re.compile(r"^([01]\d|2[0-4]):00$")


def _whole_hour(latest: str) -> Callable[[str], str]:
    """Validator: a whole hour written HH:00, from 00:00 to ``latest``."""

    def check(value: str) -> str:
        if not _CLOCK.match(value) or value > latest:
            msg = f"must be a whole hour written HH:00, from 00:00 to {latest}"
            raise ValueError(msg)
        return value

    return check


#: A clock hour that may end a day (24:00), and one that may not.
HourOfDay = Annotated[str, AfterValidator(_whole_hour("24:00"))]
HourOfNight = Annotated[str, AfterValidator(_whole_hour("23:00"))]


def _f(default: Any = ..., meaning: str = "", unit: str = "", source: str = "", **kw: Any) -> Any:
    """A schema field: default, meaning, unit and the source of the default."""
    extra = {"unit": unit, "source": source}
    return Field(default, description=meaning, json_schema_extra=extra, **kw)


class _Section(BaseModel):
    model_config = ConfigDict(extra="forbid", frozen=True)


class ProjectInfo(_Section):
    job_number: str = _f(meaning="Job number; also names the build folder (letters, digits, . _ -)")
    title: str = _f(meaning="Report title", min_length=1, max_length=200)
    client: str = _f(meaning="Client name", min_length=1, max_length=200)
    site_name: str = _f(meaning="Site name as it appears on the cover", min_length=1, max_length=200)
    design_stage: str = _f(meaning="Design stage, e.g. 'concept' or 'schematic design'", min_length=1, max_length=80)
    revision: str = _f(meaning="Revision code, e.g. 'P01'; also names the build folder (letters, digits, . _ -)")
    date: dt.date = _f(meaning="Date of this revision (YYYY-MM-DD)")
    author: str = _f(meaning="Person who prepared the calculation", min_length=1, max_length=120)

    @field_validator("job_number", "revision")
    @classmethod
    def _safe(cls, value: str) -> str:
        if not _SAFE_NAME.match(value):
            msg = "must be 1–64 letters, digits, '.', '_' or '-' (it names a folder)"
            raise ValueError(msg)
        return value


class Site(_Section):
    latitude: float = _f(meaning="Site latitude, north positive", unit="°", ge=-90, le=90)
    longitude: float = _f(meaning="Site longitude, east positive", unit="°", ge=-180, le=180)
    elevation: float = _f(0.0, meaning="Site elevation above sea level", unit="m", ge=-500, le=9000)
    utc_offset: float = _f(
        meaning="Local standard time offset from UTC; must match the weather file", unit="h", ge=-12, le=14
    )
    weather_file: str = _f(meaning="Weather file (EPW or freerun CSV), path relative to the project folder")
    leap_day: Literal["drop", "keep"] = _f(
        "drop", meaning="What to do with Feb 29 in a weather file that has one ('keep' needs a leap calendar_year)"
    )


class Occupancy(_Section):
    days: tuple[Literal["mon", "tue", "wed", "thu", "fri", "sat", "sun"], ...] = _f(
        ("mon", "tue", "wed", "thu", "fri"), meaning="Occupied days of the week", min_length=1
    )
    start: HourOfDay = _f("08:00", meaning="Start of the occupied period, on the hour (HH:00)", unit="local standard time")
    end: HourOfDay = _f("18:00", meaning="End of the occupied period, on the hour (HH:00); later than start",
                  unit="local standard time")
    holidays: tuple[dt.date, ...] = _f((), meaning="Dates with no occupancy (YYYY-MM-DD) in calendar_year")
    calendar_year: int = _f(
        2026, meaning="Calendar year a typical-year weather file is stamped onto (sets weekdays)", ge=1900, le=2200
    )

    @property
    def start_hour(self) -> int:
        return int(self.start[:2])

    @property
    def end_hour(self) -> int:
        return int(self.end[:2])

    @model_validator(mode="after")
    def _order(self) -> "Occupancy":
        if self.end_hour <= self.start_hour:
            msg = f"end ({self.end}) must be later than start ({self.start})"
            raise ValueError(msg)
        wrong = [d.isoformat() for d in self.holidays if d.year != self.calendar_year]
        if wrong:
            msg = f"holidays {wrong} are not in calendar_year {self.calendar_year}"
            raise ValueError(msg)
        return self


class Outdoor(_Section):
    band_low: float = _f(16.0, meaning="Lower end of the outdoor dry-bulb band for opening windows",
                         unit="°C", source="common practice, no source", ge=-20, le=40)
    band_high: float = _f(26.0, meaning="Upper end of the outdoor dry-bulb band for opening windows",
                          unit="°C", source="common practice, no source", ge=-20, le=45)
    dew_point_max: float = _f(
        17.0, meaning="Dew point ceiling above which outdoor air is too humid to admit", unit="°C",
        source="ASHRAE 55-2010 humidity ratio limit 0.012 kg/kg ≈ 16.8 °C dew point at sea level [from memory]",
        ge=-10, le=35,
    )
    wind_speed_max: float = _f(
        10.0, meaning="Weather-station wind speed above which openings close", unit="m/s",
        source="design assumption, no published source; set per project", gt=0, le=60,
    )
    rain_max: float = _f(
        0.5, meaning="Rain above which openings close (rain is skipped when the weather file has none)",
        unit="mm/h", source="design assumption, no published source; set per project", ge=0, le=100,
    )
    night_start: HourOfNight = _f("22:00", meaning="Start of the night used for night-cooling potential (HH:00)")
    night_end: HourOfNight = _f("07:00", meaning="End of the night used for night-cooling potential (HH:00)")
    night_cooling_below: float = _f(
        18.0, meaning="A night counts as useful for night cooling when its minimum falls below this",
        unit="°C", source="design assumption, no published source; set per project", ge=-10, le=35,
    )
    running_mean_alpha: float = _f(
        0.8, meaning="Weighting of the EN 16798-1 running mean outdoor temperature", unit="-",
        source="EN 16798-1:2019 Annex B.2.2 (recommended 0.8)", ge=0, lt=1,
    )
    prevailing_mean_days: int = _f(
        7, meaning="Days averaged for the ASHRAE 55 prevailing mean outdoor temperature", unit="days",
        source="ASHRAE 55-2020 §5.4.2.1 (7 to 30 days)", ge=7, le=30,
    )
    suitable_month_pct: float = _f(
        50.0, meaning="A month 'can open up' when at least this share of its occupied hours is suitable",
        unit="%", source="design assumption, no published source", gt=0, le=100,
    )

    @model_validator(mode="after")
    def _order(self) -> "Outdoor":
        if self.band_high <= self.band_low:
            msg = f"band_high ({self.band_high}) must be above band_low ({self.band_low})"
            raise ValueError(msg)
        return self


MASS_CLASSES = ("very_light", "light", "medium", "heavy", "very_heavy")
ACTIVITIES = ("seated_very_light", "office_moderately_active", "standing_light_or_walking", "seated_theatre_night")
ARRANGEMENTS = ("single_sided", "single_sided_two_level", "cross", "stack")
OPENING_TYPES = ("side_hung", "top_hung", "bottom_hung", "pivot", "sliding", "louvre", "vent", "rooflight")
TERRAINS = ("open_flat_country", "scattered_windbreaks", "urban", "city")
_NO_SOURCE = "common practice, no source"
#: Names used in results.json beside the zone names, so not allowed as zone names.
RESERVED_ZONE_NAMES = frozenset({"building", "method", "status", "zones"})


class Shading(_Section):
    overhang_depth_ratio: float = _f(0.0, meaning="Overhang projection ÷ window height (0 = none)", unit="-",
                                     ge=0, le=10)
    overhang_gap_ratio: float = _f(0.0, meaning="Gap from window head to overhang ÷ window height", unit="-",
                                   ge=0, le=10)
    fin_depth_ratio: float = _f(0.0, meaning="Side-fin projection ÷ window width, fins both sides (0 = none)",
                                unit="-", ge=0, le=10)
    monthly_factor: tuple[float, ...] = _f(
        (), meaning="Instead of the geometry: 12 fixed shading factors, Jan–Dec (1 = unshaded)", unit="-"
    )

    @field_validator("monthly_factor")
    @classmethod
    def _twelve(cls, value: tuple[float, ...]) -> tuple[float, ...]:
        if value and (len(value) != 12 or not all(0 <= v <= 1 for v in value)):
            msg = f"must be 12 values between 0 and 1 (got {len(value)} values)"
            raise ValueError(msg)
        return value


class Facade(_Section):
    name: str = _f(meaning="Façade name, unique in the zone (openings refer to it)", min_length=1, max_length=40)
    azimuth: float = _f(meaning="Direction the façade faces, clockwise from north (180 = south)", unit="°",
                        ge=0, lt=360)
    length: float | None = _f(None, meaning="Façade length; area = length × ceiling_height (give length or area)",
                              unit="m", gt=0, le=10000)
    area: float | None = _f(None, meaning="Gross external wall area of the zone on this façade", unit="m²",
                            gt=0, le=1e6)
    window_to_wall_ratio: float = _f(0.4, meaning="Glazed share of the façade area", unit="-", ge=0, le=1,
                                     source="design assumption, no published source")
    shading: Shading = _f(Shading(), meaning="External shading of this façade's windows")

    @model_validator(mode="after")
    def _one_size(self) -> "Facade":
        if (self.length is None) == (self.area is None):
            msg = "give exactly one of length (m) or area (m²)"
            raise ValueError(msg)
        return self


class Opening(_Section):
    name: str = _f(meaning="Opening name, unique in the zone", min_length=1, max_length=40)
    facade: str = _f(meaning="Façade it is in (a façade name of this zone), or 'roof' for a rooflight or stack outlet")
    free_area: float = _f(meaning="Free (effective) area of one opening when fully open", unit="m²", gt=0, le=1000)
    count: int = _f(1, meaning="Number of identical openings", ge=1, le=10000)
    type: Literal["side_hung", "top_hung", "bottom_hung", "pivot", "sliding", "louvre", "vent", "rooflight"] = _f(
        "top_hung", meaning="Kind of opening"
    )
    discharge_coefficient: float = _f(0.61, meaning="Discharge coefficient Cd", unit="-", gt=0, le=1,
                                      source="sharp-edged orifice 0.61, BS 5925:1991 [from memory]")
    sill_height: float = _f(1.0, meaning="Height of the bottom of the opening above floor", unit="m", ge=0, le=100)
    height: float = _f(1.0, meaning="Height of the opening (top minus bottom)", unit="m", gt=0, le=20)
    secure: bool = _f(False, meaning="Safe to leave open when the building is empty (for night cooling)")


class Zone(_Section):
    name: str = _f(meaning="Zone name, unique in the project", min_length=1, max_length=80)
    floor_area: float = _f(meaning="Net occupiable floor area", unit="m²", gt=0, le=1e6)
    ceiling_height: float = _f(2.8, meaning="Floor-to-ceiling height", unit="m", gt=1.5, le=30,
                               source="design assumption, no published source")
    plan_depth: float = _f(
        6.0, meaning="Plan depth: from the openable façade (single-sided) or between façades (cross) or to the stack",
        unit="m", gt=0, le=1000, source="design assumption, no published source",
    )
    height_above_ground: float = _f(5.0, meaning="Height of the zone's openings above ground (for wind speed)",
                                    unit="m", gt=0, le=500)
    ventilation: Literal["single_sided", "single_sided_two_level", "cross", "stack"] = _f(
        "single_sided", meaning="Natural-ventilation arrangement of the zone"
    )
    stack_height: float = _f(
        0.0, meaning="Vertical distance between the centres of inlet and outlet openings (stack, two-level, cross)",
        unit="m", ge=0, le=300,
    )
    mass_class: Literal["very_light", "light", "medium", "heavy", "very_heavy"] = _f(
        "medium", meaning="Thermal mass class", source="ISO 13790:2008 Table 12 classes"
    )
    wall_u: float = _f(0.26, meaning="U-value of the opaque external walls", unit="W/m²K", gt=0, le=6,
                       source="design assumption (typical new-build wall), no published source")
    glazing_u: float = _f(1.4, meaning="U-value of the windows (glass and frame)", unit="W/m²K", gt=0, le=7,
                          source="design assumption (double glazing), no published source")
    g_value: float = _f(0.4, meaning="Total solar energy transmittance of the glass at normal incidence", unit="-",
                        gt=0, le=1, source="design assumption (solar-control double glazing), no published source")
    frame_fraction: float = _f(0.3, meaning="Frame share of the window area", unit="-", ge=0, lt=1,
                               source="ISO 13790:2008 §11.4.5 [from memory]")
    roof_area: float = _f(0.0, meaning="Exposed roof area above the zone", unit="m²", ge=0, le=1e6)
    roof_u: float = _f(0.18, meaning="U-value of the roof", unit="W/m²K", gt=0, le=6,
                       source="design assumption, no published source")
    infiltration_ach: float = _f(0.3, meaning="Infiltration with windows closed", unit="1/h", ge=0, le=10,
                                 source="design assumption, no published source")
    people_density: float = _f(10.0, meaning="Floor area per person at full occupancy", unit="m²/person",
                               gt=0.5, le=1000, source="UK office design density 10 m²/person [from memory]")
    activity: Literal["seated_very_light", "office_moderately_active", "standing_light_or_walking",
                      "seated_theatre_night"] = _f(
        "seated_very_light", meaning="Occupant activity (sets heat per person)",
        source="ASHRAE Handbook—Fundamentals 2009/2013 ch.18 Table 1",
    )
    lighting: float = _f(8.0, meaning="Lighting heat gain at full use", unit="W/m²", ge=0, le=100,
                         source="LED office 6–10 W/m² [from memory]")
    equipment: float = _f(15.0, meaning="Equipment (small power) heat gain at full use", unit="W/m²", ge=0, le=200,
                          source="UK NCM open-plan office 15 W/m²")
    occupancy_profile: tuple[float, ...] = _f(
        (), meaning="24 hourly fractions of full occupancy on occupied days (default: 1 in occupied hours)", unit="-"
    )
    lighting_profile: tuple[float, ...] = _f(
        (), meaning="24 hourly fractions of full lighting on occupied days (default: 1 occupied, 0.05 otherwise)",
        unit="-", source=_NO_SOURCE,
    )
    equipment_profile: tuple[float, ...] = _f(
        (), meaning="24 hourly fractions of full equipment on occupied days (default: 1 occupied, 0.2 otherwise)",
        unit="-", source=_NO_SOURCE,
    )
    facades: tuple[Facade, ...] = _f((), meaning="External façades of the zone")
    openings: tuple[Opening, ...] = _f((), meaning="Openable windows and vents of the zone")

    @field_validator("name")
    @classmethod
    def _not_reserved(cls, value: str) -> str:
        if value.strip().lower() in RESERVED_ZONE_NAMES:
            msg = f"'{value}' is reserved in results.json; choose another zone name (reserved: {sorted(RESERVED_ZONE_NAMES)})"
            raise ValueError(msg)
        return value

    @field_validator("occupancy_profile", "lighting_profile", "equipment_profile")
    @classmethod
    def _profile(cls, value: tuple[float, ...]) -> tuple[float, ...]:
        if value and (len(value) != 24 or not all(0 <= v <= 1 for v in value)):
            msg = f"must be 24 hourly values between 0 and 1 (got {len(value)} values)"
            raise ValueError(msg)
        return value

    @model_validator(mode="after")
    def _references(self) -> "Zone":
        names = [f.name for f in self.facades]
        if len(set(names)) != len(names):
            msg = f"façade names must be unique in the zone (got {names})"
            raise ValueError(msg)
        opening_names = [o.name for o in self.openings]
        if len(set(opening_names)) != len(opening_names):
            msg = f"opening names must be unique in the zone (got {opening_names})"
            raise ValueError(msg)
        for opening in self.openings:
            if opening.facade != "roof" and opening.facade not in names:
                msg = (f"opening '{opening.name}' is on façade '{opening.facade}', which the zone does not have "
                       f"(façades: {', '.join(names) or 'none'}; or 'roof')")
                raise ValueError(msg)
        if self.ventilation in ("stack", "single_sided_two_level") and self.stack_height <= 0:
            msg = f"ventilation '{self.ventilation}' needs stack_height > 0 m (vertical distance inlet to outlet)"
            raise ValueError(msg)
        return self

    def facade_area(self, facade: Facade) -> float:
        """Gross wall area of a façade [m²]."""
        return facade.area if facade.area is not None else facade.length * self.ceiling_height


class Sizing(_Section):
    indoor_limit: float = _f(26.0, meaning="Indoor temperature the openings must hold at the design condition",
                             unit="°C", ge=18, le=35, source=_NO_SOURCE)
    delta_t: float = _f(3.0, meaning="Indoor-minus-outdoor temperature difference at the design condition",
                        unit="K", gt=0, le=15, source=_NO_SOURCE)
    fresh_air_method: Literal["ashrae62", "en16798"] = _f(
        "ashrae62", meaning="Fresh-air rate: ASHRAE 62.1 office rates or an EN 16798-1 category"
    )
    en16798_category: Literal["I", "II", "III", "IV"] = _f("II", meaning="EN 16798-1 category (if chosen)")
    en16798_building: Literal["very_low", "low", "not_low"] = _f(
        "low", meaning="EN 16798-1 building pollution level (if chosen)"
    )
    code_min_free_area_pct: float = _f(
        5.0, meaning="Code minimum openable area as a share of floor area, project-set", unit="%", ge=0, le=100,
        source="project-set; 5 % is used by some codes [from memory]; check the code that applies",
    )
    terrain: Literal["open_flat_country", "scattered_windbreaks", "urban", "city"] = _f(
        "urban", meaning="Terrain around the building, for wind speed at the openings' height",
        source="BS 5925:1991 terrain categories [from memory]",
    )
    cp_windward: float = _f(0.5, meaning="Wind pressure coefficient, windward façade", unit="-", ge=-2, le=2,
                            source="design values +0.5 to +0.7 [from memory]")
    cp_leeward: float = _f(-0.3, meaning="Wind pressure coefficient, leeward façade", unit="-", ge=-2, le=2,
                           source="design values −0.2 to −0.4 [from memory]")


class Decision(_Section):
    id: str = _f(meaning="Decision reference, unique, e.g. 'D01'", min_length=1, max_length=20)
    date: dt.date = _f(meaning="Date the decision was made")
    by: str = _f(meaning="Who made it", min_length=1, max_length=120)
    decision: str = _f(meaning="What was decided", min_length=1, max_length=2000)
    rationale: str = _f(meaning="Why", min_length=1, max_length=4000)
    relies_on: tuple[str, ...] = _f(
        (), meaning="Result keys (e.g. 'climate.occupied_nv_suitable_pct') whose values the report prints beside it"
    )
    revision: str = _f("", meaning="Revision in which the decision entered (defaults to the current revision)")


class Signature(_Section):
    name: str = _f("", meaning="Name of the signatory", max_length=120)
    date: dt.date | None = _f(None, meaning="Date signed")


class SignOff(_Section):
    prepared: Signature = _f(Signature(), meaning="Prepared by")
    checked: Signature = _f(Signature(), meaning="Checked by")
    approved: Signature = _f(Signature(), meaning="Approved by")


CRITERIA_NAMES = ("outdoor_band", "fixed_indoor", "ashrae55_80", "ashrae55_90", "ashrae55_80_fans",
                  "en16798_cat1", "en16798_cat2", "en16798_cat3")


class Operation(_Section):
    changeover_criterion: Literal["outdoor_band", "fixed_indoor", "ashrae55_80", "ashrae55_90", "ashrae55_80_fans",
                                  "en16798_cat1", "en16798_cat2", "en16798_cat3"] = _f(
        "en16798_cat2", meaning="Comfort criterion natural ventilation must hold; air-conditioning takes over when it fails"
    )
    dead_band: float = _f(1.0, meaning="Back to natural ventilation only this far inside the criterion's limits",
                          unit="K", ge=0, le=5, source=_NO_SOURCE)
    air_speed: float = _f(0.1, meaning="Indoor air speed without ceiling fans", unit="m/s", ge=0, le=0.3,
                          source="still air, ASHRAE 55 / EN 16798-1 check cases use 0.1 m/s")
    fixed_indoor_low: float = _f(20.0, meaning="Lower end of the fixed indoor band criterion", unit="°C", ge=10, le=30,
                                 source=_NO_SOURCE + " (typical of air-conditioned design)")
    fixed_indoor_high: float = _f(24.0, meaning="Upper end of the fixed indoor band criterion", unit="°C", ge=15,
                                  le=35, source=_NO_SOURCE + " (typical of air-conditioned design)")
    nv_low_setpoint: float = _f(21.0, meaning="In natural ventilation, windows throttle and close below this indoor "
                                "air temperature", unit="°C", ge=10, le=30, source="design assumption, no published source")
    control_band: float = _f(2.0, meaning="Windows fully open this far above nv_low_setpoint", unit="K", gt=0, le=10,
                             source="design assumption, no published source")
    ceiling_fans: bool = _f(False, meaning="Ceiling fans run in occupied natural-ventilation hours")
    fan_air_speed: float = _f(0.9, meaning="Air speed at the occupants with the ceiling fans running", unit="m/s",
                              gt=0.2, le=1.5, source="design assumption; ASHRAE 55 steps at 0.6 / 0.9 / 1.2 m/s")
    fan_power: float = _f(2.0, meaning="Electrical power of the ceiling fans while running (also a heat gain)",
                          unit="W/m²", ge=0, le=20, source="design assumption, no published source")
    night_purge: bool = _f(False, meaning="Open secure openings at night to cool the thermal mass")
    night_purge_start: HourOfNight = _f("22:00", meaning="Earliest hour for night cooling (HH:00)")
    night_purge_end: HourOfNight = _f("07:00", meaning="Latest hour for night cooling, exclusive (HH:00)")
    night_purge_min_outdoor: float = _f(12.0, meaning="No night cooling with outdoor air colder than this",
                                        unit="°C", ge=-10, le=30, source="design assumption, no published source")
    night_purge_low_setpoint: float = _f(19.0, meaning="Night cooling throttles and stops below this indoor "
                                         "temperature", unit="°C", ge=10, le=28,
                                         source="design assumption, no published source")
    tm52_category: Literal["I", "II", "III"] = _f("II", meaning="CIBSE TM52 building category",
                                                  source="CIBSE TM52:2013 (category II for new buildings)")

    @model_validator(mode="after")
    def _order(self) -> "Operation":
        if self.fixed_indoor_high <= self.fixed_indoor_low:
            msg = f"fixed_indoor_high ({self.fixed_indoor_high}) must be above fixed_indoor_low ({self.fixed_indoor_low})"
            raise ValueError(msg)
        return self


class TimeOfUse(_Section):
    start: HourOfDay = _f(meaning="Start of the period, every day (HH:00)")
    end: HourOfDay = _f(meaning="End of the period, exclusive (HH:00); earlier than start runs over midnight")
    price: float = _f(meaning="Electricity price in the period", unit="currency/kWh", ge=0, le=100)


class Energy(_Section):
    heating_setpoint: float = _f(21.0, meaning="Heating set-point on the air temperature, occupied hours", unit="°C",
                                 ge=10, le=26, source="design assumption (UK NCM uses 22 °C for offices)")
    cooling_setpoint: float = _f(24.0, meaning="Cooling set-point on the air temperature, occupied hours", unit="°C",
                                 ge=18, le=30, source="UK NCM open-plan office cooling set-point 24 °C")
    cooling_seer: float = _f(4.0, meaning="Seasonal efficiency of the cooling plant (cooling ÷ electricity)", unit="-",
                             gt=0.5, le=15, source="typical air-cooled chiller SEER 3.5–5 [from memory]")
    cooling_efficiency_slope: float = _f(
        0.0, meaning="Relative change of cooling efficiency per K of outdoor temperature above 25 °C (e.g. -0.02)",
        unit="1/K", ge=-0.1, le=0.1, source="design assumption; 0 = constant seasonal efficiency")
    heating_fuel: Literal["electricity", "gas"] = _f("gas", meaning="What the heating plant burns or draws")
    heating_efficiency: float = _f(0.9, meaning="Seasonal heating efficiency (heat ÷ fuel; a heat pump's SCOP)",
                                   unit="-", gt=0.3, le=8, source="condensing gas boiler about 0.9 [from memory]")
    heat_recovery: float = _f(0.0, meaning="Sensible heat-recovery efficiency on the mechanical outdoor air",
                              unit="-", ge=0, lt=1)
    sfp: float = _f(1.6, meaning="Specific fan power of the air-conditioning's outdoor-air system", unit="W/(L/s)",
                    gt=0, le=5, source="UK ADL limit, central AHU with heating and cooling 1.6 W/(L/s) [from memory]")
    cooling_capacity: float | None = _f(None, meaning="Cooling plant capacity limit (none = unlimited)",
                                        unit="W/m²", gt=0, le=1000)
    actuator_standby: float = _f(1.0, meaning="Standby power per window actuator (mixed mode)", unit="W",
                                 ge=0, le=50, source="design assumption, no published source")
    controls_standby: float = _f(10.0, meaning="Standby power of the mixed-mode controls per zone", unit="W",
                                 ge=0, le=500, source="design assumption, no published source")
    currency: str = _f("currency units", meaning="Name of the currency for costs", max_length=20)
    electricity_price: float = _f(0.25, meaning="Flat electricity price", unit="currency/kWh", ge=0, le=100,
                                  source="invented placeholder tariff: set the client's tariff")
    electricity_periods: tuple[TimeOfUse, ...] = _f((), meaning="Time-of-use electricity prices overriding the flat price")
    demand_charge: float = _f(0.0, meaning="Charge on each month's peak electrical demand", unit="currency/kW/month",
                              ge=0, le=1000)
    gas_price: float = _f(0.08, meaning="Gas price", unit="currency/kWh", ge=0, le=100,
                          source="invented placeholder tariff: set the client's tariff")
    electricity_carbon: float = _f(0.20, meaning="Grid electricity carbon factor", unit="kgCO2e/kWh", ge=0, le=2)
    gas_carbon: float = _f(0.18, meaning="Gas carbon factor", unit="kgCO2e/kWh", ge=0, le=1,
                           source="natural gas about 0.18 kgCO2e/kWh gross [from memory]")
    carbon_source: str = _f("not stated", meaning="Source of the carbon factors (named in the report)", max_length=200)
    openable_area_cost: float = _f(400.0, meaning="Extra capital per m² of free area of openings (over fixed glazing)",
                                   unit="currency/m²", ge=0, le=1e5, source="invented placeholder; cost planner to set")
    actuator_cost: float = _f(300.0, meaning="Capital per window actuator", unit="currency", ge=0, le=1e5,
                              source="invented placeholder; cost planner to set")
    controls_cost: float = _f(2000.0, meaning="Capital of mixed-mode controls per zone", unit="currency", ge=0, le=1e7,
                              source="invented placeholder; cost planner to set")
    ceiling_fan_cost: float = _f(25.0, meaning="Capital of ceiling fans per m² of floor (if fans)", unit="currency/m²",
                                 ge=0, le=1e4, source="invented placeholder; cost planner to set")
    plant_cost: float = _f(500.0, meaning="Capital of cooling plant per kW of peak cooling", unit="currency/kW",
                           ge=0, le=1e5, source="invented placeholder; cost planner to set")
    plant_space_share: float = _f(10.0, meaning="Plant space of a full air-conditioning scheme as a share of floor area",
                                  unit="%", ge=0, le=50, source=_NO_SOURCE + " (about half a floor in every five)")
    life: int = _f(20, meaning="Life over which savings are counted", unit="years", ge=1, le=100)
    discount_rate: float = _f(0.035, meaning="Real discount rate", unit="-", ge=0, le=0.5,
                              source="design assumption; 3.5 % is a common public-sector real rate [from memory]")


class Uncertainty(_Section):
    samples: int = _f(500, meaning="Monte Carlo samples (variants run through the same hourly model)", ge=10, le=5000)
    seed: int = _f(20261202, meaning="Random seed (the same seed gives the same numbers)", ge=0)
    gains_spread: float = _f(0.15, meaning="Standard deviation of internal gains, relative", unit="-", ge=0, le=1,
                             source="design assumption, no published source")
    solar_spread: float = _f(0.15, meaning="Standard deviation of solar gains (shading, g-value), relative", unit="-",
                             ge=0, le=1, source="design assumption, no published source")
    openable_area_spread: float = _f(0.15, meaning="Standard deviation of the effective openable area, relative",
                                     unit="-", ge=0, le=1, source="design assumption, no published source")
    seer_spread: float = _f(0.10, meaning="Standard deviation of the cooling efficiency, relative", unit="-", ge=0, le=1,
                            source="design assumption, no published source")
    price_spread: float = _f(0.20, meaning="Standard deviation of energy prices, relative", unit="-", ge=0, le=1,
                             source="design assumption, no published source")


class Report(_Section):
    paper: str = _f("A4", meaning="Page size of report.pdf: A4 or Letter")

    @field_validator("paper")
    @classmethod
    def _paper(cls, value: str) -> str:
        if value.strip().lower() not in ("a4", "letter"):
            msg = "allowed values are 'A4' and 'Letter'"
            raise ValueError(msg)
        return "A4" if value.strip().lower() == "a4" else "Letter"


class Project(_Section):
    """The whole project file."""

    project: ProjectInfo
    site: Site
    occupancy: Occupancy = _f(Occupancy(), meaning="When the building is occupied")
    outdoor: Outdoor = _f(Outdoor(), meaning="Outdoor conditions under which windows may open")
    sizing: Sizing = _f(Sizing(), meaning="Design condition and rules for sizing the openings")
    operation: Operation = _f(Operation(), meaning="How the building runs in mixed mode")
    energy: Energy = _f(Energy(), meaning="Plant, tariffs, carbon and costs for the energy comparison")
    uncertainty: Uncertainty = _f(Uncertainty(), meaning="Spreads of the uncertain inputs for the Monte Carlo run")
    report: Report = _f(Report(), meaning="How the report is printed")
    future_climate: FutureClimate | None = _f(
        None, meaning="Monthly climate changes to morph the weather year by, for a second (future) climate column "
        "in the climate stage; absent = today only")
    zones: tuple[Zone, ...] = _f(meaning="Zones of the building (at least one)", min_length=1)
    decisions: tuple[Decision, ...] = _f((), meaning="Decision log")
    signoff: SignOff = _f(SignOff(), meaning="Sign-off block as written in the project file")

    @model_validator(mode="after")
    def _unique(self) -> "Project":
        for label, items in (("zones", [z.name for z in self.zones]), ("decisions", [d.id for d in self.decisions])):
            seen: set[str] = set()
            for item in items:
                if item in seen:
                    msg = f"{label}: '{item}' appears twice; names must be unique"
                    raise ValueError(msg)
                seen.add(item)
        return self

    @property
    def total_floor_area(self) -> float:
        return float(sum(z.floor_area for z in self.zones))


# --------------------------------------------------------------------------- loading


def load_project(path: str | Path, overrides: typing.Sequence[str] = ()) -> Project:
    """Read, override and validate a project file.

    Parameters
    ----------
    path : str or Path
        ``project.toml`` or a folder holding one, or a resolved ``.json`` written by a build.
    overrides : sequence of str
        ``key.path=value`` strings (TOML values; zones addressed by name, e.g.
        ``zones.north.floor_area=420``), applied before validation.

    Raises
    ------
    ProjectError
        One line naming the file, the key path, the value and what is allowed.
    """
    path = Path(path)
    if path.is_dir():
        path = path / PROJECT_FILE
    if not path.is_file():
        msg = f"{path}: project file not found"
        raise ProjectError(msg)
    raw = read_raw(path)
    for item in overrides:
        apply_override(raw, item, source=path.name)
    return validate(raw, source=path.name)


def read_raw(path: Path) -> dict[str, Any]:
    """The project file as a plain dict (TOML, or JSON for a resolved file)."""
    try:
        text = path.read_text(encoding="utf-8")
    except UnicodeDecodeError as exc:
        msg = f"{path.name}: not UTF-8 text (byte {exc.start}); save the project file as UTF-8"
        raise ProjectError(msg) from None
    if path.suffix == ".json":
        return json.loads(text)
    try:
        return tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        msg = f"{path.name}: not valid TOML: {exc}"
        raise ProjectError(msg) from None


def validate(raw: dict[str, Any], source: str = PROJECT_FILE) -> Project:
    """Validate a plain dict against the schema, raising one clear ProjectError."""
    try:
        return Project.model_validate(raw)
    except pydantic.ValidationError as exc:
        errors = exc.errors()
        first = errors[0]
        line = _describe_error(first, raw, source)
        if len(errors) > 1:
            line += f" (and {len(errors) - 1} more problem{'s' if len(errors) > 2 else ''}; fix this one first)"
        raise ProjectError(line) from None


def _key_path(loc: tuple, raw: dict[str, Any]) -> str:
    """Dotted key path; list items of zones/decisions shown by their name or id."""
    parts: list[str] = []
    node: Any = raw
    for item in loc:
        if isinstance(item, int) and isinstance(node, list):
            element = node[item] if item < len(node) else None
            label = None
            if isinstance(element, dict):
                label = element.get("name", element.get("id"))
            parts[-1] = f"{parts[-1]}[{label!r}]" if isinstance(label, str) else f"{parts[-1]}[{item}]"
            node = element
        else:
            parts.append(str(item))
            node = node.get(item) if isinstance(node, dict) else None
    return ".".join(parts) if parts else "(top level)"


def _model_at(loc: tuple) -> type[BaseModel] | None:
    """The schema model that holds the key at ``loc`` (for listing allowed keys)."""
    model: Any = Project
    for item in loc[:-1]:
        if isinstance(item, int):
            continue
        field = model.model_fields.get(item) if isinstance(model, type) else None
        if field is None:
            return None
        model = _inner_model(field.annotation)
        if model is None:
            return None
    return model


def _inner_model(annotation: Any) -> type[BaseModel] | None:
    if isinstance(annotation, type) and issubclass(annotation, BaseModel):
        return annotation
    for arg in typing.get_args(annotation):
        found = _inner_model(arg)
        if found is not None:
            return found
    return None


def _describe_error(err: dict[str, Any], raw: dict[str, Any], source: str) -> str:
    loc = tuple(err["loc"])
    key = _key_path(loc, raw)
    kind = err["type"]
    value = err.get("input")
    if kind == "extra_forbidden":
        model = _model_at(loc)
        allowed = ", ".join(model.model_fields) if model else "see `freerun schema`"
        return f"{source}: unknown key '{key}' (allowed here: {allowed})"
    if kind == "missing":
        return f"{source}: required key '{key}' is missing (see `freerun schema`)"
    reason = err["msg"]
    if reason.startswith("Value error, "):
        reason = reason[len("Value error, "):]
    shown = _short(value)
    if isinstance(value, dict) and loc and kind.startswith("value_error"):
        return f"{source}: {key}: {reason}"
    return f"{source}: {key} = {shown}: {reason}"


def _short(value: Any) -> str:
    text = repr(value)
    return text if len(text) <= 60 else text[:57] + "..."


# --------------------------------------------------------------------------- overrides


def parse_override(item: str) -> tuple[list[str], Any]:
    """Split ``a.b.c=value`` into a key path and a TOML-typed value."""
    if "=" not in item:
        msg = f"--set {item!r}: expected KEY.PATH=VALUE, e.g. zones.north.floor_area=420"
        raise ProjectError(msg)
    key, text = item.split("=", 1)
    path = [p for p in key.strip().split(".")]
    if not all(path):
        msg = f"--set {item!r}: empty part in key path {key!r}"
        raise ProjectError(msg)
    try:
        value = tomllib.loads(f"v = {text.strip()}")["v"]
    except tomllib.TOMLDecodeError:
        value = text.strip()  # a bare word is taken as a string
    return path, value


def apply_override(raw: dict[str, Any], item: str, source: str = PROJECT_FILE) -> None:
    """Apply one ``--set`` override to the raw project dict in place.

    List sections (``zones``, ``decisions``) are addressed by the item's name or id.
    """
    path, value = parse_override(item)
    node: Any = raw
    for i, part in enumerate(path[:-1]):
        nxt = node.get(part) if isinstance(node, dict) else None
        if isinstance(nxt, list):
            label = path[i + 1]
            match = [el for el in nxt if isinstance(el, dict) and label in (el.get("name"), el.get("id"))]
            if not match:
                names = [el.get("name", el.get("id")) for el in nxt if isinstance(el, dict)]
                msg = f"--set {item!r}: no {part} item named {label!r} in {source} (have: {names})"
                raise ProjectError(msg)
            node = match[0]
            rest = path[i + 2:]
            _set_in(node, rest, value, item)
            return
        if nxt is None:
            nxt = {}
            if isinstance(node, dict):
                node[part] = nxt
        if not isinstance(nxt, dict):
            msg = f"--set {item!r}: '{'.'.join(path[:i + 1])}' is a value, not a section"
            raise ProjectError(msg)
        node = nxt
    _set_in(node, path[-1:], value, item)


def _set_in(node: dict[str, Any], rest: list[str], value: Any, item: str) -> None:
    if not rest:
        msg = f"--set {item!r}: name a key inside the item, e.g. zones.north.floor_area=420"
        raise ProjectError(msg)
    for part in rest[:-1]:
        node = node.setdefault(part, {})
        if not isinstance(node, dict):
            msg = f"--set {item!r}: '{part}' is a value, not a section"
            raise ProjectError(msg)
    node[rest[-1]] = value


# --------------------------------------------------------------------------- schema listing


def schema_rows() -> list[dict[str, str]]:
    """Every key of the project file: path, type, unit, default, meaning, source."""
    rows: list[dict[str, str]] = []
    _walk(Project, "", rows)
    return rows


def _type_name(annotation: Any) -> str:
    origin = typing.get_origin(annotation)
    if origin is Literal:
        return " | ".join(repr(a) for a in typing.get_args(annotation))
    if origin in (tuple, list):
        args = [a for a in typing.get_args(annotation) if a is not Ellipsis]
        return f"list of {_type_name(args[0])}" if args else "list"
    if origin in (typing.Union, getattr(__import__("types"), "UnionType", None)):
        return " or ".join(_type_name(a) for a in typing.get_args(annotation) if a is not type(None)) + " (optional)"
    names = {float: "number", int: "integer", str: "text", bool: "true/false", dt.date: "date"}
    return names.get(annotation, getattr(annotation, "__name__", str(annotation)))


def _walk(model: type[BaseModel], prefix: str, rows: list[dict[str, str]]) -> None:
    for name, field in model.model_fields.items():
        key = f"{prefix}{name}"
        sub = _inner_model(field.annotation)
        extra = field.json_schema_extra or {}
        if sub is not None and typing.get_origin(field.annotation) in (tuple, list):
            rows.append(_row(f"[[{key}]]", "list of tables", "", _default(field), field.description, ""))
            _walk(sub, f"{key}[].", rows)
        elif sub is not None:
            _walk(sub, f"{key}.", rows)
        else:
            limits = _limits(field)
            meaning = (field.description or "") + (f" ({limits})" if limits else "")
            rows.append(_row(key, _type_name(field.annotation), extra.get("unit", ""), _default(field), meaning,
                             extra.get("source", "")))


def _limits(field: Any) -> str:
    parts = []
    for meta in field.metadata:
        for attr, sym in (("gt", ">"), ("ge", "≥"), ("lt", "<"), ("le", "≤")):
            if getattr(meta, attr, None) is not None:
                parts.append(f"{sym} {getattr(meta, attr):g}")
    return ", ".join(parts)


def _default(field: Any) -> str:
    if field.is_required():
        return "(required)"
    value = field.default
    if isinstance(value, BaseModel):
        return ""
    if isinstance(value, tuple):
        return "[" + ", ".join(repr(v) for v in value) + "]"
    return repr(value) if isinstance(value, str) else str(value)


def _row(key: str, kind: str, unit: str, default: str, meaning: str | None, source: str) -> dict[str, str]:
    return {"key": key, "type": kind, "unit": unit, "default": default, "meaning": meaning or "", "source": source}


def flatten(model: BaseModel, prefix: str = "") -> list[tuple[str, str]]:
    """Every parameter as used, as (key path, value) pairs for the audit appendix."""
    out: list[tuple[str, str]] = []
    data = model.model_dump(mode="json")

    def walk(node: Any, key: str) -> None:
        if isinstance(node, dict):
            for k, v in node.items():
                walk(v, f"{key}.{k}" if key else k)
        elif isinstance(node, list) and node and all(isinstance(v, dict) for v in node):
            for i, v in enumerate(node):
                label = v.get("name", v.get("id", i))
                walk(v, f"{key}[{label}]")
        else:
            out.append((key, json.dumps(node, ensure_ascii=False)))

    walk(data, prefix)
    return out


DEFAULTS_FILE = "defaults_used.json"


def defaults_used(project: Project) -> list[dict[str, str]]:
    """Every value the project file left to its default: key path, value, unit and source.

    Uses pydantic's record of which fields were given, so it must be called on a
    project validated from the user's file (a build stores the list in
    ``inputs/defaults_used.json`` because the resolved copy sets every key).
    """
    rows: list[dict[str, str]] = []

    def walk(model: BaseModel, prefix: str) -> None:
        for name, field in type(model).model_fields.items():
            value = getattr(model, name)
            key = f"{prefix}{name}"
            if isinstance(value, BaseModel):
                walk(value, f"{key}.")
            elif isinstance(value, tuple) and value and all(isinstance(v, BaseModel) for v in value):
                for item in value:
                    label = getattr(item, "name", getattr(item, "id", "?"))
                    walk(item, f"{key}[{label!r}].")
            elif name not in model.model_fields_set and not field.is_required():
                extra = field.json_schema_extra or {}
                if value in ((), None, ""):
                    continue  # an empty optional list or text is no assumption
                rows.append({"key": key, "value": json.dumps(value, ensure_ascii=False, default=str),
                             "unit": extra.get("unit", ""), "meaning": field.description or "",
                             "source": extra.get("source", "") or "freerun default"})

    walk(project, "")
    return rows
