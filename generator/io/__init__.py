"""Event-file input and output (HDF5, columnar).

``schema`` defines every event field (name, dtype, unit, shape, description);
``writer`` holds the streaming, atomic HDF5 backend and an in-memory backend with the same
interface; ``reader`` reads files back as numpy arrays, whole or in chunks.
"""

from __future__ import annotations

import importlib
from typing import Any

#: Public name -> submodule. Imported on first use (PEP 562), so that commands which never
#: touch an event file (``--help``, ``config show``) do not import h5py (≈ 0.05–0.1 s).
_LAZY = {"EventFile": "reader", "read_events": "reader", "EVENT_FIELDS": "schema",
         "FRAME_CONVENTION": "schema", "Field": "schema", "HDF5Sink": "writer",
         "MemorySink": "writer"}

__all__ = [
    "EVENT_FIELDS",
    "FRAME_CONVENTION",
    "EventFile",
    "Field",
    "HDF5Sink",
    "MemorySink",
    "read_events",
]


def __getattr__(name: str) -> Any:
    if name in _LAZY:
        return getattr(importlib.import_module(f".{_LAZY[name]}", __name__), name)
    raise AttributeError(f"module {__name__!r} has no attribute {name!r}")
