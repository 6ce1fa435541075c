"""Configuration parsing and validation (the boundary of the program)."""

from __future__ import annotations

import tomllib
from pathlib import Path

import pytest

from generator.config import (
    Config,
    default_config_text,
    load_config,
    parse_config,
    to_toml,
)
from generator.errors import ConfigError, InputError


def test_default_config_parses():
    cfg = load_config(None)
    assert isinstance(cfg, Config)
    assert cfg.detector.medium == "water"
    assert cfg.sources.include == ("pp", "pep", "hep", "7Be", "8B", "13N", "15O", "17F")


def test_to_toml_round_trips():
    cfg = load_config(None)
    again = parse_config(tomllib.loads(to_toml(cfg)))
    assert again == cfg


def test_user_file_merges_over_default(tmp_path: Path):
    f = tmp_path / "c.toml"
    f.write_text('[detector]\nmedium = "lab"\n[run]\nevents = 7\n')
    cfg = load_config(f)
    assert cfg.detector.medium == "lab"
    assert cfg.run.events == 7
    assert cfg.detector.latitude_deg == load_config(None).detector.latitude_deg


def test_live_days_replaces_default_stop(tmp_path: Path):
    f = tmp_path / "c.toml"
    f.write_text('[exposure]\nlive_days = 10.0\n')
    cfg = load_config(f)
    assert cfg.exposure.stop_utc is None and cfg.exposure.live_days == 10.0


def test_run_list_replaces_time_window(tmp_path: Path):
    runs = tmp_path / "runs.csv"
    runs.write_text("start_utc,stop_utc\n2031-01-01T00:00:00Z,2031-01-02T00:00:00Z\n")
    f = tmp_path / "c.toml"
    f.write_text('[exposure]\nrun_list = "runs.csv"\n')
    cfg = load_config(f)
    assert cfg.exposure.run_list == str(runs.resolve())
    assert cfg.exposure.start_utc is None


def test_shipped_example_configs_parse():
    root = Path(__file__).resolve().parents[1] / "configs"
    files = sorted(root.glob("*.toml"))
    assert len(files) >= 2
    for f in files:
        load_config(f)


# Each case: TOML text merged over the default, and a fragment the message must contain
# (the key path).  Together they cover unknown keys, wrong types, out-of-range and non-finite
# values, inverted or out-of-era time ranges, unknown names and inconsistent choices.
BAD = [
    ("[detector]\nmedium = \"mercury\"\n", "detector.medium"),
    ("[detector]\nfiducial_radius_m = -3.0\n", "detector.fiducial_radius_m"),
    ("[detector]\nfiducial_radius_m = 0.0\n", "detector.fiducial_radius_m"),
    ("[detector]\nfiducial_radius_m = nan\n", "detector.fiducial_radius_m"),
    ("[detector]\nfiducial_radius_m = inf\n", "detector.fiducial_radius_m"),
    ("[detector]\nfiducial_radius_m = \"ten\"\n", "detector.fiducial_radius_m"),
    ("[detector]\nlatitude_deg = 91.0\n", "detector.latitude_deg"),
    ("[detector]\nlongitude_deg = -180.5\n", "detector.longitude_deg"),
    ("[detector]\nfiducial_shape = \"cube\"\n", "detector.fiducial_shape"),
    ("[detector]\nfiducial_half_height_m = 0.0\n", "detector.fiducial_half_height_m"),
    ("[detector]\ncolour = \"blue\"\n", "detector"),
    ("[detector]\ndepth_m = true\n", "detector.depth_m"),
    ("[exposure]\nstop_utc = \"2030-06-01T00:00:00Z\"\n", "exposure.stop_utc"),
    ("[exposure]\nstart_utc = \"1899-12-31T00:00:00Z\"\nstop_utc = \"1900-02-01T00:00:00Z\"\n",
     "exposure.start_utc"),
    ("[exposure]\nstop_utc = \"2200-06-01T00:00:00Z\"\n", "exposure.stop_utc"),
    ("[exposure]\nstart_utc = \"yesterday\"\n", "exposure.start_utc"),
    ("[exposure]\nlive_days = -1.0\n", "exposure.live_days"),
    ("[exposure]\nlive_days = 5.0\nstop_utc = \"2031-05-01T00:00:00Z\"\n", "exposure"),
    ("[exposure]\nrun_list = \"r.csv\"\nstart_utc = \"2031-01-01T00:00:00Z\"\n",
     "exposure.run_list"),
    ("[sources]\ninclude = [\"pp\", \"9Li\"]\n", "sources.include[1]"),
    ("[sources]\ninclude = \"pp\"\n", "sources.include"),
    ("[sources]\ninclude = []\n", "sources.include"),
    ("[sources]\nflux_model = \"SSM-1850\"\n", "sources.flux_model"),
    ("[sources.scale]\n\"8B\" = -1.0\n", "sources.scale.8B"),
    ("[sources.scale]\n\"8B\" = nan\n", "sources.scale.8B"),
    ("[sources.scale]\n\"9Li\" = 1.0\n", "sources.scale.9Li"),
    ("[sources.flux_override]\npp = -5e10\n", "sources.flux_override.pp"),
    ("[sources]\nb8_shape = \"wide\"\n", "sources.b8_shape"),
    ("[[sources.custom]]\nname = \"pp\"\nspectrum_file = \"x.txt\"\nflux = 1.0\n",
     "sources.custom[0].name"),
    ("[[sources.custom]]\nname = \"x\"\nspectrum_file = \"x.txt\"\nflux = 0.0\n",
     "sources.custom[0].flux"),
    ("[oscillation]\nsin2_theta12 = 1.2\n", "oscillation.sin2_theta12"),
    ("[oscillation]\nsin2_theta13 = -0.1\n", "oscillation.sin2_theta13"),
    ("[oscillation]\nsin2_theta23 = nan\n", "oscillation.sin2_theta23"),
    ("[oscillation]\ndm2_21 = 0.0\n", "oscillation.dm2_21"),
    ("[oscillation]\ndm2_31 = 0.0\n", "oscillation.dm2_31"),
    ("[oscillation]\npreset = \"best\"\n", "oscillation.preset"),
    ("[oscillation]\nenabled = \"yes\"\n", "oscillation.enabled"),
    ("[oscillation]\nsolar_profile = \"flat\"\n", "oscillation.solar_profile"),
    ("[interaction]\ncorrections = \"two-loop\"\n", "interaction.corrections"),
    ("[interaction]\nthreshold_mev = 0.0\n", "interaction.threshold_mev"),
    ("[interaction]\nthreshold_mev = 30.0\n", "interaction.threshold_mev"),
    ("[interaction]\nmagnetic_moment = -1.0\n", "interaction.magnetic_moment"),
    ("[interaction]\nnsi_eps_l = [0.0, 0.0]\n", "interaction.nsi_eps_l"),
    ("[interaction]\nnsi_eps_r = [0.0, inf, 0.0]\n", "interaction.nsi_eps_r[1]"),
    ("[run]\nevents = 0\n", "run.events"),
    ("[run]\nevents = 1.5\n", "run.events"),
    ("[run]\nseed = -4\n", "run.seed"),
    ("[run]\ncount_mode = \"lots\"\n", "run.count_mode"),
    ("[run]\nchunk_size = 0\n", "run.chunk_size"),
    ("[output]\ncompression = \"rar\"\n", "output.compression"),
    ("[output]\ncompression_level = 12\n", "output.compression_level"),
    ("[response]\nmodel = \"water\"\n", "response"),
    ("[backgrounds]\nisotopes = [\"210Po\"]\n", "backgrounds"),
    ("[detectr]\nmedium = \"water\"\n", "detectr"),
]


