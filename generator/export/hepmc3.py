"""HepMC3 ASCII export (the open ``Asciiv3`` event-record format of HepMC3).

The text is produced directly, column-wise with numpy (:mod:`.textformat`), because building
events object by object through pyhepmc runs at ~4 000 events/s on the reference machine, far
below the 50 000 events/s target (``tests/benchmarks/bench_export.py`` measures both).
pyhepmc (extra ``hepmc3``) reads the files back in the tests.

Each record (units MeV and mm, written in the ``U`` line of every event):

* signal event (ν e⁻ → ν e⁻): one vertex at the interaction point; incoming the neutrino
  (status 4) and the electron at rest (status 4), outgoing the neutrino and the recoil
  electron (status 1), with the PDG codes of the file;
* background event (origin ≥ 100): no vertex line; the primary particle (status 1) leaves the
  event's root vertex, which is placed at the decay point.

The event position (``E … @ x y z t``) is the interaction or decay point in both classes.
Vertex times are 0 mm/c: the absolute UTC time (seconds since the Unix epoch, full float64
precision) is the event attribute ``time_utc`` — a time within the run in mm/c would reach
10¹⁹ mm after a year and keep only ~10 ns resolution in double precision. Further event
attributes: ``origin``, ``cos_sun``, ``sun_cos_zenith``, ``is_night`` and, for background
events, ``gamma_energy`` (MeV). The event number is the row number in ``/events`` (from 0).
The weight (``W``, named ``weight`` in the run info) is the file's ``weight`` field. Float64
values are written with 17 significant digits (as ``%.16e``), stored float32 values with 9
(``%.8e``); both read back to the same number.
"""

from __future__ import annotations

from collections.abc import Mapping
from typing import Any, BinaryIO

import numpy as np

from .. import __version__
from ..constants import ELECTRON_MASS
from .records import BackgroundRecords, SignalRecords, split_records
from .textformat import join, render

__all__ = ["HepMC3Writer", "FORMAT_VERSION"]

#: HepMC3 version whose Asciiv3 layout the files follow (written in the header line).
FORMAT_VERSION = "3.02.05"

_EVENT_ATTRS = ("A 0 cos_sun %.8e\n"
                "A 0 is_night %d\n"
                "A 0 origin %d\n"
                "A 0 sun_cos_zenith %.8e\n"
                "A 0 time_utc %.16e\n")

_M = repr(ELECTRON_MASS)
_SIGNAL = ("E %d 1 4 @ %.8e %.8e %.8e 0.0\n"
           "U MEV MM\n"
           "W %.16e\n"
           + _EVENT_ATTRS +
           "P 1 0 %d %.16e %.16e %.16e %.16e 0.0 4\n"
           f"P 2 0 11 0.0 0.0 0.0 {_M} {_M} 4\n"
           "V -1 0 [1,2] @ %.8e %.8e %.8e 0.0\n"
           "P 3 -1 %d %.16e %.16e %.16e %.16e 0.0 1\n"
           f"P 4 -1 11 %.16e %.16e %.16e %.16e {_M} 1\n")

_BACKGROUND = ("E %d 0 1 @ %.8e %.8e %.8e 0.0\n"
               "U MEV MM\n"
               "W %.16e\n"
               "A 0 gamma_energy %.8e\n"
               + _EVENT_ATTRS +
               "P 1 0 %d %.16e %.16e %.16e %.16e %.16e 1\n")

def _common(c: Mapping[str, np.ndarray], idx: np.ndarray) -> list[np.ndarray]:
    return [c["cos_sun"][idx], c["is_night"][idx], c["origin"][idx],
            c["sun_cos_zenith"][idx], c["time_utc"][idx]]


def _pxpyzE(p: np.ndarray) -> list[np.ndarray]:
    return [p[:, 1], p[:, 2], p[:, 3], p[:, 0]]


def _format(template: str, columns: list[np.ndarray]) -> np.ndarray:
    return render(template, [np.asarray(x) for x in columns])


