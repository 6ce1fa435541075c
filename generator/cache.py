"""On-disk cache of precomputed tables, treated as untrusted input.

A cache entry is one ``.npz`` file (numpy's zip of ``.npy`` arrays, read with
``allow_pickle=False``, so loading never executes code). Besides the arrays it stores

* ``__key__``: the full key (a JSON document of every input the table depends on), and
* ``__sha256__``: a SHA-256 digest over the key and the bytes, dtypes and shapes of every array.

On load the stored key must equal the requested key exactly, the digest must match the content,
and a caller-supplied validator must accept the values. Any mismatch or read error (truncated
file, bad zip, wrong shape, planted values) is reported as a warning and the table is rebuilt
and rewritten; a corrupted entry is never used. Entries are written to a unique temporary file
in the cache folder and renamed atomically; the temporary file is removed on any failure.

The folder is ``$SUNRECOIL_CACHE`` or ``~/.cache/sunrecoil``. Caching is an optimisation only:
an unwritable folder costs the rebuild time and nothing else.
"""

from __future__ import annotations

import contextlib
import functools
import hashlib
import json
import logging
import os
import tempfile
import zipfile
from collections.abc import Callable, Mapping
from pathlib import Path
from typing import Any

import numpy as np

__all__ = ["cache_dir", "cached_arrays", "CacheRejected", "content_digest", "key_text",
           "code_key", "check_arrays"]

log = logging.getLogger(__name__)

#: Bump when the entry format changes (part of every key).
CACHE_FORMAT = 2

_KEY = "__key__"
_DIGEST = "__sha256__"


class CacheRejected(Exception):
    """A cache entry failed a check (raised by validators; never escapes this module)."""


def cache_dir() -> Path:
    """The cache folder: ``$SUNRECOIL_CACHE`` or ``~/.cache/sunrecoil``."""
    env = os.environ.get("SUNRECOIL_CACHE")
    return Path(env) if env else Path.home() / ".cache" / "sunrecoil"


@functools.cache
def code_key() -> dict[str, str]:
    """Key part naming the code that builds a table.

    Package, numpy and scipy versions, and a SHA-256 over every file of the installed package
    (sources and data).

    Any edit of the package therefore invalidates the tables keyed with it (a development
    checkout rebuilds them once after a change; they are never silently stale). Hashing the
    ≈ 0.8 MB of the package takes ≈ 3 ms, once per process.
    """
    import scipy

    from . import __version__

    root = Path(__file__).resolve().parent
    h = hashlib.sha256()
    for path in sorted(root.rglob("*")):
        if path.is_file() and "__pycache__" not in path.parts and path.suffix != ".pyc":
            h.update(f"|{path.relative_to(root).as_posix()}|".encode())
            h.update(path.read_bytes())
    return {"package": __version__, "code_sha256": h.hexdigest(), "numpy": np.__version__,
            "scipy": scipy.__version__}


def check_arrays(arrays: Mapping[str, np.ndarray], shapes: Mapping[str, tuple[int, ...]]
                 ) -> None:
    """Validator helper: every named array exists, is float64 of the given shape and finite.

    Raises
    ------
    CacheRejected
        Naming the first array that fails.
    """
    if set(arrays) != set(shapes):
        raise CacheRejected(f"arrays {sorted(arrays)}; expected {sorted(shapes)}")
    for name, shape in shapes.items():
        a = arrays[name]
        if a.dtype != np.float64 or a.shape != tuple(shape):
            raise CacheRejected(f"{name} has shape {a.shape} and dtype {a.dtype}; expected "
                                f"{tuple(shape)} float64")
        if not np.all(np.isfinite(a)):
            raise CacheRejected(f"{name} has values that are not finite")


def key_text(key: Mapping[str, Any]) -> str:
    """Canonical JSON text of a cache key (sorted keys, format version included)."""
    return json.dumps({"cache_format": CACHE_FORMAT, **key}, sort_keys=True, default=_jsonable)


