"""Write the invented station history and the invented field-measurement examples.

All output is INVENTED DATA for demonstrations and tests.  The station is the same
fictional "Skarvik Fjord station (fictional)" as the sample winter (invented position
75.3 N, 20.5 W).  Files written into ``forcing_samples/``:

``station_history.csv``
    hourly air temperature 2015-09-01T00:00Z .. 2026-06-30T23:00Z (eleven winters), one
    decimal.  Built from

    * a smooth annual cycle through hand-picked monthly anchor values (about +3 degC in
      July, near -29 degC in February and March);
    * a winter anomaly per season (normal, sd 2.0 K, invented), fading in and out with
      the cold season, so winters differ as a whole;
    * synoptic weather: AR(1) anomalies with a 3-day correlation time, standard
      deviation 3.5 K in summer rising to 5 K in mid-winter;
    * a few random cold spells per winter;
    * a diurnal cycle whose amplitude follows the noon sun elevation.

``drillholes.csv``
    a few invented drill-hole readings (time, ice_thickness, snow_thickness) of the
    2026-27 winter, ending with 0.62 m of ice and 0.15 m of snow on 2027-01-10.
``thermistor_example.csv``
    an invented thermistor string read on 2027-01-10 (depth below the snow-ice
    interface, positive down; two sensors in the snow, two in the water).
``core_example.csv``
    an invented 0.62 m ice core in 10 cm sections (a C-shaped salinity profile).

Deterministic (``numpy.random.default_rng(SEED)``).  Run from the project root::

    python scripts/make_history.py

It prints the freezing degree days of each winter and stops with an error if the
design targets are missed.  A maintainer script; nothing imports it.
"""

from __future__ import annotations

import sys
from pathlib import Path

import numpy as np

SEED = 20150901
STATION = "Skarvik Fjord station (fictional), invented position 75.3 N 20.5 W, landfast ice in a fjord"
LATITUDE = 75.3  # invented [degrees north]
LONGITUDE = -20.5  # invented [degrees east]
START = np.datetime64("2015-09-01T00:00")
END = np.datetime64("2026-06-30T23:00")
FOLDER = Path(__file__).resolve().parent.parent / "forcing_samples"

# (day of year, climatological air temperature [degC]) -- invented anchor values, one year,
# repeated periodically
ANNUAL_ANCHORS = [
    (1, -24.5), (32, -28.0), (60, -29.0), (91, -26.5), (121, -17.5), (152, -6.0),
    (182, 1.5), (213, 3.0), (244, -1.0), (274, -6.5), (305, -13.5), (335, -19.5),
]
WINTER_ANOMALY_SD = 2.0  # sd of the whole-winter anomaly [K] (invented)
CORRELATION_DAYS = 3.0  # synoptic correlation time [days]


def annual_cycle(doy: np.ndarray) -> np.ndarray:
    """Smooth climatological air temperature [degC] at fractional day of year ``doy``."""
    d, v = np.array(ANNUAL_ANCHORS, dtype=float).T
    # periodic linear interpolation, then a 10-day Gaussian smoothing on a daily grid
    dd = np.concatenate([d - 365.0, d, d + 365.0])
    vv = np.concatenate([v, v, v])
    grid = np.arange(-365.0, 730.0, 1.0)
    rough = np.interp(grid, dd, vv)
    k = np.exp(-0.5 * (np.arange(-30, 31) / 10.0) ** 2)
    smooth = np.convolve(rough, k / k.sum(), mode="same")
    return np.interp(doy, grid, smooth)


def winter_weight(doy: np.ndarray) -> np.ndarray:
    """0 in summer, 1 in mid-winter (peak about 1 March) [1]."""
    return 0.5 * (1.0 + np.cos(2 * np.pi * (doy - 60.0) / 365.0))


