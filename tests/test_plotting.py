"""Tests of icecolumn.plotting on synthetic output datasets (Agg backend)."""

from __future__ import annotations

import sys
from pathlib import Path

import matplotlib

matplotlib.use("Agg")

import matplotlib.dates as mdates  # noqa: E402
import numpy as np  # noqa: E402
import pytest  # noqa: E402
import xarray as xr  # noqa: E402
from matplotlib.collections import PathCollection, PolyCollection, QuadMesh  # noqa: E402

sys.path.insert(0, str(Path(__file__).parent))

from _synthetic_output import make_output, thickness_curve  # noqa: E402

from icecolumn import plotting  # noqa: E402
from icecolumn.errors import InputError  # noqa: E402

PNG_SIGNATURE = b"\x89PNG\r\n\x1a\n"
CHECK_DIR = Path("/tmp/plotcheck")


@pytest.fixture
def ds() -> xr.Dataset:
    return make_output(n_time=30, n_layer=10)


@pytest.fixture
def ens() -> xr.Dataset:
    return make_output(n_time=30, n_layer=10, members=7, seed=3)


def _laws(ds: xr.Dataset, names=("stefan", "lebedev", "anderson", "zubov")) -> xr.Dataset:
    days = np.arange(ds.sizes["time"], dtype=float)
    data = {name: ("time", 0.1 + (0.10 + 0.01 * i) * np.sqrt(days)) for i, name in enumerate(names)}
    return xr.Dataset(data, coords={"time": ds["time"].values})


def _gid_lines(ax, prefix: str):
    return [ln for ln in ax.get_lines() if (ln.get_gid() or "").startswith(prefix)]


def _save(fig, name: str) -> None:
    CHECK_DIR.mkdir(parents=True, exist_ok=True)
    fig.savefig(CHECK_DIR / name, dpi=90)


def _data_axes(fig):
    """Axes that hold a section mesh (colour-bar axes excluded)."""
    return [ax for ax in fig.axes if any(isinstance(c, QuadMesh) and c.get_gid() for c in ax.collections)]


# --------------------------------------------------------------------------- thickness


def test_thickness_lines_match_dataset_and_laws(ds):
    laws = _laws(ds)
    fig = plotting.plot_thickness(ds, laws=laws)
    _save(fig, "test_thickness.png")
    ax = fig.axes[0]
    model = _gid_lines(ax, "ice_thickness")
    law_lines = _gid_lines(ax, "law:")
    assert len(model) == 1
    assert len(law_lines) == 4
    assert len(ax.get_lines()) == 1 + 4
    np.testing.assert_allclose(model[0].get_ydata(), ds["ice_thickness"].values)
    np.testing.assert_allclose(model[0].get_ydata(), thickness_curve(30))
    legend = [t.get_text() for t in ax.get_legend().get_texts()]
    assert "Lebedev (1938)" in legend and "Stefan (1891)" in legend
    for line in law_lines:
        assert line.get_linestyle() == "--"
        assert line.get_linewidth() < model[0].get_linewidth()
    stefan = [ln for ln in law_lines if ln.get_gid() == "law:stefan"][0]
    np.testing.assert_allclose(stefan.get_ydata(), laws["stefan"].values)


def test_thickness_subset_of_laws_and_snow_panel(ds):
    fig = plotting.plot_thickness(ds, laws=_laws(ds, names=("zubov",)))
    ax, ax_snow = fig.axes[:2]
    assert [ln.get_gid() for ln in _gid_lines(ax, "law:")] == ["law:zubov"]
    snow = _gid_lines(ax_snow, "snow_thickness")
    assert len(snow) == 1
    np.testing.assert_allclose(snow[0].get_ydata(), ds["snow_thickness"].values)
    assert "snow" in ax_snow.get_ylabel() and "(m)" in ax_snow.get_ylabel()


