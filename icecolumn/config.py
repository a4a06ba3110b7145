"""Run configuration: frozen dataclasses read from and written to TOML.

Every setting lives in the single table :data:`PARAMETERS`, keyed
``"section.key"``, giving its default, unit, description and the rule it must
obey.  Defaults, validation, the TOML writer and the documentation table
(:func:`parameters_markdown`) are all derived from it.  To add a setting, add one
line to :data:`PARAMETERS` and the matching field to its section dataclass; to
add a section, also add its dataclass (with ``section = "<name>"``) as a field of
:class:`Config`.  A consistency check at import time catches a table line without
a field, or a field without a table line.

A :class:`Config` is always valid: the section dataclasses check their values
when built, and :class:`Config` checks the rules that link sections.
"""

from __future__ import annotations

import dataclasses
import datetime as _dt
import difflib
import math
import re
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any, ClassVar

try:
    import tomllib
except ModuleNotFoundError:  # Python < 3.11
    import tomli as tomllib  # type: ignore[no-redef]

from .errors import InputError
from .textfile import read_user_text
from .timeutil import parse_duration, parse_time

__all__ = [
    "Param",
    "PARAMETERS",
    "DRAINAGE_SCHEMES",
    "SURFACE_SCHEMES",
    "CONDUCTIVITY_MODELS",
    "Config",
    "RunSection",
    "GridSection",
    "InitialSection",
    "OceanSection",
    "SurfaceSection",
    "PropertiesSection",
    "DrainageSection",
    "OutputSection",
    "SolverSection",
    "ForcingSection",
    "default_config",
    "load_config",
    "config_from_toml_text",
    "parse_assignment",
    "parse_column_map",
    "parameters_markdown",
    "toml_dumps",
]

#: Names accepted by ``[surface] scheme``.
SURFACE_SCHEMES: tuple[str, ...] = ("auto", "linear", "prescribed", "energy_balance")
#: Names accepted by ``[properties] conductivity_model``.
CONDUCTIVITY_MODELS: tuple[str, ...] = ("constant", "parallel_yen1991", "untersteiner1964")
#: Names accepted by ``[snow] conductivity_model``.
SNOW_CONDUCTIVITY_MODELS: tuple[str, ...] = ("constant", "sturm1997")
#: Names accepted by ``[snow] flooding``.
FLOODING_CHOICES: tuple[str, ...] = ("hydrostatic", "none")
#: Names accepted by ``[drainage] scheme``.
DRAINAGE_SCHEMES: tuple[str, ...] = ("none", "griewank_notz2013", "rees_jones_worster2014")
#: Names accepted by ``[drainage] permeability``.
PERMEABILITY_CHOICES: tuple[str, ...] = ("scheme", "freitag1999", "golden2007")


@dataclass(frozen=True)
class Param:
    """One configuration setting: default, unit, meaning and rule.

    ``kind`` is one of ``"int"``, ``"float"``, ``"choice"``, ``"columns"`` (text of
    ``ours=theirs`` pairs), ``"duration"``
    (text such as ``"6h"``, kept as text) or ``"time"`` (ISO 8601 text or
    ``None``).  ``minimum``/``maximum`` bound numbers (and durations, in
    seconds); ``exclusive`` makes both given bounds strict; ``multiple_of``
    (seconds) constrains durations; ``choices`` lists allowed names.
    """

    default: Any
    unit: str
    description: str
    kind: str
    minimum: float | None = None
    maximum: float | None = None
    exclusive: bool = False
    choices: tuple[str, ...] = ()
    multiple_of: float | None = None

    def rule(self) -> str:
        """Human-readable statement of the allowed values (for documentation)."""
        unit = _unit_suffix(self.unit)
        if self.kind == "choice":
            return "one of " + ", ".join(f"`{c}`" for c in self.choices)
        if self.kind == "time":
            return "ISO 8601 time or unset"
        if self.kind == "columns":
            return "text of ours=theirs pairs, comma-separated"
        parts = []
        lo, hi = ("> ", "< ") if self.exclusive else ("≥ ", "≤ ")
        if self.minimum is not None:
            parts.append(lo + _fmt_bound(self.minimum, self.kind))
        if self.maximum is not None:
            parts.append(hi + _fmt_bound(self.maximum, self.kind))
        text = ", ".join(parts)
        if self.kind == "duration":
            text = "duration" + (f", multiple of {_fmt_bound(self.multiple_of, 'duration')}"
                                 if self.multiple_of else "") + (f", {text}" if text else "")
        elif self.kind == "int":
            text = "integer" + (f", {text}" if text else "")
        return text + ("" if self.kind == "duration" else unit if parts else "")


