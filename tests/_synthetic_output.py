"""Build small synthetic datasets that follow the icecolumn output contract.

Used by the plotting tests; no solver is involved.  The fields are smooth,
physically plausible shapes (sqrt(t) growth, linear temperature profiles,
C-shaped salinity) so that the rendered figures can also be inspected by eye.
"""

from __future__ import annotations

import numpy as np
import xarray as xr

LIQUIDUS_SLOPE = 0.054  # degC per (g kg-1), linear liquidus used only here
FREEZING_POINT = -1.8   # degC, ice base temperature


def thickness_curve(n_time: int) -> np.ndarray:
    """Ice thickness [m] growing as sqrt(t) from 0.1 m over n_time days."""
    days = np.arange(n_time, dtype=float)
    return 0.1 + 0.12 * np.sqrt(days)


def make_output(
    n_time: int = 30,
    n_layer: int = 10,
    start: str = "2024-01-01",
    members: int | None = None,
    seed: int = 0,
) -> xr.Dataset:
    """Return a synthetic single-run (or ensemble, if ``members``) output Dataset."""
    rng = np.random.default_rng(seed)
    times = np.datetime64(start, "ns") + np.arange(n_time) * np.timedelta64(1, "D")
    n_mem = 1 if members is None else members

    def one_member(scale: float) -> dict[str, np.ndarray]:
        h = thickness_curve(n_time) * scale
        snow = 0.02 + 0.002 * np.arange(n_time) * scale
        days = np.arange(n_time, dtype=float)
        t_air = -20.0 - 5.0 * np.sin(2 * np.pi * days / 10.0)
        t_surf = t_air + 3.0
        frac_top = np.arange(n_layer) / n_layer
        frac_bot = (np.arange(n_layer) + 1) / n_layer
        bounds = np.stack(
            [h[:, None] * frac_top[None, :], h[:, None] * frac_bot[None, :]], axis=-1
        )
        centre = bounds.mean(axis=-1)
        eta = (frac_top + frac_bot) / 2  # 0 at top, 1 at base
        temp = t_surf[:, None] + (FREEZING_POINT - t_surf[:, None]) * eta[None, :]
        bulk = 5.0 + 6.0 * (eta[None, :] - 0.5) ** 2 + 0.0 * h[:, None]
        bulk = bulk + 2.0 * eta[None, :] ** 8
        brine = -temp / LIQUIDUS_SLOPE
        phi = np.clip(bulk / brine, 0.0, 1.0)
        rate = np.gradient(h, 86400.0)
        salt_content = (bulk * 0.917 * (bounds[..., 1] - bounds[..., 0])).sum(axis=1)
        entrained = 34.0 * 1.0e-3 * 917.0 * (h - h[0]) * 0.3
        released = entrained * 0.6
        flux = np.full(n_time, np.nan)
        flux[1:] = np.diff(released) / 86400.0
        enthalpy = -3.0e8 * h
        energy = -2.0e6 * days
        return dict(
            ice_thickness=h, snow_thickness=snow, surface_temperature=t_surf,
            air_temperature=t_air, growth_rate=rate, salt_content=salt_content,
            salt_entrained=entrained, salt_released=released, salt_flux=flux,
            enthalpy_content=enthalpy, energy_input=energy, temperature=temp,
            bulk_salinity=bulk, liquid_fraction=phi, brine_salinity=brine,
            depth=centre, depth_bounds=bounds,
        )

    scales = [1.0] if members is None else 1.0 + 0.15 * rng.standard_normal(n_mem)
    runs = [one_member(float(s)) for s in scales]
    meta = {
        "ice_thickness": ("sea ice thickness", "m"),
        "snow_thickness": ("snow thickness on sea ice", "m"),
        "surface_temperature": ("upper surface temperature", "degC"),
        "air_temperature": ("air temperature, interval mean", "degC"),
        "growth_rate": ("ice growth rate, interval mean", "m s-1"),
        "salt_content": ("salt content of the ice column", "kg m-2"),
        "salt_entrained": ("cumulative salt entrained at the ice base", "kg m-2"),
        "salt_released": ("cumulative salt released to the ocean", "kg m-2"),
        "salt_flux": ("salt flux into the ocean, interval mean", "kg m-2 s-1"),
        "enthalpy_content": ("enthalpy content of the ice column", "J m-2"),
        "energy_input": ("cumulative energy input", "J m-2"),
        "temperature": ("ice temperature", "degC"),
        "bulk_salinity": ("sea ice bulk salinity", "g kg-1"),
        "liquid_fraction": ("brine volume fraction", "1"),
        "brine_salinity": ("brine salinity", "g kg-1"),
        "depth": ("depth of layer centre below ice surface", "m"),
        "depth_bounds": ("depth of layer top and bottom below ice surface", "m"),
    }
    data_vars = {}
    for name, (long_name, units) in meta.items():
        arr = np.stack([r[name] for r in runs])
        if members is None:
            arr = arr[0]
        ndim = arr.ndim - (0 if members is None else 1)
        dims = ("time", "layer", "nv")[:ndim]
        if members is not None:
            dims = ("member",) + dims
        data_vars[name] = (dims, arr, {"long_name": long_name, "units": units})
    coords = {
        "time": ("time", times, {"long_name": "time", "standard_name": "time"}),
        "layer": ("layer", np.arange(1, n_layer + 1),
                  {"long_name": "layer index, top to bottom", "units": "1"}),
    }
    if members is not None:
        coords["member"] = ("member", np.arange(n_mem),
                            {"long_name": "ensemble member", "units": "1"})
    ds = xr.Dataset(data_vars, coords=coords)
    ds.attrs = {
        "title": "icecolumn landfast sea ice column",
        "icecolumn_version": "0.0.0-test",
        "icecolumn_config": "[run]\nlayers = %d\n" % n_layer,
        "forcing_file": "forcing_samples/station_test.csv",
        "config_file": "configs/test_run.toml",
        "Conventions": "CF-1.8",
    }
    return ds