def make_history(seed: int = SEED) -> tuple[np.ndarray, np.ndarray]:
    """Hourly times (naive UTC) and air temperature [degC], rounded to 0.1 K."""
    rng = np.random.default_rng(seed)
    times = np.arange(START, END + np.timedelta64(1, "h"), np.timedelta64(1, "h"))
    n = times.size
    year_start = times.astype("datetime64[Y]")
    doy = ((times - year_start.astype("datetime64[m]")).astype("timedelta64[m]").astype(float) / 1440.0) + 1.0
    w = winter_weight(doy)
    # season index: a season runs 1 September .. 31 August, named by the year it ends in
    month = (times.astype("datetime64[M]") - year_start.astype("datetime64[M]")).astype(int) + 1
    season = year_start.astype(int) + 1970 + (month >= 9)
    seasons = np.unique(season)
    anomaly = dict(zip(seasons, rng.normal(0.0, WINTER_ANOMALY_SD, seasons.size)))
    temp = annual_cycle(doy) + w * np.array([anomaly[s] for s in season])
    # synoptic AR(1)
    phi = np.exp(-1.0 / (CORRELATION_DAYS * 24.0))
    shocks = rng.standard_normal(n) * np.sqrt(1.0 - phi**2)
    unit = np.empty(n)
    unit[0] = rng.standard_normal()
    for i in range(1, n):
        unit[i] = phi * unit[i - 1] + shocks[i]
    temp += unit * (3.5 + 1.5 * w)
    # cold spells: 3 per season between December and March, -5..-9 K, 1.5..2.5 days wide
    hours = (times - START).astype("timedelta64[h]").astype(float)
    for s in seasons:
        centre0 = np.datetime64(f"{s}-01-01T00:00")
        for _ in range(3):
            c = centre0 + np.timedelta64(int(rng.uniform(-30, 90) * 24), "h")
            ch = float((c - START).astype("timedelta64[h]").astype(float))
            amp = rng.uniform(-9.0, -5.0)
            width = rng.uniform(1.5, 2.5) * 24.0
            near = np.abs(hours - ch) < 6 * width
            temp[near] += amp * np.exp(-0.5 * ((hours[near] - ch) / width) ** 2)
    # diurnal cycle: amplitude follows the noon sun elevation, peak at 14 h local solar time
    declination = 23.44 * np.sin(2 * np.pi * (np.floor(doy) - 81) / 365.0)
    noon_elevation = 90.0 - LATITUDE + declination
    amplitude = np.minimum(0.2 + np.clip(noon_elevation, 0.0, None) * 0.08, 3.0)
    hour_of_day = (times - times.astype("datetime64[D]")).astype("timedelta64[m]").astype(float) / 60.0
    temp += amplitude * np.cos(2 * np.pi * (hour_of_day + LONGITUDE / 15.0 - 14.0) / 24.0)
    return times, np.round(temp, 1)


def winter_fdd(times: np.ndarray, temp: np.ndarray) -> dict[int, float]:
    """Freezing degree days (daily means below 0 degC) of each 1 Sep .. 31 May winter [K day]."""
    day = times.astype("datetime64[D]")
    days, index = np.unique(day, return_inverse=True)
    daily = np.bincount(index, weights=temp) / np.bincount(index)
    out = {}
    for y in range(2016, 2027):
        sel = (days >= np.datetime64(f"{y - 1}-09-01")) & (days <= np.datetime64(f"{y}-05-31"))
        out[y] = float(np.sum(np.clip(-daily[sel], 0.0, None)))
    return out


def write_history(path: Path, times: np.ndarray, temp: np.ndarray) -> None:
    header = [
        "# INVENTED DATA for icecolumn forecasts and tests: not a real station and not observations",
        f"# Station: {STATION}",
        f"# Generated by scripts/make_history.py with numpy.random.default_rng(seed={SEED})",
        "# Columns: time = ISO 8601 hour in UTC; air_temperature = air temperature near the surface [degC]",
        "time,air_temperature",
    ]
    stamps = np.datetime_as_string(times, unit="m")
    body = [f"{s}Z,{t:.1f}" for s, t in zip(stamps, temp)]
    path.write_text("\n".join(header + body) + "\n", encoding="utf-8")


