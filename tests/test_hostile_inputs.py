"""Hostile and careless inputs: every one loads or gives the tool's own short, one-line error."""

from __future__ import annotations

import os
import threading
import tomllib
from pathlib import Path

import numpy as np
import pytest
from hypothesis import HealthCheck, example, given, settings
from hypothesis import strategies as st

from generator.config import load_config, to_toml
from generator.errors import ConfigError, InputError
from generator.exposure import load_run_list
from generator.spectra import load_custom_spectrum

ROOT = Path(__file__).resolve().parents[1]
EXAMPLES = sorted((ROOT / "configs").glob("*.toml"))


def _one_line(exc: BaseException) -> None:
    text = str(exc)
    assert "\n" not in text and len(text) < 300, text


# --------------------------------------------------------------------------- TOML round trip
@pytest.mark.parametrize("path", [None, *EXAMPLES], ids=lambda p: "default" if p is None
                         else p.name)
def test_show_round_trips_every_example(path, tmp_path):
    """load → show → load → show is a fixed point for the default and every example."""
    cfg = load_config(path)
    shown = tmp_path / "shown.toml"
    shown.write_text(to_toml(cfg), encoding="utf-8")
    assert tomllib.loads(shown.read_text("utf-8"))["detector"]["name"] == cfg.detector.name
    assert to_toml(load_config(shown)) == to_toml(cfg)


@settings(max_examples=100, deadline=None, derandomize=True)
@given(name=st.text(min_size=1, max_size=40).filter(lambda s: s.strip()))
@example(name="a\nb")
@example(name='quote " and \\ backslash')
@example(name="bell \x07 del \x7f nul \x00 tab \t")
def test_control_characters_round_trip(tmp_path_factory, name):
    """load → show → load gives the same name back (TOML 1.0 basic-string escaping)."""
    d = tmp_path_factory.mktemp("rt")
    f = d / "c.toml"
    f.write_text(f"[detector]\nname = {to_toml_string(name)}\n", encoding="utf-8")
    cfg = load_config(f)
    assert cfg.detector.name == name
    shown = d / "shown.toml"
    shown.write_text(to_toml(cfg), encoding="utf-8")
    assert load_config(shown).detector.name == name


def to_toml_string(s: str) -> str:
    """TOML basic string written independently of the code under test (TOML 1.0 spec)."""
    out = []
    for ch in s:
        if ch in '"\\':
            out.append("\\" + ch)
        elif ord(ch) < 0x20 or ord(ch) == 0x7F:
            out.append(f"\\u{ord(ch):04x}")
        else:
            out.append(ch)
    return '"' + "".join(out) + '"'


# --------------------------------------------------------------------------- parsing limits
def test_huge_integer_is_an_error_not_overflow(tmp_path):
    f = tmp_path / "c.toml"
    f.write_text(f"[detector]\nfiducial_radius_m = {10**400}\n")
    with pytest.raises(ConfigError, match="detector.fiducial_radius_m") as err:
        load_config(f)
    _one_line(err.value)


def test_deep_nesting_is_refused(tmp_path):
    f = tmp_path / "c.toml"
    f.write_text("[detector]\nname = " + "[" * 900 + "]" * 900 + "\n")
    with pytest.raises(ConfigError) as err:
        load_config(f)
    _one_line(err.value)


def test_long_values_are_not_echoed_in_full(tmp_path):
    f = tmp_path / "c.toml"
    f.write_text('[detector]\nmedium = "' + "x" * 1_000_000 + '"\n')
    with pytest.raises(ConfigError, match="detector.medium") as err:
        load_config(f)
    _one_line(err.value)


def test_unknown_key_suggests_the_closest(tmp_path):
    f = tmp_path / "c.toml"
    f.write_text("[detector]\nfiducial_radius = 3.0\n")
    with pytest.raises(ConfigError, match="did you mean 'fiducial_radius_m'"):
        load_config(f)


# --------------------------------------------------------------------------- user files
def _with_timeout(fn, seconds=20.0):
    """Run fn in a thread; fail (instead of hanging the suite) when it does not return."""
    box: dict = {}

    def target():
        try:
            fn()
        except BaseException as exc:  # noqa: BLE001 - re-raised below
            box["exc"] = exc

    th = threading.Thread(target=target, daemon=True)
    th.start()
    th.join(seconds)
    assert not th.is_alive(), "reader hung on a special file"
    return box.get("exc")


