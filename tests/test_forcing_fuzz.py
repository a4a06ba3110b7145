"""Fuzz test: malformed CSV text never makes read_forcing raise anything but InputError."""

from __future__ import annotations

import tempfile
import warnings
from pathlib import Path

import numpy as np
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from icecolumn.errors import InputError
from icecolumn.forcing import ForcingWarning, VARIABLES, read_forcing

NAMES = ["time", "air_temperature", *list(VARIABLES)[1:], "note", "", "time"]
NUMBERS = st.one_of(
    st.floats(allow_nan=True, allow_infinity=True).map(repr),
    st.integers(min_value=-10**30, max_value=10**30).map(str),
    st.sampled_from(["nan", "inf", "-inf", "1e999", "-0", "", " ", "1e-400", "0x10", "1_0", "--1", "5,", '"3"', '"']),
    st.floats(min_value=-60, max_value=120).map(lambda x: f"{x:.2f}"),
)
TIMESTAMPS = st.one_of(
    st.datetimes().map(lambda d: d.isoformat()),
    st.datetimes().map(lambda d: d.strftime("%Y-%m-%dT%H:%M") + "Z"),
    st.integers(0, 500).map(lambda h: str(np.datetime64("2026-10-01T00", "h") + np.timedelta64(h, "h")) + "Z"),
    st.sampled_from(["", "2026-13-01T00:00", "2026-02-30", "0000-01-01", "9999-12-31T23:59:59+14:00",
                     "2026-10-01T25:00", "2026-10-01T00:00+99", "garbage"]),
)
CELL = st.one_of(NUMBERS, TIMESTAMPS, st.text(max_size=8))


@st.composite
def near_valid(draw) -> str:
    """A nearly valid file: known columns, mostly increasing times, numbers with mutations."""
    optional = draw(st.lists(st.sampled_from(list(VARIABLES)[1:]), unique=True, max_size=3))
    header = ["time", "air_temperature", *optional]
    start = np.datetime64("2026-10-01T00:00", "m")
    minute = 0
    rows = []
    for _ in range(draw(st.integers(0, 14))):
        minute += draw(st.sampled_from([60, 60, 60, 60, 120, 0, -60, 600, 30]))
        stamp = f"{start + np.timedelta64(minute, 'm')}Z"
        if draw(st.integers(0, 15)) == 0:
            stamp = draw(TIMESTAMPS)
        cells = [stamp] + [draw(st.sampled_from(["", "-5", "0.5", "1", "99", "102", "3"])
                                if draw(st.integers(0, 5)) else NUMBERS) for _ in optional]
        rows.append(",".join(cells[:1] + [draw(NUMBERS) if draw(st.integers(0, 5)) == 0 else
                                          draw(st.sampled_from(["-5", "-6.5", "", "-20"]))] + cells[1:]))
        if draw(st.integers(0, 12)) == 0:  # truncated line
            rows[-1] = rows[-1][: draw(st.integers(0, len(rows[-1])))]
    return "\n".join([",".join(header), *rows]) + "\n"


@st.composite
def csv_texts(draw) -> bytes:
    kind = draw(st.integers(0, 5))
    if kind == 0:  # random bytes
        return draw(st.binary(max_size=300))
    if kind >= 3:
        return draw(near_valid()).encode()
    sep = draw(st.sampled_from([",", ",", ";", "\t", " ", ",,"]))
    ncol = draw(st.integers(1, 5))
    header = draw(st.lists(st.sampled_from(NAMES), min_size=ncol, max_size=ncol))
    if draw(st.booleans()):
        header[:2] = ["time", "air_temperature"][: len(header)]
    rows = []
    for _ in range(draw(st.integers(0, 12))):
        cells = [draw(TIMESTAMPS)] + [draw(NUMBERS if kind != 2 else CELL) for _ in range(ncol - 1)]
        line = sep.join(cells)
        if draw(st.integers(0, 9)) == 0:  # truncated line
            line = line[: draw(st.integers(0, max(0, len(line))))]
        rows.append(line)
    comments = draw(st.lists(st.text(max_size=10).map(lambda s: "#" + s.replace("\n", " ")), max_size=2))
    newline = draw(st.sampled_from(["\n", "\r\n", "\r"]))
    return newline.join([*comments, sep.join(header), *rows]).encode("utf-8", "surrogatepass")


@settings(max_examples=120, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(data=csv_texts(), max_gap=st.sampled_from(["6h", "1h", 0, 36000.0]))
def test_malformed_csv_raises_only_input_error(data, max_gap):
    with tempfile.TemporaryDirectory() as folder:
        path = Path(folder) / "forcing.csv"
        path.write_bytes(data)
        with warnings.catch_warnings():
            warnings.simplefilter("ignore", ForcingWarning)
            try:
                ds = read_forcing(path, max_gap=max_gap)
            except InputError as err:
                assert "\n" not in str(err)
                assert str(err).startswith(f"{path}: ")
                return
    t = ds["time"].values.astype("int64")
    assert t.size >= 2 and np.all(np.diff(t) > 0)
    for var in ds.data_vars:
        values = ds[var].values
        assert values.dtype == np.float64 and np.isfinite(values).all(), var
        lo, hi = VARIABLES[var]["range"]
        assert values.min() >= lo and values.max() <= hi, var
