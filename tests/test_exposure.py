"""Tests of generator.exposure: time parsing, run lists, 1/r² time sampling, exposure integrals."""

from __future__ import annotations

import math
import os
import warnings

import numpy as np
import pytest
from scipy import stats

from generator.ephemeris import sun_distance_au, sun_position
from generator.errors import ConfigError, DataFileError
from generator.exposure import (
    MAX_UTC,
    MIN_UTC,
    Exposure,
    check_intervals,
    load_run_list,
    parse_utc,
    single_interval,
)

LAT, LON = 37.2, -101.4  # fictional site
DAY = 86_400.0
T_2031 = 1_924_992_000.0  # 2031-01-01T00:00:00Z (POSIX time)
#: Anomalistic year 365.259636 d (Astronomical Almanac, from memory); equals the period of the
#: mean anomaly in the Michalsky formula (360°/0.9856003° per day = 365.2596 d).
ANOMALISTIC_YEAR = 365.259636 * DAY
P_MIN = 1e-3  # KS acceptance threshold: a correct sampler fails 0.1% of seeds; seeds are fixed


# ---------------------------------------------------------------- parse_utc
@pytest.mark.parametrize(
    ("text", "expected"),
    [
        # POSIX time: 86400 s per day since 1970-01-01T00:00:00Z (IEEE Std 1003.1, "Seconds Since
        # the Epoch"); values cross-checked with astropy below.
        ("2030-01-01T00:00:00Z", 1_893_456_000.0),
        ("2030-01-01T00:00:00", 1_893_456_000.0),
        ("2030-01-01T00:00:00+00:00", 1_893_456_000.0),
        ("2030-01-01", 1_893_456_000.0),
        ("2030-01-01T00:00:01.5Z", 1_893_456_001.5),
        ("1970-01-01T00:00:00Z", 0.0),
        ("1900-01-01T00:00:00Z", MIN_UTC),
        ("2200-01-01T00:00:00Z", MAX_UTC),
    ],
)
def test_parse_utc(text, expected):
    assert parse_utc(text, "run.start") == expected


def test_parse_utc_matches_astropy():
    from astropy.time import Time

    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        for text in ("2030-01-01T00:00:00", "1999-12-31T23:59:59", "2150-06-30T12:00:00"):
            assert parse_utc(text, "k") == pytest.approx(Time(text, scale="utc").unix, abs=1e-6)


@pytest.mark.parametrize(
    "text",
    ["yesterday", "2030-13-01T00:00:00", "2030-01-01T25:00:00", "", "1899-12-31T23:59:59Z",
     "2200-01-01T00:00:01Z", "2030-01-01T00:00:00+01:00", 1893456000],
)
def test_parse_utc_rejects(text):
    with pytest.raises(ConfigError, match="exposure.start_utc"):
        parse_utc(text, "exposure.start_utc")


def test_single_interval():
    iv = single_interval("2030-01-01T00:00:00Z", "2030-01-02T00:00:00Z")
    assert iv.shape == (1, 2) and iv[0, 1] - iv[0, 0] == DAY
    with pytest.raises(ConfigError, match="stop_utc"):
        single_interval("2030-01-02T00:00:00Z", "2030-01-01T00:00:00Z")


# ---------------------------------------------------------------- run lists
GOOD = """# fictional detector, test run list
start_utc,stop_utc
2030-01-01T00:00:00Z,2030-01-01T08:00:00Z

2030-01-01T08:00:00Z,2030-01-02T00:00:00Z
2030-01-05T12:30:00,2030-01-06T12:30:00
"""


def _write(tmp_path, text, name="runs.csv"):
    path = tmp_path / name
    path.write_text(text, encoding="utf-8")
    return path


def test_load_run_list(tmp_path):
    runs = load_run_list(_write(tmp_path, GOOD))
    base = parse_utc("2030-01-01T00:00:00Z", "k")
    np.testing.assert_array_equal(
        runs - base,
        [[0, 8 * 3600], [8 * 3600, DAY], [4 * DAY + 12.5 * 3600, 5 * DAY + 12.5 * 3600]],
    )
    assert runs.dtype == np.float64 and not runs.flags.writeable


