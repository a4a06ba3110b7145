"""Command-line interface ``icecolumn``: a thin shell over the Python API.

Every command parses its arguments, calls the API and prints.  Errors the user
can fix (:class:`~icecolumn.errors.IceColumnError`, an unreadable path, a bad
command line) are printed as one line ``icecolumn: error: <message>`` on
stderr with exit code 2; anything unexpected prints one ``internal error``
line with exit code 1.  ``--debug`` shows the full traceback instead.
"""

from __future__ import annotations

import importlib
import importlib.resources
import sys
from pathlib import Path
from typing import Annotated, Any, Optional

import numpy as np
import typer
from typer.core import TyperGroup

import icecolumn

from ._version import __version__
from .errors import IceColumnError, InputError
from .forcing import is_netcdf

PROG = "icecolumn"
SAMPLE_NAME = "station_winter.csv"
FIGURE_NAMES = ("thickness", "sections", "salt", "profiles")


# --------------------------------------------------------------------------- error handling


def _one_line(text: str) -> str:
    return " ".join(str(text).split())


def _error(message: str) -> int:
    sys.stderr.write(f"{PROG}: error: {_one_line(message)}\n")
    return 2


class _Group(TyperGroup):
    """Root command: turns every failure into one line on stderr and an exit code."""

    def main(self, args=None, prog_name=None, complete_var=None, standalone_mode=True, **extra):
        argv = list(sys.argv[1:] if args is None else args)
        debug = "--debug" in argv[: argv.index("--") if "--" in argv else len(argv)]
        try:
            rv = super().main(args=argv, prog_name=prog_name or PROG, complete_var=complete_var,
                              standalone_mode=False, **extra)
            code = rv if isinstance(rv, int) else 0
        except typer.Exit as exc:
            code = exc.exit_code
        except typer.Abort:
            sys.stderr.write(f"{PROG}: interrupted\n")
            code = 130
        except typer.TyperException as exc:
            if type(exc).__name__ == "NoArgsIsHelpError":  # bare 'icecolumn': show the help
                sys.stderr.write(exc.format_message().rstrip() + "\n")
                code = 2
            else:  # a bad command line: one line even with --debug
                code = _error(exc.format_message())
        except IceColumnError as exc:
            if debug:
                raise
            code = _error(str(exc))
        except OSError as exc:
            if debug:
                raise
            where = f"{exc.filename}: " if exc.filename else ""
            code = _error(f"{where}{exc.strerror or exc}")
        except KeyboardInterrupt:
            sys.stderr.write(f"\n{PROG}: interrupted\n")
            code = 130
        except Exception as exc:  # noqa: BLE001 - last resort, one line unless --debug
            if debug:
                raise
            sys.stderr.write(f"{PROG}: internal error: {type(exc).__name__}: {_one_line(exc)} "
                             f"(run with --debug for details)\n")
            code = 1
        if standalone_mode:
            sys.exit(code)
        return code


app = typer.Typer(cls=_Group, add_completion=False, no_args_is_help=True, pretty_exceptions_enable=False,
                  rich_markup_mode=None,
                  help="Landfast sea-ice growth in a 1-D mushy-layer column: run, compare with "
                       "growth laws, plot.")


def _show_version(value: bool) -> None:
    if value:
        typer.echo(f"{PROG} {__version__}")
        raise typer.Exit(0)


@app.callback()
def _root(
    version: Annotated[bool, typer.Option("--version", callback=_show_version, is_eager=True,
                                          help="Print the version and exit.")] = False,
    debug: Annotated[bool, typer.Option("--debug", help="Show full tracebacks on errors.")] = False,
) -> None:
    """Landfast sea-ice growth in a 1-D mushy-layer column: run, compare with growth laws, plot."""


# --------------------------------------------------------------------------- small helpers


