"""What ``analyze --out`` writes besides the JSON: the report page, its figures and the
spectrum files, each as bytes (written all together by :func:`ftsource.report.text.write_outputs`).
"""

from __future__ import annotations

from ftsource import __version__

__all__ = ["CAPTIONS", "figure_pngs", "report_content", "report_page", "spectrum_files"]

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
    """``{name: PNG bytes}`` of every figure of a :class:`~ftsource.report.plotdata.PlotData`."""
    from ftsource.report.figures import figure_png
    from ftsource.report.plotdata import draw

    return {name: figure_png(fig) for name, fig in draw(plot).items()}


def _num(v, digits=6):
    if v is None:
        return None
    return float(f"{v:.{digits}g}")


def report_content(result, pngs: dict):
    """The :class:`~ftsource.report.html.ReportContent` of a result (all text escaped later)."""
    from ftsource.report.html import ReportContent
    from ftsource.safety import safety_notes

    d = result.to_dict()
    s, inp, ins, proc = d["summary"], d["input"], d["instrument"], d["processing"]
    k = s.get("coverage_factor")
    rows = []

    def add(name, key, ukey=None, unit="nm", definition=""):
        v = s.get(key)
        if v is None:
            return
        u = s.get(ukey) if ukey else None
        rows.append((name, _num(v, 9), _num(u, 3), k if ukey == "u_centre_wavelength_nm"
                     else (1 if u is not None else None), unit, definition))

    add("centre wavelength (vacuum)", "centre_wavelength_nm", "u_centre_wavelength_nm",
        definition="line centre (narrow) or centroid (broadband), vacuum; u standard, k for "
                   "the expanded uncertainty")
    add("centre wavelength (air)", "centre_wavelength_air_nm",
        definition="the vacuum value divided by the index of the air given")
    if s.get("expanded_uncertainty_nm") is not None:
        rows.append(("expanded uncertainty", _num(s["expanded_uncertainty_nm"], 3), None, k,
                     "nm", "U = k·u (about 95 % coverage)"))
    add("frequency", "frequency_thz", unit="THz", definition="c / vacuum wavelength")
    add("FWHM", "fwhm_nm", "u_fwhm_nm", definition="full width at half maximum, instrument "
                                                   "line shape removed")
    add("FWHM upper bound", "fwhm_upper_bound_nm",
        definition="not resolved: the width is below this (about 95 %)")
    add("peak wavelength", "peak_wavelength_nm", "u_peak_wavelength_nm")
    add("centroid wavelength", "centroid_wavelength_nm", "u_centroid_wavelength_nm")
    add("coherence length", "coherence_length_mm", "u_coherence_length_mm", unit="mm",
        definition=s.get("coherence_length_definition") or "")
    add("coherence length lower bound", "coherence_length_lower_bound_mm", unit="mm")
    add("coherence length (visibility)", "coherence_length_visibility_mm",
        "u_coherence_length_visibility_mm", unit="mm",
        definition=s.get("coherence_length_visibility_definition") or "")
    add("dominant wavelength", "dominant_wavelength_nm", definition="CIE 015, from white E")
    rows.append(("resolution", _num(ins.get("resolution_per_cm"), 4), None, None, "cm⁻¹",
                 f"FWHM of the line shape, {ins.get('line_shape')}"))
    rows.append(("shortest alias-free wavelength", _num(ins.get("min_wavelength_nm"), 5), None,
                 None, "nm", "what the time sampling supports at the fastest speed"))

    lines = []
    for ln in d["lines"]:
        width = (f"{ln['fwhm_nm']:.4g}" if ln.get("fwhm_nm") is not None else
                 f"< {ln['fwhm_upper_bound_nm']:.3g}" if ln.get("fwhm_upper_bound_nm")
                 is not None else None)
        ident = ln.get("identification")
        lines.append((
            _num(ln["wavelength_nm"], 9), _num(ln.get("wavelength_air_nm"), 9),
            _num(ln.get("u_wavelength_nm"), 3), _num(ln.get("relative_intensity"), 3), width,
            None if ident is None else f"{ident['species']} ({ident['list']})",
            ln.get("flag") or "source", ln.get("aliasing"),
        ))

    budget = d.get("uncertainty") or {}
    brows = [(c["name"], _num(c.get("u_nm"), 3), c.get("dof"), c.get("type"), c.get("note"))
             for c in budget.get("components", ())]
    health = []
    if result.scan_health is not None:
        for i in result.scan_health.items:
            val = None if i.value is None else f"{i.value:.4g}" + (f" {i.unit}" if i.unit
                                                                  else "")
            health.append((i.name, val, i.verdict, i.threshold, i.source, i.advice))
    wls = [ln["wavelength_nm"] for ln in d["lines"] if ln["flag"] is None
           and ln["wavelength_nm"] is not None]
    safety = safety_notes(s["kind"], wls,
                          reference_laser=inp["opd_source"] in ("quadrature", "single"))
    settings = [
        ("ftsource version", __version__),
        ("schema", f"{d['schema']} (version {d['schema_version']})"),
        ("record", inp["record"]), ("record SHA-256", inp["sha256"]),
        ("samples", inp["n_samples"]), ("sample rate (Hz)", inp["sample_rate_hz"]),
        ("OPD from", inp["opd_source"]),
        ("reference wavelength (nm, vacuum)", inp.get("reference_wavelength_nm")),
        ("reference uncertainty (ppm)", inp.get("reference_uncertainty_ppm")),
        ("medium", inp["medium"]),
    ]
    if inp.get("air"):
        a = inp["air"]
        settings.append(("air", f"{a['temperature_c']} °C, {a['pressure_pa']} Pa, "
                                f"{a['humidity_percent']} % RH, {a['co2_ppm']} ppm CO2"))
    for key in ("apodization", "phase_correction", "n_sweeps", "n_sweeps_used", "opd_step_nm",
                "zero_fill", "channel_delay_s"):
        settings.append((key.replace("_", " "), proc.get(key)))
    for r in proc.get("rejected_sweeps", ()):
        settings.append((f"rejected sweep {r['index']}", r["reason"]))
    import numpy
    import scipy

    settings += [("numpy", numpy.__version__), ("scipy", scipy.__version__)]
    figures = tuple((n, CAPTIONS.get(n, n), png) for n, png in pngs.items())
    centre = s.get("centre_wavelength_nm")
    subtitle = (f"record {inp['record']}: {s['kind']} source"
                + (f", centre {centre:.6f} nm (vacuum)" if centre is not None else ""))
    return ReportContent(
        title=f"ftsource report: {inp['record']}",
        subtitle=subtitle,
        results_header=("figure", "value", "standard uncertainty u", "coverage factor k",
                        "unit", "definition"),
        results=tuple(rows),
        lines_header=("vacuum wavelength (nm)", "air wavelength (nm)", "u (nm)",
                      "relative intensity", "FWHM or bound (nm)", "identification", "flag",
                      "aliasing"),
        lines=tuple(lines),
        budget_header=("component", "u (nm)", "degrees of freedom", "type", "note"),
        budget=tuple(brows),
        budget_note=(f"combined u = {budget.get('combined_nm')} nm, effective degrees of "
                     f"freedom {budget.get('effective_dof')}, k = {budget.get('coverage_factor')}"
                     f", U = {budget.get('expanded_nm')} nm ({budget.get('coverage')})")
        if budget else "",
        health=tuple(health),
        warnings=tuple(d["warnings"]),
        safety=tuple(safety),
        settings=tuple(settings),
        metadata=tuple(sorted(inp.get("metadata", {}).items())),
        figures=figures,
    )


