"""Tests of generator.ephemeris: Sun position against astropy, interpolation table.

Reference library: astropy 8.0.2 (installed in the test environment), run offline with its bundled
IERS tables. The site (37.2° N, 101.4° W) is fictional; only its coordinates matter.
"""

from __future__ import annotations

import math
import warnings

import numpy as np
import pytest

from generator.ephemeris import SunTable, sun_distance_au, sun_equatorial, sun_position
from generator.errors import ConfigError

LAT, LON = 37.2, -101.4  # fictional site
T_1990 = 631_152_000.0  # 1990-01-01T00:00:00Z (POSIX time)
T_2040 = 2_208_988_800.0  # 2040-01-01T00:00:00Z (POSIX time)
T_2031 = 1_924_992_000.0  # 2031-01-01T00:00:00Z (POSIX time)
DAY = 86_400.0


def _angle_deg(a: np.ndarray, b: np.ndarray) -> np.ndarray:
    """Angle between rows of two unit-vector arrays, stable for small angles."""
    return np.degrees(2.0 * np.arcsin(np.clip(np.linalg.norm(a - b, axis=1) / 2.0, 0.0, 1.0)))


@pytest.fixture(scope="module")
def astropy_reference():
    """Topocentric Sun direction (AltAz) and geocentric distance from astropy, 300 times."""
    units = pytest.importorskip("astropy.units")
    coords = pytest.importorskip("astropy.coordinates")
    from astropy.time import Time
    from astropy.utils import iers
    from astropy.utils.data import conf as data_conf

    iers.conf.auto_download = False
    data_conf.allow_internet = False
    iers.conf.auto_max_age = None  # dates past the bundled IERS-A table
    iers.conf.iers_degraded_accuracy = "warn"
    rng = np.random.default_rng(20240611)
    t = rng.uniform(T_1990, T_2040, 300)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        times = Time(t, format="unix", scale="utc")
        site = coords.EarthLocation(lat=LAT * units.deg, lon=LON * units.deg, height=0 * units.m)
        altaz = coords.get_body("sun", times, site).transform_to(
            coords.AltAz(obstime=times, location=site)
        )
        distance = coords.get_body("sun", times).distance.to(units.au).value
        gmst_h = times.sidereal_time("mean", "greenwich").hour
    alt = altaz.alt.rad
    az = altaz.az.rad
    enu = np.stack([np.cos(alt) * np.sin(az), np.cos(alt) * np.cos(az), np.sin(alt)], axis=1)
    return t, enu, distance, gmst_h


def test_direction_and_distance_vs_astropy(astropy_reference):
    # Tolerances from the brief: Michalsky (Solar Energy 40 (1988) 227) states ≈0.01° precision
    # for 1950-2050; 0.02° and 1e-4 AU leave margin over 1990-2040.
    t, enu, distance, _ = astropy_reference
    to_sun, cos_zenith, dist = sun_position(t, LAT, LON)
    angle = _angle_deg(to_sun, enu)
    assert angle.max() < 0.02, f"max {angle.max():.4f} deg at t={t[np.argmax(angle)]}"
    assert np.median(angle) < 0.01
    assert np.max(np.abs(dist - distance)) < 1e-4
    np.testing.assert_allclose(cos_zenith, enu[:, 2], atol=math.sin(math.radians(0.02)))
    np.testing.assert_allclose(np.linalg.norm(to_sun, axis=1), 1.0, atol=1e-12)


def test_gmst_vs_astropy(astropy_reference):
    # astropy mean sidereal time (IAU 2006 model); our linear USNO approximation uses UTC for UT1
    # (|UT1-UTC| < 0.9 s): tolerance 2 s of time, common practice, no source.
    t, _, _, gmst_h = astropy_reference
    from generator.ephemeris import _gmst_rad

    ours_h = _gmst_rad(t) * 12.0 / math.pi
    diff = (ours_h - gmst_h + 12.0) % 24.0 - 12.0
    assert np.max(np.abs(diff)) * 3600.0 < 2.0


