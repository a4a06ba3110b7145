"""Run configuration: frozen dataclasses read from and written to TOML.

Every setting is declared once, as a field of its section dataclass made with
:func:`setting` (default, unit, description, kind and the rule it must obey)::

    @dataclass(frozen=True)
    class GridSection(_Section):
        section: ClassVar[str] = "grid"
        layers: int = setting(40, "1", "number of finite-volume layers in the ice", "int", 3, 1000)

The table :data:`PARAMETERS` (keyed ``"section.key"``), defaults, validation, the
TOML writer and the documentation table (:func:`parameters_markdown`) are all
derived from these fields.  To add a setting, add one such field; to add a
section, also add its dataclass (with ``section = "<name>"``) as a field of
:class:`Config`.

Durations and times are kept as the text the user wrote (so the TOML round trip
is exact) and are also available parsed, next to their text: every duration
setting ``key`` has a read-only ``key_seconds`` [s] (e.g.
``cfg.solver.max_step_seconds``) and every time setting ``key`` a ``key_time``
(``numpy.datetime64[ns]`` UTC, or ``None`` when unset; e.g. ``cfg.run.start_time``).

A :class:`Config` is always valid: the section dataclasses check their values
when built, and :class:`Config` checks the rules that link sections.
"""

from __future__ import annotations

import dataclasses
import datetime as _dt
import difflib
import functools
import math
import re
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any, ClassVar

import tomli_w

try:
    import tomllib
except ModuleNotFoundError:  # Python < 3.11
    import tomli as tomllib  # type: ignore[no-redef]

from . import constants as C
from .errors import InputError
from .surface import AIR_HEIGHT, ALBEDO_DRY_SNOW, ALBEDO_ICE, ALBEDO_MELTING_ICE, ALBEDO_MELTING_SNOW, ALBEDO_POND, \
    POND_FRACTION, ROUGHNESS_LENGTH, WIND_HEIGHT
from .textfile import read_user_text
from .timeutil import format_duration, parse_duration, parse_time

__all__ = [
    "Param",
    "setting",
    "PARAMETERS",
    "SECTIONS",
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
    "SnowSection",
    "DrainageSection",
    "OutputSection",
    "SolverSection",
    "ForcingSection",
    "StationSection",
    "default_config",
    "load_config",
    "config_from_toml_text",
    "parse_assignment",
    "parse_assignments",
    "parse_column_map",
    "parse_toml",
    "parameters_markdown",
    "toml_text",
]

#: Names accepted by ``[surface] scheme``.
SURFACE_SCHEMES: tuple[str, ...] = ("auto", "linear", "prescribed", "energy_balance")
#: Names accepted by ``[surface] stability``.
STABILITY_CHOICES: tuple[str, ...] = ("grachev2007", "neutral")
#: Names accepted by ``[properties] conductivity_model``.
CONDUCTIVITY_MODELS: tuple[str, ...] = ("constant", "parallel_yen1991", "untersteiner1964", "pringle2007")
#: Names accepted by ``[snow] conductivity_model``.
SNOW_CONDUCTIVITY_MODELS: tuple[str, ...] = ("constant", "sturm1997")
#: Names accepted by ``[snow] flooding``.
FLOODING_CHOICES: tuple[str, ...] = ("hydrostatic", "none")
#: Names accepted by ``[drainage] scheme``.
DRAINAGE_SCHEMES: tuple[str, ...] = ("none", "griewank_notz2013", "rees_jones_worster2014")
#: Names accepted by ``[drainage] permeability``.
PERMEABILITY_CHOICES: tuple[str, ...] = ("scheme", "freitag1999", "golden2007")

#: Longest free text of a ``"text"`` setting (e.g. ``[station] name``).
MAX_TEXT_LENGTH = 200

#: Kinds of setting (see :class:`Param`).
KINDS: tuple[str, ...] = ("int", "float", "choice", "columns", "duration", "time", "text")


