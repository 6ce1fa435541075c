"""Merging the shard files of one run into a single event file (``sunrecoil merge``).

The merge is a copy, not a virtual dataset: the output is an ordinary, self-contained file.
Every shard must come from the same run (equal configuration, seed, event count, chunk size,
shard count, versions and filter) and the shard indices 0 … N−1 must each appear exactly
once. Shard I holds the generator chunks ``[shard_chunk_start, shard_chunk_stop)`` of the
run (the events ``[shard_event_start, shard_event_stop)``; fewer rows when the response stage
drops untriggered events). When every shard starts on an HDF5 chunk boundary of the output
(the normal case: the HDF5 chunk length divides the generator chunk size, see
:func:`generator.io.writer.chunk_rows_for`), the compressed chunks are copied as they are with
direct chunk reads and writes — no decompression, no re-encoding — so the merge runs at disk
speed. Otherwise (dropped events, a chunk size without a suitable divisor) the shards are
decoded and streamed through the same encoder as a single-process run. Either way ``/events``
is bit-identical to the single-process file.

Provenance: the root attributes of the run (shard 0's, without the ``shard_*`` ones), plus
``merged_from`` (shard file names in order), ``merged_shard_created_utc`` and
``merge_created_utc``; auxiliary tables are copied from shard 0 (they are equal in all shards).
"""

from __future__ import annotations

import datetime as _dt
from collections.abc import Sequence
from pathlib import Path
from typing import Any

import h5py
import numpy as np

from ..errors import InputError
from .filters import filter_spec
from .schema import Field
from .writer import HDF5Sink, check_output_path

__all__ = ["merge_shards", "MERGE_KEYS"]

#: Root attributes that must be equal in every shard of a run.
MERGE_KEYS = ("config_toml", "seed_entropy", "run_n_events", "chunk_size", "shard_count",
              "tool_version", "layout_version")

_SHARD_ONLY = ("shard_index", "shard_count", "shard_chunk_start", "shard_chunk_stop",
               "shard_event_start", "shard_event_stop", "n_events",
               "created_utc")


def _text(v: Any) -> str:
    if isinstance(v, bytes):
        return v.decode()
    if isinstance(v, np.generic):
        return str(v.item())
    return str(v)


def _open_shards(paths: Sequence[Path]) -> list[h5py.File]:
    from .reader import _ensure_plugins

    _ensure_plugins()
    files: list[h5py.File] = []
    try:
        for p in paths:
            if not p.is_file():
                raise InputError(f"merge: shard file {str(p)!r} does not exist")
            try:
                f = h5py.File(p, "r")
            except OSError as exc:
                raise InputError(f"merge: {str(p)!r} is not a readable HDF5 file ({exc})"
                                 ) from None
            files.append(f)
            if "shard_index" not in f.attrs or "events" not in f:
                raise InputError(f"merge: {str(p)!r} is not a shard file (no shard_index "
                                 "attribute; write shards with generate --shard I/N)")
    except BaseException:
        for f in files:
            f.close()
        raise
    return files


