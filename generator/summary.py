"""Human-readable summary of an event file (``sunrecoil inspect``)."""

from __future__ import annotations

import datetime as _dt
from pathlib import Path

import numpy as np

from .io.reader import EventFile

__all__ = ["summarise"]

_FLAVOUR = {12: "nu_e", 14: "nu_mu", 16: "nu_tau", -12: "anti-nu_e", -14: "anti-nu_mu",
            -16: "anti-nu_tau"}
_PROVENANCE_KEYS = ("tool_version", "layout_version", "created_utc", "config_source",
                    "seed_entropy", "chunk_size", "count_mode", "expected_events",
                    "expected_events_per_live_day", "weight_per_event", "target_electrons",
                    "fiducial_mass_kg", "threshold_mev", "mean_inverse_r2", "stages_present",
                    "stages_absent", "response_variant", "n_generated", "n_triggered",
                    "trigger_efficiency", "expected_events_triggered")
_RECO = ("reco_energy", "n_pe", "reco_cos_sun")


def _utc(t: float) -> str:
    return _dt.datetime.fromtimestamp(float(t), _dt.UTC).strftime("%Y-%m-%dT%H:%M:%SZ")


def summarise(path: Path, chunk: int = 1 << 20) -> str:
    """Counts by origin and flavour, energy ranges, exposure and provenance, as text.

    The file is read in chunks of ``chunk`` events, so memory stays bounded.
    """
    lines: list[str] = []
    with EventFile(path) as ev:
        names = ev.origin_names()
        n = ev.n_events
        by_origin: dict[int, int] = {}
        by_flavour: dict[int, int] = {}
        reco = [k for k in _RECO if k in ev.fields]
        ranges = {k: [np.inf, -np.inf] for k in ("nu_energy", "e_kinetic", "time_utc", *reco)}
        night = 0
        wsum = 0.0
        trig = 0
        for c in ev.iter_chunks(chunk, ["origin", "nu_pdg", "nu_energy", "e_kinetic",
                                        "time_utc", "is_night", "weight", *reco,
                                        *(["triggered"] if reco else [])]):
            for key, store in (("origin", by_origin), ("nu_pdg", by_flavour)):
                u, cnt = np.unique(c[key], return_counts=True)
                for a, b in zip(u.tolist(), cnt.tolist(), strict=True):
                    store[a] = store.get(a, 0) + b
            for k, r in ranges.items():
                if c[k].size and not np.all(np.isnan(c[k])):
                    r[0] = min(r[0], float(np.nanmin(c[k])))
                    r[1] = max(r[1], float(np.nanmax(c[k])))
            if reco:
                trig += int(np.count_nonzero(c["triggered"]))
            night += int(c["is_night"].sum())
            wsum += float(c["weight"].sum(dtype=np.float64))
        attrs = ev.attrs
        live = float(attrs.get("live_seconds", 0.0))
        lines.append(f"file: {path}")
        lines.append(f"events: {n}   (sum of weights {wsum:.6g} expected events)")
        lines.append("by origin:")
        for code in sorted(by_origin):
            lines.append(f"  {names.get(code, str(code)):>8s} (code {code:3d}): {by_origin[code]}")
        lines.append("by flavour at detection:")
        for code in sorted(by_flavour, key=abs):
            lines.append(f"  {_FLAVOUR.get(code, str(code)):>11s} ({code:+d}): {by_flavour[code]}")
        if n:
            lines.append(f"night fraction: {night / n:.4f}")
            lines.append("ranges:")
            for k in ("nu_energy", "e_kinetic"):
                lines.append(f"  {k:<10s} {ranges[k][0]:.4f} – {ranges[k][1]:.4f} "
                             f"{ev.units(k)}")
            lines.append(f"  time_utc   {_utc(ranges['time_utc'][0])} – "
                         f"{_utc(ranges['time_utc'][1])}")
            for k in reco:
                lo, hi = ranges[k]
                lines.append(f"  {k:<12s} {lo:.4f} – {hi:.4f} {ev.units(k)}" if lo <= hi
                             else f"  {k:<12s} not reconstructed (NaN)")
            if reco:
                lines.append(f"triggered: {trig} of {n} stored events ({trig / n:.4f})")
        intervals = ev.table("exposure/intervals")
        lines.append(f"exposure: {len(intervals)} live period(s), {live / 86400.0:.4f} live days, "
                     f"{_utc(intervals[0, 0])} – {_utc(intervals[-1, 1])}")
        lines.append("provenance:")
        for k in _PROVENANCE_KEYS:
            if k in attrs:
                lines.append(f"  {k}: {attrs[k]}")
    return "\n".join(lines) + "\n"
