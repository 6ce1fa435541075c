"""Sharded production and merging: shards are reproducible alone and merge bit for bit.

These are regression/identity tests of the production machinery (no physics values): the
reference is always the same run written by a single process.
"""

from __future__ import annotations

import itertools
from pathlib import Path

import h5py
import numpy as np
import pytest

from generator.errors import InputError
from generator.io import read_events
from generator.io.merge import merge_shards
from generator.io.schema import EVENT_FIELDS
from generator.io.writer import HDF5Sink
from generator.pipeline import generate
from generator.production import Shard, parse_shard, work_range

N = 18000          # 5 chunks of 4096 (the last one partial) in the small configuration
SEED = 2024


def raw_chunks(path: Path) -> dict[tuple[str, int], bytes]:
    """Every stored (compressed) chunk of /events, keyed by field and first row."""
    out = {}
    with h5py.File(path, "r") as f:
        for name, ds in f["events"].items():
            for r in range(0, ds.shape[0], ds.chunks[0]):
                out[name, r] = ds.id.read_direct_chunk((r,) + (0,) * (ds.ndim - 1))
    return out


def assert_same_events(a: Path, b: Path) -> None:
    ea, eb = read_events(a), read_events(b)
    assert ea.keys() == eb.keys()
    for k in ea:
        np.testing.assert_array_equal(ea[k], eb[k], err_msg=k)
    assert raw_chunks(a) == raw_chunks(b)


@pytest.fixture(scope="module")
def run_files(small_config, tmp_path_factory):
    d = tmp_path_factory.mktemp("shards")
    single = d / "single.h5"
    generate(small_config, single, n_events=N, seed=SEED)
    shards = []
    for i in range(3):
        p = d / f"s{i}.h5"
        generate(small_config, p, n_events=N, seed=SEED, shard=Shard(i, 3))
        shards.append(p)
    other = d / "other-seed.h5"
    generate(small_config, other, n_events=N, seed=SEED + 1, shard=Shard(0, 3))
    return single, shards, other


@pytest.mark.parametrize(("text", "shard"), [("0/1", Shard(0, 1)), ("3/4", Shard(3, 4)),
                                              (" 2 / 8 ", Shard(2, 8))])
def test_parse_shard(text: str, shard: Shard):
    assert parse_shard(text) == shard


@pytest.mark.parametrize("text", ["4/4", "1/0", "-1/3", "1", "a/b", "1/2/3", "", "1.5/3"])
def test_parse_shard_refuses(text: str):
    with pytest.raises(InputError, match="--shard"):
        parse_shard(text)


@pytest.mark.parametrize(("n_total", "chunk"), [(1, 10), (100, 10), (101, 10), (5, 10),
                                                 (1000, 7)])
