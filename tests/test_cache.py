"""The on-disk table cache is untrusted: planted, edited or truncated entries are rebuilt."""

from __future__ import annotations

import logging

import numpy as np
import pytest

from generator.cache import CacheRejected, cached_arrays, content_digest, key_text
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


# --- recoil-sampler and per-source plan tables (issue #12: start-up from the cache) ---------

RECOIL_KW = dict(e_min=0.5, e_max=12.0, t_min=0.3, n_energy=24, n_u=32, lines=(0.862, 1.44))


def _recoil(tmp_path):
    from generator.recoil import RecoilSampler
    from generator.xsec import XsecModel

    return RecoilSampler(XsecModel(), cache_dir=tmp_path, **RECOIL_KW)


def _recoil_arrays(r):
    return {k: getattr(r, k) for k in ("_table", "_ratio", "_line_table", "_line_sigma")}


def test_recoil_tables_from_cache_are_bit_identical(tmp_path, caplog):
    fresh = _recoil_arrays(_recoil(tmp_path))
    assert len(list(tmp_path.glob("recoil_*.npz"))) == 1
    with caplog.at_level(logging.WARNING, logger="generator.cache"):
        loaded = _recoil_arrays(_recoil(tmp_path))
    assert not caplog.records
    for k, v in fresh.items():
        assert loaded[k].dtype == v.dtype and np.array_equal(loaded[k], v), k
    # every input is part of the key: another threshold or model is another entry
    from generator.recoil import RecoilSampler
    from generator.xsec import XsecModel

    RecoilSampler(XsecModel(), cache_dir=tmp_path, **{**RECOIL_KW, "t_min": 0.31})
    RecoilSampler(XsecModel(corrections="tree"), cache_dir=tmp_path, **RECOIL_KW)
    RecoilSampler(XsecModel(magnetic_moment=3.0), cache_dir=tmp_path, **RECOIL_KW)
    assert len(list(tmp_path.glob("recoil_*.npz"))) == 4


@pytest.mark.parametrize("damage", ["forged_decreasing", "forged_negative_sigma", "truncate",
                                    "unsigned_edit"])
def test_damaged_recoil_entry_is_rebuilt(tmp_path, caplog, damage):
    fresh = _recoil_arrays(_recoil(tmp_path))
    path = next(tmp_path.glob("recoil_*.npz"))
    with np.load(path, allow_pickle=False) as f:
        data = {k: np.array(f[k]) for k in f.files}
    key = str(data["__key__"][()])
    arrays = {k: v for k, v in data.items() if not k.startswith("__")}
    if damage == "truncate":
        path.write_bytes(path.read_bytes()[:5000])
    else:
        if damage == "forged_decreasing":
            arrays["table"] = arrays["table"][::-1].copy()
        else:
            arrays["ratio"] = -arrays["ratio"] if damage == "forged_negative_sigma" \
                else arrays["ratio"]
            if damage == "unsigned_edit":
                arrays["ratio"] = arrays["ratio"] * 1.01
        digest = data["__sha256__"] if damage == "unsigned_edit" else \
            np.array(content_digest(key, arrays))
        np.savez(path, **arrays, __key__=data["__key__"], __sha256__=digest)
    with caplog.at_level(logging.WARNING, logger="generator.cache"):
        loaded = _recoil_arrays(_recoil(tmp_path))
    assert any("rejected" in r.getMessage() for r in caplog.records)
    for k, v in fresh.items():
        assert np.array_equal(loaded[k], v), k


@pytest.fixture(scope="module")
def tiny_config():
    from conftest import make_config

    return make_config({
        "exposure": {"start_utc": "2031-01-01T00:00:00Z", "stop_utc": "2031-01-08T00:00:00Z"},
        "interaction": {"threshold_mev": 1.0},
        "sources": {"include": ["8B", "7Be", "pep"]},
        "run": {"events": 2000, "chunk_size": 1024, "seed": 5},
    })


def _events(cfg):
    from generator.pipeline import memory_run

    sink, summary = memory_run(cfg, 2000, 5)
    return sink.arrays(), summary


