"""Media: electrons per tonne from the composition, custom media, target normalisation."""

from __future__ import annotations

import pytest
import scipy.constants as sc
from conftest import make_config

from generator.errors import ConfigError
from generator.media import MEDIA, make_medium

#: IUPAC 2021 abridged standard atomic weights (Prohaska et al., Pure Appl. Chem. 94, 573
#: (2022); from memory): H 1.008, C 12.011, O 15.999 g/mol.
A_H, A_C, A_O = 1.008, 12.011, 15.999


def test_water_electrons_per_tonne_iupac():
    # H2O: 10 electrons per molecule of molar mass 2 A_H + A_O; N_A from scipy (CODATA, exact)
    expected = 1e6 / (2 * A_H + A_O) * 10 * sc.N_A
    assert MEDIA["water"].electrons_per_tonne == pytest.approx(expected, rel=1e-12)


def test_pseudocumene_electrons_per_tonne_iupac():
    # C9H12: 9·6 + 12·1 = 66 electrons, molar mass 9 A_C + 12 A_H
    expected = 1e6 / (9 * A_C + 12 * A_H) * 66 * sc.N_A
    assert MEDIA["pc"].electrons_per_tonne == pytest.approx(expected, rel=1e-12)
    # Bellini et al., Phys. Rev. D 89, 112007 (2014) quote (3.307 ± 0.003) × 10³¹ e⁻/100 t
    # for pseudocumene (from memory)
    assert MEDIA["pc"].electrons_per_tonne * 100 == pytest.approx(3.307e31, abs=0.003e31)


def test_element_fractions_equal_formula():
    w_h = 2 * A_H / (2 * A_H + A_O)
    by_element = make_medium("w2", 0.9982, (("H", w_h), ("O", 1 - w_h)), "", "media.w2")
    assert by_element.electrons_per_tonne == pytest.approx(MEDIA["water"].electrons_per_tonne,
                                                           rel=1e-12)


def test_water_mean_excitation_bragg():
    # ICRU 37 constituent I values give ≈ 75.3 eV for water (reference note check, [C])
    assert MEDIA["water"].mean_excitation_ev == pytest.approx(75.3, abs=0.1)


@pytest.mark.parametrize("comp, msg", [
    ((("H2O", 0.5), ("C9H12", 0.4)), "sum to"),
    ((("Xx2O", 1.0),), "unknown element"),
    ((("h2o", 1.0),), "not a chemical formula"),
])
def test_bad_compositions(comp, msg):
    with pytest.raises(ConfigError, match=msg):
        make_medium("bad", 1.0, comp, "", "media.bad")


def test_custom_medium_from_config_and_target_normalisation():
    from generator.pipeline import build_plan

    base = {"exposure": {"start_utc": "2031-01-01T00:00:00Z", "stop_utc": "2031-01-05T00:00:00Z"},
            "sources": {"include": ["8B"]}}
    cfg = make_config({**base, "detector": {"medium": "gdwater"},
                       "media": {"gdwater": {"density_g_cm3": 1.0, "refractive_index": 1.335,
                                             "composition": {"H2O": 0.998, "Gd": 0.002}}}})
    plan = build_plan(cfg)
    assert plan.medium.name == "gdwater" and plan.medium.refractive_index == 1.335
    # a stated target of 100 t scales the expected count exactly with the electron number
    cfg_t = make_config({**base, "detector": {"target_mass_t": 100.0}})
    plan_t = build_plan(cfg_t)
    assert plan_t.n_electrons == pytest.approx(100 * MEDIA["water"].electrons_per_tonne)
    cfg_e = make_config({**base, "detector": {"target_electrons": 1e32}})
    plan_e = build_plan(cfg_e)
    assert plan_e.expected_total / plan_t.expected_total == pytest.approx(
        1e32 / plan_t.n_electrons, rel=1e-12)


@pytest.mark.parametrize("over, key", [
    ({"media": {"x": {"density_g_cm3": 1.0, "composition": {"H2O": 0.9}}},
      "detector": {"medium": "x"}}, "media.x.composition"),
    ({"media": {"water": {"light_yield_per_mev": -5.0}}}, "media.water.light_yield_per_mev"),
    ({"media": {"x": {"density_g_cm3": -1.0, "composition": {"H2O": 1.0}}}},
     "media.x.density_g_cm3"),
    ({"detector": {"medium": "heavy"}}, "detector.medium"),
    ({"detector": {"target_mass_t": 1.0, "target_electrons": 1e30}}, "detector.target"),
    ({"response": {"pe_per_mev": -1.0}}, "response.pe_per_mev"),
    ({"response": {"vertex_resolution_mm": -3.0}}, "response.vertex_resolution_mm"),
    ({"response": {"colour": 1}}, "response"),
])
def test_bad_media_and_response_keys(over, key):
    with pytest.raises(ConfigError, match=key.replace(".", r"\.")):
        cfg = make_config(over)
        from generator.pipeline import build_plan

        build_plan(cfg)


def test_config_show_round_trips_response_and_media():
    import tomllib

    from generator.config import parse_config, to_toml

    cfg = make_config({"detector": {"medium": "mix"}, "response": {"pe_per_mev": 8.0},
                       "media": {"mix": {"density_g_cm3": 0.95, "light_yield_per_mev": 300.0,
                                         "composition": {"H2O": 0.9, "C9H12": 0.1}}}})
    again = parse_config(tomllib.loads(to_toml(cfg)))
    assert again.response == cfg.response and again.media == cfg.media