def test_thickness_obs_markers(ds):
    obs = {
        "time": ds["time"].values[[4, 14, 24]],
        "ice_thickness": [0.3, 0.5, 0.7],
        "snow_thickness": [0.03, 0.05, 0.07],
    }
    fig = plotting.plot_thickness(ds, obs=obs)
    ax, ax_snow = fig.axes[:2]
    (pts,) = _gid_lines(ax, "obs:ice_thickness")
    assert pts.get_linestyle() == "None" and pts.get_marker() == "o"
    np.testing.assert_allclose(pts.get_ydata(), [0.3, 0.5, 0.7])
    np.testing.assert_allclose(pts.get_xdata(), mdates.date2num(obs["time"]))
    assert len(_gid_lines(ax_snow, "obs:snow_thickness")) == 1
    assert "drill holes" in [t.get_text() for t in ax.get_legend().get_texts()]


def test_thickness_time_axis_spans_run_and_labels(ds):
    fig = plotting.plot_thickness(ds)
    ax = fig.axes[0]
    t0, t1 = mdates.date2num(ds["time"].values[[0, -1]])
    lo, hi = ax.get_xlim()
    assert lo <= t0 + 1e-9 and hi >= t1 - 1e-9
    assert hi - lo == pytest.approx(t1 - t0, rel=0.05)
    assert isinstance(ax.xaxis.get_major_formatter(), mdates.ConciseDateFormatter)
    assert ax.get_ylabel() == "ice thickness (m)"
    title = fig.get_suptitle()
    assert "station_test.csv" in title and "test_run.toml" in title


def test_title_argument_overrides(ds):
    fig = plotting.plot_thickness(ds, title="Station X winter 2024")
    assert "Station X winter 2024" in fig.get_suptitle()
    assert "station_test.csv" not in fig.get_suptitle()


def test_laws_without_known_variables_rejected(ds):
    bad = xr.Dataset({"other": ("time", np.zeros(30))}, coords={"time": ds["time"].values})
    with pytest.raises(InputError, match="stefan"):
        plotting.plot_thickness(ds, laws=bad)


# --------------------------------------------------------------------------- sections


def _interior_limits(values, phi, limit=0.2):
    """2-98 % of the cells with a liquid fraction up to ``limit`` (default [output]
    load_bearing_liquid_fraction): the section colour limits."""
    use = np.isfinite(values) & np.isfinite(phi) & (phi <= limit)
    return tuple(np.percentile(values[use], [2.0, 98.0]))


def test_sections_colour_limits_are_robust_over_the_interior_ice(ds):
    fig = plotting.plot_sections(ds)
    _save(fig, "test_sections.png")
    axes = _data_axes(fig)
    assert len(axes) == 4
    phi = ds["liquid_fraction"].values
    for ax, (name, short, cmap) in zip(axes, plotting.FIELDS):
        (mesh,) = [c for c in ax.collections if isinstance(c, QuadMesh)]
        assert mesh.get_gid() == f"section:{name}"
        vals = ds[name].values
        lo, hi = _interior_limits(vals, phi)
        assert mesh.colorbar is not None
        assert (mesh.colorbar.vmin, mesh.colorbar.vmax) == pytest.approx((lo, hi))
        assert mesh.get_clim() == pytest.approx((lo, hi))
        below, above = (vals < lo).any(), (vals > hi).any()
        assert mesh.colorbar.extend == {(False, False): "neither", (True, False): "min", (False, True): "max",
                                        (True, True): "both"}[(below, above)]
        assert mesh.get_cmap().name == cmap
        assert cmap in ("viridis", "cividis", "magma", "plasma")
        label = mesh.colorbar.ax.get_ylabel()
        assert label.startswith(short)
        units = ds[name].attrs["units"]
        if units != "1":
            assert "(" in label and ")" in label
        assert ax.yaxis_inverted()
        assert ax.get_ylabel() == "depth below ice surface (m)"
    assert "interior ice" in fig.get_supxlabel()


def test_sections_porous_bottom_does_not_set_the_scale(ds):
    ds = ds.copy(deep=True)
    ref = plotting.plot_sections(ds)
    ds["liquid_fraction"][:, -1] = 0.9  # the bottom layer: porous, very salty
    ds["bulk_salinity"][:, -1] = 30.0
    fig = plotting.plot_sections(ds)
    (mesh,) = [c for c in _data_axes(fig)[1].collections if isinstance(c, QuadMesh)]
    (before,) = [c for c in _data_axes(ref)[1].collections if isinstance(c, QuadMesh)]
    assert mesh.colorbar.vmax < 30.0 and mesh.colorbar.extend in ("max", "both")
    assert mesh.colorbar.vmax <= before.colorbar.vmax + 1e-12


