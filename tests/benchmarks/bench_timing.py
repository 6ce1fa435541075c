"""Benchmark: event times (1/r² on live periods) + Sun look-up, events per second on one core.

Run: ``python tests/benchmarks/bench_timing.py [n_events]`` (default 10⁷). Prints a table with
the best and median of 3 repetitions (the machine is shared: compare ratios within one run) and
the Sun-table interpolation error. Goal: ≥ 6 M events/s for sample_times + lookup.
"""

from __future__ import annotations

import statistics
import sys
import time

import numpy as np

from generator.ephemeris import SunTable, sun_position
from generator.exposure import Exposure

LAT, LON = 37.2, -101.4  # fictional site
T0 = 1_924_992_000.0  # 2031-01-01T00:00:00Z
YEAR = 365.25 * 86_400.0
REPEAT = 3


def _timed(func, repeat: int = REPEAT) -> tuple[float, float, object]:
    """Best and median wall time (s) of ``repeat`` calls, and the last result."""
    times = []
    result = None
    for _ in range(repeat):
        start = time.perf_counter()
        result = func()
        times.append(time.perf_counter() - start)
    return min(times), statistics.median(times), result


def main(n: int) -> None:
    """Print the benchmark table for ``n`` events."""
    print(f"events per call: {n:,}; best / median of {REPEAT}")
    print(f"{'case':44s} {'best s':>8s} {'median s':>8s} {'M ev/s (best)':>14s}")

    def row(name: str, best: float, median: float, count: int = n) -> None:
        print(f"{name:44s} {best:8.3f} {median:8.3f} {count / best / 1e6:14.2f}")

    for years in (1, 10):
        intervals = np.array([[T0, T0 + years * YEAR]])
        best, med, exposure = _timed(lambda iv=intervals: Exposure(iv, LAT, LON), repeat=1)
        print(f"-- {years}-year live period: construction {best:.2f} s, "
              f"Sun table {exposure.table.n_nodes:,} nodes; measured max interpolation error "
              f"{exposure.table.max_interpolation_error_deg:.2e} deg "
              f"(bound {exposure.table.interpolation_error_bound_deg:.2e} deg)")
        for ordered in (False, True):
            label = "ordered" if ordered else "random order"
            rng = np.random.default_rng(1)
            b1, m1, t = _timed(lambda o=ordered, r=rng, e=exposure: e.sample_times(r, n, o))
            b2, m2, _ = _timed(lambda e=exposure, tt=t: e.sun(tt))
            row(f"sample_times ({label})", b1, m1)
            row(f"lookup ({label})", b2, m2)
            row(f"sample_times + lookup ({label})", b1 + b2, m1 + m2)
            del t

            size = max(1, n // 10)

            def chunked(o=ordered, e=exposure, size=size) -> None:
                r = np.random.default_rng(1)
                for lo in range(0, n, size):
                    e.sun(e.sample_times(r, min(size, n - lo), o))

            b3, m3, _ = _timed(chunked)
            row(f"  same in chunks of {size:,} ({label})", b3, m3)

    # direct formula per event, for comparison (smaller n)
    m = min(n, 1_000_000)
    t = np.random.default_rng(2).uniform(T0, T0 + YEAR, m)
    table = SunTable(T0, T0 + YEAR, LAT, LON)
    b_direct, m_direct, _ = _timed(lambda: sun_position(t, LAT, LON))
    b_table, m_table, _ = _timed(lambda: table.lookup(t))
    print(f"-- direct formula vs table look-up, {m:,} random times")
    row("sun_position (direct formula)", b_direct, m_direct, m)
    row("SunTable.lookup", b_table, m_table, m)
    print(f"table / direct speed ratio: {b_direct / b_table:.1f}x")


if __name__ == "__main__":
    main(int(float(sys.argv[1])) if len(sys.argv) > 1 else 10_000_000)
