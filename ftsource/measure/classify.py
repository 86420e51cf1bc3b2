"""What kind of source the lines show: one narrow line, a comb of laser modes, a broad band,
or nothing above the noise; and the figures of a mode comb.

A resolved main line wider than :data:`BROADBAND_FWHM_NM` is a broad band (LEDs, lamps,
SLEDs); three or more source lines on an equally spaced comb (:func:`ftsource.measure.modes.
find_mode_comb`) are a multimode laser; otherwise the strongest line is a narrow line.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ftsource.measure.values import finite_or_none, u_nm_from_per_cm

__all__ = [
    "BROADBAND_FWHM_NM",
    "Classification",
    "CentreEstimate",
    "ModeFigures",
    "classify_source",
    "mode_figures",
]

#: A line is "broadband" when its FWHM exceeds this many nm (LEDs, lamps, SLEDs).
BROADBAND_FWHM_NM = 2.0


@dataclass(frozen=True)
class Classification:
    """The source's kind (``"narrow"``, ``"multimode"``, ``"broadband"`` or ``"none"``), its
    strongest source line (None for ``"none"``) and the mode comb of a multimode source."""

    kind: str
    main: object | None
    comb: object | None = None


@dataclass(frozen=True)
class CentreEstimate:
    """A centre wavelength (vacuum, nm) before its budget: the statistical standard
    uncertainty of its estimate and that estimate's degrees of freedom."""

    centre_nm: float
    u_nm: float
    dof: float


@dataclass(frozen=True)
class ModeFigures:
    """The figures of a mode comb as reported (finite numbers or None), with the comb's
    intensity-weighted centroid as the source's centre."""

    n_modes: int
    spacing_nm: float | None
    u_spacing_nm: float | None
    spacing_ghz: float | None
    u_spacing_ghz: float | None
    envelope_fwhm_nm: float | None
    cavity_optical_length_mm: float | None
    revivals_confirmed: bool | None
    centre: CentreEstimate


def classify_source(source_lines) -> Classification:
    """Classify the source from its lines (:class:`ftsource.lines.fitting.LineFit`)."""
    if not source_lines:
        return Classification("none", None)
    main = max(source_lines, key=lambda f: f.area)
    fwhm_nm = u_nm_from_per_cm(main.centre_per_cm, main.fwhm_per_cm)
    if main.resolved and fwhm_nm > BROADBAND_FWHM_NM:
        return Classification("broadband", main)
    if len(source_lines) >= 3:
        from ftsource.measure.modes import find_mode_comb

        comb = find_mode_comb(
            np.array([f.centre_per_cm for f in source_lines]),
            np.array([max(f.area, 0.0) for f in source_lines]),
            u_centres_per_cm=np.array([f.u_centre_per_cm for f in source_lines]),
        )
        if comb is not None:
            return Classification("multimode", main, comb)
    return Classification("narrow", main)


def mode_figures(comb, source_lines, interferograms, sweep_spectra) -> ModeFigures:
    """The reported figures of ``comb`` and its centroid with its standard uncertainty.

    The intensity-weighted centroid ``c = Σ a_i σ_i / Σ a_i`` moves with the modes' areas as
    well as their centres: ``∂c/∂a_i = (σ_i − c)/Σa``, both uncorrelated.

    References
    ----------
    .. [1] JCGM 100:2008 (GUM), §5.1.2 (propagation for uncorrelated inputs).
    """
    w = np.array(comb.intensities) / np.sum(comb.intensities)
    by_sigma = {round(f.centre_per_cm, 6): f for f in source_lines}
    us = np.array([
        by_sigma.get(round(c, 6)).u_centre_per_cm if round(c, 6) in by_sigma else 0.0
        for c in comb.centres_per_cm
    ])
    ua = np.array([
        by_sigma[round(c, 6)].u_area if round(c, 6) in by_sigma else 0.0
        for c in comb.centres_per_cm
    ])
    ua = np.where(np.isfinite(ua), ua, 0.0)
    lever = (np.asarray(comb.centres_per_cm) - comb.centroid_per_cm) / np.sum(comb.intensities)
    u_centroid_cm = float(np.sqrt(np.sum((w * us) ** 2) + np.sum((lever * ua) ** 2)))
    main = max(source_lines, key=lambda f: f.area)
    return ModeFigures(
        n_modes=int(comb.n_modes),
        spacing_nm=finite_or_none(comb.spacing_nm),
        u_spacing_nm=finite_or_none(comb.u_spacing_nm),
        spacing_ghz=finite_or_none(comb.spacing_ghz),
        u_spacing_ghz=finite_or_none(comb.u_spacing_ghz),
        envelope_fwhm_nm=finite_or_none(comb.envelope_fwhm_nm),
        cavity_optical_length_mm=finite_or_none(comb.cavity_optical_length_cm * 10),
        revivals_confirmed=_revivals(interferograms, comb, sweep_spectra),
        centre=CentreEstimate(
            comb.centroid_nm, u_nm_from_per_cm(comb.centroid_per_cm, u_centroid_cm), main.dof
        ),
    )


def _revivals(interferograms, comb, sweep_spectra):
    """Whether the first sweep through ZPD shows the comb's visibility revivals (None: the
    check could not be made)."""
    from ftsource.measure.modes import check_revivals

    for ig, sw in zip(interferograms, sweep_spectra, strict=False):
        if sw.zpd_found:
            try:
                rc = check_revivals(ig.x_cm, ig.y, comb.spacing_per_cm, zpd_x_cm=sw.x_zpd_cm)
                return rc.confirmed
            except Exception:  # noqa: BLE001 - optional check
                return None
    return None