# One line per setting: "section.key": Param(default, unit, description, kind, rule...)
PARAMETERS: dict[str, Param] = {
    "run.start": Param(None, "", "first time simulated (unset: start of the forcing)", "time"),
    "run.end": Param(None, "", "last time simulated (unset: end of the forcing)", "time"),
    "grid.layers": Param(40, "1", "number of finite-volume layers in the ice", "int", 3, 1000),
    "initial.ice_thickness": Param(0.02, "m", "ice thickness at the start (0: open water, which freezes when the water reaches its freezing point and loses heat; otherwise at least 0.01)", "float", 0.0, 10.0),
    "initial.snow_thickness": Param(0.0, "m", "snow thickness at the start", "float", 0.0),
    "initial.bulk_salinity": Param(10.0, "g/kg", "uniform bulk salinity of the initial ice (at most [ocean] salinity)", "float", 0.0),
    "ocean.salinity": Param(34.0, "g/kg", "ocean Absolute Salinity (TEOS-10)", "float", 0.0, 45.0),
    "ocean.heat_flux": Param(2.0, "W m-2", "ocean heat flux into the ice base, used when the forcing has none", "float", -50.0, 500.0),
    "ocean.mixed_layer_depth": Param(0.0, "m", "depth of a slab ocean mixed layer whose temperature and salinity evolve with the surface, the deep ocean heat flux and the ice's salt and fresh water (0: no mixed layer, the water under the ice stays at its freezing point)", "float", 0.0, 1000.0),
    "ocean.salinity_restoring_time": Param(365.0, "days", "time over which exchange with the deep ocean restores the mixed-layer salinity to [ocean] salinity (0: a closed mixed layer; with a mixed layer only)", "float", 0.0),
    "ocean.new_ice_thickness": Param(0.02, "m", "thickness of the new ice that open water at its freezing point forms once it has lost the heat to freeze it", "float", 0.015, 0.5),
    "surface.scheme": Param("auto", "", "surface boundary: energy_balance (needs shortwave_down or cloud_fraction in the forcing), linear air-to-surface transfer, prescribed surface temperature from the forcing, or auto (energy_balance when the forcing allows it, else linear)", "choice", choices=SURFACE_SCHEMES),
    "surface.heat_transfer_coefficient": Param(10.0, "W m-2 K-1", "linearized air-to-surface heat transfer coefficient (10-30 typical, Ashton in Britannica)", "float", 0.0, None, True),
    "properties.conductivity_model": Param("parallel_yen1991", "", "bulk thermal conductivity of sea ice", "choice", choices=CONDUCTIVITY_MODELS),
    "properties.ice_conductivity": Param(2.03, "W m-1 K-1", "pure-ice conductivity (conductivity_model = constant)", "float", 0.0, None, True),
    "properties.ice_density": Param(917.0, "kg m-3", "density of pure ice", "float", 0.0, None, True),
    "properties.ice_specific_heat": Param(2100.0, "J kg-1 K-1", "specific heat capacity of pure ice", "float", 0.0, None, True),
    "properties.brine_specific_heat": Param(3990.0, "J kg-1 K-1", "specific heat capacity of brine", "float", 0.0, None, True),
    "properties.latent_heat": Param(334000.0, "J kg-1", "latent heat of fusion of ice", "float", 0.0, None, True),
    "snow.conductivity_model": Param("constant", "", "snow conductivity: constant ([snow] conductivity) or sturm1997 (from [snow] density)", "choice", choices=SNOW_CONDUCTIVITY_MODELS),
    "snow.conductivity": Param(0.31, "W m-1 K-1", "thermal conductivity of snow (conductivity_model = constant; classic constant of Maykut & Untersteiner 1971)", "float", 0.0, None, True),
    "snow.density": Param(300.0, "kg m-3", "snow density (about 300 on Arctic sea ice, Warren et al. 1999): snowfall depth, Sturm conductivity, draft", "float", 50.0, 600.0),
    "snow.flooding": Param("hydrostatic", "", "snow-ice formation: hydrostatic (sea water floods the snow base while the freeboard is negative) or none", "choice", choices=FLOODING_CHOICES),
    "snow.flooding_timescale": Param("1D", "", "time over which flooding restores zero freeboard", "duration"),
    "drainage.scheme": Param("griewank_notz2013", "", "brine gravity drainage scheme (none switches drainage off)", "choice", choices=DRAINAGE_SCHEMES),
    "drainage.flux_coefficient": Param(None, "scheme units", "drainage flux coefficient alpha (unset: the scheme's published or calibrated value)", "float", 0.0),
    "drainage.critical_rayleigh": Param(None, "1", "critical mush Rayleigh number (unset: the scheme's value)", "float", 0.0),
    "drainage.permeability": Param("scheme", "", "permeability law (scheme: the law the scheme was calibrated with)", "choice", choices=PERMEABILITY_CHOICES),
    "drainage.percolation_threshold": Param(0.03, "1", "liquid fraction below which ice is impermeable (published 0.02-0.05; default 0.03 after Maus et al. 2021 for young ice)", "float", 0.0, 0.2),
    "drainage.flushing_fraction": Param(0.3, "1", "fraction of surface melt water that flushes down through permeable ice (0 switches flushing off; a setting of this project)", "float", 0.0, 1.0),
    "drainage.onset_smoothing": Param(1.0, "1", "width of the C1 smoothing of (Ra - Ra_c)+ in Rayleigh units", "float", 0.0, None, True),
    "output.interval": Param("6h", "", "time between output records (e.g. 30min, 1h, 6h, 1D)", "duration", multiple_of=60.0),
    "solver.rtol": Param(1e-3, "1", "relative tolerance of the time integration", "float", 0.0, 0.1, True),
    "solver.max_step": Param("6h", "", "longest time step allowed", "duration"),
    "solver.initial_step": Param("10min", "", "first time step tried (at most max_step)", "duration"),
    "forcing.columns": Param("", "", "forcing column (or NetCDF variable) names that differ from ours, as ours=theirs pairs separated by commas, e.g. 'air_temperature=Tair_C, wind_speed=WS' (--column on the command line adds to and overrides these)", "columns"),
    "forcing.max_gap": Param("6h", "", "longest gap in a forcing column (empty cells or missing rows) filled by linear interpolation; longer gaps are an error", "duration"),
}


