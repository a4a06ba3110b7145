"""Write the invented sample forcing ``forcing_samples/station_winter.csv``.

The data are INVENTED for demonstrations and tests: a fictional coastal station
("Skarvik Fjord station", invented position 75.3 N, 20.5 W) with landfast ice,
hourly air temperature from 2026-10-01T00:00Z to 2027-05-31T23:00Z.  They are
built from

* a smooth seasonal cycle through hand-picked monthly anchor values
  (about -5 degC at the start of October, near -30 degC in February and March,
  back to about -7 degC at the end of May);
* synoptic weather: AR(1) noise with a 3-day correlation time, stronger in
  mid-winter;
* three cold spells (down to about -40 degC) and two short mild spells;
* a diurnal cycle whose amplitude follows the noon sun elevation (almost none
  in the polar night);
* a soft ceiling at about -1 degC so that the ice never thaws.

Deterministic (``numpy.random.default_rng(SEED)``).  Run from the project root::

    python scripts/make_samples.py

It prints the freezing degree days, minimum, maximum and mean, and stops with an
error if the design targets (4500..5500 K day, minimum -43..-37 degC) are missed.
This is a maintainer script; nothing imports it.
"""

from __future__ import annotations

import sys
from pathlib import Path

import numpy as np

SEED = 20261001
STATION = "Skarvik Fjord station (fictional), invented position 75.3 N 20.5 W, landfast ice in a fjord"
LATITUDE = 75.3  # invented [degrees north]
LONGITUDE = -20.5  # invented [degrees east]
START = np.datetime64("2026-10-01T00:00")
END = np.datetime64("2027-05-31T23:00")
OUT = Path(__file__).resolve().parent.parent / "forcing_samples" / "station_winter.csv"

# (days after START, seasonal air temperature [degC]) -- invented anchor values
SEASON_ANCHORS = [
    (0, -4.5), (15, -8.0), (31, -13.0), (61, -19.5), (92, -24.0), (123, -28.5),
    (151, -29.5), (182, -27.0), (212, -18.5), (232, -11.0), (243, -7.0),
]
# (days after START, amplitude [K], e-folding half-width [days]) -- invented events
COLD_SPELLS = [(112.0, -7.0, 1.8), (147.0, -8.0, 2.0), (163.0, -6.0, 1.5)]
MILD_SPELLS = [(71.0, 13.0, 1.0), (131.0, 12.0, 0.8)]
CORRELATION_DAYS = 3.0  # synoptic correlation time [days]
CEILING = -1.0  # soft upper limit of the hourly values [degC]


