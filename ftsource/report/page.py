"""What ``analyze --out`` writes besides the JSON: the report page, its figures and the
spectrum files, each as bytes (written all together by :func:`ftsource.report.text.write_outputs`).
"""

from __future__ import annotations

import math

from ftsource import __version__

__all__ = ["CAPTIONS", "figure_pngs", "redraw", "report_content", "report_page",
           "spectrum_files"]

CAPTIONS = {
    "spectrum": "Spectrum against vacuum wavelength, normalised to its peak; triangles mark the "
                "lines (hollow: flagged as not from the source); dashed: the instrument line "
                "shape at the main line.",
    "interferogram": "Interferogram around zero path difference (DC removed) with its "
                     "visibility envelope (|analytic signal|).",
    "speed": "Mirror speed recovered from the reference against time; shaded: sweeps (darker: "
             "used), dotted: turnarounds.",
    "record": "The raw record, decimated to the minimum and maximum of each time bin.",
    "sweeps": "Main line's centre wavelength per sweep (error bars ±1 standard uncertainty) "
              "against the co-added result (band).",
    "budget": "Standard uncertainty of each component of the centre wavelength's budget "
              "(JCGM 100).",
}


def figure_pngs(plot) -> dict:
    """``{name: PNG bytes}`` of every figure of a :class:`~ftsource.measure.plotdata.PlotData`."""
    from ftsource.report.figures import draw, figure_png

    return {name: figure_png(fig) for name, fig in draw(plot).items()}


def _num(v, digits=6):
    if v is None:
        return None
    return float(f"{v:.{digits}g}")


def _dof(v):
    """Degrees of freedom for the table (None for infinite)."""
    return None if v is None or not math.isfinite(v) else _num(v, 3)


def _results_rows(f, ins) -> list:
    """The results table: ``(figure, value, u, k, unit, definition)`` rows."""
    k = f.coverage_factor
    rows = []

    def add(name, value, u=None, unit="nm", definition="", k_here=None):
        if value is None:
            return
        rows.append((name, _num(value, 9), _num(u, 3),
                     k_here if k_here is not None else (1 if u is not None else None),
                     unit, definition))

    add("centre wavelength (vacuum)", f.centre_wavelength_nm, f.u_centre_wavelength_nm,
        definition="line centre (narrow) or centroid (broadband), vacuum; u standard, k for "
                   "the expanded uncertainty", k_here=k)
    add("centre wavelength (air)", f.centre_wavelength_air_nm,
        definition="the vacuum value divided by the index of the air given")
    if f.expanded_uncertainty_nm is not None:
        rows.append(("expanded uncertainty", _num(f.expanded_uncertainty_nm, 3), None, k,
                     "nm", "U = k·u (about 95 % coverage)"))
    add("frequency", f.frequency_thz, unit="THz", definition="c / vacuum wavelength")
    add("FWHM", f.fwhm_nm, f.u_fwhm_nm,
        definition=f.fwhm_definition
        or "full width at half maximum, instrument line shape removed")
    add("FWHM upper bound", f.fwhm_upper_bound_nm,
        definition="not resolved: the width is below this (about 95 %)")
    add("peak wavelength", f.peak_wavelength_nm, f.u_peak_wavelength_nm)
    add("centroid wavelength", f.centroid_wavelength_nm, f.u_centroid_wavelength_nm)
    add("coherence length", f.coherence_length_mm, f.u_coherence_length_mm, unit="mm",
        definition=f.coherence_length_definition or "")
    add("coherence length lower bound", f.coherence_length_lower_bound_mm, unit="mm")
    add("coherence length (visibility)", f.coherence_length_visibility_mm,
        f.u_coherence_length_visibility_mm, unit="mm",
        definition=f.coherence_length_visibility_definition or "")
    add("dominant wavelength", f.dominant_wavelength_nm, definition="CIE 015, from white E")
    if f.modes is not None:
        add("mode spacing", f.modes.spacing_nm, f.modes.u_spacing_nm,
            definition=f"{f.modes.n_modes} modes")
    rows.append(("resolution", _num(ins.resolution_per_cm, 4), None, None, "cm⁻¹",
                 f"FWHM of the line shape, {ins.line_shape}"))
    rows.append(("shortest alias-free wavelength", _num(ins.min_wavelength_nm, 5), None,
                 None, "nm", "what the time sampling supports at the fastest speed"))
    return rows