def _unit_suffix(unit: str) -> str:
    return "" if unit in ("", "1") else f" {unit}"


def _fmt_bound(value: float | None, kind: str) -> str:
    if value is None:
        return ""
    if kind == "duration":
        return f"{value / 60:g}min"
    return f"{value:g}"


def _show(value: Any) -> str:
    """A value as it would be written in TOML, for messages."""
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, str):
        return repr(value)
    return repr(value) if isinstance(value, float) else str(value)


def _check_value(section: str, key: str, value: Any, source: str) -> Any:
    """Validate one setting and return it in canonical form (float, int or str)."""
    p = PARAMETERS[f"{section}.{key}"]
    where = f"{source}: [{section}] {key}"

    def fail(reason: str) -> InputError:
        return InputError(f"{where} = {_show(value)}: {reason}")

    if p.kind == "time":
        if value is None:
            return None
        if isinstance(value, _dt.datetime):  # TOML native date-time
            if value.tzinfo is not None:
                value = value.astimezone(_dt.timezone.utc).replace(tzinfo=None)
                return value.isoformat() + "Z"
            return value.isoformat()
        if isinstance(value, _dt.date):
            return value.isoformat()
        if not isinstance(value, str):
            raise InputError(f"{where}: expected an ISO 8601 time, got {_show(value)}")
        try:
            parse_time(value)
        except InputError:
            raise fail("not an ISO 8601 time (e.g. '2026-10-01T00:00Z'; no offset means UTC)") from None
        return value.strip()
    if p.kind == "columns":
        if not isinstance(value, str):
            raise InputError(f"{where}: expected a text of ours=theirs pairs, got {_show(value)}")
        try:
            pairs = parse_column_map(value, f"{where} = {_show(value)}")
        except InputError:
            raise
        return ", ".join(f"{k}={v}" for k, v in pairs.items())
    if p.kind == "choice":
        if not isinstance(value, str):
            raise InputError(f"{where}: expected a name, got {_show(value)}")
        if value not in p.choices:
            raise fail("must be one of " + ", ".join(repr(c) for c in p.choices))
        return value
    if p.kind == "duration":
        if not isinstance(value, str):
            raise InputError(f"{where}: expected a duration such as '30min', '6h' or '1D', got {_show(value)}")
        try:
            seconds = parse_duration(value)
        except InputError:
            raise fail("not a positive duration (e.g. '30min', '6h', '1D' or 'PT6H')") from None
        if p.multiple_of and not math.isclose(seconds / p.multiple_of, round(seconds / p.multiple_of), abs_tol=1e-9):
            raise fail(f"must be a whole multiple of {_fmt_bound(p.multiple_of, 'duration')}")
        _check_bounds(p, seconds, fail, unit=" s")
        return value.strip()
    # numbers
    if value is None and p.default is None:
        return None  # unset: a documented fallback applies
    if isinstance(value, bool) or not isinstance(value, (int, float)):
        wanted = "an integer" if p.kind == "int" else "a number"
        raise InputError(f"{where}: expected {wanted}, got {_show(value)}")
    if p.kind == "int":
        if isinstance(value, float):
            if not value.is_integer():
                raise InputError(f"{where}: expected an integer, got {_show(value)}")
            value = int(value)
    else:
        value = float(value)
        if not math.isfinite(value):
            raise fail("must be a finite number")
    _check_bounds(p, value, fail, unit=_unit_suffix(p.unit))
    return value


