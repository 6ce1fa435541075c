"""Event-file filters: the default opens in any HDF5 reader; every option round-trips.

The external reference for the chunk encoder is the HDF5 library itself: chunks h5py writes
through HDF5's own shuffle + deflate + Fletcher-32 pipeline are the ground truth for the
checksum, and HDF5's decoder (plain h5py, h5dump) must read the chunks sunrecoil encodes.
"""

from __future__ import annotations

import dataclasses
import os
import shutil
import subprocess
import sys
from pathlib import Path

import h5py
import numpy as np
import pytest

from generator.io import EventFile, read_events
from generator.io.filters import FILTERS, encode_deflate, fletcher32
from generator.io.writer import chunk_rows_for
from generator.pipeline import generate, memory_run
from generator.summary import summarise

N_EVENTS = 9000


def _with(cfg, **output):
    return dataclasses.replace(cfg, output=dataclasses.replace(cfg.output, **output))


@pytest.fixture(scope="session")
def reference(small_config):
    """The events of the small run, from the in-memory sink."""
    sink, _ = memory_run(small_config, N_EVENTS, 77)
    return sink.arrays()


@pytest.fixture(scope="session")
def default_file(small_config, tmp_path_factory) -> Path:
    """A file written with the default filter."""
    out = tmp_path_factory.mktemp("filters") / "default.h5"
    generate(small_config, out, n_events=N_EVENTS, seed=77)
    return out


@pytest.mark.parametrize(("dtype", "shape", "n"), [
    ("f4", (), 1), ("f4", (), 1001), ("f8", (), 4096), ("i2", (), 777), ("u1", (), 333),
    ("f4", (3,), 2048), ("f8", (), 0), ("f4", (3,), 70000), ("u1", (), 16385),
])
def test_fletcher32_matches_hdf5(tmp_path: Path, dtype: str, shape: tuple, n: int):
    """The checksum equals the one HDF5 appends to its own shuffle+deflate chunks."""
    rng = np.random.default_rng(n)
    a = (rng.random((max(n, 1), *shape)) * 50).astype(dtype)
    with h5py.File(tmp_path / "ref.h5", "w") as f:
        ds = f.create_dataset("x", data=a, chunks=a.shape, shuffle=True, compression="gzip",
                              compression_opts=1, fletcher32=True)
        _, raw = ds.id.read_direct_chunk((0,) * a.ndim)
    assert fletcher32(raw[:-4]).to_bytes(4, "little") == raw[-4:]


@pytest.mark.parametrize("n", [0, 1, 2, 3, 16383, 16384, 16385, 16386, 100001, 1 << 21])
@pytest.mark.parametrize("kind", ["random", "all-ones", "sparse"])
def test_fletcher32_blocked_sums_equal_the_definition(n: int, kind: str):
    """The blocked float64 sums give exactly sum1 = Σ w_i and sum2 = Σ (n − i) w_i, folded
    into 1..65535 (the definition in the docstring of generator.io.filters.fletcher32)."""
    rng = np.random.default_rng(n)
    data = {"random": rng.integers(0, 256, n, dtype=np.uint8),
            "all-ones": np.full(n, 255, np.uint8),
            "sparse": (rng.random(n) < 0.01).astype(np.uint8) * 199}[kind]
    padded = np.concatenate([data, np.zeros(n % 2, np.uint8)])
    w = padded.view(">u2").astype(object)
    s1 = int(sum(w)) if n else 0
    s2 = int(sum(w * np.arange(w.size, 0, -1))) if n else 0
    expected = 0 if s1 == 0 else (((s2 % 65535) or 65535) << 16) | ((s1 % 65535) or 65535)
    assert fletcher32(data.tobytes()) == expected


@pytest.mark.parametrize(("dtype", "shape"), [("f4", ()), ("f8", ()), ("i2", ()), ("u1", ()),
                                              ("f4", (3,))])
@pytest.mark.parametrize("kind", ["random", "constant", "zeros", "smooth"])
def test_direct_chunks_read_back_through_hdf5(tmp_path: Path, dtype, shape, kind):
    """HDF5's own decoder (with checksum verification) returns the data encoded here."""
    rng = np.random.default_rng(3)
    n = 5000
    a = {"random": rng.random((n, *shape)) * 1e3, "constant": np.full((n, *shape), 7.25),
         "zeros": np.zeros((n, *shape)),
         "smooth": np.linspace(0, 1, n * int(np.prod(shape))).reshape((n, *shape))}[kind]
    a = a.astype(dtype)
    with h5py.File(tmp_path / "d.h5", "w") as f:
        ds = f.create_dataset("x", shape=a.shape, dtype=dtype, chunks=a.shape, shuffle=True,
                              compression="gzip", fletcher32=True)
        ds.id.write_direct_chunk((0,) * a.ndim, encode_deflate(a))
    with h5py.File(tmp_path / "d.h5", "r") as f:
        np.testing.assert_array_equal(f["x"][()], a)


