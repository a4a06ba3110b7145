"""Write the invented demo buoy record ``forcing_samples/station_buoy.csv``.

The data are INVENTED: an ice mass-balance buoy (thermistor string) at the fictional
Skarvik Fjord station, made from icecolumn's own model run of the invented sample year
(``forcing_samples/station_year.csv`` with ``station_year.toml``), not from any real
buoy.  For a seasonal cycle of the ocean heat flux the run gets an invented
``ocean_heat_flux`` forcing column (the heat from the deep ocean into the 30 m mixed
layer): 2 W m-2 until 1 June 2027, rising linearly to 25 W m-2 on 26 July and back to
2 W m-2 by 30 August (shaped after the cycle reported for SHEBA by Perovich & Elder 2002,
GRL 29(9): a few W m-2 from October through June, rising in June and July to about
33 W m-2 at the end of July; values from the abstract; our numbers are invented).
The string is frozen into the ice on 2026-11-15T00:00Z; depth 0 is the ice surface then,
positive down; sensors every 2 cm from -0.80 m (in the air) to +1.50 m (in the water);
one profile every 6 hours until 2027-08-02T00:00Z (the ice melts out about a week later).
What a real string would add, invented here too:

* a calibration offset per sensor (normal, sd 0.03 K) and noise per reading (normal,
  sd 0.02 K), readings rounded to 0.01 K;
* acoustic sounders: measured ``snow_surface`` (upper sounder) and ``ice_bottom`` (lower
  sounder) with noise (normal, sd 3 mm), rounded to 1 mm; the snow-ice interface is not
  measured (``icecolumn buoy`` detects it from the temperatures);
* a dead sensor: T76 (at +0.70 m) gives no readings from 2027-01-20T00:00Z on;
* a transmission gap: no profiles from 2027-03-08T06:00Z to 2027-03-10T18:00Z.

Deterministic (``numpy.random.default_rng(SEED)``).  Run from the project root::

    python scripts/make_buoy.py

It prints the model's own ocean heat flux into the ice base per 10-day window (the value
an analysis of the record should find) next to the ice thickness.  This is a maintainer script; nothing
imports it
but ``tests/test_buoy.py``, which reruns :func:`demo_run` to compare the analysis with the model.
"""

from __future__ import annotations

import sys
from pathlib import Path

import numpy as np

import icecolumn as ic
from icecolumn.buoy import synthetic_string, window_bounds

SEED = 20261115
ROOT = Path(__file__).resolve().parent.parent
OUT = ROOT / "forcing_samples" / "station_buoy.csv"
DEPLOYED = np.datetime64("2026-11-15T00:00", "ns")
END = np.datetime64("2027-08-02T00:00", "ns")
FIRST, SPACING, COUNT = -0.80, 0.02, 116
DEAD_SENSOR, DEAD_FROM = 76, np.datetime64("2027-01-20T00:00", "ns")
GAP = (np.datetime64("2027-03-08T06:00", "ns"), np.datetime64("2027-03-10T18:00", "ns"))
OFFSET_SD, NOISE_SD, SOUNDER_SD = 0.03, 0.02, 0.003  # K, K, m (invented)
# (days after 2027-06-01, deep ocean heat flux [W m-2]) -- invented seasonal cycle
DEEP_FLUX = [(-400.0, 2.0), (0.0, 2.0), (55.0, 25.0), (90.0, 2.0), (400.0, 2.0)]


def deep_flux(times: np.ndarray) -> np.ndarray:
    """The invented deep ocean heat flux [W m-2] at ``times``."""
    days = ((times - np.datetime64("2027-06-01T00:00", "ns")) / np.timedelta64(1, "D")).astype(float)
    d, v = np.array(DEEP_FLUX).T
    return np.interp(days, d, v)


def demo_run():
    """The model run the demo record is sampled from, and its configuration."""
    forcing = ic.read_forcing(ROOT / "forcing_samples" / "station_year.csv")
    cfg = ic.load_config(ROOT / "forcing_samples" / "station_year.toml")
    forcing = forcing.assign(ocean_heat_flux=("time", deep_flux(forcing["time"].values), {"units": "W m-2"}))
    return ic.run(forcing, cfg), cfg