@dataclass(frozen=True)
class Param:
    """One configuration setting: default, unit, meaning and rule.

    ``kind`` is one of ``"int"``, ``"float"``, ``"choice"``, ``"columns"`` (text of
    ``ours=theirs`` pairs), ``"duration"``
    (text such as ``"6h"``, kept as text), ``"time"`` (ISO 8601 text or
    ``None``) or ``"text"`` (one line of free text, or ``None``).  ``minimum``/``maximum`` bound numbers (and durations, in
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
        if self.kind == "text":
            return f"one line of text (at most {MAX_TEXT_LENGTH} characters) or unset"
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


def setting(default: Any, unit: str, description: str, kind: str, minimum: float | None = None,
            maximum: float | None = None, exclusive: bool = False, *, choices: tuple[str, ...] = (),
            multiple_of: float | None = None) -> Any:
    """Declare one setting: a dataclass field whose metadata holds its :class:`Param`.

    Arguments are those of :class:`Param`; ``default`` is also the field's default.
    """
    if kind not in KINDS:
        raise ValueError(f"setting kind {kind!r} is not one of {KINDS}")
    param = Param(default, unit, description, kind, minimum, maximum, exclusive, choices, multiple_of)
    return field(default=default, metadata={"param": param})


def _unit_suffix(unit: str) -> str:
    return "" if unit in ("", "1") else f" {unit}"


def _fmt_bound(value: float | None, kind: str) -> str:
    if value is None:
        return ""
    return format_duration(value) if kind == "duration" else f"{value:g}"


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
    if p.kind == "text":
        if value is None:
            return None
        if not isinstance(value, str):
            raise InputError(f"{where}: expected a text, got {_show(value)}")
        text = value.strip()
        if not text or "\n" in text or "\r" in text or len(text) > MAX_TEXT_LENGTH:
            raise fail(f"must be one line of 1 to {MAX_TEXT_LENGTH} characters")
        return text
    if p.kind == "columns":
        if not isinstance(value, str):
            raise InputError(f"{where}: expected a text of ours=theirs pairs, got {_show(value)}")
        pairs = parse_column_map(value, f"{where} = {_show(value)}")
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


def _seconds_of(name: str) -> property:
    def get(self) -> float:
        return parse_duration(getattr(self, name))

    return property(get, doc=f"``{name}`` in seconds [s].")


def _time_of(name: str) -> property:
    def get(self):
        text = getattr(self, name)
        return None if text is None else parse_time(text)

    return property(get, doc=f"``{name}`` as numpy.datetime64[ns] UTC, or None when unset.")


#: Suffix of the parsed companion of each kind of setting (see the module docstring).
PARSED_SUFFIX: dict[str, str] = {"duration": "_seconds", "time": "_time"}


class _Section:
    """Base of the section dataclasses: validates and normalises on construction.

    Every field must be declared with :func:`setting`.  A subclass gets the parsed
    companions of its duration (``<key>_seconds``) and time (``<key>_time``) settings.
    """

    section: ClassVar[str]

    def __init_subclass__(cls, **kwargs: Any) -> None:
        super().__init_subclass__(**kwargs)
        for name, value in list(vars(cls).items()):
            if not isinstance(value, dataclasses.Field):
                continue
            if "param" not in value.metadata:
                raise TypeError(f"{cls.__name__}.{name}: declare settings with config.setting(...)")
            kind = value.metadata["param"].kind
            if kind == "duration":
                setattr(cls, name + PARSED_SUFFIX[kind], _seconds_of(name))
            elif kind == "time":
                setattr(cls, name + PARSED_SUFFIX[kind], _time_of(name))

    def __post_init__(self) -> None:
        for f in dataclasses.fields(self):
            checked = _check_value(self.section, f.name, getattr(self, f.name), "Config")
            object.__setattr__(self, f.name, checked)


@dataclass(frozen=True)
class RunSection(_Section):
    """``[run]``: the simulated period (ISO 8601 texts; ``None`` = forcing span)."""

    section: ClassVar[str] = "run"
    start: str | None = setting(None, "", "first time simulated (unset: start of the forcing)", "time")
    end: str | None = setting(None, "", "last time simulated (unset: end of the forcing)", "time")


@dataclass(frozen=True)
class GridSection(_Section):
    """``[grid]``: vertical discretisation."""

    section: ClassVar[str] = "grid"
    layers: int = setting(40, "1", "number of finite-volume layers in the ice", "int", 3, 1000)


@dataclass(frozen=True)
class InitialSection(_Section):
    """``[initial]``: state of the column at the start."""

    section: ClassVar[str] = "initial"
    ice_thickness: float = setting(
        0.02, "m", "ice thickness at the start (0: open water, which freezes when the water reaches its freezing "
        "point and loses heat; otherwise at least 0.01)", "float", 0.0, 10.0)
    snow_thickness: float = setting(0.0, "m", "snow thickness at the start", "float", 0.0)
    bulk_salinity: float = setting(
        10.0, "g/kg", "uniform bulk salinity of the initial ice (at most [ocean] salinity)", "float", 0.0)


@dataclass(frozen=True)
class OceanSection(_Section):
    """``[ocean]``: the water under the ice."""

    section: ClassVar[str] = "ocean"
    salinity: float = setting(C.OCEAN_SALINITY, "g/kg", "ocean Absolute Salinity (TEOS-10)", "float", 0.0, 45.0)
    heat_flux: float = setting(
        2.0, "W m-2", "ocean heat flux into the ice base, used when the forcing has none", "float", -50.0, 500.0)
    mixed_layer_depth: float = setting(
        0.0, "m", "depth of a slab ocean mixed layer whose temperature and salinity evolve with the surface, the "
        "deep ocean heat flux and the ice's salt and fresh water (0: no mixed layer, the water under the ice stays "
        "at its freezing point)", "float", 0.0, 1000.0)
    salinity_restoring_time: float = setting(
        365.0, "days", "time over which exchange with the deep ocean restores the mixed-layer salinity to [ocean] "
        "salinity (0: a closed mixed layer; with a mixed layer only)", "float", 0.0)
    new_ice_thickness: float = setting(
        0.02, "m", "thickness of the new ice that open water at its freezing point forms once it has lost the heat "
        "to freeze it", "float", 0.015, 0.5)


@dataclass(frozen=True)
class SurfaceSection(_Section):
    """``[surface]``: upper boundary condition."""

    section: ClassVar[str] = "surface"
    scheme: str = setting(
        "auto", "", "surface boundary: energy_balance (needs shortwave_down or cloud_fraction in the forcing), "
        "linear air-to-surface transfer, prescribed surface temperature from the forcing, or auto (energy_balance "
        "when the forcing allows it, else linear)", "choice", choices=SURFACE_SCHEMES)
    heat_transfer_coefficient: float = setting(
        10.0, "W m-2 K-1", "linearized air-to-surface heat transfer coefficient (10-30 typical, Ashton in "
        "Britannica)", "float", 0.0, None, True)
    albedo_dry_snow: float = setting(
        ALBEDO_DRY_SNOW, "1", "albedo of dry snow (energy balance; Perovich et al. 2002: 0.8-0.9); a measured albedo "
        "forcing column replaces the four albedos", "float", 0.0, 1.0)
    albedo_melting_snow: float = setting(
        ALBEDO_MELTING_SNOW, "1", "albedo of melting snow (Hanesiak et al. 2001: 0.75 on landfast first-year ice)", "float", 0.0, 1.0)
    albedo_ice: float = setting(
        ALBEDO_ICE, "1", "albedo of cold bare ice (Perovich et al. 2002: bare white ice 0.65)", "float", 0.0, 1.0)
    albedo_melting_ice: float = setting(
        ALBEDO_MELTING_ICE, "1", "albedo of melting bare ice between its ponds (Xia et al. 2015: 0.56-0.68)",
        "float", 0.0, 1.0)
    pond_fraction: float = setting(
        POND_FRACTION, "1", "fraction of melting bare ice covered by melt ponds (a fixed fraction, not a pond model; "
        "Divine et al. 2015: 0.29 on thin first-year ice in late summer)", "float", 0.0, 1.0)
    albedo_pond: float = setting(
        ALBEDO_POND, "1", "albedo of melt ponds (Hanesiak et al. 2001: 0.21 for dark ponds on first-year ice)",
        "float", 0.0, 1.0)
    stability: str = setting(
        "grachev2007", "", "stability correction of the turbulent fluxes (energy balance): grachev2007 "
        "(Monin-Obukhov, SHEBA stable functions of Grachev et al. 2007, Paulson 1970 unstable) or neutral",
        "choice", choices=STABILITY_CHOICES)
    roughness_length: float = setting(
        ROUGHNESS_LENGTH, "m", "aerodynamic roughness length of the snow or ice surface, also used for heat and moisture "
        "(Andreas et al. 2010, winter SHEBA)", "float", 1e-6, 0.1)
    wind_height: float = setting(WIND_HEIGHT, "m", "height of the wind measurement", "float", 0.5, 100.0)
    air_temperature_height: float = setting(AIR_HEIGHT, "m", "height of the air temperature and humidity measurement",
                                            "float", 0.5, 100.0)


@dataclass(frozen=True)
class PropertiesSection(_Section):
    """``[properties]``: material properties of ice, brine and snow."""

    section: ClassVar[str] = "properties"
    conductivity_model: str = setting(
        "pringle2007", "", "bulk thermal conductivity of sea ice: pringle2007 (bubbly-brine model, which matches "
        "conductivities measured on first-year ice, Pringle et al. 2006 and 2007), parallel_yen1991 (liquid-fraction "
        "weighted Yen et al. 1991 ice and brine), untersteiner1964 (k_i + 0.13 S/T, 10-20 % below the measured) or "
        "constant", "choice", choices=CONDUCTIVITY_MODELS)
    ice_conductivity: float = setting(C.ICE_CONDUCTIVITY, "W m-1 K-1", "pure-ice conductivity (conductivity_model = constant)",
                                      "float", 0.0, None, True)
    ice_density: float = setting(C.ICE_DENSITY, "kg m-3", "density of pure ice", "float", 0.0, None, True)
    ice_specific_heat: float = setting(C.ICE_SPECIFIC_HEAT, "J kg-1 K-1", "specific heat capacity of pure ice", "float", 0.0,
                                       None, True)
    brine_specific_heat: float = setting(C.BRINE_SPECIFIC_HEAT, "J kg-1 K-1", "specific heat capacity of brine", "float", 0.0,
                                         None, True)
    latent_heat: float = setting(C.LATENT_HEAT, "J kg-1", "latent heat of fusion of ice", "float", 0.0, None, True)


@dataclass(frozen=True)
class SnowSection(_Section):
    """``[snow]``: the snow layer on the ice."""

    section: ClassVar[str] = "snow"
    conductivity_model: str = setting(
        "constant", "", "snow conductivity: constant ([snow] conductivity) or sturm1997 (from [snow] density)",
        "choice", choices=SNOW_CONDUCTIVITY_MODELS)
    conductivity: float = setting(
        C.SNOW_CONDUCTIVITY, "W m-1 K-1", "thermal conductivity of snow (conductivity_model = constant; classic constant of "
        "Maykut & Untersteiner 1971)", "float", 0.0, None, True)
    density: float = setting(
        300.0, "kg m-3", "snow density (about 300 on Arctic sea ice, Warren et al. 1999): snowfall depth, Sturm "
        "conductivity, draft", "float", 50.0, 600.0)
    flooding: str = setting(
        "hydrostatic", "", "snow-ice formation: hydrostatic (sea water floods the snow base while the freeboard is "
        "negative) or none", "choice", choices=FLOODING_CHOICES)
    flooding_timescale: str = setting("1D", "", "time over which flooding restores zero freeboard", "duration")
    snow_ice_drainage_timescale: str = setting(
        "2D", "", "e-folding time of the brine exchange of snow-ice with the ocean through the flooding pathways "
        "(brine out, sea water in) while the snow-ice is permeable; a very long time (e.g. 100000D) switches it "
        "off (a model choice, see "
        "docs/validation_drainage.md)", "duration")


@dataclass(frozen=True)
class DrainageSection(_Section):
    """``[drainage]``: brine gravity drainage."""

    section: ClassVar[str] = "drainage"
    scheme: str = setting("griewank_notz2013", "", "brine gravity drainage scheme (none switches drainage off)",
                          "choice", choices=DRAINAGE_SCHEMES)
    flux_coefficient: float | None = setting(
        None, "scheme units", "drainage flux coefficient alpha (unset: the scheme's published or calibrated value)",
        "float", 0.0)
    critical_rayleigh: float | None = setting(
        None, "1", "critical mush Rayleigh number (unset: the scheme's value)", "float", 0.0)
    permeability: str = setting("scheme", "", "permeability law (scheme: the law the scheme was calibrated with)",
                                "choice", choices=PERMEABILITY_CHOICES)
    percolation_threshold: float = setting(
        0.03, "1", "liquid fraction below which ice is impermeable (published 0.02-0.05; default 0.03 after Maus et "
        "al. 2021 for young ice)", "float", 0.0, 0.2)
    onset_smoothing: float = setting(1.0, "1", "width of the C1 smoothing of (Ra - Ra_c)+ in Rayleigh units",
                                     "float", 0.0, None, True)
    flushing_fraction: float = setting(
        0.3, "1", "fraction of surface melt water that flushes down through permeable ice (0 switches flushing "
        "off; a setting of this project)", "float", 0.0, 1.0)


@dataclass(frozen=True)
class OutputSection(_Section):
    """``[output]``: what is written and how often."""

    section: ClassVar[str] = "output"
    interval: str = setting("6h", "", "time between output records (e.g. 30min, 1h, 6h, 1D)", "duration",
                            multiple_of=60.0)
    slush_liquid_fraction: float = setting(
        0.5, "1", "ice_thickness counts ice with a larger liquid fraction (the porous bottom, slush) by its solid "
        "fraction, (1 - phi)/(1 - this), so the base sits where the ice becomes more brine than ice (a model "
        "choice)", "float", 0.0, 1.0, True)
    load_bearing_liquid_fraction: float = setting(
        0.2, "1", "load_bearing_thickness counts only ice whose liquid fraction is at most this (flexural strength "
        "falls to about a sixth of cold ice at 0.2: Timco & O'Brien 1994)", "float", 0.0, 1.0, True)
    core_bottom_exclusion: float = setting(
        0.05, "m", "ice_bulk_salinity leaves out the bottom this many metres of the ice (the skeletal, porous bottom "
        "that drains or breaks off when a core is pulled; common practice, no source), never more than half the "
        "thickness", "float", 0.0, 1.0)


@dataclass(frozen=True)
class SolverSection(_Section):
    """``[solver]``: time integration."""

    section: ClassVar[str] = "solver"
    rtol: float = setting(1e-3, "1", "relative tolerance of the time integration", "float", 0.0, 0.1, True)
    max_step: str = setting("6h", "", "longest time step allowed", "duration")
    initial_step: str = setting("10min", "", "first time step tried (at most max_step)", "duration")
    output_times: str = setting(
        "interpolated", "", "how records are made: 'interpolated' lets steps run across output times and "
        "interpolates each record within its step (cubic Hermite on the step's end states and rates, so budgets "
        "still close); 'step_ends' ends a step at every output time (more steps when the output interval is "
        "shorter than the steps; a restart from any output time then repeats the one-go run bit for bit)",
        "choice", choices=("interpolated", "step_ends"))


@dataclass(frozen=True)
class ForcingSection(_Section):
    """``[forcing]``: how the forcing file is read.

    ``columns`` maps our variable names to the file's column (or NetCDF
    variable) names as one text of ``ours=theirs`` pairs (the flat
    :data:`PARAMETERS` table holds one scalar per key); whether the names exist
    is checked when a file is read.  The command line's ``--column`` adds to it.
    """

    section: ClassVar[str] = "forcing"
    columns: str = setting(
        "", "", "forcing column (or NetCDF variable) names that differ from ours, as ours=theirs pairs separated by "
        "commas, e.g. 'air_temperature=Tair_C, wind_speed=WS' (--column on the command line adds to and overrides "
        "these)", "columns")
    max_gap: str = setting(
        "6h", "", "longest gap in a forcing column (empty cells or missing rows) filled by linear interpolation; "
        "longer gaps are an error", "duration")

    def column_map(self, extra: dict[str, str] | None = None) -> dict[str, str]:
        """``columns`` as a dict {our name: the file's name}; the pairs of ``extra`` (e.g. the
        command line's ``--column``) add to it and override it."""
        return {**parse_column_map(self.columns, "[forcing] columns"), **(extra or {})}


@dataclass(frozen=True)
class StationSection(_Section):
    """``[station]``: the station the run is for, written as global attributes of the NetCDF
    outputs (run, ensemble, forecast, buoy budget; :meth:`attributes`); every key is optional."""

    section: ClassVar[str] = "station"
    name: str | None = setting(None, "", "station name, written to the NetCDF outputs (attribute station_name)",
                               "text")
    latitude: float | None = setting(None, "degrees_north", "station latitude, written to the NetCDF outputs "
                                     "(attributes geospatial_lat_min and _max)", "float", -90.0, 90.0)
    longitude: float | None = setting(None, "degrees_east", "station longitude, written to the NetCDF outputs "
                                      "(attributes geospatial_lon_min and _max)", "float", -180.0, 360.0)

    def attributes(self) -> dict[str, str | float]:
        """Global NetCDF attributes of the station (only those set): ``station_name``, and the
        ACDD ``geospatial_lat_min``/``_max``/``_units`` and ``geospatial_lon_*`` (a point: min
        = max)."""
        out: dict[str, str | float] = {}
        if self.name is not None:
            out["station_name"] = self.name
        if self.latitude is not None:
            out.update(geospatial_lat_min=self.latitude, geospatial_lat_max=self.latitude,
                       geospatial_lat_units="degrees_north")
        if self.longitude is not None:
            out.update(geospatial_lon_min=self.longitude, geospatial_lon_max=self.longitude,
                       geospatial_lon_units="degrees_east")
        return out


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
    station: StationSection = field(default_factory=StationSection)

    def __post_init__(self) -> None:
        for name, cls in SECTIONS.items():
            if not isinstance(getattr(self, name), cls):
                raise InputError(f"Config: section {name!r} must be a {cls.__name__}, got {getattr(self, name)!r}")
        _check_cross(self.to_dict(), {})

    def to_dict(self) -> dict[str, dict[str, Any]]:
        """Nested ``{section: {key: value}}`` of every setting (unset times are ``None``)."""
        return {name: dataclasses.asdict(getattr(self, name)) for name in SECTIONS}

    def to_toml(self) -> str:
        """The full resolved configuration as TOML text (unset keys omitted), units as comments.

        Loading the text again with :func:`config_from_toml_text` gives an equal
        :class:`Config`.
        """
        return _toml_of(self)

    def replace(self, section: str, **changes: Any) -> Config:
        """A copy with some settings of one section changed (validated).

        Parameters
        ----------
        section : str
            Section name, e.g. ``"grid"``. [1]
        **changes
            New values by key, e.g. ``layers=80``. [units of each key]
        """
        return self.updated({section: changes}, "Config.replace")

    def updated(self, overrides: dict[str, dict[str, Any]], source: str = "override") -> Config:
        """A copy with ``{section: {key: value}}`` applied (validated; errors name ``source``)."""
        return _build(self.to_dict(), [(source, overrides)])


#: Section name -> section dataclass, in TOML order (derived from :class:`Config`).
SECTIONS: dict[str, type[_Section]] = {f.name: f.default_factory for f in dataclasses.fields(Config)}  # type: ignore[misc]


def _parameter_table() -> dict[str, Param]:
    table: dict[str, Param] = {}
    for name, cls in SECTIONS.items():
        if cls.section != name:
            raise RuntimeError(f"{cls.__name__}.section is {cls.section!r}, but Config names it {name!r}")
        for f in dataclasses.fields(cls):
            table[f"{name}.{f.name}"] = f.metadata["param"]
    return table


#: Every setting, ``"section.key"`` -> :class:`Param`, in TOML order (derived from the
#: section dataclasses' fields).
PARAMETERS: dict[str, Param] = _parameter_table()


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
    return _build(default_config().to_dict(), [(source, parse_toml(text, source))])


def parse_toml(text: str, source: str) -> dict[str, Any]:
    """TOML text as a dict; invalid TOML is one :class:`InputError` line naming ``source``."""
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
        text, _ = read_user_text(path, "configuration file")
        layers.append((name, parse_toml(text, name)))
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


def parse_assignments(texts: list[str] | None) -> dict[str, dict[str, Any]]:
    """Several ``"section.key=value"`` texts merged into one override dict (later ones win)."""
    merged: dict[str, dict[str, Any]] = {}
    for text in texts or []:
        for section, table in parse_assignment(text).items():
            merged.setdefault(section, {}).update(table)
    return merged


@functools.lru_cache(maxsize=32)
def _toml_of(cfg: Config) -> str:
    """:meth:`Config.to_toml` (cached: a Config is frozen, and every output file writes its text)."""
    return "# icecolumn configuration, fully resolved\n" + _with_unit_comments(toml_text(cfg.to_dict()))


def parameters_markdown() -> str:
    """Markdown table of every setting: key, default, unit, allowed values, meaning."""
    rows = ["| setting | default | unit | allowed | meaning |", "|---|---|---|---|---|"]
    for name, p in PARAMETERS.items():
        section, key = name.split(".", 1)
        default = "unset" if p.default is None else f"`{_toml_value(p.default)}`"
        rows.append(f"| `[{section}] {key}` | {default} | {p.unit or '–'} | {p.rule()} | {p.description} |")
    return "\n".join(rows) + "\n"


def toml_text(sections: dict[str, dict[str, Any]]) -> str:
    """TOML text of ``{section: {key: value}}`` (tomli-w); ``None`` values are left out."""
    return tomli_w.dumps({s: {k: v for k, v in t.items() if v is not None} for s, t in sections.items()})


def _toml_value(value: Any) -> str:
    """One value as TOML text (e.g. ``"6h"`` with its quotes, ``0.02``)."""
    return toml_text({"v": {"k": value}}).split(" = ", 1)[1].rstrip("\n")


def _with_unit_comments(text: str) -> str:
    """Add each setting's unit as a trailing ``# unit`` comment to the ``key = value`` lines.

    tomli-w writes no comments; its output has one ``key = value`` line per setting (the
    values here are scalars), so the comment is appended to the line of each known key.
    """
    out, section = [], ""
    for line in text.splitlines():
        if line.startswith("["):
            section = line.strip()[1:-1]
        else:
            key, sep, _ = line.partition(" = ")
            param = PARAMETERS.get(f"{section}.{key}") if sep else None
            unit = _unit_suffix(param.unit).strip() if param is not None else ""
            if unit:
                line = f"{line}  # {unit}"
        out.append(line)
    return "\n".join(out) + "\n"
