"""Tests of freezing degree days and the classical growth laws."""

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from icecolumn import growth_laws as gl
from icecolumn.errors import InputError

HOUR = np.timedelta64(1, "h")


def _hourly(days, start="2024-01-01T00:00"):
    """Hourly times from start to start + days, both ends included."""
    t0 = np.datetime64(start, "ns")
    return t0 + np.arange(24 * days + 1) * HOUR


# ---------------------------------------------------------------------------
# Daily means
# ---------------------------------------------------------------------------


def test_daily_mean_of_linear_ramp_is_midday_value():
    # A linear series is reproduced exactly by linear interpolation, so the
    # interval mean of each day is its value at 12:00 (common practice, no
    # source).  Samples are irregular and do not fall on midnight.
    rng = np.random.default_rng(1)
    t0 = np.datetime64("2024-01-01T00:00", "ns")
    offsets_s = np.sort(rng.uniform(0, 5 * 86400, 200))
    offsets_s = np.concatenate([[0.0], offsets_s, [5 * 86400.0]])
    t = t0 + (offsets_s * 1e9).astype("int64").astype("timedelta64[ns]")
    temp = -5.0 - 0.2 * offsets_s / 86400.0
    day, mean, cov = gl.daily_mean_temperature(t, temp)
    assert day.dtype == np.dtype("datetime64[D]")
    assert list(day) == list(np.arange("2024-01-01", "2024-01-06", dtype="datetime64[D]"))
    expected = -5.0 - 0.2 * (np.arange(5) + 0.5)
    np.testing.assert_allclose(mean, expected, rtol=0, atol=1e-9)
    np.testing.assert_allclose(cov, 1.0, atol=1e-12)


def test_daily_mean_is_interval_mean_not_sampling():
    # One warm hour: 0 degC except +24 degC at 12:00 of day 1, hourly samples.
    # Trapezoid of the linear interpolant: triangle area 24 K * 1 h = 24 K h,
    # mean = 24 / 24 = 1 degC (hand arithmetic).
    t = _hourly(1)
    temp = np.zeros(t.size)
    temp[12] = 24.0
    _, mean, cov = gl.daily_mean_temperature(t, temp)
    assert mean.shape == (1,)
    assert mean[0] == pytest.approx(1.0, abs=1e-12)
    assert cov[0] == pytest.approx(1.0)


def test_partial_day_coverage():
    t = np.datetime64("2024-01-01T12:00", "ns") + np.arange(49) * HOUR  # to day 3 12:00
    day, mean, cov = gl.daily_mean_temperature(t, np.full(t.size, -4.0))
    assert day.size == 3
    np.testing.assert_allclose(cov, [0.5, 1.0, 0.5])
    np.testing.assert_allclose(mean, -4.0)


def test_series_ending_at_midnight_adds_no_empty_day():
    day, _, cov = gl.daily_mean_temperature(_hourly(2), np.full(49, -1.0))
    assert day.size == 2
    assert np.all(cov > 0)


# ---------------------------------------------------------------------------
# Freezing degree days
# ---------------------------------------------------------------------------


@pytest.mark.parametrize("base", [0.0, -1.8])
def test_fdd_constant_forcing(base):
    # 30 days at -10 degC: FDD = 30 * (base + 10) K day
    # (definition of FDD, common practice, no source).
    t = _hourly(30)
    day, fdd = gl.freezing_degree_days(t, np.full(t.size, -10.0), base=base)
    assert day.size == 30
    assert day[0] == np.datetime64("2024-01-01", "D")
    assert fdd[-1] == pytest.approx(30 * (base + 10.0), rel=1e-12)
    np.testing.assert_allclose(fdd, (np.arange(30) + 1) * (base + 10.0), rtol=1e-12)


@pytest.mark.parametrize("base", [0.0, -1.8])
def test_fdd_diurnal_cycle_equals_constant(base):
    t = _hourly(30)
    hours = np.arange(t.size)
    temp = -10.0 + 6.0 * np.sin(2 * np.pi * hours / 24.0)
    _, fdd = gl.freezing_degree_days(t, temp, base=base)
    assert fdd[-1] == pytest.approx(30 * (base + 10.0), rel=1e-6)