HEADER = "start_utc,stop_utc\n"
BAD_FILES = {
    "overlap": (HEADER + "2030-01-01T00:00:00,2030-01-02T00:00:00\n"
                "2030-01-01T12:00:00,2030-01-03T00:00:00\n", "line 3", "overlaps"),
    "unsorted": (HEADER + "2030-01-05T00:00:00,2030-01-06T00:00:00\n"
                 "2030-01-01T00:00:00,2030-01-02T00:00:00\n", "line 3", "sorted"),
    "start_equals_stop": (HEADER + "2030-01-01T00:00:00,2030-01-01T00:00:00\n", "line 2",
                          "not before"),
    "start_after_stop": (HEADER + "2030-01-02T00:00:00,2030-01-01T00:00:00\n", "line 2",
                         "not before"),
    "bad_date": (HEADER + "2030-02-30T00:00:00,2030-03-01T00:00:00\n", "line 2", "start_utc"),
    "missing_column": (HEADER + "2030-01-01T00:00:00\n", "line 2", "1 columns"),
    "extra_column": (HEADER + "2030-01-01T00:00:00,2030-01-02T00:00:00,x\n", "line 2",
                     "3 columns"),
    "empty": ("", "runs.csv", "empty"),
    "header_only": (HEADER, "runs.csv", "no runs"),
    "wrong_header": ("begin,end\n2030-01-01T00:00:00,2030-01-02T00:00:00\n", "line 1", "header"),
    "before_1900": (HEADER + "1899-06-01T00:00:00,1900-06-01T00:00:00\n", "line 2", "range"),
    "after_2200": (HEADER + "2199-06-01T00:00:00,2200-06-01T00:00:00\n", "line 2", "range"),
}


@pytest.mark.parametrize("case", sorted(BAD_FILES))
def test_load_run_list_rejects(tmp_path, case):
    text, where, problem = BAD_FILES[case]
    path = _write(tmp_path, text)
    with pytest.raises(DataFileError) as info:
        load_run_list(path)
    message = str(info.value)
    assert "runs.csv" in message and where in message and problem in message, message


def test_load_run_list_unreadable(tmp_path):
    with pytest.raises(DataFileError, match="missing.csv"):
        load_run_list(tmp_path / "missing.csv")
    with pytest.raises(DataFileError, match="is a folder"):
        load_run_list(tmp_path)  # a directory
    binary = tmp_path / "binary.csv"
    binary.write_bytes(b"\xff\xfe\x00start")
    with pytest.raises(DataFileError, match="binary.csv"):
        load_run_list(binary)
    if hasattr(os, "geteuid") and os.geteuid() != 0:
        locked = _write(tmp_path, GOOD, "locked.csv")
        locked.chmod(0)
        with pytest.raises(DataFileError, match="locked.csv"):
            load_run_list(locked)


@pytest.mark.parametrize(
    "intervals",
    [np.zeros((0, 2)), np.array([1.0, 2.0]), np.array([[2.0, 1.0]]), np.array([[0.0, np.nan]]),
     np.array([[0.0, 10.0], [5.0, 20.0]]), np.array([[MIN_UTC - 1.0, 0.0]]), "abc"],
)
def test_check_intervals_rejects(intervals):
    with pytest.raises(ConfigError, match="intervals"):
        check_intervals(intervals)


# ---------------------------------------------------------------- exposure
@pytest.fixture(scope="module")
def year():
    return Exposure(np.array([[T_2031, T_2031 + ANOMALISTIC_YEAR]]), LAT, LON)


