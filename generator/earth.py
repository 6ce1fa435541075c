"""Earth matter effects: PREM density, chord geometry and flavour evolution through the Earth.

Density: Preliminary Reference Earth Model (Dziewonski & Anderson, Phys. Earth Planet. Inter.
25, 297 (1981)), ρ = a + b x + c x² + d x³ g cm⁻³ with x = r/6371 km.  Electrons per nucleon
Y_e = 0.4656 in the core (= Z/A of iron) and 0.4957 in the mantle and crust (values in common
use in neutrino work, from memory), 10/18.015 for water.  PREM's global 3-km ocean lies right
under a continental detector; by default it is replaced by upper crust (2.6 g cm⁻³), a
choice recorded in the provenance.

Evolution: solar neutrinos reach the Earth as an incoherent mixture of mass eigenstates.  Each
ν_i is propagated along the chord, split exactly at the shell crossings and sub-stepped with
the midpoint density; every slice uses the exact constant-density evolution operator.  The
production code uses the standard 3ν reduction: in the propagation basis ν̃ = (R₂₃U₁₃)†ν the
third state decouples (V ≪ Δm²₃₁/2E) and the (ẽ, μ̃) pair evolves with Δm²₂₁, θ₁₂ and the
potential c₁₃² V (Kuo & Pantaleone, Rev. Mod. Phys. 61, 937 (1989)).  The full 3×3 evolution
(:func:`transition_probs_3nu_exact`) is kept for validation.  Both are functions of the
neutrino energy and solar zenith angle only; :func:`smoothed_transition_table` builds the
night table that :class:`generator.oscillation.FlavourModel` caches on disk.
"""

from __future__ import annotations

import numpy as np

from generator.constants import HBARC_MEV_FM, MATTER_POTENTIAL_EV_PER_NA
from generator.errors import ConfigError

__all__ = [
    "EARTH_RADIUS_KM",
    "CORE_RADIUS_KM",
    "Y_E_CORE",
    "Y_E_MANTLE",
    "Y_E_WATER",
    "EV_TO_INV_KM",
    "prem_density",
    "electron_fraction",
    "earth_electron_density",
    "chord_length_km",
    "chord_slices",
    "propagation_basis_evolution",
    "transition_probs",
    "transition_probs_3nu_exact",
    "smoothed_transition_table",
    "annual_cos_zenith_samples",
]

#: PREM surface radius in km (Dziewonski & Anderson 1981).
EARTH_RADIUS_KM: float = 6371.0
#: PREM core–mantle boundary radius in km.
CORE_RADIUS_KM: float = 3480.0
#: Electrons per nucleon in the core (Z/A of Fe = 26/55.845; value in common use, from memory).
Y_E_CORE: float = 0.4656
#: Electrons per nucleon in mantle and crust (value in common use, from memory).
Y_E_MANTLE: float = 0.4957
#: Electrons per nucleon in water, 10/18.015.
Y_E_WATER: float = 10.0 / 18.015
#: 1 eV expressed in km⁻¹ (ħc from generator.constants).
EV_TO_INV_KM: float = 1.0 / (HBARC_MEV_FM * 1e6 * 1e-18)

# PREM layers (outer radius km, a, b, c, d); layers sharing a polynomial are merged.
_PREM = np.array(
    [
        (1221.5, 13.0885, 0.0, -8.8381, 0.0),
        (3480.0, 12.5815, -1.2638, -3.6426, -5.5281),
        (5701.0, 7.9565, -6.4761, 5.5283, -3.0807),
        (5771.0, 5.3197, -1.4836, 0.0, 0.0),
        (5971.0, 11.2494, -8.0298, 0.0, 0.0),
        (6151.0, 7.1089, -3.8045, 0.0, 0.0),
        (6346.6, 2.6910, 0.6924, 0.0, 0.0),
        (6356.0, 2.900, 0.0, 0.0, 0.0),
        (6368.0, 2.600, 0.0, 0.0, 0.0),
        (6371.0, 1.020, 0.0, 0.0, 0.0),
    ]
)
_BOUNDS = _PREM[:, 0]


def _layer(r_km: np.ndarray) -> np.ndarray:
    return np.minimum(np.searchsorted(_BOUNDS, r_km, side="right"), len(_BOUNDS) - 1)


