"""Summary of an event file (``sunrecoil inspect``): as a dict, readable text or JSON.

:func:`describe` reads the file in chunks (bounded memory) and returns a JSON-ready dict with
every quantity and its unit; :func:`summarise` renders it as text with physical units and a
sensible precision; ``sunrecoil inspect --json`` prints the dict. New stages add their entries to
:func:`describe` (a key and a ``{"value": …, "unit": …}`` entry) and one line to the renderer.
"""

from __future__ import annotations

import datetime as _dt
import json
import tomllib
from pathlib import Path
from typing import Any

import numpy as np

from .io.reader import EventFile

__all__ = ["describe", "summarise", "summary_json", "SUMMARY_SCHEMA"]

#: Version of the JSON summary layout.
SUMMARY_SCHEMA = 1

_FLAVOUR = {12: "nu_e", 14: "nu_mu", 16: "nu_tau", -12: "anti-nu_e", -14: "anti-nu_mu",
            -16: "anti-nu_tau", 0: "none (background)"}

#: Reconstructed fields whose ranges are shown when present.
_RECO = ("reco_energy", "n_pe", "reco_cos_sun")

#: Root attributes listed under provenance (when present).
_PROVENANCE_KEYS = ("tool_version", "layout_version", "created_utc", "config_source",
                    "seed_entropy", "chunk_size", "count_mode", "stages_present",
                    "stages_absent", "response_variant", "n_generated", "n_triggered",
                    "trigger_efficiency", "expected_events_triggered",
                    "expected_events_signal", "expected_events_backgrounds")

#: Compression filters and whether reading needs a plugin (the ``hdf5plugin`` package).
_FILTER_NEEDS = {"gzip": "none (any HDF5 reader)", "deflate": "none (any HDF5 reader)",
                 "lzf": "h5py's built-in LZF filter", "none": "none (any HDF5 reader)",
                 "blosc-lz4": "the Blosc plugin (pip install hdf5plugin; import hdf5plugin)",
                 "zstd": "the Zstd plugin (pip install hdf5plugin; import hdf5plugin)"}


def _utc(t: float) -> str:
    return _dt.datetime.fromtimestamp(float(t), _dt.UTC).strftime("%Y-%m-%dT%H:%M:%SZ")


def _q(value: Any, unit: str) -> dict[str, Any]:
    return {"value": value, "unit": unit}


def _config_choices(attrs: dict[str, Any]) -> dict[str, Any]:
    try:
        cfg = tomllib.loads(str(attrs.get("config_toml", "")))
    except tomllib.TOMLDecodeError:
        return {}
    src, osc, det = cfg.get("sources", {}), cfg.get("oscillation", {}), cfg.get("detector", {})
    return {"detector": det.get("name"), "medium": det.get("medium"),
            "flux_model": src.get("flux_model"), "b8_shape": src.get("b8_shape"),
            "oscillation_preset": osc.get("preset") if osc.get("enabled", True) else "off",
            "earth_matter": osc.get("earth_matter"),
            "corrections": cfg.get("interaction", {}).get("corrections")}