def test_sections_show_snow_above_the_ice_surface(ds):
    fig = plotting.plot_sections(ds)
    snow = ds["snow_thickness"].values
    for ax in _data_axes(fig):
        (band,) = [c for c in ax.collections if c.get_gid() == "snow"]
        tops = band.get_paths()[0].vertices[:, 1]
        assert tops.min() == pytest.approx(-snow.max()) and tops.max() == pytest.approx(0.0)
        assert ax.get_ylim()[1] == pytest.approx(-1.1 * snow.max())
    legend = [t.get_text() for t in _data_axes(fig)[0].get_legend().get_texts()]
    assert legend == ["snow"]
    no_snow = ds.copy()
    no_snow["snow_thickness"] = no_snow["snow_thickness"] * 0.0
    fig = plotting.plot_sections(no_snow)
    assert not [c for c in _data_axes(fig)[0].collections if c.get_gid() == "snow"]
    assert _data_axes(fig)[0].get_ylim()[1] == 0.0


def test_sections_mesh_follows_moving_layer_bounds(ds):
    fig = plotting.plot_sections(ds)
    ax = _data_axes(fig)[0]
    (mesh,) = [c for c in ax.collections if isinstance(c, QuadMesh)]
    coords = mesh.get_coordinates()  # (rows, cols, 2): rows = depth vertices, cols = time vertices
    x = mdates.date2num(ds["time"].values)
    edges = np.concatenate([[x[0] - 0.5], 0.5 * (x[1:] + x[:-1]), [x[-1] + 0.5]])
    bounds = ds["depth_bounds"].values
    n_layer = ds.sizes["layer"]
    for i in (0, 12, 29):  # time column i uses vertex columns 2i and 2i+1
        for col in (2 * i, 2 * i + 1):
            ys = coords[:, col, 1]
            np.testing.assert_allclose(ys[0::2], bounds[i, :, 0])
            np.testing.assert_allclose(ys[1::2], bounds[i, :, 1])
        np.testing.assert_allclose(coords[0, 2 * i, 0], edges[i])
        np.testing.assert_allclose(coords[0, 2 * i + 1, 0], edges[i + 1])
    values = mesh.get_array()
    assert values.shape == (2 * n_layer - 1, 2 * 30 - 1)
    np.testing.assert_allclose(values[::2, ::2], ds["temperature"].values.T)
    assert values.mask[1::2, :].all() and values.mask[:, 1::2].all()
    # the ice base line reaches the deepest layer bottom at every time
    (base,) = _gid_lines(ax, "ice_base")
    np.testing.assert_allclose(np.unique(base.get_ydata()), np.unique(bounds[:, -1, 1]))
    lo, hi = ax.get_xlim()
    assert lo == pytest.approx(edges[0]) and hi == pytest.approx(edges[-1])
    ylo, yhi = ax.get_ylim()
    assert yhi == pytest.approx(-1.1 * ds["snow_thickness"].values.max())  # the snow band above the ice
    assert ylo >= ds["ice_thickness"].values.max()


def test_sections_nan_cells_excluded_from_limits(ds):
    ds = ds.copy(deep=True)
    ds["bulk_salinity"][0, :] = np.nan
    ds["depth_bounds"][0, :, :] = np.nan
    ds["bulk_salinity"][5, 3] = 99.0
    fig = plotting.plot_sections(ds)
    mesh = [c for c in _data_axes(fig)[1].collections if isinstance(c, QuadMesh)][0]
    lo, hi = _interior_limits(ds["bulk_salinity"].values, ds["liquid_fraction"].values)
    assert np.isfinite([lo, hi]).all()
    assert (mesh.colorbar.vmin, mesh.colorbar.vmax) == pytest.approx((lo, hi))
    assert hi < 99.0 and mesh.colorbar.extend in ("max", "both")  # one outlier does not set the scale
    assert np.isfinite(mesh.get_coordinates()).all()


