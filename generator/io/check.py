"""Integrity check of an event file (``sunrecoil check FILE``).

:func:`check_file` reads the whole file and returns the list of problems found (empty for a
good file). It checks

* the structure: the reader's checks at open (sunrecoil provenance, known layout version,
  required attributes, equal dataset lengths matching ``n_events``);
* the schema: every event dataset is a known field with the schema's dtype, per-event shape,
  ``units`` (equal to the schema's) and ``description`` attributes, Fletcher-32 enabled; every
  auxiliary table has a ``units`` attribute;
* the checksums: every dataset is read completely, chunk by chunk, so HDF5 verifies each
  chunk's Fletcher-32 checksum;
* the contents: origin codes listed in the origin attributes, PDG codes of known neutrinos (or 0
  for backgrounds), finite weights;
* the normalisation: Σ weight equals the file's expected count (``expected_events``, or
  ``expected_events_triggered`` where untriggered events were dropped) and
  ``weight_per_event × n_events`` within 10⁻⁶ relative; the per-source expected counts of
  ``/sources`` (and ``/backgrounds``) add up to ``expected_events``;
* the provenance: ``config_toml`` is valid TOML, ``seed_entropy`` an integer, ``created_utc``
  an ISO 8601 time.
"""

from __future__ import annotations

import datetime as _dt
import tomllib
from pathlib import Path

import h5py
import numpy as np

from ..errors import DataFileError
from .reader import EventFile
from .schema import EVENT_FIELDS, RESPONSE_FIELDS

__all__ = ["check_file", "NORMALISATION_TOLERANCE"]

#: Relative tolerance of the normalisation sums.
NORMALISATION_TOLERANCE = 1e-6

_KNOWN = {f.name: f for f in (*EVENT_FIELDS, *RESPONSE_FIELDS)}
_PDG = {0, 12, 14, 16, -12, -14, -16}
_ROWS = 1 << 20


def _schema_problems(events: h5py.Group) -> list[str]:
    out = []
    for name, ds in events.items():
        f = _KNOWN.get(name)
        if f is None:
            out.append(f"events/{name}: not a field of the sunrecoil schema")
            continue
        if ds.dtype != np.dtype(f.dtype) or ds.shape[1:] != f.shape:
            out.append(f"events/{name}: dtype {ds.dtype} shape {ds.shape[1:]}, schema says "
                       f"{np.dtype(f.dtype)} {f.shape}")
        for attr in ("units", "description"):
            if attr not in ds.attrs:
                out.append(f"events/{name}: attribute {attr!r} missing")
        units = ds.attrs.get("units")
        units = units.decode() if isinstance(units, bytes) else units
        if units is not None and units != f.units:
            out.append(f"events/{name}: units {units!r}, schema says {f.units!r}")
        if not ds.fletcher32:
            out.append(f"events/{name}: no Fletcher-32 checksum filter")
    for field in EVENT_FIELDS:
        if field.name not in events:
            out.append(f"events/{field.name}: required field missing")
    return out


def _read_all(ev: EventFile) -> tuple[list[str], dict[str, float]]:
    """Read every dataset (checksums) and gather the sums needed for the content checks."""
    problems: list[str] = []
    stats = {"weight_sum": 0.0, "bad_weight": 0, "bad_pdg": 0, "bad_origin": 0}
    codes = set(ev.origin_names)
    f = ev._f

    def visit(name: str, obj: object) -> None:
        if not isinstance(obj, h5py.Dataset):
            return
        if not name.startswith("events/") and "units" not in obj.attrs:
            problems.append(f"{name}: attribute 'units' missing")
        n = obj.shape[0] if obj.ndim else 1
        for lo in range(0, max(n, 1), _ROWS):
            sel = slice(lo, min(n, lo + _ROWS)) if obj.ndim else ()
            try:
                data = ev._read_checked(obj, name, sel)
            except DataFileError as exc:
                problems.append(str(exc).split(": ", 1)[-1])
                return
            if name == "events/weight":
                stats["weight_sum"] += float(np.sum(data, dtype=np.float64))
                stats["bad_weight"] += int(np.count_nonzero(~np.isfinite(data) | (data < 0)))
            elif name == "events/nu_pdg":
                stats["bad_pdg"] += int(np.count_nonzero(~np.isin(data, list(_PDG))))
            elif name == "events/origin":
                stats["bad_origin"] += int(np.count_nonzero(~np.isin(data, list(codes))))

    f.visititems(visit)
    return problems, stats


def _close(a: float, b: float) -> bool:
    return abs(a - b) <= NORMALISATION_TOLERANCE * max(abs(a), abs(b), 1e-300)


def _normalisation_problems(ev: EventFile, stats: dict[str, float]) -> list[str]:
    out = []
    a = ev.attrs
    n = ev.n_events
    expected = float(a["expected_events"])
    target = float(a.get("expected_events_triggered", expected)) if (
        "n_generated" in a and int(a["n_generated"]) != n) else expected
    if n and not _close(stats["weight_sum"], target):
        out.append(f"normalisation: sum of weights {stats['weight_sum']:.9g} differs from the "
                   f"expected count {target:.9g}")
    if "weight_per_event" in a and n:
        n_gen = int(a.get("n_generated", n))
        if not _close(float(a["weight_per_event"]) * n_gen, expected):
            out.append(f"normalisation: weight_per_event × events generated = "
                       f"{float(a['weight_per_event']) * n_gen:.9g} differs from expected_events "
                       f"{expected:.9g}")
    parts = 0.0
    for group in ("sources", "backgrounds"):
        if f"{group}/expected_events" in ev._f:
            parts += float(np.sum(ev._f[f"{group}/expected_events"][()]))
    if parts and not _close(parts, expected):
        out.append(f"normalisation: per-origin expected counts add up to {parts:.9g}, not "
                   f"expected_events {expected:.9g}")
    for key, what in (("bad_weight", "negative or non-finite weights"),
                      ("bad_pdg", "unknown nu_pdg codes"),
                      ("bad_origin", "origin codes missing from the origin attributes")):
        if stats[key]:
            out.append(f"events: {int(stats[key])} {what}")
    return out


def _provenance_problems(ev: EventFile) -> list[str]:
    out = []
    a = ev.attrs
    try:
        tomllib.loads(str(a["config_toml"]))
    except tomllib.TOMLDecodeError as exc:
        out.append(f"provenance: config_toml is not valid TOML ({exc})")
    if not str(a["seed_entropy"]).isdigit():
        out.append("provenance: seed_entropy is not a non-negative integer")
    created = str(a.get("created_utc", ""))
    try:
        _dt.datetime.strptime(created, "%Y-%m-%dT%H:%M:%SZ")
    except ValueError:
        out.append(f"provenance: created_utc {created[:40]!r} is not an ISO 8601 UTC time")
    return out


def check_file(path: str | Path) -> list[str]:
    """All problems found in an event file (an empty list for a good file).

    Raises
    ------
    DataFileError
        When the file cannot be opened as HDF5 at all.
    """
    try:
        ev = EventFile(path)
    except DataFileError as exc:
        if "not a readable HDF5 file" in str(exc):
            raise
        return [str(exc).split(": ", 1)[-1]]
    with ev:
        problems = _schema_problems(ev.events)
        read_problems, stats = _read_all(ev)
        problems += read_problems
        problems += _normalisation_problems(ev, stats)
        problems += _provenance_problems(ev)
    return problems
