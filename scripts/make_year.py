"""Write the invented full-year sample forcing ``forcing_samples/station_year.csv``.

The data are INVENTED for demonstrations and tests: the same fictional coastal station
as ``station_winter.csv`` ("Skarvik Fjord station", invented position 75.3 N, 20.5 W),
one hourly year from 2026-09-15T00:00Z (open water before freeze-up) through the
winter, the melt season and the open-water summer to 2027-09-14T23:00Z.  Columns:

* ``air_temperature`` [degC]: smooth seasonal cycle through invented monthly anchors
  (about -29 degC in February and March, +5.5 degC in mid-July), AR(1) synoptic noise with a
  3-day correlation time, a diurnal cycle following the sun;
* ``shortwave_down`` [W m-2]: top-of-atmosphere insolation at the invented latitude
  (solar constant 1361 W m-2, declination after Cooper 1969, from memory) times an
  invented clear-sky transmission 0.75 and a cloud factor (1 - 0.55 c);
* ``cloud_fraction`` [1], ``wind_speed`` [m s-1], ``relative_humidity`` [%] (with
  respect to water): invented AR(1) series around invented seasonal means;
* ``snowfall`` [kg m-2 s-1 water equivalent]: invented snowfall events when the air is
  below 0 degC, about 200 mm water equivalent over the year.

The seasonal cycle, and the slow series, are periodic over the year, so the file can be
repeated end to end for multi-year runs (the noise is faded to its starting value over the
last 10 days).  Deterministic (``numpy.random.default_rng(SEED)``).  Run from the project
root::

    python scripts/make_year.py

It prints the freezing and thawing degree days and the snowfall total, and stops with an
error if the design targets are missed.  This is a maintainer script; nothing imports it.
"""

from __future__ import annotations

import sys
from pathlib import Path

import numpy as np

SEED = 20260915
STATION = "Skarvik Fjord station (fictional), invented position 75.3 N 20.5 W, landfast ice in a fjord"
LATITUDE = 75.3  # invented [degrees north]
LONGITUDE = -20.5  # invented [degrees east]
START = np.datetime64("2026-09-15T00:00")
DAYS = 365
OUT = Path(__file__).resolve().parent.parent / "forcing_samples" / "station_year.csv"

# (days after START, seasonal air temperature [degC]) -- invented anchor values, periodic
SEASON_ANCHORS = [
    (0, -3.0), (15, -6.0), (46, -12.0), (76, -19.0), (107, -24.0), (138, -28.0), (166, -29.0),
    (197, -26.0), (227, -17.0), (258, -4.0), (273, 1.5), (288, 4.5), (303, 5.5), (319, 3.5),
    (334, -1.0), (350, -5.0), (365, -3.0),
]
SNOW_WE_TOTAL = 0.20  # m water equivalent over the year (invented)