def test_fdd_warm_forcing_gives_zero():
    t = _hourly(10)
    hours = np.arange(t.size)
    temp = 2.0 + 1.5 * np.sin(2 * np.pi * hours / 24.0)  # always above 0 degC
    _, fdd = gl.freezing_degree_days(t, temp, base=0.0)
    assert np.all(fdd == 0.0)


def test_fdd_clips_daily_mean_not_samples():
    # Day mean +1 degC with cold nights: no degree days, though samples dip below 0.
    t = _hourly(1)
    temp = 1.0 + 5.0 * np.sin(2 * np.pi * np.arange(t.size) / 24.0)
    assert temp.min() < 0
    _, fdd = gl.freezing_degree_days(t, temp, base=0.0)
    assert fdd[-1] == 0.0


def test_fdd_non_uniform_sampling():
    # 10 days 3-hourly, then 10 days hourly, same diurnal cycle averaging -10 degC.
    t0 = np.datetime64("2024-01-01T00:00", "ns")
    h3 = np.arange(0, 240, 3)
    h1 = np.arange(240, 480 + 1)
    hours = np.concatenate([h3, h1])
    t = t0 + hours * HOUR
    temp = -10.0 + 6.0 * np.sin(2 * np.pi * hours / 24.0)
    _, fdd = gl.freezing_degree_days(t, temp, base=0.0)
    assert fdd.size == 20
    assert fdd[-1] == pytest.approx(200.0, rel=1e-6)


def test_fdd_partial_days_weighted_by_coverage():
    # 12:00 day 1 to 12:00 day 3 at -10 degC: 0.5*10 + 10 + 0.5*10 = 20 K day.
    t = np.datetime64("2024-01-01T12:00", "ns") + np.arange(49) * HOUR
    _, fdd = gl.freezing_degree_days(t, np.full(t.size, -10.0))
    np.testing.assert_allclose(fdd, [5.0, 15.0, 20.0])


def test_cumulative_fdd_at():
    t = _hourly(5)
    temp = np.full(t.size, -10.0)
    q = np.array(["2024-01-01T00:00", "2024-01-01T06:00", "2024-01-03T12:00",
                  "2024-01-06T00:00"], dtype="datetime64[ns]")
    got = gl.cumulative_fdd_at(q, t, temp, base=0.0)
    # constant rate 10 K day per day: 0, 2.5, 25, 50
    np.testing.assert_allclose(got, [0.0, 2.5, 25.0, 50.0], atol=1e-9)
    with pytest.raises(InputError):
        gl.cumulative_fdd_at(np.array(["2024-01-07"], dtype="datetime64[ns]"), t, temp)


def test_cumulative_fdd_knots_start_at_zero():
    t = np.datetime64("2024-01-01T06:00", "ns") + np.arange(43) * HOUR
    kt, fdd = gl.cumulative_fdd_knots(t, np.full(t.size, -8.0), base=0.0)
    assert kt[0] == t[0] and fdd[0] == 0.0
    assert kt[1] == np.datetime64("2024-01-02T00:00", "ns")
    assert kt[-1] == t[-1]
    assert fdd[-1] == pytest.approx(8.0 * 42 / 24)


@pytest.mark.parametrize(
    "time, temp",
    [
        (np.array(["2024-01-01", "2024-01-01"], dtype="datetime64[ns]"), [-1.0, -2.0]),
        (np.array(["2024-01-01", "2024-01-02"], dtype="datetime64[ns]"), [-1.0]),
        (np.array(["2024-01-01"], dtype="datetime64[ns]"), [-1.0]),
        (np.array(["2024-01-01", "2024-01-02"], dtype="datetime64[ns]"), [-1.0, np.nan]),
        (np.array(["2024-01-01", "2024-01-02"], dtype="datetime64[ns]"), [263.0, 260.0]),
    ],
)
def test_bad_forcing_raises_input_error(time, temp):
    with pytest.raises(InputError) as err:
        gl.freezing_degree_days(time, temp)
    assert "\n" not in str(err.value)


