"""Position of the Sun seen from the detector, and a fast interpolation table.

Detector frame: x = east, y = north, z = up (local east–north–up, ENU, at the site; the same
frame as :mod:`generator.geometry`). Times are UTC seconds since the Unix epoch (float64). UTC is
used in place of UT1 and TT: the differences (< 0.9 s and ≈ 70 s) move the Sun by < 0.001°,
far below the accuracy of the formulas.

Solar coordinates
    Low-precision formulas for the Sun of the Astronomical Almanac (section C), as published
    with an accuracy study by J. J. Michalsky, "The Astronomical Almanac's algorithm for
    approximate solar position (1950–2050)", Solar Energy 40 (1988) 227: stated precision
    ≈ 0.01° in right ascension and declination for 1950–2050. Coefficients from memory of that
    algorithm; the test suite checks the result against astropy (0.0035° median difference,
    < 0.02° maximum over 1990–2040).
Sidereal time
    Greenwich mean sidereal time in the USNO / Astronomical Almanac linear approximation
    GMST = 18.697374558 h + 24.06570982441908 h × D, D = days from J2000.0 (UT1); error
    ≈ 0.1 s per century (from memory; checked through the astropy comparison).
Horizontal coordinates
    Standard spherical-astronomy rotation from (hour angle, declination) to (azimuth,
    altitude) at geodetic latitude φ, e.g. Astronomical Almanac section B; parallax (8.8″)
    and refraction (neutrinos are not refracted) are ignored.
"""

from __future__ import annotations

import math

import numpy as np

from .cache import CacheRejected, cached_arrays, code_key
from .errors import ConfigError

__all__ = [
    "J2000_UNIX_S",
    "SunTable",
    "sun_distance_au",
    "sun_equatorial",
    "sun_position",
]

#: Unix time of the J2000.0 epoch, 2000-01-01T12:00:00 (taken as UTC; JD 2451545.0).
J2000_UNIX_S: float = 946_728_000.0

#: Seconds per day.
_DAY_S = 86_400.0

#: Mean angular speed of the Earth's rotation relative to the Sun direction, rad/s
#: (one sidereal day; used only for the documented interpolation bound).
_OMEGA_EARTH = 2.0 * math.pi / 86_164.0905

_DEG = math.pi / 180.0


def _days_from_j2000(t_unix: np.ndarray) -> np.ndarray:
    """Days since J2000.0, formed from a Unix-time offset to keep float64 precision."""
    return (np.asarray(t_unix, dtype=np.float64) - J2000_UNIX_S) / _DAY_S


def _check_site(latitude_deg: float, longitude_deg: float) -> tuple[float, float]:
    """Validate a site's geodetic latitude and longitude (degrees)."""
    lat = float(latitude_deg)
    lon = float(longitude_deg)
    if not (math.isfinite(lat) and -90.0 <= lat <= 90.0):
        raise ConfigError(f"latitude_deg = {latitude_deg!r}: must be a number in [-90, 90] degrees")
    if not (math.isfinite(lon) and -180.0 <= lon <= 360.0):
        raise ConfigError(
            f"longitude_deg = {longitude_deg!r}: must be a number in [-180, 360] degrees "
            "(east positive)"
        )
    return lat, lon


def _check_times(t_unix: np.ndarray | float) -> np.ndarray:
    """Return times as a 1-d float64 array; reject non-finite values."""
    t = np.atleast_1d(np.asarray(t_unix, dtype=np.float64))
    if t.ndim != 1:
        raise ConfigError(f"t_unix: expected a scalar or 1-d array, got shape {t.shape}")
    if t.size and not np.all(np.isfinite(t)):
        raise ConfigError("t_unix: contains NaN or infinite times; finite Unix seconds required")
    return t


