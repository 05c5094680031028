"""The files of an un-voicing besides the velocity: its JSON record and its spectra plot."""

from __future__ import annotations

import math

import numpy as np


def _db(x, floor=1e-30):
    return 10.0 * np.log10(np.maximum(np.asarray(x, float), floor))


def unvoice_record(*, di, di_sha256, design, rig, sample_rate, frames, vfs, vscale, peak, inv, stats, vstats, vpeak, vrms, out, png, warnings, version, design_dict) -> dict:
    from ..analysis import unvoice as U
    from ..design.provenance import design_provenance

    band = inv.trusted_band_hz
    centres = U.third_octave_centres(U.LOW_HZ, U.TOP_FRACTION * sample_rate)
    di_db = U.band_levels_from_psd(stats.psd, frequency_hz=stats.frequency_hz, centres_hz=centres)
    v_db = U.band_levels_from_psd(vstats.psd, frequency_hz=vstats.frequency_hz, centres_hz=centres)
    floor = np.exp(np.interp(np.log(centres), np.log(stats.band_hz), np.log(np.maximum(stats.band_floor, 1e-300))))
    floor_db = _db(floor * centres * (10**0.05 - 10**-0.05), 1e-300)

    def at(x, c):
        return complex(U.interp_complex(c, inv.frequency_hz, x))

    rows = []
    for c, a, n, v in zip(centres, di_db, floor_db, v_db):
        rows.append(
            {
                "centre_hz": round(float(c), 2),
                "di_db": _round(a),
                "noise_floor_db": _round(n),
                "snr_db": _round(a - n),
                "passive_db": _round(20 * math.log10(abs(at(inv.passive, c)))),
                "inverse_db": _round(20 * math.log10(max(abs(at(inv.realised, c)), 1e-30))),
                "velocity_db": _round(v),
                "trusted": bool(band is not None and band[0] <= c <= band[1]),
            }
        )
    ref_db = 20 * math.log10(inv.reference_level)
    return {
        "kind": "unvoice",
        "di": {
            "file": str(di),
            "sha256": di_sha256,
            "sample_rate": sample_rate,
            "frames": frames,
            "seconds": frames / sample_rate,
            "volts_full_scale": vfs,
            "peak_v": peak * vfs,
        },
        "design": design.name,
        "design_file": design.source,
        **design_provenance(design),
        "design_values": design_dict,
        "rig": {"file": rig.source, "sha256": rig.sha256} if rig else {"file": None, "from": "the design's own [rig] or the defaults"},
        "velocity": {
            "file": str(out),
            "velocity_scale": vscale,
            "unit": "m/s at full scale (a sample of 1.0)",
            "channels": 1,
            "sensing": "one velocity, the same at both coils' sensing points",
            "peak_m_per_s": vpeak,
            "rms_m_per_s": vrms,
        },
        "plot": str(png) if png else None,
        "trusted_band_hz": [round(band[0], 1), round(band[1], 1)] if band else None,
        "trust_rule": f"the realised inverse within {U.TRUST_DB:g} dB of the exact inverse 1/H, contiguous around {U.REFERENCE_HZ:g} Hz, at most {U.TOP_FRACTION:g}·sample_rate",
        "regularisation": {
            "method": "Tikhonov with a Wiener noise term: W = conj(H)·T / (|H|² + λ_gain + |H|²·N/(S−N)·ρ)",
            "passive_level_1k_db": round(ref_db, 3),
            "max_boost_db": inv.max_boost_db,
            "lambda_gain": inv.lambda_gain,
            "gain_limit_db": round(20 * math.log10(inv.gain_limit) + 0.005, 2),
            "gain_limit_unit": "dB re 1 m/s per V: no frequency of the inverse exceeds it",
            "max_inverse_gain_db": round(20 * math.log10(inv.max_gain), 3),
            "max_inverse_gain_hz": round(float(inv.frequency_hz[int(np.argmax(np.abs(inv.realised)))]), 1),
            "passband_cost_db": round(-20 * math.log10(1 + inv.lambda_gain / inv.reference_level**2), 4),
            "noise_term": "S: long-term mean band power; N: its low percentile over frames; ρ = clip(|H(1 kHz)/H|² − 1, 0, 1), so the term acts only where the exact inverse boosts",
            "noise_floor": {
                "percentile": U.NOISE_PERCENTILE,
                "frame_samples": stats.frame,
                "hop_samples": stats.hop,
                "window": "hann",
                "bands_per_octave": U.BANDS_PER_OCTAVE,
                "frames": stats.frames,
                "silent_frames": stats.silent_frames,
                "caveat": "in playing without pauses the quietest frames are still playing, so the floor overestimates the noise; over pure noise it reads 0.5 to 3.5 dB under the noise's mean (the percentile's bias)",
            },
            "low_taper_hz": U.LOW_HZ,
            "fir_taps": int(inv.taps.size),
            "delay_samples_removed": inv.delay,
            "fir_error_db": round(inv.fir_error_db, 4),
        },
        "model_error": {
            "what": "20·log10|H_true/H_model| in the trusted band: the level error of the estimate if the true part is 10 % off the model's",
            **U.model_error_table(design, frequency_hz=np.geomspace(20.0, U.TOP_FRACTION * sample_rate, 600), band_hz=band),
        },
        "bands": rows,
        "warnings": list(warnings),
        "software_version": version,
    }