# astropy 8.0.2, computed (table in the project's ephemeris reference note): topocentric Sun at
# latitude 46.0° N, longitude 7.0° E, height 0, and the Earth–Sun distance.
ASTROPY_TABLE = [
    # UTC, Unix seconds (POSIX), altitude deg, azimuth deg (N through E), distance AU
    ("2025-01-04T12:00:00", 1_735_992_000.0, 21.1381, 185.6735, 0.9833274),
    ("2025-03-20T09:00:00", 1_742_461_200.0, 32.2270, 130.7575, 0.9958888),
    ("2025-06-21T11:30:00", 1_750_505_400.0, 67.4235, 177.6977, 1.0162302),
    ("2025-07-04T18:00:00", 1_751_652_000.0, 12.3170, 290.1754, 1.0166419),
    ("2025-10-15T03:00:00", 1_760_497_200.0, -29.7266, 69.8751, 0.9972400),
]


@pytest.mark.parametrize(("utc", "t", "alt", "az", "dist"), ASTROPY_TABLE)
def test_reference_table(utc, t, alt, az, dist):
    to_sun, _, distance = sun_position(t, 46.0, 7.0)
    alt_r, az_r = math.radians(alt), math.radians(az)
    ref = np.array([[math.cos(alt_r) * math.sin(az_r), math.cos(alt_r) * math.cos(az_r),
                     math.sin(alt_r)]])
    assert _angle_deg(to_sun, ref)[0] < 0.02, utc
    assert abs(distance[0] - dist) < 1e-4, utc


def test_unix_times_of_table():
    # the Unix seconds in ASTROPY_TABLE follow from the POSIX definition (86400 s per day)
    import datetime as dt

    for utc, t, *_ in ASTROPY_TABLE:
        stamp = dt.datetime.fromisoformat(utc).replace(tzinfo=dt.UTC)
        assert stamp.timestamp() == t


def test_perihelion_aphelion_dates():
    # Perihelion in early January (≈ Jan 2-5), aphelion early July (≈ Jul 3-6): Astronomical
    # Almanac, from memory. Window Jan 1-7 / Jul 1-8.
    t = T_2031 + np.arange(0.0, 365 * DAY, 600.0)
    r = sun_distance_au(t)
    day_min = (t[np.argmin(r)] - T_2031) / DAY
    day_max = (t[np.argmax(r)] - T_2031) / DAY
    assert 0.0 <= day_min < 7.0
    assert 181.0 <= day_max < 189.0  # Jul 1 = day 181 in 2031 (non-leap year)
    # range of r with e ≈ 0.0167 (ephemeris reference note, from memory): 0.983-1.017 AU
    assert 0.983 < r.min() < 0.984 and 1.016 < r.max() < 1.0175


def test_equatorial_consistency():
    # δ = asin(sin ε sin λ) stays within ±ε (ε ≈ 23.44°, from memory); at the June solstice
    # 2025-06-21T02:42Z (from memory) δ ≈ +ε.
    t = T_2031 + np.arange(0.0, 365 * DAY, 3600.0)
    _, dec, _ = sun_equatorial(t)
    assert np.degrees(dec).max() == pytest.approx(23.44, abs=0.01)
    _, dec_solstice, _ = sun_equatorial(1_750_473_720.0)
    assert np.degrees(dec_solstice[0]) == pytest.approx(23.44, abs=0.01)


def test_noon_sun_is_south():
    # At the daily altitude maximum the Sun is on the meridian; for a site north of the Sun's
    # declination it is due south (spherical astronomy, common practice).
    t = T_2031 + 100 * DAY + np.arange(0.0, DAY, 10.0)
    to_sun, cos_zenith, _ = sun_position(t, LAT, LON)
    i = np.argmax(cos_zenith)
    assert abs(to_sun[i, 0]) < 1e-3  # east component ~0 (10 s of time = 0.04°)
    assert to_sun[i, 1] < 0.0  # pointing south


