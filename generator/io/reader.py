"""Reading event files back as numpy arrays (whole, by field, or in chunks)."""

from __future__ import annotations

from collections.abc import Iterator, Sequence
from pathlib import Path
from typing import Any

import h5py
import numpy as np

from ..errors import DataFileError

__all__ = ["EventFile", "read_events"]


def _ensure_plugins() -> None:
    try:  # registers the Blosc/Zstd filters with HDF5 if they are needed
        import hdf5plugin  # noqa: F401
    except ImportError:  # pragma: no cover - gzip/lzf files still read
        pass


class EventFile:
    """An open sunrecoil event file.

    Use as a context manager::

        with EventFile("events.h5") as ev:
            for chunk in ev.iter_chunks(1_000_000, fields=["e_kinetic", "cos_sun"]):
                ...
    """

    def __init__(self, path: str | Path):
        _ensure_plugins()
        self.path = Path(path)
        try:
            self._f = h5py.File(self.path, "r")
        except (OSError, ValueError) as exc:
            raise DataFileError(f"{str(self.path)!r}: not a readable HDF5 file ({exc})") from None
        if "events" not in self._f:
            self._f.close()
            raise DataFileError(f"{str(self.path)!r}: no /events group; not a sunrecoil file")
        self.events = self._f["events"]

    def __enter__(self) -> EventFile:
        return self

    def __exit__(self, *exc: object) -> None:
        self.close()

    def close(self) -> None:
        """Close the file."""
        self._f.close()

    @property
    def fields(self) -> list[str]:
        """Names of the event fields stored."""
        return list(self.events.keys())

    @property
    def n_events(self) -> int:
        """Number of events in the file."""
        return int(self.events[self.fields[0]].shape[0]) if self.fields else 0

    @property
    def attrs(self) -> dict[str, Any]:
        """Root attributes (provenance)."""
        return {k: _decode(v) for k, v in self._f.attrs.items()}

    def units(self, field: str) -> str:
        """The unit attribute of a field."""
        return str(_decode(self.events[field].attrs["units"]))

    def origin_names(self) -> dict[int, str]:
        """Mapping origin code → source/background name."""
        ds = self.events["origin"]
        codes = ds.attrs["codes"]
        names = [_decode(n) for n in ds.attrs["names"]]
        return {int(c): str(n) for c, n in zip(codes, names, strict=True)}

    def table(self, path: str) -> np.ndarray:
        """An auxiliary table (e.g. ``flavour/day/8B``)."""
        return self._f[path][()]

    def read(self, fields: Sequence[str] | None = None, start: int = 0,
             stop: int | None = None) -> dict[str, np.ndarray]:
        """Read fields (default all) for events ``start:stop``."""
        names = list(fields) if fields is not None else self.fields
        return {n: self.events[n][start:stop] for n in names}

    def iter_chunks(self, size: int = 1 << 20, fields: Sequence[str] | None = None
                    ) -> Iterator[dict[str, np.ndarray]]:
        """Iterate over the file in chunks of ``size`` events (bounded memory)."""
        n = self.n_events
        for i in range(0, n, size):
            yield self.read(fields, i, min(n, i + size))


def _decode(v: Any) -> Any:
    if isinstance(v, bytes):
        return v.decode("utf-8")
    if isinstance(v, np.ndarray) and v.dtype.kind in "SO":
        return [x.decode() if isinstance(x, bytes) else x for x in v]
    return v


def read_events(path: str | Path, fields: Sequence[str] | None = None) -> dict[str, np.ndarray]:
    """Read whole fields of an event file into memory."""
    with EventFile(path) as ev:
        return ev.read(fields)
