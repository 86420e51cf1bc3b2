"""What the user reads and keeps: a text summary, and the result files written atomically.

Files go into an output directory: ``result.json`` (the contract's JSON), ``spectrum.ecsv``
(vacuum wavenumber and wavelength, density per unit wavenumber and per unit wavelength, and
their noise, over the source's band at the instrument's sampling), ``spectrum.fits`` (the same
on a linear vacuum-wavenumber WCS axis), ``report.html`` (the self-contained report) and the
report's figures as ``fig-<name>.png``. All files are first written completely to temporary
names in the same directory and only then renamed into place; if anything fails, the
temporary files are removed and any file already renamed is taken back (the previous one
restored), so a failure never leaves a half-written file or half a result. Existing files
are replaced only with ``overwrite=True``. The file names are fixed: nothing from the record
(metadata, column names) ever becomes a path.
"""

from __future__ import annotations

import json
import os
import tempfile
import unicodedata
from pathlib import Path

from ftsource._checks import one_line
from ftsource.errors import OutputError
from ftsource.report.numbers import (
    format_significant,
    format_with_uncertainty,
    round_to_uncertainty,
)

__all__ = ["result_json", "format_summary", "write_outputs", "check_outputs", "OUTPUT_FILES",
           "safety_texts", "figures_weighting",
           "output_payloads", "write_payloads"]

OUTPUT_FILES = (
    "result.json", "spectrum.ecsv", "spectrum.fits", "report.html",
    "fig-spectrum.png", "fig-interferogram.png", "fig-speed.png", "fig-record.png",
    "fig-sweeps.png", "fig-budget.png",
)
#: Prefix of the temporary files written next to the outputs (removed on success and failure).
TEMP_PREFIX = ".ftsource-tmp-"

# Characters that JSON (RFC 8259) lets through unescaped but that a terminal or an editor may
# act on: DEL and the C1 controls (Cc beyond what json escapes), formatting characters such as
# bidirectional overrides (Cf), and the line and paragraph separators (Zl, Zp).
_UNSAFE_CATEGORIES = ("Cc", "Cf", "Zl", "Zp")


def _json_escape(ch: str) -> str:
    code = ord(ch)
    if code < 0x10000:
        return f"\\u{code:04x}"
    code -= 0x10000  # a UTF-16 surrogate pair, as RFC 8259 section 7 writes such characters
    return f"\\u{0xD800 + (code >> 10):04x}\\u{0xDC00 + (code & 0x3FF):04x}"


def _escape_unsafe(text: str) -> str:
    if text.isascii() and "\x7f" not in text:
        return text
    return "".join(
        _json_escape(ch)
        if ord(ch) >= 0x7F and unicodedata.category(ch) in _UNSAFE_CATEGORIES
        else ch
        for ch in text
    )


def result_json(result) -> str:
    """The result as JSON text (deterministic: fixed key order, no timestamps).

    Text from the record (metadata values, file name) is kept, but characters that could act
    on a terminal (C1 controls, bidirectional overrides, line separators) are written as
    ``\\uXXXX`` escapes, which any JSON reader turns back into the same text.
    """
    text = json.dumps(result.to_dict(), indent=2, ensure_ascii=False, allow_nan=False) + "\n"
    return _escape_unsafe(text)


def _fmt(v, unit="", digits=6):
    if v is None:
        return "—"
    return f"{v:.{digits}f}{unit}"


def figures_weighting(figures) -> str:
    """How the broadband figures were weighted: ``response-corrected`` when the instrument
    response was divided out, otherwise ``detector-weighted`` (the measured spectrum)."""
    return "detector-weighted" if figures.detector_weighted else "response-corrected"


def _coherence_length(mm, u_mm=None) -> str:
    """A coherence length in mm, or in µm below 1 mm, to the digits its uncertainty allows."""
    if mm is not None and abs(mm) < 1.0:
        return _with_u(mm * 1e3, None if u_mm is None else u_mm * 1e3, "µm")
    return _with_u(mm, u_mm, "mm")


def _with_u(value, u, unit) -> str:
    """``value unit (u = u unit)``, rounded as JCGM 100:2008 §7.2.6 asks; a value without a
    standard uncertainty is given to 3 significant digits."""
    if value is None:
        return "—"
    if u is None or not u > 0:
        return format_significant(value, 3, unit)
    v, uu = round_to_uncertainty(value, u)
    return f"{v} {unit} (u = {uu} {unit})"


