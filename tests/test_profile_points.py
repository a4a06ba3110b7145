"""Thermistor and ice-core point readers used by `icecolumn plot --thermistor/--core`."""
import numpy as np
import pytest

from icecolumn.errors import InputError
from icecolumn.profiles import read_profile_points


def test_thermistor_points(tmp_path):
    p = tmp_path / "t.csv"
    p.write_text("# invented test data\ntime,depth,temperature\n2027-01-15T00:00,0.1,-20\n2027-01-15T00:00,0.5,-12\n")
    pts = read_profile_points(p, "thermistor")
    assert pts["time"].dtype == np.dtype("datetime64[ns]")
    np.testing.assert_array_equal(pts["depth"], [0.1, 0.5])
    np.testing.assert_array_equal(pts["temperature"], [-20.0, -12.0])


def test_core_points_at_section_mid_depth(tmp_path):
    p = tmp_path / "c.csv"
    p.write_text("time,depth_top,depth_bottom,salinity\n2027-02-01,0.0,0.1,7.5\n2027-02-01,0.5,0.6,4.9\n")
    pts = read_profile_points(p, "core")
    np.testing.assert_allclose(pts["depth"], [0.05, 0.55])
    np.testing.assert_array_equal(pts["salinity"], [7.5, 4.9])


@pytest.mark.parametrize("text,needle", [
    ("time,depth\n2027-01-01,0.1\n", "missing column(s) temperature"),
    ("time,depth,temperature\n2027-01-01,0.1,warm\n", "line 2: column 'temperature'"),
    ("", "file is empty"),
    ("time,depth,temperature\nnotatime,0.1,-3\n", "line 2"),
])
def test_bad_points_one_line_error(tmp_path, text, needle):
    p = tmp_path / "bad.csv"
    p.write_text(text)
    with pytest.raises(InputError) as err:
        read_profile_points(p, "thermistor")
    msg = str(err.value)
    assert needle in msg and "\n" not in msg and str(p) in msg
