"""What every command does with its outputs: no overwriting without --overwrite, the user's
umask, warnings as one line, write errors naming the user's path, the compile notice."""

from __future__ import annotations

import errno
import os
import stat
import warnings
from pathlib import Path

import numpy as np
import pytest
import xarray as xr
from matplotlib.figure import Figure
from typer.testing import CliRunner

from icecolumn import __version__, kernel
from icecolumn.cli import app
from icecolumn.cli_common import COMPILE_NOTICE, warning_line
from icecolumn.errors import IceColumnError, InputError
from icecolumn.textfile import write_atomically, write_files_atomically

FAST_CONFIG = '[output]\ninterval = "1D"\n\n[grid]\nlayers = 10\n'
runner = CliRunner()


def invoke(*args):
    return runner.invoke(app, [str(a) for a in args])


def write_forcing(path: Path, days: int = 6, gap_row: int | None = None) -> Path:
    times = np.datetime64("2027-01-01T00:00") + np.arange(days * 24 + 1) * np.timedelta64(1, "h")
    rows = [f"{t}Z,-20.00" for t in times]
    if gap_row is not None:
        rows[gap_row] = rows[gap_row].split(",")[0] + ","
    path.write_text("time,air_temperature\n" + "\n".join(rows) + "\n")
    return path


def one_line_error(result, *fragments) -> str:
    assert result.exit_code == 2, (result.stdout, result.stderr)
    lines = result.stderr.splitlines()
    assert len(lines) == 1 and lines[0].startswith("icecolumn: error: "), result.stderr
    for f in fragments:
        assert f in lines[0], lines[0]
    return lines[0]


def files_in(folder: Path) -> dict[str, bytes]:
    return {p.name: p.read_bytes() for p in sorted(folder.iterdir()) if p.is_file()}


@pytest.fixture(scope="module")
def run_file(tmp_path_factory):
    d = tmp_path_factory.mktemp("outputs")
    write_forcing(d / "forcing.csv")
    (d / "fast.toml").write_text(FAST_CONFIG)
    result = invoke("run", d / "forcing.csv", "-c", d / "fast.toml", "-o", d / "run.nc")
    assert result.exit_code == 0, result.output
    return d / "run.nc"


@pytest.fixture
def forecast_file(tmp_path):
    """A minimal forecast-like file: what ``plot`` needs to draw a fan chart."""
    t = np.datetime64("2027-01-10T00:00", "ns") + np.arange(5) * np.timedelta64(1, "D")
    pct = np.array([5.0, 25.0, 50.0, 75.0, 95.0])
    h = 0.6 + 0.01 * np.arange(5)[None, :] + 0.02 * (pct[:, None] - 50.0) / 45.0
    ds = xr.Dataset({"ice_thickness_percentile": (("percentile", "time"), h, {"units": "m"})},
                    coords={"time": t, "percentile": pct}, attrs={"icecolumn_version": __version__})
    path = tmp_path / "fc.nc"
    ds.to_netcdf(path)
    return path


# --------------------------------------------------------------------------- no overwriting


def test_plot_refuses_existing_figures_without_overwrite(tmp_path, run_file):
    figs = tmp_path / "figs"
    first = invoke("plot", run_file, "-o", figs)
    assert first.exit_code == 0, first.output
    before = files_in(figs)
    assert sorted(before) == ["profiles.png", "salt.png", "sections.png", "thickness.png"]
    (figs / "salt.png").unlink()  # one missing, three present: still nothing is written
    again = invoke("plot", run_file, "-o", figs)
    one_line_error(again, "figs/thickness.png", "file exists", "--overwrite")
    assert files_in(figs) == {k: v for k, v in before.items() if k != "salt.png"}
    forced = invoke("plot", run_file, "-o", figs, "--overwrite")
    assert forced.exit_code == 0, forced.output
    assert sorted(files_in(figs)) == sorted(before)


def test_plot_refuses_an_existing_fan_chart(tmp_path, forecast_file):
    first = invoke("plot", forecast_file, "-o", tmp_path)
    assert first.exit_code == 0, first.output
    fan = tmp_path / "fc_fan.png"
    assert fan.read_bytes()[:4] == b"\x89PNG"
    fan.write_bytes(b"mine")
    one_line_error(invoke("plot", forecast_file, "-o", tmp_path), "fc_fan.png", "--overwrite")
    assert fan.read_bytes() == b"mine"
    assert invoke("plot", forecast_file, "-o", tmp_path, "--overwrite").exit_code == 0
    assert fan.read_bytes()[:4] == b"\x89PNG"