def model_window_flux(run, bounds):
    """The model's mean ocean heat flux into the ice base [W m-2] between successive bounds."""
    tt = run["time"].values
    cum = run["energy_input_ocean"].values
    i = np.searchsorted(tt, bounds)
    return np.diff(cum[i]) / (np.diff(tt[i]) / np.timedelta64(1, "s"))


def main() -> int:
    run, cfg = demo_run()
    depth = np.round(FIRST + SPACING * np.arange(COUNT), 6)
    string = synthetic_string(run, depth, cfg, deployed=DEPLOYED)
    string = string.sel(time=slice(DEPLOYED, END))
    t = string["time"].values
    rng = np.random.default_rng(SEED)
    offsets = OFFSET_SD * rng.standard_normal(COUNT)
    temp = string["temperature"].values + offsets[None, :] + NOISE_SD * rng.standard_normal((t.size, COUNT))
    snow = string["snow_surface"].values + SOUNDER_SD * rng.standard_normal(t.size)
    bottom = string["ice_bottom"].values + SOUNDER_SD * rng.standard_normal(t.size)
    dead = t >= DEAD_FROM
    keep = ~((t >= GAP[0]) & (t <= GAP[1]))
    header = [
        "# INVENTED DATA for the icecolumn demo: not a real buoy, not observations",
        "# Ice mass-balance buoy (thermistor string) at Skarvik Fjord station (fictional, invented position "
        "75.3 N 20.5 W), made from icecolumn's model run of the invented sample year "
        "forcing_samples/station_year.csv + station_year.toml with an invented seasonal ocean heat flux "
        "(2 W m-2 to 1 Jun 2027, 25 W m-2 on 26 Jul, 2 W m-2 from 30 Aug; into the mixed layer)",
        f"# Generated by scripts/make_buoy.py with numpy.random.default_rng(seed={SEED}): sensor offsets sd "
        f"{OFFSET_SD} K, noise sd {NOISE_SD} K, sounder noise sd {SOUNDER_SD * 1000:g} mm; sensor T{DEAD_SENSOR} "
        f"dead from {str(DEAD_FROM)[:16]}Z; no profiles {str(GAP[0])[:16]}Z to {str(GAP[1])[:16]}Z",
        "# Columns: time (UTC); snow_surface, ice_bottom [m, measured by the invented sounders]; T1..T116 [degC]; "
        "depths positive down from the ice surface at deployment",
        f"# first_sensor_depth: {FIRST:.2f} m",
        f"# sensor_spacing: {SPACING:.2f} m",
        ",".join(["time", "snow_surface", "ice_bottom", *(f"T{k}" for k in range(1, COUNT + 1))]),
    ]
    body = []
    for i in np.flatnonzero(keep):
        cells = [np.datetime_as_string(t[i].astype("datetime64[m]"), unit="m") + "Z",
                 f"{snow[i]:.3f}", f"{bottom[i]:.3f}"]
        for k in range(COUNT):
            cells.append("" if (dead[i] and k == DEAD_SENSOR - 1) else f"{temp[i, k]:.2f}")
        body.append(",".join(cells))
    OUT.write_text("\n".join(header + body) + "\n", encoding="utf-8")
    # the model's truth per 10-day window (what the analysis should recover)
    print(f"wrote {OUT} ({len(body)} profiles, {COUNT} sensors)")
    print("window start  end          model F_w [W m-2]  ice thickness at end [m]")
    b = window_bounds(t, 10 * 86400.0)
    b = b[b <= t[-1]]
    fw = model_window_flux(run, b)
    h = run["ice_thickness"].values[np.searchsorted(run["time"].values, b[1:])]
    for a, c, f, hh in zip(b[:-1], b[1:], fw, h):
        print(f"{str(a)[:10]}    {str(c)[:10]}   {f:8.2f}           {hh:.3f}")
    return 0


if __name__ == "__main__":
    sys.exit(main())