def prem_density(r_km: np.ndarray | float, ocean_as_crust: bool = False) -> np.ndarray:
    """PREM mass density (Dziewonski & Anderson 1981, Table I polynomials).

    At a boundary radius the value of the outer layer is returned.

    Parameters
    ----------
    r_km : array_like
        Distance from the Earth's centre in km (0 ≤ r ≤ 6371).
    ocean_as_crust : bool
        Replace the 3-km ocean (1.02 g cm⁻³) by upper crust (2.6 g cm⁻³).

    Returns
    -------
    ndarray
        Density in g cm⁻³, same shape as ``r_km``.
    """
    r = np.asarray(r_km, dtype=float)
    k = _layer(r)
    x = r / EARTH_RADIUS_KM
    a, b, c, d = (_PREM[k, i] for i in range(1, 5))
    rho = a + x * (b + x * (c + x * d))
    if ocean_as_crust:
        rho = np.where(k == len(_BOUNDS) - 1, 2.6, rho)
    return rho


def electron_fraction(r_km: np.ndarray | float, ocean_as_crust: bool = False) -> np.ndarray:
    """Electrons per nucleon Y_e: core 0.4656, mantle/crust 0.4957, ocean water 0.5551.

    Parameters
    ----------
    r_km : array_like
        Radius in km.
    ocean_as_crust : bool
        Treat the ocean layer as crust.

    Returns
    -------
    ndarray
        Y_e, same shape as ``r_km``.
    """
    r = np.asarray(r_km, dtype=float)
    ye = np.where(r < CORE_RADIUS_KM, Y_E_CORE, Y_E_MANTLE)
    if not ocean_as_crust:
        ye = np.where(_layer(r) == len(_BOUNDS) - 1, Y_E_WATER, ye)
    return ye


def earth_electron_density(r_km: np.ndarray | float, ocean_as_crust: bool = False) -> np.ndarray:
    """Electron density Y_e ρ in N_A cm⁻³.

    Parameters
    ----------
    r_km : array_like
        Radius in km.
    ocean_as_crust : bool
        Treat the ocean layer as crust.

    Returns
    -------
    ndarray
        n_e / (N_A cm⁻³).
    """
    return prem_density(r_km, ocean_as_crust) * electron_fraction(r_km, ocean_as_crust)


def _detector_radius(depth_m: float) -> float:
    if not (np.isfinite(depth_m) and 0.0 <= depth_m <= 10_000.0):
        raise ConfigError(f"depth_m: {depth_m!r} is not allowed; need 0 <= depth_m <= 10000 m")
    return EARTH_RADIUS_KM - depth_m * 1e-3


def chord_length_km(cos_zenith: np.ndarray | float, depth_m: float = 0.0) -> np.ndarray:
    """Path length inside the Earth for a solar zenith angle below the horizon.

    L = R_d cos η + sqrt(R⊕² − R_d² sin² η), η = π − θ_z (nadir angle), R_d = R⊕ − depth.

    Parameters
    ----------
    cos_zenith : array_like
        cos θ_z of the Sun (negative at night); values ≥ 0 give 0.
    depth_m : float
        Detector depth below the PREM surface in m.

    Returns
    -------
    ndarray
        Length in km.
    """
    rd = _detector_radius(depth_m)
    ce = -np.asarray(cos_zenith, dtype=float)
    se2 = np.clip(1.0 - ce * ce, 0.0, 1.0)
    length = rd * ce + np.sqrt(EARTH_RADIUS_KM**2 - rd * rd * se2)
    return np.where(ce > 0.0, length, 0.0)


