"""Production helpers: shard ranges, resuming a killed run, and the chunk loop.

A run of ``n`` events in chunks of ``c`` has ``K = ceil(n / c)`` chunks; chunk ``k`` draws
only from ``SeedSequence(seed, spawn_key=(k,))``. So any subset of chunks can be produced
anywhere, in any order, and put together bit for bit:

* **shard** ``I/N`` (0 ≤ I < N) produces chunks ``k ∈ [floor(I K / N), floor((I+1) K / N))``
  into its own file, with the root attributes of the whole run plus ``shard_*`` attributes;
  ``sunrecoil merge`` (:mod:`generator.io.merge`) joins the N files;
* **resume** reopens the temporary file of a killed run, checks it belongs to the same run
  (configuration, seed, event count, chunk size, shard, version), drops everything after its
  last complete chunk and continues there.
"""

from __future__ import annotations

import re
from collections import deque
from collections.abc import Callable, Mapping
from concurrent.futures import Future, ThreadPoolExecutor
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import h5py
import numpy as np

from .errors import InputError

__all__ = ["Shard", "WorkRange", "parse_shard", "work_range", "resume_chunk", "resumed_seed",
           "run_chunks", "start_output", "IDENTITY_ATTRS", "SHARD_ATTRS"]

#: Root attributes that identify a run: a resume or a merge requires them to be equal.
IDENTITY_ATTRS = ("config_toml", "seed_entropy", "run_n_events", "chunk_size", "tool_version",
                  "layout_version")

#: Root attributes that describe a shard file.
SHARD_ATTRS = ("shard_index", "shard_count", "shard_chunk_start", "shard_chunk_stop",
               "shard_event_start", "shard_event_stop")


@dataclass(frozen=True)
class Shard:
    """Shard ``index`` of ``count`` (0 ≤ index < count)."""

    index: int
    count: int


def parse_shard(text: str) -> Shard:
    """Parse ``I/N`` (shard I of N, counted from 0) or raise InputError."""
    m = re.fullmatch(r"\s*(\d{1,9})\s*/\s*(\d{1,9})\s*", str(text))
    if not m:
        raise InputError(f"--shard: {str(text)[:40]!r} is not of the form I/N (shard I of N, "
                         "0 ≤ I < N, e.g. 0/4 … 3/4)")
    i, n = int(m.group(1)), int(m.group(2))
    if n < 1 or not 0 <= i < n:
        n1 = max(n, 1)
        raise InputError(f"--shard: {i}/{n} is not allowed; N ≥ 1 and 0 ≤ I < N "
                         f"(shards are counted from 0: 0/{n1} … {n1 - 1}/{n1})")
    return Shard(i, n)