def _line_rows(lines) -> list:
    rows = []
    for ln in lines:
        width = (f"{ln.fwhm_nm:.4g}" if ln.fwhm_nm is not None else
                 f"< {ln.fwhm_upper_bound_nm:.3g}" if ln.fwhm_upper_bound_nm is not None
                 else None)
        ident = ln.identification
        k = None if ln.coverage_factor is None else _num(ln.coverage_factor, 3)
        rows.append((
            _num(ln.wavelength_nm, 9), _num(ln.wavelength_air_nm, 9),
            _num(ln.u_wavelength_nm, 3), _num(ln.expanded_uncertainty_nm, 3), k,
            _num(ln.relative_intensity, 3), width,
            None if ident is None else f"{ident.species} ({ident.list_name})",
            ln.flag or "source", ln.aliasing,
        ))
    return rows


def _settings(result) -> list:
    import numpy
    import scipy

    from ftsource.result import SCHEMA_ID, SCHEMA_VERSION

    inp, proc = result.input, result.processing
    settings = [
        ("ftsource version", __version__),
        ("schema", f"{SCHEMA_ID} (version {SCHEMA_VERSION})"),
        ("record", inp.record), ("record SHA-256", inp.sha256),
        ("samples", inp.n_samples), ("sample rate (Hz)", inp.sample_rate_hz),
        ("OPD from", inp.opd_source),
        ("reference wavelength (nm, vacuum)", inp.reference_wavelength_nm),
        ("reference uncertainty (ppm)", inp.reference_uncertainty_ppm),
        ("medium", inp.medium),
    ]
    if inp.air is not None:
        a = inp.air
        settings.append(("air", f"{a.temperature_c} °C, {a.pressure_pa} Pa, "
                                f"{a.humidity_percent} % RH, {a.co2_ppm} ppm CO2"))
    for key in ("apodization", "phase_correction", "n_sweeps", "n_sweeps_used", "opd_step_nm",
                "zero_fill", "channel_delay_s"):
        settings.append((key.replace("_", " "), getattr(proc, key)))
    for r in proc.rejected_sweeps:
        settings.append((f"rejected sweep {r.index}", r.reason))
    settings += [("numpy", numpy.__version__), ("scipy", scipy.__version__)]
    return settings


def report_content(result, pngs: dict):
    """The :class:`~ftsource.report.html.ReportContent` of a result (all text escaped later)."""
    from ftsource.report.html import ReportContent
    from ftsource.report.text import safety_texts

    f, inp = result.figures, result.input
    budget = f.budget
    brows = [] if budget is None else [
        (c.name, _num(c.u, 3), _dof(c.dof), c.kind, c.note) for c in budget.components
    ]
    budget_note = "" if budget is None else (
        f"combined u = {_num(budget.combined, 3)} nm, effective degrees of freedom "
        f"{_dof(budget.effective_dof) or 'infinite'}, k = {_num(budget.coverage_factor, 3)}, "
        f"U = {_num(budget.expanded, 3)} nm (coverage {budget.coverage:g})"
    )
    health = []
    for i in () if result.scan_health is None else result.scan_health.items:
        val = None if i.value is None else f"{i.value:.4g}" + (f" {i.unit}" if i.unit else "")
        health.append((i.name, val, i.verdict, i.threshold, i.source, i.advice))
    centre = f.centre_wavelength_nm
    subtitle = (f"record {inp.record}: {f.kind} source"
                + (f", centre {centre:.6f} nm (vacuum)" if centre is not None else ""))
    return ReportContent(
        title=f"ftsource report: {inp.record}",
        subtitle=subtitle,
        results_header=("figure", "value", "standard uncertainty u", "coverage factor k",
                        "unit", "definition"),
        results=tuple(_results_rows(f, result.instrument)),
        lines_header=("vacuum wavelength (nm)", "air wavelength (nm)", "u (nm)", "U (nm)", "k",
                      "relative intensity", "FWHM or bound (nm)", "identification", "flag",
                      "aliasing"),
        lines=tuple(_line_rows(result.lines)),
        budget_header=("component", "u (nm)", "degrees of freedom", "type", "note"),
        budget=tuple(brows),
        budget_note=budget_note,
        health=tuple(health),
        warnings=tuple(result.warnings),
        safety=tuple(safety_texts(result)),
        settings=tuple(_settings(result)),
        metadata=tuple(sorted(inp.metadata)),
        figures=tuple((n, CAPTIONS.get(n, n), png) for n, png in pngs.items()),
    )


