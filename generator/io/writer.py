"""Event sinks: a streaming, atomic HDF5 backend and an in-memory backend for tests.

Both implement the same small interface used by :mod:`generator.pipeline`:
``write_chunk(chunk)``, ``write_table(path, data, units, description)``,
``set_attrs(attrs)``, ``set_field_attrs(name, attrs)``, ``commit()`` and ``abort()``.

The HDF5 backend writes into a temporary file beside the target (``.<name>.tmp``, guarded by
the lock ``.<name>.lock``, see :mod:`generator.io.lock`) and renames it onto the final name
only in :meth:`HDF5Sink.commit`, so an interrupted or failed run never leaves a file under the
final name. Datasets are created empty with an unlimited first axis, chunked along events
(``chunk_rows`` rows per HDF5 chunk), filtered and protected by Fletcher-32 checksums, and
grow chunk by chunk, so memory stays bounded whatever the event count.

With the default filter (``deflate``, see :mod:`generator.io.filters`) the sink encodes full
HDF5 chunks in a thread pool while the caller generates the next events, and stores them with
direct chunk writes; other filters go through h5py's own filter pipeline. After each
``write_chunk`` call whose chunks are all on disk, the file is flushed and the attribute
``progress_events`` records how many leading events are complete (what ``--resume`` uses).
"""

from __future__ import annotations

import contextlib
import errno as _errno
import functools
import os
import re
import tempfile
from collections import deque
from collections.abc import Mapping, Sequence
from concurrent.futures import Future, ThreadPoolExecutor
from pathlib import Path
from typing import Any

import h5py
import numpy as np

from ..errors import InputError, OutputExistsError, SunrecoilError, WriteError
from .filters import DEFAULT_FILTER, encode_deflate, filter_spec
from .lock import RunLock, temp_path_for
from .preflight import check_existing
from .schema import Field
from .signals import critical, note_committed, raise_pending

#: Test hook (environment variable): after this many generator chunks the HDF5 file
#: descriptor is pointed at /dev/full, so every later write fails with a real ENOSPC from HDF5.
FAULT_HOOK_ENV = "SUNRECOIL_TEST_ENOSPC_AFTER_CHUNKS"


def _error_number(exc: BaseException) -> int | None:
    if isinstance(exc, OSError) and exc.errno:
        return exc.errno
    m = re.search(r"errno = (\d+)", str(exc))
    return int(m.group(1)) if m else None


def _guarded(method):
    """Run a writer method with interrupts deferred; turn I/O failures into WriteError.

    After the first failure the sink is *broken*: its HDF5 file descriptor is redirected to an
    anonymous scratch file, so that closing the file (which flushes metadata) cannot fail
    again or crash in h5py's finalisers, and :meth:`HDF5Sink.abort` removes the temporary
    file.
    """
    @functools.wraps(method)
    def wrapper(self, *args, **kwargs):
        if self._broken is not None:
            raise self._broken
        try:
            with critical():
                return method(self, *args, **kwargs)
        except (OSError, RuntimeError) as exc:
            code = _error_number(exc)
            cause = (f"{os.strerror(code)} [{_errno.errorcode.get(code, code)}]"
                     if code else str(exc).splitlines()[0][:120])
            self._broken = WriteError(f"writing {str(self.tmp)!r} (for {str(self.path)!r}) "
                                      f"failed: {cause}")
            self._detach()
            raise self._broken from None
    return wrapper

__all__ = ["HDF5Sink", "MemorySink", "compression_kwargs", "temp_path_for",
           "check_output_path", "chunk_rows_for", "PROGRESS_ATTR",
           "PROGRESS_CHUNKS_ATTR"]

#: Root attributes of a temporary file: the leading events known complete on disk, and how
#: many ``write_chunk`` calls (generator chunks) they hold.
PROGRESS_ATTR = "progress_events"
PROGRESS_CHUNKS_ATTR = "progress_chunks"


