"""The figures a user came for, from the lines and spectrum of one analysis: the source's
kind, its centre wavelength with the JCGM 100 budget, its width or the bound on it, its
coherence length, its modes or its broadband figures and colour.

:func:`source_figures` runs the measuring stages in order (:mod:`ftsource.measure.classify`,
:mod:`~ftsource.measure.band`, :mod:`~ftsource.measure.budget`, :mod:`~ftsource.measure.width`)
and returns one frozen :class:`SourceFigures` holding their figures and notes.
"""

from __future__ import annotations

from dataclasses import dataclass

from ftsource.measure.classify import (
    CentreEstimate,
    ModeFigures,
    classify_source,
    mode_figures,
    revival_mode_figures,
    revival_period,
)
from ftsource.measure.values import (
    C_M_S,
    air_wavelength_nm,
    finite_or_none,
    nm_from_per_cm,
    u_nm_from_per_cm,
)

__all__ = ["SourceFigures", "source_figures", "sweep_consistency_notes",
           "lines_peak_and_centroid", "FWHM_DEFINITIONS"]


@dataclass(frozen=True)
class SourceFigures:
    """The source's figures (vacuum nm, mm; finite numbers or None when not measured).

    ``kind`` is ``"narrow"``, ``"multimode"``, ``"broadband"`` or ``"none"``. ``budget`` is
    the centre wavelength's :class:`ftsource.measure.uncertainty.Budget` (None without a
    line); ``notes`` what the data could not support, in the order the stages found it.
    """

    kind: str = "none"
    resolved: bool | None = None
    detector_weighted: bool = True
    centre_wavelength_nm: float | None = None
    centre_wavelength_air_nm: float | None = None
    u_centre_wavelength_nm: float | None = None
    expanded_uncertainty_nm: float | None = None
    coverage_factor: float | None = None
    wavenumber_per_cm: float | None = None
    frequency_thz: float | None = None
    fwhm_nm: float | None = None
    fwhm_upper_bound_nm: float | None = None
    u_fwhm_nm: float | None = None
    coherence_length_mm: float | None = None
    coherence_length_lower_bound_mm: float | None = None
    coherence_length_definition: str | None = None
    coherence_length_method: str | None = None
    coherence_length_visibility_mm: float | None = None
    u_coherence_length_mm: float | None = None
    u_coherence_length_visibility_mm: float | None = None
    coherence_length_visibility_definition: str | None = None
    half_visibility_opd_mm: float | None = None
    peak_wavelength_nm: float | None = None
    u_peak_wavelength_nm: float | None = None
    centroid_wavelength_nm: float | None = None
    u_centroid_wavelength_nm: float | None = None
    chromaticity_xy: tuple[float | None, float | None] | None = None
    dominant_wavelength_nm: float | None = None
    modes: ModeFigures | None = None
    budget: object | None = None
    notes: tuple[str, ...] = ()
    fwhm_definition: str | None = None