def _check(paths: Sequence[Path], files: Sequence[h5py.File]) -> list[int]:
    """Validate the set of shards; return the file order by shard index."""
    ref = files[0].attrs
    for p, f in zip(paths, files, strict=True):
        for k in MERGE_KEYS:
            if k not in f.attrs or _text(f.attrs[k]) != _text(ref[k]):
                raise InputError(f"merge: {str(p)!r} is not from the same run as "
                                 f"{str(paths[0])!r} ({k} differs); all shards must share "
                                 "configuration, seed, event count and shard count")
        if _text(f["events"].attrs.get("compression", "")) != \
                _text(files[0]["events"].attrs.get("compression", "")):
            raise InputError(f"merge: {str(p)!r} uses another filter than {str(paths[0])!r}")
    n = int(ref["shard_count"])
    seen: dict[int, Path] = {}
    for p, f in zip(paths, files, strict=True):
        i = int(f.attrs["shard_index"])
        if i in seen:
            raise InputError(f"merge: shard {i}/{n} given twice ({str(seen[i])!r} and "
                             f"{str(p)!r})")
        seen[i] = p
    missing = sorted(set(range(n)) - set(seen))
    if missing:
        raise InputError(f"merge: shard(s) {', '.join(f'{i}/{n}' for i in missing)} missing; "
                         f"got {len(seen)} of {n}")
    order = sorted(range(len(files)), key=lambda j: int(files[j].attrs["shard_index"]))
    k = 0
    for j in order:
        a = files[j].attrs
        k0, k1 = int(a["shard_chunk_start"]), int(a["shard_chunk_stop"])
        rows = {int(d.shape[0]) for d in files[j]["events"].values()}
        if k0 != k or len(rows) != 1 or rows != {int(a["n_events"])}:
            raise InputError(f"merge: {str(paths[j])!r} holds chunks {k0}…{k1} with "
                             f"{sorted(rows)} rows; expected chunks from {k} and "
                             f"{int(a['n_events'])} rows (incomplete or damaged shard)")
        k = k1
    n_chunks = -(-int(ref["run_n_events"]) // int(ref["chunk_size"]))
    if k != n_chunks:
        raise InputError(f"merge: shards end at chunk {k}, the run has {n_chunks}")
    return order


def merge_shards(out: str | Path, shards: Sequence[str | Path], *, force: bool = False
                 ) -> Path:
    """Merge the shard files of one run into ``out`` (atomic: temp file + rename).

    Raises
    ------
    InputError
        Before anything is written, for missing, duplicated or mismatched shards.
    """
    out = Path(out)
    paths = [Path(p) for p in shards]
    if not paths:
        raise InputError("merge: no shard files given")
    check_output_path(out, force)
    if any(p.resolve() == out.resolve() for p in paths):
        raise InputError(f"merge: output {str(out)!r} is also a shard")
    files = _open_shards(paths)
    try:
        order = _check(paths, files)
        return _write(out, [paths[j] for j in order], [files[j] for j in order], force)
    finally:
        for f in files:
            f.close()


def _fields(events: h5py.Group) -> list[Field]:
    return [Field(name, ds.dtype.str, tuple(ds.shape[1:]), _text(ds.attrs.get("units", "")),
                  _text(ds.attrs.get("description", ""))) for name, ds in events.items()]


def _write(out: Path, paths: list[Path], files: list[h5py.File], force: bool) -> Path:
    first = files[0]
    ev0 = first["events"]
    comp = _text(ev0.attrs.get("compression", "none"))
    rows = {int(ds.chunks[0]) for f in files for ds in f["events"].values()}
    chunk_rows = min(rows)
    sizes = [int(f.attrs["n_events"]) for f in files]
    starts = np.concatenate([[0], np.cumsum(sizes)[:-1]]).astype(int)
    aligned = len(rows) == 1 and all(int(s0) % chunk_rows == 0 for s0 in starts)
    sink = HDF5Sink(out, _fields(ev0), compression=filter_spec(comp).name,
                    chunk_rows=chunk_rows, force=force)
    try:
        for name, ds in ev0.items():            # codes/names and any stage attributes
            sink.set_field_attrs(name, {k: v for k, v in ds.attrs.items()
                                        if k not in ("units", "description")})
        for f, s0 in zip(files, starts, strict=True):
            if aligned:
                _copy_raw(sink, f, int(s0))
            else:
                _copy_decoded(sink, f, chunk_rows)
        for name in first:
            if name != "events":
                sink.copy_from(first, name)
        attrs = {k: v for k, v in first.attrs.items() if k not in _SHARD_ONLY}
        now = _dt.datetime.now(_dt.UTC).strftime("%Y-%m-%dT%H:%M:%SZ")
        attrs.update(merged_from=np.array([p.name for p in paths], dtype=object),
                     merged_shard_created_utc=np.array(
                         [_text(f.attrs.get("created_utc", "")) for f in files], dtype=object),
                     merge_created_utc=now, created_utc=_text(first.attrs["created_utc"]),
                     merge_method="copy of compressed chunks" if aligned
                     else "decoded and re-encoded (unaligned shard boundaries)")
        attrs.update(_summed(files, attrs))
        sink.set_attrs(attrs)
        return sink.commit()
    except BaseException:
        sink.abort()
        raise


#: Counters that add up over shards (trigger bookkeeping of the response stage).
ADDITIVE_ATTRS = ("n_generated", "n_triggered")


def _summed(files: list[h5py.File], attrs: dict[str, Any]) -> dict[str, Any]:
    """Run totals of the per-shard counters, and the quantities derived from them."""
    out: dict[str, Any] = {}
    for k in ADDITIVE_ATTRS:
        if all(k in f.attrs for f in files):
            out[k] = int(sum(int(f.attrs[k]) for f in files))
    if "n_generated" in out and "n_triggered" in out:
        if "trigger_efficiency" in attrs:
            out["trigger_efficiency"] = (out["n_triggered"] / out["n_generated"]
                                         if out["n_generated"] else 0.0)
        if "expected_events_triggered" in attrs:
            out["expected_events_triggered"] = (float(attrs["weight_per_event"])
                                                * out["n_triggered"])
    return out


def _copy_raw(sink: HDF5Sink, f: h5py.File, base: int) -> None:
    """Copy the compressed chunks of one shard to its place (first row ``base``)."""
    for name, ds in f["events"].items():
        n, step = int(ds.shape[0]), int(ds.chunks[0])
        tail = (0,) * (ds.ndim - 1)
        for r in range(0, n, step):
            mask, raw = ds.id.read_direct_chunk((r, *tail))
            sink.write_raw(name, base + r, raw, min(step, n - r), mask)


def _copy_decoded(sink: HDF5Sink, f: h5py.File, rows: int) -> None:
    """Decode one shard and append it through the sink's encoder (unaligned shards)."""
    ev = f["events"]
    n = int(f.attrs["n_events"])
    for r in range(0, n, rows):
        sink.write_chunk({name: ds[r:r + rows] for name, ds in ev.items()})