def test_shard_ranges_partition_the_chunks(n_total: int, chunk: int):
    k = -(-n_total // chunk)
    for count in range(1, 9):
        ranges = [work_range(n_total, chunk, Shard(i, count)) for i in range(count)]
        chunks = list(itertools.chain.from_iterable(range(w.k0, w.k1) for w in ranges))
        assert chunks == list(range(k))
        assert sum(w.n_events for w in ranges) == n_total
        assert all(a.event_stop == b.event_start for a, b in itertools.pairwise(ranges))


def test_shard_files_hold_their_slice(run_files):
    single, shards, _ = run_files
    ref = read_events(single)
    starts = []
    for i, p in enumerate(shards):
        with h5py.File(p, "r") as f:
            a = dict(f.attrs)
            assert (a["shard_index"], a["shard_count"]) == (i, 3)
            assert a["run_n_events"] == N
            assert a["n_events"] == a["shard_event_stop"] - a["shard_event_start"]
            starts.append((a["shard_event_start"], a["shard_event_stop"]))
        got = read_events(p)
        lo, hi = starts[-1]
        for k in ref:
            np.testing.assert_array_equal(got[k], ref[k][lo:hi], err_msg=k)
    assert starts[0][0] == 0 and starts[-1][1] == N


def test_shard_alone_is_reproducible(small_config, run_files, tmp_path: Path):
    _, shards, _ = run_files
    again = tmp_path / "again.h5"
    generate(small_config, again, n_events=N, seed=SEED, shard=Shard(1, 3))
    assert_same_events(again, shards[1])


@pytest.mark.parametrize("order", [(0, 1, 2), (2, 0, 1)])
def test_merge_is_bit_identical_to_single_process(run_files, tmp_path: Path, order):
    single, shards, _ = run_files
    out = tmp_path / "merged.h5"
    merge_shards(out, [shards[i] for i in order])
    assert_same_events(out, single)
    with h5py.File(out, "r") as f, h5py.File(single, "r") as g:
        assert list(f.attrs["merged_from"]) == ["s0.h5", "s1.h5", "s2.h5"]
        assert f.attrs["merge_method"] == "copy of compressed chunks"
        assert "shard_index" not in f.attrs
        for k in ("config_toml", "seed_entropy", "n_events", "weight_per_event"):
            assert f.attrs[k] == g.attrs[k]
        np.testing.assert_array_equal(f["sources/flux"][()], g["sources/flux"][()])
        assert list(f["events/origin"].attrs["codes"]) == list(g["events/origin"].attrs["codes"])


def test_merge_refuses_bad_shard_sets(run_files, tmp_path: Path):
    _, shards, other = run_files
    out = tmp_path / "m.h5"
    with pytest.raises(InputError, match=r"shard\(s\) 1/3 missing"):
        merge_shards(out, [shards[0], shards[2]])
    with pytest.raises(InputError, match="given twice"):
        merge_shards(out, [shards[0], shards[1], shards[1], shards[2]])
    with pytest.raises(InputError, match="seed_entropy differs"):
        merge_shards(out, [other, shards[1], shards[2]])
    with pytest.raises(InputError, match="does not exist"):
        merge_shards(out, [shards[0], tmp_path / "nope.h5"])
    assert not out.exists()
    assert list(tmp_path.iterdir()) == []


def test_merge_refuses_non_shard_file(run_files, tmp_path: Path):
    single, shards, _ = run_files
    with pytest.raises(InputError, match="not a shard file"):
        merge_shards(tmp_path / "m.h5", [single, *shards])


def test_second_writer_on_one_temp_file_is_refused(tmp_path: Path):
    out = tmp_path / "ev.h5"
    first = HDF5Sink(out, EVENT_FIELDS)
    try:
        with pytest.raises(InputError, match="another run is writing"):
            HDF5Sink(out, EVENT_FIELDS)
    finally:
        first.abort()
    assert list(tmp_path.iterdir()) == []


def test_resume_without_temp_file_is_refused(small_config, tmp_path: Path):
    with pytest.raises(InputError, match="no partial run"):
        generate(small_config, tmp_path / "ev.h5", n_events=100, seed=1, resume=True)
    assert list(tmp_path.iterdir()) == []


def test_dropped_events_shard_and_merge_identically(tmp_path: Path):
    """With untriggered events dropped, shards differ in length; the merge still matches."""
    from conftest import make_config

    cfg = make_config({
        "exposure": {"start_utc": "2031-01-01T00:00:00Z", "stop_utc": "2031-02-01T00:00:00Z"},
        "interaction": {"threshold_mev": 0.5},
        "run": {"chunk_size": 4096},
        "response": {"keep_untriggered": False},
    })
    single = tmp_path / "single.h5"
    generate(cfg, single, n_events=N, seed=SEED)
    shards = [tmp_path / f"d{i}.h5" for i in range(2)]
    for i, p in enumerate(shards):
        generate(cfg, p, n_events=N, seed=SEED, shard=Shard(i, 2))
    out = tmp_path / "merged.h5"
    merge_shards(out, shards)
    assert_same_events(out, single)
    with h5py.File(out, "r") as f, h5py.File(single, "r") as g:
        assert f.attrs["n_events"] < N
        for k in ("n_generated", "n_triggered", "trigger_efficiency"):
            assert f.attrs[k] == g.attrs[k], k


def test_two_worker_local_cluster_matches_single_process(small_config, run_files,
                                                         tmp_path: Path):
    """generate --workers 2 (local dask process cluster, loopback) = the sequential run."""
    pytest.importorskip("distributed")
    from generator.distributed import generate_distributed

    single, _, _ = run_files
    out = tmp_path / "dist.h5"
    summary = generate_distributed(small_config, out, n_events=N, seed=SEED, workers=2)
    assert summary.n_events == N
    assert_same_events(out, single)
    assert list(tmp_path.iterdir()) == [out]


class _Stop(BaseException):
    """Stands in for a kill in the middle of a run."""


def test_resume_in_process_restores_response_counters(small_config, run_files, tmp_path: Path,
                                                       monkeypatch: pytest.MonkeyPatch):
    """A run stopped after two chunks (temporary file kept, as after SIGKILL) resumes to the
    same events and the same trigger bookkeeping as the uninterrupted run."""
    single, _, _ = run_files
    out = tmp_path / "ev.h5"
    done = []

    def stop_after_two(m: int) -> None:
        done.append(m)
        if len(done) == 2:
            raise _Stop

    with monkeypatch.context() as mp:
        mp.setattr(HDF5Sink, "abort", HDF5Sink.close_keep)
        with pytest.raises(_Stop):
            generate(small_config, out, n_events=N, seed=SEED, progress=stop_after_two)
    assert (tmp_path / ".ev.h5.tmp").exists() and not out.exists()
    summary = generate(small_config, out, n_events=N, seed=SEED, resume=True)
    assert summary.path == out
    assert_same_events(out, single)
    with h5py.File(out, "r") as f, h5py.File(single, "r") as g:
        for k in ("n_generated", "n_triggered", "trigger_efficiency", "n_events"):
            assert f.attrs[k] == g.attrs[k], k


def test_merge_command_exit_codes(run_files, tmp_path: Path, capsys: pytest.CaptureFixture):
    from generator.cli import main

    _, shards, other = run_files
    out = tmp_path / "m.h5"
    assert main(["merge", str(out), str(shards[0]), str(shards[2])]) == 2
    assert "1/3 missing" in capsys.readouterr().err
    assert main(["merge", str(out), str(other), str(shards[1]), str(shards[2])]) == 2
    assert main(["merge", str(out), *map(str, shards), str(shards[0])]) == 2
    assert list(tmp_path.iterdir()) == []
    assert main(["merge", str(out), *map(str, shards), "--quiet"]) == 0
    assert main(["merge", str(out), *map(str, shards)]) == 2          # exists, no --force
    assert main(["merge", str(out), *map(str, shards), "--force", "--quiet"]) == 0
    assert sorted(p.name for p in tmp_path.iterdir()) == ["m.h5"]