@pytest.mark.parametrize("reader", ["run_list", "spectrum", "config"])
@pytest.mark.parametrize("special", ["fifo", "dev_zero", "folder"])
def test_special_files_are_refused(tmp_path, reader, special):
    if special == "fifo":
        target = tmp_path / "pipe"
        os.mkfifo(target)
    elif special == "dev_zero":
        target = Path("/dev/zero")
    else:
        target = tmp_path
    fn = {"run_list": lambda: load_run_list(target),
          "spectrum": lambda: load_custom_spectrum(target, "x"),
          "config": lambda: load_config(target)}[reader]
    exc = _with_timeout(fn)
    assert isinstance(exc, InputError), exc
    assert "regular file" in str(exc)
    _one_line(exc)


def test_oversized_file_is_refused(tmp_path):
    big = tmp_path / "runs.csv"
    with open(big, "wb") as fh:
        fh.truncate(51 * 1024 * 1024)  # sparse: costs no disk
    with pytest.raises(InputError, match="limit"):
        load_run_list(big)


def test_wrong_file_content_is_not_echoed(tmp_path):
    secret = tmp_path / "notes.txt"
    secret.write_text("password=hunter2\n")
    for fn in (lambda: load_run_list(secret), lambda: load_custom_spectrum(secret, "x")):
        with pytest.raises(InputError) as err:
            fn()
        assert "hunter2" not in str(err.value)


def test_utf8_bom_is_accepted(tmp_path):
    runs = tmp_path / "runs.csv"
    runs.write_bytes(b"\xef\xbb\xbfstart_utc,stop_utc\n2031-01-01T00:00:00Z,2031-01-02T00:00:00Z\n")
    assert load_run_list(runs).shape == (1, 2)
    spec = tmp_path / "s.txt"
    spec.write_bytes(b"\xef\xbb\xbf1.0 1.0\n2.0 0.0\n")
    assert load_custom_spectrum(spec, "x").e_max == 2.0
    cfg = tmp_path / "c.toml"
    cfg.write_bytes(b'\xef\xbb\xbf[detector]\nname = "bom"\n')
    assert load_config(cfg).detector.name == "bom"


def test_paths_are_relative_to_the_config_as_named_not_its_link_target(tmp_path):
    real = tmp_path / "real"
    real.mkdir()
    (real / "c.toml").write_text('[exposure]\nrun_list = "runs.csv"\n')
    link_dir = tmp_path / "work"
    link_dir.mkdir()
    (link_dir / "c.toml").symlink_to(real / "c.toml")
    (link_dir / "runs.csv").write_text(
        "start_utc,stop_utc\n2031-01-01T00:00:00Z,2031-01-02T00:00:00Z\n")
    cfg = load_config(link_dir / "c.toml")
    assert Path(cfg.exposure.run_list).parent == link_dir


# --------------------------------------------------------------------------- fuzzing
_SECTIONS = ["detector", "exposure", "sources", "oscillation", "interaction", "run", "output",
             "respons", "sources.scale", "sources.flux_override"]
_KEYS = ["name", "medium", "fiducial_radius_m", "fiducial_half_height_m", "fiducial_shape",
         "latitude_deg", "depth_m", "start_utc", "stop_utc", "live_days", "run_list", "include",
         "flux_model", "b8_shape", "8B", "pp", "enabled", "preset", "dm2_31", "threshold_mev",
         "magnetic_moment", "nsi_eps_l", "events", "count_mode", "seed", "chunk_size", "path",
         "compression", "compression_level", "corrections", "bogus"]
_scalars = st.one_of(
    st.integers(min_value=-(2**70), max_value=2**70), st.floats(allow_nan=True),
    st.booleans(), st.text(max_size=20), st.sampled_from(["water", "lab", "2031-01-01", "8B",
                                                          "none", "fixed", "/dev/zero", ""]))
_values = st.one_of(_scalars, st.lists(_scalars, max_size=4),
                    st.dictionaries(st.text(max_size=5), _scalars, max_size=3))