def periodic_smooth(days: np.ndarray, anchors, width_days: float) -> np.ndarray:
    """Broken line through ``anchors`` smoothed by a periodic Gaussian of ``width_days``."""
    d, v = np.array(anchors).T
    rough = np.interp(days, d, v)
    half = int(width_days * 24)
    kernel = np.exp(-0.5 * (np.arange(-3 * half, 3 * half + 1) / half) ** 2)
    kernel /= kernel.sum()
    padded = np.pad(rough, kernel.size // 2, mode="wrap")
    return np.convolve(padded, kernel, mode="valid")


def ar1(rng: np.random.Generator, n: int, hours: float) -> np.ndarray:
    """Unit-variance AR(1) series with correlation time ``hours``, faded back to its first
    value over the last 10 days so the year repeats smoothly."""
    phi = np.exp(-1.0 / hours)
    x = np.empty(n)
    x[0] = rng.standard_normal()
    shocks = rng.standard_normal(n) * np.sqrt(1.0 - phi ** 2)
    for i in range(1, n):
        x[i] = phi * x[i - 1] + shocks[i]
    fade = np.clip((np.arange(n) - (n - 240)) / 240.0, 0.0, 1.0)
    return x * (1.0 - fade) + x[0] * fade


def solar(times: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Sine of the solar elevation and top-of-atmosphere insolation [W m-2]."""
    doy = (times.astype("datetime64[D]") - times.astype("datetime64[Y]")).astype(int) + 1
    hours = (times - times.astype("datetime64[D]")).astype("timedelta64[m]").astype(float) / 60.0
    decl = np.radians(23.44) * np.sin(2 * np.pi * (284 + doy) / 365.0)
    hour_angle = np.radians(15.0 * (hours + LONGITUDE / 15.0 - 12.0))
    lat = np.radians(LATITUDE)
    sin_el = np.sin(lat) * np.sin(decl) + np.cos(lat) * np.cos(decl) * np.cos(hour_angle)
    return sin_el, 1361.0 * np.clip(sin_el, 0.0, None)


def make_year(seed: int = SEED) -> dict[str, np.ndarray]:
    """Hourly columns of the invented year."""
    times = START + np.arange(DAYS * 24) * np.timedelta64(1, "h")
    days = np.arange(times.size) / 24.0
    rng = np.random.default_rng(seed)
    sin_el, toa = solar(times)
    winter = np.exp(-0.5 * ((days - 150.0) / 60.0) ** 2)
    air = periodic_smooth(days, SEASON_ANCHORS, 10.0) + ar1(rng, times.size, 72.0) * (2.0 + 3.0 * winter)
    air += np.clip(sin_el, 0.0, None) * 2.5 * np.cos(2 * np.pi * (days % 1.0 - 0.58))
    cloud_mean = periodic_smooth(days, [(0, 0.8), (60, 0.6), (150, 0.5), (240, 0.6), (300, 0.85), (365, 0.8)], 10.0)
    cloud = np.clip(cloud_mean + 0.3 * ar1(rng, times.size, 36.0), 0.0, 1.0)
    sw = toa * 0.75 * (1.0 - 0.55 * cloud)
    wind = np.abs(5.0 + 2.5 * ar1(rng, times.size, 24.0))
    rh = np.clip(86.0 + 6.0 * ar1(rng, times.size, 48.0), 60.0, 100.0)
    # snowfall: about 30 events, 1-2 days long, when the air is below freezing
    snow = np.zeros(times.size)
    for _ in range(30):
        centre = rng.uniform(20.0, 270.0)
        width = rng.uniform(0.5, 1.0)
        snow += np.exp(-0.5 * ((days - centre) / width) ** 2) * rng.uniform(0.5, 1.5)
    snow *= air < 0.0
    snow[snow < 1e-3 * snow.max()] = 0.0
    snow *= SNOW_WE_TOTAL * 1000.0 / (snow.sum() * 3600.0)  # kg m-2 s-1, SNOW_WE_TOTAL in a year
    return {"time": times, "air_temperature": np.round(air, 1), "shortwave_down": np.round(sw, 1),
            "cloud_fraction": np.round(cloud, 2), "wind_speed": np.round(wind, 1),
            "relative_humidity": np.round(rh, 0), "snowfall": snow}


def degree_days(times: np.ndarray, temp: np.ndarray) -> tuple[float, float]:
    """Freezing and thawing degree days (0 degC base, daily means) [K day]."""
    _, index = np.unique(times.astype("datetime64[D]"), return_inverse=True)
    daily = np.bincount(index, weights=temp) / np.bincount(index)
    return float(np.clip(-daily, 0.0, None).sum()), float(np.clip(daily, 0.0, None).sum())


def write_csv(path: Path, cols: dict[str, np.ndarray]) -> None:
    header = [
        "# INVENTED DATA for the icecolumn demo: not a real station and not observations",
        f"# Station: {STATION}; one invented year from open water through freeze-up, winter, melt and summer",
        f"# Generated by scripts/make_year.py with numpy.random.default_rng(seed={SEED})",
        "# Columns: time (ISO 8601, UTC); air_temperature [degC]; shortwave_down [W m-2]; cloud_fraction [1]; "
        "wind_speed [m s-1]; relative_humidity [%, with respect to water]; snowfall [kg m-2 s-1 water equivalent]",
        "time,air_temperature,shortwave_down,cloud_fraction,wind_speed,relative_humidity,snowfall",
    ]
    stamps = np.datetime_as_string(cols["time"], unit="m")
    body = [f"{s}Z,{a:.1f},{w:.1f},{c:.2f},{u:.1f},{r:.0f},{f:.3e}"
            for s, a, w, c, u, r, f in zip(stamps, cols["air_temperature"], cols["shortwave_down"],
                                           cols["cloud_fraction"], cols["wind_speed"], cols["relative_humidity"],
                                           cols["snowfall"])]
    path.parent.mkdir(parents=True, exist_ok=True)
    path.write_text("\n".join(header + body) + "\n", encoding="utf-8")


def main() -> int:
    cols = make_year()
    fdd, tdd = degree_days(cols["time"], cols["air_temperature"])
    snow_we = float(cols["snowfall"].sum() * 3600.0)
    print(f"rows {cols['time'].size}, {cols['time'][0]} .. {cols['time'][-1]} UTC")
    print(f"freezing degree days {fdd:.0f} K day, thawing degree days {tdd:.0f} K day, snowfall {snow_we:.1f} kg m-2")
    problems = []
    if not 4000.0 <= fdd <= 5500.0:
        problems.append(f"FDD {fdd:.0f} outside 4000..5500 K day")
    if not 80.0 <= tdd <= 500.0:
        problems.append(f"TDD {tdd:.0f} outside 80..500 K day")
    if problems:
        print("design targets missed: " + "; ".join(problems), file=sys.stderr)
        return 1
    write_csv(OUT, cols)
    print(f"wrote {OUT} ({OUT.stat().st_size / 1024:.0f} kB)")
    return 0


if __name__ == "__main__":
    sys.exit(main())
