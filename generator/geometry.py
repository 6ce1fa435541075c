"""Fiducial volumes: volume and uniform vertex sampling.

Detector frame: x east, y north, z up (right-handed, local east–north–up at the site),
origin at the centre of the fiducial volume; lengths in mm.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from .errors import ConfigError

__all__ = ["FiducialVolume", "make_fiducial"]

SHAPES = ("cylinder", "sphere")


@dataclass(frozen=True)
class FiducialVolume:
    """A fiducial volume centred at the origin.

    Parameters
    ----------
    shape : {"cylinder", "sphere"}
        Cylinder axis is the detector z (up) axis.
    radius_mm : float
        Radius in mm.
    half_height_mm : float
        Half of the cylinder height in mm (ignored for a sphere).
    """

    shape: str
    radius_mm: float
    half_height_mm: float = 0.0

    @property
    def volume_cm3(self) -> float:
        """Volume in cm³."""
        r = self.radius_mm / 10.0
        if self.shape == "sphere":
            return 4.0 / 3.0 * np.pi * r**3
        return np.pi * r**2 * 2.0 * self.half_height_mm / 10.0

    def sample(self, rng: np.random.Generator, n: int) -> np.ndarray:
        """Draw vertices uniformly in the volume.

        Parameters
        ----------
        rng : numpy.random.Generator
            Random stream.
        n : int
            Number of vertices.

        Returns
        -------
        ndarray, shape (n, 3), float64
            Vertex positions in mm.
        """
        u = rng.random((n, 3))
        out = np.empty((n, 3))
        if self.shape == "sphere":
            r = self.radius_mm * np.cbrt(u[:, 0])
            cos_t = 2.0 * u[:, 1] - 1.0
            sin_t = np.sqrt(np.maximum(0.0, 1.0 - cos_t * cos_t))
            phi = 2.0 * np.pi * u[:, 2]
            out[:, 0] = r * sin_t * np.cos(phi)
            out[:, 1] = r * sin_t * np.sin(phi)
            out[:, 2] = r * cos_t
        else:
            r = self.radius_mm * np.sqrt(u[:, 0])
            phi = 2.0 * np.pi * u[:, 1]
            out[:, 0] = r * np.cos(phi)
            out[:, 1] = r * np.sin(phi)
            out[:, 2] = self.half_height_mm * (2.0 * u[:, 2] - 1.0)
        return out


def make_fiducial(shape: str, radius_m: float, half_height_m: float) -> FiducialVolume:
    """Build a fiducial volume from configuration values in metres (validated)."""
    if shape not in SHAPES:
        raise ConfigError(f"detector.fiducial_shape: {shape!r} is not allowed; use one of {SHAPES}")
    return FiducialVolume(shape, radius_m * 1000.0, half_height_m * 1000.0)
