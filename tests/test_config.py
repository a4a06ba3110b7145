"""Tests of icecolumn.config and icecolumn.timeutil (no outside check values here)."""

from __future__ import annotations

import dataclasses
from pathlib import Path

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from icecolumn import config as cfgmod
from icecolumn.config import (
    PARAMETERS,
    Config,
    config_from_toml_text,
    default_config,
    load_config,
    parameters_markdown,
    parse_assignment,
)
from icecolumn.errors import InputError
from icecolumn.timeutil import format_time, parse_duration, parse_time

try:
    import tomllib
except ModuleNotFoundError:  # Python < 3.11
    import tomli as tomllib

SAMPLES = Path(__file__).resolve().parent.parent / "forcing_samples"


def _error(text: str, source: str = "cfg.toml") -> str:
    with pytest.raises(InputError) as info:
        config_from_toml_text(text, source)
    message = str(info.value)
    assert "\n" not in message
    assert message.startswith(f"{source}: ")
    return message


# ---------------------------------------------------------------- defaults and table


def test_defaults_come_from_the_table():
    cfg = default_config()
    for name, param in PARAMETERS.items():
        section, key = name.split(".")
        assert getattr(getattr(cfg, section), key) == param.default, name


def test_every_dataclass_field_has_a_table_line_and_back():
    declared = {f"{s}.{f.name}" for s, cls in cfgmod.SECTIONS.items() for f in dataclasses.fields(cls)}
    assert declared == set(PARAMETERS)
    assert list(cfgmod.SECTIONS) == [f.name for f in dataclasses.fields(Config)]


def test_brief_defaults():
    cfg = default_config()
    assert cfg.grid.layers == 40
    assert cfg.initial.ice_thickness == 0.02
    assert cfg.ocean.salinity == 34.0
    assert cfg.surface.scheme == "auto"  # linear unless the forcing carries shortwave or cloud fraction
    assert cfg.properties.conductivity_model == "pringle2007"
    assert cfg.output.interval == "6h"
    assert cfg.solver.rtol == 1e-3
    assert cfg.run.start is None and cfg.run.end is None


def test_every_parameter_has_unit_column_and_description():
    for name, param in PARAMETERS.items():
        assert param.description, name
        assert param.kind in {"int", "float", "choice", "duration", "time", "columns", "text"}, name
        if param.kind in {"int", "float"}:
            assert param.unit, f"{name} needs a unit ('1' if dimensionless)"
        if param.kind == "choice":
            assert param.default in param.choices, name


def test_parameters_markdown_lists_every_key():
    text = parameters_markdown()
    lines = text.strip().splitlines()
    assert lines[0].startswith("| setting |")
    assert len(lines) == 2 + len(PARAMETERS)
    for name, param in PARAMETERS.items():
        section, key = name.split(".")
        row = next(line for line in lines if line.startswith(f"| `[{section}] {key}` |"))
        assert param.description in row
        if param.unit not in ("", "1"):
            assert param.unit in row
    assert "`linear`, `prescribed`" in text


def test_none_path_gives_defaults():
    assert load_config() == default_config()
    assert load_config(None, {}) == default_config()


# ---------------------------------------------------------------- reading files


def test_load_file_and_types(tmp_path):
    path = tmp_path / "cfg.toml"
    path.write_text('[grid]\nlayers = 80.0\n[initial]\nice_thickness = 1\n[output]\ninterval = "30min"\n')
    cfg = load_config(path)
    assert cfg.grid.layers == 80 and isinstance(cfg.grid.layers, int)
    assert cfg.initial.ice_thickness == 1.0 and isinstance(cfg.initial.ice_thickness, float)
    assert cfg.output.interval == "30min"
    assert cfg.ocean == default_config().ocean


def test_example_config_loads():
    cfg = load_config(SAMPLES / "example_config.toml")
    assert cfg.initial.ice_thickness == 0.05
    assert parse_time(cfg.run.start) == np.datetime64("2026-10-15T00:00", "ns")


