"""Reading run outputs back (icecolumn/output_io.py), on synthetic output datasets."""

from __future__ import annotations

import sys
from pathlib import Path

import numpy as np
import pytest

sys.path.insert(0, str(Path(__file__).resolve().parent))
from _synthetic_output import make_output  # noqa: E402

from icecolumn import output_io  # noqa: E402
from icecolumn.errors import InputError  # noqa: E402
from icecolumn.plotting import OUTPUT_VARIABLES  # noqa: E402


@pytest.fixture
def ds():
    return make_output(n_time=30, n_layer=10)


def test_check_rejects_missing_variable(ds):
    broken = ds.drop_vars("brine_salinity")
    with pytest.raises(InputError) as err:
        output_io.check_output_dataset(broken, source="run.nc", require=OUTPUT_VARIABLES)
    msg = str(err.value)
    assert msg.startswith("run.nc:") and "brine_salinity" in msg and "\n" not in msg


def test_check_rejects_foreign_file(ds):
    foreign = ds.copy()
    del foreign.attrs["icecolumn_version"]
    with pytest.raises(InputError) as err:
        output_io.check_output_dataset(foreign, source="file.nc")
    assert str(err.value) == "file.nc: not an icecolumn output file (no icecolumn_version attribute)"


def test_check_accepts_valid(ds):
    assert output_io.check_output_dataset(ds, source="x.nc", require=OUTPUT_VARIABLES) is ds


def test_open_output_roundtrip_and_errors(ds, tmp_path):
    path = tmp_path / "run.nc"
    ds.to_netcdf(path)
    opened = output_io.open_output(path, require=OUTPUT_VARIABLES)
    np.testing.assert_allclose(opened["ice_thickness"].values, ds["ice_thickness"].values)
    assert np.issubdtype(opened["time"].dtype, np.datetime64)
    assert opened.encoding["source"] == str(path)
    with output_io.open_output(path, load=False) as lazy:
        np.testing.assert_allclose(lazy["ice_thickness"].values, ds["ice_thickness"].values)

    with pytest.raises(InputError, match="file not found"):
        output_io.open_output(tmp_path / "absent.nc")
    junk = tmp_path / "junk.nc"
    junk.write_text("this is not netcdf\n")
    with pytest.raises(InputError) as err:
        output_io.open_output(junk)
    assert str(junk) in str(err.value) and "\n" not in str(err.value)

    other = tmp_path / "other.nc"
    ds.drop_vars("salt_flux").to_netcdf(other)
    with pytest.raises(InputError, match=r"other\.nc: missing variable\(s\) salt_flux"):
        output_io.open_output(other, require=OUTPUT_VARIABLES)


def test_first_member_of_an_ensemble():
    ens = make_output(n_time=5, n_layer=4, members=3, seed=1)
    one = output_io.first_member(ens)
    assert "member" not in one.dims
    np.testing.assert_array_equal(one["ice_thickness"].values, ens["ice_thickness"].isel(member=0).values)
    single = make_output(n_time=5, n_layer=4)
    assert output_io.first_member(single) is single
