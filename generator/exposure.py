"""Live time of the detector: run periods, event-time sampling and exposure integrals.

Times are UTC seconds since the Unix epoch (float64; leap seconds are not counted, as in POSIX
time). Live periods are closed intervals [start, stop] given either as one continuous interval
or as a CSV run list.

The neutrino flux at the Earth scales as (1 AU / r(t))² with the Earth–Sun distance r(t) (inverse
square law), so event times are drawn with density ∝ 1/r(t)² on the live periods. r(t) comes
from the Astronomical Almanac low-precision formula (Michalsky, Solar Energy 40 (1988) 227; see
:mod:`generator.ephemeris`). Because 1/r² changes by < 3×10⁻⁵ per hour, the live time is cut into
cells of at most ``cdf_step_s`` (default 1 h) inside each live period, 1/r² is taken at the cell
mid-point (mid-point rule) and held constant in the cell; the cumulative integral over the cells
is inverted exactly (guide-table search, then linear in t inside the cell).

Sun directions for events come from a :class:`generator.ephemeris.SunTable` (default 60 s
grid) spanning all live periods. Detector frame: x = east, y = north, z = up.
"""

from __future__ import annotations

import csv
import datetime as _dt
import math
import os

import numpy as np

from .ephemeris import SunTable, sun_distance_au
from .errors import ConfigError, DataFileError
from .userfiles import MAX_TABLE_ROWS, clip, read_user_text

__all__ = [
    "MAX_UNIX",
    "MAX_UTC",
    "MIN_UNIX",
    "MIN_UTC",
    "RUN_LIST_COLUMNS",
    "Exposure",
    "SunSegments",
    "check_intervals",
    "load_run_list",
    "parse_utc",
    "single_interval",
]

_EPOCH = _dt.datetime(1970, 1, 1, tzinfo=_dt.UTC)

#: Earliest accepted time, 1900-01-01T00:00:00Z, Unix seconds.
MIN_UTC: float = -2_208_988_800.0
#: Latest accepted time, 2200-01-01T00:00:00Z, Unix seconds.
MAX_UTC: float = 7_258_118_400.0
#: Aliases of :data:`MIN_UTC` / :data:`MAX_UTC` (Unix seconds), used by the configuration code.
MIN_UNIX: float = MIN_UTC
MAX_UNIX: float = MAX_UTC

#: Header of a run-list CSV file (in this order).
RUN_LIST_COLUMNS: tuple[str, str] = ("start_utc", "stop_utc")

#: Events per cache-sized block in the sampler.
_BLOCK = 1 << 14


def parse_utc(text: str, key: str) -> float:
    """Convert an ISO 8601 UTC time stamp to Unix seconds.

    Parameters
    ----------
    text : str
        ``YYYY-MM-DDTHH:MM:SS[.ffffff]`` with an optional ``Z`` or ``+00:00`` suffix (a missing
        suffix means UTC), or a date ``YYYY-MM-DD`` (midnight UTC).
    key : str
        Name of the setting, used in the error message.

    Returns
    -------
    float
        UTC seconds since 1970-01-01T00:00:00Z, within [MIN_UTC, MAX_UTC] (1900–2200).

    Raises
    ------
    ConfigError
        If the text is not such a time stamp, has a non-zero UTC offset, or is outside 1900–2200.
    """
    allowed = "an ISO 8601 UTC time such as '2030-01-01T00:00:00Z', between 1900 and 2200"
    if not isinstance(text, str):
        raise ConfigError(f"{key} = {clip(text)}: expected {allowed}")
    try:
        stamp = _dt.datetime.fromisoformat(text.strip())
    except ValueError:
        raise ConfigError(f"{key} = {clip(text)}: not {allowed}") from None
    if stamp.tzinfo is None:
        stamp = stamp.replace(tzinfo=_dt.UTC)
    elif stamp.utcoffset() != _dt.timedelta(0):
        raise ConfigError(f"{key} = {clip(text)}: has a non-zero UTC offset; give {allowed}")
    seconds = (stamp - _EPOCH).total_seconds()
    if not MIN_UTC <= seconds <= MAX_UTC:
        raise ConfigError(f"{key} = {clip(text)}: outside the allowed range; give {allowed}")
    return seconds


