"""``icecolumn buoy RECORD``: ocean heat flux and growth budget from a thermistor string.

A thin shell: reads the record (:mod:`icecolumn.buoy_io`), finds the interfaces and the
budget per window (:mod:`icecolumn.buoy`), and writes all outputs at once or none:

* ``<stem>_budget.nc``   CF NetCDF: record, interfaces, budget terms per window
* ``<stem>_budget.png``  temperature section with interfaces; flux terms with error bars
* ``<stem>_budget.txt``  the text table (also printed)
* ``<stem>_thickness.csv`` daily ice (and snow) thickness for ``icecolumn calibrate --obs``
* ``<stem>_forcing.csv`` with ``--forcing``: that forcing plus the ``ocean_heat_flux`` column
  for ``icecolumn run``
"""

from __future__ import annotations

from pathlib import Path
from typing import Annotated, Optional

import typer

from .errors import InputError

__all__ = ["register", "buoy_command"]


def _band(text: str) -> tuple[float, float]:
    parts = [p.strip() for p in text.split(",")]
    try:
        lo, hi = (float(p) for p in parts)
    except ValueError:
        raise InputError(f"--band: {text!r} is not two numbers LOW,HIGH in m above the ice bottom "
                         "(e.g. 0.1,0.4)") from None
    if not 0 <= lo < hi:
        raise InputError(f"--band: need 0 <= LOW < HIGH, got {lo:g},{hi:g}")
    return lo, hi