def parse_column_map(text: str, where: str) -> dict[str, str]:
    """``'ours=theirs, ours2=theirs2'`` -> {ours: theirs}; an empty text gives {}.

    Raises :class:`InputError` (one line naming ``where``) for a pair without ``=``, an empty
    side, or a name of ours given twice.  Whether the names exist is checked by the reader.
    """
    out: dict[str, str] = {}
    for item in (text or "").split(","):
        if not item.strip():
            continue
        ours, sep, theirs = item.partition("=")
        ours, theirs = ours.strip(), theirs.strip()
        if not sep or not ours or not theirs:
            raise InputError(f"{where}: {item.strip()!r} is not of the form ours=theirs (e.g. air_temperature=Tair)")
        if ours in out:
            raise InputError(f"{where}: {ours!r} is given twice")
        out[ours] = theirs
    return out


def _check_bounds(p: Param, number: float, fail, unit: str) -> None:
    lo, hi = p.minimum, p.maximum
    if lo is not None and (number <= lo if p.exclusive else number < lo):
        raise fail(f"must be {'greater than' if p.exclusive else 'at least'} {_fmt_bound(lo, 'float')}{unit}")
    if hi is not None and (number >= hi if p.exclusive else number > hi):
        raise fail(f"must be {'less than' if p.exclusive else 'at most'} {_fmt_bound(hi, 'float')}{unit}")


