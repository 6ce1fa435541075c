"""Reading event files back as numpy arrays (whole, by field, or in chunks)."""

from __future__ import annotations

from collections.abc import Iterator, Sequence
from pathlib import Path
from typing import Any

import h5py
import numpy as np

from ..errors import DataFileError
from .schema import FIELD_BY_NAME, LAYOUT_VERSION

__all__ = ["EventFile", "read_events", "REQUIRED_ATTRS"]

#: Root attributes every sunrecoil event file carries (checked when a file is opened).
REQUIRED_ATTRS = ("tool_version", "layout_version", "n_events", "seed_entropy", "config_toml",
                  "expected_events")

#: Most events a file may declare (a larger shape is a damaged or hostile file).
MAX_EVENTS = 1 << 40


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
            df = ev.to_pandas(["e_kinetic", "e_dir"])     # columns e_kinetic, e_dir_x/y/z
            for frame in ev.iter_pandas(1_000_000, ["e_kinetic", "is_night"]):
                ...
    """

    def __init__(self, path: str | Path):
        _ensure_plugins()
        self.path = Path(path)
        try:
            self._f = h5py.File(self.path, "r")
        except (OSError, ValueError) as exc:
            raise DataFileError(f"{str(self.path)!r}: not a readable HDF5 file ({exc})") from None
        try:
            self._validate()
        except BaseException:
            self._f.close()
            raise
        self.events = self._f["events"]

    def _validate(self) -> None:
        """Refuse files that are not complete, consistent sunrecoil event files."""
        where = repr(str(self.path))
        f = self._f
        if not isinstance(f.get("events", getlink=True), h5py.HardLink) or not isinstance(
                f.get("events"), h5py.Group):
            raise DataFileError(f"{where}: no /events group; not a sunrecoil event file")
        if f.attrs.get("tool") not in (None, "sunrecoil", b"sunrecoil") or \
                "tool_version" not in f.attrs:
            raise DataFileError(f"{where}: has an /events group but is not a sunrecoil event "
                                "file (no sunrecoil provenance attributes)")
        missing = [k for k in REQUIRED_ATTRS if k not in f.attrs]
        if missing:
            raise DataFileError(f"{where}: required attribute(s) {missing} missing; the file is "
                                "incomplete or damaged")
        layout = str(_decode(f.attrs["layout_version"]))
        if not layout.isdigit() or not 1 <= int(layout) <= int(LAYOUT_VERSION):
            raise DataFileError(f"{where}: layout_version {layout[:20]!r} is not known to this "
                                f"version (reads 1 … {LAYOUT_VERSION}); use a newer sunrecoil")
        try:
            n_attr = int(f.attrs["n_events"])
        except (TypeError, ValueError):
            raise DataFileError(f"{where}: attribute n_events is not an integer") from None
        lengths = {}
        for name, obj in f["events"].items():
            if not isinstance(obj, h5py.Dataset) or obj.ndim < 1:
                raise DataFileError(f"{where}: events/{name} is not an event dataset")
            known = FIELD_BY_NAME.get(name)
            if known is not None:
                want = np.dtype(known.dtype)
                if obj.dtype.kind != want.kind or obj.dtype.itemsize > 8 or \
                        tuple(obj.shape[1:]) != tuple(known.shape):
                    raise DataFileError(
                        f"{where}: events/{name} has type {obj.dtype} and row shape "
                        f"{tuple(obj.shape[1:])}; the schema has {want} and {known.shape}")
            lengths[name] = int(obj.shape[0])
        if not lengths:
            raise DataFileError(f"{where}: /events holds no datasets")
        if len(set(lengths.values())) != 1:
            raise DataFileError(f"{where}: event datasets have different lengths "
                                f"{dict(sorted(lengths.items()))}")
        n = next(iter(lengths.values()))
        if n != n_attr or not 0 <= n <= MAX_EVENTS:
            raise DataFileError(f"{where}: n_events attribute {n_attr} does not match the "
                                f"{n} rows of the event datasets")

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

    @property
    def filter_info(self) -> dict[str, Any]:
        """The filter a file needs: name, pipeline and whether an HDF5 plugin is required.

        Files written before the attributes existed report the ``/events`` compression only.
        """
        ev = {k: _decode(v) for k, v in self.events.attrs.items()}
        info = {k: ev[k] for k in ("compression", "filter_pipeline", "filter_plugin_required",
                                   "filter_plugin") if k in ev}
        if "filter_plugin_required" in info:
            info["filter_plugin_required"] = bool(info["filter_plugin_required"])
        return info

    def units(self, field: str) -> str:
        """The unit attribute of a field."""
        return str(_decode(self.events[field].attrs["units"]))

    @property
    def origin_names(self) -> dict[int, str]:
        """Mapping origin code → source/background name."""
        ds = self.events["origin"]
        codes = ds.attrs["codes"]
        names = [_decode(n) for n in ds.attrs["names"]]
        return {int(c): str(n) for c, n in zip(codes, names, strict=True)}

    def table(self, path: str) -> np.ndarray | dict[str, Any]:
        """An auxiliary table (e.g. ``sources/flux``), or a dict of tables for a group."""
        obj = self._f.get(path)
        if obj is None:
            groups = sorted(k for k in self._f if k != "events")
            raise DataFileError(f"{str(self.path)!r}: no table {path!r}; groups: {groups}")
        if isinstance(obj, h5py.Group):
            return {k: self.table(f"{path}/{k}") for k in obj}
        return self._read_checked(obj, path, ())

    def _read_checked(self, ds: h5py.Dataset, name: str, sel: Any) -> np.ndarray:
        try:
            return ds[sel]
        except OSError as exc:
            text = str(exc).lower()
            if "fletcher32" in text or "checksum" in text or "filter returned failure" in text:
                # every dataset is Fletcher-32 protected: a failing filter pipeline means the
                # stored bytes were changed (the checksum or the decompressor caught it)
                raise DataFileError(f"{str(self.path)!r}: checksum mismatch in {name}; the file "
                                    "is damaged") from None
            raise DataFileError(f"{str(self.path)!r}: cannot read {name} ({exc})") from None

    def read(self, fields: Sequence[str] | None = None, start: int = 0,
             stop: int | None = None) -> dict[str, np.ndarray]:
        """Read fields (default all) for events ``start:stop``."""
        names = list(fields) if fields is not None else self.fields
        unknown = [n for n in names if n not in self.events]
        if unknown:
            raise DataFileError(f"{str(self.path)!r}: no event field(s) {unknown}; fields: "
                                f"{self.fields}")
        return {n: self._read_checked(self.events[n], f"events/{n}", slice(start, stop))
                for n in names}

    def iter_chunks(self, size: int = 1 << 20, fields: Sequence[str] | None = None
                    ) -> Iterator[dict[str, np.ndarray]]:
        """Iterate over the file in chunks of ``size`` events (bounded memory)."""
        n = self.n_events
        for i in range(0, n, size):
            yield self.read(fields, i, min(n, i + size))


    def to_pandas(self, fields: Sequence[str] | None = None, start: int = 0,
                  stop: int | None = None) -> Any:
        """Events ``start:stop`` as a pandas DataFrame (needs the ``pandas`` extra).

        Vector fields become ``<name>_x``, ``<name>_y``, ``<name>_z`` columns; the index is
        the event number in the file.
        """
        from .frames import to_dataframe

        return to_dataframe(self.read(fields, start, stop), index_start=start)

    def iter_pandas(self, size: int = 1 << 20, fields: Sequence[str] | None = None
                    ) -> Iterator[Any]:
        """Iterate over the file in DataFrames of ``size`` events (bounded memory)."""
        from .frames import require_pandas, to_dataframe

        require_pandas()
        self.read(fields, 0, 0)                 # unknown fields fail before the first chunk
        for i, chunk in enumerate(self.iter_chunks(size, fields)):
            yield to_dataframe(chunk, index_start=i * size)


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
