"""HDF5 filter choices and the fast, plugin-free chunk encoder of the default filter.

The default filter pipeline ``deflate`` is HDF5's own: byte shuffle (filter id 2), deflate
(id 1, zlib format, RFC 1950/1951) and Fletcher-32 (id 3). Every HDF5 build can read it, with
no plugin. sunrecoil encodes the chunks itself and hands them to HDF5 with a direct chunk
write (``H5Dwrite_chunk``), so the encoding runs in a thread pool (zlib releases the GIL):

1. **shuffle**: an array of n elements of s bytes is reordered into s byte planes of n bytes
   (byte 0 of every element, then byte 1, ...), exactly as HDF5's shuffle filter does;
2. **deflate**: one zlib stream over the shuffled bytes (RFC 1950 header, deflate blocks,
   Adler-32 trailer). Each byte plane becomes its own run of deflate blocks: planes whose
   empirical byte entropy (from an evenly spread sample of 8192 bytes) is above
   :data:`STORE_ENTROPY_BITS` (the low mantissa bytes of random floats) are written as
   *stored* blocks, the others are Huffman coded by zlib at level 1 (run-length strategy for
   planes below :data:`RLE_ENTROPY_BITS`, Huffman only otherwise).
   Any inflater decodes this stream; the choice only saves the time zlib would spend
   failing to compress random bytes;
3. **fletcher32**: HDF5's Fletcher-32 checksum of the compressed bytes, appended as 4 bytes
   little-endian (HDF5 ``H5_checksum_fletcher32``: 16-bit words read big-endian, sums folded
   modulo 65535 with a non-zero sum represented in 1..65535).

The encoding is a pure function of the chunk's bytes, so equal data give equal files.
"""

from __future__ import annotations

import zlib
from dataclasses import dataclass
from typing import Any

import numpy as np

from ..errors import ConfigError

__all__ = ["FILTERS", "FilterSpec", "STORE_ENTROPY_BITS", "RLE_ENTROPY_BITS", "DEFAULT_FILTER",
           "encode_deflate", "fletcher32", "filter_spec", "shuffle_bytes"]

#: Byte planes with a higher empirical entropy (bits per byte) are stored, not compressed.
#: Above 7.5 bits deflate saved 0.2–4 % of such a plane (measured on event planes at 7.6–7.85
#: bits) for 5–8 ns per byte of zlib time; storing them made the default files 0.1–0.2 %
#: larger (48.44 → 48.49 B/event truth level) and the encoder 10–17 % faster. Lowered to 7.0:
#: on 2¹⁸ events of the water config with response + 10 background species the encoder CPU
#: fell 15 % (1.31 → 1.11 µs/event single-threaded, interleaved runs) for 1.5 % more bytes
#: (72.67 → 73.73 B/event).
STORE_ENTROPY_BITS = 7.0

#: At the default level, byte planes below this entropy (bits per byte: long runs, e.g. a
#: constant or rarely changing byte) use zlib's run-length strategy, the others Huffman
#: coding only, which compresses them as well and 10–30 % faster (measured on event planes).
RLE_ENTROPY_BITS = 0.5

#: The default filter of event files.
DEFAULT_FILTER = "deflate"


@dataclass(frozen=True)
class FilterSpec:
    """One filter choice: what it is, and what a reader needs."""

    name: str
    pipeline: str                 # human-readable filter pipeline
    plugin: str                   # "" when every HDF5 build reads it; else what to install
    direct: bool = False          # chunks encoded by sunrecoil and written directly

    @property
    def plugin_required(self) -> bool:
        """True when reading needs an HDF5 filter plugin (e.g. from ``hdf5plugin``)."""
        return bool(self.plugin)

    def attrs(self) -> dict[str, Any]:
        """File attributes describing the filter (stored on ``/`` and ``/events``)."""
        return {"compression": self.name, "filter_pipeline": self.pipeline,
                "filter_plugin_required": int(self.plugin_required),
                "filter_plugin": self.plugin or "none (built into every HDF5 library)"}


FILTERS: dict[str, FilterSpec] = {
    "deflate": FilterSpec("deflate", "shuffle (id 2) + deflate (id 1) + fletcher32 (id 3)", "",
                          direct=True),
    "gzip": FilterSpec("gzip", "deflate (id 1) + fletcher32 (id 3)", ""),
    "lzf": FilterSpec("lzf", "lzf (id 32000) + fletcher32 (id 3)",
                      "LZF filter (ships with h5py; other readers need the LZF plugin)"),
    "blosc-lz4": FilterSpec("blosc-lz4", "blosc lz4 + shuffle (id 32001) + fletcher32 (id 3)",
                            "Blosc filter plugin (Python: pip install hdf5plugin; "
                            "import hdf5plugin before reading)"),
    "zstd": FilterSpec("zstd", "zstd (id 32015) + fletcher32 (id 3)",
                       "Zstandard filter plugin (Python: pip install hdf5plugin; "
                       "import hdf5plugin before reading)"),
    "none": FilterSpec("none", "fletcher32 (id 3)", ""),
}


def filter_spec(name: str) -> FilterSpec:
    """The :class:`FilterSpec` of a filter name (``output.compression``)."""
    try:
        return FILTERS[name]
    except KeyError:
        raise ConfigError(f"output.compression: unknown filter {name!r}; allowed: "
                          f"{', '.join(FILTERS)}") from None


