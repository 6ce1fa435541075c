"""Advisory run locks: one writer per temporary event file.

A run holds an exclusive ``flock`` on ``.<name>.lock`` beside its output for as long as it
writes the temporary file ``.<name>.tmp``. The operating system drops the lock when the
process ends, even by SIGKILL, so a killed run never blocks a later ``--resume``; a second
run started while the first is alive fails at once with a clear message, before it touches
the temporary file.
"""

from __future__ import annotations

import fcntl
import os
from pathlib import Path

from ..errors import InputError

__all__ = ["RunLock", "lock_path_for", "temp_path_for"]


def temp_path_for(path: Path) -> Path:
    """Name of the temporary file written before the atomic rename onto ``path``."""
    return path.with_name(f".{path.name}.tmp")


def lock_path_for(path: Path) -> Path:
    """Name of the lock file that guards :func:`temp_path_for` of ``path``."""
    return path.with_name(f".{path.name}.lock")


class RunLock:
    """An exclusive, non-blocking advisory lock on the lock file of an output path."""

    def __init__(self, path: Path):
        self.path = lock_path_for(Path(path))
        self._fd: int | None = None

    def acquire(self) -> RunLock:
        """Take the lock or raise :class:`~generator.errors.InputError` if another run has it."""
        while True:
            fd = os.open(self.path, os.O_RDWR | os.O_CREAT, 0o644)
            try:
                fcntl.flock(fd, fcntl.LOCK_EX | fcntl.LOCK_NB)
            except BlockingIOError:
                os.close(fd)
                raise InputError(
                    f"another run is writing {str(self.path.with_suffix('.tmp'))!r} (lock "
                    f"{str(self.path)!r} is held); wait for it to finish or choose another "
                    "output path") from None
            try:   # the holder may have removed the file just before we locked it: retry
                same = os.fstat(fd).st_ino == os.stat(self.path).st_ino
            except FileNotFoundError:
                same = False
            if same:
                self._fd = fd
                return self
            os.close(fd)

    def release(self) -> None:
        """Remove the lock file and drop the lock (idempotent)."""
        if self._fd is None:
            return
        try:
            self.path.unlink(missing_ok=True)
        finally:
            os.close(self._fd)
            self._fd = None