def test_missing_file(tmp_path):
    path = tmp_path / "nothere.toml"
    with pytest.raises(InputError, match=r"nothere\.toml: file not found$"):
        load_config(path)


def test_invalid_toml(tmp_path):
    path = tmp_path / "cfg.toml"
    path.write_text("[grid\nlayers = 3\n")
    with pytest.raises(InputError) as info:
        load_config(path)
    assert str(info.value).startswith(f"{path}: not valid TOML: ")
    assert "\n" not in str(info.value)


def test_toml_native_datetime_is_converted_to_utc_text():
    cfg = config_from_toml_text("[run]\nstart = 2026-10-01T02:00:00+02:00\nend = 2027-05-01\n")
    assert parse_time(cfg.run.start) == np.datetime64("2026-10-01T00:00", "ns")
    assert cfg.run.end == "2027-05-01"


# ---------------------------------------------------------------- error messages


def test_unknown_section_suggests():
    assert _error("[grd]\nlayers = 3\n") == "cfg.toml: unknown section [grd]; did you mean [grid]?"


def test_unknown_section_without_close_match_lists_sections():
    message = _error("[zzzzzz]\n")
    assert "unknown section [zzzzzz]; valid sections: [run], [grid]" in message


def test_unknown_key_suggests():
    assert _error("[grid]\nlayer = 3\n") == "cfg.toml: unknown key 'layer' in [grid]; did you mean 'layers'?"


def test_unknown_key_without_close_match_lists_keys():
    assert _error("[grid]\nxyzzy = 3\n") == "cfg.toml: unknown key 'xyzzy' in [grid]; valid keys: 'layers'"


@pytest.mark.parametrize(
    "text, expected",
    [
        ("[grid]\nlayers = 2", "cfg.toml: [grid] layers = 2: must be at least 3"),
        ("[grid]\nlayers = 1001", "cfg.toml: [grid] layers = 1001: must be at most 1000"),
        ("[initial]\nice_thickness = 0.005", "cfg.toml: [initial] ice_thickness = 0.005: must be 0 (open water) or at "
                                              "least 0.01 m"),
        ("[initial]\nice_thickness = -0.1", "cfg.toml: [initial] ice_thickness = -0.1: must be at least 0 m"),
        ("[initial]\nsnow_thickness = -0.1", "cfg.toml: [initial] snow_thickness = -0.1: must be at least 0 m"),
        ("[grid]\nlayers = 'forty'", "cfg.toml: [grid] layers: expected an integer, got 'forty'"),
        ("[grid]\nlayers = 40.5", "cfg.toml: [grid] layers: expected an integer, got 40.5"),
        ("[grid]\nlayers = true", "cfg.toml: [grid] layers: expected an integer, got true"),
        ("[ocean]\nheat_flux = true", "cfg.toml: [ocean] heat_flux: expected a number, got true"),
        ("[ocean]\nheat_flux = '2'", "cfg.toml: [ocean] heat_flux: expected a number, got '2'"),
        ("[ocean]\nheat_flux = 501", "cfg.toml: [ocean] heat_flux = 501.0: must be at most 500 W m-2"),
        ("[ocean]\nsalinity = nan", "cfg.toml: [ocean] salinity = nan: must be a finite number"),
        ("[surface]\nscheme = 'foo'", "cfg.toml: [surface] scheme = 'foo': must be one of 'auto', 'linear', 'prescribed', 'energy_balance'"),
        ("[surface]\nheat_transfer_coefficient = 0",
         "cfg.toml: [surface] heat_transfer_coefficient = 0.0: must be greater than 0 W m-2 K-1"),
        ("[solver]\nrtol = 0.1", "cfg.toml: [solver] rtol = 0.1: must be less than 0.1"),
        ("[drainage]\nscheme = 'fast'", "cfg.toml: [drainage] scheme = 'fast': must be one of 'none', 'griewank_notz2013', 'rees_jones_worster2014'"),
        ("[output]\ninterval = '90s'", "cfg.toml: [output] interval = '90s': must be a whole multiple of 1min"),
        ("[output]\ninterval = 6", "cfg.toml: [output] interval: expected a duration such as '30min', '6h' or '1D', got 6"),
        ("grid = 5", "cfg.toml: 'grid' must be a table [grid], got 5"),
        ("layers = 5", "cfg.toml: key 'layers' is outside any section; it belongs in [grid]"),
        ("scheme = 'none'", "cfg.toml: key 'scheme' is outside any section; it belongs in [surface] or [drainage]"),
        ("nonsense = 1", "cfg.toml: key 'nonsense' is outside any section"),
        ("[initial]\nbulk_salinity = 35.0",
         "cfg.toml: [initial] bulk_salinity = 35.0: must not exceed [ocean] salinity = 34.0 g/kg"),
        ("[solver]\ninitial_step = '7h'",
         "cfg.toml: [solver] initial_step = '7h': must not exceed [solver] max_step = '6h'"),
        ("[run]\nstart = '2027-01-01T00:00Z'\nend = '2027-01-01T01:00+02:00'",
         "cfg.toml: [run] start = '2027-01-01T00:00Z': must be before [run] end = '2027-01-01T01:00+02:00'"),
    ],
)
def test_error_messages(text, expected):
    assert _error(text + "\n") == expected