def shuffle_bytes(a: np.ndarray) -> np.ndarray:
    """HDF5 byte shuffle of an array: shape (itemsize, n_elements) of uint8."""
    a = np.ascontiguousarray(a)
    size = a.dtype.itemsize
    return np.ascontiguousarray(a.reshape(-1).view(np.uint8).reshape(-1, size).T)


#: Words per block of the blocked Fletcher-32 sums (see :func:`fletcher32`).
_FLETCHER_BLOCK = 8192
_BLOCK_INDEX = np.arange(_FLETCHER_BLOCK, dtype=np.float64)


def fletcher32(data: bytes | np.ndarray) -> int:
    """HDF5's Fletcher-32 checksum (``H5_checksum_fletcher32``) of a byte string.

    The data are read as big-endian 16-bit words (an odd last byte is the high byte of a
    final word); sum1 = Σ w_i and sum2 = Σ (n − i) w_i are reduced modulo 65535 with a
    non-zero sum represented in 1..65535 (the result of the library's end-around folding).
    Reference: J. G. Fletcher, IEEE Trans. Commun. 30 (1982) 247, and the HDF5 library
    (H5checksum.c), whose output this reproduces bit for bit (checked by reading back).

    The sums are exact integers: the words are zero-padded to N = B·m (B =
    :data:`_FLETCHER_BLOCK`) and laid out as m rows of B; with row sums S_b and
    J_b = Σ_j j w_bj, sum2 = Σ_b (N − bB) S_b − Σ_b J_b − (N − n) sum1. S_b and J_b are
    computed in float64 (a matrix–vector product); every partial sum is an integer below
    65535 B²/2 < 2⁵³, hence exact; the rest is in Python integers.
    """
    b = np.frombuffer(data, dtype=np.uint8) if not isinstance(data, np.ndarray) else data
    n = (b.size + 1) // 2
    if n == 0:
        return 0
    rows = -(-n // _FLETCHER_BLOCK)
    w = np.zeros(rows * _FLETCHER_BLOCK, np.float64)
    w[:b.size // 2] = b[:b.size - b.size % 2].view(">u2")
    if b.size % 2:
        w[n - 1] = float(int(b[-1]) << 8)
    w = w.reshape(rows, _FLETCHER_BLOCK)
    row_sum = w.sum(axis=1)
    s1 = int(row_sum.sum())
    if s1 == 0:                     # all words zero: both sums are zero
        return 0
    j_sum = int((w @ _BLOCK_INDEX).sum())
    big_n = rows * _FLETCHER_BLOCK
    first = big_n - _FLETCHER_BLOCK * np.arange(rows, dtype=np.int64)
    s2 = (int(np.dot(first, row_sum.astype(np.int64))) - j_sum - (big_n - n) * s1) % 65535
    return ((s2 or 65535) << 16) | (s1 % 65535 or 65535)


_ZLIB_HEADER = b"\x78\x01"          # CM = 8 (deflate), 32 KiB window, FLEVEL 0, FCHECK ok
_FINAL_EMPTY_BLOCK = b"\x03\x00"    # final fixed-Huffman block holding only end-of-block


#: Bytes of a plane sampled (evenly spread) to estimate its entropy.
ENTROPY_SAMPLE = 8192


def _byte_entropy(plane: np.ndarray) -> float:
    """Empirical entropy (bits per byte) of an evenly spread sample of a byte plane."""
    step = max(1, plane.size // ENTROPY_SAMPLE)
    counts = np.bincount(plane[::step], minlength=256)
    p = counts[counts > 0] / counts.sum()
    return float(-(p * np.log2(p)).sum())


def encode_deflate(a: np.ndarray, level: int | None = None) -> bytes:
    """Encode one chunk for the HDF5 pipeline shuffle + deflate + fletcher32.

    Parameters
    ----------
    a : ndarray
        The chunk's data in C order (a full chunk, edge chunks padded).
    level : int, optional
        zlib level for the compressed planes (default 1, with the run-length or the
        Huffman-only strategy; other levels use zlib's default strategy; 0 stores everything).

    Returns
    -------
    bytes
        The chunk as HDF5 stores it (filter mask 0).
    """
    planes = shuffle_bytes(a)
    fast = level in (None, 1)
    lvl = 1 if level is None else level
    parts = [_ZLIB_HEADER]
    adler = 1
    for plane in planes:
        adler = zlib.adler32(plane, adler)
        bits = _byte_entropy(plane) if lvl else 8.0
        store = lvl == 0 or bits > STORE_ENTROPY_BITS
        strategy = zlib.Z_DEFAULT_STRATEGY if not fast else (
            zlib.Z_RLE if bits < RLE_ENTROPY_BITS else zlib.Z_HUFFMAN_ONLY)
        co = zlib.compressobj(0 if store else lvl, zlib.DEFLATED, -15, 8, strategy)
        parts.append(co.compress(plane))
        parts.append(co.flush(zlib.Z_SYNC_FLUSH))
    parts.append(_FINAL_EMPTY_BLOCK)
    parts.append(adler.to_bytes(4, "big"))
    body = b"".join(parts)
    return body + fletcher32(body).to_bytes(4, "little")