@settings(max_examples=30, deadline=None)
@given(st.lists(st.floats(-40, 5), min_size=3, max_size=60),
       st.floats(-3.0, 0.0))
def test_fdd_is_monotone_and_bounded(temps, base):
    t = np.datetime64("2024-01-01T00:00", "ns") + np.arange(len(temps)) * 5 * HOUR
    _, fdd = gl.freezing_degree_days(t, np.array(temps), base=base)
    assert np.all(np.diff(fdd) >= -1e-12)
    span_days = 5 * (len(temps) - 1) / 24
    assert fdd[-1] <= span_days * max(0.0, base - min(temps)) + 1e-9


# ---------------------------------------------------------------------------
# Growth laws: check values evaluated by hand from the published formulas
# ---------------------------------------------------------------------------


def test_lebedev_check_values():
    # Lebedev (1938), Problemy Arktiki 5: h[cm] = 1.33 theta^0.58
    # (formula checked via a secondary source; citation details from memory).
    # 1000^0.58 = 10^1.74 = 54.954 -> 1.33 * 54.954 = 73.09 -> 73.1 cm
    # 4000^0.58 = 10^(0.58*3.60206) = 10^2.08919 = 122.80 -> 163.3 cm
    assert round(gl.lebedev(1000.0) * 100, 1) == 73.1
    assert round(gl.lebedev(4000.0) * 100, 1) == 163.3


def test_anderson_check_values():
    # Anderson (1961), J. Glaciol. 3(30), 1170-1172: h^2 + 5.1 h = 6.7 theta,
    # h in cm (constants from memory).
    # theta=1000: h = (-5.1 + sqrt(26.01 + 26800)) / 2 = (-5.1 + 163.79) / 2 = 79.3
    # theta=4000: h = (-5.1 + sqrt(26.01 + 107200)) / 2 = (-5.1 + 327.45) / 2 = 161.2
    assert round(gl.anderson(1000.0) * 100, 1) == 79.3
    assert round(gl.anderson(4000.0) * 100, 1) == 161.2


def test_zubov_check_values():
    # Zubov (1945), L'dy Arktiki: h^2 + 50 h = 8 theta, h in cm
    # (formula checked via a secondary source).
    # theta=1000: h = (-50 + sqrt(2500 + 32000)) / 2 = (-50 + 185.74) / 2 = 67.9
    # theta=4000: h = (-50 + sqrt(2500 + 128000)) / 2 = (-50 + 361.25) / 2 = 155.6
    assert round(gl.zubov(1000.0) * 100, 1) == 67.9
    assert round(gl.zubov(4000.0) * 100, 1) == 155.6


def test_stefan_check_values():
    # Stefan (1891): h = sqrt(2 k theta 86400 / (rho L)), k = 2.2, rho = 917,
    # L = 334e3 (common practice, no source).
    # 2 * 2.2 * 86400 / (917 * 334e3) = 380160 / 306278000 = 1.24122e-3 m2/(K day)
    # theta=1000: sqrt(1.24122) = 1.1141 -> 1.114 m; theta=4000: 2.228 m
    assert round(float(gl.stefan(1000.0)), 3) == 1.114
    assert round(float(gl.stefan(4000.0)), 3) == 2.228


def test_stefan_surface_resistance():
    # h^2 + 2 (k/H) h = 2 k theta 86400 / (rho L) (derived in stefan's docstring).
    theta = np.array([10.0, 500.0, 3000.0])
    k, rho, lat, hcoef = 2.2, 917.0, 334e3, 20.0
    h = gl.stefan(theta, k, rho, lat, surface_coefficient=hcoef)
    lhs = h**2 + 2 * (k / hcoef) * h
    rhs = 2 * k * theta * 86400 / (rho * lat)
    np.testing.assert_allclose(lhs, rhs, rtol=1e-12)
    assert np.all(h < gl.stefan(theta))
    # a huge H recovers plain Stefan
    np.testing.assert_allclose(gl.stefan(theta, surface_coefficient=1e12),
                               gl.stefan(theta), rtol=1e-9)


