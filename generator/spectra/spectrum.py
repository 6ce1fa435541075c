"""The :class:`Spectrum` container and the catalogue of the eight solar sources.

Continuous sources are allowed β⁺ shapes (:mod:`generator.spectra.beta`) or the ⁸B model
(:mod:`generator.spectra.boron8`); ⁷Be and pep are δ-lines (thermal broadening of ≈1 keV,
Bahcall, Phys. Rev. D 49, 3923 (1994), is neglected).

Line data: ⁷Be lines at Q_EC and Q_EC − E(⁷Li*, 0.4776 MeV) with branching 89.56 % / 10.44 %
(Tilley et al., Nucl. Phys. A 708, 3 (2002), from memory); pep line 2Δ(¹H) − Δ(²H).
"""

from __future__ import annotations

from collections.abc import Sequence
from functools import cache

import numpy as np

from generator.cache import CacheRejected, cached_arrays, check_arrays, code_key
from generator.constants import ELECTRON_MASS
from generator.errors import ConfigError
from generator.spectra.beta import (
    LI7_EXCITED_MEV,
    MASS_EXCESS_KEV,
    allowed_shape,
    q_beta_plus,
    q_electron_capture,
)
from generator.spectra.boron8 import B8_Q_GROUND_MEV, BE8_GROUND_ABOVE_2ALPHA_MEV
from generator.spectra.boron8_measured import B8_VARIANTS, b8_variant_spectrum
from generator.spectra.fluxes import SOURCE_NAMES
from generator.spectra.sampling import InverseCDFSampler

__all__ = ["Spectrum", "get_spectrum", "source_endpoint", "BE7_BRANCHING", "GRID_POINTS"]

#: Number of grid points of the tabulated continuous spectra.
GRID_POINTS: int = 4001

#: ⁷Be capture branching (ground state, excited state) (Tilley et al. 2002, from memory).
BE7_BRANCHING: tuple[float, float] = (0.8956, 0.1044)

#: (parent, daughter, daughter Z, daughter A) for the allowed β⁺ sources.
_BETA_SOURCES: dict[str, tuple[str, str, int, int]] = {
    "pp": ("1H", "2H", 1, 2),  # p + p → d e⁺ ν
    "hep": ("3He", "4He", 2, 4),  # ³He + p → ⁴He e⁺ ν
    "13N": ("13N", "13C", 6, 13),
    "15O": ("15O", "15N", 7, 15),
    "17F": ("17F", "17O", 8, 17),
}


