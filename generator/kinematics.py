"""Exact two-body kinematics of ν + e⁻ → ν + e⁻ on a free electron at rest.

All energies in MeV, directions as unit 3-vectors, 4-momenta as ``[E, px, py, pz]`` in MeV.
The relations are textbook relativistic two-body kinematics (energy–momentum conservation
with a massless neutrino and a target electron at rest), e.g. PDG Review of Particle Physics,
"Kinematics" chapter (two-body scattering); see also J. N. Bahcall, *Neutrino Astrophysics*
(Cambridge University Press, 1989), ch. 8, for the recoil-angle formula.
"""

from __future__ import annotations

import numpy as np
from numpy.typing import ArrayLike

from generator.constants import ELECTRON_MASS
from generator.errors import ConfigError

__all__ = [
    "t_max",
    "e_min_for_recoil",
    "cos_theta_electron",
    "orthonormal_basis",
    "scatter",
    "final_state",
    "on_cone_direction",
]

#: Relative tolerance used to accept recoil energies marginally above T_max (rounding).
_T_TOLERANCE = 1e-12


def t_max(energy: ArrayLike) -> np.ndarray:
    """Largest electron recoil kinetic energy.

    T_max = 2E² / (m + 2E) (two-body kinematics, electron at rest).

    Parameters
    ----------
    energy : array_like
        Neutrino energy E in MeV, any shape, E ≥ 0.

    Returns
    -------
    numpy.ndarray
        T_max in MeV, same shape as ``energy``.
    """
    e = np.asarray(energy, dtype=np.float64)
    return 2.0 * e * e / (ELECTRON_MASS + 2.0 * e)


def e_min_for_recoil(t: ArrayLike) -> np.ndarray:
    """Smallest neutrino energy able to produce recoil kinetic energy ``t``.

    E_min(T) = [T + √(T² + 2mT)] / 2, the inverse of :func:`t_max`.

    Parameters
    ----------
    t : array_like
        Electron kinetic energy T in MeV, T ≥ 0.

    Returns
    -------
    numpy.ndarray
        E_min in MeV, same shape as ``t``.
    """
    tt = np.asarray(t, dtype=np.float64)
    return 0.5 * (tt + np.sqrt(tt * tt + 2.0 * ELECTRON_MASS * tt))


def cos_theta_electron(energy: ArrayLike, t: ArrayLike) -> np.ndarray:
    """Cosine of the recoil-electron angle to the incoming neutrino direction.

    cos θ = [(E + m)/E] · √(T/(T + 2m))  (Bahcall 1989, ch. 8; follows from
    energy–momentum conservation). Equal to 1 at T = T_max; clipped to [0, 1] against
    rounding.

    Parameters
    ----------
    energy : array_like
        Neutrino energy E in MeV (> 0).
    t : array_like
        Electron kinetic energy T in MeV, 0 ≤ T ≤ T_max(E); broadcast against ``energy``.

    Returns
    -------
    numpy.ndarray
        cos θ, broadcast shape of the inputs.
    """
    e = np.asarray(energy, dtype=np.float64)
    tt = np.asarray(t, dtype=np.float64)
    c = (e + ELECTRON_MASS) / e * np.sqrt(tt / (tt + 2.0 * ELECTRON_MASS))
    return np.clip(c, 0.0, 1.0)