def buoy_command(
    record: Annotated[Path, typer.Argument(metavar="RECORD", help="Thermistor-string record: CSV (time, T1..Tn; "
                                           "'# first_sensor_depth' and '# sensor_spacing' lines) or CF NetCDF.",
                                           show_default=False)],
    outdir: Annotated[Path, typer.Option("-o", "--output-dir", help="Folder for the output files (made if "
                                         "missing).")] = Path("."),
    core: Annotated[Optional[Path], typer.Option("--core", help="Ice-core CSV (depth_top, depth_bottom, salinity) "
                                                 "[default: assumed first-year salinity].")] = None,
    window: Annotated[str, typer.Option("--window", metavar="DURATION", help="Window length.")] = "10D",
    band: Annotated[str, typer.Option("--band", metavar="LOW,HIGH", help="Sensors used for the temperature "
                                      "gradient, in m above the ice bottom.")] = "0.1,0.4",
    detect: Annotated[bool, typer.Option("--detect", help="Detect all interfaces from the temperatures, even "
                                         "where the record has measured ones.")] = False,
    forcing: Annotated[Optional[Path], typer.Option("--forcing", help="Station forcing to copy with the buoy's "
                                                    "ocean_heat_flux column added (writes <stem>_forcing.csv).")]
    = None,
    fill_flux: Annotated[Optional[float], typer.Option("--fill-flux", metavar="W_M2", help="ocean_heat_flux "
                                                       "outside the windows with an estimate [default: [ocean] "
                                                       "heat_flux].")] = None,
    config: Annotated[Optional[Path], typer.Option("-c", "--config", help="Configuration TOML ([ocean] salinity "
                                                   "and heat_flux, [properties], [forcing] columns, [station]).")] = None,
    sensor_accuracy: Annotated[float, typer.Option("--sensor-accuracy", metavar="K", help="Bound of each sensor's "
                                                   "offset.")] = 0.1,
    position_uncertainty: Annotated[Optional[float], typer.Option("--position-uncertainty", metavar="M",
                                                                  help="Bound of the interface position error "
                                                                       "[default: half the sensor spacing, 0.005 m "
                                                                       "for measured interfaces].")] = None,
    salinity_uncertainty: Annotated[float, typer.Option("--salinity-uncertainty", metavar="G_KG",
                                                        help="Bound of the bulk-salinity error.")] = 2.0,
    conductivity_uncertainty: Annotated[float, typer.Option("--conductivity-uncertainty", metavar="FRACTION",
                                                            help="Bound of the relative conductivity error.")] = 0.1,
    members: Annotated[int, typer.Option("--members", help="Monte Carlo members.")] = 200,
    seed: Annotated[int, typer.Option("--seed", help="Monte Carlo seed.")] = 1,
    obs_every: Annotated[str, typer.Option("--obs-every", metavar="DURATION", help="Spacing of the thickness "
                                           "rows.")] = "1D",
    overwrite: Annotated[bool, typer.Option("--overwrite", help="Replace existing output files.")] = False,
) -> None:
    """Ocean heat flux, conductive flux and growth budget per window from a thermistor string."""
    import icecolumn

    from . import buoy, buoy_io
    from .plotting_buoy import plot_buoy, save_figure
    from .timeutil import parse_duration

    if outdir.exists() and not outdir.is_dir():
        raise InputError(f"{outdir}: is not a folder")
    stem = record.stem
    out = {k: outdir / f"{stem}_{k}" for k in ("budget.nc", "budget.png", "budget.txt", "thickness.csv")}
    if forcing is not None:
        out["forcing.csv"] = outdir / f"{stem}_forcing.csv"
    for p in out.values():  # refuse before any work
        if p.exists() and not overwrite:
            raise InputError(f"{p}: file exists; use --overwrite to replace it")
        if p.resolve() == record.resolve() or (forcing is not None and p.resolve() == forcing.resolve()):
            raise InputError(f"{p}: an output would replace an input file")
    try:
        win = parse_duration(window)
        every = parse_duration(obs_every)
    except InputError as err:
        raise InputError(f"--window/--obs-every: {err}") from None
    lo, hi = _band(band)
    cfg = icecolumn.load_config(config) if config is not None else icecolumn.default_config()
    settings = buoy.BudgetSettings.from_config(
        cfg, window=win, band_bottom=lo, band_top=hi, sensor_accuracy=sensor_accuracy,
        position_uncertainty=position_uncertainty, salinity_uncertainty=salinity_uncertainty,
        conductivity_uncertainty=conductivity_uncertainty, members=members, seed=seed)
    settings.check()
    rec = buoy_io.read_buoy(record)
    sal = buoy_io.salinity_from_core(core) if core is not None else buoy.SalinityProfile()
    station = (icecolumn.read_forcing(forcing, cfg.forcing.column_map(), max_gap=cfg.forcing.max_gap)
               if forcing is not None else None)
    iface = buoy.interfaces(rec, settings, detect=detect)
    budget = buoy.heat_budget(rec, iface, sal, settings)
    ds = buoy_io.budget_dataset(rec, iface, budget, station=cfg.station)
    table = buoy_io.format_budget(budget)
    obs_text, n_obs = buoy_io.observations_csv_text(iface, every, str(record))
    fig = plot_buoy(ds)
    files: dict[Path, object] = {
        out["budget.nc"]: lambda tmp: buoy_io.write_budget_netcdf(ds, tmp),
        out["budget.png"]: lambda tmp: save_figure(fig, tmp, fmt="png"),
        out["budget.txt"]: "\n".join(buoy_io.record_summary(rec, iface)) + "\n\n" + table + "\n" + buoy.CAUTION_FLUX
        + "\n",
        out["thickness.csv"]: obs_text,
    }
    if station is not None:
        fill = cfg.ocean.heat_flux if fill_flux is None else float(fill_flux)
        files[out["forcing.csv"]] = buoy_io.forcing_csv_text(station, budget, fill, str(record))
    outdir.mkdir(parents=True, exist_ok=True)  # everything is computed: only writing is left
    written = buoy_io.write_outputs(files, overwrite=overwrite)
    mean, unc, n = buoy.record_mean(budget)
    lines = [*buoy_io.record_summary(rec, iface), "", table]
    if n:
        lines.append(f"record mean F_w {mean:.1f} +/- {unc:.1f} W m-2: a value for [ocean] heat_flux in the "
                     "configuration of run or forecast")
    lines.append(f"thickness rows for calibrate --obs: {n_obs}")
    lines += ["files written:", *(f"  {p}" for p in written), "", buoy.CAUTION_FLUX]
    typer.echo("\n".join(lines))


COMMANDS = {"buoy": buoy_command}