def test_mean_inverse_r2_full_year(year):
    # ⟨(a/r)²⟩ over a Kepler orbit = 1/√(1−e²); with a = 1.000001 AU and e = 0.0167 (from memory,
    # project ephemeris note [C]) ⟨(1 AU/r)²⟩ ≈ 1.00014. Tolerance 1e-4 (brief).
    assert year.mean_inverse_r2 == pytest.approx(1.00014, abs=1e-4)
    assert year.live_seconds == pytest.approx(ANOMALISTIC_YEAR, rel=1e-12)
    # independent evaluation: trapezoid rule on a 10-minute grid
    t = np.linspace(T_2031, T_2031 + ANOMALISTIC_YEAR, 52_597)
    assert year.mean_inverse_r2 == pytest.approx(
        np.trapezoid(sun_distance_au(t) ** -2, t) / ANOMALISTIC_YEAR, rel=1e-9
    )


def _expected_cdf(intervals: np.ndarray):
    """Reference CDF of times ∝ 1/r² on live periods: cumulative trapezoid on a 5-minute grid,
    independent of the sampler's 1-hour mid-point cells."""
    grids = [np.linspace(a, b, max(2, int((b - a) / 300.0) + 1)) for a, b in intervals]
    cums, total = [], 0.0
    for g in grids:
        w = sun_distance_au(g) ** -2
        c = np.concatenate(([0.0], np.cumsum(0.5 * (w[1:] + w[:-1]) * np.diff(g)))) + total
        total = c[-1]
        cums.append(c)
    t_all = np.concatenate(grids)
    c_all = np.concatenate(cums) / total
    return lambda t: np.interp(t, t_all, c_all)


def test_sample_times_ks_full_year(year):
    # KS test of the day-of-year distribution against the 1/r² weighted expectation, p > 1e-3.
    # Power: the unweighted (uniform) law differs from the weighted one by up to e/π ≈ 0.0053 in
    # CDF (∫(1 + 2e cos M) dM/2π, e ≈ 0.0167 from memory), which 4e5 draws reject
    # (expected D√n ≈ 3.4, p ~ 1e-10): checked below, so the test can tell the two apart.
    rng = np.random.default_rng(12345)
    t = year.sample_times(rng, 400_000)
    assert np.all((t >= T_2031) & (t <= T_2031 + ANOMALISTIC_YEAR))
    cdf = _expected_cdf(year.intervals)
    assert stats.kstest(t, cdf).pvalue > P_MIN
    uniform = stats.kstest(t, stats.uniform(T_2031, ANOMALISTIC_YEAR).cdf)
    assert uniform.pvalue < 1e-4
    # more events near perihelion (early January) than near aphelion (early July)
    day = (t - T_2031) / DAY
    jan = np.count_nonzero(day < 30)
    jul = np.count_nonzero((day >= 180) & (day < 210))
    assert jan > jul


@pytest.fixture(scope="module")
def gappy():
    # run list with gaps of varied length, a short run and touching runs
    start = T_2031 + 40 * DAY
    rel = np.array([[0, 3.2], [5, 40.75], [40.75, 41], [100, 100.01], [150, 300], [301, 330]])
    return Exposure(start + rel * DAY, LAT, LON)


@pytest.mark.parametrize("ordered", [False, True])
def test_sample_times_run_list(gappy, ordered):
    rng = np.random.default_rng(777)
    t = gappy.sample_times(rng, 100_000, ordered=ordered)
    iv = gappy.intervals
    k = np.searchsorted(iv[:, 0], t, side="right") - 1
    inside = (k >= 0) & (t <= iv[np.maximum(k, 0), 1])
    assert np.all(inside), t[~inside][:10]
    assert stats.kstest(t, _expected_cdf(iv)).pvalue > P_MIN
    if ordered:
        assert np.all(np.diff(t) >= 0)
    assert gappy.live_seconds == pytest.approx(np.sum(iv[:, 1] - iv[:, 0]))


def test_sample_times_reproducible(gappy):
    a = gappy.sample_times(np.random.default_rng(3), 1000)
    b = gappy.sample_times(np.random.default_rng(3), 1000)
    np.testing.assert_array_equal(a, b)
    assert gappy.sample_times(np.random.default_rng(3), 0).shape == (0,)
    with pytest.raises(ConfigError, match="n = -1"):
        gappy.sample_times(np.random.default_rng(3), -1)