def _jsonable(v: Any) -> Any:
    if isinstance(v, np.ndarray):
        return {"sha256": hashlib.sha256(np.ascontiguousarray(v).tobytes()).hexdigest(),
                "shape": list(v.shape), "dtype": v.dtype.str}
    if isinstance(v, np.generic):
        return v.item()
    raise TypeError(f"cache key value of type {type(v).__name__} is not serialisable")


def content_digest(key: str, arrays: Mapping[str, np.ndarray]) -> str:
    """SHA-256 over the key text and every array's name, dtype, shape and bytes."""
    h = hashlib.sha256(key.encode())
    for name in sorted(arrays):
        a = np.ascontiguousarray(arrays[name])
        h.update(f"|{name}|{a.dtype.str}|{a.shape}|".encode())
        h.update(a.reshape(-1).view(np.uint8))    # the bytes of tobytes(), without a copy
    return h.hexdigest()


def _load(path: Path, key: str) -> dict[str, np.ndarray]:
    # open the file ourselves: np.load leaks its handle when the zip directory is damaged
    with open(path, "rb") as fh, np.load(fh, allow_pickle=False) as f:
        if not {_KEY, _DIGEST} <= set(f.files):
            raise CacheRejected("key or checksum missing")
        stored_key = str(f[_KEY][()])
        digest = str(f[_DIGEST][()])
        arrays = {n: f[n] for n in f.files if n not in (_KEY, _DIGEST)}   # fresh arrays
    if stored_key != key:
        raise CacheRejected("stored key differs from the requested key")
    if content_digest(key, arrays) != digest:
        raise CacheRejected("content checksum mismatch")
    return arrays


def _store(path: Path, key: str, arrays: Mapping[str, np.ndarray]) -> None:
    path.parent.mkdir(parents=True, exist_ok=True)
    fd, tmp = tempfile.mkstemp(prefix=f".{path.stem}.", suffix=".part", dir=path.parent)
    try:
        with os.fdopen(fd, "wb") as fh:
            np.savez(fh, **arrays, **{_KEY: np.array(key), _DIGEST:
                                      np.array(content_digest(key, arrays))})
        os.replace(tmp, path)
    except BaseException:
        with contextlib.suppress(OSError):
            os.unlink(tmp)
        raise


def cached_arrays(name: str, key: Mapping[str, Any], build: Callable[[], dict[str, np.ndarray]],
                  validate: Callable[[dict[str, np.ndarray]], None] | None = None,
                  directory: str | os.PathLike | None = None) -> dict[str, np.ndarray]:
    """Arrays from the cache when a valid entry exists, else built, stored and returned.

    Parameters
    ----------
    name : str
        Table family (file-name prefix, e.g. ``"earth"``).
    key : mapping
        Every input the table depends on (JSON-serialisable; arrays are hashed).
    build : callable
        Returns the arrays (a dict of name → ndarray) when no valid entry exists.
    validate : callable, optional
        Raises :class:`CacheRejected` (or ValueError) when loaded values are not acceptable
        (shape, finiteness, ranges); called on loaded entries only.
    directory : path, optional
        Cache folder (default :func:`cache_dir`).

    Returns
    -------
    dict of str to ndarray
    """
    text = key_text(key)
    try:
        folder = Path(directory) if directory is not None else cache_dir()
    except RuntimeError as exc:           # no $SUNRECOIL_CACHE and no home folder
        log.info("table cache disabled (%s)", exc)
        return build()
    path = folder / f"{name}_{hashlib.sha256(text.encode()).hexdigest()[:24]}.npz"
    if path.is_file():
        try:
            arrays = _load(path, text)
            if validate is not None:
                validate(arrays)
            return arrays
        except (CacheRejected, OSError, ValueError, KeyError, EOFError,
                zipfile.BadZipFile) as exc:
            log.warning("cache entry %s rejected (%s); rebuilding it", path, exc)
    arrays = build()
    try:
        _store(path, text, arrays)
    except OSError as exc:
        log.info("table cache not written (%s); continuing without it", exc)
    return arrays