def _check_cross(values: dict[str, dict[str, Any]], source_of: dict[str, str]) -> None:
    """Rules linking settings; ``source_of['section.key']`` names where each came from."""

    def source(*keys: str) -> str:
        found = [source_of[k] for k in keys if k in source_of]
        return found[-1] if found else "Config"

    sb, so = values["initial"]["bulk_salinity"], values["ocean"]["salinity"]
    if sb > so:
        raise InputError(
            f"{source('initial.bulk_salinity', 'ocean.salinity')}: [initial] bulk_salinity = {_show(sb)}: "
            f"must not exceed [ocean] salinity = {_show(so)} g/kg"
        )
    h0 = values["initial"]["ice_thickness"]
    if 0.0 < h0 < 0.01:
        raise InputError(
            f"{source('initial.ice_thickness')}: [initial] ice_thickness = {_show(h0)}: "
            f"must be 0 (open water) or at least 0.01 m"
        )
    start, end = values["run"]["start"], values["run"]["end"]
    if start is not None and end is not None and not parse_time(start) < parse_time(end):
        raise InputError(
            f"{source('run.start', 'run.end')}: [run] start = {_show(start)}: "
            f"must be before [run] end = {_show(end)}"
        )
    first, longest = values["solver"]["initial_step"], values["solver"]["max_step"]
    if parse_duration(first) > parse_duration(longest):
        raise InputError(
            f"{source('solver.initial_step', 'solver.max_step')}: [solver] initial_step = {_show(first)}: "
            f"must not exceed [solver] max_step = {_show(longest)}"
        )


def _default(name: str) -> Any:
    return PARAMETERS[name].default


class _Section:
    """Base of the section dataclasses: validates and normalises on construction."""

    section: ClassVar[str]

    def __post_init__(self) -> None:
        for f in dataclasses.fields(self):
            checked = _check_value(self.section, f.name, getattr(self, f.name), "Config")
            object.__setattr__(self, f.name, checked)


@dataclass(frozen=True)
class RunSection(_Section):
    """``[run]``: the simulated period (ISO 8601 texts; ``None`` = forcing span)."""

    section: ClassVar[str] = "run"
    start: str | None = _default("run.start")
    end: str | None = _default("run.end")


@dataclass(frozen=True)
class GridSection(_Section):
    """``[grid]``: vertical discretisation."""

    section: ClassVar[str] = "grid"
    layers: int = _default("grid.layers")


@dataclass(frozen=True)
class InitialSection(_Section):
    """``[initial]``: state of the column at the start."""

    section: ClassVar[str] = "initial"
    ice_thickness: float = _default("initial.ice_thickness")
    snow_thickness: float = _default("initial.snow_thickness")
    bulk_salinity: float = _default("initial.bulk_salinity")


@dataclass(frozen=True)
class OceanSection(_Section):
    """``[ocean]``: the water under the ice."""

    section: ClassVar[str] = "ocean"
    salinity: float = _default("ocean.salinity")
    heat_flux: float = _default("ocean.heat_flux")
    mixed_layer_depth: float = _default("ocean.mixed_layer_depth")
    salinity_restoring_time: float = _default("ocean.salinity_restoring_time")
    new_ice_thickness: float = _default("ocean.new_ice_thickness")


@dataclass(frozen=True)
class SurfaceSection(_Section):
    """``[surface]``: upper boundary condition."""

    section: ClassVar[str] = "surface"
    scheme: str = _default("surface.scheme")
    heat_transfer_coefficient: float = _default("surface.heat_transfer_coefficient")


@dataclass(frozen=True)
class PropertiesSection(_Section):
    """``[properties]``: material properties of ice, brine and snow."""

    section: ClassVar[str] = "properties"
    conductivity_model: str = _default("properties.conductivity_model")
    ice_conductivity: float = _default("properties.ice_conductivity")
    ice_density: float = _default("properties.ice_density")
    ice_specific_heat: float = _default("properties.ice_specific_heat")
    brine_specific_heat: float = _default("properties.brine_specific_heat")
    latent_heat: float = _default("properties.latent_heat")


@dataclass(frozen=True)
class SnowSection(_Section):
    """``[snow]``: the snow layer on the ice."""

    section: ClassVar[str] = "snow"
    conductivity_model: str = _default("snow.conductivity_model")
    conductivity: float = _default("snow.conductivity")
    density: float = _default("snow.density")
    flooding: str = _default("snow.flooding")
    flooding_timescale: str = _default("snow.flooding_timescale")


