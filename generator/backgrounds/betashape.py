"""Shared β-spectrum tools of the background isotopes: shape factors, branches, samplers.

Each β branch has an endpoint kinetic energy T₀ (Q minus the level energy fed), a shape factor
C(W) and the energy of the γ cascade that follows (all of it taken as deposited, see
:mod:`generator.backgrounds.chain`). The spectrum is
:func:`generator.spectra.beta.electron_spectrum` (allowed Fermi theory with the relativistic
point-charge Fermi function; no finite-size L₀, no screening, no radiative corrections — a
≤ 1 % effect on the mean for Z ≲ 30 and a few per cent at Z ≈ 84, Wilkinson, NIM A 290, 509
(1990), Hayen et al., RMP 90, 015008 (2018)).

Shape factors (W, W₀ and p in units of m_e c²; q = W₀ − W the neutrino energy):

* ``allowed``: C = 1.
* ``unique1`` (first-forbidden unique, ΔJ = 2, parity change): C = q² + λ₂ p²;
* ``unique3`` (third-forbidden unique, ΔJ = 4): C = q⁶ + 7λ₂ q⁴p² + 7λ₃ q²p⁴ + λ₄ p⁶;
  both from Konopinski, *The Theory of Beta Radioactivity*, OUP (1966), and Behrens & Bühring,
  *Electron Radial Wave Functions and Nuclear Beta-decay*, OUP (1982), with the Coulomb
  functions λ_k = F_{k−1}/F₀ from the generalised Fermi function
  (:func:`generator.spectra.beta.fermi_function` with ``k``) — not the cruder λ_k = 1, which
  Mougeot, PRC 91, 055504 (2015) shows to be systematically worse.
* ``bi210``: the measured ²¹⁰Bi (1⁻ → 0⁺, first-forbidden non-unique) form factor
  S(W) = 1 − 0.4363 W + 0.0523 W² (Alekseev et al., PRC 102, 064329 (2020), arXiv:2005.08481,
  abstract; W read as the total energy in m_e c² units — the paper's convention is assumed).
* ``c14``: a linear shape factor C = 1 + a W for the hindered ¹⁴C Gamow–Teller decay with
  a = −0.45 (slope of Kuzminov & Osetrova, Phys. At. Nucl. 63, 1292 (2000) — from memory, not
  checked against the paper).
"""

from __future__ import annotations

from dataclasses import asdict, dataclass

import numpy as np

from ..cache import CacheRejected, cached_arrays, check_arrays, code_key
from ..constants import ELECTRON_MASS
from ..errors import ConfigError
from ..spectra.beta import electron_spectrum, fermi_function, nuclear_radius_fm
from ..spectra.sampling import InverseCDFSampler

__all__ = ["Branch", "SHAPE_FACTORS", "branch_spectrum", "mean_kinetic", "BranchSampler",
           "C14_SLOPE", "ANNIHILATION_MEV"]

#: Slope a of the ¹⁴C shape factor C = 1 + a W (Kuzminov & Osetrova 2000; from memory).
C14_SLOPE: float = -0.45

#: Grid points per branch spectrum.
GRID_POINTS = 2049


def _lam(k: int, w: np.ndarray, z: int, r_fm: float, positron: bool) -> np.ndarray:
    """Coulomb function λ_k = F_{k−1}/F₀ (Konopinski 1966; Behrens & Bühring 1982)."""
    f0 = fermi_function(z, w, r_fm, positron)
    return fermi_function(z, w, r_fm, positron, k=k) / np.where(f0 > 0.0, f0, 1.0)


def _unique1(w, w0, z, r_fm, positron):
    q = w0 - w
    return q * q + _lam(2, w, z, r_fm, positron) * (w * w - 1.0)


def _unique3(w, w0, z, r_fm, positron):
    q2 = (w0 - w) ** 2
    p2 = w * w - 1.0
    return (q2**3 + 7.0 * _lam(2, w, z, r_fm, positron) * q2 * q2 * p2
            + 7.0 * _lam(3, w, z, r_fm, positron) * q2 * p2 * p2
            + _lam(4, w, z, r_fm, positron) * p2**3)


def _bi210(w, w0, z, r_fm, positron):
    return np.maximum(1.0 - 0.4363 * w + 0.0523 * w * w, 0.0)


def _c14(w, w0, z, r_fm, positron):
    return np.maximum(1.0 + C14_SLOPE * w, 0.0)


#: Shape factors C(W, W₀, Z, R, β⁺) by name (module docstring gives the sources).
SHAPE_FACTORS = {"allowed": None, "unique1": _unique1, "unique3": _unique3, "bi210": _bi210,
                 "c14": _c14}


@dataclass(frozen=True)
class Branch:
    """One decay branch.

    Parameters
    ----------
    intensity : float
        Fraction of decays (of the isotope) that take this branch.
    endpoint_mev : float
        β endpoint kinetic energy (MeV); for an α line, its kinetic energy.
    shape : str
        Key of :data:`SHAPE_FACTORS`, or ``"line"`` for a monoenergetic α or electron-capture
        branch (no β spectrum).
    gamma_mev : float
        Energy of the γ cascade (or annihilation quanta) deposited with it (MeV).
    """

    intensity: float
    endpoint_mev: float
    shape: str = "allowed"
    gamma_mev: float = 0.0