def source_figures(spec, source_lines, sweep_spectra, interferograms, *, options, opd_kind,
                   reference_wavelength_nm, envelope_decay: float | None,
                   field_of_view_factor: float = 1.0, sweep_fit_cache=None) -> SourceFigures:
    """Measure the source from its lines (:class:`ftsource.lines.fitting.LineFit`).

    Parameters
    ----------
    spec : ftsource.spectrum.spectrum.Spectrum
        The co-added spectrum on the vacuum wavenumber axis.
    source_lines : sequence of LineFit
        The lines not flagged as artefacts.
    sweep_spectra, interferograms : sequences
        The sweeps that made ``spec`` (scatter, visibility and revival checks).
    options : ftsource.analysis.AnalysisOptions
    opd_kind : ftsource.interferogram.scale.OpdKind
        Where the OPD scale came from (a reference laser, an encoder, an assumed speed).
    reference_wavelength_nm : float or None
    envelope_decay : float or None
        The fringe envelope's change across a sweep when no sweep holds ZPD
        (:func:`ftsource.measure.width.decay_without_zpd`, measured once by the caller).
    field_of_view_factor : float
        The Jacquinot factor applied to the axis (1: none).
    sweep_fit_cache : dict, optional
        Per-sweep fits of the main line already made (:func:`ftsource.lines.sweeps.
        sweep_line_centres`).
    """
    from ftsource.measure.budget import centre_budget
    from ftsource.measure.width import width_figures

    cls = classify_source(source_lines, revival=revival_period(interferograms, sweep_spectra))
    if cls.kind == "none":
        return SourceFigures(detector_weighted=options.response is None, notes=(
            "no line stands above the noise: check that the source reaches the detector, the "
            "detector gain and the column mapping",
        ))
    kind, main = cls.kind, cls.main
    sig0 = main.centre_per_cm
    centre, fwhm_nm, modes, band, notes = _centre_by_kind(cls, spec, source_lines,
                                                          sweep_spectra, interferograms, options)
    if kind != "broadband" and options.aperture_diameter_m and options.focal_length_m:
        notes.append(
            "the field-of-view (aperture) correction applies to extended sources that fill the "
            "field stop, not to a laser beam, whose own divergence sets a far smaller shift: "
            "it was not applied"
        )
    if kind == "narrow" and len(sweep_spectra) >= 2:
        # one rule with the broadband figures: max(u, s/√n) over the sweeps' own centres
        from ftsource.lines.sweeps import sweep_line_centres
        from ftsource.measure.uncertainty import with_sweep_scatter

        vals = [c for _, c, _ in sweep_line_centres(spec, sweep_spectra, sig0,
                                                    cache=sweep_fit_cache)]
        u_sig, dof = with_sweep_scatter(main.u_centre_per_cm, main.dof, vals)
        centre = CentreEstimate(centre.centre_nm, u_nm_from_per_cm(sig0, u_sig), dof)
    cb = centre_budget(
        centre, opd_kind=opd_kind, options=options,
        reference_wavelength_nm=reference_wavelength_nm, source_lines=source_lines,
        field_of_view_factor=field_of_view_factor, main_per_cm=sig0,
    )
    notes += cb.notes
    if kind == "narrow" and len(sweep_spectra) >= 2:
        notes += sweep_consistency_notes(spec, sweep_spectra, sig0, sweep_fit_cache)
    width = width_figures(kind, main, spec, interferograms, sweep_spectra, fwhm_nm=fwhm_nm,
                          envelope_decay=envelope_decay,
                          u_fwhm_nm=band.u_fwhm_nm if band is not None else None,
                          baseline_per_cm=band.baseline_per_cm if band is not None else 0.0)
    notes += width.notes
    corrected, budget = cb.centre_nm, cb.budget
    band_fields = lines_peak_and_centroid(source_lines) if band is None else {
        "peak_wavelength_nm": band.peak_wavelength_nm,
        "u_peak_wavelength_nm": band.u_peak_wavelength_nm,
        "centroid_wavelength_nm": band.centroid_wavelength_nm,
        "u_centroid_wavelength_nm": band.u_centroid_wavelength_nm,
        "chromaticity_xy": band.chromaticity_xy,
        "dominant_wavelength_nm": band.dominant_wavelength_nm,
    }
    fwhm_out = width.fwhm_nm
    if kind == "multimode":
        fwhm_out = modes.envelope_fwhm_nm  # the envelope of the modes (its definition below)
    band_fields["fwhm_definition"] = FWHM_DEFINITIONS[kind] if fwhm_out is not None else None
    return SourceFigures(
        kind=kind,
        resolved=width.resolved,
        detector_weighted=band.detector_weighted if band is not None
        else options.response is None,
        centre_wavelength_nm=finite_or_none(corrected),
        centre_wavelength_air_nm=finite_or_none(air_wavelength_nm(corrected, options)),
        u_centre_wavelength_nm=finite_or_none(budget.combined),
        expanded_uncertainty_nm=finite_or_none(budget.expanded),
        coverage_factor=finite_or_none(budget.coverage_factor),
        wavenumber_per_cm=finite_or_none(1e7 / corrected),
        frequency_thz=finite_or_none(C_M_S / (corrected * 1e-9) / 1e12),
        fwhm_nm=fwhm_out,
        fwhm_upper_bound_nm=width.fwhm_upper_bound_nm,
        u_fwhm_nm=width.u_fwhm_nm if kind != "multimode" else None,
        coherence_length_mm=width.coherence_length_mm,
        coherence_length_lower_bound_mm=width.coherence_length_lower_bound_mm,
        coherence_length_definition=width.coherence_length_definition,
        coherence_length_method=width.coherence_length_method,
        coherence_length_visibility_mm=width.coherence_length_visibility_mm,
        u_coherence_length_mm=width.u_coherence_length_mm,
        u_coherence_length_visibility_mm=width.u_coherence_length_visibility_mm,
        coherence_length_visibility_definition=width.coherence_length_visibility_definition,
        half_visibility_opd_mm=width.half_visibility_opd_mm,
        modes=modes,
        budget=budget,
        notes=tuple(notes),
        **band_fields,
    )