def sun_equatorial(t_unix: np.ndarray | float) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Apparent geocentric right ascension, declination and distance of the Sun.

    Astronomical Almanac low-precision formulas (Michalsky, Solar Energy 40 (1988) 227):
    with n = days from J2000.0,
    L = 280.460° + 0.9856474° n (mean longitude, aberration included),
    g = 357.528° + 0.9856003° n (mean anomaly),
    λ = L + 1.915° sin g + 0.020° sin 2g, β = 0, ε = 23.439° − 0.0000004° n,
    R = 1.00014 − 0.01671 cos g − 0.00014 cos 2g AU,
    α = atan2(cos ε sin λ, cos λ), δ = asin(sin ε sin λ).

    Parameters
    ----------
    t_unix : ndarray, shape (n,), or float
        UTC seconds since the Unix epoch.

    Returns
    -------
    ra_rad : ndarray, shape (n,)
        Right ascension in radians, in (−π, π].
    dec_rad : ndarray, shape (n,)
        Declination in radians.
    distance_au : ndarray, shape (n,)
        Earth–Sun distance in astronomical units.
    """
    n = _days_from_j2000(_check_times(t_unix))
    mean_lon = np.remainder(280.460 + 0.9856474 * n, 360.0) * _DEG
    g = _mean_anomaly(n)
    sin_g = np.sin(g)
    cos_g = np.cos(g)
    sin_2g = 2.0 * sin_g * cos_g
    ecl_lon = mean_lon + (1.915 * sin_g + 0.020 * sin_2g) * _DEG
    obliquity = (23.439 - 4.0e-7 * n) * _DEG
    sin_l = np.sin(ecl_lon)
    ra = np.arctan2(np.cos(obliquity) * sin_l, np.cos(ecl_lon))
    dec = np.arcsin(np.sin(obliquity) * sin_l)
    return ra, dec, _distance_au(cos_g)


def sun_distance_au(t_unix: np.ndarray | float) -> np.ndarray:
    """Earth–Sun distance (same formula as :func:`sun_equatorial`), cheaper.

    Parameters
    ----------
    t_unix : ndarray, shape (n,), or float
        UTC seconds since the Unix epoch.

    Returns
    -------
    ndarray, shape (n,)
        R = 1.00014 − 0.01671 cos g − 0.00014 cos 2g in AU (Michalsky 1988).
    """
    n = _days_from_j2000(_check_times(t_unix))
    return _distance_au(np.cos(_mean_anomaly(n)))


def _mean_anomaly(n: np.ndarray) -> np.ndarray:
    """Mean anomaly g = 357.528° + 0.9856003° n in radians (Michalsky 1988), n days from J2000."""
    return np.remainder(357.528 + 0.9856003 * n, 360.0) * _DEG


def _distance_au(cos_g: np.ndarray) -> np.ndarray:
    """R = 1.00014 − 0.01671 cos g − 0.00014 cos 2g in AU (Michalsky 1988)."""
    return 1.00014 - 0.01671 * cos_g - 0.00014 * (2.0 * cos_g * cos_g - 1.0)


def _gmst_rad(t_unix: np.ndarray) -> np.ndarray:
    """Greenwich mean sidereal time as an angle in radians, [0, 2π).

    GMST (h) = 18.697374558 + 24.06570982441908 D, D = days from J2000.0 (USNO / Astronomical
    Almanac approximation). Reduced modulo 24 h before converting to keep float64 precision.
    """
    d = _days_from_j2000(t_unix)
    # split D into whole days and fraction: 24.0657... × D = 24 D + 0.0657... D
    whole = np.floor(d)
    hours = 18.697374558 + 24.0 * (d - whole) + 0.06570982441908 * d
    return np.remainder(hours, 24.0) * (math.pi / 12.0)


def sun_position(
    t_unix: np.ndarray | float, latitude_deg: float, longitude_deg: float
) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Direction and distance of the Sun seen from a site, direct evaluation.

    Hour angle H = GMST + longitude − α; in the local east–north–up frame the unit vector
    towards the Sun is (−cos δ sin H, sin δ cos φ − cos δ sin φ cos H,
    sin δ sin φ + cos δ cos φ cos H), i.e. (cos a sin A, cos a cos A, sin a) with altitude a
    and azimuth A measured from north through east (Astronomical Almanac section B).

    Parameters
    ----------
    t_unix : ndarray, shape (n,), or float
        UTC seconds since the Unix epoch.
    latitude_deg : float
        Geodetic latitude φ of the site in degrees, north positive, [-90, 90].
    longitude_deg : float
        Longitude of the site in degrees, east positive, [-180, 360].

    Returns
    -------
    to_sun : ndarray, shape (n, 3)
        Unit vector from the detector to the Sun in the detector frame (x east, y north, z up).
    cos_zenith : ndarray, shape (n,)
        Cosine of the solar zenith angle (= to_sun[:, 2]); negative at night.
    distance_au : ndarray, shape (n,)
        Earth–Sun distance in AU.

    Raises
    ------
    ConfigError
        If the site coordinates are out of range or a time is not finite.
    """
    lat, lon = _check_site(latitude_deg, longitude_deg)
    t = _check_times(t_unix)
    ra, dec, distance = sun_equatorial(t)
    hour_angle = _gmst_rad(t) + lon * _DEG - ra
    sin_phi = math.sin(lat * _DEG)
    cos_phi = math.cos(lat * _DEG)
    sin_d = np.sin(dec)
    cos_d = np.cos(dec)
    cos_h = np.cos(hour_angle)
    to_sun = np.empty((t.size, 3))
    to_sun[:, 0] = -cos_d * np.sin(hour_angle)
    to_sun[:, 1] = sin_d * cos_phi - cos_d * sin_phi * cos_h
    to_sun[:, 2] = sin_d * sin_phi + cos_d * cos_phi * cos_h
    return to_sun, to_sun[:, 2].copy(), distance