def test_bad_duration_and_time_text():
    assert "[output] interval = '6 hours please': not a positive duration" in _error(
        "[output]\ninterval = '6 hours please'\n"
    )
    assert "[run] start = 'yesterday': not an ISO 8601 time" in _error("[run]\nstart = 'yesterday'\n")


def test_cross_field_uses_final_values():
    # the file alone breaks the salinity rule; the override repairs it
    cfg = load_config(None, {"initial": {"bulk_salinity": 36.0}, "ocean": {"salinity": 40}})
    assert cfg.initial.bulk_salinity == 36.0 and cfg.ocean.salinity == 40.0


def test_file_then_override(tmp_path):
    path = tmp_path / "cfg.toml"
    path.write_text("[initial]\nbulk_salinity = 30.0\n[ocean]\nsalinity = 40.0\n")
    assert load_config(path).ocean.salinity == 40.0
    with pytest.raises(InputError) as info:
        load_config(path, {"ocean": {"salinity": 20.0}})
    assert str(info.value) == (
        "override: [initial] bulk_salinity = 30.0: must not exceed [ocean] salinity = 20.0 g/kg"
    )


@pytest.mark.parametrize(
    "overrides, expected",
    [
        ({"grid": {"layers": 2}}, "override: [grid] layers = 2: must be at least 3"),
        ({"gird": {"layers": 20}}, "override: unknown section [gird]; did you mean [grid]?"),
        ({"grid": {"layer": 20}}, "override: unknown key 'layer' in [grid]; did you mean 'layers'?"),
        ({"grid": 20}, "override: 'grid' must be a table [grid], got 20"),
    ],
)
def test_override_errors_name_override(overrides, expected):
    with pytest.raises(InputError) as info:
        load_config(None, overrides)
    assert str(info.value) == expected


def test_parse_assignment():
    assert parse_assignment("grid.layers=80") == {"grid": {"layers": 80}}
    assert parse_assignment("output.interval = 1h") == {"output": {"interval": "1h"}}
    assert parse_assignment('surface.scheme="prescribed"') == {"surface": {"scheme": "prescribed"}}
    assert load_config(None, parse_assignment("initial.ice_thickness=0.1")).initial.ice_thickness == 0.1
    with pytest.raises(InputError, match="section.key=value"):
        parse_assignment("layers=80")
    with pytest.raises(InputError, match="no value"):
        parse_assignment("grid.layers=")


# ---------------------------------------------------------------- round trip, replace


def test_to_toml_round_trip_defaults():
    cfg = default_config()
    text = cfg.to_toml()
    parsed = tomllib.loads(text)
    assert "start" not in parsed["run"]  # None values are omitted
    assert config_from_toml_text(text) == cfg