def describe(path: str | Path, chunk: int = 1 << 20) -> dict[str, Any]:
    """Counts, ranges, exposure, normalisation and provenance of an event file.

    Parameters
    ----------
    path : path
        Event file.
    chunk : int
        Events read at a time (memory bound).

    Returns
    -------
    dict
        JSON-serialisable; quantities as ``{"value": …, "unit": …}``.
    """
    with EventFile(path) as ev:
        names = ev.origin_names
        n = ev.n_events
        by_origin: dict[int, int] = {}
        by_flavour: dict[int, int] = {}
        ranged = [k for k in ("nu_energy", "e_kinetic", "time_utc", *_RECO) if k in ev.fields]
        ranges = {k: [np.inf, -np.inf] for k in ranged}
        night = 0
        wsum = 0.0
        trig = 0
        has_trigger = "triggered" in ev.fields
        for c in ev.iter_chunks(chunk, ["origin", "nu_pdg", "is_night", "weight", *ranged,
                                        *(["triggered"] if has_trigger else [])]):
            for key, store in (("origin", by_origin), ("nu_pdg", by_flavour)):
                u, cnt = np.unique(c[key], return_counts=True)
                for a, b in zip(u.tolist(), cnt.tolist(), strict=True):
                    store[a] = store.get(a, 0) + b
            for k, r in ranges.items():
                v = c[k][np.isfinite(c[k])]
                if v.size:
                    r[0] = min(r[0], float(v.min()))
                    r[1] = max(r[1], float(v.max()))
            night += int(c["is_night"].sum())
            wsum += float(c["weight"].sum(dtype=np.float64))
            if has_trigger:
                trig += int(np.count_nonzero(c["triggered"]))
        attrs = ev.attrs
        units = {k: ev.units(k) for k in ranged}
        intervals = ev.table("exposure/intervals")
        sources = ev.table("sources") if "sources" in ev._f else {}
        backgrounds = ev.table("backgrounds") if "backgrounds" in ev._f else {}
        compression = str(ev.events.attrs.get("compression", attrs.get("compression", "?")))
        recorded = ev.filter_info           # what the file itself says it needs
    expected = {}
    if sources:
        for name, code, exp in zip(sources["name"], sources["code"],
                                   sources["expected_events"], strict=True):
            label = name.decode() if isinstance(name, bytes) else str(name)
            expected[label] = {"code": int(code), "expected_events": float(exp),
                               "generated": by_origin.get(int(code), 0)}
    bkg = {}
    for i, (name, code, exp) in enumerate(zip(backgrounds.get("name", []),
                                             backgrounds.get("code", []),
                                             backgrounds.get("expected_events", []),
                                             strict=True)):
        label = name.decode() if isinstance(name, bytes) else str(name)
        unit = backgrounds["rate_unit"][i]
        bkg[label] = {"code": int(code), "expected_events": float(exp),
                      "generated": by_origin.get(int(code), 0),
                      "rate": _q(float(backgrounds["rate"][i]),
                                 unit.decode() if isinstance(unit, bytes) else str(unit))}
    expected.update({k: {kk: v[kk] for kk in ("code", "expected_events", "generated")}
                     for k, v in bkg.items()})
    live = float(attrs.get("live_seconds", 0.0))
    out: dict[str, Any] = {
        "schema": SUMMARY_SCHEMA,
        "file": str(path),
        "events": n,
        "sum_of_weights": _q(wsum, "expected events"),
        "expected_events": _q(float(attrs.get("expected_events", 0.0)), "events"),
        "expected_events_per_live_day": _q(float(attrs.get("expected_events_per_live_day",
                                                            0.0)), "events/day"),
        "by_origin": {names.get(c, str(c)): {"code": c, "events": k}
                      for c, k in sorted(by_origin.items())},
        "by_flavour": {_FLAVOUR.get(c, str(c)): {"pdg": c, "events": k}
                       for c, k in sorted(by_flavour.items(), key=lambda x: abs(x[0]))},
        "sources": expected,
        "backgrounds": bkg or None,
        "night_fraction": night / n if n else None,
        "triggered": ({"events": trig, "fraction": trig / n if n else None}
                      if has_trigger else None),
        "ranges": {k: {"min": r[0], "max": r[1], "unit": units[k]}
                   for k, r in ranges.items() if k != "time_utc" and r[0] <= r[1]},
        "time_range_utc": ([_utc(ranges["time_utc"][0]), _utc(ranges["time_utc"][1])]
                           if n and "time_utc" in ranges else None),
        "exposure": {"live_periods": int(len(intervals)),
                     "live_time": _q(live / 86400.0, "days"),
                     "window_utc": [_utc(intervals[0, 0]), _utc(intervals[-1, 1])],
                     "mean_inverse_r2": float(attrs.get("mean_inverse_r2", float("nan")))},
        "target": {"electrons": float(attrs.get("target_electrons", float("nan"))),
                   "fiducial_mass": _q(float(attrs.get("fiducial_mass_kg", float("nan")))
                                       / 1e6, "kt"),
                   "threshold": _q(float(attrs.get("threshold_mev", float("nan"))), "MeV")},
        "models": _config_choices(attrs),
        "compression": {"filter": compression,
                        "pipeline": recorded.get("filter_pipeline", "not recorded"),
                        "plugin_needed": (recorded["filter_plugin"]
                                          if recorded.get("filter_plugin_required")
                                          else _FILTER_NEEDS.get(compression, "unknown filter"))},
        "provenance": {k: attrs.get(k) for k in _PROVENANCE_KEYS if k in attrs},
    }
    return out