def orthonormal_basis(n: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Two unit vectors completing the unit vectors ``n`` to right-handed orthonormal bases.

    Branch-free construction of T. Duff et al., "Building an Orthonormal Basis, Revisited",
    J. Computer Graphics Techniques 6 (1), 1 (2017); vectorised over rows.

    Parameters
    ----------
    n : numpy.ndarray
        Unit vectors, shape (k, 3).

    Returns
    -------
    tuple of numpy.ndarray
        ``(u, v)``, each shape (k, 3), with (u, v, n) right-handed and orthonormal.
    """
    u, v = _basis_columns(n[:, 0], n[:, 1], n[:, 2])
    return np.stack(u, axis=1), np.stack(v, axis=1)


def scatter(
    rng: np.random.Generator, energy: ArrayLike, t: ArrayLike, nu_dir: ArrayLike,
    final: bool = True,
) -> tuple[np.ndarray, np.ndarray | None, np.ndarray | None]:
    """Build the final state of ν e⁻ → ν e⁻ for given neutrino energies and recoil energies.

    The electron polar angle follows from :func:`cos_theta_electron`; its azimuth around the
    neutrino direction is uniform in [0, 2π), drawn with exactly one ``rng.random(n)`` call.
    The outgoing neutrino takes E' = E − T and momentum E·n̂ − p⃗_e, so energy and momentum
    are conserved by construction (to rounding).

    Parameters
    ----------
    rng : numpy.random.Generator
        Source of randomness (one ``random(n)`` call).
    energy : array_like
        Neutrino energies E in MeV, shape (n,).
    t : array_like
        Electron kinetic energies T in MeV, shape (n,), 0 ≤ T ≤ T_max(E).
    nu_dir : array_like
        Unit direction-of-travel vectors of the incoming neutrinos, shape (n, 3).
    final : bool, optional
        Also build the two 4-momenta (default); with False they are returned as None and
        only the electron direction is computed (the same values).

    Returns
    -------
    electron_dir : numpy.ndarray
        Unit vectors of the electron momenta, shape (n, 3).
    nu_out : numpy.ndarray or None
        Outgoing-neutrino 4-momenta [E', px, py, pz] in MeV, shape (n, 4).
    electron : numpy.ndarray or None
        Electron 4-momenta [T + m, px, py, pz] in MeV, shape (n, 4).

    Raises
    ------
    ConfigError
        If shapes disagree, energies are not positive and finite, T is outside [0, T_max(E)],
        or ``nu_dir`` rows are not unit vectors (|n| − 1 > 1e-6).
    """
    e = np.asarray(energy, dtype=np.float64).reshape(-1)
    tt = np.asarray(t, dtype=np.float64).reshape(-1)
    n = np.asarray(nu_dir, dtype=np.float64)
    k = e.size
    if tt.size != k or n.shape != (k, 3):
        raise ConfigError(
            f"scatter: energy {e.shape}, t {tt.shape} and nu_dir {n.shape} must have shapes "
            "(n,), (n,) and (n, 3)"
        )
    if not np.all(np.isfinite(e) & (e > 0.0)):
        raise ConfigError("scatter: parameter 'energy' must be finite and > 0 MeV")
    tm = t_max(e)
    if not np.all(np.isfinite(tt) & (tt >= 0.0) & (tt <= tm * (1.0 + _T_TOLERANCE))):
        raise ConfigError("scatter: parameter 't' must satisfy 0 <= t <= t_max(energy) (MeV)")
    norm = np.sqrt(np.einsum("ij,ij->i", n, n))
    if not np.all(np.abs(norm - 1.0) < 1e-6):
        raise ConfigError("scatter: parameter 'nu_dir' must hold unit vectors (|n| = 1 +- 1e-6)")
    n = n / norm[:, None]
    tt = np.minimum(tt, tm)

    cos_t = cos_theta_electron(e, tt)
    sin_t = np.sqrt(np.maximum(0.0, 1.0 - cos_t * cos_t))
    phi = 2.0 * np.pi * rng.random(k)
    # ê = cos θ n̂ + sin θ cos φ û + sin θ sin φ v̂, one component at a time (the same
    # arithmetic as with whole (k, 3) arrays, without the temporaries)
    u, v = _basis_columns(n[:, 0], n[:, 1], n[:, 2])
    a = sin_t * np.cos(phi)
    b = sin_t * np.sin(phi)
    electron_dir = np.empty((k, 3))
    for c in range(3):
        col = cos_t * n[:, c]
        col += a * u[c]
        col += b * v[c]
        electron_dir[:, c] = col
    if not final:
        return electron_dir, None, None
    p_e = np.sqrt(tt * (tt + 2.0 * ELECTRON_MASS))
    nu_out, electron = final_state(e, tt, n, electron_dir, p_e)
    return electron_dir, nu_out, electron


def _basis_columns(nx: np.ndarray, ny: np.ndarray, nz: np.ndarray
                   ) -> tuple[tuple[np.ndarray, ...], tuple[np.ndarray, ...]]:
    """Components ((ux, uy, uz), (vx, vy, vz)) of :func:`orthonormal_basis` (same arithmetic)."""
    sign = np.where(nz >= 0.0, 1.0, -1.0)
    a = -1.0 / (sign + nz)
    b = nx * ny * a
    return ((1.0 + sign * nx * nx * a, sign * b, -sign * nx),
            (b, sign + ny * ny * a, -ny))


def final_state(energy: np.ndarray, t: np.ndarray, nu_dir: np.ndarray,
                electron_dir: np.ndarray, p_e: np.ndarray | None = None
                ) -> tuple[np.ndarray, np.ndarray]:
    """Outgoing 4-momenta of ν e⁻ → ν e⁻ from E, T and the two directions.

    The electron has E_e = T + m and momentum p_e ê with p_e = √(T(T + 2m)); the outgoing
    neutrino takes E' = E − T and p⃗' = E n̂ − p⃗_e (energy–momentum conservation with the
    electron at rest, PDG Review "Kinematics", two-body scattering). Both are on shell when ê
    lies on the kinematic cone cos θ = :func:`cos_theta_electron` about n̂.

    Parameters
    ----------
    energy, t : numpy.ndarray
        Neutrino energies E and electron kinetic energies T in MeV, shape (k,), float64.
    nu_dir, electron_dir : numpy.ndarray
        Unit vectors n̂ (incoming neutrino) and ê (electron), shape (k, 3), float64.
    p_e : numpy.ndarray, optional
        Electron momenta in MeV if already computed, shape (k,).

    Returns
    -------
    nu_out, electron : numpy.ndarray
        4-momenta [E, px, py, pz] in MeV, each shape (k, 4).
    """
    k = energy.shape[0]
    if p_e is None:
        p_e = np.sqrt(t * (t + 2.0 * ELECTRON_MASS))
    p_vec = p_e[:, None] * electron_dir
    electron = np.empty((k, 4))
    electron[:, 0] = t + ELECTRON_MASS
    electron[:, 1:] = p_vec
    nu_out = np.empty((k, 4))
    nu_out[:, 0] = energy - t
    nu_out[:, 1:] = energy[:, None] * nu_dir - p_vec
    return nu_out, electron


def on_cone_direction(energy: np.ndarray, t: np.ndarray, nu_dir: np.ndarray,
                      electron_dir: np.ndarray) -> np.ndarray:
    """The unit vector nearest to ``electron_dir`` on the kinematic cone about ``nu_dir``.

    Keeps the azimuth of ``electron_dir`` around n̂ and sets its polar angle to the exact
    two-body value of :func:`cos_theta_electron` (Bahcall 1989, ch. 8). Used to restore exact
    kinematics from single-precision stored directions (the change is of the order of the
    float32 rounding, ~1e-7 rad). Where ``electron_dir`` is (anti)parallel to n̂ the azimuth is
    taken along the first vector of :func:`orthonormal_basis`.

    Parameters
    ----------
    energy, t : numpy.ndarray
        Neutrino energies E and electron kinetic energies T in MeV, shape (k,), T ≤ T_max(E).
    nu_dir, electron_dir : numpy.ndarray
        Unit vectors, shape (k, 3), float64.

    Returns
    -------
    numpy.ndarray
        Unit vectors on the cone, shape (k, 3).
    """
    cos_t = cos_theta_electron(energy, t)
    sin_t = np.sqrt(np.maximum(0.0, 1.0 - cos_t * cos_t))
    along = np.einsum("ij,ij->i", electron_dir, nu_dir)
    perp = electron_dir - along[:, None] * nu_dir
    norm = np.sqrt(np.einsum("ij,ij->i", perp, perp))
    small = norm < 1e-12
    if np.any(small):
        u, _ = orthonormal_basis(nu_dir[small])
        perp[small] = u
        norm[small] = 1.0
    return cos_t[:, None] * nu_dir + (sin_t / norm)[:, None] * perp