def format_summary(result) -> str:
    """A short human-readable summary of a result (one printable line per item: control
    characters from the record are shown as '?').

    Every measured number is rounded to its uncertainty (:mod:`ftsource.report.numbers`,
    JCGM 100:2008 §7.2.6): the centre wavelength to its expanded uncertainty, the other
    figures to their standard uncertainty ``u``; bounds to 2 significant digits.
    """
    s, ins, inp = result.figures, result.instrument, result.input
    out = [f"record: {inp.record}  ({inp.n_samples} samples, OPD from {inp.opd_source})"]
    out.append(f"source kind: {s.kind}")
    if s.centre_wavelength_nm is not None:
        big_u = s.expanded_uncertainty_nm
        out.append(
            f"centre wavelength (vacuum): "
            f"{format_with_uncertainty(s.centre_wavelength_nm, big_u, 'nm')} "
            f"(k = {_fmt(s.coverage_factor, '', 2)})"
        )
        if s.centre_wavelength_air_nm is not None:
            air, _ = round_to_uncertainty(s.centre_wavelength_air_nm, big_u)
            out.append(f"centre wavelength (air):    {air} nm")
        f_thz = s.frequency_thz
        if f_thz is not None and big_u is not None:
            big_u_f = f_thz * big_u / s.centre_wavelength_nm
            out.append(f"frequency: {format_with_uncertainty(f_thz, big_u_f, 'THz')}")
        else:
            out.append(f"frequency: {format_significant(f_thz, 7, 'THz')}")
    if s.kind == "broadband":
        peak = _with_u(s.peak_wavelength_nm, s.u_peak_wavelength_nm, "nm")
        centroid = _with_u(s.centroid_wavelength_nm, s.u_centroid_wavelength_nm, "nm")
        fwhm = _with_u(s.fwhm_nm, s.u_fwhm_nm, "nm")
        out.append(f"peak {peak}, centroid {centroid}, FWHM {fwhm} ({figures_weighting(s)})")
        if s.dominant_wavelength_nm is not None and s.chromaticity_xy:
            x, y = s.chromaticity_xy
            out.append(
                f"colour: x = {_fmt(x, '', 4)}, y = {_fmt(y, '', 4)}, dominant wavelength "
                f"{_fmt(s.dominant_wavelength_nm, ' nm', 1)}"
            )
    elif s.peak_wavelength_nm is not None:
        # every kind has a peak (strongest line) and a centroid (intensity-weighted mean)
        peak = _with_u(s.peak_wavelength_nm, s.u_peak_wavelength_nm, "nm")
        centroid = _with_u(s.centroid_wavelength_nm, s.u_centroid_wavelength_nm, "nm")
        out.append(f"peak {peak} (strongest line), centroid {centroid} (intensity-weighted)")
    if s.kind == "multimode" and s.fwhm_nm is not None:
        out.append(f"envelope FWHM of the modes: {_with_u(s.fwhm_nm, s.u_fwhm_nm, 'nm')}")
    elif s.kind != "broadband" and s.resolved:
        out.append(f"linewidth (FWHM): {_with_u(s.fwhm_nm, s.u_fwhm_nm, 'nm')}")
    elif s.kind != "broadband" and s.fwhm_upper_bound_nm is not None:
        bound = format_significant(s.fwhm_upper_bound_nm, 2, "nm")
        lower = format_significant(s.coherence_length_lower_bound_mm, 2, "mm")
        out.append(f"linewidth: not resolved, below {bound}; coherence length above {lower}")
    if s.coherence_length_mm is not None:
        out.append(
            "coherence length: "
            f"{_coherence_length(s.coherence_length_mm, s.u_coherence_length_mm)}"
        )
    if s.modes is not None:
        m = s.modes
        spacing = _with_u(m.spacing_nm, m.u_spacing_nm, "nm")
        spacing_f = _with_u(m.spacing_ghz, m.u_spacing_ghz, "GHz")
        u_cavity = None  # L = c/(2 Δν): the spacing's relative uncertainty carries over
        if m.cavity_optical_length_mm is not None and m.u_spacing_ghz and m.spacing_ghz:
            u_cavity = m.cavity_optical_length_mm * m.u_spacing_ghz / m.spacing_ghz
        cavity = _with_u(m.cavity_optical_length_mm, u_cavity, "mm")
        out.append(f"modes: {m.n_modes} spaced {spacing}, {spacing_f}; cavity optical "
                   f"length {cavity}")
    n_src = sum(1 for ln in result.lines if ln.flag is None)
    out.append(f"lines: {n_src} from the source, {len(result.lines) - n_src} flagged")
    for ln in result.lines:
        if ln.flag is None:
            out.append(_line_text(ln))
    out.append(
        f"resolution: {_fmt(ins.resolution_per_cm, ' cm⁻¹', 3)} (max OPD "
        f"{_fmt(ins.max_opd_mm, ' mm', 3)}); shortest alias-free wavelength "
        f"{_fmt(ins.min_wavelength_nm, ' nm', 1)}"
    )
    scan = result.scan_health
    for item in () if scan is None else scan.poor:
        value = "—" if item.value is None else f"{item.value:.3g}"
        out.append(f"health: {item.name} {value} is poor (want {item.threshold}): "
                   f"{item.advice}")
    for w in result.warnings:
        out.append(f"warning: {w}")
    for note in safety_texts(result):
        if note not in result.warnings:
            out.append(f"safety: {note}")
    return "\n".join(one_line(line) for line in out)


