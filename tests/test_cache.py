"""The on-disk table cache is untrusted: planted, edited or truncated entries are rebuilt."""

from __future__ import annotations

import logging

import numpy as np
import pytest

from generator.cache import cached_arrays, content_digest, key_text
from generator.oscillation import PRESETS, FlavourModel

KW = dict(latitude_deg=30.0, depth_m=500.0, e_min=4.0, e_max=6.0)


@pytest.fixture(scope="module")
def reference(tmp_path_factory):
    d = tmp_path_factory.mktemp("ref")
    return FlavourModel(PRESETS["nufit-6.0"], ["8B"], cache_dir=d, **KW).night_table()["p_earth"]


def _entry(tmp_path):
    files = list(tmp_path.glob("earth_*.npz"))
    assert len(files) == 1, files
    return files[0]


def _rewrite(path, **arrays):
    with np.load(path, allow_pickle=False) as f:
        data = {k: np.array(f[k]) for k in f.files}
    data.update(arrays)
    np.savez(path.with_suffix(".npz"), **data)


def _model(tmp_path):
    return FlavourModel(PRESETS["nufit-6.0"], ["8B"], cache_dir=tmp_path, **KW)


def _assert_rebuilt(tmp_path, reference, caplog):
    with caplog.at_level(logging.WARNING, logger="generator.cache"):
        table = _model(tmp_path).night_table()["p_earth"]
    assert np.array_equal(table, reference)
    assert any("rejected" in r.getMessage() for r in caplog.records)
    assert not [p for p in tmp_path.iterdir() if p.suffix != ".npz"], "stray temporary files"


def test_planted_identity_table_is_detected(tmp_path, reference, caplog):
    """The audit's attack: p_earth replaced by identity matrices of the right shape."""
    _model(tmp_path)
    path = _entry(tmp_path)
    _rewrite(path, p_earth=np.broadcast_to(np.eye(3), reference.shape).copy())
    _assert_rebuilt(tmp_path, reference, caplog)
    # and the rebuilt entry is valid again: a second load uses it silently
    caplog.clear()
    with caplog.at_level(logging.WARNING, logger="generator.cache"):
        assert np.array_equal(_model(tmp_path).night_table()["p_earth"], reference)
    assert not caplog.records


def test_planted_table_with_forged_checksum_fails_value_checks(tmp_path, reference, caplog):
    """Checksum recomputed by the forger: the value checks (rows sum to 1) still catch it."""
    _model(tmp_path)
    path = _entry(tmp_path)
    with np.load(path, allow_pickle=False) as f:
        key = str(f["__key__"][()])
    bad = reference * 0.5
    _rewrite(path, p_earth=bad, __sha256__=np.array(content_digest(key, {"p_earth": bad})))
    _assert_rebuilt(tmp_path, reference, caplog)


def test_entry_for_another_key_is_rejected(tmp_path, reference, caplog):
    """A valid entry copied under the file name of another key is not used."""
    _model(tmp_path)
    path = _entry(tmp_path)
    other = {"p_earth": np.full_like(reference, 1.0 / 3.0)}
    text = key_text({"something": "else"})
    _rewrite(path, p_earth=other["p_earth"], __key__=np.array(text),
             __sha256__=np.array(content_digest(text, other)))
    _assert_rebuilt(tmp_path, reference, caplog)


@pytest.mark.parametrize("damage", ["truncate", "garbage", "empty"])
def test_damaged_file_is_rebuilt(tmp_path, reference, caplog, damage):
    _model(tmp_path)
    path = _entry(tmp_path)
    raw = path.read_bytes()
    path.write_bytes({"truncate": raw[: len(raw) // 2], "garbage": b"PK\x03\x04" + b"x" * 100,
                      "empty": b""}[damage])
    _assert_rebuilt(tmp_path, reference, caplog)


def test_unwritable_cache_folder_still_builds(tmp_path):
    blocker = tmp_path / "not_a_dir"
    blocker.write_text("")
    out = cached_arrays("t", {"a": 1}, lambda: {"x": np.arange(3.0)}, directory=blocker)
    assert np.array_equal(out["x"], np.arange(3.0))


def test_cache_never_unpickles(tmp_path):
    """An object array (needs pickle) in an entry is refused, then rebuilt."""
    built = cached_arrays("t", {"a": 1}, lambda: {"x": np.arange(3.0)}, directory=tmp_path)
    path = next(tmp_path.glob("t_*.npz"))
    np.savez(path, x=np.array([{"evil": 1}], dtype=object))
    again = cached_arrays("t", {"a": 1}, lambda: {"x": np.arange(3.0)}, directory=tmp_path)
    assert np.array_equal(again["x"], built["x"])