def test_corrupt_direct_chunk_is_detected(tmp_path: Path):
    """A flipped byte fails the Fletcher-32 check on read (HDF5 raises, no silent garbage)."""
    a = np.arange(4096, dtype="f4")
    raw = bytearray(encode_deflate(a))
    raw[len(raw) // 2] ^= 0xFF
    with h5py.File(tmp_path / "c.h5", "w") as f:
        ds = f.create_dataset("x", shape=a.shape, dtype="f4", chunks=a.shape, shuffle=True,
                              compression="gzip", fletcher32=True)
        ds.id.write_direct_chunk((0,), bytes(raw))
    with h5py.File(tmp_path / "c.h5", "r") as f, pytest.raises(OSError):
        f["x"][()]


def test_default_file_equals_memory_run(default_file: Path, reference):
    got = read_events(default_file)
    for k, v in reference.items():
        np.testing.assert_array_equal(got[k], v, err_msg=k)
    with EventFile(default_file) as ev:
        assert ev.filter_info == {"compression": "deflate",
                                  "filter_pipeline": FILTERS["deflate"].pipeline,
                                  "filter_plugin_required": False,
                                  "filter_plugin": FILTERS["deflate"].plugin
                                  or "none (built into every HDF5 library)"}
        assert ev.attrs["filter_plugin_required"] == 0
    text = summarise(default_file)
    assert "compression: deflate (plugin needed to read: none" in text
    assert "shuffle (id 2) + deflate (id 1)" in text


def test_default_file_opens_without_plugins(default_file: Path, tmp_path: Path):
    """Plain h5py with an empty plugin path (hdf5plugin never imported) reads every field."""
    empty = tmp_path / "no-plugins"
    empty.mkdir()
    code = ("import sys, h5py\n"
            f"f = h5py.File({str(default_file)!r}, 'r')\n"
            "n = 0\n"
            "for k in f['events']:\n"
            "    n += f['events'][k][:].shape[0]\n"
            "x = f['events/e_kinetic'][:]\n"
            "assert 'hdf5plugin' not in sys.modules\n"
            "print(n, float(x.sum()))\n")
    env = {k: v for k, v in os.environ.items() if k != "PYTHONPATH"}
    env["HDF5_PLUGIN_PATH"] = str(empty)
    r = subprocess.run([sys.executable, "-c", code], env=env, capture_output=True, text=True,
                       timeout=120, cwd=tmp_path)
    assert r.returncode == 0, r.stderr
    n, total = r.stdout.split()
    assert int(n) > 0
    assert float(total) == pytest.approx(float(read_events(default_file, ["e_kinetic"])
                                               ["e_kinetic"].sum()), rel=1e-6)


@pytest.mark.skipif(shutil.which("h5dump") is None, reason="h5dump (hdf5-tools) not installed")
def test_h5dump_reads_default_file(default_file: Path, tmp_path: Path):
    env = dict(os.environ, HDF5_PLUGIN_PATH=str(tmp_path))
    r = subprocess.run(["h5dump", "-H", str(default_file)], capture_output=True, text=True,
                       env=env, timeout=120)
    assert r.returncode == 0, r.stderr
    assert "e_kinetic" in r.stdout
    r = subprocess.run(["h5dump", "-d", "/events/origin", "-c", "5", str(default_file)],
                       capture_output=True, text=True, env=env, timeout=120)
    assert r.returncode == 0, r.stderr


@pytest.mark.parametrize("comp", ["blosc-lz4", "zstd", "lzf", "gzip", "none"])
def test_other_filters_round_trip(small_config, tmp_path: Path, comp: str, reference):
    out = tmp_path / f"{comp}.h5"
    generate(_with(small_config, compression=comp), out, n_events=N_EVENTS, seed=77)
    got = read_events(out)
    for k, v in reference.items():
        np.testing.assert_array_equal(got[k], v, err_msg=k)
    with EventFile(out) as ev:
        fi = ev.filter_info
    assert fi["compression"] == comp
    assert fi["filter_plugin_required"] == (comp in ("blosc-lz4", "zstd", "lzf"))
    text = summarise(out)
    assert f"compression: {comp} (plugin needed to read:" in text
    if comp in ("blosc-lz4", "zstd"):
        assert "hdf5plugin" in text


def test_bad_filter_name_is_a_config_error():
    from generator.errors import ConfigError
    from generator.io.filters import filter_spec

    with pytest.raises(ConfigError, match="output.compression"):
        filter_spec("rar")


@pytest.mark.parametrize(("chunk", "rows"), [(262144, 65536), (4096, 4096), (100000, 50000),
                                             (65537, 65536), (1 << 20, 65536), (3, 3)])
def test_chunk_rows_divide_the_generator_chunk(chunk: int, rows: int):
    assert chunk_rows_for(chunk) == rows