def test_write_files_atomically_is_all_or_nothing(tmp_path):
    (tmp_path / "b.txt").write_text("kept")
    with pytest.raises(InputError, match="b.txt: file exists"):
        write_files_atomically({tmp_path / "a.txt": "a", tmp_path / "b.txt": "b"})
    assert files_in(tmp_path) == {"b.txt": b"kept"}

    def fail(tmp):
        Path(tmp).write_text("half")
        raise OSError(errno.ENOSPC, "No space left on device")

    with pytest.raises(OSError) as info:
        write_files_atomically({tmp_path / "a.txt": "a", tmp_path / "c.txt": fail})
    assert info.value.filename == str(tmp_path / "c.txt")
    assert files_in(tmp_path) == {"b.txt": b"kept"}
    (tmp_path / "sub").mkdir()
    with pytest.raises(InputError, match="the same output file twice"):
        write_files_atomically({tmp_path / "a.txt": "a", tmp_path / "sub" / ".." / "a.txt": "a"})


# --------------------------------------------------------------------------- the user's umask


@pytest.mark.parametrize("umask, mode", [(0o022, 0o644), (0o002, 0o664), (0o077, 0o600)])
def test_outputs_get_the_users_umask(tmp_path, run_file, umask, mode):
    old = os.umask(umask)
    try:
        write_forcing(tmp_path / "f.csv", days=3)
        assert invoke("run", tmp_path / "f.csv", "-c", run_file.parent / "fast.toml", "-o", tmp_path).exit_code == 0
        assert invoke("laws", tmp_path / "f.nc", "--csv", tmp_path / "laws.csv").exit_code == 0
        assert invoke("plot", tmp_path / "f.nc", "-o", tmp_path / "figs").exit_code == 0
        write_files_atomically({tmp_path / "one.txt": "1", tmp_path / "two.txt": lambda p: Path(p).write_text("2")})
    finally:
        os.umask(old)
    written = [tmp_path / "f.nc", tmp_path / "laws.csv", *(tmp_path / "figs").iterdir(), tmp_path / "one.txt",
               tmp_path / "two.txt"]
    assert len(written) == 8
    for p in written:
        assert stat.S_IMODE(p.stat().st_mode) == mode, p


# --------------------------------------------------------------------------- warnings


def test_warning_is_one_clean_line_in_run_and_laws(tmp_path):
    write_forcing(tmp_path / "gappy.csv", days=3, gap_row=10)
    (tmp_path / "fast.toml").write_text(FAST_CONFIG)
    for args in (("run", tmp_path / "gappy.csv", "-c", tmp_path / "fast.toml", "-o", tmp_path / "g.nc"),
                 ("laws", tmp_path / "gappy.csv")):
        result = invoke(*args)
        assert result.exit_code == 0, result.output
        lines = [line for line in result.stderr.splitlines() if line != COMPILE_NOTICE]
        assert len(lines) == 1, result.stderr
        assert lines[0].startswith("icecolumn: warning: ")
        assert "gappy.csv: filled 1 gap by linear interpolation" in lines[0]
        assert "ForcingWarning" not in result.stderr and ".py:" not in result.stderr


def test_warning_of_another_category_names_it(tmp_path, monkeypatch, run_file):
    import icecolumn.cli_laws as cli_laws

    def noisy(path):
        warnings.warn("invalid value\n  encountered in divide", RuntimeWarning)
        return cli_laws.first_member(cli_laws.open_output(path))

    monkeypatch.setattr(cli_laws, "open_run", noisy)
    result = invoke("laws", run_file)
    assert result.exit_code == 0, result.output
    assert result.stderr == "icecolumn: warning: RuntimeWarning: invalid value encountered in divide\n"
    assert warning_line("a\nb") == "icecolumn: warning: a b\n"


# --------------------------------------------------------------------------- errors name the user's path


def test_write_errors_name_the_output_not_the_temporary_file(tmp_path):
    target = tmp_path / "out.nc"

    def denied(tmp):
        raise PermissionError(errno.EACCES, "Permission denied", tmp)

    with pytest.raises(PermissionError) as info:
        write_atomically(target, denied)
    assert info.value.filename == str(target) and info.value.strerror == "Permission denied"

    def library(tmp):
        raise RuntimeError("NetCDF: HDF error")

    with pytest.raises(IceColumnError, match=r"out\.nc: cannot write: NetCDF: HDF error") as info:
        write_atomically(target, library)
    assert ".tmp" not in str(info.value)

    def mentions(tmp):
        raise ValueError(f"cannot encode {tmp}")

    with pytest.raises(IceColumnError) as info:
        write_atomically(target, mentions)
    assert str(info.value) == f"{target}: cannot write: cannot encode {target}"
    assert list(tmp_path.iterdir()) == []