@pytest.mark.parametrize(("text", "key"), BAD, ids=[b[1] + f"-{i}" for i, b in enumerate(BAD)])
def test_bad_config_names_the_key(tmp_path: Path, text: str, key: str):
    f = tmp_path / "bad.toml"
    f.write_text(text)
    with pytest.raises(ConfigError) as info:
        load_config(f)
    msg = str(info.value)
    assert key in msg, msg
    assert isinstance(info.value, ValueError)


def test_bad_case_count():
    assert len(BAD) >= 25


def test_invalid_toml_and_unreadable_file(tmp_path: Path):
    f = tmp_path / "broken.toml"
    f.write_text("[detector\nmedium = 'water'\n")
    with pytest.raises(InputError, match="invalid TOML"):
        load_config(f)
    with pytest.raises(InputError, match="cannot be read"):
        load_config(tmp_path / "missing.toml")


def test_default_text_is_package_data():
    assert "[detector]" in default_config_text()


# Property test: whatever value a key receives, parsing either succeeds or raises ConfigError
# naming that key — never another exception type.
_KEYS = [("detector", "fiducial_radius_m"), ("detector", "latitude_deg"),
         ("detector", "longitude_deg"), ("detector", "depth_m"), ("exposure", "live_days"),
         ("oscillation", "sin2_theta12"), ("oscillation", "dm2_31"),
         ("interaction", "threshold_mev"), ("interaction", "magnetic_moment"),
         ("run", "events"), ("run", "seed"), ("run", "chunk_size"), ("output", "compression"),
         ("sources", "flux_model"), ("detector", "medium")]

try:
    from hypothesis import example, given, settings
    from hypothesis import strategies as st
except ImportError:  # pragma: no cover
    st = None

if st is not None:
    _values = st.one_of(st.floats(allow_nan=True, allow_infinity=True), st.integers(),
                        st.text(max_size=12), st.booleans(), st.lists(st.integers(), max_size=3))

    @settings(max_examples=150, deadline=None)
    @given(key=st.sampled_from(_KEYS), value=_values)
    @example(key=("exposure", "live_days"), value=1e308)
    @example(key=("run", "seed"), value=2**130)
    def test_any_value_parses_or_names_the_key(key, value):
        data = tomllib.loads(default_config_text())
        section, name = key
        data[section][name] = value
        if name == "live_days":
            data["exposure"].pop("stop_utc", None)
        try:
            parse_config(data)
        except ConfigError as exc:
            assert f"{section}.{name}" in str(exc) or section in str(exc)