DRILLHOLES = """# INVENTED DATA: drill holes at Skarvik Fjord station (fictional), winter 2026-27; not observations
# Columns: time (UTC); ice_thickness [m]; snow_thickness [m]
time,ice_thickness,snow_thickness
2026-11-20T12:00Z,0.21,0.04
2026-12-05T12:00Z,0.33,0.07
2026-12-18T12:00Z,0.43,0.10
2026-12-30T12:00Z,0.53,0.12
2027-01-10T00:00Z,0.62,0.15
"""

CORE = """# INVENTED DATA: ice core at Skarvik Fjord station (fictional), 2027-01-10, 0.62 m; not observations
# Columns: time (UTC); depth_top, depth_bottom [m below the snow-ice interface]; salinity [g/kg]
time,depth_top,depth_bottom,salinity
2027-01-10T00:00Z,0.00,0.10,9.8
2027-01-10T00:00Z,0.10,0.20,6.9
2027-01-10T00:00Z,0.20,0.30,6.1
2027-01-10T00:00Z,0.30,0.40,5.8
2027-01-10T00:00Z,0.40,0.50,6.2
2027-01-10T00:00Z,0.50,0.62,8.4
"""


def thermistor_text() -> str:
    """Invented thermistor readings: snow -0.10, -0.05 m; ice 0..0.60 m; water 0.65, 0.70 m."""
    lines = ["# INVENTED DATA: thermistor string at Skarvik Fjord station (fictional), 2027-01-10; "
             "not observations",
             "# Columns: time (UTC); depth [m below the snow-ice interface, positive down; "
             "negative = in the snow]; temperature [degC]",
             "time,depth,temperature"]
    for d in (-0.10, -0.05):
        lines.append(f"2027-01-10T00:00Z,{d:.2f},{-19.5 - 40.0 * (-d):.1f}")
    for d in np.arange(0.0, 0.601, 0.05):
        # a slightly curved profile from -18.0 degC at the top to about -1.9 degC at 0.62 m
        x = d / 0.62
        lines.append(f"2027-01-10T00:00Z,{d:.2f},{-18.0 + 16.1 * x - 1.5 * x * (1 - x):.2f}")
    for d in (0.65, 0.70):
        lines.append(f"2027-01-10T00:00Z,{d:.2f},-1.85")
    return "\n".join(lines) + "\n"


def main() -> int:
    times, temp = make_history()
    fdd = winter_fdd(times, temp)
    print(f"rows {times.size}, {times[0]} .. {times[-1]} UTC; min {temp.min():.1f}, max {temp.max():.1f} degC")
    for y, v in fdd.items():
        print(f"  winter {y - 1}-{y}: {v:.0f} K day below 0 degC (1 Sep .. 31 May)")
    values = np.array(list(fdd.values()))
    problems = []
    if not (3500.0 <= values.min() and values.max() <= 6500.0):
        problems.append(f"winter FDD {values.min():.0f}..{values.max():.0f} outside 3500..6500 K day")
    if values.std() < 150.0:
        problems.append(f"winters too alike (FDD sd {values.std():.0f} K day < 150)")
    if problems:
        print("design targets missed: " + "; ".join(problems), file=sys.stderr)
        return 1
    out = FOLDER / "station_history.csv"
    write_history(out, times, temp)
    size = out.stat().st_size
    print(f"wrote {out} ({size / 1e6:.2f} MB)")
    if size >= 3e6:
        print("station_history.csv is 3 MB or more", file=sys.stderr)
        return 1
    (FOLDER / "drillholes.csv").write_text(DRILLHOLES, encoding="utf-8")
    (FOLDER / "core_example.csv").write_text(CORE, encoding="utf-8")
    (FOLDER / "thermistor_example.csv").write_text(thermistor_text(), encoding="utf-8")
    print("wrote drillholes.csv, core_example.csv, thermistor_example.csv")
    return 0


if __name__ == "__main__":
    sys.exit(main())