def single_interval(
    start_text: str, stop_text: str, start_key: str = "start_utc", stop_key: str = "stop_utc"
) -> np.ndarray:
    """One continuous live period from two ISO 8601 UTC strings.

    Parameters
    ----------
    start_text, stop_text : str
        Start and stop, see :func:`parse_utc`.
    start_key, stop_key : str, optional
        Setting names used in error messages.

    Returns
    -------
    ndarray, shape (1, 2), float64
        [[start, stop]] in Unix seconds.

    Raises
    ------
    ConfigError
        If a time is invalid or start ≥ stop.
    """
    start = parse_utc(start_text, start_key)
    stop = parse_utc(stop_text, stop_key)
    if not start < stop:
        raise ConfigError(
            f"{stop_key} = {stop_text!r} is not after {start_key} = {start_text!r}: "
            "the live period must have positive length"
        )
    return np.array([[start, stop]], dtype=np.float64)


def check_intervals(intervals: np.ndarray, key: str = "intervals") -> np.ndarray:
    """Validate live periods.

    Parameters
    ----------
    intervals : array_like, shape (k, 2)
        [start, stop] rows in Unix seconds.
    key : str, optional
        Name used in error messages.

    Returns
    -------
    ndarray, shape (k, 2), float64
        A read-only copy.

    Raises
    ------
    ConfigError
        Unless k ≥ 1, all values finite within [MIN_UTC, MAX_UTC], start < stop in every row,
        and rows sorted and non-overlapping (touching is allowed).
    """
    try:
        arr = np.array(intervals, dtype=np.float64)
    except (TypeError, ValueError):
        raise ConfigError(f"{key}: expected a (k, 2) array of Unix seconds") from None
    if arr.ndim != 2 or arr.shape[1] != 2 or arr.shape[0] == 0:
        raise ConfigError(f"{key}: expected shape (k, 2) with k >= 1, got {arr.shape}")
    if not np.all(np.isfinite(arr)) or arr.min() < MIN_UTC or arr.max() > MAX_UTC:
        raise ConfigError(
            f"{key}: times must be finite and within [{MIN_UTC}, {MAX_UTC}] "
            "(1900-01-01 to 2200-01-01, Unix seconds)"
        )
    bad = np.flatnonzero(arr[:, 0] >= arr[:, 1])
    if bad.size:
        raise ConfigError(f"{key}: row {bad[0]} = {arr[bad[0]].tolist()} has start >= stop")
    bad = np.flatnonzero(arr[1:, 0] < arr[:-1, 1])
    if bad.size:
        i = bad[0] + 1
        raise ConfigError(
            f"{key}: row {i} = {arr[i].tolist()} starts before row {i - 1} ends "
            "(rows must be sorted and non-overlapping)"
        )
    arr.setflags(write=False)
    return arr


def load_run_list(path: str | os.PathLike[str]) -> np.ndarray:
    """Read live periods from a CSV run list.

    Format: a header line ``start_utc,stop_utc`` then one run per line, each an ISO 8601 UTC time
    (see :func:`parse_utc`). Blank lines and lines starting with ``#`` are ignored. Runs must have
    start < stop, be sorted by start, not overlap (touching is allowed) and lie in 1900–2200.

    Parameters
    ----------
    path : str or os.PathLike
        File name.

    Returns
    -------
    ndarray, shape (k, 2), float64
        [start, stop] per run, Unix seconds, read-only.

    Raises
    ------
    DataFileError
        Naming the file, the line number and the problem.
    """
    name = clip(os.fspath(path))
    lines = read_user_text(path, "run list").splitlines()
    rows: list[tuple[int, list[str]]] = []
    for number, line in enumerate(lines, start=1):
        if line.strip() and not line.lstrip().startswith("#"):
            rows.append((number, next(csv.reader([line]))))
            if len(rows) > MAX_TABLE_ROWS + 1:
                raise DataFileError(f"run list {name}: more than {MAX_TABLE_ROWS} runs")
    if not rows:
        raise DataFileError(f"run list {name}: empty; expected header 'start_utc,stop_utc'")
    number, header = rows[0]
    if tuple(cell.strip() for cell in header) != RUN_LIST_COLUMNS:
        raise DataFileError(
            f"run list {name}, line {number}: not the header line; expected exactly the "
            f"columns {','.join(RUN_LIST_COLUMNS)!r} (is this a run list?)"
        )
    if len(rows) == 1:
        raise DataFileError(f"run list {name}: no runs after the header")
    runs = np.empty((len(rows) - 1, 2), dtype=np.float64)
    for i, (number, cells) in enumerate(rows[1:]):
        where = f"run list {name}, line {number}"
        if len(cells) != 2:
            raise DataFileError(f"{where}: {len(cells)} columns, expected 2 (start_utc,stop_utc)")
        try:
            start = parse_utc(cells[0], f"{where}: start_utc")
            stop = parse_utc(cells[1], f"{where}: stop_utc")
        except ConfigError as exc:
            raise DataFileError(str(exc)) from None
        if not start < stop:
            raise DataFileError(f"{where}: start {cells[0]!r} is not before stop {cells[1]!r}")
        if i > 0 and start < runs[i - 1, 0]:
            raise DataFileError(f"{where}: start {cells[0]!r} is before the previous run's start "
                                "(runs must be sorted by start time)")
        if i > 0 and start < runs[i - 1, 1]:
            raise DataFileError(f"{where}: run starting {cells[0]!r} overlaps the previous run")
        runs[i] = start, stop
    runs.setflags(write=False)
    return runs