def _toml_scalar(v) -> str:
    if isinstance(v, bool):
        return "true" if v else "false"
    if isinstance(v, int):
        return str(v)
    if isinstance(v, float):
        return {"nan": "nan", "inf": "inf", "-inf": "-inf"}.get(repr(v), repr(v))
    if isinstance(v, str):
        return to_toml_string(v)
    if isinstance(v, list):
        return "[" + ", ".join(_toml_scalar(x) for x in v) + "]"
    return "{" + ", ".join(f"{to_toml_string(k)} = {_toml_scalar(x)}" for k, x in v.items()) + "}"


@settings(max_examples=300, deadline=None, derandomize=True,
          suppress_health_check=[HealthCheck.too_slow, HealthCheck.function_scoped_fixture])
@given(doc=st.lists(st.tuples(st.sampled_from(_SECTIONS), st.sampled_from(_KEYS), _values),
                    max_size=6), raw=st.text(max_size=60))
def test_fuzz_load_config(tmp_path, doc, raw):
    """Any document (structured or raw text) loads or raises a one-line InputError."""
    by_section: dict[str, list[str]] = {}
    for section, key, value in doc:
        by_section.setdefault(section, []).append(f"{key} = {_toml_scalar(value)}")
    text = "".join(f"[{s}]\n" + "\n".join(dict.fromkeys(lines)) + "\n"
                   for s, lines in by_section.items())
    for body in (text, raw):
        f = tmp_path / "fuzz.toml"
        f.write_text(body, encoding="utf-8")
        try:
            load_config(f)
        except InputError as exc:
            _one_line(exc)