def branch_spectrum(b: Branch, z_daughter: int, a: int, positron: bool
                    ) -> tuple[np.ndarray, np.ndarray]:
    """Grid (MeV) and normalised density (MeV⁻¹) of a β branch's kinetic energy."""
    if b.shape not in SHAPE_FACTORS:
        raise ConfigError(f"unknown β shape {b.shape!r}; allowed: {sorted(SHAPE_FACTORS)}")
    # denser near both ends, where the spectrum changes fastest
    u = np.linspace(0.0, 1.0, GRID_POINTS)
    t = b.endpoint_mev * (0.5 - 0.5 * np.cos(np.pi * u))
    sf = SHAPE_FACTORS[b.shape]
    r_fm = nuclear_radius_fm(a)
    c = None if sf is None else (lambda w, w0: sf(w, w0, z_daughter, r_fm, positron))
    d = electron_spectrum(t, b.endpoint_mev, z_daughter, a, positron, c)
    return t, d / np.trapezoid(d, t)


def mean_kinetic(b: Branch, z_daughter: int, a: int, positron: bool = False) -> float:
    """Mean kinetic energy (MeV) of a branch's β spectrum (trapezoidal rule on the grid)."""
    if b.shape == "line":
        return b.endpoint_mev
    t, d = branch_spectrum(b, z_daughter, a, positron)
    return float(np.trapezoid(t * d, t))


def _branch_tables(branches: tuple[Branch, ...], z_daughter: int, a: int, positron: bool
                   ) -> dict[str, np.ndarray]:
    """:func:`branch_spectrum` of every non-line branch (``t<k>``, ``d<k>``), from the cache.

    The Fermi function needs scipy.special (≈ 0.1 s of import); the tables go through
    :mod:`generator.cache`, keyed by every branch and nucleus input and the package code, and a
    loaded table is bit-identical to a fresh one.
    """
    shaped = [k for k, b in enumerate(branches) if b.shape != "line"]

    def build() -> dict[str, np.ndarray]:
        out: dict[str, np.ndarray] = {}
        for k in shaped:
            out[f"t{k}"], out[f"d{k}"] = branch_spectrum(branches[k], z_daughter, a, positron)
        return out

    def validate(arrays: dict[str, np.ndarray]) -> None:
        check_arrays(arrays, {f"{c}{k}": (GRID_POINTS,) for k in shaped for c in "td"})
        if any(np.any(np.diff(arrays[f"t{k}"]) < 0.0) or arrays[f"d{k}"].min() < 0.0
               for k in shaped):
            raise CacheRejected("branch grid decreasing or negative density")

    key = {"table": "betashape-v1", **code_key(), "branches": [asdict(b) for b in branches],
           "z_daughter": int(z_daughter), "a": int(a), "positron": bool(positron),
           "points": GRID_POINTS}
    return cached_arrays("betashape", key, build, validate)


class BranchSampler:
    """Draws (branch index, kinetic energy, γ energy) for the branches of one isotope.

    Parameters
    ----------
    branches : sequence of Branch
        Intensities are renormalised to sum to one (the kept branches of an evaluated scheme).
    z_daughter, a : int
        Daughter charge and mass number.
    positron : bool
        β⁺ emitter.
    """

    def __init__(self, branches, z_daughter: int, a: int, positron: bool = False):
        self.branches = tuple(branches)
        w = np.array([b.intensity for b in self.branches], dtype=np.float64)
        if w.size == 0 or np.any(w < 0.0) or not w.sum() > 0.0:
            raise ConfigError("an isotope needs branches with non-negative intensities")
        self.probability = w / w.sum()
        self.cdf = np.cumsum(self.probability)
        self.cdf[-1] = 1.0
        self.gamma = np.array([b.gamma_mev for b in self.branches])
        tables = _branch_tables(self.branches, z_daughter, a, positron)
        self.samplers = [None if b.shape == "line" else
                         InverseCDFSampler(tables[f"t{k}"], tables[f"d{k}"])
                         for k, b in enumerate(self.branches)]

    @property
    def mean_kinetic_mev(self) -> float:
        """Intensity-weighted mean kinetic energy (MeV)."""
        return float(sum(p * _mean(s, b) for p, s, b in
                         zip(self.probability, self.samplers, self.branches, strict=True)))

    def sample(self, rng: np.random.Generator, n: int
               ) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
        """Kinetic energies (MeV), deposited γ energies (MeV) and branch indices, shape (n,).

        One uniform per event picks the branch (skipped for a single branch), then each
        branch's inverse-CDF sampler draws its energies.
        """
        t = np.empty(n)
        if len(self.branches) == 1:
            k = np.zeros(n, dtype=np.intp)
        else:
            k = np.minimum(np.searchsorted(self.cdf, rng.random(n), side="right"),
                           len(self.branches) - 1)
        for j, (s, b) in enumerate(zip(self.samplers, self.branches, strict=True)):
            idx = np.flatnonzero(k == j) if len(self.branches) > 1 else slice(None)
            m = n if len(self.branches) == 1 else idx.size
            if s is None:
                t[idx] = b.endpoint_mev
            elif m:
                t[idx] = s.sample(rng, m)
        return t, self.gamma[k], k


def _mean(s: InverseCDFSampler | None, b: Branch) -> float:
    if s is None:
        return b.endpoint_mev
    x, d = s.x, s.density
    return float(np.trapezoid(x * d, x) / np.trapezoid(d, x))


#: Energy of the two annihilation quanta of a stopped positron, 2 m_e c² (MeV, CODATA).
ANNIHILATION_MEV: float = 2.0 * ELECTRON_MASS
