"""The event-file layout: one HDF5 dataset per field under ``/events``.

Every field has a fixed dtype chosen on purpose:

* ``time_utc`` is float64: seconds since the Unix epoch need 15–16 significant digits to keep
  sub-microsecond resolution over centuries.
* energies, directions and vertices are float32: 7 significant digits resolve 1 eV at 10 MeV,
  directions to 1e-7 rad and vertices to 1 µm over 20 m — far below any detector resolution.
* ``weight`` is float64 so that sums over 10⁹ events keep full precision.
* small integers (origin code, neutrino PDG code) are int16, the primary's PDG code
  ``particle`` is int32 (nuclei have 10-digit codes) and flags are uint8.

Directions and vertices are in the detector frame :data:`FRAME_CONVENTION`.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

__all__ = ["Field", "EVENT_FIELDS", "FRAME_CONVENTION", "FIELD_BY_NAME", "LAYOUT_VERSION",
           "RESPONSE_FIELDS"]

#: Version of the file layout; bumped when a field changes meaning or type (2: adds the truth
#: fields ``particle`` and ``gamma_energy``; files of layout 1 stay readable).
LAYOUT_VERSION = "2"

#: Detector frame convention, stored in every file.
FRAME_CONVENTION = (
    "right-handed local frame at the detector site: x = east, y = north, z = up (local vertical); "
    "origin at the centre of the fiducial volume; directions are unit vectors of travel"
)


@dataclass(frozen=True)
class Field:
    """One event field: dataset name, numpy dtype, per-event shape, unit and description."""

    name: str
    dtype: str
    shape: tuple[int, ...]
    units: str
    description: str


#: Truth-level fields, in file order.
EVENT_FIELDS: tuple[Field, ...] = (
    Field("time_utc", "f8", (), "s", "event time, UTC seconds since 1970-01-01T00:00:00 (Unix)"),
    Field("origin", "i2", (), "", "signal source or background code; the attributes 'codes' "
          "and 'names' of /events/origin map codes to names"),
    Field("nu_pdg", "i2", (), "", "PDG Monte Carlo code of the neutrino flavour at detection"),
    Field("nu_energy", "f4", (), "MeV", "incoming neutrino energy"),
    Field("nu_dir", "f4", (3,), "", "incoming neutrino direction (unit vector, Sun to detector)"),
    Field("e_kinetic", "f4", (), "MeV", "recoil-electron kinetic energy"),
    Field("e_dir", "f4", (3,), "", "recoil-electron direction (unit vector)"),
    Field("vertex", "f4", (3,), "mm", "interaction vertex"),
    Field("cos_sun", "f4", (), "", "cosine of the angle between e_dir and the Sun-to-detector "
          "direction"),
    Field("sun_cos_zenith", "f4", (), "", "cosine of the Sun's zenith angle at the event time"),
    Field("is_night", "u1", (), "", "1 if the Sun is below the horizon (sun_cos_zenith < 0)"),
    Field("weight", "f8", (), "events", "expected events represented by this event for the "
          "configured exposure"),
    Field("particle", "i4", (), "", "PDG Monte Carlo code of the primary particle: 11 e-, -11 "
          "e+, 1000020040 alpha, 22 for a gamma-only deposit"),
    Field("gamma_energy", "f4", (), "MeV", "energy deposited by accompanying gamma rays or "
          "annihilation quanta (fully contained; the response treats it as one electron of "
          "that energy); 0 for signal events"),
)

#: Reconstructed fields of the detector-response stage (present only when it is on).
RESPONSE_FIELDS: tuple[Field, ...] = (
    Field("reco_energy", "f4", (), "MeV", "reconstructed (calibrated) kinetic energy, "
          "electron-equivalent"),
    Field("reco_dir", "f4", (3,), "", "reconstructed direction (unit vector); NaN where no "
          "direction is reconstructed (scintillator response, no Cherenkov light)"),
    Field("reco_vertex", "f4", (3,), "mm", "reconstructed vertex"),
    Field("reco_cos_sun", "f4", (), "", "cosine of the angle between reco_dir and the "
          "Sun-to-detector direction; NaN without reco_dir"),
    Field("n_pe", "i4", (), "photoelectrons", "detected photoelectrons (incl. dark noise)"),
    Field("triggered", "u1", (), "", "1 if the event passes the trigger turn-on and the "
          "analysis threshold on reco_energy"),
)

FIELD_BY_NAME: dict[str, Field] = {f.name: f for f in (*EVENT_FIELDS, *RESPONSE_FIELDS)}


def empty_chunk(n: int) -> dict[str, np.ndarray]:
    """Allocate an uninitialised chunk of ``n`` events with the schema's dtypes."""
    return {f.name: np.empty((n, *f.shape), dtype=f.dtype) for f in EVENT_FIELDS}