@pytest.fixture(scope="module")
def year_table():
    return SunTable(T_2031, T_2031 + 365 * DAY, LAT, LON, step_s=60.0)


def test_table_interpolation_error(year_table):
    # Bound (ω h)²/16 ≈ 6.9e-5° for h = 60 s (documented in SunTable); brief asks < 1e-3°.
    rng = np.random.default_rng(7)
    t = rng.uniform(year_table.t_start, year_table.t_stop, 20_000)
    nu, cos_zenith, dist = year_table.lookup(t)
    to_sun, cz_direct, d_direct = sun_position(t, LAT, LON)
    angle = _angle_deg(-nu, to_sun)
    assert angle.max() < 1e-3
    assert angle.max() < 1.2 * year_table.interpolation_error_bound_deg + 1e-5  # float32 rounding
    assert year_table.max_interpolation_error_deg < 1e-3
    np.testing.assert_allclose(np.linalg.norm(nu, axis=1), 1.0, atol=1e-12)
    np.testing.assert_allclose(cos_zenith, -nu[:, 2], atol=0)
    np.testing.assert_allclose(dist, d_direct, atol=1e-6)
    # mid-points, where linear interpolation is worst
    mid = year_table.t_start + (np.arange(0, year_table.n_nodes - 1, 37) + 0.5) * 60.0
    nu_mid, _, _ = year_table.lookup(mid)
    assert _angle_deg(-nu_mid, sun_position(mid, LAT, LON)[0]).max() < 1e-3


def test_table_nodes_and_edges(year_table):
    t = np.array([year_table.t_start, year_table.t_start + 60.0, year_table.t_stop])
    nu, _, _ = year_table.lookup(t)
    to_sun, _, _ = sun_position(t, LAT, LON)
    assert _angle_deg(-nu, to_sun).max() < 1e-5  # float32 storage only
    out = year_table.lookup(np.array([]))
    assert out[0].shape == (0, 3) and out[1].shape == (0,)
    nu1, cz1, d1 = year_table.lookup(year_table.t_start + 5.0)
    assert nu1.shape == (1, 3) and cz1.shape == (1,) and d1.shape == (1,)


@pytest.mark.parametrize(
    "bad", [T_2031 - 1.0, np.nan, T_2031 + 366 * DAY]
)
def test_lookup_out_of_range(year_table, bad):
    with pytest.raises(ConfigError, match="t_unix"):
        year_table.lookup(np.array([T_2031 + 10.0, bad]))


@pytest.mark.parametrize(
    ("kwargs", "word"),
    [
        ({"latitude_deg": 91.0}, "latitude_deg"),
        ({"latitude_deg": float("nan")}, "latitude_deg"),
        ({"longitude_deg": -200.0}, "longitude_deg"),
        ({"step_s": 0.0}, "step_s"),
        ({"step_s": 7200.0}, "step_s"),
        ({"t_stop": T_2031}, "t_start"),
    ],
)
def test_table_rejects_bad_settings(kwargs, word):
    args = {"t_start": T_2031, "t_stop": T_2031 + DAY, "latitude_deg": LAT, "longitude_deg": LON}
    args.update(kwargs)
    with pytest.raises(ConfigError, match=word):
        SunTable(**args)


def test_sun_position_rejects_bad_input():
    with pytest.raises(ConfigError, match="t_unix"):
        sun_position(np.array([0.0, np.inf]), LAT, LON)
    with pytest.raises(ConfigError, match="latitude_deg"):
        sun_position(0.0, -95.0, LON)


def test_deterministic(year_table):
    t = np.linspace(T_2031, T_2031 + 30 * DAY, 1001)
    a = year_table.lookup(t)
    b = year_table.lookup(t.copy())
    for x, y in zip(a, b, strict=True):
        np.testing.assert_array_equal(x, y)
