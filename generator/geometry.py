"""Fiducial volumes and vessels: volume, uniform vertex sampling and depth below a vessel wall.

Detector frame: x east, y north, z up (right-handed, local east–north–up at the site),
origin at the centre of the fiducial volume; lengths in mm.

Shapes: ``cylinder`` (axis along z), ``sphere`` and ``box`` (axis-aligned, half lengths along
x, y, z). A :class:`Vessel` (sphere, or vertical cylinder for cylinder and box fiducials) is the
wall from which external backgrounds enter; the fiducial volume must lie inside it.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from .errors import ConfigError

__all__ = ["FiducialVolume", "Vessel", "make_fiducial", "make_vessel", "SHAPES"]

SHAPES = ("cylinder", "sphere", "box")


@dataclass(frozen=True)
class FiducialVolume:
    """A fiducial volume centred at the origin.

    Parameters
    ----------
    shape : {"cylinder", "sphere", "box"}
        Cylinder axis is the detector z (up) axis; a box is axis-aligned.
    radius_mm : float
        Radius in mm (cylinder, sphere).
    half_height_mm : float
        Half of the cylinder height in mm (ignored for a sphere and a box).
    half_lengths_mm : tuple of float
        Box half lengths along x, y, z in mm (box only).
    """

    shape: str
    radius_mm: float
    half_height_mm: float = 0.0
    half_lengths_mm: tuple[float, float, float] = (0.0, 0.0, 0.0)

    @property
    def volume_cm3(self) -> float:
        """Volume in cm³."""
        r = self.radius_mm / 10.0
        if self.shape == "sphere":
            return 4.0 / 3.0 * np.pi * r**3
        if self.shape == "box":
            hx, hy, hz = (h / 10.0 for h in self.half_lengths_mm)
            return 8.0 * hx * hy * hz
        return np.pi * r**2 * 2.0 * self.half_height_mm / 10.0

    @property
    def max_radius_mm(self) -> float:
        """Largest distance from the z axis of a point inside (mm)."""
        if self.shape == "box":
            return float(np.hypot(self.half_lengths_mm[0], self.half_lengths_mm[1]))
        return self.radius_mm

    @property
    def max_abs_z_mm(self) -> float:
        """Largest |z| of a point inside (mm)."""
        if self.shape == "sphere":
            return self.radius_mm
        if self.shape == "box":
            return self.half_lengths_mm[2]
        return self.half_height_mm

    def sample(self, rng: np.random.Generator, n: int) -> np.ndarray:
        """Draw vertices uniformly in the volume (three uniforms per vertex).

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
        elif self.shape == "box":
            out[:] = (2.0 * u - 1.0) * np.asarray(self.half_lengths_mm)
        else:
            r = self.radius_mm * np.sqrt(u[:, 0])
            phi = 2.0 * np.pi * u[:, 1]
            out[:, 0] = r * np.cos(phi)
            out[:, 1] = r * np.sin(phi)
            out[:, 2] = self.half_height_mm * (2.0 * u[:, 2] - 1.0)
        return out


@dataclass(frozen=True)
class Vessel:
    """A vessel wall centred at the origin: a sphere, or a vertical cylinder.

    Parameters
    ----------
    shape : {"sphere", "cylinder"}
        Wall shape.
    radius_mm : float
        Radius in mm.
    half_height_mm : float
        Half height of a cylinder in mm (ignored for a sphere).
    """

    shape: str
    radius_mm: float
    half_height_mm: float = 0.0

    def depth(self, xyz: np.ndarray) -> np.ndarray:
        """Distance (mm) from points inside to the nearest point of the wall, shape (n,).

        For a cylinder, the smaller of the distances to the side wall and to the end caps.
        """
        xyz = np.asarray(xyz, dtype=np.float64)
        if self.shape == "sphere":
            return self.radius_mm - np.sqrt(np.einsum("ij,ij->i", xyz, xyz))
        rho = np.hypot(xyz[:, 0], xyz[:, 1])
        return np.minimum(self.radius_mm - rho, self.half_height_mm - np.abs(xyz[:, 2]))

    def min_depth(self, fid: FiducialVolume) -> float:
        """Smallest depth (mm) of any point of the fiducial volume ``fid`` (< 0: sticks out)."""
        if self.shape == "sphere":
            if fid.shape == "sphere":
                far = fid.radius_mm
            elif fid.shape == "box":
                far = float(np.linalg.norm(fid.half_lengths_mm))
            else:
                far = float(np.hypot(fid.radius_mm, fid.half_height_mm))
            return self.radius_mm - far
        return min(self.radius_mm - fid.max_radius_mm, self.half_height_mm - fid.max_abs_z_mm)


def make_fiducial(shape: str, radius_m: float, half_height_m: float,
                  half_lengths_m: tuple[float, float, float] | None = None) -> FiducialVolume:
    """Build a fiducial volume from configuration values in metres (validated)."""
    if shape not in SHAPES:
        raise ConfigError(f"detector.fiducial_shape: {shape!r} is not allowed; use one of {SHAPES}")
    if shape == "box":
        if half_lengths_m is None or len(half_lengths_m) != 3 or min(half_lengths_m) <= 0.0:
            raise ConfigError("detector.fiducial_half_lengths_m: a box needs three positive "
                              f"half lengths [x, y, z] in m, got {half_lengths_m!r}")
        hl = tuple(float(h) * 1000.0 for h in half_lengths_m)
        return FiducialVolume(shape, 0.0, 0.0, hl)  # type: ignore[arg-type]
    return FiducialVolume(shape, radius_m * 1000.0, half_height_m * 1000.0)


def make_vessel(fid: FiducialVolume, radius_m: float, half_height_m: float | None,
                key: str) -> Vessel:
    """The vessel of radius ``radius_m`` around ``fid``, validated.

    A sphere for a spherical fiducial volume, otherwise a vertical cylinder of half height
    ``half_height_m``.

    Raises
    ------
    ConfigError
        Naming ``key`` when a dimension is not positive or the fiducial volume is not inside.
    """
    if not radius_m > 0.0:
        raise ConfigError(f"{key}_radius_m: {radius_m} must be > 0 m")
    if fid.shape == "sphere":
        v = Vessel("sphere", radius_m * 1000.0)
    else:
        if half_height_m is None or not half_height_m > 0.0:
            raise ConfigError(f"{key}_half_height_m: required (> 0 m) for a {fid.shape} "
                              f"fiducial volume (the vessel is a vertical cylinder), got "
                              f"{half_height_m!r}")
        v = Vessel("cylinder", radius_m * 1000.0, half_height_m * 1000.0)
    if v.min_depth(fid) < -1e-6:
        raise ConfigError(f"{key}_radius_m: the fiducial volume ({fid.shape}) reaches "
                          f"{-v.min_depth(fid) / 1000.0:.4g} m outside the vessel; the fiducial "
                          "volume must lie inside the vessel")
    return v