class Spectrum:
    """Normalised neutrino energy spectrum: a tabulated continuous part plus δ-lines.

    Parameters
    ----------
    name : str
        Source name.
    energies : numpy.ndarray
        Strictly increasing grid in MeV, shape ``(m,)``.
    density : numpy.ndarray
        Non-negative density on the grid (any normalisation), shape ``(m,)``;
        linear between nodes.
    lines : sequence of (float, float), optional
        ``(energy MeV, branching fraction)`` of δ-lines; fractions of the total.
    continuous_fraction : float, optional
        Fraction of decays in the continuous part; ``1 − Σ line fractions`` if omitted.

    Notes
    -----
    Immutable after construction (attributes are read-only, arrays are write-protected).
    """

    __slots__ = ("name", "e_max", "lines", "continuous_fraction", "_e", "_pdf", "_sampler")

    def __init__(
        self,
        name: str,
        energies: np.ndarray,
        density: np.ndarray,
        lines: Sequence[tuple[float, float]] = (),
        continuous_fraction: float | None = None,
    ) -> None:
        lines_t = tuple((float(e), float(b)) for e, b in lines)
        line_sum = sum(b for _, b in lines_t)
        cont = 1.0 - line_sum if continuous_fraction is None else float(continuous_fraction)
        if not 0.0 <= cont <= 1.0 or abs(cont + line_sum - 1.0) > 1e-9:
            raise ConfigError(
                f"spectrum {name!r}: continuous fraction {cont} plus line fractions {line_sum} "
                "must be 1"
            )
        e = np.asarray(energies, dtype=np.float64)
        d = np.asarray(density, dtype=np.float64)
        weights = [b for _, b in lines_t]
        if cont > 0.0:
            area = float(np.sum(0.5 * np.diff(e) * (d[:-1] + d[1:])))
            if not area > 0.0:
                raise ConfigError(f"spectrum {name!r}: density integrates to {area}, need > 0")
            pdf = d * (cont / area)
        else:
            pdf = np.zeros_like(d)
        sampler = InverseCDFSampler(e, pdf, [x for x, _ in lines_t], weights)
        e = e.copy()
        pdf = pdf.copy()
        e.flags.writeable = False
        pdf.flags.writeable = False
        top = max([e[-1] if cont > 0.0 else 0.0] + [x for x, _ in lines_t])
        for attr, value in (
            ("name", str(name)),
            ("e_max", float(top)),
            ("lines", lines_t),
            ("continuous_fraction", cont),
            ("_e", e),
            ("_pdf", pdf),
            ("_sampler", sampler),
        ):
            object.__setattr__(self, attr, value)

    def __setattr__(self, key: str, value: object) -> None:
        raise AttributeError(f"Spectrum is immutable; cannot set {key!r}")

    def __getstate__(self) -> dict[str, object]:
        """State for pickling (process pools and dask workers ship plans by value)."""
        return {k: getattr(self, k) for k in self.__slots__}

    def __setstate__(self, state: dict[str, object]) -> None:
        """Restore a pickled spectrum without going through the immutability guard."""
        for k, v in state.items():
            object.__setattr__(self, k, v)

    def __repr__(self) -> str:
        return (
            f"Spectrum(name={self.name!r}, e_max={self.e_max:.4f} MeV, lines={self.lines}, "
            f"continuous_fraction={self.continuous_fraction})"
        )

    def pdf(self, energy: np.ndarray) -> np.ndarray:
        """Continuous density, linear between grid nodes, 0 outside the grid.

        Parameters
        ----------
        energy : numpy.ndarray
            Neutrino energies in MeV, any shape.

        Returns
        -------
        numpy.ndarray
            Density in 1/MeV (∫ pdf dE = ``continuous_fraction``), same shape.
        """
        return np.interp(np.asarray(energy, dtype=np.float64), self._e, self._pdf, 0.0, 0.0)

    def grid(self) -> tuple[np.ndarray, np.ndarray]:
        """Fine tabulation grid (≥ 2000 points, includes both endpoints).

        Returns
        -------
        tuple of numpy.ndarray
            ``(energies [MeV], pdf [1/MeV])``, read-only, shape ``(m,)``; the pdf is zero
            for pure line sources.
        """
        return self._e, self._pdf

    def mean(self) -> float:
        """Mean neutrino energy including the lines, in MeV (exact for the linear pdf)."""
        e, f = self._e, self._pdf
        h = np.diff(e)
        # Exact ∫ E pdf(E) dE for a pdf linear on each cell.
        cells = e[:-1] * (2 * f[:-1] + f[1:]) + e[1:] * (f[:-1] + 2 * f[1:])
        cont = float(np.sum(h / 6.0 * cells))
        return cont + sum(x * b for x, b in self.lines)

    def sample(self, rng: np.random.Generator, n: int) -> np.ndarray:
        """Draw ``n`` neutrino energies.

        Parameters
        ----------
        rng : numpy.random.Generator
            Source of randomness.
        n : int
            Number of draws (≥ 0).

        Returns
        -------
        numpy.ndarray
            float64 energies in MeV, shape ``(n,)``; line energies are exact.
        """
        return self._sampler.sample(rng, n)