def test_laws_are_zero_at_zero_and_increasing():
    theta = np.linspace(0, 5000, 101)
    for name, law in gl.LAWS.items():
        h = law(theta)
        assert h[0] == 0.0, name
        assert np.all(np.diff(h) > 0), name


def test_negative_fdd_raises():
    with pytest.raises(InputError):
        gl.lebedev(-1.0)
    with pytest.raises(InputError):
        gl.stefan(100.0, surface_coefficient=0.0)


def test_power_law():
    assert gl.power_law(100.0, 0.02, 0.5) == pytest.approx(0.2)


def test_fit_power_law_recovers_parameters_and_ignores_nonpositive_fdd():
    theta = np.concatenate([[0.0, -5.0], np.linspace(50, 3000, 40)])
    h = 0.02 * np.abs(theta) ** 0.55
    h[:2] = 5.0  # would spoil the fit if used
    a, b, cov = gl.fit_power_law(theta, h)
    assert a == pytest.approx(0.02, rel=1e-6)
    assert b == pytest.approx(0.55, rel=1e-6)
    assert cov.shape == (2, 2)
    with pytest.raises(InputError):
        gl.fit_power_law([0.0, 10.0, 20.0], [0.0, 0.1, 0.2])


def test_registry_and_bases():
    assert set(gl.LAWS) == {"stefan", "lebedev", "anderson", "zubov"}
    assert set(gl.LAW_BASE_TEMPERATURE) == set(gl.LAWS)
    # Lebedev 0 degC (checked, secondary source); Anderson -1.8 degC (from
    # memory); Zubov 0 degC, sum of negative air temperatures (checked,
    # secondary source); Stefan: the water's freezing point, given by caller.
    assert gl.LAW_BASE_TEMPERATURE["stefan"] is None
    assert gl.LAW_BASE_TEMPERATURE["lebedev"] == 0.0
    assert gl.LAW_BASE_TEMPERATURE["anderson"] == -1.8
    assert gl.LAW_BASE_TEMPERATURE["zubov"] == 0.0


@pytest.mark.parametrize("name", ["stefan", "lebedev", "anderson", "zubov"])
def test_inverse_round_trip(name):
    h = np.array([0.0, 0.05, 0.4, 1.2, 2.5])
    theta = gl.fdd_for_thickness(name, h)
    np.testing.assert_allclose(gl.LAWS[name](theta), h, rtol=1e-10, atol=1e-14)


def test_inverse_stefan_with_surface_coefficient():
    h = np.array([0.1, 1.0])
    theta = gl.fdd_for_thickness("stefan", h, surface_coefficient=15.0)
    np.testing.assert_allclose(gl.stefan(theta, surface_coefficient=15.0), h, rtol=1e-10)


@pytest.mark.parametrize("name", ["stefan", "lebedev", "anderson", "zubov"])
def test_thickness_from_initial_thickness(name):
    h0 = 0.3
    theta = np.array([0.0, 100.0, 1000.0])
    h = gl.thickness_from(name, theta, initial_thickness=h0)
    assert h[0] == pytest.approx(h0, rel=1e-12)
    assert np.all(np.diff(h) > 0)
    # offset by the degree days the law needs to reach h0
    off = gl.fdd_for_thickness(name, h0)
    np.testing.assert_allclose(h, gl.LAWS[name](theta + off), rtol=1e-14)
    # started from zero it is the plain law
    np.testing.assert_allclose(gl.thickness_from(name, theta), gl.LAWS[name](theta))


def test_thickness_from_rejects_bad_names_and_kwargs():
    with pytest.raises(InputError):
        gl.thickness_from("nolaw", 10.0)
    with pytest.raises(InputError):
        gl.thickness_from("zubov", 10.0, conductivity=2.0)
    with pytest.raises(InputError):
        gl.thickness_from("lebedev", 10.0, initial_thickness=-0.1)
