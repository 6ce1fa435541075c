"""Checks of an output target before any work starts.

:func:`check_target` is called before the tables are built, so that a run that cannot write its
file fails at once with a clear message (CLI exit status 2) instead of after minutes of work:

* the parent folder must exist, be a folder and be writable (tested by creating and removing
  a probe file, which also catches read-only mounts that ``os.access`` does not see as root);
* an existing target is replaced only with ``force``, and only when it is a regular file or a
  symbolic link to one: folders, devices, FIFOs, sockets and dangling links are never replaced;
* the free space of the file system must hold the estimated file size (events × bytes per
  event, with a safety factor).
"""

from __future__ import annotations

import contextlib
import os
import shutil
import stat
import tempfile
from pathlib import Path

from ..errors import InputError, OutputExistsError
from ..userfiles import clip

__all__ = ["check_target", "check_existing", "estimate_bytes", "BYTES_PER_EVENT", "SPACE_MARGIN"]

#: Measured compressed size of one truth-level event with the default filter (bytes; the
#: benchmark tests/benchmarks/bench_generate.py prints it). Used for the free-space check only.
BYTES_PER_EVENT = 40.0

#: Factor on the estimate before comparing with the free space (compression varies with the
#: configuration; refusing a run that would have fitted is worse than a late ENOSPC only when
#: the estimate is far off, so the check is deliberately loose).
SPACE_MARGIN = 0.5


def estimate_bytes(n_events: int, bytes_per_event: float = BYTES_PER_EVENT) -> float:
    """Estimated size of an event file in bytes (events × bytes per event + 1 MB of tables)."""
    return float(n_events) * bytes_per_event + 1.0e6


def _describe(mode: int) -> str:
    if stat.S_ISDIR(mode):
        return "a folder"
    if stat.S_ISCHR(mode) or stat.S_ISBLK(mode):
        return "a device"
    if stat.S_ISFIFO(mode):
        return "a FIFO"
    if stat.S_ISSOCK(mode):
        return "a socket"
    return "not a regular file"


def check_existing(p: Path, force: bool) -> None:
    """Refuse an existing target unless it is a regular file (or a link to one) and ``force``.

    Raises
    ------
    OutputExistsError
        Naming the path and what it is.
    """
    shown = clip(str(p))
    try:
        lst = os.lstat(p)
    except FileNotFoundError:
        lst = None
    except OSError as exc:
        raise InputError(f"output path {shown}: cannot be examined ({exc.strerror})") from None
    if lst is not None:
        if stat.S_ISLNK(lst.st_mode):
            try:
                mode = os.stat(p).st_mode
            except OSError:
                raise OutputExistsError(f"output path {shown} is a dangling symbolic link; "
                                        "remove it or choose another path") from None
        else:
            mode = lst.st_mode
        if not stat.S_ISREG(mode):
            raise OutputExistsError(f"output path {shown} is {_describe(mode)}; only a regular "
                                    "file is ever replaced (with --force)")
        if not force:
            raise OutputExistsError(f"output file {shown} exists; use --force (or choose "
                                    "another path) to overwrite")


def check_target(path: str | os.PathLike[str], force: bool, n_events: int | None = None,
                 bytes_per_event: float = BYTES_PER_EVENT, create_folder: bool = False) -> None:
    """Refuse an output target that cannot or must not be written.

    Parameters
    ----------
    path : path
        Final output file name.
    force : bool
        Replace an existing regular file (or a link to one).
    n_events : int, optional
        Planned event count, for the free-space estimate.
    bytes_per_event : float
        Compressed bytes per event for the estimate.
    create_folder : bool
        Create a missing parent folder (used for the configured ``output.path``, e.g. the
        default ``outputs/``; a folder named with ``-o`` must exist).

    Raises
    ------
    OutputExistsError
        The target exists and may not be replaced.
    InputError
        The folder is missing, not a folder or not writable, or the disk is clearly too small.
    """
    p = Path(path)
    check_existing(p, force)
    folder = p.parent if str(p.parent) else Path(".")
    if not folder.exists() and create_folder:
        try:
            folder.mkdir(parents=True, exist_ok=True)
        except OSError as exc:
            raise InputError(f"output folder {clip(str(folder))} cannot be created "
                             f"({exc.strerror})") from None
    if not folder.exists():
        raise InputError(f"output folder {clip(str(folder))} does not exist; create it first")
    if not folder.is_dir():
        raise InputError(f"output folder {clip(str(folder))} is not a folder")
    try:
        fd, probe = tempfile.mkstemp(prefix=f".{p.name}.", suffix=".probe", dir=folder)
    except OSError as exc:
        raise InputError(f"output folder {clip(str(folder))} is not writable "
                         f"({exc.strerror})") from None
    os.close(fd)
    with contextlib.suppress(OSError):
        os.unlink(probe)
    if n_events is not None:
        need = estimate_bytes(n_events, bytes_per_event)
        free = shutil.disk_usage(folder).free
        if need * SPACE_MARGIN > free:
            raise InputError(
                f"output folder {clip(str(folder))}: about {need / 1e6:.1f} MB needed for "
                f"{n_events} events (≈ {bytes_per_event:.0f} B per event) but only "
                f"{free / 1e6:.1f} MB free")
