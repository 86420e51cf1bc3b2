"""What the user reads and keeps: a text summary, and the result files written atomically.

Files go into an output directory: ``result.json`` (the contract's JSON) and
``spectrum.ecsv`` (vacuum wavenumber and wavelength, density per unit wavenumber and per unit
wavelength, and their noise). Each file is written to a temporary name in the same directory
and renamed into place, so a failure never leaves a half-written file; existing files are
replaced only with ``overwrite=True``.
"""

from __future__ import annotations

import json
import os
import tempfile
from pathlib import Path

import numpy as np

from ftsource.errors import OutputError

__all__ = ["result_json", "format_summary", "write_outputs", "OUTPUT_FILES"]

OUTPUT_FILES = ("result.json", "spectrum.ecsv")


def result_json(result) -> str:
    """The result as JSON text (deterministic: fixed key order, no timestamps)."""
    return json.dumps(result.to_dict(), indent=2, ensure_ascii=False, allow_nan=False) + "\n"


def _fmt(v, unit="", digits=6):
    if v is None:
        return "—"
    return f"{v:.{digits}f}{unit}"


def format_summary(result) -> str:
    """A short human-readable summary of a result."""
    d = result.to_dict()
    s, ins, inp = d["summary"], d["instrument"], d["input"]
    out = [f"record: {inp['record']}  ({inp['n_samples']} samples, OPD from {inp['opd_source']})"]
    out.append(f"source kind: {s['kind']}")
    if s["centre_wavelength_nm"] is not None:
        out.append(
            f"centre wavelength (vacuum): {_fmt(s['centre_wavelength_nm'], ' nm', 5)}"
            f"  ± {_fmt(s['expanded_uncertainty_nm'], ' nm', 5)} (k = {s['coverage_factor']:.2f})"
        )
        if s["centre_wavelength_air_nm"] is not None:
            out.append(f"centre wavelength (air):    {_fmt(s['centre_wavelength_air_nm'], ' nm', 5)}")
        out.append(f"frequency: {_fmt(s['frequency_thz'], ' THz', 4)}")
    if s["kind"] == "broadband":
        out.append(
            f"peak {_fmt(s['peak_wavelength_nm'], ' nm', 2)}, centroid "
            f"{_fmt(s['centroid_wavelength_nm'], ' nm', 2)}, FWHM {_fmt(s['fwhm_nm'], ' nm', 2)}"
        )
        if s["dominant_wavelength_nm"] is not None:
            x, y = s["chromaticity_xy"]
            out.append(
                f"colour: x = {x:.4f}, y = {y:.4f}, dominant wavelength "
                f"{s['dominant_wavelength_nm']:.1f} nm"
            )
    elif s["resolved"]:
        out.append(f"linewidth (FWHM): {_fmt(s['fwhm_nm'], ' nm', 4)}")
    elif s["fwhm_upper_bound_nm"] is not None:
        out.append(
            f"linewidth: not resolved, below {_fmt(s['fwhm_upper_bound_nm'], ' nm', 4)}; "
            f"coherence length above {_fmt(s['coherence_length_lower_bound_mm'], ' mm', 2)}"
        )
    if s["coherence_length_mm"] is not None:
        out.append(f"coherence length: {_fmt(s['coherence_length_mm'], ' mm', 3)}")
    if s["modes"]:
        m = s["modes"]
        out.append(
            f"modes: {m['n_modes']} spaced {_fmt(m['spacing_nm'], ' nm', 4)} "
            f"({_fmt(m['spacing_ghz'], ' GHz', 2)}), cavity optical length "
            f"{_fmt(m['cavity_optical_length_mm'], ' mm', 3)}"
        )
    n_src = sum(1 for ln in d["lines"] if ln["flag"] is None)
    out.append(f"lines: {n_src} from the source, {len(d['lines']) - n_src} flagged")
    out.append(
        f"resolution: {_fmt(ins['resolution_per_cm'], ' cm⁻¹', 3)} (max OPD "
        f"{_fmt(ins['max_opd_mm'], ' mm', 3)}); shortest alias-free wavelength "
        f"{_fmt(ins['min_wavelength_nm'], ' nm', 1)}"
    )
    for w in d["warnings"]:
        out.append(f"warning: {w}")
    out.append(f"safety: {d['safety']}")
    return "\n".join(out)


def _atomic_write_bytes(path: Path, data: bytes) -> None:
    fd, tmp = tempfile.mkstemp(prefix=".tmp-", dir=path.parent)
    try:
        with os.fdopen(fd, "wb") as fh:
            fh.write(data)
        os.replace(tmp, path)
    except BaseException:
        if os.path.exists(tmp):
            os.unlink(tmp)
        raise


def _spectrum_ecsv(result) -> bytes:
    import io

    from astropy.table import Table

    spec = result.spectrum
    sig = spec.sigma_per_cm
    lo, hi = 1e7 / 3300.0, 1e7 / max(result.instrument["min_wavelength_nm"] or 200.0, 200.0)
    m = (sig >= lo) & (sig <= hi)
    t = Table()
    t["wavenumber"] = sig[m]
    t["wavenumber"].unit = "1/cm"
    t["wavelength"] = 1e7 / sig[m]
    t["wavelength"].unit = "nm"
    t["density_per_wavenumber"] = spec.density[m]
    t["noise_per_wavenumber"] = spec.noise[m]
    t["density_per_wavelength"] = spec.density_per_nm[m]
    t["noise_per_wavelength"] = spec.noise_per_nm[m]
    t.meta["description"] = (
        "ftsource spectrum: vacuum wavenumber and wavelength; spectral density per unit "
        "wavenumber (arbitrary units x cm) and per unit wavelength (S_lambda = S_sigma*sigma^2/1e7,"
        " as CIE 127 uses for LEDs), each with its noise (standard uncertainty)"
    )
    t.meta["medium_corrected"] = result.input["medium"]
    t.meta["resolution_per_cm"] = result.instrument["resolution_per_cm"]
    t.meta["line_shape"] = result.instrument["line_shape"]
    buf = io.StringIO()
    with np.printoptions(legacy=False):
        t.write(buf, format="ascii.ecsv")
    return buf.getvalue().encode()


def write_outputs(result, out_dir, *, overwrite: bool = False) -> list[Path]:
    """Write ``result.json`` and ``spectrum.ecsv`` into ``out_dir`` (created if missing).

    Raises
    ------
    OutputError
        ``out_dir`` is not a directory, a file exists and ``overwrite`` is False, or a write
        fails. Nothing is written unless every file can be.
    """
    out = Path(out_dir)
    if out.exists() and not out.is_dir():
        raise OutputError(f"--out {out}: exists and is not a directory")
    targets = [out / name for name in OUTPUT_FILES]
    if not overwrite:
        existing = [str(p) for p in targets if p.exists()]
        if existing:
            raise OutputError(
                f"--out {out}: {', '.join(existing)} exists already; use --overwrite to replace"
            )
    payloads = [result_json(result).encode(), _spectrum_ecsv(result)]
    try:
        out.mkdir(parents=True, exist_ok=True)
        for p, data in zip(targets, payloads):
            _atomic_write_bytes(p, data)
    except OSError as e:
        raise OutputError(f"--out {out}: cannot write ({e.strerror or e})") from None
    return targets