def _centre_by_kind(cls, spec, source_lines, sweep_spectra, interferograms, options):
    """The centre estimate by kind of source, before its budget: the main line's (narrow), the
    modes' (multimode, resolved or known from revivals) or the band's centroid (broadband);
    with the FWHM so far, the mode and band figures and their notes."""
    from ftsource.measure.band import band_figures

    kind, main = cls.kind, cls.main
    sig0 = main.centre_per_cm
    notes: list[str] = []
    centre = CentreEstimate(nm_from_per_cm(sig0), u_nm_from_per_cm(sig0, main.u_centre_per_cm),
                            main.dof)
    fwhm_nm, modes, band = u_nm_from_per_cm(sig0, main.fwhm_per_cm), None, None
    if kind == "multimode" and cls.comb is None:
        modes = revival_mode_figures(main, cls.revival_period_cm, cls.u_revival_period_cm)
        centre = modes.centre
        notes.append(
            f"the modes of this multimode laser are not resolved (the resolution, "
            f"{u_nm_from_per_cm(sig0, spec.resolution_per_cm):.3g} nm, is not finer than their "
            f"spacing): it was recognised from the bursts that repeat every "
            f"{cls.revival_period_cm * 10:.4g} mm of path, which give the spacing; the centre "
            "and width are those of the modes' envelope. Scan at least 1.5 times that path "
            "from zero path difference to resolve the modes"
        )
    elif kind == "multimode":
        modes = mode_figures(cls.comb, source_lines, interferograms, sweep_spectra)
        centre = modes.centre
    elif kind == "broadband":
        band = band_figures(spec, main, sweep_spectra, options.response)
        notes += band.notes
        centre = CentreEstimate(band.centroid_nm, band.u_centroid_nm, band.dof)
        fwhm_nm = band.fwhm_nm
    return centre, fwhm_nm, modes, band, notes


#: What ``summary.fwhm_nm`` is, by kind of source.
FWHM_DEFINITIONS = {
    "broadband": "CIE 127 spectral bandwidth at half intensity of the density per unit "
                 "wavelength, the instrument line shape removed to first order",
    "narrow": "FWHM of the fitted line profile (Voigt), the instrument line shape removed",
    "multimode": "FWHM of a Gaussian envelope fitted to the mode intensities against "
                 "wavenumber, in nm at the modes' centroid (first order), or of the merged "
                 "line when the modes are not resolved (a comb known from its revivals); not "
                 "a mode's width",
}


def lines_peak_and_centroid(source_lines) -> dict:
    """Peak (strongest line) and intensity-weighted centroid of a narrow or multimode
    source's lines, with their standard uncertainties
    (:func:`ftsource.measure.lineset.line_set_figures`), as summary fields."""
    from ftsource.errors import AnalysisError
    from ftsource.measure.lineset import line_set_figures

    try:
        f = line_set_figures(
            [nm_from_per_cm(ln.centre_per_cm) for ln in source_lines],
            [u_nm_from_per_cm(ln.centre_per_cm, ln.u_centre_per_cm) for ln in source_lines],
            [ln.area for ln in source_lines], [ln.u_area for ln in source_lines],
        )
    except AnalysisError:
        return {}
    return {
        "peak_wavelength_nm": finite_or_none(f.peak_nm),
        "u_peak_wavelength_nm": finite_or_none(f.u_peak_nm),
        "centroid_wavelength_nm": finite_or_none(f.centroid_nm),
        "u_centroid_wavelength_nm": finite_or_none(f.u_centroid_nm),
    }


def sweep_consistency_notes(spec, sweep_spectra, sigma_per_cm, fit_cache=None):
    """A note when the sweeps' own fits of the line at ``sigma_per_cm`` disagree more than
    their uncertainties allow (Birge ratio test, :func:`ftsource.measure.uncertainty.
    sweep_consistency`): a check, not a budget component.

    References
    ----------
    .. [1] R. T. Birge, Phys. Rev. 40, 207-227 (1932).
    """
    from ftsource.lines.sweeps import sweep_line_centres
    from ftsource.measure.uncertainty import sweep_consistency

    fits = sweep_line_centres(spec, sweep_spectra, sigma_per_cm, cache=fit_cache)
    vals = [c for _, c, _ in fits]
    us = [u for _, _, u in fits]
    if len(vals) < 2:
        return ()
    c = sweep_consistency(vals, us)
    if c.consistent:
        return ()
    return (
        f"the sweeps disagree more than their fits predict (Birge ratio "
        f"{c.birge_ratio:.2g}): something the fits do not see moves the line between "
        "sweeps (mirror tilt, drifting reference, channel delay); the centre's "
        "uncertainty includes the sweeps' scatter (standard error of their mean)",
    )
