"""Particle records of exported events: PDG codes and four-momenta from the stored fields.

Signal events (origin < 100) are ν + e⁻ → ν + e⁻ on an electron at rest. Their four-momenta
are rebuilt in float64 from the stored (float32) E, T and directions with the two-body
kinematics of :mod:`generator.kinematics`: the electron direction is moved onto the exact
kinematic cone about the neutrino direction (:func:`~generator.kinematics.on_cone_direction`,
a change of the order of the float32 rounding), T is capped at T_max(E), and the outgoing
neutrino takes the balance (:func:`~generator.kinematics.final_state`). All four particles are
then on shell and energy and momentum balance to double-precision rounding.

Background events (origin ≥ 100, no neutrino) carry one primary particle (``particle`` field:
e⁻, e⁺, α or γ; e⁻ when the file has no such field) with kinetic energy ``e_kinetic`` along
``e_dir``. For a γ-only deposit (code 22) the photon carries ``e_kinetic + gamma_energy``.
Energies in MeV, momenta in MeV (c = 1).
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass

import numpy as np

from ..constants import ALPHA_PARTICLE_MASS, ELECTRON_MASS
from ..errors import DataFileError
from ..kinematics import final_state, on_cone_direction, t_max

__all__ = ["BACKGROUND_MIN_CODE", "PARTICLE_MASS", "REQUIRED_FIELDS", "SignalRecords",
           "BackgroundRecords", "split_records"]

#: Origin codes from this value on are background isotopes (no neutrino).
BACKGROUND_MIN_CODE = 100

#: Rest masses in MeV by PDG code of the particles an event file may hold (CODATA via
#: scipy.constants; the photon is massless).
PARTICLE_MASS: dict[int, float] = {
    11: ELECTRON_MASS,
    -11: ELECTRON_MASS,
    22: 0.0,
    1000020040: ALPHA_PARTICLE_MASS,
}

#: Fields an export needs.
REQUIRED_FIELDS = ("time_utc", "origin", "nu_pdg", "nu_energy", "nu_dir", "e_kinetic", "e_dir",
                   "vertex", "weight")


@dataclass(frozen=True)
class SignalRecords:
    """ν e⁻ scattering events of one chunk; 4-momenta [E, px, py, pz] in MeV, shape (k, 4)."""

    index: np.ndarray       #: row numbers of the events in the chunk
    nu_pdg: np.ndarray      #: PDG code of the neutrino
    nu_in: np.ndarray       #: incoming neutrino
    nu_out: np.ndarray      #: outgoing neutrino
    electron: np.ndarray    #: recoil electron


@dataclass(frozen=True)
class BackgroundRecords:
    """Single-particle background events of one chunk."""

    index: np.ndarray       #: row numbers of the events in the chunk
    pdg: np.ndarray         #: PDG code of the primary particle
    momentum: np.ndarray    #: 4-momentum [E, px, py, pz] of the primary, MeV, shape (k, 4)
    mass: np.ndarray        #: rest mass of the primary, MeV


def _unit(v: np.ndarray) -> np.ndarray:
    v = v.astype(np.float64)
    return v / np.sqrt(np.einsum("ij,ij->i", v, v))[:, None]


def _refuse(mask: np.ndarray, index: np.ndarray, first: int, what: str) -> None:
    if np.any(mask):
        rows = (index[mask][:5] + first).tolist()
        raise DataFileError(f"events {rows}{' …' if mask.sum() > 5 else ''}: {what}; the file "
                            "cannot be exported")


def _signal(c: Mapping[str, np.ndarray], idx: np.ndarray, first: int) -> SignalRecords:
    e = c["nu_energy"][idx].astype(np.float64)
    t = c["e_kinetic"][idx].astype(np.float64)
    bad = ~(np.isfinite(e) & (e > 0) & np.isfinite(t) & (t >= 0)
            & np.all(np.isfinite(c["nu_dir"][idx]), axis=1)
            & np.all(np.isfinite(c["e_dir"][idx]), axis=1))
    _refuse(bad, idx, first, "signal event without a finite neutrino energy, recoil energy "
                             "or direction")
    t = np.minimum(t, t_max(e))
    n = _unit(c["nu_dir"][idx])
    d = on_cone_direction(e, t, n, _unit(c["e_dir"][idx]))
    nu_out, electron = final_state(e, t, n, d)
    nu_in = np.empty_like(nu_out)
    nu_in[:, 0] = e
    nu_in[:, 1:] = e[:, None] * n
    return SignalRecords(idx, c["nu_pdg"][idx].astype(np.int64), nu_in, nu_out, electron)


def _background(c: Mapping[str, np.ndarray], idx: np.ndarray, first: int) -> BackgroundRecords:
    k = idx.size
    pdg = (c["particle"][idx].astype(np.int64) if "particle" in c
           else np.full(k, 11, dtype=np.int64))
    known = np.isin(pdg, list(PARTICLE_MASS))
    _refuse(~known, idx, first, f"primary particle code(s) {sorted(set(pdg[~known].tolist()))} "
                                f"not known to the export (known: {sorted(PARTICLE_MASS)})")
    mass = np.array([PARTICLE_MASS[p] for p in np.unique(pdg).tolist()])[
        np.searchsorted(np.unique(pdg), pdg)]
    t = c["e_kinetic"][idx].astype(np.float64)
    if "gamma_energy" in c:
        t = np.where(pdg == 22, t + c["gamma_energy"][idx].astype(np.float64), t)
    direction = c["e_dir"][idx]
    bad = ~(np.isfinite(t) & (t >= 0) & np.all(np.isfinite(direction), axis=1))
    _refuse(bad, idx, first, "background event without a finite energy or direction")
    p = np.sqrt(t * (t + 2.0 * mass))
    mom = np.empty((k, 4))
    mom[:, 0] = t + mass
    mom[:, 1:] = p[:, None] * _unit(direction)
    return BackgroundRecords(idx, pdg, mom, mass)


def split_records(chunk: Mapping[str, np.ndarray], first: int = 0
                  ) -> tuple[SignalRecords, BackgroundRecords]:
    """Particle records of a chunk of events, split into signal and background events.

    Parameters
    ----------
    chunk : mapping of str to numpy.ndarray
        Event fields of one chunk (at least :data:`REQUIRED_FIELDS`).
    first : int
        Row number of the chunk's first event in the file (for error messages).

    Returns
    -------
    SignalRecords, BackgroundRecords
        The two event classes; their ``index`` arrays partition ``range(len(chunk))``.

    Raises
    ------
    DataFileError
        An event has non-finite kinematics or an unknown primary particle.
    """
    is_bkg = chunk["origin"] >= BACKGROUND_MIN_CODE
    return (_signal(chunk, np.flatnonzero(~is_bkg), first),
            _background(chunk, np.flatnonzero(is_bkg), first))