def chord_slices(
    cos_zenith: np.ndarray, depth_m: float, max_step_km: float = 100.0, ocean_as_crust: bool = True
) -> tuple[np.ndarray, np.ndarray]:
    """Split night chords at the PREM shell crossings and sub-step each segment.

    Crossings of a shell of radius R_k lie at s = R_d cos η ± sqrt(R_k² − b²), b = R_d sin η,
    s measured from the detector towards the Sun.

    Parameters
    ----------
    cos_zenith : ndarray, shape (nz,)
        cos θ_z < 0.
    depth_m : float
        Detector depth in m.
    max_step_km : float
        Largest slice length in km.
    ocean_as_crust : bool
        Ocean layer choice (see :func:`prem_density`).

    Returns
    -------
    lengths : ndarray, shape (nz, k)
        Slice lengths in km, ordered from the entry point to the detector; zero padding.
    n_e : ndarray, shape (nz, k)
        Midpoint electron density of each slice in N_A cm⁻³.
    """
    rd = _detector_radius(depth_m)
    cz = np.atleast_1d(np.asarray(cos_zenith, dtype=float))
    all_len, all_ne = [], []
    for c in cz:
        ce = -c
        big_l = float(chord_length_km(c, depth_m))
        b2 = rd * rd * max(0.0, 1.0 - ce * ce)
        cuts = [0.0, big_l]
        for rk in _BOUNDS:
            if rk * rk > b2:
                h = np.sqrt(rk * rk - b2)
                cuts += [s for s in (rd * ce - h, rd * ce + h) if 0.0 < s < big_l]
        cuts = np.unique(cuts)
        seg = []
        for s0, s1 in zip(cuts[:-1], cuts[1:], strict=True):
            n = max(1, int(np.ceil((s1 - s0) / max_step_km)))
            edges = np.linspace(s0, s1, n + 1)
            seg.append(edges)
        edges = np.unique(np.concatenate(seg)) if seg else np.array([0.0, 0.0])
        mid = 0.5 * (edges[1:] + edges[:-1])
        r_mid = np.sqrt(np.maximum(rd * rd + mid * mid - 2.0 * rd * mid * ce, 0.0))
        all_len.append(np.diff(edges)[::-1])
        all_ne.append(earth_electron_density(r_mid, ocean_as_crust)[::-1])
    kmax = max(len(v) for v in all_len)
    lengths = np.zeros((len(cz), kmax))
    n_e = np.zeros((len(cz), kmax))
    for i, (ln, ne) in enumerate(zip(all_len, all_ne, strict=True)):
        lengths[i, : len(ln)] = ln
        n_e[i, : len(ne)] = ne
    return lengths, n_e


def propagation_basis_evolution(
    energy: np.ndarray, lengths: np.ndarray, n_e: np.ndarray, params
) -> tuple[np.ndarray, np.ndarray]:
    """Evolution operator of the reduced (ẽ, μ̃) system for many chords and energies.

    Each slice uses the exact constant-density operator
    S = cos(Ωℓ/2) − i (2H/Ω) sin(Ωℓ/2), H = ½[[V − ω cos2θ₁₂, ω sin2θ₁₂], [ω sin2θ₁₂,
    −V + ω cos2θ₁₂]], V = c₁₃² √2 G_F n_e, ω = Δm²₂₁/2E (Pauli-matrix identity).  The product
    is kept in SU(2) form [[a, b], [−b̄, ā]].

    Parameters
    ----------
    energy : ndarray, shape (ne,)
        Neutrino energies in MeV.
    lengths, n_e : ndarray, shape (nz, k)
        Slices from :func:`chord_slices` (km, N_A cm⁻³).
    params : OscillationParams
        Mixing parameters.

    Returns
    -------
    a, b : ndarray, shape (nz, ne), complex
        Entries of the chord evolution operator (entry → detector).
    """
    e = np.asarray(energy, dtype=float)[None, :]
    c13sq = 1.0 - params.sin2_theta13
    cos2t = 1.0 - 2.0 * params.sin2_theta12
    sin2t = 2.0 * np.sqrt(params.sin2_theta12 * (1.0 - params.sin2_theta12))
    omega = params.dm2_21 / (2.0 * e * 1e6) * EV_TO_INV_KM  # km⁻¹, shape (1, ne)
    v_all = c13sq * MATTER_POTENTIAL_EV_PER_NA * EV_TO_INV_KM * n_e  # km⁻¹, (nz, k)
    nz = lengths.shape[0]
    a = np.ones((nz, e.shape[1]), dtype=complex)
    b = np.zeros((nz, e.shape[1]), dtype=complex)
    for k in range(lengths.shape[1]):
        v = v_all[:, k : k + 1]
        ell = lengths[:, k : k + 1]
        d3 = v - omega * cos2t
        d1 = omega * sin2t
        big_omega = np.sqrt(d3 * d3 + d1 * d1)
        phi = 0.5 * big_omega * ell
        sn = np.sin(phi) / big_omega
        a_s = np.cos(phi) - 1j * d3 * sn
        b_s = -1j * d1 * sn
        a, b = a_s * a - b_s * np.conj(b), a_s * b + b_s * np.conj(a)
    return a, b