@dataclass(frozen=True)
class WorkRange:
    """The chunks one process writes: ``[k0, k1)`` of a run of ``n_total`` events."""

    n_total: int
    chunk: int
    k0: int
    k1: int
    shard: Shard | None

    @property
    def n_chunks(self) -> int:
        """Chunks of the whole run."""
        return -(-self.n_total // self.chunk)

    @property
    def event_start(self) -> int:
        """First event (row of the single-process file) of this range."""
        return min(self.k0 * self.chunk, self.n_total)

    @property
    def event_stop(self) -> int:
        """One past the last event of this range."""
        return min(self.k1 * self.chunk, self.n_total)

    @property
    def n_events(self) -> int:
        """Events written by this range."""
        return self.event_stop - self.event_start

    def chunk_events(self, k: int) -> int:
        """Events of chunk ``k``."""
        return min(self.chunk, self.n_total - k * self.chunk)

    def attrs(self) -> dict[str, Any]:
        """Root attributes describing the run and, for a shard, its part."""
        out: dict[str, Any] = {"run_n_events": self.n_total}
        if self.shard is not None:
            out.update(shard_index=self.shard.index, shard_count=self.shard.count,
                       shard_chunk_start=self.k0, shard_chunk_stop=self.k1,
                       shard_event_start=self.event_start, shard_event_stop=self.event_stop)
        return out


def work_range(n_total: int, chunk: int, shard: Shard | None = None) -> WorkRange:
    """The chunk range of a whole run (``shard`` None) or of one shard of it.

    Shards split the K chunks as evenly as possible; with more shards than chunks some shards
    are empty (they still write a valid file, so a batch array needs no special case).
    """
    k = -(-n_total // chunk)
    if shard is None:
        return WorkRange(n_total, chunk, 0, k, None)
    k0 = shard.index * k // shard.count
    k1 = (shard.index + 1) * k // shard.count
    return WorkRange(n_total, chunk, k0, k1, shard)


def resumed_seed(path: Path) -> int | None:
    """The seed recorded in the temporary file of a killed run at ``path`` (None if absent)."""
    from .io.lock import RunLock, temp_path_for

    tmp = temp_path_for(path)
    if not tmp.exists():
        return None
    RunLock(path).acquire().release()           # a live run holds the lock: say so, clearly
    try:
        with h5py.File(tmp, "r", locking=False) as f:
            return int(f.attrs["seed_entropy"])
    except (OSError, KeyError, ValueError):
        return None                             # the resume check below explains the problem


def _same(a: Any, b: Any) -> bool:
    if isinstance(a, bytes):
        a = a.decode()
    if isinstance(b, bytes):
        b = b.decode()
    if isinstance(a, np.generic):
        a = a.item()
    if isinstance(b, np.generic):
        b = b.item()
    return str(a) == str(b)


def resume_chunk(sink: Any, work: WorkRange, attrs: Mapping[str, Any]) -> int:
    """Check that the reopened temporary file belongs to this run; return the next chunk.

    The file must carry the same identity attributes (:data:`IDENTITY_ATTRS` and the shard
    attributes). Events after the last complete chunk are dropped.

    Raises
    ------
    InputError
        When the temporary file belongs to another run (nothing is changed then).
    """
    have = sink.get_attrs()
    keys = [k for k in (*IDENTITY_ATTRS, *SHARD_ATTRS) if k in attrs or k in have]
    diff = [k for k in keys if k not in have or k not in attrs or not _same(have[k], attrs[k])]
    if diff:
        raise InputError(
            f"--resume: the partial run in {str(sink.tmp)!r} is a different run ({', '.join(diff)} "
            "differ from this command); repeat the original command with --resume, or use "
            "--force without --resume to discard it")
    chunks, rows = sink.progress            # complete generator chunks and their events
    k = min(work.k0 + chunks, work.k1)
    sink.resume_from(k - work.k0, rows)
    return k


def start_output(sink: Any, work: WorkRange, attrs: Mapping[str, Any], resume: bool) -> int:
    """Record the run's identity in a new output, or check a resumed one; the first chunk.

    A refused resume closes the sink but keeps its temporary file.
    """
    try:
        if resume:
            return resume_chunk(sink, work, attrs)
        sink.set_attrs(attrs)              # the temporary file names its run (for resume)
        return work.k0
    except BaseException:
        sink.close_keep()
        raise


def run_chunks(sink: Any, work: WorkRange, first: int,
               make_chunk: Callable[[int, int], Mapping[str, np.ndarray]],
               progress: Callable[[int], None] | None = None, threads: int = 1) -> None:
    """Generate chunks ``first … k1-1`` with ``make_chunk(k, n)`` and write them in order.

    With ``threads`` > 1 the chunks are made in a pool of that many threads (``make_chunk``
    must then be a pure function of ``k`` and ``n``, as the generator's chunks are: each draws
    only from its own seed sequence); at most ``threads`` chunks are in memory, counting the
    one being written (the next is started when a chunk has been handed to the sink, whose
    encoder threads keep the cores busy meanwhile). The file is the same as with one thread.
    numpy and zlib release the GIL in their array loops, so the threads use several cores.
    """
    if progress is not None and first > work.k0:
        progress(min(first * work.chunk, work.n_total) - work.event_start)
    todo = iter(range(first, work.k1))
    if threads <= 1 or work.k1 - first <= 1:
        for k in todo:
            m = work.chunk_events(k)
            _write(sink, make_chunk(k, m), m, progress)
        return
    with ThreadPoolExecutor(threads, thread_name_prefix="sunrecoil-chunk") as pool:
        ahead: deque[tuple[int, Future]] = deque()

        def submit() -> None:
            k = next(todo, None)
            if k is not None:
                m = work.chunk_events(k)
                ahead.append((m, pool.submit(make_chunk, k, m)))

        try:
            for _ in range(threads):
                submit()
            while ahead:
                m, job = ahead.popleft()
                chunk = job.result()
                _write(sink, chunk, m, progress)
                del chunk
                submit()
        except BaseException:
            for _, job in ahead:
                job.cancel()
            raise


def _write(sink: Any, chunk: Mapping[str, np.ndarray], m: int,
           progress: Callable[[int], None] | None) -> None:
    sink.write_chunk(chunk)
    if progress is not None:
        progress(m)