@dataclass(frozen=True)
class DrainageSection(_Section):
    """``[drainage]``: brine gravity drainage."""

    section: ClassVar[str] = "drainage"
    scheme: str = _default("drainage.scheme")
    flux_coefficient: float | None = _default("drainage.flux_coefficient")
    critical_rayleigh: float | None = _default("drainage.critical_rayleigh")
    permeability: str = _default("drainage.permeability")
    percolation_threshold: float = _default("drainage.percolation_threshold")
    onset_smoothing: float = _default("drainage.onset_smoothing")
    flushing_fraction: float = _default("drainage.flushing_fraction")


@dataclass(frozen=True)
class OutputSection(_Section):
    """``[output]``: what is written and how often."""

    section: ClassVar[str] = "output"
    interval: str = _default("output.interval")


@dataclass(frozen=True)
class SolverSection(_Section):
    """``[solver]``: time integration."""

    section: ClassVar[str] = "solver"
    rtol: float = _default("solver.rtol")
    max_step: str = _default("solver.max_step")
    initial_step: str = _default("solver.initial_step")


@dataclass(frozen=True)
class ForcingSection(_Section):
    """``[forcing]``: how the forcing file is read.

    ``columns`` maps our variable names to the file's column (or NetCDF
    variable) names as one text of ``ours=theirs`` pairs (the flat
    :data:`PARAMETERS` table holds one scalar per key); whether the names exist
    is checked when a file is read.  The command line's ``--column`` adds to it.
    """

    section: ClassVar[str] = "forcing"
    columns: str = _default("forcing.columns")
    max_gap: str = _default("forcing.max_gap")

    def column_map(self) -> dict[str, str]:
        """``columns`` as a dict {our name: the file's name}."""
        return parse_column_map(self.columns, "[forcing] columns")


@dataclass(frozen=True)
class Config:
    """Complete, validated run configuration; one attribute per TOML section."""

    run: RunSection = field(default_factory=RunSection)
    grid: GridSection = field(default_factory=GridSection)
    initial: InitialSection = field(default_factory=InitialSection)
    ocean: OceanSection = field(default_factory=OceanSection)
    surface: SurfaceSection = field(default_factory=SurfaceSection)
    properties: PropertiesSection = field(default_factory=PropertiesSection)
    snow: SnowSection = field(default_factory=SnowSection)
    drainage: DrainageSection = field(default_factory=DrainageSection)
    output: OutputSection = field(default_factory=OutputSection)
    solver: SolverSection = field(default_factory=SolverSection)
    forcing: ForcingSection = field(default_factory=ForcingSection)

    def __post_init__(self) -> None:
        for name, cls in SECTIONS.items():
            if not isinstance(getattr(self, name), cls):
                raise InputError(f"Config: section {name!r} must be a {cls.__name__}, got {getattr(self, name)!r}")
        _check_cross(self.to_dict(), {})

    def to_dict(self) -> dict[str, dict[str, Any]]:
        """Nested ``{section: {key: value}}`` of every setting (unset times are ``None``)."""
        return {name: dataclasses.asdict(getattr(self, name)) for name in SECTIONS}

    def to_toml(self) -> str:
        """The full resolved configuration as TOML text (unset keys omitted).

        Loading the text again with :func:`config_from_toml_text` gives an equal
        :class:`Config`.
        """
        comments = {name: _unit_suffix(p.unit).strip() for name, p in PARAMETERS.items()}
        return "# icecolumn configuration, fully resolved\n" + toml_dumps(self.to_dict(), comments)

    def replace(self, section: str, **changes: Any) -> Config:
        """A copy with some settings of one section changed (validated).

        Parameters
        ----------
        section : str
            Section name, e.g. ``"grid"``. [1]
        **changes
            New values by key, e.g. ``layers=80``. [units of each key]
        """
        return _build(self.to_dict(), [("Config.replace", {section: changes})])