def transition_probs(
    energy: np.ndarray,
    cos_zenith: np.ndarray,
    params,
    depth_m: float = 0.0,
    max_step_km: float = 100.0,
    ocean_as_crust: bool = True,
) -> np.ndarray:
    """Earth transition probabilities P^⊕_{iα} = |⟨ν_α|S⊕|ν_i⟩|² (reduced 3ν evolution).

    Parameters
    ----------
    energy : ndarray, shape (ne,)
        Energies in MeV.
    cos_zenith : ndarray, shape (nz,)
        Solar cos θ_z (< 0: night chords).
    params : OscillationParams
        Mixing parameters.
    depth_m : float
        Detector depth in m.
    max_step_km : float
        Largest slice in km.
    ocean_as_crust : bool
        Ocean layer choice.

    Returns
    -------
    ndarray, shape (ne, nz, 3, 3)
        P[e, z, i, α]; every row (fixed i) sums to 1.
    """
    lengths, n_e = chord_slices(cos_zenith, depth_m, max_step_km, ocean_as_crust)
    a, b = propagation_basis_evolution(energy, lengths, n_e, params)
    s12, c12 = np.sqrt(params.sin2_theta12), np.sqrt(1.0 - params.sin2_theta12)
    s13, c13 = np.sqrt(params.sin2_theta13), np.sqrt(1.0 - params.sin2_theta13)
    s23, c23 = np.sqrt(params.sin2_theta23), np.sqrt(1.0 - params.sin2_theta23)
    phase = np.exp(1j * np.deg2rad(params.delta_cp_deg))
    out = np.empty(a.shape + (3, 3))
    for i, (ve, vm) in enumerate(((c12, -s12), (s12, c12))):
        at = a * ve + b * vm
        am = -np.conj(b) * ve + np.conj(a) * vm
        out[..., i, 0] = c13 * c13 * np.abs(at) ** 2
        out[..., i, 1] = np.abs(c23 * am - s23 * s13 * phase * at) ** 2
        out[..., i, 2] = np.abs(-s23 * am - c23 * s13 * phase * at) ** 2
    out[..., 2, :] = (s13 * s13, s23 * s23 * c13 * c13, c23 * c23 * c13 * c13)
    return np.moveaxis(out, 0, 1)


def transition_probs_3nu_exact(
    energy: np.ndarray, lengths: np.ndarray, n_e: np.ndarray, params, pmns: np.ndarray
) -> np.ndarray:
    """Full three-flavour evolution along one chord (validation reference; slow).

    Each slice: S = W exp(−iΛℓ) W† from the eigen-decomposition of the flavour Hamiltonian
    H = U diag(0, Δm²₂₁, Δm²₃₁) U†/2E + diag(V, 0, 0).

    Parameters
    ----------
    energy : ndarray, shape (ne,)
        Energies in MeV.
    lengths, n_e : ndarray, shape (k,)
        Slices of one chord (km, N_A cm⁻³), entry first.
    params : OscillationParams
        Mixing parameters.
    pmns : ndarray, shape (3, 3)
        PMNS matrix for ``params``.

    Returns
    -------
    ndarray, shape (ne, 3, 3)
        P[e, i, α].
    """
    e = np.asarray(energy, dtype=float)
    masses = np.array([0.0, params.dm2_21, params.dm2_31])
    h0 = np.einsum("ai,ei,bi->eab", pmns, masses[None, :] / (2.0 * e[:, None] * 1e6), pmns.conj())
    h0 = h0 * EV_TO_INV_KM
    s = np.broadcast_to(np.eye(3, dtype=complex), (len(e), 3, 3)).copy()
    for ell, ne in zip(lengths, n_e, strict=True):
        if ell <= 0.0:
            continue
        h = h0.copy()
        h[:, 0, 0] += MATTER_POTENTIAL_EV_PER_NA * EV_TO_INV_KM * ne
        lam, w = np.linalg.eigh(h)
        step = np.einsum("eab,eb,ecb->eac", w, np.exp(-1j * lam * ell), w.conj())
        s = step @ s
    amp = s @ pmns  # amp[e, α, i]
    return np.swapaxes(np.abs(amp) ** 2, 1, 2)


