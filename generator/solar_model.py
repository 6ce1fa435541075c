"""Solar interior for flavour conversion: electron density and neutrino production regions.

The standard-solar-model (SSM) description is the published tabulation of model
BS05(AGS,OP) of J. N. Bahcall, A. M. Serenelli & S. Basu, ApJ 621, L85 (2005),
astro-ph/0412440 (AGS05 composition, OP opacities), as distributed on J. N. Bahcall's
solar-model web pages (file "bs2005agsopflux"). The packaged copy
``generator/data/solar/bs05_agsop.txt`` keeps, for 1219 radial zones 0.00041 R⊙ apart
(0.00041 … 0.49959 R⊙), the radius, the temperature, log₁₀(n_e/N_A cm⁻³) and the fraction of
each of the eight fluxes produced in the zone (provenance and checksums in its header).

Two electron-density profiles are offered (``profile`` argument):

``"ssm"`` (default)
    Inside the table (r ≤ 0.49959 R⊙): linear interpolation of log₁₀ n_e in r; below the
    first zone (r < 0.00041 R⊙) the first value (the profile is flat there, d log₁₀ n_e/dr = 0
    to the printed precision over the first 15 zones). Outside the table: the exponential
    slope of Bahcall (*Neutrino Astrophysics*, CUP 1989; n_e ∝ exp(−10.54 r/R⊙), from memory)
    scaled to the last tabulated value, n_e = n_e(r_t) exp(−10.54 (r − r_t)/R⊙), so the
    profile is continuous at r_t = 0.49959 R⊙. The unscaled Bahcall exponential lies 9 %
    above the table there (see tests); the table's own logarithmic slope over
    0.45–0.50 R⊙ is 10.6 per R⊙, so only the normalisation is adjusted.

``"exponential"``
    The Bahcall (1989) fit n_e = 245 N_A cm⁻³ exp(−10.54 r/R⊙) everywhere (from memory). It
    overestimates the centre 2.4× (245 against the tabulated 102.6) and is kept only to
    quantify the profile systematic.

Production regions: the tabulated fraction f_i of a source's flux produced in zone i is
spread uniformly over the zone [e_i, e_{i+1}] (edges half-way between tabulated radii,
first edge 0, last edge 0.49959 + 0.000205 R⊙), giving a piecewise-constant density
f_i/(e_{i+1} − e_i) per unit r/R⊙ and a piecewise-linear CDF for inverse-CDF sampling.
"""

from __future__ import annotations

import functools
from importlib import resources
from typing import NamedTuple

import numpy as np

from generator.errors import ConfigError, DataFileError

__all__ = [
    "PROFILES",
    "SOURCES",
    "SsmTable",
    "ssm_table",
    "electron_density",
    "temperature_mk",
    "production_pdf",
    "production_quadrature",
    "sample_production_radius",
]

#: Names accepted for the electron-density profile.
PROFILES: tuple[str, ...] = ("ssm", "exponential")

#: Solar-neutrino sources (trade names).
SOURCES: tuple[str, ...] = ("pp", "pep", "hep", "7Be", "8B", "13N", "15O", "17F")

# Exponential fit, Bahcall, Neutrino Astrophysics (CUP 1989) — from memory.
_EXP_NE0 = 245.0  # N_A cm⁻³
_EXP_SLOPE = 10.54  # per solar radius

_TABLE_FILE = ("data", "solar", "bs05_agsop.txt")
# Source order of the fraction columns in the packaged file (published column order).
_TABLE_SOURCES: tuple[str, ...] = ("pp", "8B", "13N", "15O", "17F", "7Be", "pep", "hep")
_N_ROWS = 1219