def source_endpoint(name: str) -> float:
    """Kinematic endpoint (continuous sources) or top line energy, in MeV.

    From AME2020 atomic mass excesses (from memory; see :mod:`generator.spectra.beta`):
    pp: 2Δ(¹H) − Δ(²H) − 2m_e; hep: Δ(³He) + Δ(¹H) − Δ(⁴He) − 2m_e; pep: 2Δ(¹H) − Δ(²H);
    ⁷Be: Δ(⁷Be) − Δ(⁷Li); ¹³N, ¹⁵O, ¹⁷F: Δ(parent) − Δ(daughter) − 2m_e; ⁸B: Δ(⁸B) −
    Δ(⁸Be) − 2m_e + 0.0918 MeV (decay to the αα continuum below the ⁸Be ground state).
    Nuclear recoil is neglected.

    Parameters
    ----------
    name : str
        Source name.

    Returns
    -------
    float
        Energy in MeV.
    """
    mx = MASS_EXCESS_KEV
    if name == "pp":
        return (2 * mx["1H"] - mx["2H"]) * 1e-3 - 2 * ELECTRON_MASS
    if name == "pep":
        return (2 * mx["1H"] - mx["2H"]) * 1e-3
    if name == "hep":
        return (mx["3He"] + mx["1H"] - mx["4He"]) * 1e-3 - 2 * ELECTRON_MASS
    if name == "7Be":
        return q_electron_capture("7Be", "7Li")
    if name == "8B":
        return B8_Q_GROUND_MEV + BE8_GROUND_ABOVE_2ALPHA_MEV
    parent, daughter, _, _ = _BETA_SOURCES[name]
    return q_beta_plus(parent, daughter)


def _continuous_table(source: str, variant: str) -> tuple[np.ndarray, np.ndarray]:
    """(E grid in MeV, unnormalised density) of a continuous source, built or from the cache.

    The ⁸B model needs ≈ 0.3 s (Coulomb wave functions by ODE integration), so the tables go
    through :mod:`generator.cache`, keyed by source, variant, grid size and the package code;
    a loaded table is bit-identical to a fresh one.
    """

    def build() -> dict[str, np.ndarray]:
        if source == "8B":
            e, pdf = b8_variant_spectrum(variant, GRID_POINTS)
        else:
            _, _, z, a = _BETA_SOURCES[source]
            q = source_endpoint(source)
            e = np.linspace(0.0, q, GRID_POINTS)
            pdf = allowed_shape(e, q, z, a)
        return {"energy": np.asarray(e, dtype=np.float64),
                "density": np.asarray(pdf, dtype=np.float64)}

    def validate(arrays: dict[str, np.ndarray]) -> None:
        check_arrays(arrays, {"energy": (GRID_POINTS,), "density": (GRID_POINTS,)})
        if np.any(np.diff(arrays["energy"]) <= 0.0) or arrays["density"].min() < 0.0:
            raise CacheRejected("energy grid not increasing or negative density")

    t = cached_arrays("spectrum", {"table": "spectrum-v1", **code_key(), "source": source,
                                   "variant": variant, "points": GRID_POINTS}, build, validate)
    return t["energy"], t["density"]


@cache
def _build(source: str, variant: str) -> Spectrum:
    if source in _BETA_SOURCES or source == "8B":
        return Spectrum(source, *_continuous_table(source, variant))
    q = source_endpoint(source)
    if source == "7Be":
        lines = ((q, BE7_BRANCHING[0]), (q - LI7_EXCITED_MEV, BE7_BRANCHING[1]))
    else:  # pep
        lines = ((q, 1.0),)
    e = np.linspace(0.0, q, GRID_POINTS)
    return Spectrum(source, e, np.zeros_like(e), lines=lines, continuous_fraction=0.0)


def get_spectrum(source: str, variant: str = "nominal") -> Spectrum:
    """Spectrum of one of the eight standard sources (built once, then cached).

    Parameters
    ----------
    source : str
        One of ``SOURCE_NAMES``.
    variant : str, optional
        ``"nominal"`` (the default shape); for ``"8B"`` also ``"measured"`` (the measured
        spectrum of Winter et al. 2006, which is the ⁸B default), ``"plus1sigma"`` /
        ``"minus1sigma"`` (measured ± its published 1σ shape column) and ``"model"`` (the
        R-matrix physics model), see :mod:`generator.spectra.boron8_measured`.

    Returns
    -------
    Spectrum
        Immutable spectrum object.

    Raises
    ------
    generator.errors.ConfigError
        Unknown source or variant.
    """
    if source not in SOURCE_NAMES:
        raise ConfigError(f"unknown source {source!r}; allowed: {', '.join(SOURCE_NAMES)}")
    allowed = ("nominal", *B8_VARIANTS) if source == "8B" else ("nominal",)
    if variant not in allowed:
        raise ConfigError(
            f"unknown spectrum variant {variant!r} for source {source!r}; allowed: "
            f"{', '.join(allowed)}"
        )
    return _build(source, variant)