def report_page(result, pngs: dict) -> bytes:
    """``report.html`` as UTF-8 bytes."""
    from ftsource.report.html import report_html

    return report_html(report_content(result, pngs)).encode("utf-8")


def spectrum_files(result, *, full: bool = False) -> tuple[bytes, bytes]:
    """``(spectrum.ecsv, spectrum.fits)`` bytes over the stored band
    (:func:`ftsource.measure.plotdata.spectrum_band`)."""
    from ftsource.report.files import spectrum_band, spectrum_ecsv, spectrum_fits
    from ftsource.report.text import figures_weighting

    spec, ins, f = result.spectrum, result.instrument, result.figures
    band = spectrum_band(
        spec.sigma_per_cm, spec.density, spec.noise, spec.resolution_per_cm,
        line_centres_per_cm=[ln.wavenumber_per_cm for ln in result.lines
                             if ln.wavenumber_per_cm is not None],
        min_wavelength_nm=ins.min_wavelength_nm, zero_fill=result.processing.zero_fill,
        full=full,
    )
    meta = {
        "description": (
            "ftsource spectrum: vacuum wavenumber and wavelength; spectral density per unit "
            "wavenumber (arbitrary units x cm) and per unit wavelength (S_lambda = "
            "S_sigma*sigma^2/1e7, as CIE 127 uses for LEDs), each with its noise (standard "
            "uncertainty)"),
        "medium_corrected": result.input.medium,
        "resolution_per_cm": ins.resolution_per_cm,
        "line_shape": ins.line_shape,
        # the columns are the measured spectrum: no instrument response is divided out
        "density_weighting": "detector-weighted",
        "broadband_figures_weighting": figures_weighting(f) if f.kind == "broadband" else None,
    }
    header = {"ORIGIN": "ftsource", "SWVERS": __version__, "MEDIUM": "vacuum",
              "RESOLUTN": ins.resolution_per_cm}
    return (spectrum_ecsv(spec.sigma_per_cm, spec.density, spec.noise, band, meta=meta),
            spectrum_fits(spec.sigma_per_cm, spec.density, spec.noise, band, header=header))


def redraw(result_path, out_dir=None, *, overwrite: bool = False) -> list:
    """Redraw the figures of a saved ``result.json`` from its ``plot`` object and write them
    as ``fig-<name>.png`` into ``out_dir`` (default: the result's folder), all or nothing
    (:func:`ftsource.report.text.write_payloads`). Returns the paths written.

    Raises
    ------
    RecordError
        The file cannot be read, is not a result JSON, or holds no drawable ``plot`` object.
    OutputError
        A figure exists and ``overwrite`` is False, or a write fails.
    """
    import json
    from pathlib import Path

    from ftsource._checks import one_line
    from ftsource.errors import RecordError
    from ftsource.measure.plotdata import PlotData
    from ftsource.report.text import write_payloads

    src = Path(result_path)
    try:
        d = json.loads(src.read_text(encoding="utf-8"))
    except OSError as e:
        raise RecordError(f"{src}: cannot be read ({e.strerror or e})") from None
    except (UnicodeDecodeError, json.JSONDecodeError) as e:
        raise RecordError(f"{src}: is not a result.json ({one_line(e, 120)})") from None
    plot = d.get("plot") if isinstance(d, dict) else None
    if not isinstance(plot, dict):
        raise RecordError(
            f"{src}: holds no 'plot' object (it was not written by 'ftsource analyze --out' of "
            "this version); analyse the record again"
        )
    try:
        files = {f"fig-{n}.png": png for n, png in figure_pngs(PlotData.from_dict(plot)).items()}
    except (TypeError, ValueError) as e:
        raise RecordError(f"{src}: its 'plot' object cannot be drawn ({one_line(e, 120)})") \
            from None
    folder = Path(out_dir) if out_dir is not None else src.parent
    return write_payloads(files, folder, overwrite=overwrite)