def _line_text(ln) -> str:
    """One source line: vacuum wavelength (to its uncertainty), relative intensity, width or
    its bound."""
    wl = _with_u(ln.wavelength_nm, ln.u_wavelength_nm, "nm")
    width = (f"FWHM {_with_u(ln.fwhm_nm, None, 'nm')}" if ln.fwhm_nm is not None else
             f"FWHM < {format_significant(ln.fwhm_upper_bound_nm, 2, 'nm')}"
             if ln.fwhm_upper_bound_nm is not None else "FWHM —")
    ri = "—" if ln.relative_intensity is None else f"{ln.relative_intensity:.3g}"
    return f"  line {wl} (vacuum), relative intensity {ri}, {width}"


def safety_texts(result) -> list[str]:
    """The safety texts fitted to the source (:func:`ftsource.safety.safety_notes`)."""
    from ftsource.safety import safety_notes

    wls = [ln.wavelength_nm for ln in result.lines
           if ln.flag is None and ln.wavelength_nm is not None]
    return safety_notes(result.figures.kind, wls,
                        reference_laser=result.input.opd_source in ("quadrature", "single"))


def _targets(out_dir, names=OUTPUT_FILES) -> tuple[Path, list[Path]]:
    if not str(out_dir).strip():
        raise OutputError("--out: the directory name is empty")
    out = Path(out_dir)
    return out, [out / name for name in names]


def check_outputs(out_dir, *, overwrite: bool = False, names=OUTPUT_FILES) -> None:
    """Refuse early what :func:`write_outputs` would refuse, before any work is done.

    Raises
    ------
    OutputError
        ``out_dir`` exists and is not a directory; an output name there is taken by a
        directory; or an output file (or a link under its name) exists and ``overwrite`` is
        False.
    """
    out, targets = _targets(out_dir, names)
    if os.path.lexists(out) and not out.is_dir():
        raise OutputError(f"--out {out}: exists and is not a directory")
    for p in targets:
        if p.is_dir() and not p.is_symlink():
            raise OutputError(
                f"--out {out}: {p} is a directory; remove it or choose another --out"
            )
    if not overwrite:
        existing = [str(p) for p in targets if os.path.lexists(p)]
        if existing:
            raise OutputError(
                f"--out {out}: {', '.join(existing)} exists already; use --overwrite to replace"
            )


def _write_temp(folder: Path, data: bytes) -> str:
    """Write ``data`` completely to a new temporary file in ``folder``; return its path."""
    fd, tmp = tempfile.mkstemp(prefix=TEMP_PREFIX, dir=folder)
    try:
        with os.fdopen(fd, "wb") as fh:
            fh.write(data)
            fh.flush()
            os.fsync(fh.fileno())
        os.chmod(tmp, 0o644)
    except BaseException:
        _remove(tmp)
        raise
    return tmp


def _remove(path) -> None:
    try:
        os.unlink(path)
    except OSError:
        pass


def _backup(target: Path) -> str | None:
    """A hard link to (or a copy of) an existing output, put back if the write fails."""
    if not os.path.lexists(target):
        return None
    fd, tmp = tempfile.mkstemp(prefix=TEMP_PREFIX, dir=target.parent)
    os.close(fd)
    try:
        os.unlink(tmp)
        os.link(target, tmp, follow_symlinks=False)
    except OSError:  # no hard links on this file system (e.g. FAT): copy instead
        import shutil

        shutil.copy2(target, tmp, follow_symlinks=False)
    return tmp


