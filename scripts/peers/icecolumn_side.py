"""icecolumn itself on P1 and on the nearest equivalent of P2, through its public API only.

Calls: ``ic.load_config(None, overrides)`` (the default configuration with the overrides below),
``forcing_from_arrays`` (``ic.forcing_from_arrays`` when the package exports it, else
``icecolumn.forcing.forcing_from_arrays``) and ``ic.run(forcing, cfg)``.  The initial P1 profile
(the exact erf profile at 1 day) goes in through ``ic.run(..., profile=InitialProfile(...))``
(``ic.InitialProfile`` when exported, else ``icecolumn.model.InitialProfile``); if neither exists
the run starts from icecolumn's own linear profile and the result says ``initial_profile =
"linear"``.

P1 settings: ``[ocean] salinity = 0, heat_flux = 0``; ``[initial] ice_thickness = h(1 day)
= 0.1059 m, bulk_salinity = 0``; ``[surface] scheme = "prescribed"`` with a constant
``surface_temperature`` column of -10 degC (air temperature the same); ``[properties]
conductivity_model = "constant"`` (``ice_conductivity`` left at its default, 2.03 W m-1 K-1, as
are all material constants, which is what ``problems.materials()`` reads); ``[drainage] scheme =
"none"``; ``[output] interval = "1D"``; ``[grid] layers`` and ``[solver] rtol`` from the ladder.
The thickness is the output ``ice_thickness`` at the daily records 31 .. 61 days after the
similarity origin.

P2 is **not** the same problem in icecolumn: its liquidus is a rational fit to TEOS-10 and Assur
(1958), not ``T = -0.054 S_br`` (freezing point of 34 g/kg sea water -1.84 degC against -1.836
degC, and the brine salinity at -20 degC differs much more), and its conductivity models are
``constant`` (no dependence on the liquid fraction) or ``parallel_yen1991`` (parallel mixing with
the temperature-dependent Yen et al. 1991 ice and brine conductivities: 2.22-2.49 against
2.03 W m-1 K-1 for the ice).  The nearest equivalent run uses ``[ocean] salinity = 34,
heat_flux = 0``; ``[initial] ice_thickness = 0.15, bulk_salinity = 34`` (icecolumn's linear
initial profile from the surface temperature to its ocean freezing point); ``[surface] scheme =
"prescribed"`` at -20 degC; ``[drainage] scheme = "none"``; ``[properties] conductivity_model``
``parallel_yen1991`` (default) or ``constant``.  Its thickness is the same solid-equivalent
thickness ``sum((1 - phi_k) h / N)`` over its layers (the ocean below the tracked base has
phi = 1), at days 30 .. 60 after the start.
"""
from __future__ import annotations

import numpy as np

import icecolumn as ic

try:
    from problems import DAY, Mushy, Neumann
except ImportError:  # pragma: no cover - imported as a package
    from .problems import DAY, Mushy, Neumann

START = np.datetime64("2026-01-01T00:00")  # an arbitrary start; the forcing is constant


def _forcing_from_arrays():
    f = getattr(ic, "forcing_from_arrays", None)
    if f is None:
        from icecolumn.forcing import forcing_from_arrays as f
    return f


def _initial_profile_class():
    cls = getattr(ic, "InitialProfile", None)
    if cls is None:
        try:
            from icecolumn.model import InitialProfile as cls
        except ImportError:  # pragma: no cover - depends on the icecolumn version
            cls = None
    return cls


def constant_forcing(days: float, surface_temperature: float):
    """Hourly forcing with constant air and surface temperature [degC]."""
    t = START + np.arange(int(round(days * 24)) + 1) * np.timedelta64(1, "h")
    v = np.full(t.size, float(surface_temperature))
    return _forcing_from_arrays()(t, v, surface_temperature=v)


def p1_config(layers: int, rtol: float, prob: Neumann | None = None):
    prob = prob or Neumann()
    h0 = float(prob.thickness(prob.t_start))
    return ic.load_config(None, {
        "ocean": {"salinity": 0.0, "heat_flux": 0.0},
        "initial": {"bulk_salinity": 0.0, "ice_thickness": h0},
        "surface": {"scheme": "prescribed"},
        "properties": {"conductivity_model": "constant"},
        "drainage": {"scheme": "none"},
        "output": {"interval": "1D"},
        "grid": {"layers": int(layers)},
        "solver": {"rtol": float(rtol)},
    })


class P1Case:
    """Prepared P1 inputs (forcing, initial profile) so that a timed call is ``ic.run`` only."""

    def __init__(self, prob: Neumann | None = None):
        self.prob = prob or Neumann()
        p = self.prob
        self.forcing = constant_forcing((p.t_end - p.t_start) / DAY, p.surface_temperature)
        cls = _initial_profile_class()
        h0 = float(p.thickness(p.t_start))
        if cls is not None:
            z = np.linspace(0.0, h0, 4001)
            self.profile = cls(depth=z, temperature=p.temperature(z, p.t_start))
            self.initial_profile = "exact erf"
        else:  # pragma: no cover - depends on the icecolumn version
            self.profile = None
            self.initial_profile = "linear"
        start_day = int(round(p.t_start / DAY))
        self.records = np.asarray(p.eval_days) - start_day

    def run(self, layers: int, rtol: float) -> dict:
        cfg = p1_config(layers, rtol, self.prob)
        kw = {"profile": self.profile} if self.profile is not None else {}
        ds = ic.run(self.forcing, cfg, **kw)
        h = ds["ice_thickness"].values[self.records]
        return {"t": self.prob.eval_times, "h": h, "initial_profile": self.initial_profile}


def solve_p1(layers: int, rtol: float = 1e-3, case: P1Case | None = None) -> dict:
    return (case or P1Case()).run(layers, rtol)


def p2_config(layers: int, rtol: float, conductivity_model: str = "parallel_yen1991", prob: Mushy | None = None):
    prob = prob or Mushy()
    return ic.load_config(None, {
        "ocean": {"salinity": prob.salinity, "heat_flux": 0.0},
        "initial": {"bulk_salinity": prob.salinity, "ice_thickness": prob.h0},
        "surface": {"scheme": "prescribed"},
        "properties": {"conductivity_model": conductivity_model},
        "drainage": {"scheme": "none"},
        "output": {"interval": "1D"},
        "grid": {"layers": int(layers)},
        "solver": {"rtol": float(rtol)},
    })


class P2Case:
    """Prepared inputs of icecolumn's nearest equivalent of P2 (a different problem, see module doc)."""

    def __init__(self, prob: Mushy | None = None, conductivity_model: str = "parallel_yen1991"):
        self.prob = prob or Mushy()
        self.conductivity_model = conductivity_model
        self.forcing = constant_forcing(self.prob.days, self.prob.surface_temperature)
        self.records = np.asarray(self.prob.eval_days)

    def run(self, layers: int, rtol: float) -> dict:
        cfg = p2_config(layers, rtol, self.conductivity_model, self.prob)
        ds = ic.run(self.forcing, cfg)
        h = ds["ice_thickness"].values[self.records]
        phi = ds["liquid_fraction"].transpose("time", "layer").values[self.records]
        hs = (1.0 - phi).sum(axis=1) * h / layers
        return {"t": self.prob.eval_times, "h": hs, "tracked_thickness": h}
