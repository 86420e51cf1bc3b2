"""The width of the source's main line and its coherence length: the FWHM with its
uncertainty when the line is resolved, else upper and lower bounds; the coherence length from
the spectrum (Goodman's integral) and, as a cross-check, from the fringe visibility.

:func:`width_figures` is the stage; it returns a :class:`WidthFigures` with its notes.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from ftsource.measure.values import finite_or_none, u_nm_from_per_cm

__all__ = ["WidthFigures", "width_figures", "coherence_disagreement"]


@dataclass(frozen=True)
class WidthFigures:
    """Width and coherence figures as reported (finite numbers or None), with the notes."""

    resolved: bool | None = None
    fwhm_nm: float | None = None
    u_fwhm_nm: float | None = None
    fwhm_upper_bound_nm: float | None = None
    coherence_length_mm: float | None = None
    u_coherence_length_mm: float | None = None
    half_visibility_opd_mm: float | None = None
    coherence_length_definition: str | None = None
    coherence_length_method: str | None = None
    coherence_length_lower_bound_mm: float | None = None
    coherence_length_visibility_mm: float | None = None
    u_coherence_length_visibility_mm: float | None = None
    coherence_length_visibility_definition: str | None = None
    notes: tuple[str, ...] = ()


def width_figures(kind, main, spec, interferograms, sweep_spectra, *, fwhm_nm: float,
                  envelope_decay: float | None, u_fwhm_nm: float | None = None,
                  baseline_per_cm: float = 0.0) -> WidthFigures:
    """Width and coherence of the main line ``main`` of a source of ``kind``.

    ``envelope_decay`` is :func:`decay_without_zpd` of these sweeps (measured once by the
    caller, whose line search uses it too). ``fwhm_nm`` is the line's FWHM (for a broad band,
    corrected for the line shape) and
    ``u_fwhm_nm`` its standard uncertainty when already known (broad band), else the fit's.
    ``baseline_per_cm`` is a broad band's baseline of S_σ (:func:`ftsource.measure.band.
    band_baseline`), removed before its coherence length. A multimode source gets no width
    (its modes are reported instead).

    References
    ----------
    .. [1] J. W. Goodman, Statistical Optics, Wiley (1985), §5.2 (coherence length).
    """
    from ftsource.measure import coherence as coh

    if kind not in ("narrow", "broadband"):
        return WidthFigures(resolved=None if kind == "multimode" else bool(main.resolved))
    notes: list[str] = []
    sig0 = main.centre_per_cm
    f: dict = {"resolved": bool(main.resolved)}
    decay = envelope_decay
    if decay is not None and decay > coh.ENVELOPE_DECAY_LIMIT:
        # docs/measurements.md, "Width bounds without ZPD"
        notes.append(
            f"no sweep reaches zero path difference and the fringe envelope changes by a "
            f"factor {decay:.3g} across a sweep: the line's coherence ends within the scan, so "
            "the spectrum shows it through that decay rather than through the instrument's "
            "line shape, and no width, width bound or coherence length taken from it would "
            "hold; none is reported. Scan through zero path difference (equal arm lengths) to "
            "measure them"
        )
        return WidthFigures(resolved=None, notes=tuple(notes))
    if main.resolved:
        f["fwhm_nm"] = finite_or_none(fwhm_nm)
        f["u_fwhm_nm"] = u_fwhm_nm if u_fwhm_nm is not None else finite_or_none(
            u_nm_from_per_cm(sig0, main.u_fwhm_per_cm))
        try:
            f.update(_spectrum_coherence(kind, main, spec,
                                         _visibility(interferograms, sweep_spectra),
                                         baseline_per_cm=baseline_per_cm,
                                         sweep_spectra=sweep_spectra))
        except Exception as e:  # noqa: BLE001 - an estimate that fails is reported, not fatal
            notes.append(f"the coherence length could not be computed from the spectrum: {e}")
    else:
        ub = main.fwhm_upper_bound_per_cm
        f["fwhm_upper_bound_nm"] = finite_or_none(u_nm_from_per_cm(sig0, ub))
        f["coherence_length_lower_bound_mm"] = finite_or_none(
            coh.coherence_lower_bound_cm(ub) * 10)
        f["coherence_length_definition"] = coh.GOODMAN_DEFINITION
        notes.append(
            f"the line is not resolved: its width is below "
            f"{u_nm_from_per_cm(sig0, ub):.3g} nm (about 95 % coverage) and only bounds are "
            f"reported; a longer mirror travel (resolution now "
            f"{u_nm_from_per_cm(sig0, spec.resolution_per_cm):.3g} nm) is needed to measure it"
        )
    vis = _visibility(interferograms, sweep_spectra)
    if vis is not None and not vis.is_lower_bound:
        f["coherence_length_visibility_mm"] = finite_or_none(vis.length_cm * 10)
        f["u_coherence_length_visibility_mm"] = finite_or_none((vis.u_length_cm or np.nan) * 10)
        f["coherence_length_visibility_definition"] = f"{vis.definition}; {vis.method}"
        msg = coherence_disagreement(
            f.get("coherence_length_mm"), f.get("u_coherence_length_mm"),
            vis.length_cm * 10, f["u_coherence_length_visibility_mm"],
        )
        if msg:
            notes.append(msg)
    return WidthFigures(**f, notes=tuple(notes))


def _spectrum_coherence(kind, main, spec, vis=None, *, baseline_per_cm=0.0,
                        sweep_spectra=()) -> dict:
    """Coherence length from the spectrum: the measured band for a broad source
    (:func:`broadband_coherence`, its baseline ``baseline_per_cm`` removed, its scatter over
    ``sweep_spectra`` in the uncertainty), the fitted intrinsic profile (instrument shape
    removed, wings complete) for a narrow line, or the visibility ``vis`` when the profile is
    undecided."""
    from ftsource.measure import coherence as coh

    if kind == "broadband":
        ce = broadband_coherence(spec, main, baseline_per_cm, sweep_spectra=sweep_spectra)
    else:
        # the fitted profiles' closed forms, or the visibility when the profile is undecided
        ce = coh.line_coherence(main.profile_widths, main.profile_weights, visibility=vis)
    u_lc = ce.u_length_cm if np.isfinite(ce.u_length_cm or np.nan) else np.nan
    if not (u_lc > 0) and main.fwhm_per_cm > 0:
        # L_c ∝ 1/Δσ for a given profile: the width's relative uncertainty
        u_lc = ce.length_cm * main.u_fwhm_per_cm / main.fwhm_per_cm
    return {
        "coherence_length_mm": finite_or_none(ce.length_cm * 10),
        "u_coherence_length_mm": finite_or_none(u_lc * 10),
        "half_visibility_opd_mm": finite_or_none(ce.half_visibility_opd_cm * 10),
        "coherence_length_definition": ce.definition,
        "coherence_length_method": ce.method,
    }


def broadband_coherence(spec, main, baseline_per_cm=0.0, *, sweep_spectra=()):
    """Coherence length of a broad band: over ±6 FWHM, its baseline removed, the instrument
    line shape's bias corrected to first order
    (:func:`ftsource.measure.coherence.line_shape_corrected`), and the choice of the band (±6
    against ±4 FWHM, half the spread over √3: rectangular, JCGM 100 §4.3.7) added to its
    uncertainty.

    The statistical part of the uncertainty is the larger of the noise propagation
    (:func:`ftsource.measure.coherence.coherence_from_spectrum`, which takes the spectrum's
    points as independent) and the standard error of the coherence lengths of the sweeps'
    own spectra (:func:`coherence_scatter`, Type A): the zero-filled, apodized points are
    correlated, so at low signal-to-noise ratio the propagation alone understated the scatter
    several times (450/20 nm LED, noise 3 % of the mean level: 0.34 % against 2.2 %).

    References
    ----------
    .. [1] J. W. Goodman, Statistical Optics, Wiley (1985), §5.2; L. F. Richardson, Phil.
       Trans. R. Soc. A 226, 299-361 (1927); JCGM 100:2008 §4.2 (Type A).
    """
    from dataclasses import replace

    from ftsource.measure import coherence as coh
    from ftsource.spectrum.spectrum import reconvolve

    def band(k):
        return (main.centre_per_cm - k * main.fwhm_per_cm,
                main.centre_per_cm + k * main.fwhm_per_cm)

    dens = spec.density - baseline_per_cm
    raw = coh.coherence_from_spectrum(spec.sigma_per_cm, dens, noise=spec.noise, band=band(6))
    twice = reconvolve(spec, band(6)) - baseline_per_cm
    ok = np.isfinite(twice)
    ce = coh.line_shape_corrected(
        raw, coh.coherence_from_spectrum(spec.sigma_per_cm[ok], twice[ok], band=band(6)))
    narrow = coh.coherence_from_spectrum(spec.sigma_per_cm, dens, noise=spec.noise,
                                         band=band(4))
    u_band = abs(raw.length_cm - narrow.length_cm) / (2 * math.sqrt(3))
    u_stat = raw.u_length_cm
    u_scatter = coherence_scatter(spec, sweep_spectra, band(6), baseline_per_cm)
    u_other2 = max(ce.u_length_cm**2 - u_stat**2, 0.0)  # the line-shape remainder
    if np.isfinite(u_scatter) and u_scatter > u_stat:
        u_stat = u_scatter
    return replace(ce, u_length_cm=float(np.sqrt(u_stat**2 + u_other2 + u_band**2)))


def coherence_scatter(spec, sweep_spectra, band, baseline_per_cm=0.0) -> float:
    """Standard error of a broad band's coherence length from its scatter over sweeps.

    Each sweep's own spectrum (:func:`ftsource.spectrum.spectrum.coadd` of that sweep alone,
    its noise bias removed as in :func:`ftsource.measure.coherence.coherence_from_spectrum`)
    gives a coherence length over ``band`` (cm⁻¹); the result, in cm, is the standard
    deviation of the t-distribution that a Type A evaluation from ``n`` values assigns to
    their mean, ``s/√n · √((n − 1)/(n − 3))`` (JCGM 101:2008 §6.4.9.4; ``s`` the sample
    standard deviation): a record holds only a few sweeps, and ``s/√n`` from 4 of them
    understates the spread of the mean about 1.7 times. NaN with fewer than 4 sweeps whose
    length could be taken (the t-distribution's variance is finite only from 4 values).

    References
    ----------
    .. [1] JCGM 100:2008 §4.2 (Type A); JCGM 101:2008 §6.4.9.4 (its t-distribution).
    """
    from ftsource.errors import FtsourceError
    from ftsource.measure import coherence as coh
    from ftsource.spectrum.spectrum import coadd

    if len(sweep_spectra) < 4:
        return float("nan")
    lengths = []
    for sw in sweep_spectra:
        one = coadd([sw], spec.sigma_per_cm, spec.line_shape.apodization)
        try:
            ce = coh.coherence_from_spectrum(spec.sigma_per_cm, one.density - baseline_per_cm,
                                             noise=one.noise, band=band)
        except (FtsourceError, ValueError):
            continue
        if np.isfinite(ce.length_cm):
            lengths.append(ce.length_cm)
    n = len(lengths)
    if n < 4:
        return float("nan")
    return float(np.std(lengths, ddof=1) / np.sqrt(n) * np.sqrt((n - 1) / (n - 3)))


def coherence_disagreement(lc_mm, u_lc_mm, lv_mm, u_lv_mm, *, floor: float = 0.1):
    """The warning when the two coherence lengths disagree, or None.

    They disagree when ``|L_spec − L_vis| > max(2·√(u_spec² + u_vis²), floor·L_spec)``: two
    standard uncertainties of the difference (k = 2, about 95 %), but never less than 10 % of
    the value, which covers what the uncertainties leave out (the visibility envelope's
    sampling, the spectrum's band limits). Missing values give None.
    """
    if lc_mm is None or lv_mm is None or not (np.isfinite(lc_mm) and np.isfinite(lv_mm)):
        return None
    u = math.hypot(u_lc_mm if u_lc_mm is not None and np.isfinite(u_lc_mm) else 0.0,
                   u_lv_mm if u_lv_mm is not None and np.isfinite(u_lv_mm) else 0.0)
    if abs(lc_mm - lv_mm) <= max(2 * u, floor * lc_mm):
        return None
    return (
        f"the coherence length from the spectrum ({lc_mm:.4g} mm) and from the fringe "
        f"visibility ({lv_mm:.4g} mm) disagree by more than their uncertainties (or 10 %): side "
        "structure in the spectrum, detector nonlinearity or a visibility limited by alignment "
        "may be the cause"
    )


def decay_without_zpd(interferograms, sweep_spectra):
    """Median fringe-envelope change across a sweep (:func:`ftsource.measure.coherence.
    envelope_decay`) when no sweep holds ZPD; None when one does (or none can be measured)."""
    from ftsource.measure.coherence import envelope_decay

    if not sweep_spectra or any(sw.zpd_found for sw in sweep_spectra):
        return None
    ratios = []
    for ig in interferograms:
        try:
            ratios.append(envelope_decay(ig.y))
        except Exception:  # noqa: BLE001 - too short a sweep says nothing here
            continue
    return float(np.median(ratios)) if ratios else None


def _visibility(interferograms, sweep_spectra):
    """Coherence length from the fringe visibility of the first sweep through ZPD, or None."""
    from ftsource.measure.coherence import coherence_from_visibility

    for ig, sw in zip(interferograms, sweep_spectra, strict=False):
        if sw.zpd_found:
            try:
                return coherence_from_visibility(ig.x_cm, ig.y, zpd_x_cm=sw.x_zpd_cm)
            except Exception:  # noqa: BLE001 - optional estimate
                return None
    return None
