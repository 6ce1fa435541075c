"""Chunks generated in a thread pool give the same file as one thread.

Each chunk draws only from its own seed sequences (signal, response, backgrounds), so the
number of chunk-generation threads of :func:`generator.pipeline.generate` must not change a
single stored byte of ``/events``, nor the trigger bookkeeping of the response.
"""

from __future__ import annotations

from pathlib import Path

import h5py
import numpy as np
import pytest
from conftest import make_config

import generator.pipeline as pl
from generator.pipeline import generate


def _config(keep_untriggered: bool = True):
    return make_config({
        "exposure": {"start_utc": "2031-01-01T00:00:00Z", "stop_utc": "2031-01-03T00:00:00Z"},
        "interaction": {"threshold_mev": 0.5},
        "response": {"enabled": True, "keep_untriggered": keep_untriggered},
        "backgrounds": {"210Po": {"rate": 0.05, "unit": "cpd/100t"},
                        "40K": {"rate": 0.05, "unit": "cpd/100t"}},
        "run": {"chunk_size": 1500},
    })


def _raw(path: Path) -> tuple[dict[tuple[str, int], bytes], dict]:
    chunks, attrs = {}, {}
    with h5py.File(path, "r") as f:
        for name, ds in f["events"].items():
            for i in range(ds.id.get_num_chunks()):
                info = ds.id.get_chunk_info(i)
                chunks[(name, info.chunk_offset[0])] = ds.id.read_direct_chunk(
                    info.chunk_offset)[1]
        attrs = {k: f.attrs[k] for k in ("n_events", "n_triggered", "n_generated")
                 if k in f.attrs}
    return chunks, attrs


@pytest.mark.parametrize("keep", [True, False])
def test_threads_do_not_change_the_file(tmp_path: Path, keep: bool):
    cfg = _config(keep)
    files = {}
    for threads in (1, 3):
        out = tmp_path / f"t{threads}.h5"
        generate(cfg, out, n_events=10_000, seed=5, threads=threads)
        files[threads] = _raw(out)
    (c1, a1), (c3, a3) = files[1], files[3]
    assert a1 == a3
    assert c1.keys() == c3.keys() and len(c1) >= 20
    assert all(c1[k] == c3[k] for k in c1)
    with h5py.File(tmp_path / "t1.h5", "r") as f:
        assert np.any(f["events/origin"][:] >= 100) or not keep   # backgrounds present


def test_failure_in_a_chunk_thread_leaves_no_file(tmp_path: Path, monkeypatch):
    calls = []
    real = pl.generate_chunk

    def flaky(plan, rng, n, *a, **k):
        calls.append(n)
        if len(calls) == 4:
            raise RuntimeError("simulated failure in chunk 3")
        return real(plan, rng, n, *a, **k)

    monkeypatch.setattr(pl, "generate_chunk", flaky)
    out = tmp_path / "x.h5"
    with pytest.raises(RuntimeError, match="simulated"):
        generate(_config(), out, n_events=10_000, seed=1, threads=2)
    assert not out.exists()
    assert not list(tmp_path.iterdir())


@pytest.mark.parametrize("extra", [["--threads", "0"], ["--threads", "65"],
                                   ["--threads", "2", "--workers", "2"]])
def test_cli_threads_option_checked(tmp_path: Path, extra: list[str], capsys):
    from generator.cli import main

    out = tmp_path / "x.h5"
    status = main(["generate", "-o", str(out), "--events", "1000", "--seed", "1", "--quiet",
                   *extra])
    assert status == 2
    assert "--threads" in capsys.readouterr().err
    assert not out.exists()


def test_cli_threads_option_gives_the_same_events(tmp_path: Path):
    from generator.cli import main
    from generator.io import read_events

    for t in ("1", "2"):
        assert main(["generate", "-o", str(tmp_path / f"t{t}.h5"), "--events", "3000",
                     "--seed", "4", "--quiet", "--threads", t]) == 0
    a, b = read_events(tmp_path / "t1.h5"), read_events(tmp_path / "t2.h5")
    assert all(np.array_equal(a[k], b[k]) for k in a)


def test_interrupt_recorded_during_commit_removes_the_temporary_file(tmp_path: Path):
    """A SIGINT that arrives while the last chunks are written (deferred inside the HDF5
    calls) is raised before the rename: no output under the final name, no temporary file."""
    import signal

    from generator.io import signals
    from generator.io.schema import EVENT_FIELDS
    from generator.io.writer import HDF5Sink

    out = tmp_path / "x.h5"
    sink = HDF5Sink(out, EVENT_FIELDS, chunk_rows=100)
    sink.write_chunk({f.name: np.zeros((250, *f.shape), f.dtype) for f in EVENT_FIELDS})
    signals._pending.append(signal.SIGINT)          # as the handler does inside critical()
    try:
        with pytest.raises(signals.Interrupted):
            sink.commit()
    finally:
        signals._pending.clear()
    sink.abort()
    assert not out.exists()
    assert not list(tmp_path.iterdir())