def _hat_smooth(values: np.ndarray, axis: int, m: int) -> np.ndarray:
    """Hat-kernel average (half-width m fine steps) then keep every m-th fine point."""
    w = 1.0 - np.abs(np.arange(-m + 1, m)) / m
    v = np.moveaxis(values, axis, 0)
    n_fine = v.shape[0]
    n_nodes = (n_fine - 1) // m + 1
    out = np.zeros((n_nodes,) + v.shape[1:])
    norm = np.zeros(n_nodes)
    for off, wk in zip(range(-m + 1, m), w, strict=True):
        idx = np.arange(n_nodes) * m + off
        ok = (idx >= 0) & (idx < n_fine)
        out[ok] += wk * v[idx[ok]]
        norm[ok] += wk
    out /= norm.reshape((-1,) + (1,) * (out.ndim - 1))
    return np.moveaxis(out, 0, axis)


def smoothed_transition_table(
    energy: np.ndarray,
    cos_zenith: np.ndarray,
    params,
    depth_m: float = 0.0,
    oversample: int = 4,
    max_step_km: float = 100.0,
    ocean_as_crust: bool = True,
) -> np.ndarray:
    """Night table of P^⊕_{iα} averaged over one grid cell (hat kernel) around each node.

    The regeneration term oscillates in E and cos θ_z with periods far below any detector
    resolution (≈ 0.07 MeV at 5 MeV for a vertical chord); each node therefore stores the
    local average of P^⊕ with a triangular kernel of half-width one grid step in both
    variables, evaluated on a grid ``oversample`` times finer.  Averages over any region larger
    than a cell are preserved; rows keep summing to 1.

    Parameters
    ----------
    energy : ndarray, shape (ne,)
        Uniform energy nodes in MeV (ascending).
    cos_zenith : ndarray, shape (nz,)
        Uniform cos θ_z nodes in [−1, 0] (ascending).
    params : OscillationParams
        Mixing parameters.
    depth_m : float
        Detector depth in m.
    oversample : int
        Fine points per grid step.
    max_step_km : float
        Largest slice in km.
    ocean_as_crust : bool
        Ocean layer choice.

    Returns
    -------
    ndarray, shape (ne, nz, 3, 3)
        Smoothed P^⊕[e, z, i, α].
    """
    m = int(oversample)
    de = energy[1] - energy[0]
    dz = cos_zenith[1] - cos_zenith[0]
    e_fine = energy[0] + de / m * np.arange((len(energy) - 1) * m + 1)
    z_fine = cos_zenith[0] + dz / m * np.arange((len(cos_zenith) - 1) * m + 1)
    z_fine = np.minimum(z_fine, -1e-9)
    p = transition_probs(e_fine, z_fine, params, depth_m, max_step_km, ocean_as_crust)
    return _hat_smooth(_hat_smooth(p, 0, m), 1, m)


def annual_cos_zenith_samples(latitude_deg: float, n: int, rng: np.random.Generator) -> np.ndarray:
    """Solar cos θ_z for times drawn uniformly over a year (exposure distribution).

    cos θ_z = sin φ sin δ + cos φ cos δ cos h with sin δ = sin ε sin λ, ε = 23.44°, ecliptic
    longitude λ uniform in time (circular orbit) and hour angle h uniform (standard spherical
    astronomy, e.g. J. Meeus, *Astronomical Algorithms*, 2nd ed., 1998).

    Parameters
    ----------
    latitude_deg : float
        Geographic latitude in degrees.
    n : int
        Number of samples.
    rng : numpy.random.Generator
        Random generator.

    Returns
    -------
    ndarray, shape (n,)
        cos θ_z.
    """
    if not (np.isfinite(latitude_deg) and -90.0 <= latitude_deg <= 90.0):
        raise ConfigError(f"latitude_deg: {latitude_deg!r} not in [-90, 90]")
    phi = np.deg2rad(latitude_deg)
    lam = rng.uniform(0.0, 2.0 * np.pi, n)
    hour = rng.uniform(0.0, 2.0 * np.pi, n)
    sin_dec = np.sin(np.deg2rad(23.44)) * np.sin(lam)
    cos_dec = np.sqrt(1.0 - sin_dec**2)
    return np.sin(phi) * sin_dec + np.cos(phi) * cos_dec * np.cos(hour)
