"""Event sinks: a streaming, atomic HDF5 backend and an in-memory backend for tests.

Both implement the same small interface used by :mod:`generator.pipeline`:
``write_chunk(chunk)``, ``write_table(path, data, units, description)``,
``set_attrs(attrs)``, ``set_field_attrs(name, attrs)``, ``commit()`` and ``abort()``.

The HDF5 backend writes into a temporary file beside the target (``.<name>.<pid>.tmp``) and
renames it onto the final name only in :meth:`HDF5Sink.commit`, so an interrupted or failed run
never leaves a file under the final name. Datasets are created empty with an unlimited first
axis, chunked along events, compressed and protected by Fletcher-32 checksums, and grow by one
append per generated chunk, so memory stays bounded whatever the event count.
"""

from __future__ import annotations

import os
from collections.abc import Mapping, Sequence
from pathlib import Path
from typing import Any

import h5py
import numpy as np

from ..errors import ConfigError, OutputExistsError, SunrecoilError
from .schema import Field

__all__ = ["HDF5Sink", "MemorySink", "compression_kwargs", "temp_path_for"]


def compression_kwargs(name: str, level: int | None = None) -> dict[str, Any]:
    """h5py dataset keyword arguments for a compression choice.

    ``blosc-lz4`` (Blosc with LZ4 and byte shuffle) and ``zstd`` need the ``hdf5plugin``
    package (or the corresponding HDF5 filter plugins) to read; ``gzip`` and ``lzf`` ship with
    h5py, and ``gzip`` is readable by any HDF5 build.
    """
    if name == "none":
        return {}
    if name == "gzip":
        return {"compression": "gzip", "compression_opts": 1 if level is None else level}
    if name == "lzf":
        return {"compression": "lzf"}
    if name in ("blosc-lz4", "zstd"):
        import hdf5plugin

        if name == "blosc-lz4":
            return dict(hdf5plugin.Blosc(cname="lz4", clevel=5 if level is None else level,
                                         shuffle=hdf5plugin.Blosc.SHUFFLE))
        return dict(hdf5plugin.Zstd(clevel=3 if level is None else level))
    raise ConfigError(f"output.compression: unknown filter {name!r}")


def temp_path_for(path: Path) -> Path:
    """Name of the temporary file written before the atomic rename onto ``path``."""
    return path.with_name(f".{path.name}.{os.getpid()}.tmp")


def _attr_value(v: Any) -> Any:
    if v is None:
        return "none"
    if isinstance(v, Mapping):
        raise TypeError("nested mappings are not stored as attributes")
    if isinstance(v, np.ndarray) and v.dtype == object:
        return np.array([str(x) for x in v.ravel()], dtype=_UTF8).reshape(v.shape)
    return v


#: Variable-length UTF-8 strings (names of any length and script; any HDF5 reader decodes them).
_UTF8 = h5py.string_dtype("utf-8")