def _signal_columns(c: Mapping[str, np.ndarray], s: SignalRecords, first: int
                    ) -> list[np.ndarray]:
    v = c["vertex"][s.index]
    return [s.index + first, v[:, 0], v[:, 1], v[:, 2], c["weight"][s.index],
            *_common(c, s.index), s.nu_pdg, *_pxpyzE(s.nu_in), v[:, 0], v[:, 1], v[:, 2],
            s.nu_pdg, *_pxpyzE(s.nu_out), *_pxpyzE(s.electron)]


def _background_columns(c: Mapping[str, np.ndarray], b: BackgroundRecords, first: int
                        ) -> list[np.ndarray]:
    v = c["vertex"][b.index]
    gamma = c["gamma_energy"][b.index] if "gamma_energy" in c else np.zeros(b.index.size)
    return [b.index + first, v[:, 0], v[:, 1], v[:, 2], c["weight"][b.index], gamma,
            *_common(c, b.index), b.pdg, *_pxpyzE(b.momentum), b.mass]


def format_chunk(chunk: Mapping[str, np.ndarray], first: int = 0) -> bytes:
    """HepMC3 ASCII text of one chunk of events (without the file header and footer).

    Parameters
    ----------
    chunk : mapping of str to numpy.ndarray
        Event fields of the chunk (see :data:`generator.export.records.REQUIRED_FIELDS`).
    first : int
        Row number of the chunk's first event in the file (the event numbers).
    """
    sig, bkg = split_records(chunk, first)
    parts = []
    if sig.index.size:
        parts.append((sig.index, _format(_SIGNAL, _signal_columns(chunk, sig, first))))
    if bkg.index.size:
        parts.append((bkg.index, _format(_BACKGROUND, _background_columns(chunk, bkg, first))))
    if len(parts) == 1:
        return join(parts[0][1])
    width = max(r.dtype.itemsize for _, r in parts)
    events = np.zeros(sig.index.size + bkg.index.size, dtype=f"S{width}")
    for idx, recs in parts:
        events[idx] = recs
    return join(events)


def _one_line(v: Any) -> str:
    return " ".join(str(v).split())


class HepMC3Writer:
    """Streams events into a HepMC3 ASCII file (header, one record per event, footer)."""

    #: Fields read from the event file.
    fields = ("time_utc", "origin", "nu_pdg", "nu_energy", "nu_dir", "e_kinetic", "e_dir",
              "vertex", "weight", "cos_sun", "sun_cos_zenith", "is_night")
    #: Fields read when present.
    optional_fields = ("particle", "gamma_energy")

    def __init__(self, path: str, attrs: Mapping[str, Any], origin_names: Mapping[int, str],
                 source: str):
        self._f: BinaryIO = open(path, "wb")  # noqa: SIM115
        names = ";".join(f"{k}={_one_line(v)}" for k, v in sorted(origin_names.items()))
        run = {
            "origin_names": names,
            "source_file": _one_line(source),
            "time_convention": "vertex and event-position times are 0 mm/c; absolute time in "
                               "the event attribute time_utc (UTC seconds since the Unix epoch)",
            "units": "momenta and energies MeV, lengths mm",
            "frame": _one_line(attrs.get("frame", "")),
        }
        for key in ("seed_entropy", "expected_events", "live_seconds", "tool_version"):
            if key in attrs:
                run[key] = _one_line(attrs[key])
        head = [f"HepMC::Version {FORMAT_VERSION}", "HepMC::Asciiv3-START_EVENT_LISTING",
                "W weight",
                f"T sunrecoil\\|{__version__}\\|solar-neutrino elastic scattering on electrons"]
        head += [f"A {k} {v}" for k, v in run.items()]
        self._f.write(("\n".join(head) + "\n").encode("utf-8"))

    def write(self, chunk: Mapping[str, np.ndarray], first: int) -> None:
        """Append the records of a chunk whose first event is row ``first`` of the file."""
        self._f.write(format_chunk(chunk, first))

    def close(self) -> None:
        """Write the footer and close the file."""
        self._f.write(b"HepMC::Asciiv3-END_EVENT_LISTING\n")
        self._f.close()

    def abort(self) -> None:
        """Close without the footer (the caller removes the file)."""
        self._f.close()