def test_events_identical_with_cold_and_warm_cache(tmp_path, monkeypatch, caplog, tiny_config):
    """Bit-identical events and expected counts whether the tables are built or loaded."""
    monkeypatch.setenv("SUNRECOIL_CACHE", str(tmp_path))
    cold, s_cold = _events(tiny_config)
    names = sorted(p.name.split("_")[0] for p in tmp_path.glob("*.npz"))
    assert {"recoil", "envelope", "zenith", "sunfrac", "sun", "exposure"} <= set(names), names
    with caplog.at_level(logging.WARNING, logger="generator.cache"):
        warm, s_warm = _events(tiny_config)
    assert not caplog.records
    assert s_cold.expected_events == s_warm.expected_events
    for k, v in cold.items():
        assert warm[k].dtype == v.dtype and warm[k].tobytes() == v.tobytes(), k
    # planted tables with forged checksums (values negated): refused and rebuilt
    planted = [p for f in ("envelope", "zenith", "sunfrac", "sun", "exposure")
               for p in tmp_path.glob(f"{f}_*.npz")]
    for path in planted:
        with np.load(path, allow_pickle=False) as f:
            data = {k: np.array(f[k]) for k in f.files}
        key = str(data["__key__"][()])
        arrays = {k: -v for k, v in data.items() if not k.startswith("__")}
        np.savez(path, **arrays, __key__=data["__key__"],
                 __sha256__=np.array(content_digest(key, arrays)))
    caplog.clear()
    with caplog.at_level(logging.WARNING, logger="generator.cache"):
        again, s_again = _events(tiny_config)
    assert sum("rejected" in r.getMessage() for r in caplog.records) == len(planted)
    assert s_again.expected_events == s_cold.expected_events
    for k, v in cold.items():
        assert again[k].tobytes() == v.tobytes(), k


@pytest.mark.parametrize("source, variant", [("8B", "measured"), ("pp", "nominal")])
def test_spectrum_tables_from_cache_are_bit_identical(tmp_path, monkeypatch, caplog, source,
                                                      variant):
    from generator.spectra.spectrum import _continuous_table

    monkeypatch.setenv("SUNRECOIL_CACHE", str(tmp_path))
    fresh = _continuous_table(source, variant)
    path = next(tmp_path.glob("spectrum_*.npz"))
    with caplog.at_level(logging.WARNING, logger="generator.cache"):
        loaded = _continuous_table(source, variant)
    assert not caplog.records
    assert all(a.tobytes() == b.tobytes() for a, b in zip(fresh, loaded, strict=True))
    path.write_bytes(path.read_bytes()[:1000])                  # truncated: rebuilt
    with caplog.at_level(logging.WARNING, logger="generator.cache"):
        again = _continuous_table(source, variant)
    assert any("rejected" in r.getMessage() for r in caplog.records)
    assert all(a.tobytes() == b.tobytes() for a, b in zip(fresh, again, strict=True))


def test_constants_come_from_scipy_through_the_cache(tmp_path):
    """The cached CODATA values equal scipy.constants exactly; edited entries are refused."""
    import scipy.constants as sc

    from generator import constants as c

    assert c.ELECTRON_MASS == sc.physical_constants["electron mass energy equivalent in MeV"][0]
    assert c.FERMI_CONSTANT == sc.physical_constants["Fermi coupling constant"][0] * 1e-6
    assert c.AVOGADRO == sc.N_A and c.AU_CM == sc.au * 100.0
    fresh = c._read_scipy_constants()
    c._check_plausible(fresh)
    edited = {"values": fresh["values"].copy()}
    edited["values"][1] *= 1.0 + 1e-5                 # electron mass off by 10 ppm
    with pytest.raises(CacheRejected):
        c._check_plausible(edited)
    with pytest.raises(CacheRejected):
        c._check_plausible({"values": fresh["values"][:-1]})


def test_beta_branch_tables_from_cache_are_bit_identical(tmp_path, monkeypatch, caplog):
    from generator.backgrounds.betashape import Branch, BranchSampler

    monkeypatch.setenv("SUNRECOIL_CACHE", str(tmp_path))
    branches = (Branch(0.9, 1.2), Branch(0.1, 0.6, gamma_mev=0.6), Branch(0.0, 1.5, "line"))

    def tables():
        s = BranchSampler(branches, 20, 40)
        return [x for sm in s.samplers if sm is not None for x in (sm.x, sm.density, sm._table)]

    fresh = tables()
    with caplog.at_level(logging.WARNING, logger="generator.cache"):
        loaded = tables()
    assert not caplog.records
    assert all(a.tobytes() == b.tobytes() for a, b in zip(fresh, loaded, strict=True))
    path = next(tmp_path.glob("betashape_*.npz"))
    with np.load(path, allow_pickle=False) as f:
        data = {k: np.array(f[k]) for k in f.files}
    arrays = {k: v for k, v in data.items() if not k.startswith("__")}
    arrays["d0"] = -arrays["d0"]                       # forged: negative density
    np.savez(path, **arrays, __key__=data["__key__"],
             __sha256__=np.array(content_digest(str(data["__key__"][()]), arrays)))
    with caplog.at_level(logging.WARNING, logger="generator.cache"):
        again = tables()
    assert any("rejected" in r.getMessage() for r in caplog.records)
    assert all(a.tobytes() == b.tobytes() for a, b in zip(fresh, again, strict=True))