def test_sun_delegates(gappy):
    t = gappy.sample_times(np.random.default_rng(5), 2000)
    nu, cos_zenith, dist = gappy.sun(t)
    to_sun, cz, d = sun_position(t, LAT, LON)
    np.testing.assert_allclose(nu, -to_sun, atol=2e-5)  # 1e-3° = 1.7e-5 rad
    np.testing.assert_allclose(cos_zenith, cz, atol=2e-5)
    np.testing.assert_allclose(dist, d, atol=1e-6)


def test_zenith_exposure_total_and_night_fraction(year):
    # Kepler's second law, r² dλ/dt = const (from memory, any mechanics text): the 1/r²-weighted
    # time is uniform in ecliptic longitude λ, and λ, λ+180° have opposite declinations whose
    # geometric day lengths sum to 24 h. Hence over a full orbit the weighted exposure is split
    # equally between day and night at any latitude. Tolerance 1e-3 covers the daily motion of
    # the Sun and the ~0.25 d left over from whole days (common practice, no source).
    total = year.live_seconds * year.mean_inverse_r2
    night, day = year.zenith_exposure([-1.0, 0.0, 1.0])
    assert night + day == pytest.approx(total, rel=1e-9)
    assert night / total == pytest.approx(0.5, abs=1e-3)
    fine = year.zenith_exposure(np.linspace(-1.0, 1.0, 41))
    assert fine.sum() == pytest.approx(total, rel=1e-9)
    # cos θz ≤ cos(|φ − δ|min): the Sun never reaches the zenith at 37.2° N (δ ≤ 23.44°)
    assert np.all(fine[np.linspace(-1, 1, 41)[:-1] >= math.cos(math.radians(37.2 - 23.5))] == 0)


def test_zenith_exposure_brute_force(gappy):
    # Independent evaluation: direct formula on a 10-second grid over three days of live time.
    iv = np.array([[T_2031 + 10 * DAY, T_2031 + 11.5 * DAY], [T_2031 + 12 * DAY,
                                                                T_2031 + 13.5 * DAY]])
    exp3 = Exposure(iv, LAT, LON)
    edges = np.linspace(-1.0, 1.0, 11)
    ours = exp3.zenith_exposure(edges)
    ref = np.zeros(10)
    for a, b in iv:
        mid = np.arange(a + 5.0, b, 10.0)
        _, cz, d = sun_position(mid, LAT, LON)
        ref += np.histogram(cz, bins=edges, weights=10.0 / d**2)[0]
    # Mid-point histogramming misplaces ≤ half a cell per bin-edge crossing (30 s for 60 s cells,
    # 5 s for the 10 s reference). Each bin has 2 edges, each crossed ≤ 2 times per day, over 3
    # days: ≤ 12 crossings x 35 s x (1/r² ≤ 1.035) bounds the difference (common practice).
    np.testing.assert_allclose(ours, ref, atol=12 * 35.0 * 1.035)
    assert ours.sum() == pytest.approx(ref.sum(), rel=1e-6)


@pytest.mark.parametrize(
    "edges", [[0.0], [0.5, 0.0], [[-1.0, 1.0]], [-1.0, np.nan, 1.0], [0.0, 0.0, 1.0]]
)
def test_zenith_exposure_rejects(gappy, edges):
    with pytest.raises(ConfigError, match="cos_zenith_edges"):
        gappy.zenith_exposure(edges)


def test_exposure_rejects_bad_settings():
    with pytest.raises(ConfigError, match="cdf_step_s"):
        Exposure(np.array([[T_2031, T_2031 + DAY]]), LAT, LON, cdf_step_s=0.0)
    with pytest.raises(ConfigError, match="latitude_deg"):
        Exposure(np.array([[T_2031, T_2031 + DAY]]), 100.0, LON)
    with pytest.raises(ConfigError, match="intervals"):
        Exposure(np.array([[T_2031 + DAY, T_2031]]), LAT, LON)