def test_to_toml_round_trip_changed_values():
    cfg = load_config(
        None,
        {
            "run": {"start": "2026-10-01T00:00+02:00", "end": "2027-05-01T00:00Z"},
            "grid": {"layers": 7},
            "surface": {"scheme": "prescribed"},
            "properties": {"latent_heat": 333430, "ice_conductivity": 2.216},
            "output": {"interval": "1D"},
        },
    )
    again = config_from_toml_text(cfg.to_toml())
    assert again == cfg
    assert again.to_dict() == cfg.to_dict()
    assert again.properties.latent_heat == 333430.0


_FLOATS = st.floats(min_value=0.01, max_value=10.0, allow_nan=False)


@settings(max_examples=40, deadline=None)
@given(
    layers=st.integers(min_value=3, max_value=1000),
    thickness=_FLOATS,
    ocean=st.floats(min_value=0.0, max_value=45.0),
    fraction=st.floats(min_value=0.0, max_value=1.0),
    flux=st.floats(min_value=-50.0, max_value=500.0),
    minutes=st.integers(min_value=1, max_value=100000),
)
def test_to_toml_round_trip_property(layers, thickness, ocean, fraction, flux, minutes):
    cfg = load_config(
        None,
        {
            "grid": {"layers": layers},
            "ocean": {"salinity": ocean, "heat_flux": flux},
            "initial": {"ice_thickness": thickness, "bulk_salinity": ocean * fraction},
            "output": {"interval": f"{minutes}min"},
        },
    )
    assert config_from_toml_text(cfg.to_toml()) == cfg


def test_to_dict_is_nested_plain_data():
    d = default_config().to_dict()
    assert list(d) == list(cfgmod.SECTIONS)
    assert d["grid"] == {"layers": 40}
    assert d["run"] == {"start": None, "end": None}


def test_replace_is_validated_and_returns_new():
    cfg = default_config()
    new = cfg.replace("grid", layers=12)
    assert new.grid.layers == 12 and cfg.grid.layers == 40
    assert new.ocean is not None and new.ocean == cfg.ocean
    with pytest.raises(InputError, match=r"^Config\.replace: \[grid\] layers = 1: must be at least 3$"):
        cfg.replace("grid", layers=1)
    with pytest.raises(InputError, match="unknown key 'layrs'"):
        cfg.replace("grid", layrs=12)
    with pytest.raises(InputError, match="must not exceed"):
        cfg.replace("initial", bulk_salinity=35.0)


def test_config_is_frozen_and_sections_validate_on_construction():
    cfg = default_config()
    with pytest.raises(dataclasses.FrozenInstanceError):
        cfg.grid.layers = 3  # type: ignore[misc]
    with pytest.raises(InputError, match="must be at least 3"):
        cfgmod.GridSection(layers=2)
    assert cfgmod.InitialSection(ice_thickness=1).ice_thickness == 1.0
    with pytest.raises(InputError, match="must not exceed"):
        Config(initial=cfgmod.InitialSection(bulk_salinity=40.0))


def test_toml_text_escapes_and_skips_none():
    text = cfgmod.toml_text({"a": {"s": 'quote " back \\ tab\t', "n": None, "b": True, "i": 3, "f": 1e-7}})
    assert tomllib.loads(text) == {"a": {"s": 'quote " back \\ tab\t', "b": True, "i": 3, "f": 1e-7}}


def test_to_toml_has_unit_comments():
    lines = default_config().to_toml().splitlines()
    assert "ice_thickness = 0.02  # m" in lines
    assert "layers = 40" in lines  # dimensionless: no comment
    assert 'interval = "6h"' in lines


def test_every_setting_is_declared_once_in_its_field():
    for name, cls in cfgmod.SECTIONS.items():
        for f in dataclasses.fields(cls):
            param = f.metadata["param"]
            assert PARAMETERS[f"{name}.{f.name}"] is param
            assert f.default == param.default