def test_netcdf_write_error_names_the_users_file(tmp_path, monkeypatch):
    write_forcing(tmp_path / "f.csv", days=2)
    (tmp_path / "fast.toml").write_text(FAST_CONFIG)

    def broken(self, path, *args, **kwargs):
        Path(path).write_bytes(b"partial")
        raise RuntimeError("NetCDF: HDF error")

    monkeypatch.setattr(xr.Dataset, "to_netcdf", broken)
    result = invoke("run", tmp_path / "f.csv", "-c", tmp_path / "fast.toml", "-o", tmp_path / "mine.nc")
    line = one_line_error(result, f"{tmp_path / 'mine.nc'}: cannot write: NetCDF: HDF error")
    assert ".tmp" not in line
    assert sorted(p.name for p in tmp_path.iterdir()) == ["f.csv", "fast.toml"]


def test_figure_save_error_names_the_figure_and_leaves_nothing(tmp_path, run_file, monkeypatch):
    def full(self, fname, *args, **kwargs):
        Path(fname).write_bytes(b"half")
        raise OSError(errno.ENOSPC, "No space left on device")

    monkeypatch.setattr(Figure, "savefig", full)
    result = invoke("plot", run_file, "-o", tmp_path)
    line = one_line_error(result, f"{tmp_path / 'thickness.png'}: No space left on device")
    assert ".tmp" not in line
    assert list(tmp_path.iterdir()) == []


# --------------------------------------------------------------------------- compile notice


@pytest.mark.parametrize("compiles", [True, False])
def test_compile_notice_before_a_run_that_compiles(tmp_path, monkeypatch, compiles):
    asked = []

    def needs_compile(batch=False):
        asked.append(batch)
        return compiles

    monkeypatch.setattr(kernel, "needs_compile", needs_compile)
    write_forcing(tmp_path / "f.csv", days=2)
    (tmp_path / "fast.toml").write_text(FAST_CONFIG)
    result = invoke("run", tmp_path / "f.csv", "-c", tmp_path / "fast.toml", "-o", tmp_path / "r.nc")
    assert result.exit_code == 0, result.output
    assert asked == [False]  # one column: the serial kernel
    assert result.stderr == (COMPILE_NOTICE + "\n" if compiles else "")
    assert COMPILE_NOTICE.startswith("icecolumn: compiling the numerical kernel (first use")


def test_compile_notice_not_printed_when_the_run_fails_first(tmp_path, monkeypatch):
    monkeypatch.setattr(kernel, "needs_compile", lambda batch=False: True)
    (tmp_path / "bad.csv").write_text("time,air_temperature\n2027-01-01T00:00Z,cold\n")
    result = invoke("run", tmp_path / "bad.csv", "-o", tmp_path / "r.nc")
    one_line_error(result, "bad.csv", "cold")


@pytest.mark.parametrize("batch_size, variables, kernels", [(1, False, {False}), (4, False, {True}),
                                                             (4, True, {True, False})])
def test_ensemble_notice_asks_for_the_kernels_it_calls(tmp_path, monkeypatch, batch_size, variables, kernels):
    asked = set()

    def needs_compile(batch=False):  # nothing to compile: every kernel the run calls is asked
        asked.add(batch)
        return False

    monkeypatch.setattr(kernel, "needs_compile", needs_compile)
    write_forcing(tmp_path / "f.csv", days=2)
    spec = 'forcing = "f.csv"\nset = {"output.interval" = "1D", "grid.layers" = 6}\n' \
           '[[member]]\nname = "a"\n[[member]]\nname = "b"\nset = {"ocean.heat_flux" = 5.0}\n'
    if variables:
        spec += '[output]\nvariables = ["ice_thickness"]\n'
    (tmp_path / "spec.toml").write_text(spec)
    result = invoke("ensemble", tmp_path / "spec.toml", "-o", tmp_path / "e.nc", "--batch-size", batch_size)
    assert result.exit_code == 0, result.output
    assert asked == kernels and COMPILE_NOTICE not in result.stderr
    monkeypatch.setattr(kernel, "needs_compile", lambda batch=False: batch in kernels)
    again = invoke("ensemble", tmp_path / "spec.toml", "-o", tmp_path / "e.nc", "--batch-size", batch_size,
                   "--overwrite")
    assert again.exit_code == 0, again.output
    assert again.stderr.count(COMPILE_NOTICE) == 1