def seasonal_cycle(days: np.ndarray) -> np.ndarray:
    """Smooth seasonal air temperature [degC] at ``days`` after START [days]."""
    anchor_days, anchor_temps = np.array(SEASON_ANCHORS).T
    rough = np.interp(days, anchor_days, anchor_temps)
    # smooth the broken line with a 10-day Gaussian (hourly samples, edges padded)
    half = 10 * 24
    kernel = np.exp(-0.5 * (np.arange(-3 * half, 3 * half + 1) / half) ** 2)
    kernel /= kernel.sum()
    padded = np.pad(rough, kernel.size // 2, mode="edge")
    return np.convolve(padded, kernel, mode="valid")


def synoptic_noise(rng: np.random.Generator, n: int, days: np.ndarray) -> np.ndarray:
    """AR(1) anomalies [K], standard deviation 3.5 K in autumn/spring, 5 K in mid-winter."""
    phi = np.exp(-1.0 / (CORRELATION_DAYS * 24.0))
    shocks = rng.standard_normal(n) * np.sqrt(1.0 - phi**2)
    unit = np.empty(n)
    unit[0] = rng.standard_normal()
    for i in range(1, n):
        unit[i] = phi * unit[i - 1] + shocks[i]
    winter = np.exp(-0.5 * ((days - 135.0) / 55.0) ** 2)
    return unit * (3.5 + 1.5 * winter)


def spells(days: np.ndarray) -> np.ndarray:
    """Sum of Gaussian-shaped cold and mild anomalies [K]."""
    out = np.zeros_like(days)
    for centre, amplitude, width in COLD_SPELLS + MILD_SPELLS:
        out += amplitude * np.exp(-0.5 * ((days - centre) / width) ** 2)
    return out


def diurnal_cycle(times: np.ndarray, days: np.ndarray) -> np.ndarray:
    """Diurnal anomaly [K]: amplitude grows with the noon sun elevation, peak at 14 h local solar time."""
    day_of_year = (times.astype("datetime64[D]") - times.astype("datetime64[Y]")).astype(int) + 1
    declination = 23.44 * np.sin(2 * np.pi * (day_of_year - 81) / 365.0)
    noon_elevation = 90.0 - LATITUDE + declination
    amplitude = 0.2 + np.clip(noon_elevation, 0.0, None) * 0.08
    amplitude = np.minimum(amplitude, 3.0)
    hours = (times - times.astype("datetime64[D]")).astype("timedelta64[m]").astype(float) / 60.0
    solar_hour = hours + LONGITUDE / 15.0
    return amplitude * np.cos(2 * np.pi * (solar_hour - 14.0) / 24.0)


def soft_ceiling(temp: np.ndarray, ceiling: float = CEILING) -> np.ndarray:
    """Bend values above ``ceiling - 2`` smoothly so none exceeds ``ceiling`` [degC]."""
    knee = ceiling - 2.0
    return np.where(temp > knee, knee + 2.0 * np.tanh((temp - knee) / 2.0), temp)


def freezing_degree_days(times: np.ndarray, temp: np.ndarray, base: float = 0.0) -> float:
    """Sum over days of max(0, base - daily mean air temperature) [K day]."""
    day = times.astype("datetime64[D]")
    _, index = np.unique(day, return_inverse=True)
    daily = np.bincount(index, weights=temp) / np.bincount(index)
    return float(np.sum(np.clip(base - daily, 0.0, None)))


def make_winter(seed: int = SEED) -> tuple[np.ndarray, np.ndarray]:
    """Hourly times (naive UTC) and air temperature [degC], rounded to 0.1 K."""
    times = np.arange(START, END + np.timedelta64(1, "h"), np.timedelta64(1, "h"))
    days = (times - START).astype("timedelta64[m]").astype(float) / 1440.0
    rng = np.random.default_rng(seed)
    temp = seasonal_cycle(days) + synoptic_noise(rng, times.size, days) + spells(days)
    temp = soft_ceiling(temp + diurnal_cycle(times, days))
    return times, np.round(temp, 1)


def write_csv(path: Path, times: np.ndarray, temp: np.ndarray) -> None:
    header = [
        "# INVENTED DATA for the icecolumn demo: not a real station and not observations",
        f"# Station: {STATION}",
        f"# Generated by scripts/make_samples.py with numpy.random.default_rng(seed={SEED})",
        "# Columns: time = ISO 8601 hour in UTC; air_temperature = air temperature near the surface [degC]",
        "time,air_temperature",
    ]
    stamps = np.datetime_as_string(times, unit="m")
    body = [f"{s}Z,{t:.1f}" for s, t in zip(stamps, temp)]
    path.parent.mkdir(parents=True, exist_ok=True)
    path.write_text("\n".join(header + body) + "\n", encoding="utf-8")


def main() -> int:
    times, temp = make_winter()
    fdd = freezing_degree_days(times, temp)
    print(f"rows {times.size}, {times[0]} .. {times[-1]} UTC")
    print(f"freezing degree days (0 degC base) {fdd:.0f} K day")
    print(f"min {temp.min():.1f} degC, max {temp.max():.1f} degC, mean {temp.mean():.2f} degC")
    problems = []
    if not 4500.0 <= fdd <= 5500.0:
        problems.append(f"FDD {fdd:.0f} outside 4500..5500 K day")
    if not -43.0 <= temp.min() <= -37.0:
        problems.append(f"minimum {temp.min():.1f} outside -43..-37 degC")
    if temp.max() >= 0.0:
        problems.append(f"maximum {temp.max():.1f} is not below 0 degC")
    if problems:
        print("design targets missed: " + "; ".join(problems), file=sys.stderr)
        return 1
    write_csv(OUT, times, temp)
    print(f"wrote {OUT} ({OUT.stat().st_size / 1024:.0f} kB)")
    # the installed package carries a byte-identical copy for `icecolumn demo`
    packaged = OUT.parent.parent / "icecolumn" / "samples" / OUT.name
    packaged.write_bytes(OUT.read_bytes())
    print(f"wrote {packaged} (copy)")
    return 0


if __name__ == "__main__":
    sys.exit(main())