class HDF5Sink:
    """Streaming, atomic HDF5 event writer.

    Parameters
    ----------
    path : str or pathlib.Path
        Final file name.
    fields : sequence of Field
        Event fields (datasets under ``/events``).
    compression : str
        One of ``blosc-lz4``, ``zstd``, ``lzf``, ``gzip``, ``none``.
    compression_level : int, optional
        Filter level (meaning depends on the filter).
    chunk_rows : int
        HDF5 chunk length along the event axis.
    force : bool
        Overwrite an existing file at ``path`` (only at commit time).
    """

    def __init__(self, path: str | Path, fields: Sequence[Field], *, compression: str = "lzf",
                 compression_level: int | None = None, chunk_rows: int = 65536,
                 force: bool = False):
        self.path = Path(path)
        self.force = force
        check_output_path(self.path, force)
        self.fields = tuple(fields)
        self.tmp = temp_path_for(self.path)
        self.path.parent.mkdir(parents=True, exist_ok=True)
        self._filters = compression_kwargs(compression, compression_level)
        self._file = h5py.File(self.tmp, "w")
        self._events = self._file.create_group("events")
        self.n_written = 0
        for f in self.fields:
            ds = self._events.create_dataset(
                f.name, shape=(0, *f.shape), maxshape=(None, *f.shape), dtype=f.dtype,
                chunks=(max(1, min(chunk_rows, 1 << 20)), *f.shape), fletcher32=True,
                **self._filters,
            )
            ds.attrs["units"] = f.units
            ds.attrs["description"] = f.description
        self._events.attrs["compression"] = compression

    def write_chunk(self, chunk: Mapping[str, np.ndarray]) -> None:
        """Append one chunk (all fields, equal lengths) to the event datasets."""
        n = len(chunk[self.fields[0].name])
        for f in self.fields:
            data = chunk[f.name]
            if len(data) != n:
                raise SunrecoilError(f"field {f.name} has {len(data)} rows, expected {n}")
            ds = self._events[f.name]
            ds.resize(self.n_written + n, axis=0)
            ds[self.n_written:self.n_written + n] = data
        self.n_written += n

    def write_table(self, path: str, data: np.ndarray, units: str, description: str,
                    attrs: Mapping[str, Any] | None = None) -> None:
        """Store an auxiliary array (e.g. a probability table) at ``path`` with its unit."""
        data = np.asarray(data)
        if data.dtype == object:              # text: variable-length UTF-8 (HDF5 cannot
            data = np.array([str(x) for x in data.ravel()], dtype=_UTF8).reshape(data.shape)
            ds = self._file.create_dataset(path, data=data)   # checksum variable-length data)
        else:
            ds = self._file.create_dataset(path, data=data, fletcher32=True)
        ds.attrs["units"] = units
        ds.attrs["description"] = description
        for k, v in (attrs or {}).items():
            ds.attrs[k] = _attr_value(v)

    def set_attrs(self, attrs: Mapping[str, Any], group: str = "/") -> None:
        """Set attributes on a group (root by default)."""
        g = self._file.require_group(group) if group != "/" else self._file
        for k, v in attrs.items():
            g.attrs[k] = _attr_value(v)

    def set_field_attrs(self, name: str, attrs: Mapping[str, Any]) -> None:
        """Set extra attributes on one event dataset."""
        for k, v in attrs.items():
            self._events[name].attrs[k] = _attr_value(v)

    def commit(self) -> Path:
        """Close the file and atomically move it onto the final name."""
        self._file.attrs["n_events"] = self.n_written
        self._file.close()
        check_output_path(self.path, self.force)
        os.replace(self.tmp, self.path)
        return self.path

    def abort(self) -> None:
        """Close and delete the temporary file; the final name is never touched."""
        try:
            self._file.close()
        finally:
            self.tmp.unlink(missing_ok=True)


def check_output_path(path: Path, force: bool) -> None:
    """Refuse to overwrite an existing file unless ``force``; refuse directories always."""
    if path.is_dir():
        raise OutputExistsError(f"output path {str(path)!r} is a directory")
    if path.exists() and not force:
        raise OutputExistsError(
            f"output file {str(path)!r} exists; use --force (or choose another path) to overwrite"
        )


class MemorySink:
    """In-memory sink with the same interface as :class:`HDF5Sink` (for tests and pipelines)."""

    def __init__(self, fields: Sequence[Field]):
        self.fields = tuple(fields)
        self.chunks: dict[str, list[np.ndarray]] = {f.name: [] for f in self.fields}
        self.tables: dict[str, tuple[np.ndarray, str, str, dict]] = {}
        self.attrs: dict[str, dict[str, Any]] = {"/": {}}
        self.field_attrs: dict[str, dict[str, Any]] = {f.name: {} for f in self.fields}
        self.n_written = 0
        self.committed = False

    def write_chunk(self, chunk: Mapping[str, np.ndarray]) -> None:
        """Append one chunk, cast to the schema dtypes exactly as HDF5 would."""
        for f in self.fields:
            self.chunks[f.name].append(np.asarray(chunk[f.name]).astype(f.dtype))
        self.n_written += len(chunk[self.fields[0].name])

    def write_table(self, path: str, data: np.ndarray, units: str, description: str,
                    attrs: Mapping[str, Any] | None = None) -> None:
        """Store an auxiliary array."""
        self.tables[path] = (np.asarray(data), units, description, dict(attrs or {}))

    def set_attrs(self, attrs: Mapping[str, Any], group: str = "/") -> None:
        """Set attributes on a group."""
        self.attrs.setdefault(group, {}).update(attrs)

    def set_field_attrs(self, name: str, attrs: Mapping[str, Any]) -> None:
        """Set extra attributes on one field."""
        self.field_attrs[name].update(attrs)

    def commit(self) -> None:
        """Mark complete."""
        self.attrs["/"]["n_events"] = self.n_written
        self.committed = True

    def abort(self) -> None:
        """Drop everything."""
        self.chunks = {f.name: [] for f in self.fields}

    def arrays(self) -> dict[str, np.ndarray]:
        """All events as concatenated arrays."""
        return {
            f.name: (np.concatenate(v) if v else np.empty((0, *f.shape), f.dtype))
            for f, v in zip(self.fields, self.chunks.values(), strict=True)
        }