class SsmTable(NamedTuple):
    """The packaged BS05(AGS,OP) tabulation (read-only arrays).

    Attributes
    ----------
    r : ndarray, shape (1219,)
        Zone radii r/R⊙ (0.00041 … 0.49959).
    t6 : ndarray, shape (1219,)
        Temperature in 10⁶ K.
    log10_ne : ndarray, shape (1219,)
        log₁₀(n_e / (N_A cm⁻³)).
    fractions : dict of str to ndarray, shape (1219,)
        Published fraction of each source's flux produced in each zone (as printed; each
        column sums to 1 within the rounding of the printed digits).
    edges : ndarray, shape (1220,)
        Zone edges r/R⊙: 0, midpoints between tabulated radii, last radius + half a step.
    """

    r: np.ndarray
    t6: np.ndarray
    log10_ne: np.ndarray
    fractions: dict[str, np.ndarray]
    edges: np.ndarray


def _check_profile(profile: str) -> None:
    if profile not in PROFILES:
        raise ConfigError(f"solar_profile: unknown value {profile!r}; allowed: {PROFILES}")


def _check_source(source: str) -> None:
    if source not in SOURCES:
        raise ConfigError(f"source: unknown value {source!r}; allowed: {SOURCES}")


@functools.cache
def ssm_table() -> SsmTable:
    """Load the packaged BS05(AGS,OP) table once (cached).

    Returns
    -------
    SsmTable
        Radii, temperature, log₁₀ n_e, per-zone flux fractions and zone edges.

    Raises
    ------
    DataFileError
        The packaged file is missing or malformed (wrong shape, non-increasing radii, or a
        fraction column not summing to 1 within 1e-4).
    """
    name = "/".join(_TABLE_FILE)
    try:
        text = resources.files("generator").joinpath(*_TABLE_FILE).read_text(encoding="utf-8")
        data = np.loadtxt(text.splitlines(), comments="#", dtype=float, ndmin=2)
    except (OSError, ValueError) as exc:
        raise DataFileError(f"{name}: cannot read the packaged solar-model table ({exc})") from exc
    if data.shape != (_N_ROWS, 3 + len(_TABLE_SOURCES)):
        raise DataFileError(
            f"{name}: expected {_N_ROWS} rows × {3 + len(_TABLE_SOURCES)} columns, got {data.shape}"
        )
    r = data[:, 0].copy()
    if r[0] <= 0.0 or np.any(np.diff(r) <= 0.0):
        raise DataFileError(f"{name}: radii must be positive and strictly increasing")
    fractions = {}
    for k, s in enumerate(_TABLE_SOURCES):
        col = data[:, 3 + k].copy()
        if np.any(col < 0.0) or abs(col.sum() - 1.0) > 1e-4:
            raise DataFileError(
                f"{name}: fraction column of {s} sums to {col.sum():.6f}; expected 1 ± 1e-4"
            )
        col.setflags(write=False)
        fractions[s] = col
    edges = np.concatenate([[0.0], 0.5 * (r[1:] + r[:-1]), [r[-1] + 0.5 * (r[-1] - r[-2])]])
    t6 = data[:, 1].copy()
    log_ne = data[:, 2].copy()
    for a in (r, t6, log_ne, edges):
        a.setflags(write=False)
    return SsmTable(r, t6, log_ne, fractions, edges)


def electron_density(x: np.ndarray | float, profile: str = "ssm") -> np.ndarray:
    """Electron number density n_e(r) in units of N_A cm⁻³.

    ``"ssm"``: BS05(AGS,OP) table (Bahcall, Serenelli & Basu 2005), log₁₀ n_e interpolated
    linearly in r inside the table, continued outside it by the Bahcall (1989) exponential
    slope 10.54/R⊙ scaled to the last tabulated value (module docstring).
    ``"exponential"``: 245 exp(−10.54 x) (Bahcall 1989, from memory).

    Parameters
    ----------
    x : array_like
        Radius / R⊙, any shape (the profile is even in x; use 0 ≤ x ≤ 1).
    profile : {"ssm", "exponential"}
        Profile name.

    Returns
    -------
    ndarray
        n_e / (N_A cm⁻³), same shape as ``x``.

    Raises
    ------
    ConfigError
        Unknown profile.
    """
    _check_profile(profile)
    x = np.abs(np.asarray(x, dtype=float))
    if profile == "exponential":
        return _EXP_NE0 * np.exp(-_EXP_SLOPE * x)
    t = ssm_table()
    r_t = t.r[-1]
    inside = 10.0 ** np.interp(np.minimum(x, r_t), t.r, t.log10_ne)
    outside = 10.0 ** t.log10_ne[-1] * np.exp(-_EXP_SLOPE * np.maximum(x - r_t, 0.0))
    return np.where(x <= r_t, inside, outside)


