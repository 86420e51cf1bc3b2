"""The figures of a broad band (LED, lamp, SLED) from the co-added spectrum: peak, centroid and
FWHM with their uncertainties, corrected for the instrument response when one is given and
for the instrument line shape to first order, with its chromaticity.

:func:`band_figures` is the stage; it returns a :class:`BandFigures` with its notes.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from ftsource.measure.values import finite_or_none, u_nm_from_per_cm

__all__ = ["BandFigures", "band_figures", "band_baseline", "sweep_scatter",
           "line_shape_corrected"]

#: Degrees of freedom given to the Monte Carlo centroid uncertainty when the sweeps' scatter
#: does not replace it (many noisy copies: effectively a Type B input, common practice).
MONTE_CARLO_DOF = 50.0


@dataclass(frozen=True)
class BandFigures:
    """A broad band's figures (vacuum nm; finite numbers or None) and the notes on them.

    ``centroid_nm``, ``u_centroid_nm`` and ``dof`` are those of the centre estimate (before
    the budget); ``fwhm_nm`` is the line-shape-corrected FWHM (None when not finite).
    """

    detector_weighted: bool
    peak_wavelength_nm: float | None
    u_peak_wavelength_nm: float | None
    centroid_wavelength_nm: float | None
    u_centroid_wavelength_nm: float | None
    fwhm_nm: float
    u_fwhm_nm: float | None
    chromaticity_xy: tuple[float | None, float | None] | None
    dominant_wavelength_nm: float | None
    centroid_nm: float
    u_centroid_nm: float
    dof: float
    notes: tuple[str, ...] = ()
    #: Constant baseline of S_σ removed from the band (0.0 when none was significant, or when
    #: the response was divided out): the coherence length removes it too.
    baseline_per_cm: float = 0.0


def band_figures(spec, main, sweep_spectra, response) -> BandFigures:
    """Peak, centroid, FWHM and colour of the band around the line fit ``main``.

    Parameters
    ----------
    spec : ftsource.spectrum.spectrum.Spectrum
        The co-added spectrum on the vacuum wavenumber axis.
    main : ftsource.lines.fitting.LineFit
        The band's fit (its centre and FWHM set the window, ±4 FWHM).
    sweep_spectra : sequence of ftsource.spectrum.spectrum.SweepSpectrum
        For the figures' scatter between sweeps (:func:`sweep_scatter`).
    response : ftsource.calibrate.response.ResponseCurve or None
        The instrument response; the band is corrected whole or not at all
        (:func:`ftsource.calibrate.response.correct_band`).

    References
    ----------
    .. [1] CIE 127:2007 (peak, centroid, FWHM of LEDs); JCGM 100:2008 §4.2 (Type A).
    """
    from ftsource.measure.broadband import band_edge_uncertainty, broadband_metrics
    from ftsource.spectrum.spectrum import noise_correlation, reconvolve

    notes: list[str] = []
    sig0 = main.centre_per_cm
    lo = max(sig0 - 4 * main.fwhm_per_cm, 0.0)
    hi = sig0 + 4 * main.fwhm_per_cm
    m = (spec.sigma_per_cm > lo) & (spec.sigma_per_cm < hi)
    sig_m = spec.sigma_per_cm[m]
    dens_s, noise_s = spec.density[m], spec.noise[m]
    twice_s = reconvolve(spec, (lo, hi))[m]
    weighted = True
    if response is not None:
        from ftsource.calibrate.response import correct_band

        dens_c, noise_c, applied, msgs = correct_band(sig_m, dens_s, noise_s, response)
        notes.extend(dict.fromkeys(msgs))
        if applied:
            dens_s, noise_s, weighted = dens_c, noise_c, False
            twice_s = twice_s / response.at(sig_m)
    ok = np.isfinite(dens_s) & np.isfinite(twice_s)
    wl = 1e7 / sig_m[ok]
    dens = dens_s[ok] * sig_m[ok] ** 2 / 1e7
    noise = noise_s[ok] * sig_m[ok] ** 2 / 1e7
    twice = twice_s[ok] * sig_m[ok] ** 2 / 1e7
    bb = broadband_metrics(wl, dens, noise, warn=False)
    base, base_notes = band_baseline(sig_m[ok], dens_s[ok], noise_s[ok], bb,
                                     correlation=noise_correlation(spec))
    if base:
        notes.extend(base_notes)
        dens = (dens_s[ok] - base) * sig_m[ok] ** 2 / 1e7
        twice = (twice_s[ok] - base) * sig_m[ok] ** 2 / 1e7
        bb = broadband_metrics(wl, dens, noise, warn=False)
    bb2 = broadband_metrics(wl, twice, None, n_monte_carlo=0, warn=False)
    notes.extend(bb.warnings)
    notes.extend(bb2.warnings)
    (peak_nm, u_peak, fwhm_nm, u_fwhm), shape_notes = line_shape_corrected(
        bb, bb2, u_nm_from_per_cm(sig0, spec.resolution_per_cm)
    )
    notes.extend(shape_notes)
    # the band-edge rule tested against its own choice (docs/measurements.md)
    u_edge = band_edge_uncertainty(wl, dens)
    u_centroid = float(np.hypot(bb.u_centroid_nm, u_edge if np.isfinite(u_edge) else 0.0))
    dof = MONTE_CARLO_DOF
    scatter = sweep_scatter(spec, sweep_spectra, m, ok, None if weighted else response)
    if scatter is not None:
        # the figures' scatter between sweeps sees what the noise model leaves out (the
        # zero-filled points' correlation, phase-correction noise, drift): the larger of
        # the two statistical estimates is kept, with the scatter's degrees of freedom
        # when it is the larger (docs/measurements.md)
        (u_pk, u_ct, u_fw), n_used = scatter
        ls_peak = math.sqrt(max(u_peak**2 - bb.u_peak_nm**2, 0.0)) if np.isfinite(u_peak) \
            else 0.0
        ls_fwhm = math.sqrt(max(u_fwhm**2 - bb.u_fwhm_nm**2, 0.0)) if np.isfinite(u_fwhm) \
            else 0.0
        u_peak = float(np.hypot(np.fmax(bb.u_peak_nm, u_pk), ls_peak))
        u_fwhm = float(np.hypot(np.fmax(bb.u_fwhm_nm, u_fw), ls_fwhm))
        if not (u_centroid >= u_ct):
            u_centroid, dof = u_ct, float(n_used - 1)
    if not weighted:
        u_resp, resp_notes = _response_shape_terms(sig_m[ok], dens_s[ok], response, main)
        notes.extend(resp_notes)
        u_peak, u_centroid, u_fwhm = (float(np.hypot(a, b)) for a, b in
                                      zip((u_peak, u_centroid, u_fwhm), u_resp, strict=True))
    xy, dominant = _colour(wl, dens, bb.band_nm)
    if response is None:
        notes.append(
            "broadband figures are detector-weighted: no instrument response correction "
            "was applied (the detector and beamsplitter weight the spectrum; a silicon "
            "photodiode alone moves an 850 nm LED's centroid by about a quarter nm)"
        )
    return BandFigures(
        detector_weighted=weighted,
        peak_wavelength_nm=finite_or_none(peak_nm),
        u_peak_wavelength_nm=finite_or_none(u_peak),
        centroid_wavelength_nm=finite_or_none(bb.centroid_nm),
        u_centroid_wavelength_nm=finite_or_none(u_centroid),
        fwhm_nm=fwhm_nm,
        u_fwhm_nm=finite_or_none(u_fwhm),
        chromaticity_xy=xy,
        dominant_wavelength_nm=dominant,
        centroid_nm=bb.centroid_nm,
        u_centroid_nm=u_centroid,
        dof=dof,
        notes=tuple(notes),
        baseline_per_cm=float(base) if weighted else 0.0,
    )


def _response_shape_terms(sigma, density_corrected, response, main):
    """The figures' standard uncertainties from the response's correlated shape error
    (:func:`ftsource.calibrate.response.response_shape_uncertainty`), with a note when they
    cannot be evaluated (then NaN)."""
    from ftsource.calibrate.response import response_shape_uncertainty
    from ftsource.errors import AnalysisError
    from ftsource.measure.broadband import broadband_metrics

    def figures(sg, d):  # notes on the perturbed copies are not the data's
        b = broadband_metrics(1e7 / sg, d * sg**2 / 1e7, None, n_monte_carlo=0, warn=False)
        return b.peak_nm, b.centroid_nm, b.fwhm_nm

    try:
        return response_shape_uncertainty(
            sigma, density_corrected, response, figures,
            centre_per_cm=main.centre_per_cm, width_per_cm=main.fwhm_per_cm,
        ), ()
    except AnalysisError:
        return np.full(3, np.nan), (
            "the band's figures could not be recomputed with the instrument response "
            "moved by its uncertainty, so their uncertainties are not given; check the "
            "response file's u_relative",
        )


def band_baseline(sigma, density, noise, bb, *, correlation: float = 1.0):
    """The constant baseline of S_σ to remove from a broad band (0.0 if none), with its note.

    Estimated on the window's points beyond the band's 1 % edges widened by one FWHM (where
    even a skewed LED's tail has fallen far below 1 %); removed only when it differs from
    zero by more than three standard uncertainties
    (:func:`ftsource.measure.broadband.flank_baseline`), the points' ``correlation``
    (:func:`ftsource.spectrum.spectrum.noise_correlation`) counted: taken as independent,
    the zero-filled, apodized points made noise look like a baseline (470/25 nm LED behind
    6 mm of N-BK7, noise 1.5 %: 0.1 % of the peak removed, coherence length 7 % long).
    """
    from ftsource.measure.broadband import flank_baseline

    lo_nm, hi_nm = bb.band_nm
    pad = bb.fwhm_nm
    band = (1e7 / (hi_nm + pad), 1e7 / max(lo_nm - pad, 1.0))
    base, u_base = flank_baseline(sigma, density, band, noise, correlation=correlation)
    if not (u_base > 0 and abs(base) > 3 * u_base):
        return 0.0, ()
    return base, (
        f"the spectrum around the band sits on a baseline of {base / float(np.max(density)):.2g}"
        " of the peak (estimated beyond the band): it was removed before the band's figures, "
        "colour and coherence length were taken; a magnitude spectrum or a detector offset "
        "drifting during the sweeps can cause it",
    )


def _colour(wl, dens, band_nm):
    """CIE 1931 chromaticity and dominant wavelength of the band (None outside the visible).

    Over the band only (the centroid's 1 % rule), baseline removed, negative noise kept:
    clipped or rectified noise far from the band biased the colour (issue 12, part 2). The
    vacuum wavelengths are taken to standard air, the CIE tables' scale.
    """
    from ftsource.measure.colour import chromaticity_xy, dominant_wavelength_nm

    in_band = (wl >= band_nm[0]) & (wl <= band_nm[1])
    if in_band.sum() < 2:
        return None, None
    xy = chromaticity_xy(wl[in_band], dens[in_band], scale="vacuum")
    if xy is None:
        return None, None
    return ((finite_or_none(xy[0]), finite_or_none(xy[1])),
            finite_or_none(dominant_wavelength_nm(xy)))


def sweep_scatter(spec, sweep_spectra, mask, ok, response):
    """Standard errors of a band's peak, centroid and FWHM from their scatter over sweeps.

    Each sweep's own spectrum (:func:`ftsource.spectrum.spectrum.coadd` of that sweep alone)
    gives the three figures (:func:`ftsource.measure.broadband.broadband_metrics`, no Monte
    Carlo); their standard error is ``std(ddof=1)/√n`` (Type A, JCGM 100:2008 §4.2), returned
    with ``n``. None with fewer than 3 sweeps whose figures could be taken.
    """
    from ftsource.errors import FtsourceError
    from ftsource.measure.broadband import broadband_metrics
    from ftsource.spectrum.spectrum import coadd

    if len(sweep_spectra) < 3:
        return None
    sig = spec.sigma_per_cm[mask][ok]
    rows = []
    for sw in sweep_spectra:
        one = coadd([sw], spec.sigma_per_cm, spec.line_shape.apodization)
        d = one.density[mask][ok]
        if response is not None:
            d = d / response.at(sig)
        try:
            b = broadband_metrics(1e7 / sig, d * sig**2 / 1e7, None, n_monte_carlo=0,
                                  warn=False)
        except (FtsourceError, ValueError):
            continue
        row = (b.peak_nm, b.centroid_nm, b.fwhm_nm)
        if all(np.isfinite(row)):
            rows.append(row)
    if len(rows) < 3:
        return None
    a = np.asarray(rows)
    return np.std(a, axis=0, ddof=1) / np.sqrt(len(rows)), len(rows)


def line_shape_corrected(bb, bb2, resolution_nm):
    """Peak and FWHM of a broad band with the instrument line shape's first-order bias removed.

    ``bb`` holds the figures of the measured band M = S∗K, ``bb2`` those of M∗K
    (:func:`ftsource.spectrum.spectrum.reconvolve`); each figure becomes ``2 f(M) − f(M∗K)``
    (Richardson extrapolation). Its standard uncertainty adds a quarter of the correction in
    quadrature for the second-order remainder: on the simulated LEDs of the tests the
    remainder was at most 15 % of the correction (docs/measurements.md).

    Returns ``((peak, u_peak, fwhm, u_fwhm), notes)``.
    """
    out = []
    for a, b, u in ((bb.peak_nm, bb2.peak_nm, bb.u_peak_nm),
                    (bb.fwhm_nm, bb2.fwhm_nm, bb.u_fwhm_nm)):
        corr = a - b
        if not np.isfinite(corr):
            out += [a, u]
            continue
        out += [a + corr, float(np.hypot(u, 0.25 * corr)) if np.isfinite(u) else u]
    notes = ()
    fwhm_corr = bb.fwhm_nm - bb2.fwhm_nm
    if np.isfinite(fwhm_corr) and abs(fwhm_corr) > 0.05 * bb.fwhm_nm:
        notes = (
            f"the band spans only {bb.fwhm_nm / resolution_nm:.1f} resolution elements: the "
            f"instrument line shape widened it by {abs(fwhm_corr):.2g} nm, which was corrected "
            "to first order only; a longer mirror travel would measure it directly",
        )
    return tuple(out), notes