def compression_kwargs(name: str, level: int | None = None) -> dict[str, Any]:
    """h5py dataset keyword arguments for a compression choice.

    ``blosc-lz4`` (Blosc with LZ4 and byte shuffle) and ``zstd`` need the ``hdf5plugin``
    package (or the corresponding HDF5 filter plugins) to read; ``deflate`` (shuffle +
    deflate) and ``gzip`` are readable by any HDF5 build; ``lzf`` ships with h5py.
    """
    filter_spec(name)
    if name == "none":
        return {}
    if name == "deflate":
        return {"shuffle": True, "compression": "gzip",
                "compression_opts": 1 if level is None else level}
    if name == "gzip":
        return {"compression": "gzip", "compression_opts": 1 if level is None else level}
    if name == "lzf":
        return {"compression": "lzf"}
    import hdf5plugin

    if name == "blosc-lz4":
        return dict(hdf5plugin.Blosc(cname="lz4", clevel=5 if level is None else level,
                                     shuffle=hdf5plugin.Blosc.SHUFFLE))
    return dict(hdf5plugin.Zstd(clevel=3 if level is None else level))


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
        One of ``deflate`` (default), ``blosc-lz4``, ``zstd``, ``lzf``, ``gzip``, ``none``.
    compression_level : int, optional
        Filter level (meaning depends on the filter).
    chunk_rows : int
        HDF5 chunk length along the event axis.
    force : bool
        Overwrite an existing file at ``path`` (only at commit time) and discard a stale
        temporary file of a killed run.
    threads : int, optional
        Encoder threads of the ``deflate`` filter (default: number of CPUs, at most 4).
    resume : bool
        Reopen the temporary file of a killed run and continue after its last complete
        events (see :meth:`resume_from`); the caller checks that the run is the same one.
    """

    def __init__(self, path: str | Path, fields: Sequence[Field], *,
                 compression: str = DEFAULT_FILTER, compression_level: int | None = None,
                 chunk_rows: int = 65536, force: bool = False, threads: int | None = None,
                 resume: bool = False):
        self.path = Path(path)
        self.force = force
        self._broken: WriteError | None = None
        self._scratch: Any = None
        check_output_path(self.path, force)
        self.fields = tuple(fields)
        self.tmp = temp_path_for(self.path)
        self.spec = filter_spec(compression)
        self.level = compression_level
        self.rows = max(1, min(int(chunk_rows), 1 << 20))
        self.path.parent.mkdir(parents=True, exist_ok=True)
        self._lock = RunLock(self.path).acquire()
        try:
            self._open(resume, compression)
        except BaseException:
            self._lock.release()
            raise
        self._datasets: dict[str, h5py.Dataset] = {}
        self.n_written = 0            # rows accepted (pending rows included)
        self._row0 = 0                # first row of the pending buffer
        self._pending: dict[str, list[np.ndarray]] = {f.name: [] for f in self.fields}
        self._n_pending = 0
        self._jobs: deque[tuple[int, str, int, int, Future | np.ndarray]] = deque()
        self._batch = 0               # write_chunk calls (generator chunks) accepted
        self._batch_ends: deque[tuple[int, int]] = deque()   # (calls, rows) at call ends
        n_threads = threads or min(4, os.cpu_count() or 1)
        self._pool = ThreadPoolExecutor(n_threads) if self.spec.direct else None

    def _open(self, resume: bool, compression: str) -> None:
        if resume:
            if not self.tmp.exists():
                raise InputError(f"--resume: no partial run to continue for {str(self.path)!r} "
                                 f"(temporary file {str(self.tmp)!r} does not exist)")
            try:
                self._file = h5py.File(self.tmp, "r+")
            except OSError as exc:
                raise InputError(f"--resume: temporary file {str(self.tmp)!r} is not "
                                 f"readable ({exc}); delete it and start again") from None
            try:
                self._events = self._file["events"]
                first = self._events[self.fields[0].name]
                self.rows = int(first.chunks[0])   # the file's own chunking decides
            except (KeyError, TypeError):
                self._file.close()
                raise InputError(f"--resume: temporary file {str(self.tmp)!r} is incomplete "
                                 "(killed while being created); use --force to start "
                                 "again") from None
            return
        if self.tmp.exists() and not self.force:
            raise OutputExistsError(
                f"a partial run exists ({str(self.tmp)!r}, left by a killed run): continue it "
                "with --resume, or use --force to discard it")
        self._file = h5py.File(self.tmp, "w")
        self._events = self._file.create_group("events")
        kwargs = compression_kwargs(compression, self.level)
        for f in self.fields:
            ds = self._events.create_dataset(
                f.name, shape=(0, *f.shape), maxshape=(None, *f.shape), dtype=f.dtype,
                chunks=(self.rows, *f.shape), fletcher32=True, **kwargs)
            ds.attrs["units"] = f.units
            ds.attrs["description"] = f.description
        for k, v in self.spec.attrs().items():
            self._events.attrs[k] = v
        self._file.attrs[PROGRESS_ATTR] = 0
        self._file.attrs[PROGRESS_CHUNKS_ATTR] = 0
        self._file.flush()

    # ------------------------------------------------------------------ resume support
    @property
    def progress(self) -> tuple[int, int]:
        """(generator chunks, events) known complete in the (temporary) file."""
        a = self._file.attrs
        return int(a.get(PROGRESS_CHUNKS_ATTR, 0)), int(a.get(PROGRESS_ATTR, 0))

    def resume_from(self, chunks: int, row: int) -> None:
        """Continue after ``chunks`` complete generator chunks (``row`` events); drop the rest.

        Rows of a partly filled HDF5 chunk before ``row`` are read back into the buffer, so
        the chunks written afterwards are the same as in an uninterrupted run.
        """
        if not 0 <= row <= self.progress[1]:
            raise SunrecoilError(f"cannot resume at event {row}: only {self.progress[1]} "
                                 "complete")
        base = row - row % self.rows
        for f in self.fields:
            ds = self._events[f.name]
            if base < row:
                self._pending[f.name] = [ds[base:row]]
            ds.resize(base, axis=0)
        self._row0 = base
        self._n_pending = row - base
        self.n_written = row
        self._batch = chunks
        self._file.flush()

    def count_nonzero(self, name: str) -> int:
        """Non-zero values of a field among the events accepted so far (resume bookkeeping)."""
        ds = self._events[name]
        n = sum(int(np.count_nonzero(ds[i:min(i + (1 << 22), self._row0)]))
                for i in range(0, self._row0, 1 << 22))
        return n + sum(int(np.count_nonzero(a)) for a in self._pending[name])

    # ------------------------------------------------------------------ writing events
    @_guarded
    def write_chunk(self, chunk: Mapping[str, np.ndarray]) -> None:
        """Append one chunk (all fields, equal lengths) to the event datasets."""
        n = len(chunk[self.fields[0].name])
        for f in self.fields:
            data = np.ascontiguousarray(chunk[f.name], dtype=f.dtype)
            if len(data) != n or data.shape[1:] != f.shape:
                raise SunrecoilError(f"field {f.name} has shape {data.shape}, expected "
                                     f"({n}, {', '.join(map(str, f.shape))})")
            self._pending[f.name].append(data)
        self._n_pending += n
        self.n_written += n
        while self._n_pending >= self.rows:
            self._submit(self.rows)
        self._batch += 1
        self._batch_ends.append((self._batch, self.n_written))
        if os.environ.get(FAULT_HOOK_ENV, "") == str(self._batch):
            full = os.open("/dev/full", os.O_WRONLY)
            os.dup2(full, self._file.id.get_vfd_handle())
            os.close(full)
        self._drain(keep_batch=self._batch - 1)   # this call's chunks stay in flight

    def _submit(self, valid: int) -> None:
        """Cut ``valid`` rows off the pending buffer into one HDF5 chunk per field."""
        for f in self.fields:
            parts = self._pending[f.name]
            data = parts[0] if len(parts) == 1 else np.concatenate(parts)
            head, rest = data[:valid], data[valid:]
            self._pending[f.name] = [rest] if len(rest) else []
            if self._pool is not None:
                if valid < self.rows:          # edge chunk: HDF5 stores full chunks
                    pad = np.zeros((self.rows, *f.shape), f.dtype)
                    pad[:valid] = head
                    head = pad
                job: Future | np.ndarray = self._pool.submit(encode_deflate, head, self.level)
            else:
                job = head
            self._jobs.append((self._batch, f.name, self._row0, valid, job))
        self._row0 += valid
        self._n_pending -= valid

    def _dataset(self, name: str) -> h5py.Dataset:
        """The event dataset ``name`` (opened once: h5py's group lookup costs ~0.1 ms)."""
        ds = self._datasets.get(name)
        if ds is None:
            ds = self._datasets[name] = self._events[name]
        return ds

    def _drain(self, keep_batch: int | None = None) -> None:
        """Write finished chunks in order, leaving batch ``keep_batch`` in flight."""
        done_to = None
        ready = []
        while self._jobs and (keep_batch is None or self._jobs[0][0] < keep_batch):
            ready.append(self._jobs.popleft())
        ends: dict[str, int] = {}
        for _, name, row, valid, _job in ready:
            ends[name] = max(ends.get(name, 0), row + valid)
        for name, end in ends.items():          # one resize per dataset and call
            ds = self._dataset(name)
            if ds.shape[0] < end:
                ds.resize(end, axis=0)
        for _, name, row, valid, job in ready:
            ds = self._dataset(name)
            if isinstance(job, Future):
                ds.id.write_direct_chunk((row,) + (0,) * (ds.ndim - 1), job.result())
            else:
                ds[row:row + valid] = job
            done_to = row + valid
        durable = None
        while done_to is not None and self._batch_ends and self._batch_ends[0][1] <= done_to:
            durable = self._batch_ends.popleft()
        if durable is not None:      # every row of these generator chunks is on disk
            self._file.attrs[PROGRESS_CHUNKS_ATTR] = durable[0]
            self._file.attrs[PROGRESS_ATTR] = durable[1]
            self._file.flush()

    @_guarded
    def write_raw(self, name: str, row: int, raw: bytes, valid: int, filter_mask: int = 0
                  ) -> None:
        """Store one already-encoded HDF5 chunk of field ``name`` at event ``row`` (merge)."""
        ds = self._dataset(name)
        if ds.shape[0] < row + valid:
            ds.resize(row + valid, axis=0)
        ds.id.write_direct_chunk((row,) + (0,) * (ds.ndim - 1), raw, filter_mask)
        self.n_written = max(self.n_written, row + valid)

    @_guarded
    def flush_events(self) -> None:
        """Encode and write every buffered event (the last chunk may be partial)."""
        if self._n_pending:
            self._submit(self._n_pending)
        self._drain()

    # ------------------------------------------------------------------ the rest
    @_guarded
    def write_table(self, path: str, data: np.ndarray, units: str, description: str,
                    attrs: Mapping[str, Any] | None = None) -> None:
        """Store an auxiliary array (e.g. a probability table) at ``path`` with its unit."""
        if path in self._file:          # resumed runs write their tables again
            del self._file[path]
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

    @_guarded
    def copy_from(self, src: h5py.File, name: str) -> None:
        """Copy a group or dataset (with attributes) from another open file (merge)."""
        src.copy(src[name], self._file, name)

    @_guarded
    def set_attrs(self, attrs: Mapping[str, Any], group: str = "/") -> None:
        """Set attributes on a group (root by default)."""
        g = self._file.require_group(group) if group != "/" else self._file
        for k, v in attrs.items():
            g.attrs[k] = _attr_value(v)

    def get_attrs(self) -> dict[str, Any]:
        """Root attributes of the file being written (e.g. of a resumed temporary file)."""
        return dict(self._file.attrs)

    @_guarded
    def set_field_attrs(self, name: str, attrs: Mapping[str, Any]) -> None:
        """Set extra attributes on one event dataset."""
        for k, v in attrs.items():
            self._events[name].attrs[k] = _attr_value(v)

    def _shutdown(self) -> None:
        if self._pool is not None:
            self._pool.shutdown(wait=True, cancel_futures=True)
            self._pool = None

    @_guarded
    def commit(self) -> Path:
        """Write the last events, close the file and atomically move it onto the final name."""
        try:
            self.flush_events()
        finally:
            self._shutdown()
        self._file.attrs["n_events"] = self.n_written
        for k in (PROGRESS_ATTR, PROGRESS_CHUNKS_ATTR):
            if k in self._file.attrs:
                del self._file.attrs[k]
        for k, v in self.spec.attrs().items():
            self._file.attrs[k] = v
        self._file.close()
        check_output_path(self.path, self.force)
        raise_pending()               # an interrupt during the last writes: remove, not rename
        os.replace(self.tmp, self.path)
        note_committed()
        self._lock.release()
        return self.path

    def _detach(self) -> None:
        """Point the HDF5 file descriptor at an anonymous scratch file (after a failure)."""
        with contextlib.suppress(Exception):
            self._scratch = tempfile.TemporaryFile()
            os.dup2(self._scratch.fileno(), self._file.id.get_vfd_handle())

    def _close_quietly(self) -> None:
        with critical():
            self._shutdown()
            if self._broken is not None:
                with contextlib.suppress(Exception):
                    self._file.close()
            else:
                self._file.close()
        if self._scratch is not None:
            self._scratch.close()

    def close_keep(self) -> None:
        """Close and unlock, keeping the temporary file (a refused ``--resume``)."""
        try:
            self._close_quietly()
        finally:
            self._lock.release()

    def abort(self) -> None:
        """Close and delete the temporary file; the final name is never touched."""
        try:
            if self._broken is None:
                try:
                    self._close_quietly()
                except (OSError, RuntimeError):   # e.g. the disk filled while closing
                    self._detach()
                    self._broken = WriteError("closing failed")
                    self._close_quietly()
            else:
                self._close_quietly()
        finally:
            self.tmp.unlink(missing_ok=True)
            self._lock.release()


def chunk_rows_for(chunk_size: int, target: int = 1 << 16) -> int:
    """HDF5 chunk length for generator chunks of ``chunk_size`` events.

    The largest divisor of ``chunk_size`` not above ``target`` (so every generator chunk,
    shard and resume point starts on an HDF5 chunk boundary and shards merge by copying
    compressed chunks); when ``chunk_size`` has no divisor of at least 1/16 of the target,
    ``min(chunk_size, target)`` (merging then re-encodes unaligned shards).
    """
    if chunk_size <= target:
        return max(1, chunk_size)
    d = -(-chunk_size // target)
    while chunk_size % d:
        d += 1
    rows = chunk_size // d
    return rows if rows >= target // 16 else target


def check_output_path(path: Path, force: bool) -> None:
    """Refuse an existing target unless ``force`` (regular files and links to them only)."""
    check_existing(Path(path), force)


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

    def close_keep(self) -> None:
        """Nothing to keep or release in memory."""

    def abort(self) -> None:
        """Drop everything."""
        self.chunks = {f.name: [] for f in self.fields}

    def arrays(self) -> dict[str, np.ndarray]:
        """All events as concatenated arrays."""
        return {
            f.name: (np.concatenate(v) if v else np.empty((0, *f.shape), f.dtype))
            for f, v in zip(self.fields, self.chunks.values(), strict=True)
        }
