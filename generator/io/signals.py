"""Interrupts (SIGINT, SIGTERM) that are never lost and never land inside HDF5 calls.

A Python signal handler runs between byte codes of the main thread. When it raises inside
h5py (for example while a dataset or file object is being closed or finalised) the exception
can be swallowed as "Exception ignored in …", and the run then finishes as if nothing had
happened; it can also leave the HDF5 library in a state in which later calls crash.

:func:`install` replaces the handlers of SIGINT and SIGTERM by one that raises
:class:`Interrupted` at once outside a :func:`critical` section, and inside one only records the
signal; the section raises it when it ends, after the HDF5 call has completed. The writer wraps
every h5py call in :func:`critical`, so an interrupt always reaches the pipeline's clean-up
(temporary file removed) and the CLI's exit status (130 for SIGINT, 143 for SIGTERM).
"""

from __future__ import annotations

import contextlib
import signal
import threading
from collections.abc import Iterator

__all__ = ["Interrupted", "install", "restore", "critical", "EXIT_STATUS", "raise_pending",
           "note_committed", "committed"]

#: Exit status per signal (128 + signal number, the shell convention).
EXIT_STATUS = {signal.SIGINT: 130, signal.SIGTERM: 143}


class Interrupted(BaseException):
    """The run was interrupted by a signal (a BaseException like KeyboardInterrupt)."""

    def __init__(self, signum: int):
        super().__init__(f"interrupted by {signal.Signals(signum).name}")
        self.signum = signum

    @property
    def exit_status(self) -> int:
        """Shell exit status for this signal."""
        return EXIT_STATUS.get(self.signum, 128 + self.signum)


_state = threading.local()
_pending: list[int] = []
_committed: list[bool] = []       # an output file was put under its final name since install()


def _depth() -> int:
    return getattr(_state, "depth", 0)


def _handler(signum: int, frame: object) -> None:  # noqa: ARG001 - signal API
    if _depth() > 0:
        _pending.append(signum)
        return
    raise Interrupted(signum)


def install() -> None:
    """Route SIGINT and SIGTERM through :class:`Interrupted` (main thread only)."""
    if threading.current_thread() is not threading.main_thread():
        return
    _committed.clear()
    for sig in (signal.SIGINT, signal.SIGTERM):
        signal.signal(sig, _handler)


def restore() -> None:
    """Put the default handlers back (a signal after this ends the process at once)."""
    if threading.current_thread() is not threading.main_thread():
        return
    for sig in (signal.SIGINT, signal.SIGTERM):
        signal.signal(sig, signal.SIG_DFL)


@contextlib.contextmanager
def critical() -> Iterator[None]:
    """Defer SIGINT/SIGTERM until the enclosed (HDF5) call has completed."""
    _state.depth = _depth() + 1
    try:
        yield
    finally:
        _state.depth -= 1
    if _state.depth == 0 and _pending:
        signum = _pending[0]
        _pending.clear()
        raise Interrupted(signum)


def raise_pending() -> None:
    """Raise a signal recorded inside a :func:`critical` section now (e.g. before a rename)."""
    if _pending:
        signum = _pending[0]
        _pending.clear()
        raise Interrupted(signum)


def note_committed() -> None:
    """Record that an output file now stands complete under its final name."""
    _committed.append(True)


def committed() -> bool:
    """True when an output was completed since :func:`install`.

    An interrupt after that point must not claim that partial output was removed.
    """
    return bool(_committed)