def report_page(result, pngs: dict) -> bytes:
    """``report.html`` as UTF-8 bytes."""
    from ftsource.report.html import report_html

    return report_html(report_content(result, pngs)).encode("utf-8")


def spectrum_files(result, *, full: bool = False) -> tuple[bytes, bytes]:
    """``(spectrum.ecsv, spectrum.fits)`` bytes over the stored band
    (:func:`ftsource.report.files.spectrum_band`)."""
    from ftsource.report.files import spectrum_band, spectrum_ecsv, spectrum_fits
    from ftsource.report.text import _weighting

    spec = result.spectrum
    d = result.to_dict()
    band = spectrum_band(
        spec.sigma_per_cm, spec.density, spec.noise, spec.resolution_per_cm,
        line_centres_per_cm=[ln["wavenumber_per_cm"] for ln in d["lines"]],
        min_wavelength_nm=d["instrument"]["min_wavelength_nm"],
        zero_fill=d["processing"]["zero_fill"], full=full,
    )
    s = d["summary"]
    meta = {
        "description": (
            "ftsource spectrum: vacuum wavenumber and wavelength; spectral density per unit "
            "wavenumber (arbitrary units x cm) and per unit wavelength (S_lambda = "
            "S_sigma*sigma^2/1e7, as CIE 127 uses for LEDs), each with its noise (standard "
            "uncertainty)"),
        "medium_corrected": d["input"]["medium"],
        "resolution_per_cm": d["instrument"]["resolution_per_cm"],
        "line_shape": d["instrument"]["line_shape"],
        "density_weighting": "detector-weighted",
        "broadband_figures_weighting": _weighting(s) if s["kind"] == "broadband" else None,
    }
    header = {"ORIGIN": "ftsource", "SWVERS": __version__, "MEDIUM": "vacuum",
              "RESOLUTN": d["instrument"]["resolution_per_cm"]}
    return (spectrum_ecsv(spec.sigma_per_cm, spec.density, spec.noise, band, meta=meta),
            spectrum_fits(spec.sigma_per_cm, spec.density, spec.noise, band, header=header))
