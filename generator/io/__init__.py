"""Event-file input and output (HDF5, columnar).

``schema`` defines every event field (name, dtype, unit, shape, description);
``writer`` holds the streaming, atomic HDF5 backend and an in-memory backend with the same
interface; ``reader`` reads files back as numpy arrays, whole or in chunks.
"""

from __future__ import annotations

from .reader import EventFile, read_events
from .schema import EVENT_FIELDS, FRAME_CONVENTION, Field
from .writer import HDF5Sink, MemorySink

__all__ = [
    "EVENT_FIELDS",
    "FRAME_CONVENTION",
    "EventFile",
    "Field",
    "HDF5Sink",
    "MemorySink",
    "read_events",
]