def test_sections_thermistor_and_core_points_share_colour_scale(ds):
    times = ds["time"].values[::5]
    therm = {"time": times, "depth": np.array([0.05, 0.2]),
             "temperature": np.linspace(-15, -3, times.size * 2).reshape(times.size, 2)}
    core = xr.Dataset({"time": ("p", times[:3]), "depth": ("p", [0.1, 0.2, 0.3]),
                       "salinity": ("p", [6.0, 5.5, 5.2])})
    fig = plotting.plot_sections(ds, thermistor=therm, core=core)
    _save(fig, "test_sections_points.png")
    ax_t, ax_s = _data_axes(fig)[:2]
    (mesh_t,) = [c for c in ax_t.collections if isinstance(c, QuadMesh)]
    (pts,) = [c for c in ax_t.collections if isinstance(c, PathCollection)]
    assert pts.get_array().size == times.size * 2
    assert pts.norm is mesh_t.norm and pts.get_cmap().name == mesh_t.get_cmap().name
    (core_pts,) = [c for c in ax_s.collections if isinstance(c, PathCollection)]
    np.testing.assert_allclose(np.asarray(core_pts.get_offsets())[:, 1], [0.1, 0.2, 0.3])


def test_points_with_mismatched_lengths_rejected(ds):
    bad = {"time": ds["time"].values[:3], "depth": [0.1, 0.2], "salinity": [1.0, 2.0, 3.0]}
    with pytest.raises(InputError, match="ice core"):
        plotting.plot_sections(ds, core=bad)


# --------------------------------------------------------------------------- salt


def test_salt_panels(ds):
    fig = plotting.plot_salt(ds)
    _save(fig, "test_salt.png")
    ax_f, ax_c = [ax for ax in fig.axes if _gid_lines(ax, "salt_")][:2]
    (flux,) = _gid_lines(ax_f, "salt_flux")
    np.testing.assert_allclose(flux.get_ydata(), ds["salt_flux"].values, equal_nan=True)
    assert flux.get_drawstyle() == "steps-pre"
    (released,) = _gid_lines(ax_c, "salt_released")
    np.testing.assert_allclose(released.get_ydata(), ds["salt_released"].values)
    assert "kg m\u207b\u00b2 s\u207b\u00b9" in ax_f.get_ylabel()
    assert "kg m\u207b\u00b2" in ax_c.get_ylabel()
    # secondary axis in g m-2 day-1
    secondary = [a for a in ax_f.child_axes if "day" in a.get_ylabel()]
    assert len(secondary) == 1
    lo, hi = ax_f.get_ylim()
    s_lo, s_hi = secondary[0].get_ylim()
    assert s_hi == pytest.approx(hi * 1000 * 86400)
    assert s_lo == pytest.approx(lo * 1000 * 86400)


# --------------------------------------------------------------------------- profiles


def test_profiles_nearest_dates(ds):
    fig = plotting.plot_profiles(ds, ["2024-01-05T07:00", np.datetime64("2024-01-20"), "2024-01-30"])
    _save(fig, "test_profiles.png")
    axes = fig.axes[:4]
    lines = _gid_lines(axes[0], "profile:temperature")
    assert [ln.get_label() for ln in lines] == ["2024-01-05", "2024-01-20", "2024-01-30"]
    np.testing.assert_allclose(lines[1].get_xdata(), ds["temperature"].values[19])
    np.testing.assert_allclose(lines[1].get_ydata(), ds["depth"].values[19])
    for ax, (name, short, _) in zip(axes, plotting.FIELDS):
        assert len(_gid_lines(ax, f"profile:{name}")) == 3
        assert ax.get_xlabel().startswith(short)
        assert ax.yaxis_inverted()
    assert axes[0].get_ylabel() == "depth below ice surface (m)"


def test_profiles_default_four_times(ds):
    fig = plotting.plot_profiles(ds, None)
    lines = _gid_lines(fig.axes[0], "profile:temperature")
    assert len(lines) == 4
    assert lines[-1].get_label() == "2024-01-30"
    assert plotting.default_profile_indices(30) == [7, 14, 22, 29]
    assert plotting.default_profile_indices(3) == [0, 1, 2]


@pytest.mark.parametrize("bad", ["2030-01-01", "not a date"])
def test_profiles_bad_dates_rejected(ds, bad):
    with pytest.raises(InputError) as err:
        plotting.plot_profiles(ds, [bad])
    assert "\n" not in str(err.value)
    assert bad in str(err.value)