def _round(x, nd=2):
    x = float(x)
    return round(x, nd) if math.isfinite(x) else None


def spectra_plot(path, *, stats, vstats, inv, title=""):
    """DI spectrum with its noise floor and the passive response (top); the recovered velocity's spectrum and the inverse (bottom)."""
    from .plots import CLAY, PALETTE, _hz_axis, pyplot, save

    plt = pyplot()
    fig, (ax1, ax2) = plt.subplots(2, 1, figsize=(8.5, 7), sharex=True)
    fmin, fmax = 20.0, inv.sample_rate / 2
    k = stats.frequency_hz >= fmin
    ax1.plot(stats.frequency_hz[k], _db(stats.psd[k]), color=PALETTE[0], lw=1.3, label="DI spectrum (dB re 1 V²/Hz)")
    bk = stats.band_floor > 0
    ax1.plot(stats.band_hz[bk], _db(stats.band_floor[bk]), color=PALETTE[0], lw=1.0, ls=":", label="DI noise floor (low percentile)")
    ax1.set_ylabel("DI, dB re 1 V²/Hz")
    t1 = ax1.twinx()
    g = inv.frequency_hz >= fmin
    t1.plot(inv.frequency_hz[g], 20 * np.log10(np.abs(inv.passive[g])), color=CLAY, lw=1.5, ls="--", label="passive response (dB re 1 V per m/s)")
    t1.set_ylabel("passive, dB re 1 V per m/s", color=CLAY)
    kv = vstats.frequency_hz >= fmin
    ax2.plot(vstats.frequency_hz[kv], _db(vstats.psd[kv]), color=PALETTE[1], lw=1.3, label="recovered velocity (dB re 1 (m/s)²/Hz)")
    ax2.set_ylabel("velocity, dB re 1 (m/s)²/Hz")
    t2 = ax2.twinx()
    t2.plot(inv.frequency_hz[g], 20 * np.log10(np.maximum(np.abs(inv.realised[g]), 1e-30)), color=PALETTE[3], lw=1.0, ls="-.", label="inverse (dB re 1 m/s per V)")
    t2.axhline(20 * math.log10(inv.gain_limit), color=PALETTE[3], lw=0.7, ls=":")
    t2.set_ylabel("inverse, dB re 1 m/s per V", color=PALETTE[3])
    band = inv.trusted_band_hz
    for ax in (ax1, ax2):
        _hz_axis(ax, fmin, fmax)
        if band:
            ax.axvspan(band[0], band[1], color=PALETTE[1], alpha=0.08, lw=0)
    lo = float(np.max(_db(stats.psd[k]))) - 140
    ax1.set_ylim(bottom=lo)
    ax2.set_ylim(bottom=float(np.max(_db(vstats.psd[kv]))) - 140)
    lines = ax1.get_lines() + t1.get_lines()
    ax1.legend(lines, [ln.get_label() for ln in lines], fontsize=8, frameon=False, loc="lower left")
    lines = ax2.get_lines() + t2.get_lines()[:1]
    ax2.legend(lines, [ln.get_label() for ln in lines], fontsize=8, frameon=False, loc="lower left")
    shade = f"trusted band {band[0]:.0f}–{band[1]:.0f} Hz shaded" if band else "no trusted band"
    ax2.set_xlabel(f"frequency (Hz); {shade}; dotted: the inverse's gain limit")
    if title:
        ax1.set_title(title, fontsize=10, loc="left")
    fig.tight_layout()
    return save(fig, path, overwrite=True)