def summary_json(path: str | Path) -> str:
    """:func:`describe` as JSON text."""
    return json.dumps(describe(path), indent=2, default=_jsonable) + "\n"


def _jsonable(v: Any) -> Any:
    if isinstance(v, np.generic):
        return v.item()
    return str(v)


def _g(x: float, digits: int = 4) -> str:
    return f"{x:.{digits}g}"


def summarise(path: Path, chunk: int = 1 << 20) -> str:
    """The summary of :func:`describe` as readable text (physical units, 4 significant digits)."""
    d = describe(path, chunk)
    lines = [f"file: {d['file']}",
             f"events: {d['events']}   (sum of weights {_g(d['sum_of_weights']['value'], 6)} "
             "expected events)",
             f"expected: {_g(d['expected_events']['value'], 6)} events for the exposure, "
             f"{_g(d['expected_events_per_live_day']['value'])} events/day"]
    m = d["models"]
    if m:
        lines.append(f"models: flux {m.get('flux_model')}, 8B shape {m.get('b8_shape')}, "
                     f"oscillations {m.get('oscillation_preset')} (Earth matter "
                     f"{m.get('earth_matter')}), cross sections {m.get('corrections')}")
    lines.append("by origin:            events     expected")
    for name, v in d["by_origin"].items():
        exp = d["sources"].get(name, {}).get("expected_events")
        e_txt = f"{exp:12.5g}" if exp is not None else " " * 12
        lines.append(f"  {name:>10s} ({v['code']:3d}) {v['events']:10d} {e_txt}")
    if d.get("backgrounds"):
        b = d["backgrounds"]
        lines.append(f"backgrounds: {len(b)} isotopes (codes >= 100), "
                     f"{_g(sum(v['expected_events'] for v in b.values()), 6)} expected decays; "
                     "rates: " + ", ".join(f"{k} {_g(v['rate']['value'])} {v['rate']['unit']}"
                                           for k, v in b.items()))
    lines.append("by flavour at detection:")
    for name, v in d["by_flavour"].items():
        lines.append(f"  {name:>11s} ({v['pdg']:+d}): {v['events']}")
    if d["night_fraction"] is not None:
        lines.append(f"night fraction: {d['night_fraction']:.4f}")
    if d["triggered"] is not None:
        lines.append(f"triggered: {d['triggered']['events']} events "
                     f"({d['triggered']['fraction']:.4f} of the file)")
    if d["ranges"]:
        lines.append("ranges:")
        for k, r in d["ranges"].items():
            lines.append(f"  {k:<12s} {r['min']:.4g} – {r['max']:.4g} {r['unit']}")
    if d["time_range_utc"]:
        lines.append(f"  {'time_utc':<12s} {d['time_range_utc'][0]} – {d['time_range_utc'][1]}")
    ex = d["exposure"]
    lines.append(f"exposure: {ex['live_periods']} live period(s), "
                 f"{ex['live_time']['value']:.4f} live days, {ex['window_utc'][0]} – "
                 f"{ex['window_utc'][1]}; ⟨(1 AU/r)²⟩ = {ex['mean_inverse_r2']:.6f}")
    t = d["target"]
    lines.append(f"target: {t['electrons']:.4e} electrons, fiducial "
                 f"{t['fiducial_mass']['value']:.4g} kt, threshold {t['threshold']['value']:g} MeV")
    c = d["compression"]
    lines.append(f"compression: {c['filter']} (plugin needed to read: {c['plugin_needed']}; "
                 f"filters: {c.get('pipeline', 'not recorded')})")
    lines.append("provenance:")
    for k, v in d["provenance"].items():
        lines.append(f"  {k}: {v}")
    return "\n".join(lines) + "\n"
