"""Reading user-supplied text files (configurations, spectrum tables, run lists) safely.

Every file a user names is untrusted input. :func:`read_user_text` accepts regular files only
(a FIFO, a device such as ``/dev/zero`` or a folder is refused before it is opened, so nothing
can block or stream without end), at most :data:`MAX_USER_FILE_BYTES` bytes, UTF-8 text with
or without a byte-order mark. Errors name the file and the problem and never echo the file's
content. :func:`clip` shortens any user value before it is echoed in a message.
"""

from __future__ import annotations

import os
import stat
from typing import Any

from .errors import DataFileError

__all__ = ["MAX_USER_FILE_BYTES", "MAX_TABLE_ROWS", "read_user_text", "clip"]

#: Largest user file read (bytes): 50 MiB, far above any real run list or spectrum table.
MAX_USER_FILE_BYTES = 50 * 1024 * 1024

#: Most data rows accepted in one user table (run list, spectrum).
MAX_TABLE_ROWS = 1_000_000

#: Longest echo of a user value in an error message (characters).
CLIP_CHARS = 80


def clip(value: Any, limit: int = CLIP_CHARS) -> str:
    """``repr(value)`` cut to about ``limit`` characters (safe for deeply nested values)."""
    try:
        text = repr(value)
    except RecursionError:
        return f"<{type(value).__name__} nested too deeply to show>"
    if len(text) <= limit:
        return text
    return f"{text[: limit - 20]}…<{len(text)} characters>"


def read_user_text(path: str | os.PathLike[str], what: str,
                   error: type[Exception] = DataFileError) -> str:
    """The text of a user file, after checking that it is a regular, bounded UTF-8 file.

    Parameters
    ----------
    path : str or os.PathLike
        File name (symbolic links are followed).
    what : str
        How the file is named in messages, e.g. ``"run list"`` or ``"exposure.run_list"``.
    error : exception class
        Raised on any problem (default :class:`~generator.errors.DataFileError`).

    Returns
    -------
    str
        The decoded text (a leading UTF-8 byte-order mark removed).
    """
    name = os.fspath(path)
    shown = clip(name)
    try:
        st = os.stat(name)
    except OSError as exc:
        raise error(f"{what} {shown}: cannot be read ({exc.strerror or exc})") from None
    if not stat.S_ISREG(st.st_mode):
        kind = "a folder" if stat.S_ISDIR(st.st_mode) else "not a regular file"
        raise error(f"{what} {shown}: is {kind}; only regular files are read "
                    "(FIFOs, devices and folders are refused)")
    if st.st_size > MAX_USER_FILE_BYTES:
        raise error(f"{what} {shown}: {st.st_size} bytes is above the limit of "
                    f"{MAX_USER_FILE_BYTES} bytes (50 MiB)")
    try:
        with open(name, "rb") as fh:
            raw = fh.read(MAX_USER_FILE_BYTES + 1)
    except OSError as exc:
        raise error(f"{what} {shown}: cannot be read ({exc.strerror or exc})") from None
    if len(raw) > MAX_USER_FILE_BYTES:
        raise error(f"{what} {shown}: larger than the limit of {MAX_USER_FILE_BYTES} bytes")
    try:
        return raw.decode("utf-8-sig")
    except UnicodeDecodeError as exc:
        raise error(f"{what} {shown}: not UTF-8 text (invalid byte at offset {exc.start})"
                    ) from None