def _place(tmp: str, target: Path, out: Path, *, overwrite: bool) -> None:
    """Move the finished temporary file ``tmp`` to ``target``.

    Without ``overwrite`` a hard link is made instead of a rename, because a link cannot
    replace a file that another program wrote there while the result was computed.
    """
    if overwrite:
        os.replace(tmp, target)
        return
    try:
        os.link(tmp, target)
    except FileExistsError:
        raise OutputError(
            f"--out {out}: {target} exists already; use --overwrite to replace"
        ) from None
    except OSError:  # no hard links on this file system: check, then rename
        if os.path.lexists(target):
            raise OutputError(
                f"--out {out}: {target} exists already; use --overwrite to replace"
            ) from None
        os.replace(tmp, target)
        return
    os.unlink(tmp)


def write_outputs(result, out_dir, *, overwrite: bool = False,
                  full_spectrum: bool = False) -> list[Path]:
    """Write every file of :data:`OUTPUT_FILES` into ``out_dir`` (created if missing) and
    return their paths.

    ``full_spectrum=True`` stores every point of the zero-filled spectrum over the detector
    band instead of the source's band at the instrument's own sampling.

    All or nothing: the files are written completely to temporary files in ``out_dir``
    first and only then renamed into place. If anything fails, the temporary files are
    removed, a file already renamed is taken back (the one it replaced is restored), and
    directories made here are removed again.

    Raises
    ------
    OutputError
        ``out_dir`` is not a directory, a file exists and ``overwrite`` is False, or a write
        fails. Nothing is left written unless every file could be.
    """
    check_outputs(out_dir, overwrite=overwrite)
    return write_payloads(output_payloads(result, full_spectrum=full_spectrum), out_dir,
                          overwrite=overwrite)


def output_payloads(result, *, full_spectrum: bool = False) -> dict[str, bytes]:
    """Every output file's bytes by name, in the order of :data:`OUTPUT_FILES` (what
    :func:`write_outputs` writes; a batch worker returns them to the process that writes)."""
    from ftsource.measure.plotdata import PlotData
    from ftsource.report.page import figure_pngs, report_page, spectrum_files

    ecsv, fits_bytes = spectrum_files(result, full=full_spectrum)
    pngs = figure_pngs(result.plot if result.plot is not None else PlotData())
    out = {
        "result.json": result_json(result).encode(),
        "spectrum.ecsv": ecsv,
        "spectrum.fits": fits_bytes,
        "report.html": report_page(result, pngs),
    }
    out.update({f"fig-{name}.png": png for name, png in pngs.items()})
    return {name: out[name] for name in OUTPUT_FILES}


def write_payloads(files: dict, out_dir, *, overwrite: bool = False) -> list[Path]:
    """Write ``{name: bytes}`` (e.g. :func:`output_payloads`) into ``out_dir``, all or
    nothing, as :func:`write_outputs` describes, and return the paths. The names are fixed by
    the caller, never taken from a record."""
    out, targets = _targets(out_dir, tuple(files))
    check_outputs(out, overwrite=overwrite, names=tuple(files))
    payloads = [files[p.name] for p in targets]
    created: list[Path] = []
    temps: list[str] = []
    backups: dict[Path, str | None] = {}
    placed: list[Path] = []
    try:
        missing = [d for d in (out, *out.parents) if not os.path.lexists(d)]
        for d in reversed(missing):
            d.mkdir()
            created.append(d)
        for data in payloads:
            temps.append(_write_temp(out, data))
        for p, tmp in zip(targets, temps, strict=True):
            if overwrite:
                backups[p] = _backup(p)
            _place(tmp, p, out, overwrite=overwrite)
            placed.append(p)
    except BaseException as e:
        for p in placed:  # take back what was placed; put back what it replaced
            old = backups.pop(p, None)
            if old:
                try:
                    os.replace(old, p)
                except OSError:
                    pass
            else:
                _remove(p)
        for tmp in temps:
            _remove(tmp)
        for old in backups.values():
            if old:
                _remove(old)
        for d in reversed(created):
            try:
                d.rmdir()
            except OSError:
                pass
        if isinstance(e, OSError) and not isinstance(e, OutputError):
            raise OutputError(f"--out {out}: cannot write ({e.strerror or e})") from None
        raise
    for old in backups.values():
        if old:
            _remove(old)
    return targets
