"""Precomputed response tables on uniform grids (index arithmetic, no searches per event)."""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

__all__ = ["UniformTable"]


@dataclass(frozen=True)
class UniformTable:
    """A function sampled on a uniform grid x₀ + i Δx, evaluated by linear interpolation.

    Outside the grid the end intervals are extrapolated linearly.
    """

    x0: float
    dx: float
    values: np.ndarray = field(repr=False)

    @classmethod
    def from_function(cls, fn, x0: float, x1: float, n: int) -> UniformTable:
        """Tabulate ``fn`` (vectorised) on ``n`` points of [x0, x1]."""
        x = np.linspace(x0, x1, n)
        return cls(x0, (x1 - x0) / (n - 1), np.asarray(fn(x), dtype=np.float64))

    @property
    def grid(self) -> np.ndarray:
        """The grid points."""
        return self.x0 + self.dx * np.arange(self.values.size)

    def __call__(self, x: np.ndarray) -> np.ndarray:
        """Interpolated values at ``x``."""
        u = (np.asarray(x, dtype=np.float64) - self.x0) * (1.0 / self.dx)
        i = np.clip(u.astype(np.intp), 0, self.values.size - 2)
        v = self.values
        lo = v[i]
        return lo + (u - i) * (v[i + 1] - lo)