def test_durations_and_times_are_parsed_next_to_their_text():
    cfg = load_config(None, {"run": {"start": "2026-10-01T02:00+02:00"}, "solver": {"max_step": "2h"},
                             "output": {"interval": "1D"}})
    assert cfg.solver.max_step_seconds == 7200.0
    assert cfg.solver.initial_step_seconds == 600.0
    assert cfg.output.interval_seconds == 86400.0
    assert cfg.forcing.max_gap_seconds == 21600.0
    assert cfg.snow.flooding_timescale_seconds == 86400.0
    assert cfg.run.start_time == np.datetime64("2026-10-01T00:00", "ns")
    assert cfg.run.end_time is None
    for name, param in PARAMETERS.items():
        section, key = name.split(".")
        companion = {"duration": "_seconds", "time": "_time"}.get(param.kind)
        if companion:
            assert hasattr(getattr(cfg, section), key + companion), name


def test_column_map_merges_extra_pairs():
    cfg = load_config(None, {"forcing": {"columns": "air_temperature=T, wind_speed=WS"}})
    assert cfg.forcing.column_map() == {"air_temperature": "T", "wind_speed": "WS"}
    assert cfg.forcing.column_map({"wind_speed": "U"}) == {"air_temperature": "T", "wind_speed": "U"}


# ---------------------------------------------------------------- timeutil


@pytest.mark.parametrize(
    "text, seconds",
    [("30min", 1800.0), ("1h", 3600.0), ("6h", 21600.0), ("1D", 86400.0), ("2D", 172800.0),
     ("90s", 90.0), ("1.5h", 5400.0), ("PT6H", 21600.0), ("P1DT12H", 129600.0), ("PT30M", 1800.0)],
)
def test_parse_duration(text, seconds):
    assert parse_duration(text) == seconds


@pytest.mark.parametrize("text", ["", "6", "h", "6x", "0h", "PT", "P1M", "-1h", "six hours"])
def test_parse_duration_rejects(text):
    with pytest.raises(InputError) as info:
        parse_duration(text)
    assert "\n" not in str(info.value)


@pytest.mark.parametrize(
    "text, utc",
    [
        ("2026-10-01", "2026-10-01T00:00"),
        ("2026-10-01T06", "2026-10-01T06:00"),
        ("2026-10-01T06:30", "2026-10-01T06:30"),
        ("2026-10-01 06:30:15", "2026-10-01T06:30:15"),
        ("2026-10-01T06:30Z", "2026-10-01T06:30"),
        ("2026-10-01T06:30+02:00", "2026-10-01T04:30"),
        ("2026-10-01T01:00+0200", "2026-09-30T23:00"),
        ("2026-10-01T01:00-03:30", "2026-10-01T04:30"),
        ("2026-10-01T01:00+05", "2026-09-30T20:00"),
    ],
)
def test_parse_time_converts_offsets_to_utc(text, utc):
    value = parse_time(text)
    assert value.dtype == np.dtype("datetime64[ns]")
    assert value == np.datetime64(utc, "ns")


@pytest.mark.parametrize("text", ["2026", "2026-10", "2026-13-01", "2026-02-30", "2026-10-01T25:00",
                                  "2026-10-01+02:00", "01/10/2026", "2026-10-01T00:00+25:00", "tomorrow"])
def test_parse_time_rejects(text):
    with pytest.raises(InputError) as info:
        parse_time(text)
    assert repr(text) in str(info.value) and "\n" not in str(info.value)


def test_format_time():
    assert format_time(np.datetime64("2026-10-01T00:00", "ns")) == "2026-10-01T00:00:00Z"
    assert format_time(parse_time("2027-01-15T02:00:07.9+02:00")) == "2027-01-15T00:00:07Z"
    text = format_time(parse_time("2027-03-04T05:06:07"))
    assert parse_time(text) == np.datetime64("2027-03-04T05:06:07", "ns")