class ProgressBar:
    """``\\r[#####.....] 45%`` on a terminal, redrawn at most ``steps`` times."""

    def __init__(self, stream=None, width: int = 30, steps: int = 50):
        self.stream = stream if stream is not None else sys.stderr
        self.width, self.steps = width, steps
        self.enabled = bool(getattr(self.stream, "isatty", lambda: False)())
        self.shown = -1

    def __call__(self, i: int, n: int) -> None:
        if not self.enabled or n <= 0:
            return
        step = min(self.steps, i * self.steps // n)
        if step == self.shown:
            return
        self.shown = step
        frac = min(1.0, i / n)
        filled = int(round(frac * self.width))
        self.stream.write(f"\r[{'#' * filled}{'.' * (self.width - filled)}] {frac * 100:3.0f}%")
        self.stream.flush()

    def close(self) -> None:
        if self.enabled and self.shown >= 0:
            self.stream.write("\n")
            self.stream.flush()


def _overrides(assignments: list[str] | None) -> dict[str, dict[str, Any]]:
    merged: dict[str, dict[str, Any]] = {}
    for text in assignments or []:
        for section, table in icecolumn.config.parse_assignment(text).items():
            merged.setdefault(section, {}).update(table)
    return merged


def _column_map(pairs: list[str] | None, cfg=None) -> dict[str, str]:
    """The configuration's ``[forcing] columns`` updated by the command line's ``--column`` pairs."""
    out: dict[str, str] = dict(cfg.forcing.column_map()) if cfg is not None else {}
    given: set[str] = set()
    for text in pairs or []:
        ours, sep, theirs = text.partition("=")
        if not sep or not ours.strip() or not theirs.strip():
            raise InputError(f"--column: {text!r} is not of the form ours=theirs (e.g. air_temperature=Tair)")
        if ours.strip() in given:
            raise InputError(f"--column: {ours.strip()!r} is given twice")
        given.add(ours.strip())
        out[ours.strip()] = theirs.strip()
    return out


from .brine import brine_budget, format_brine_budget  # noqa: E402


def _time_text(t) -> str:
    return np.datetime_as_string(np.datetime64(t, "m"), unit="m") + "Z"


def _run_summary(ds, path: Path) -> str:
    """Short text summary of a single run (reductions of the output, no physics)."""
    t = ds["time"].values
    h = np.asarray(ds["ice_thickness"].values, dtype=float)
    imax = int(np.nanargmax(h))
    flux = np.asarray(ds["salt_flux"].values, dtype=float)
    days = (t[-1] - t[0]) / np.timedelta64(1, "D")
    flux_mean = float(np.nanmean(flux)) if np.isfinite(flux).any() else float("nan")
    flux_max = float(np.nanmax(flux)) if np.isfinite(flux).any() else float("nan")
    lines = [
        f"run:            {_time_text(t[0])} to {_time_text(t[-1])} ({days:.1f} days)",
        f"ice thickness:  start {h[0]:.3f} m, end {h[-1]:.3f} m, "
        f"maximum {h[imax]:.3f} m on {str(t[imax])[:10]}",
        *_season_lines(ds),
        f"salt released:  {float(ds['salt_released'].values[-1]):.3f} kg m-2",
        f"salt flux:      mean {flux_mean:.3g} kg m-2 s-1, maximum {flux_max:.3g} kg m-2 s-1",
        f"output:         {path}",
        "",
        "brine budget by month (kg m-2):",
        format_brine_budget(brine_budget(ds, "month")),
        "",
        icecolumn.CAUTION,
    ]
    return "\n".join(lines)


def _season_lines(ds) -> list[str]:
    """Summary lines for snow-ice, melt-out and refreeze (only when they happened)."""
    lines = []
    t = ds["time"].values
    if "snow_ice_growth" in ds and float(ds["snow_ice_growth"].values[-1]) > 0:
        lines.append(f"snow-ice:       {float(ds['snow_ice_growth'].values[-1]):.3f} m formed by flooding")
    if "sea_ice_area_fraction" in ds:
        ice = np.asarray(ds["sea_ice_area_fraction"].values) > 0
        outs = np.flatnonzero(ice[:-1] & ~ice[1:]) + 1
        ins = np.flatnonzero(~ice[:-1] & ice[1:]) + 1
        if outs.size:
            lines.append("melt-out:       " + ", ".join(str(t[i])[:10] for i in outs[:5])
                         + (" ..." if outs.size > 5 else ""))
        if ins.size:
            lines.append("new ice:        " + ", ".join(str(t[i])[:10] for i in ins[:5])
                         + (" ..." if ins.size > 5 else ""))
        open_days = float(np.sum(~ice[1:] * np.diff(t) / np.timedelta64(1, "D")))
        if open_days > 0:
            lines.append(f"open water:     {open_days:.1f} days")
    return lines


def _open_run(path: Path, require=("ice_thickness", "air_temperature")):
    """Open a run output for the growth-law comparison (member 0 of an ensemble)."""
    from .plotting import open_output

    ds = open_output(path, require=require)
    return ds.isel(member=0) if "member" in ds.dims else ds


def _air_from_run(ds):
    """Air temperature samples from a run output.

    The output's ``air_temperature`` holds means over the interval ending at each
    time (NaN at the first time).  Each mean is placed at the middle of its
    interval, and the first and last means are repeated at the run start and end,
    so the piecewise-linear curve through these samples has the same time
    integral as the interval means.
    """
    t = ds["time"].values.astype("datetime64[ns]")
    mean = np.asarray(ds["air_temperature"].values, dtype=float)[1:]
    if t.size < 2 or not np.isfinite(mean).all():
        raise InputError(f"{ds.encoding.get('source', 'run output')}: air_temperature needs at least two "
                         "output times with finite values")
    mid = t[:-1] + (t[1:] - t[:-1]) // 2
    times = np.concatenate([t[:1], mid, t[-1:]])
    values = np.concatenate([mean[:1], mean, mean[-1:]])
    keep = np.concatenate([[True], np.diff(times.astype(np.int64)) > 0])
    return times[keep], values[keep]


def _linear_surface_coefficient(ds, source: str) -> float | None:
    """H of the run's linear surface scheme, or None (other scheme or no config)."""
    text = ds.attrs.get("icecolumn_config")
    if not text:
        return None
    cfg = icecolumn.config.config_from_toml_text(str(text), f"{source}: attribute icecolumn_config")
    ran = str(ds.attrs.get("surface_scheme", cfg.surface.scheme))  # the scheme that ran ("auto" resolved)
    return cfg.surface.heat_transfer_coefficient if ran == "linear" else None


def _laws_for(air_time, air_temp, run=None, run_source: str = "", base: float | None = None):
    """Growth-law table, with the model column when a run is given; and Stefan's H."""
    from .laws import laws_table

    kwargs: dict[str, Any] = {}
    coeff = None
    if run is not None:
        h = np.asarray(run["ice_thickness"].values, dtype=float)
        coeff = _linear_surface_coefficient(run, run_source)
        kwargs = dict(initial_thickness=float(h[0]), start=run["time"].values[0],
                      model_time=run["time"].values, model_thickness=h, surface_coefficient=coeff)
    return laws_table(air_time, air_temp, base=base, **kwargs), coeff


def _read_obs_in_period(path: Path, first, last):
    """Observations, refusing any outside ``first``..``last``."""
    from .observations import read_observations

    obs = read_observations(path)
    t = obs["time"].values
    outside = np.flatnonzero((t < first) | (t > last))
    if outside.size:
        i = int(outside[0])
        raise InputError(f"{path}: line {int(obs['line'].values[i])}: time {_time_text(t[i])} is outside the "
                         f"period {_time_text(first)} to {_time_text(last)}")
    return obs


def _fit_text(table, obs, obs_path: Path) -> str:
    from .laws import fit_observations

    name = "fdd" if "fdd" in table else "fdd_stefan"
    tt = table["time"].values.astype("datetime64[ns]").astype(np.int64)
    ot = obs["time"].values.astype("datetime64[ns]").astype(np.int64)
    fdd = np.interp(ot, tt, table[name].values)
    fit = fit_observations(fdd, obs["ice_thickness"].values)
    base = table[name].attrs.get("base_temperature_degC", float("nan"))
    return "\n".join([
        f"# power law h = a theta^b fitted to {obs.sizes['time']} observations in {obs_path}",
        f"# theta: freezing degree days below {base:g} degC at the observation times",
        f"a = {fit['a']:.4g} +/- {fit['sigma_a']:.2g} m (K day)^-b",
        f"b = {fit['b']:.4g} +/- {fit['sigma_b']:.2g}",
        f"correlation(a, b) = {fit['corr']:.2f}, rmse = {fit['rmse']:.3f} m",
    ])


def _sample_forcing(name: str = SAMPLE_NAME) -> Path:
    """A bundled sample file: the repository's forcing_samples/, ./forcing_samples/, or the
    copy shipped inside the package (the sample winter only)."""
    here = Path(icecolumn.__file__).resolve().parent.parent / "forcing_samples" / name
    cwd = Path.cwd() / "forcing_samples" / name
    for candidate in (here, cwd):
        if candidate.is_file():
            return candidate
    try:
        packaged = importlib.resources.files("icecolumn") / "samples" / name
        if packaged.is_file():
            return Path(str(packaged))
    except (ModuleNotFoundError, FileNotFoundError, NotADirectoryError):
        pass
    raise InputError(f"the bundled sample {name} was not found (looked in {here.parent}, {cwd.parent} and in "
                     "the package folder icecolumn/samples); run from the icecolumn source folder, or run "
                     "'icecolumn run' on your own forcing file")


# --------------------------------------------------------------------------- commands

ForcingArg = Annotated[Path, typer.Argument(metavar="FORCING", help="Forcing CSV file (time, air_temperature [degC], ...).",
                                            show_default=False)]


@app.command("run")
def run_command(
    forcing: ForcingArg,
    config: Annotated[Optional[Path], typer.Option("-c", "--config", help="Configuration TOML file.")] = None,
    output: Annotated[Optional[Path], typer.Option("-o", "--output",
                                                   help="Output NetCDF file [default: <forcing stem>.nc].")] = None,
    overwrite: Annotated[bool, typer.Option("--overwrite", help="Replace an existing output file.")] = False,
    assignments: Annotated[Optional[list[str]], typer.Option("--set", metavar="SECTION.KEY=VALUE",
                                                             help="Override one setting (repeatable).")] = None,
    columns: Annotated[Optional[list[str]], typer.Option("--column", metavar="OURS=THEIRS",
                                                         help="Read our variable from another column "
                                                              "(repeatable).")] = None,
    restart_from: Annotated[Optional[Path], typer.Option("--restart-from", metavar="PREVIOUS.nc",
                                                         help="Continue from the last state of a previous "
                                                              "output (same configuration).")] = None,
    repeat: Annotated[int, typer.Option("--repeat", min=1, metavar="N",
                                        help="Run the forcing N times end to end (multi-year runs and "
                                             "spin-up; the period is the file's span plus one time step).")] = 1,
) -> None:
    """Run the column model on a forcing file and write a NetCDF file."""
    out = output if output is not None else Path(f"{forcing.stem}.nc")
    if out.is_dir():
        out = out / f"{forcing.stem}.nc"
    if out.exists() and not overwrite:
        raise InputError(f"{out}: file exists; use --overwrite to replace it")
    if not (out.parent if str(out.parent) else Path(".")).is_dir():
        raise InputError(f"{out}: folder {out.parent} does not exist")
    cfg = icecolumn.load_config(config, _overrides(assignments))
    data = icecolumn.read_forcing(forcing, _column_map(columns, cfg), max_gap=cfg.forcing.max_gap)
    if repeat > 1:
        from .forcing import repeat_forcing

        data = repeat_forcing(data, repeat)
    previous = None
    if restart_from is not None:
        from .plotting import open_output
        from .model import restart_state

        if restart_from.resolve() == out.resolve():
            raise InputError(f"{restart_from}: the restart file cannot also be the output file")
        previous = open_output(restart_from)
        restart_state(previous, cfg, str(restart_from))  # check before running
    bar = ProgressBar()
    try:
        if previous is None:
            ds = icecolumn.run(data, cfg, progress=bar)
        else:
            from .model import run_restart

            ds = run_restart(data, cfg, previous, progress=bar, source=str(restart_from))
    finally:
        bar.close()
    icecolumn.write_netcdf(ds, out, overwrite=overwrite)
    typer.echo(_run_summary(ds, out))


@app.command("demo")
def demo_command(
    outdir: Annotated[Path, typer.Option("-o", "--output-dir", help="Folder for the demo files.")]
    = Path("icecolumn_demo"),
    overwrite: Annotated[bool, typer.Option("--overwrite", help="Replace existing files in the folder.")] = False,
    forecast: Annotated[bool, typer.Option("--forecast", help="Also run a forecast from the bundled (invented) "
                                           "station history, drill hole, thermistor and core.")] = False,
) -> None:
    """Run the bundled sample winter with the default configuration, with figures."""
    from .laws import write_laws_csv
    from .plotting import plot_run

    sample = _sample_forcing()
    planned = [outdir / f"{Path(SAMPLE_NAME).stem}.nc", outdir / "laws.csv"]
    planned += [outdir / f"{name}.png" for name in FIGURE_NAMES]
    if outdir.exists() and not outdir.is_dir():
        raise InputError(f"{outdir}: exists and is not a folder")
    existing = [p for p in planned if p.exists()]
    if existing and not overwrite:
        raise InputError(f"{existing[0]}: file exists; use --overwrite to replace the demo files")
    outdir.mkdir(parents=True, exist_ok=True)
    forcing = icecolumn.read_forcing(sample)
    bar = ProgressBar()
    try:
        ds = icecolumn.run(forcing, icecolumn.default_config(), progress=bar)
    finally:
        bar.close()
    nc = icecolumn.write_netcdf(ds, planned[0], overwrite=overwrite)
    table, _ = _laws_for(forcing["time"].values, forcing["air_temperature"].values, ds, str(nc))
    write_laws_csv(table, planned[1])
    ds.encoding["source"] = str(nc)
    figures = plot_run(ds, outdir, laws=table)
    typer.echo(_run_summary(ds, nc))
    typer.echo("files written:")
    for p in [nc, planned[1], *figures]:
        typer.echo(f"  {p}")
    if forecast:
        from .cli_forecast import forecast_command

        typer.echo("\nforecast demo (invented station history; 40 members to keep the demo short):")
        forecast_command(history=_sample_forcing("station_history.csv"), start="2027-01-10T00:00",
                         ice_thickness=0.62, snow_thickness=0.15,
                         profile=_sample_forcing("thermistor_example.csv"),
                         salinity=_sample_forcing("core_example.csv"), members=40, seed=1,
                         output=outdir / "forecast.nc", overwrite=overwrite, threshold=1.2, by="2027-03-15",
                         obs=_sample_forcing("drillholes.csv"))


@app.command("laws")
def laws_command(
    input_path: Annotated[Path, typer.Argument(metavar="INPUT", help="Forcing CSV or run output NetCDF.",
                                               show_default=False)],
    run_path: Annotated[Optional[Path], typer.Option("--run", help="Run output to compare with.")] = None,
    csv_path: Annotated[Optional[Path], typer.Option("--csv", help="Also write the daily table as CSV.")] = None,
    base: Annotated[Optional[float], typer.Option("--base", help="One base temperature for every law [degC] "
                                                  "(default: each law's own).")] = None,
    every: Annotated[str, typer.Option("--every", help="Table rows: week or month.")] = "week",
    obs_path: Annotated[Optional[Path], typer.Option("--obs", help="Observed thickness CSV "
                                                     "(time, ice_thickness [m]); fits a power law.")] = None,
) -> None:
    """Compare the classical growth laws (and a model run) driven by air temperature."""
    from .laws import format_laws_table, write_laws_csv

    if every not in ("week", "month"):
        raise InputError(f"--every: expected 'week' or 'month', got {every!r}")
    run = None
    if is_netcdf(input_path):
        if run_path is not None:
            raise InputError(f"{input_path}: is a run output already; --run is for a forcing INPUT")
        run, run_path = _open_run(input_path), input_path
        air_time, air_temp = _air_from_run(run)
        header = [f"# air temperature: interval means from the run output {input_path}"]
    else:
        forcing = icecolumn.read_forcing(input_path)
        air_time, air_temp = forcing["time"].values, forcing["air_temperature"].values
        header = [f"# air temperature: forcing file {input_path}"]
        if run_path is not None:
            run = _open_run(run_path)
    table, coeff = _laws_for(air_time, air_temp, run, str(run_path), base)
    if run is not None:
        header.append(f"# model: ice_thickness of {run_path}, started from its initial thickness")
    if coeff is not None:
        header.append(f"# Stefan's law includes the run's linear surface scheme: H = {coeff:g} W m-2 K-1 "
                      "([surface] heat_transfer_coefficient)")
    fit = None
    if obs_path is not None:  # read and fit before printing anything
        t = table["time"].values
        first = run["time"].values[0] if run is not None else t[0]
        last = min(run["time"].values[-1], t[-1]) if run is not None else t[-1]
        fit = _fit_text(table, _read_obs_in_period(obs_path, first, last), obs_path)
    typer.echo("\n".join(header))
    typer.echo(format_laws_table(table, every), nl=False)
    if fit is not None:
        typer.echo(fit)
    if csv_path is not None:
        write_laws_csv(table, csv_path)
        typer.echo(f"table written to {csv_path}")


@app.command("plot")
def plot_command(
    output_file: Annotated[Path, typer.Argument(metavar="OUT.nc", help="Run output NetCDF file.",
                                                show_default=False)],
    outdir: Annotated[Optional[Path], typer.Option("-o", "--output-dir",
                                                   help="Folder for the figures [default: the file's "
                                                        "folder].")] = None,
    obs_path: Annotated[Optional[Path], typer.Option("--obs", help="Observed thickness CSV to overlay.")] = None,
    fmt: Annotated[str, typer.Option("--format", help="Figure format: png, pdf or svg.")] = "png",
    profiles: Annotated[Optional[str], typer.Option("--profiles", metavar="DATE,DATE",
                                                    help="Dates of the profile figure, comma-separated.")]
    = None,
    thermistor: Annotated[Optional[Path], typer.Option("--thermistor", help="Thermistor CSV (time, depth, "
                                                       "temperature) drawn as points on the sections.")] = None,
    core: Annotated[Optional[Path], typer.Option("--core", help="Ice-core CSV (time, depth_top, depth_bottom, "
                                                 "salinity) drawn as points on the sections.")] = None,
) -> None:
    """Draw the thickness, section, salt and profile figures of a run."""
    from .observations import read_profile_points
    from .plotting import open_output, plot_run

    from . import plotting_forecast

    kind = open_output(output_file, require=())  # a forecast or calibration file has other variables
    if plotting_forecast.is_forecast(kind) or plotting_forecast.is_calibration(kind):
        obs = None
        if obs_path is not None and "time" in kind.coords:
            obs = _read_obs_in_period(obs_path, kind["time"].values[0], kind["time"].values[-1])
        folder = outdir if outdir is not None else (output_file.parent if str(output_file.parent) else Path("."))
        files = plotting_forecast.plot_forecast_file(kind, folder, fmt=fmt, obs=obs, stem=output_file.stem)
        typer.echo("figures written:")
        for p in files:
            typer.echo(f"  {p}")
        return
    ds = open_output(output_file)
    single = ds.isel(member=0) if "member" in ds.dims else ds
    air_time, air_temp = _air_from_run(single)
    table, _ = _laws_for(air_time, air_temp, single, str(output_file))
    obs = None
    if obs_path is not None:
        t = ds["time"].values
        obs = _read_obs_in_period(obs_path, t[0], t[-1])
    dates = None
    if profiles is not None:
        dates = [d.strip() for d in profiles.split(",") if d.strip()]
        if not dates:
            raise InputError("--profiles: no dates given (e.g. --profiles 2027-01-15,2027-03-01)")
    folder = outdir if outdir is not None else (output_file.parent if str(output_file.parent) else Path("."))
    points_t = read_profile_points(thermistor, "thermistor") if thermistor is not None else None
    points_c = read_profile_points(core, "core") if core is not None else None
    files = plot_run(ds, folder, fmt=fmt, laws=table, obs=obs, profiles=dates, thermistor=points_t, core=points_c)
    typer.echo("figures written:")
    for p in files:
        typer.echo(f"  {p}")


@app.command("config")
def config_command(
    defaults: Annotated[bool, typer.Option("--defaults", help="Print the default configuration.")] = False,
    config: Annotated[Optional[Path], typer.Option("-c", "--config", help="Configuration TOML file.")] = None,
    assignments: Annotated[Optional[list[str]], typer.Option("--set", metavar="SECTION.KEY=VALUE",
                                                             help="Override one setting (repeatable).")] = None,
    markdown: Annotated[bool, typer.Option("--markdown", help="Print the table of every setting "
                                           "(Markdown).")] = False,
) -> None:
    """Print the fully resolved configuration as TOML (a start for your own file)."""
    if markdown:
        typer.echo(icecolumn.config.parameters_markdown(), nl=False)
        return
    if defaults and (config is not None or assignments):
        raise InputError("config: --defaults cannot be combined with --config or --set")
    cfg = icecolumn.load_config(config, _overrides(assignments))
    typer.echo(cfg.to_toml(), nl=False)


# Commands that live in their own modules register themselves on ``app``: each module
# ``icecolumn/cli_<name>.py`` has ``register(app)``.  Add a module name here to enable it.
_COMMAND_MODULES: tuple[str, ...] = ("ensemble", "check", "forecast", "buoy")
for _name in _COMMAND_MODULES:
    importlib.import_module(f"icecolumn.cli_{_name}").register(app)


def main(argv: list[str] | None = None) -> int:
    """Entry point of the ``icecolumn`` script; returns the exit code."""
    return typer.main.get_command(app).main(args=argv, prog_name=PROG, standalone_mode=False)


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
