"""What kind of source the lines show: one narrow line, a comb of laser modes, a broad band,
or nothing above the noise; and the figures of a mode comb.

A resolved main line wider than :data:`BROADBAND_FWHM_NM` is a broad band (LEDs, lamps,
SLEDs); three or more source lines on an equally spaced comb (:func:`ftsource.measure.modes.
find_mode_comb`) are a multimode laser; otherwise the strongest line is a narrow line.

A comb whose modes the scan cannot resolve (a sweep from near ZPD to just past the first
revival resolves about one mode spacing) still shows itself in the interferogram: bursts
repeat every ``P = 1/Δσ`` of path. A resolved main line at least :data:`MIN_ENVELOPE_SPACINGS`
spacings ``1/P`` wide, with such a revival seen, is then the comb's envelope: a multimode
laser whose spacing comes from the revival period (:func:`revival_period`). A revival at least
half as high as ZPD (:data:`ftsource.interferogram.zpd.BURST_RATIO`) needs modes narrower than
ln 2/(πP) ≈ 0.22 of their spacing (Lorentzian modes: exp(−πwP) ≥ 1/2), the same condition a
resolved comb must meet.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ftsource.measure.values import C_M_S, finite_or_none, nm_from_per_cm, u_nm_from_per_cm

__all__ = [
    "BROADBAND_FWHM_NM",
    "Classification",
    "CentreEstimate",
    "ModeFigures",
    "classify_source",
    "mode_figures",
    "MIN_ENVELOPE_SPACINGS",
    "REVIVAL_PERIOD_FLOOR",
    "revival_period",
    "revival_mode_figures",
]

#: A resolved line is a comb's envelope (given a revival) when it spans at least this many
#: mode spacings: a beat of two lines 1/P apart fitted as one line is about 1–2 spacings wide.
MIN_ENVELOPE_SPACINGS = 2.5
#: Relative standard uncertainty below which a revival period from burst centroids is not
#: trusted (the decaying envelope shifts a centroid by about 1e-3 of the period in the tests'
#: forward model, tests/test_modes_from_revivals.py).
REVIVAL_PERIOD_FLOOR = 2e-3

#: A line is "broadband" when its FWHM exceeds this many nm (LEDs, lamps, SLEDs).
BROADBAND_FWHM_NM = 2.0


@dataclass(frozen=True)
class Classification:
    """The source's kind (``"narrow"``, ``"multimode"``, ``"broadband"`` or ``"none"``), its
    strongest source line (None for ``"none"``) and the mode comb of a multimode source."""

    kind: str
    main: object | None
    comb: object | None = None
    #: Revival period (cm) and its standard uncertainty, when the comb was recognised from the
    #: interferogram's revivals rather than from resolved modes (NaN otherwise).
    revival_period_cm: float = float("nan")
    u_revival_period_cm: float = float("nan")


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


def classify_source(source_lines, *, revival=(float("nan"), float("nan"))) -> Classification:
    """Classify the source from its lines (:class:`ftsource.lines.fitting.LineFit`) and, for
    a comb the scan does not resolve, the interferogram's revival period ``revival = (P, u_P)``
    in cm (:func:`revival_period`; NaN: none seen)."""
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
            # resolved modes much narrower than their spacing (an unresolved line's bound is
            # the resolution, which says nothing about the mode: it counts as narrow)
            widths_per_cm=np.array([f.fwhm_per_cm if f.resolved else 0.0
                                    for f in source_lines], dtype=float),
        )
        if comb is not None:
            return Classification("multimode", main, comb)
    period, u_period = revival
    if (np.isfinite(period) and period > 0 and main.resolved
            and main.fwhm_per_cm * period >= MIN_ENVELOPE_SPACINGS):
        return Classification("multimode", main, None, float(period), float(u_period))
    return Classification("narrow", main)


def revival_period(interferograms, sweep_spectra) -> tuple[float, float]:
    """The period of the bursts (cm) in the sweeps through ZPD that hold a revival whole, and
    its standard uncertainty: each sweep's burst spacing refined by
    :func:`ftsource.measure.modes.check_revivals` (envelope decay removed), their mean and the
    standard error of it, at least :data:`REVIVAL_PERIOD_FLOOR` of the period. NaN when no
    sweep shows one."""
    from ftsource.measure.modes import check_revivals

    periods = []
    for ig, sw in zip(interferograms, sweep_spectra, strict=False):
        if not (sw.zpd_found and np.isfinite(sw.burst_spacing_cm)):
            continue
        try:
            rc = check_revivals(ig.x_cm, ig.y, 1.0 / sw.burst_spacing_cm, zpd_x_cm=sw.x_zpd_cm)
        except Exception:  # noqa: BLE001 - the burst spacing itself stands
            rc = None
        ok = rc is not None and rc.confirmed and np.isfinite(rc.measured_period_cm)
        periods.append(rc.measured_period_cm if ok else sw.burst_spacing_cm)
    if not periods:
        return float("nan"), float("nan")
    p = float(np.mean(periods))
    sem = float(np.std(periods, ddof=1) / np.sqrt(len(periods))) if len(periods) > 1 else 0.0
    return p, max(sem, REVIVAL_PERIOD_FLOOR * p)


def mode_figures(comb, source_lines, interferograms, sweep_spectra) -> ModeFigures:
    """The reported figures of ``comb`` and its centroid with its standard uncertainty.

    The intensity-weighted centroid ``c = Σ a_i σ_i / Σ a_i`` moves with the modes' areas as
    well as their centres: ``∂c/∂a_i = (σ_i − c)/Σa``, both uncorrelated.

    References
    ----------
    .. [1] JCGM 100:2008 (GUM), §5.1.2 (propagation for uncorrelated inputs).
    """
    if comb is None:
        raise ValueError("no comb: use revival_mode_figures for a comb seen in its revivals")
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



def revival_mode_figures(main, period_cm: float, u_period_cm: float) -> ModeFigures:
    """The figures of a comb recognised from its revivals (:func:`classify_source`): spacing
    ``Δσ = 1/P`` with ``u(Δσ) = u(P)/P²``, the envelope's FWHM that of the main line, the
    cavity's optical length ``P/2``, ``n_modes`` the modes within the envelope's FWHM
    (``round(FWHM·P)``: the modes themselves are not resolved), the centre that of the main
    line.

    References
    ----------
    .. [1] JCGM 100:2008 (GUM), §5.1.2 (propagation of uncertainty).
    """
    sig_c = main.centre_per_cm
    d = 1.0 / period_cm
    u_d = u_period_cm / period_cm**2
    to_nm = 1e7 / sig_c**2
    ghz = C_M_S * 100 / 1e9
    return ModeFigures(
        n_modes=max(int(round(main.fwhm_per_cm * period_cm)), 3),
        spacing_nm=finite_or_none(d * to_nm),
        u_spacing_nm=finite_or_none(u_d * to_nm),
        spacing_ghz=finite_or_none(d * ghz),
        u_spacing_ghz=finite_or_none(u_d * ghz),
        envelope_fwhm_nm=finite_or_none(u_nm_from_per_cm(sig_c, main.fwhm_per_cm)),
        cavity_optical_length_mm=finite_or_none(period_cm / 2 * 10),
        revivals_confirmed=True,
        centre=CentreEstimate(nm_from_per_cm(sig_c), u_nm_from_per_cm(sig_c, main.u_centre_per_cm),
                              main.dof),
    )
