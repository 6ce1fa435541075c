"""Configurations shared by the throughput benchmarks (not a benchmark itself).

``configured(path, stages, compression)`` loads ``path`` (None: the embedded default, water
Cherenkov) and sets its optional stages:

* ``file``: as written in the file (``configs/scintillator.toml`` has the response and eight
  background isotopes on, ⁷Be-line dominated signal);
* ``truth``: response and backgrounds off (truth-level rate);
* ``resp``: response on, backgrounds off;
* ``bkg``: the 10 background species below, response off;
* ``bkg+resp``: response on and 10 background species (¹⁴C, ⁸⁵Kr, ²¹⁰Bi, ⁴⁰K, ²¹⁰Po, ¹¹C,
  ²¹⁴Bi, ²⁰⁸Tl from the vessel, ¹²B, ¹⁶N), each with a rate giving 10 % of the signal count,
  so half of the events are backgrounds (the setting of issues 9 and 12; invented demo rates).

The output filter is ``compression`` (default: the package default, ``deflate``), whatever
the file says.
"""

from __future__ import annotations

import dataclasses

STAGES = ("file", "truth", "resp", "bkg", "bkg+resp")

#: The 10 background species of the ``bkg+resp`` setting.
BACKGROUND_SPECIES = ("14C", "85Kr", "210Bi", "40K", "210Po", "11C", "214Bi", "208Tl", "12B",
                      "16N")


def configured(path: str | None, stages: str = "file", compression: str | None = None):
    """The configuration of ``path`` with the optional stages set as ``stages`` says."""
    from generator.backgrounds.config import BackgroundsConfig, IsotopeConfig
    from generator.config import load_config
    from generator.io.filters import DEFAULT_FILTER
    from generator.pipeline import build_plan

    if stages not in STAGES:
        raise ValueError(f"stages {stages!r}: use one of {STAGES}")
    cfg = load_config(path)
    cfg = dataclasses.replace(cfg, output=dataclasses.replace(
        cfg.output, compression=compression or DEFAULT_FILTER))
    if stages == "file":
        return cfg
    cfg = dataclasses.replace(cfg, backgrounds=None, response=dataclasses.replace(
        cfg.response, enabled="resp" in stages))
    if "bkg" in stages:
        base = build_plan(cfg)
        mass = base.fiducial.volume_cm3 * base.medium.density_g_cm3 / 1000.0
        rate = base.expected_total / 10.0 / (mass * base.exposure.live_seconds)   # Bq/kg
        isos = tuple(IsotopeConfig(x, rate, "Bq/kg", "vessel" if x == "208Tl" else "uniform",
                                   0.3 if x == "208Tl" else None) for x in BACKGROUND_SPECIES)
        det = cfg.detector
        cfg = dataclasses.replace(cfg, backgrounds=BackgroundsConfig(
            True, isos, vessel_radius_m=det.fiducial_radius_m + 0.5,
            vessel_half_height_m=det.fiducial_half_height_m + 0.5))
    return cfg