#: Section name -> section dataclass, in TOML order (derived from :class:`Config`).
SECTIONS: dict[str, type[_Section]] = {f.name: f.default_factory for f in dataclasses.fields(Config)}  # type: ignore[misc]


def _check_table_matches_dataclasses() -> None:
    declared = {f"{name}.{f.name}" for name, cls in SECTIONS.items() for f in dataclasses.fields(cls)}
    for name, cls in SECTIONS.items():
        if cls.section != name:
            raise RuntimeError(f"{cls.__name__}.section is {cls.section!r}, but Config names it {name!r}")
    if declared != set(PARAMETERS):
        raise RuntimeError(
            "config.PARAMETERS and the section dataclasses disagree: "
            f"only in table {sorted(set(PARAMETERS) - declared)}, only in dataclasses {sorted(declared - set(PARAMETERS))}"
        )


_check_table_matches_dataclasses()


def _suggest(word: str, options: list[str], fmt, noun: str) -> str:
    close = difflib.get_close_matches(word, options, n=1)
    if close:
        return f"did you mean {fmt(close[0])}?"
    return f"valid {noun}: " + ", ".join(fmt(o) for o in options)


def _build(base: dict[str, dict[str, Any]], layers: list[tuple[str, Any]]) -> Config:
    """Apply layers ``(source, {section: {key: value}})`` over ``base`` and build a Config."""
    values = {s: dict(v) for s, v in base.items()}
    source_of: dict[str, str] = {}
    for source, data in layers:
        if data is None:
            continue
        if not isinstance(data, dict):
            raise InputError(f"{source}: expected a table of sections, got {_show(data)}")
        for section, table in data.items():
            if section not in SECTIONS and not isinstance(table, dict):
                homes = [f"[{n}]" for n, cls in SECTIONS.items() if section in {f.name for f in dataclasses.fields(cls)}]
                where = f"; it belongs in {' or '.join(homes)}" if homes else ""
                raise InputError(f"{source}: key {str(section)!r} is outside any section{where}")
            if section not in SECTIONS:
                hint = _suggest(str(section), list(SECTIONS), lambda s: f"[{s}]", "sections")
                raise InputError(f"{source}: unknown section [{section}]; {hint}")
            if not isinstance(table, dict):
                raise InputError(f"{source}: '{section}' must be a table [{section}], got {_show(table)}")
            keys = [f.name for f in dataclasses.fields(SECTIONS[section])]
            for key, value in table.items():
                if key not in keys:
                    hint = _suggest(str(key), keys, repr, "keys")
                    raise InputError(f"{source}: unknown key {str(key)!r} in [{section}]; {hint}")
                values[section][key] = _check_value(section, key, value, source)
                source_of[f"{section}.{key}"] = source
    _check_cross(values, source_of)
    return Config(**{name: cls(**values[name]) for name, cls in SECTIONS.items()})


def default_config() -> Config:
    """The configuration with every setting at its default."""
    return Config()


def config_from_toml_text(text: str, source: str = "<string>") -> Config:
    """Configuration from TOML text; settings not given keep their defaults.

    Parameters
    ----------
    text : str
        TOML document with the sections of :data:`PARAMETERS`. [1]
    source : str
        Name used first in error messages (usually the file name). [1]
    """
    return _build(default_config().to_dict(), [(source, _parse_toml(text, source))])


def _parse_toml(text: str, source: str) -> dict[str, Any]:
    try:
        return tomllib.loads(text)
    except tomllib.TOMLDecodeError as err:
        message = " ".join(str(err).split())
        raise InputError(f"{source}: not valid TOML: {message}") from None