@settings(max_examples=300, deadline=None, derandomize=True,
          suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(lines=st.lists(st.one_of(
    st.text(max_size=30),
    st.tuples(st.floats(allow_nan=True), st.floats(allow_nan=True)).map(
        lambda t: f"{t[0]} {t[1]}"),
    st.sampled_from(["start_utc,stop_utc", "2031-01-01T00:00:00Z,2031-01-02T00:00:00Z",
                     "# comment", "", "1,2,3", "2031-13-01,2031-01-01"])), max_size=8))
def test_fuzz_table_readers(tmp_path, lines):
    """Run lists and spectrum tables: load, or a one-line InputError; nothing else."""
    f = tmp_path / "table.txt"
    f.write_text("\n".join(lines), encoding="utf-8")
    for fn in (lambda: load_run_list(f), lambda: load_custom_spectrum(f, "fuzz")):
        try:
            fn()
        except InputError as exc:
            _one_line(exc)


# --------------------------------------------------------------------------- messages name the key
def _gen_error(tmp_path, text):
    from generator.pipeline import build_plan

    f = tmp_path / "c.toml"
    f.write_text(text)
    with pytest.raises(ConfigError) as err:
        build_plan(load_config(f))
    _one_line(err.value)
    return str(err.value)


def test_zero_flux_is_not_reported_as_a_threshold_problem(tmp_path):
    msg = _gen_error(tmp_path, '[sources]\ninclude = ["8B"]\n[sources.scale]\n8B = 0.0\n')
    assert msg.startswith("sources:") and "zero flux" in msg


def test_documented_depth_limit_is_accepted():
    """README: detector.depth_m in [0, 10000]; the upper end itself is allowed."""
    from generator.oscillation import PRESETS, FlavourModel

    FlavourModel(PRESETS["nufit-6.0"], ["8B"], latitude_deg=0.0, depth_m=10000.0,
                 e_min=5.0, e_max=5.5, earth=False)


def test_nsi_limit_message_names_the_config_key():
    from generator.xsec import XsecModel

    XsecModel(nsi_eps_l=(10.0, 0.0, 0.0))  # the documented limit is allowed
    with pytest.raises(ConfigError, match=r"interaction\.nsi_eps_l.*10"):
        XsecModel(nsi_eps_l=(10.5, 0.0, 0.0))


# --------------------------------------------------------------------------- source names
def _custom_config(tmp_path, names):
    spec = tmp_path / "s.txt"
    spec.write_text("4.0 1.0\n12.0 0.0\n")
    blocks = "".join(f'[[sources.custom]]\nname = {to_toml_string(n)}\nspectrum_file = "s.txt"\n'
                     f"flux = 1e6\n" for n in names)
    f = tmp_path / "c.toml"
    f.write_text('[sources]\ninclude = ["8B"]\n' + blocks +
                 '[run]\nevents = 500\nchunk_size = 500\nseed = 3\n')
    return f


def test_long_and_non_ascii_source_names_survive_the_file(tmp_path):
    """Names longer than 16 bytes and outside ASCII are stored whole (variable-length UTF-8)."""
    from generator.io import EventFile
    from generator.pipeline import generate

    names = ["a-rather-long-custom-source-name-1", "a-rather-long-custom-source-name-2",
             "Quelle ⁸B-ähnlich"]
    cfg = load_config(_custom_config(tmp_path, names))
    out = generate(cfg, tmp_path / "o.h5").path
    with EventFile(out) as ev:
        got = set(ev.origin_names.values())
        table = [x.decode() if isinstance(x, bytes) else x for x in ev._f["sources/name"][:]]
    assert set(names) <= got and set(names) <= set(table)


@pytest.mark.parametrize("names", [["same", "same"], [" padded"], ["x" * 65], ["tab\there"]])
def test_bad_source_names_are_refused_up_front(tmp_path, names):
    with pytest.raises(ConfigError, match=r"sources\.custom") as err:
        load_config(_custom_config(tmp_path, names))
    _one_line(err.value)


# --------------------------------------------------------------------------- bounded work
def test_expected_count_mode_has_the_fixed_mode_ceiling(tmp_path):
    msg = _gen_error_count(tmp_path, "expected")
    assert "run.count_mode" in msg and "limit" in msg


def test_poisson_count_mode_has_the_fixed_mode_ceiling(tmp_path):
    msg = _gen_error_count(tmp_path, "poisson")
    assert "run.count_mode" in msg


def _gen_error_count(tmp_path, mode):
    from generator.pipeline import generate

    f = tmp_path / "c.toml"
    f.write_text(f'[sources]\ninclude = ["8B"]\n[sources.scale]\n8B = 1e30\n'
                 f'[run]\ncount_mode = "{mode}"\n')
    with pytest.raises(ConfigError) as err:
        generate(load_config(f), tmp_path / "o.h5")
    assert not (tmp_path / "o.h5").exists()
    _one_line(err.value)
    return str(err.value)


def test_chunk_size_is_bounded_by_memory(tmp_path):
    f = tmp_path / "c.toml"
    f.write_text("[run]\nchunk_size = 67108864\n")
    with pytest.raises(ConfigError, match="run.chunk_size"):
        load_config(f)


def test_sparse_run_list_over_centuries_tabulates_only_live_time(tmp_path):
    """Two one-hour runs 250 years apart: the Sun table follows the live time (2 h), not the
    span (about 1.3e8 nodes at 60 s, 2 GB)."""
    from generator.exposure import Exposure

    runs = np.array([[parse("1901-01-01T00:00:00"), parse("1901-01-01T01:00:00")],
                     [parse("2151-06-01T00:00:00"), parse("2151-06-01T01:00:00")]])
    ex = Exposure(runs, 10.0, 20.0)
    assert ex.table.n_nodes < 200
    rng = np.random.default_rng(1)
    t = ex.sample_times(rng, 1000)
    nu, cz, dist = ex.sun(t)
    from generator.ephemeris import sun_position

    to_sun, _, _ = sun_position(t, 10.0, 20.0)
    assert np.max(np.abs(nu + to_sun)) < 1e-5
    assert ex.zenith_exposure(np.linspace(-1, 1, 5)).sum() == pytest.approx(
        ex.live_seconds * ex.mean_inverse_r2, rel=1e-9)


def parse(text):
    from generator.exposure import parse_utc

    return parse_utc(text, "t")


@pytest.mark.parametrize("args,ok", [(["--events", "1e3"], True), (["--seed", "0x10"], True),
                                     (["--events", "1.5e0"], False), (["--events", "1e13"], False),
                                     (["--seed", "ten"], False)])
def test_cli_integers_in_scientific_and_hex_notation(tmp_path, capsys, args, ok):
    from generator.cli import main

    out = tmp_path / "o.h5"
    base = ["generate", "-o", str(out), "--quiet"]
    extra = [] if "--events" in args else ["--events", "500"]
    if "--seed" not in args:
        extra += ["--seed", "1"]
    try:
        code = main([*base, *args, *extra])
    except SystemExit as exc:  # argparse usage errors
        code = exc.code
    assert (code == 0) == ok, capsys.readouterr().err
    assert out.exists() == ok