class SunTable:
    """Sun direction and distance on a uniform time grid, linearly interpolated.

    The grid starts at ``t_start`` and has spacing ``step_s``; its last node is at or after
    ``t_stop``. Each node stores the direction of neutrino travel (−to_sun, unit vector in the
    east–north–up detector frame) and the Earth–Sun distance, as float32 (rounding 4×10⁻⁶°,
    6×10⁻⁸ AU). :meth:`lookup` finds the cell by index arithmetic and renormalises the
    interpolated vector.

    Interpolation error: the Sun moves on its diurnal circle at ≤ ω = 2π/sidereal day; the
    normalised chord midpoint lies on the great circle, off the diurnal small circle by at most
    (ω h)²/16 rad for step h (about 6.9×10⁻⁵° for h = 60 s), given as
    :attr:`interpolation_error_bound_deg`. :attr:`max_interpolation_error_deg` is the largest
    error measured at construction on up to 20 000 cell mid-points spread over the table.

    Parameters
    ----------
    t_start, t_stop : float
        UTC Unix seconds covered, t_start < t_stop.
    latitude_deg, longitude_deg : float
        Site in degrees (latitude north positive, longitude east positive).
    step_s : float, optional
        Grid spacing in seconds, (0, 3600]. Default 60.

    Attributes
    ----------
    t_start, t_stop, step_s : float
        As given (seconds).
    n_nodes : int
        Number of grid nodes.
    max_interpolation_error_deg : float
        Largest measured mid-point direction error, degrees.
    interpolation_error_bound_deg : float
        Analytic bound (ω h)²/16 in degrees.
    """

    _MAX_CHECK_POINTS = 20_000
    _CHUNK = 1 << 20
    _BLOCK = 1 << 14

    def __init__(
        self,
        t_start: float,
        t_stop: float,
        latitude_deg: float,
        longitude_deg: float,
        step_s: float = 60.0,
    ) -> None:
        self.latitude_deg, self.longitude_deg = _check_site(latitude_deg, longitude_deg)
        t_start = float(t_start)
        t_stop = float(t_stop)
        step_s = float(step_s)
        if not (math.isfinite(step_s) and 0.0 < step_s <= 3600.0):
            raise ConfigError(f"step_s = {step_s!r}: must be in (0, 3600] seconds")
        if not (math.isfinite(t_start) and math.isfinite(t_stop) and t_start < t_stop):
            raise ConfigError(
                f"t_start = {t_start!r}, t_stop = {t_stop!r}: need finite times with "
                "t_start < t_stop"
            )
        self.t_start = t_start
        self.t_stop = t_stop
        self.step_s = step_s
        self._inv_step = 1.0 / step_s
        n_cells = max(1, math.ceil((t_stop - t_start) * self._inv_step))
        self.n_nodes = n_cells + 1
        # one 16-byte row (3 direction components + distance, float32) per node, viewed as
        # complex128 so that np.take moves whole rows: nodes i and i+1 then share a cache line
        # (about 2x faster than separate columns, and 10x faster than 2-d fancy indexing;
        # see tests/benchmarks/bench_timing.py)
        self.interpolation_error_bound_deg = (_OMEGA_EARTH * step_s) ** 2 / 16.0 / _DEG
        # the table (≈ 0.15 s per year of nodes) comes from the disk cache when a valid entry
        # exists (generator.cache; keyed by every input and the package code, bit-identical)
        key = {"table": "sun-v1", **code_key(), "t_start": t_start, "t_stop": t_stop,
               "latitude_deg": self.latitude_deg, "longitude_deg": self.longitude_deg,
               "step_s": step_s, "n_check": self._MAX_CHECK_POINTS}
        t = cached_arrays("sun", key, self._build_rows, self._validate_rows)
        self._rows = t["rows"].view(np.complex128).ravel()
        self.max_interpolation_error_deg = float(t["max_error_deg"])

    def _build_rows(self) -> dict[str, np.ndarray]:
        """Node rows (direction of travel, distance in AU; float32) and the measured error."""
        rows = np.empty((self.n_nodes, 4), dtype=np.float32)
        for lo in range(0, self.n_nodes, self._CHUNK):
            hi = min(lo + self._CHUNK, self.n_nodes)
            to_sun, _, dist = sun_position(
                self.t_start + self.step_s * np.arange(lo, hi, dtype=np.float64),
                self.latitude_deg,
                self.longitude_deg,
            )
            rows[lo:hi, :3] = -to_sun
            rows[lo:hi, 3] = dist
        self._rows = rows.view(np.complex128).ravel()
        return {"rows": rows, "max_error_deg": np.array(self._measure_error())}

    def _validate_rows(self, arrays: dict[str, np.ndarray]) -> None:
        """Loaded rows: shape, float32, unit directions, distance within the orbit's range."""
        rows, err = arrays.get("rows"), arrays.get("max_error_deg")
        if rows is None or err is None or set(arrays) != {"rows", "max_error_deg"}:
            raise CacheRejected("rows or max_error_deg missing")
        if rows.dtype != np.float32 or rows.shape != (self.n_nodes, 4) or err.shape != ():
            raise CacheRejected(f"rows have shape {rows.shape} and dtype {rows.dtype}")
        norm = np.einsum("ij,ij->i", rows[:, :3], rows[:, :3])
        if not (np.all(np.abs(norm - 1.0) < 1e-5) and np.all(rows[:, 3] > 0.98)
                and np.all(rows[:, 3] < 1.02)):   # perihelion 0.983, aphelion 1.017 AU
            raise CacheRejected("directions not unit vectors or distances outside the orbit")
        if not (np.isfinite(err) and 0.0 <= err <= 10 * self.interpolation_error_bound_deg
                + 1e-6):
            raise CacheRejected(f"measured interpolation error {err} deg is not plausible")

    def _measure_error(self) -> float:
        """Largest angle (degrees) between lookup and direct formula on cell mid-points."""
        n_cells = self.n_nodes - 1
        n_check = min(n_cells, self._MAX_CHECK_POINTS)
        cells = np.unique(np.linspace(0, n_cells - 1, n_check).astype(np.int64))
        mid = self.t_start + (cells + 0.5) * self.step_s
        mid = mid[mid <= self.t_stop]
        if mid.size == 0:
            mid = np.array([0.5 * (self.t_start + self.t_stop)])
        nu, _, _ = self.lookup(mid)
        to_sun, _, _ = sun_position(mid, self.latitude_deg, self.longitude_deg)
        cos_angle = np.clip(-np.einsum("ij,ij->i", nu, to_sun), -1.0, 1.0)
        # arccos is ill-conditioned near 1: use the chord length instead
        chord = np.linalg.norm(nu + to_sun, axis=1)
        angle = np.where(cos_angle > 0.5, 2.0 * np.arcsin(0.5 * chord), np.arccos(cos_angle))
        return float(np.max(angle) / _DEG)

    def lookup(self, t_unix: np.ndarray | float) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
        """Interpolate the Sun direction and distance at the given times.

        Parameters
        ----------
        t_unix : ndarray, shape (n,), or float
            UTC Unix seconds within [t_start, t_stop] of the table.

        Returns
        -------
        nu_dir : ndarray, shape (n, 3), float64
            Direction of neutrino travel (Sun → detector), unit vector in the detector frame
            (x east, y north, z up); equals −to_sun.
        cos_zenith : ndarray, shape (n,), float64
            Cosine of the solar zenith angle, = −nu_dir[:, 2] (negative at night).
        distance_au : ndarray, shape (n,), float64
            Earth–Sun distance in AU.

        Raises
        ------
        ConfigError
            If a time lies outside [t_start, t_stop] or is not finite.
        """
        t = np.atleast_1d(np.asarray(t_unix, dtype=np.float64))
        if t.ndim != 1:
            raise ConfigError(f"t_unix: expected a scalar or 1-d array, got shape {t.shape}")
        if t.size == 0:
            return np.empty((0, 3)), np.empty(0), np.empty(0)
        t_min = t.min()
        t_max = t.max()
        if not (t_min >= self.t_start and t_max <= self.t_stop):  # also catches NaN
            raise ConfigError(
                f"t_unix: times [{t_min!r}, {t_max!r}] outside the Sun table range "
                f"[{self.t_start!r}, {self.t_stop!r}] (Unix seconds)"
            )
        nu_dir = np.empty((t.size, 3))
        cos_zenith = np.empty(t.size)
        distance = np.empty(t.size)
        # blocks small enough to stay in cache: ~2-3x faster than whole-array temporaries
        for lo in range(0, t.size, self._BLOCK):
            hi = min(lo + self._BLOCK, t.size)
            self._lookup_block(t[lo:hi], nu_dir[lo:hi], cos_zenith[lo:hi], distance[lo:hi])
        return nu_dir, cos_zenith, distance

    def _lookup_block(
        self, t: np.ndarray, nu_dir: np.ndarray, cos_zenith: np.ndarray, distance: np.ndarray
    ) -> None:
        """Interpolate one block of times into the given output views (no range checks)."""
        x = t - self.t_start
        x *= self._inv_step
        idx = x.astype(np.intp)
        np.minimum(idx, self.n_nodes - 2, out=idx)
        x -= idx  # fractional position within the cell, [0, 1]
        lo = self._rows.take(idx).view(np.float32).reshape(-1, 4)
        val = self._rows.take(idx + 1).view(np.float32).reshape(-1, 4)
        val -= lo
        val = val * x[:, None]  # float32 * float64 -> float64, shape (m, 4)
        val += lo
        np.copyto(distance, val[:, 3])
        vec = val[:, :3]
        norm = np.einsum("ij,ij->i", vec, vec)
        np.sqrt(norm, out=norm)
        np.divide(vec, norm[:, None], out=nu_dir)
        np.negative(nu_dir[:, 2], out=cos_zenith)