# --------------------------------------------------------------------------- ensemble


def test_ensemble_thickness_band(ens):
    fig = plotting.plot_thickness(ens, laws=_laws(ens))
    _save(fig, "test_ensemble_thickness.png")
    ax = fig.axes[0]
    bands = [c for c in ax.collections if isinstance(c, PolyCollection) and c.get_gid() == "band:ice_thickness"]
    assert len(bands) == 1
    verts = bands[0].get_paths()[0].vertices
    vals = ens["ice_thickness"].values
    assert verts[:, 1].min() == pytest.approx(np.percentile(vals, 5, axis=0).min())
    assert verts[:, 1].max() == pytest.approx(np.percentile(vals, 95, axis=0).max())
    (median,) = _gid_lines(ax, "ice_thickness")
    np.testing.assert_allclose(median.get_ydata(), np.median(vals, axis=0))
    assert "7 members" in fig.get_suptitle()


def test_ensemble_salt_band_and_member0_sections(ens):
    fig = plotting.plot_salt(ens)
    ax_f = fig.axes[0]
    assert any(isinstance(c, PolyCollection) and c.get_gid() == "band:salt_flux" for c in ax_f.collections)
    fig = plotting.plot_sections(ens)
    assert "member 0" in fig.get_suptitle()
    mesh = [c for c in _data_axes(fig)[0].collections if isinstance(c, QuadMesh)][0]
    m0 = ens["temperature"].isel(member=0).values
    lo, hi = _interior_limits(m0, ens["liquid_fraction"].isel(member=0).values)
    assert (mesh.colorbar.vmin, mesh.colorbar.vmax) == pytest.approx((lo, hi))
    fig = plotting.plot_profiles(ens, ["2024-01-10"])
    (line,) = _gid_lines(fig.axes[0], "profile:temperature")
    np.testing.assert_allclose(line.get_xdata(), m0[9])


# --------------------------------------------------------------------------- plot_run


def test_plot_run_writes_png_files(ds, tmp_path):
    out = tmp_path / "figs" / "nested"
    paths = plotting.plot_run(ds, out, laws=_laws(ds))
    names = [p.name for p in paths]
    assert names == ["thickness.png", "sections.png", "salt.png", "profiles.png"]
    for p in paths:
        data = p.read_bytes()
        assert len(data) > 1000
        assert data[:8] == PNG_SIGNATURE
    # nothing left behind from the temporary names
    assert sorted(x.name for x in out.iterdir()) == sorted(names)


def test_plot_run_pdf(ds, tmp_path):
    paths = plotting.plot_run(ds, tmp_path, fmt="pdf", profiles=["2024-01-15"])
    assert [p.suffix for p in paths] == [".pdf"] * 4
    for p in paths:
        assert p.read_bytes()[:5] == b"%PDF-"


def test_plot_run_rejects_unknown_format(ds, tmp_path):
    with pytest.raises(InputError, match="jpeg"):
        plotting.plot_run(ds, tmp_path, fmt="jpeg")
    assert list(tmp_path.iterdir()) == []


# --------------------------------------------------------------------------- checks


def test_plots_refuse_a_dataset_without_their_variables(ds):
    broken = ds.drop_vars("brine_salinity")
    with pytest.raises(InputError, match="brine_salinity"):
        plotting.plot_sections(broken)


def test_thickness_legend_names_the_laws_as_the_table_does(ds):
    from icecolumn.laws import laws_table

    t = ds["time"].values
    table = laws_table(t, np.full(t.size, -20.0), surface_coefficient=10.0, freezing_point=-0.32)
    fig = plotting.plot_thickness(ds, laws=table)
    legend = [x.get_text() for x in fig.axes[0].get_legend().get_texts()]
    assert "Stefan with surface transfer, base -0.32 \u00b0C" in legend
    assert "Anderson (1961), base -1.8 \u00b0C" in legend and "Lebedev (1938), base 0 \u00b0C" in legend
    plain = plotting.plot_thickness(ds, laws=laws_table(t, np.full(t.size, -20.0)))
    assert "Stefan, surface = air, base -1.8 \u00b0C" in [x.get_text() for x in plain.axes[0].get_legend().get_texts()]