class Exposure:
    """Live periods at a site, with event-time sampling and exposure integrals.

    Parameters
    ----------
    intervals : array_like, shape (k, 2)
        Live periods [start, stop], UTC Unix seconds, sorted and non-overlapping
        (see :func:`check_intervals`).
    latitude_deg, longitude_deg : float
        Site, degrees (latitude north positive, longitude east positive).
    step_s : float, optional
        Grid spacing of the Sun-direction table, seconds (default 60).
    cdf_step_s : float, optional
        Longest cell of the 1/r² time distribution, seconds, (0, 86400] (default 3600).

    Attributes
    ----------
    intervals : ndarray, shape (k, 2)
        Live periods, Unix seconds (read-only).
    live_seconds : float
        Total live time, s.
    mean_inverse_r2 : float
        Live-time average of (1 AU / r)², dimensionless.
    table : SunSegments
        Sun direction and distance covering all live periods (gaps of a day or more are not
        tabulated, so memory follows the live time, not the span of a run list).
    """

    def __init__(
        self,
        intervals: np.ndarray,
        latitude_deg: float,
        longitude_deg: float,
        step_s: float = 60.0,
        cdf_step_s: float = 3600.0,
    ) -> None:
        self.intervals = check_intervals(intervals)
        cdf_step_s = float(cdf_step_s)
        if not (math.isfinite(cdf_step_s) and 0.0 < cdf_step_s <= 86_400.0):
            raise ConfigError(f"cdf_step_s = {cdf_step_s!r}: must be in (0, 86400] seconds")
        self.table = SunSegments(self.intervals, latitude_deg, longitude_deg, step_s)
        starts, widths = _split_intervals(self.intervals, cdf_step_s)
        self._cell_start = starts
        self._cell_width = widths
        self._cell_density = 1.0 / sun_distance_au(starts + 0.5 * widths) ** 2
        cumulative = np.empty(starts.size + 1)
        cumulative[0] = 0.0
        np.cumsum(widths * self._cell_density, out=cumulative[1:])
        self._cumulative = cumulative
        total = float(cumulative[-1])
        self._total_weight = total
        self.live_seconds = float(np.sum(self.intervals[:, 1] - self.intervals[:, 0]))
        self.mean_inverse_r2 = total / self.live_seconds
        # guide table (Chen & Asau, 1974): first cell whose upper CDF edge exceeds k/K of total
        n_guide = 2 * starts.size
        self._n_guide = n_guide
        levels = total * np.arange(n_guide) / n_guide
        guide = np.searchsorted(cumulative, levels, side="right") - 1
        self._guide = np.clip(guide, 0, starts.size - 1)

    def sample_times(
        self, rng: np.random.Generator, n: int, ordered: bool = False
    ) -> np.ndarray:
        """Draw event times with density ∝ 1/r(t)² on the live periods.

        Parameters
        ----------
        rng : numpy.random.Generator
            Random stream (uses n uniforms; n + 1 exponentials if ``ordered``).
        n : int
            Number of times, ≥ 0.
        ordered : bool, optional
            If True, return the times in increasing order, drawn in O(n) as normalised partial
            sums of exponential spacings (uniform order statistics, e.g. L. Devroye,
            *Non-Uniform Random Variate Generation* (1986), ch. V.2). The set of times has the
            same distribution either way; ordered look-ups are more cache friendly.

        Returns
        -------
        ndarray, shape (n,), float64
            UTC Unix seconds, each inside a live period.
        """
        n = _check_count(n)
        if ordered:
            spacing = rng.standard_exponential(n + 1)
            np.cumsum(spacing, out=spacing)
            u = spacing[:n] / spacing[n]
        else:
            u = rng.random(n)
        return self._invert(u)

    def _invert(self, u: np.ndarray) -> np.ndarray:
        """Map uniforms in [0, 1) to times through the cumulative 1/r² integral."""
        t = np.empty(u.size)
        for lo in range(0, u.size, _BLOCK):  # cache-sized blocks
            hi = min(lo + _BLOCK, u.size)
            self._invert_block(u[lo:hi], t[lo:hi])
        return t

    def _invert_block(self, u: np.ndarray, t: np.ndarray) -> None:
        """Invert one block of uniforms into the output view ``t``."""
        target = u * self._total_weight
        k = (u * self._n_guide).astype(np.intp)
        np.minimum(k, self._n_guide - 1, out=k)
        cell = self._guide.take(k)
        last = self._cell_start.size - 1
        todo = np.arange(u.size)
        while todo.size:  # walk forward: on average < 1 step per event
            c = cell[todo]
            move = (self._cumulative.take(c + 1) <= target[todo]) & (c < last)
            todo = todo[move]
            cell[todo] += 1
        np.subtract(target, self._cumulative.take(cell), out=t)
        t /= self._cell_density.take(cell)
        np.clip(t, 0.0, self._cell_width.take(cell), out=t)
        t += self._cell_start.take(cell)

    def sun(self, t_unix: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
        """Sun at the given times; see :meth:`generator.ephemeris.SunTable.lookup`.

        Parameters
        ----------
        t_unix : ndarray, shape (n,)
            UTC Unix seconds within the span of the live periods.

        Returns
        -------
        nu_dir : ndarray, shape (n, 3)
            Direction of neutrino travel (unit vector, x east, y north, z up).
        cos_zenith : ndarray, shape (n,)
            Cosine of the solar zenith angle.
        distance_au : ndarray, shape (n,)
            Earth–Sun distance, AU.
        """
        return self.table.lookup(t_unix)

    def zenith_exposure(self, cos_zenith_edges: np.ndarray, weighted: bool = True
                        ) -> np.ndarray:
        """Flux-weighted (or plain) live time per bin of solar cos-zenith.

        E_j = ∫_live dt (1 AU / r(t))² [cos θ_z(t) in bin j], evaluated by the mid-point rule on
        sub-cells of at most ``step_s`` inside every live period, with the Sun from the table.

        Parameters
        ----------
        cos_zenith_edges : array_like, shape (m + 1,)
            Strictly increasing bin edges; last bin closed (as :func:`numpy.histogram`). Time
            with cos θ_z outside [edges[0], edges[-1]] is not counted.

        Returns
        -------
        ndarray, shape (m,), float64
            E_j in seconds (weighted by (1 AU / r)², dimensionless). Over edges covering
            [-1, 1] the sum equals live_seconds × mean_inverse_r2.

        Raises
        ------
        ConfigError
            If the edges are not a strictly increasing 1-d array of ≥ 2 finite values.
        """
        edges = np.asarray(cos_zenith_edges, dtype=np.float64)
        if edges.ndim != 1 or edges.size < 2 or not np.all(np.isfinite(edges)):
            raise ConfigError(
                f"cos_zenith_edges: need a 1-d array of >= 2 finite values, got {edges!r}"
            )
        if not np.all(np.diff(edges) > 0):
            raise ConfigError(f"cos_zenith_edges = {edges!r}: must be strictly increasing")
        result = np.zeros(edges.size - 1)
        for starts, widths in _iter_split(self.intervals, self.table.step_s, 1 << 20):
            _, cos_zenith, distance = self.table.lookup(starts + 0.5 * widths)
            w = widths / distance**2 if weighted else widths
            counts, _ = np.histogram(cos_zenith, bins=edges, weights=w)
            result += counts
        return result


class SunSegments:
    """Sun tables over groups of live periods, with the lookup of :class:`SunTable`.

    Live periods separated by less than ``max_gap_s`` share one table; a longer gap starts a
    new table, so the memory (16 bytes per ``step_s`` of tabulated time) follows the live time
    rather than the span of a run list (a run list over two centuries with a few hours of live
    time needs a few kB, not 2.7 GB).

    Parameters
    ----------
    intervals : ndarray, shape (k, 2)
        Sorted, non-overlapping live periods, UTC Unix seconds.
    latitude_deg, longitude_deg : float
        Site, degrees.
    step_s : float
        Grid spacing, seconds.
    max_gap_s : float, optional
        Gaps shorter than this (seconds, default one day) are tabulated through.
    """

    def __init__(self, intervals: np.ndarray, latitude_deg: float, longitude_deg: float,
                 step_s: float = 60.0, max_gap_s: float = 86_400.0) -> None:
        gaps = intervals[1:, 0] - intervals[:-1, 1]
        cut = np.flatnonzero(gaps >= max_gap_s) + 1
        first = np.concatenate([[0], cut])
        last = np.concatenate([cut - 1, [len(intervals) - 1]])
        self.tables = [SunTable(intervals[a, 0], intervals[b, 1], latitude_deg, longitude_deg,
                                step_s) for a, b in zip(first, last, strict=True)]
        self._starts = np.array([tb.t_start for tb in self.tables])
        self.step_s = self.tables[0].step_s
        self.n_nodes = sum(tb.n_nodes for tb in self.tables)
        self.max_interpolation_error_deg = max(tb.max_interpolation_error_deg
                                               for tb in self.tables)
        self.interpolation_error_bound_deg = self.tables[0].interpolation_error_bound_deg

    def lookup(self, t_unix: np.ndarray | float) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
        """Sun direction, cos-zenith and distance at times inside the tabulated periods.

        See :meth:`generator.ephemeris.SunTable.lookup` (same units and shapes).
        """
        if len(self.tables) == 1:
            return self.tables[0].lookup(t_unix)
        t = np.atleast_1d(np.asarray(t_unix, dtype=np.float64))
        seg = np.clip(np.searchsorted(self._starts, t, side="right") - 1, 0, None)
        order = np.argsort(seg, kind="stable")
        bounds = np.searchsorted(seg[order], np.arange(len(self.tables) + 1))
        nu_dir = np.empty((t.size, 3))
        cos_zenith = np.empty(t.size)
        distance = np.empty(t.size)
        for j, table in enumerate(self.tables):
            sel = order[bounds[j]:bounds[j + 1]]
            if sel.size:
                nu_dir[sel], cos_zenith[sel], distance[sel] = table.lookup(t[sel])
        return nu_dir, cos_zenith, distance


def _check_count(n: int) -> int:
    """Validate a number of events."""
    if isinstance(n, bool) or not isinstance(n, (int, np.integer)) or n < 0:
        raise ConfigError(f"n = {n!r}: must be a non-negative integer")
    return int(n)


def _cells_per_interval(intervals: np.ndarray, step: float) -> np.ndarray:
    """Number of equal cells of width ≤ step in each interval."""
    lengths = intervals[:, 1] - intervals[:, 0]
    return np.maximum(np.ceil(lengths / step).astype(np.int64), 1)


def _split_intervals(intervals: np.ndarray, step: float) -> tuple[np.ndarray, np.ndarray]:
    """Cut each interval into equal cells of width ≤ step; return (cell starts, widths), s."""
    parts = list(_iter_split(intervals, step, None))
    return np.concatenate([p[0] for p in parts]), np.concatenate([p[1] for p in parts])


def _iter_split(intervals: np.ndarray, step: float, chunk: int | None):
    """Yield (cell starts, widths) in chunks of at most ``chunk`` cells (all if None)."""
    counts = _cells_per_interval(intervals, step)
    widths = (intervals[:, 1] - intervals[:, 0]) / counts
    first = np.concatenate(([0], np.cumsum(counts)))
    total = int(first[-1])
    chunk = total if chunk is None else chunk
    for lo in range(0, total, chunk):
        cells = np.arange(lo, min(lo + chunk, total), dtype=np.int64)
        which = np.searchsorted(first, cells, side="right") - 1
        local = cells - first[which]
        w = widths[which]
        yield intervals[which, 0] + local * w, w