def load_config(path: str | Path | None = None, overrides: dict[str, dict[str, Any]] | None = None) -> Config:
    """Read a configuration file and apply overrides.

    Parameters
    ----------
    path : str or pathlib.Path, optional
        TOML file; ``None`` starts from the defaults. [1]
    overrides : dict, optional
        ``{section: {key: value}}`` applied after the file and checked the same
        way; errors name ``override`` as their source. [units of each key]

    Returns
    -------
    config : Config
        The validated configuration.

    Raises
    ------
    InputError
        One line naming the file (or ``override``), the section and key, and the problem.
    """
    layers: list[tuple[str, Any]] = []
    if path is not None:
        name = str(path)
        text, raw = read_user_text(path, "configuration file")
        layers.append((name, _parse_toml(text, name)))
    layers.append(("override", overrides))
    return _build(default_config().to_dict(), layers)


_ASSIGNMENT = re.compile(r"\s*([A-Za-z_][A-Za-z0-9_]*)\.([A-Za-z_][A-Za-z0-9_]*)\s*=(.*)", re.S)


def parse_assignment(text: str) -> dict[str, dict[str, Any]]:
    """Turn ``"section.key=value"`` (e.g. from a command line) into an override dict.

    The value is read as a TOML value (``40``, ``0.05``, ``true``, ``"6h"``); if it
    is not valid TOML it is kept as plain text, so ``output.interval=6h`` works.

    Parameters
    ----------
    text : str
        The assignment. [1]

    Returns
    -------
    overrides : dict
        ``{section: {key: value}}`` for :func:`load_config`. [units of the key]
    """
    m = _ASSIGNMENT.fullmatch(text)
    if m is None:
        raise InputError(f"override: {text!r} is not of the form section.key=value")
    section, key, raw = m.group(1), m.group(2), m.group(3).strip()
    if not raw:
        raise InputError(f"override: {text!r} has no value after '='")
    try:
        value = tomllib.loads(f"v = {raw}")["v"]
    except tomllib.TOMLDecodeError:
        value = raw
    return {section: {key: value}}


def parameters_markdown() -> str:
    """Markdown table of every setting: key, default, unit, allowed values, meaning."""
    rows = ["| setting | default | unit | allowed | meaning |", "|---|---|---|---|---|"]
    for name, p in PARAMETERS.items():
        section, key = name.split(".", 1)
        default = "unset" if p.default is None else f"`{_toml_value(p.default)}`"
        rows.append(f"| `[{section}] {key}` | {default} | {p.unit or '–'} | {p.rule()} | {p.description} |")
    return "\n".join(rows) + "\n"


_TOML_ESCAPES = {'"': '\\"', "\\": "\\\\", "\b": "\\b", "\t": "\\t", "\n": "\\n", "\f": "\\f", "\r": "\\r"}


def _toml_value(value: Any) -> str:
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, int):
        return str(value)
    if isinstance(value, float):
        if math.isnan(value):
            return "nan"
        if math.isinf(value):
            return "inf" if value > 0 else "-inf"
        return repr(value)
    if isinstance(value, str):
        out = "".join(
            _TOML_ESCAPES.get(c, f"\\u{ord(c):04x}" if ord(c) < 0x20 or ord(c) == 0x7F else c) for c in value
        )
        return f'"{out}"'
    raise TypeError(f"cannot write {type(value).__name__} value {value!r} to TOML")


_BARE_KEY = re.compile(r"[A-Za-z0-9_-]+")


def toml_dumps(sections: dict[str, dict[str, Any]], comments: dict[str, str] | None = None) -> str:
    """Write flat TOML sections of str/int/float/bool values; ``None`` values are left out.

    Parameters
    ----------
    sections : dict
        ``{section: {key: value}}``. [1]
    comments : dict, optional
        ``{"section.key": text}`` written as a trailing ``# text`` comment. [1]
    """
    comments = comments or {}

    def key_text(k: str) -> str:
        return k if _BARE_KEY.fullmatch(k) else _toml_value(k)

    blocks = []
    for section, table in sections.items():
        lines = [f"[{key_text(section)}]"]
        for key, value in table.items():
            if value is None:
                continue
            line = f"{key_text(key)} = {_toml_value(value)}"
            note = comments.get(f"{section}.{key}")
            lines.append(f"{line}  # {note}" if note else line)
        blocks.append("\n".join(lines))
    return "\n\n".join(blocks) + "\n"