def temperature_mk(x: np.ndarray | float) -> np.ndarray:
    """Temperature of the BS05(AGS,OP) model in 10⁶ K (linear interpolation of the table).

    Parameters
    ----------
    x : array_like
        Radius / R⊙, 0 ≤ x ≤ 0.49959 (the table range; below the first zone the first
        value is used).

    Returns
    -------
    ndarray
        Temperature in MK, same shape as ``x``.

    Raises
    ------
    ConfigError
        ``x`` outside [0, 0.49959] (the model is not tabulated there).
    """
    t = ssm_table()
    x = np.asarray(x, dtype=float)
    if x.size and not (np.all(x >= 0.0) and np.all(x <= t.r[-1])):
        raise ConfigError(
            f"x: radius outside the tabulated range [0, {t.r[-1]}] R_sun "
            f"(got min {x.min()}, max {x.max()})"
        )
    return np.interp(x, t.r, t.t6)


@functools.cache
def _quadrature(source: str) -> tuple[np.ndarray, np.ndarray]:
    t = ssm_table()
    w = t.fractions[source] / t.fractions[source].sum()
    w.setflags(write=False)
    return t.r, w


def production_quadrature(source: str) -> tuple[np.ndarray, np.ndarray]:
    """Zone radii and normalised production weights of a source (cached).

    Parameters
    ----------
    source : str
        One of :data:`SOURCES`.

    Returns
    -------
    x : ndarray, shape (1219,)
        Tabulated zone radii / R⊙ (0.00041 … 0.49959).
    weights : ndarray, shape (1219,)
        Fraction of the source's neutrinos produced in each zone: the published BS05(AGS,OP)
        fractions divided by their sum (which differs from 1 by < 1e-5), so they sum to 1.

    Raises
    ------
    ConfigError
        Unknown source.
    """
    _check_source(source)
    return _quadrature(source)


def production_pdf(source: str, x: np.ndarray | float) -> np.ndarray:
    """Normalised radial production density f(x), ∫₀¹ f dx = 1 (piecewise constant).

    Parameters
    ----------
    source : str
        One of :data:`SOURCES`.
    x : array_like
        Radius / R⊙, any shape.

    Returns
    -------
    ndarray
        Density per unit x (R⊙⁻¹), same shape as ``x``: weight / zone width in the zone
        containing x; zero outside [0, 0.4998] (beyond the table).

    Raises
    ------
    ConfigError
        Unknown source.
    """
    _, w = production_quadrature(source)
    edges = ssm_table().edges
    dens = w / np.diff(edges)
    x = np.asarray(x, dtype=float)
    i = np.clip(np.searchsorted(edges, x, side="right") - 1, 0, w.size - 1)
    inside = (x >= 0.0) & (x <= edges[-1])
    return np.where(inside, dens[i], 0.0)


def sample_production_radius(source: str, n: int, rng: np.random.Generator) -> np.ndarray:
    """Draw production radii from the source's tabulated radial distribution (inverse CDF).

    Parameters
    ----------
    source : str
        One of :data:`SOURCES`.
    n : int
        Number of radii.
    rng : numpy.random.Generator
        Random generator (the only source of randomness).

    Returns
    -------
    ndarray, shape (n,)
        Radii / R⊙, uniform within each zone (piecewise-linear CDF through the zone edges).

    Raises
    ------
    ConfigError
        Unknown source.
    """
    _, w = production_quadrature(source)
    cdf = np.concatenate([[0.0], np.cumsum(w)])
    cdf[-1] = 1.0
    return np.interp(rng.random(n), cdf, ssm_table().edges)
