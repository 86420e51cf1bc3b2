"""Calibrating a rig: from a record of a known source to a saved rig calibration.

A workflow beside :func:`ftsource.analysis.analyze` (it runs one), above the stages; the
calibration's own arithmetic and file are in :mod:`ftsource.calibrate.calibration`, the checks
of the known line in :mod:`ftsource.calibrate.known`.

The measured wavelength of every line scales with the OPD scale the analysis assumed (the
reference laser's wavelength, an encoder's scale or an assumed mirror speed). A record of a
line of known wavelength fixes that scale: :func:`calibrate_rig` analyses it with the scale's
own uncertainty set to zero (it cancels, see
:func:`ftsource.calibrate.calibration.calibrate_reference`) and returns the rig calibration,
whose effective reference wavelength later analyses use (``AnalysisOptions(calibration=...)``),
with its uncertainty carried into their budgets.
"""

from __future__ import annotations

import math
from dataclasses import replace

__all__ = ["calibrate_rig"]


def calibrate_rig(record, options, known_wavelength_nm: float, u_known_nm: float = 0.0, *,
                  label: str | None = None):
    """Analyse ``record`` of a known line and return ``(RigCalibration, Result)``.

    Parameters
    ----------
    record : ftsource.io.records.Record
    options : ftsource.analysis.AnalysisOptions
        As for the rig's normal analyses (reference wavelength, air...).
    known_wavelength_nm : float
        Vacuum wavelength of the known line (e.g. a stabilised laser or a lamp line).
    u_known_nm : float
        Its standard uncertainty.

    References
    ----------
    .. [1] JCGM 100:2008 (GUM), §5.1 (propagation for a ratio of measured quantities).
    """
    from ftsource.analysis import analyze, opd_scale
    from ftsource.calibrate.calibration import calibrate_reference
    from ftsource.errors import AnalysisError
    from ftsource.interferogram.scale import OpdKind

    # the scale the calibration is made against, without any earlier calibration
    scale = opd_scale(record, replace(options, calibration=None))
    # what the calibration determines is left out of the measured line's uncertainty: the
    # reference wavelength, the encoder's scale or the assumed mirror speed (and the cosine
    # allowance, which the calibration absorbs)
    res = analyze(record, replace(
        options, reference_uncertainty_ppm=0.0, reference_uncertainty_nm=None,
        calibration=None, alignment_allowance_ppm=0.0,
        mirror_speed_uncertainty_ppm=0.0, encoder_scale_uncertainty_ppm=0.0,
    ))
    f = res.figures
    if f.centre_wavelength_nm is None:
        raise AnalysisError("the calibration record shows no line to calibrate against")
    if f.kind != "narrow":
        raise AnalysisError(
            f"the calibration record's source is {f.kind}; calibrate with a single narrow line"
        )
    # for an encoder or an assumed speed there is no reference laser: the nominal He-Ne value
    # only labels the ratio λ_known/λ_measured that the calibration stores
    cal = calibrate_reference(
        f.centre_wavelength_nm,
        f.u_centre_wavelength_nm,
        known_wavelength_nm,
        u_known_nm,
        scale.fringe_wavelength_nm,
        scale.u_reference_rel,
        label=label,
        opd_scale=scale.kind.calibrated_quantity,
        max_deviation_rel=0.5 if scale.kind is OpdKind.CONSTANT_SPEED else 1e-3,
    )
    if not math.isfinite(cal.effective_reference_wavelength_nm):  # pragma: no cover
        raise AnalysisError("the calibration did not give a finite reference wavelength")
    return cal, res
