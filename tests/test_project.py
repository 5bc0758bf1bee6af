"""Project file schema: validation messages, overrides and the schema listing."""

from __future__ import annotations

import copy
import datetime as dt

import pytest

from calcs.errors import ProjectError
from calcs.project import apply_override, flatten, load_project, schema_rows, validate

BASE = {
    "project": {
        "job_number": "T-1", "title": "Test", "client": "Client", "site_name": "Site",
        "design_stage": "concept", "revision": "P01", "date": dt.date(2026, 1, 5), "author": "Tester",
    },
    "site": {"latitude": 36.1, "longitude": -79.9, "utc_offset": -5, "weather_file": "w.epw"},
    "zones": [{"name": "north", "floor_area": 400.0}, {"name": "south", "floor_area": 200.0}],
}


def raw(**changes):
    data = copy.deepcopy(BASE)
    for path, value in changes.items():
        node = data
        *head, last = path.split("__")
        for part in head:
            node = node.setdefault(part, {})
        node[last] = value
    return data


def test_defaults_applied():
    project = validate(raw())
    assert project.outdoor.band_low == 16.0 and project.outdoor.band_high == 26.0
    assert project.occupancy.start_hour == 8 and project.occupancy.end_hour == 18
    assert project.total_floor_area == 600.0


@pytest.mark.parametrize(
    ("changes", "expected"),
    [
        ({"site__latitude": 123}, "site.latitude = 123"),
        ({"site__lattitude": 36}, "unknown key 'site.lattitude'"),
        ({"outdoor__band_low": 27}, "band_high (26.0) must be above band_low (27"),
        ({"occupancy__start": "8am"}, "occupancy.start = '8am'"),
        ({"occupancy__end": "07:00"}, "end (07:00) must be later than start (08:00)"),
        ({"occupancy__holidays": [dt.date(2025, 12, 25)]}, "not in calendar_year 2026"),
        ({"occupancy__days": ["monday"]}, "occupancy.days[0] = 'monday'"),
        ({"project__job_number": "A/B"}, "project.job_number = 'A/B'"),
        ({"site__leap_day": "maybe"}, "site.leap_day = 'maybe'"),
        ({"zones": []}, "zones = []"),
        ({"zones": [{"name": "a", "floor_area": 1}, {"name": "a", "floor_area": 2}]}, "'a' appears twice"),
        ({"zones": [{"name": "a", "floor_area": -5}]}, "zones['a'].floor_area = -5"),
        ({"zones": [{"name": "a", "floor_area": "big"}]}, "zones['a'].floor_area = 'big'"),
    ],
)
def test_errors_name_key_value_and_rule(changes, expected):
    with pytest.raises(ProjectError) as info:
        validate(raw(**changes), source="project.toml")
    message = str(info.value)
    assert message.startswith("project.toml: ")
    assert expected in message
    assert "\n" not in message


def test_missing_required_key():
    data = raw()
    del data["site"]["latitude"]
    with pytest.raises(ProjectError, match=r"required key 'site\.latitude' is missing"):
        validate(data)


def test_unknown_key_lists_allowed_keys():
    with pytest.raises(ProjectError, match=r"allowed here: .*band_low.*band_high"):
        validate(raw(outdoor__band_lo=10))


def test_invalid_toml(tmp_path):
    path = tmp_path / "project.toml"
    path.write_text("[project\njob_number = 1\n", encoding="utf-8")
    with pytest.raises(ProjectError, match=r"project.toml: not valid TOML"):
        load_project(path)


def test_override_zone_by_name_and_type():
    data = raw()
    apply_override(data, "zones.north.floor_area=420")
    apply_override(data, "outdoor.band_high=27.5")
    apply_override(data, "project.revision=C01")
    project = validate(data)
    assert project.zones[0].floor_area == 420.0
    assert project.outdoor.band_high == 27.5
    assert project.project.revision == "C01"


@pytest.mark.parametrize(
    ("item", "expected"),
    [
        ("zones.east.floor_area=1", "no zones item named 'east'"),
        ("no_equals_sign", "expected KEY.PATH=VALUE"),
        ("zones..floor_area=3", "empty part"),
    ],
)
def test_bad_overrides(item, expected):
    with pytest.raises(ProjectError, match=expected):
        apply_override(raw(), item)


def test_override_validated_like_the_file():
    data = raw()
    apply_override(data, "zones.north.floor_area=-1")
    with pytest.raises(ProjectError, match=r"zones\['north'\]\.floor_area = -1"):
        validate(data)


def test_schema_lists_every_key_with_units():
    rows = {row["key"]: row for row in schema_rows()}
    assert rows["outdoor.band_low"]["unit"] == "°C"
    assert rows["outdoor.band_low"]["default"] == "16.0"
    assert "common practice, no source" in rows["outdoor.band_low"]["source"]
    assert rows["zones[].floor_area"]["unit"] == "m²"
    assert rows["site.latitude"]["default"] == "(required)"
    for row in rows.values():
        assert row["meaning"], f"{row['key']} has no meaning text"


def test_flatten_lists_parameters_as_used():
    pairs = dict(flatten(validate(raw())))
    assert pairs["zones[north].floor_area"] == "400.0"
    assert pairs["outdoor.band_high"] == "26.0"
