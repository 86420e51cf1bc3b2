"""The JCGM 100 budget of the source's centre wavelength, from its estimate and the OPD scale
it rests on (reference laser, encoder, assumed mirror speed, rig calibration), the air, the
alignment allowance and the field-of-view correction.

:func:`centre_budget` is the stage; it returns a :class:`CentreBudget` with its notes.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from ftsource.measure.values import nm_from_per_cm, u_nm_from_per_cm

__all__ = [
    "CentreBudget",
    "centre_budget",
    "reference_uncertainty_ppm",
    "air_ratio_rel_u",
    "air_range_notes",
    "line_budget",
]


@dataclass(frozen=True)
class CentreBudget:
    """The corrected centre wavelength (vacuum, nm), its budget
    (:class:`ftsource.measure.uncertainty.Budget`) and the notes on it."""

    centre_nm: float
    budget: object
    notes: tuple[str, ...] = ()


def reference_uncertainty_ppm(options) -> float:
    """Relative standard uncertainty (ppm) of the OPD scale's reference: the rig calibration's
    when there is one, else the option's."""
    if options.calibration is not None:
        return float(options.calibration.u_effective_rel * 1e6)
    return float(options.reference_uncertainty_ppm)


def centre_budget(centre, *, opd_kind, options, reference_wavelength_nm, source_lines,
                  field_of_view_factor: float = 1.0, main_per_cm: float) -> CentreBudget:
    """Budget of the centre estimate ``centre`` (:class:`ftsource.measure.classify.
    CentreEstimate`) on an OPD scale of kind ``opd_kind``.

    ``opd_kind`` is an :class:`ftsource.interferogram.scale.OpdKind`; ``main_per_cm`` is the
    main line's wavenumber (it sizes the field of view's broadening in
    the note); ``source_lines`` are checked against the air equation's range.

    References
    ----------
    .. [1] JCGM 100:2008 (GUM), §5 and G (combined and expanded uncertainty).
    .. [2] P. Jacquinot, J. Opt. Soc. Am. 44, 761-765 (1954) (field of view).
    """
    from ftsource.measure.uncertainty import wavelength_budget

    centre_nm = centre.centre_nm
    notes = list(air_range_notes(source_lines, options))
    from ftsource.interferogram.scale import OpdKind

    opd_scale = opd_kind.calibrated_quantity
    extra = []
    if field_of_view_factor != 1.0:
        fov_note, fov_component = _field_of_view(centre_nm, field_of_view_factor, main_per_cm)
        notes.append(fov_note)
        extra.append(fov_component)
    ref_rel, scale_components = _scale_terms(centre_nm, opd_kind, options)
    extra += scale_components
    cal = options.calibration
    u_fit, dof_fit = centre.u_nm, centre.dof
    corrected, budget = wavelength_budget(
        centre_nm,
        u_fit_nm=float(u_fit) if np.isfinite(u_fit) else 0.0,
        dof_fit=max(float(dof_fit), 1.0) if np.isfinite(dof_fit) else math.inf,
        reference_rel_u=ref_rel,
        air_ratio_rel_u=air_ratio_rel_u(options, opd_kind, reference_wavelength_nm, centre_nm),
        alignment_allowance_rel=(
            0.0 if cal is not None else options.alignment_allowance_ppm * 1e-6
        ),
        alignment_note=(
            "held in the rig calibration, made with the alignment in use (realigning calls "
            "for a new calibration)" if cal is not None else None
        ),
        extra=tuple(extra),
        opd_scale=opd_scale,
    )
    if cal is not None and options.alignment_allowance_ppm > 0:
        notes.append(
            "the alignment allowance was not applied: the rig calibration already holds the "
            "cosine error of the alignment it was made with (realigning calls for a new one)"
        )
    if opd_kind is OpdKind.CONSTANT_SPEED and cal is not None:
        notes.append(
            "NO REFERENCE: every wavelength scales with the mirror speed, calibrated here from a "
            "known line; this holds only while the drive runs exactly as it did then"
        )
    elif opd_kind is OpdKind.CONSTANT_SPEED:
        notes.append(
            "NO REFERENCE: every wavelength scales with the assumed mirror speed; the budget "
            "carries its stated uncertainty (default 5 %), which dominates. Calibrate the speed "
            "with a known line (ftsource calibrate) or add a reference laser"
        )
    return CentreBudget(corrected, budget, tuple(notes))


def line_budget(fit, *, opd_kind, options, reference_wavelength_nm,
                field_of_view_factor: float = 1.0):
    """One line's expanded uncertainty and coverage factor, by the summary's budget.

    The line's fit (its centre's standard uncertainty and degrees of freedom) enters
    :func:`centre_budget` in place of the source's centre estimate, so every line carries the
    same components as the summary (reference, air-index ratio at its own wavelength,
    alignment, OPD scale, field of view) at the same coverage. Returns
    ``(expanded_nm, coverage_factor)``, or ``(None, None)`` for a fit without a finite centre.

    References
    ----------
    .. [1] JCGM 100:2008 (GUM), §6 (expanded uncertainty) and annex G (coverage factor).
    """
    from ftsource.measure.classify import CentreEstimate

    wl = nm_from_per_cm(fit.centre_per_cm)
    if not np.isfinite(wl):
        return None, None
    est = CentreEstimate(wl, u_nm_from_per_cm(fit.centre_per_cm, fit.u_centre_per_cm),
                         fit.dof)
    cb = centre_budget(est, opd_kind=opd_kind, options=options,
                       reference_wavelength_nm=reference_wavelength_nm, source_lines=(),
                       field_of_view_factor=field_of_view_factor,
                       main_per_cm=fit.centre_per_cm)
    return float(cb.budget.expanded), float(cb.budget.coverage_factor)


def _field_of_view(centre_nm, factor, main_per_cm):
    """The note and budget component of the Jacquinot correction ``factor`` = σ/σ'."""
    from ftsource.measure.uncertainty import Component

    shift = factor - 1.0  # σ/σ' − 1 = Ω/4π to first order
    omega = 4 * np.pi * (1 - 1 / factor)
    note = (
        f"the wavenumber scale was corrected for the field of view (Jacquinot, "
        f"Ω = {omega:.3g} sr): every wavelength is {shift * 1e6:.2f} ppm shorter than "
        f"measured; the aperture also broadens lines by σΩ/2π = "
        f"{u_nm_from_per_cm(main_per_cm, main_per_cm * omega / (2 * np.pi)):.3g} nm here "
        "(not removed)"
    )
    return note, Component(
        "field of view", centre_nm * shift / (2 * np.sqrt(3)),
        note=f"Jacquinot correction of {shift * 1e6:.3g} ppm assumes a uniformly filled "
             "field stop; half of it is allowed for partial filling (rectangular)",
    )


def _scale_terms(centre_nm, opd_kind, options):
    """The reference's relative uncertainty for the budget and the components of a geometric
    OPD scale (rig calibration, encoder scale, assumed mirror speed)."""
    from ftsource.interferogram.scale import OpdKind
    from ftsource.measure.uncertainty import Component

    cal = options.calibration
    if cal is not None and not opd_kind.uses_reference_laser:
        what = "encoder's scale" if opd_kind is OpdKind.ENCODER else "mirror speed"
        return 0.0, [Component(
            "rig calibration", centre_nm * cal.u_effective_rel,
            note=f"relative standard uncertainty {cal.u_effective_rel * 1e6:.3g} ppm of the "
                 f"{what} calibrated from the known line {cal.known_wavelength_nm:.6g} nm",
        )]
    if opd_kind is OpdKind.ENCODER:
        esu = options.encoder_scale_uncertainty_ppm
        if esu is None:
            return 0.0, []  # not given: the analysis's note says it is missing from the budget
        return 0.0, [Component(
            "encoder scale", centre_nm * esu * 1e-6,
            note=f"relative standard uncertainty {esu:g} ppm of the encoder's scale (user input)",
        )]
    if opd_kind is OpdKind.CONSTANT_SPEED:
        msu = options.mirror_speed_uncertainty_ppm
        return 0.0, [Component(
            "assumed mirror speed", centre_nm * msu * 1e-6,
            note=f"relative standard uncertainty {msu * 1e-4:g} % of the assumed constant "
                 "mirror speed (user input or default 5 %)",
        )]
    return reference_uncertainty_ppm(options) * 1e-6, []


def air_ratio_rel_u(options, opd_kind, reference_wavelength_nm, wl) -> float:
    """u(n_ref/n) for a reference-laser scale, u(n) for a geometric one (encoder, assumed
    speed), by ``options.air_model``; beyond 300–1700 nm at the nearer end (see
    :func:`air_range_notes`)."""
    if options.medium == "vacuum":
        return 0.0
    from ftsource.physics.air import WAVELENGTH_RANGE_NM, index_ratio_uncertainty, index_uncertainty

    model = options.air_model
    wl_c = float(np.clip(wl, *WAVELENGTH_RANGE_NM))
    if opd_kind.uses_reference_laser:
        return float(index_ratio_uncertainty(reference_wavelength_nm, wl_c, options.air,
                                             model=model))
    return float(index_uncertainty(wl_c, options.air, model=model))


def air_range_notes(source_lines, options) -> tuple[str, ...]:
    """Notes for reported lines where the air equation was used outside its range: Ciddor's
    300–1700 nm (the index at the nearer end was used), or, for ``edlen``, the visible where
    it is verified. The size of the neglected dispersion is estimated from the standard-air
    formula of Morton 2000 (eq. 8, valid 200–2000 nm).

    References
    ----------
    .. [1] D. C. Morton, Astrophys. J. Suppl. Ser. 130, 403-436 (2000), eq. 8.
    """
    if options.medium != "air" or not source_lines:
        return ()
    from ftsource.physics.air import (
        EDLEN_VERIFIED_RANGE_NM,
        STANDARD_AIR_RANGE_NM,
        WAVELENGTH_RANGE_NM,
        standard_air_index,
    )

    def n_std(wl):  # Morton 2000, eq. 8 (standard air), within its range
        return float(standard_air_index(float(np.clip(wl, *STANDARD_AIR_RANGE_NM))))

    notes = []
    lo, hi = WAVELENGTH_RANGE_NM
    wls = sorted(nm_from_per_cm(f.centre_per_cm) for f in source_lines)
    out = [w for w in wls if not lo <= w <= hi]
    name = "Ciddor" if options.air_model == "ciddor" else "modified Edlén"
    if out:
        worst = max(out, key=lambda w: abs(w - np.clip(w, lo, hi)))
        edge = float(np.clip(worst, lo, hi))
        size = abs(n_std(worst) / n_std(edge) - 1) * 1e6
        s_lo, s_hi = STANDARD_AIR_RANGE_NM
        bound = "about " if s_lo <= worst <= s_hi else "at least "
        shown = ", ".join(f"{w:.2f}" for w in out[:5]) + (
            f" and {len(out) - 5} more" if len(out) > 5 else "")
        notes.append(
            f"the line(s) at {shown} nm lie outside {lo:.0f}–{hi:.0f} nm, the range of the "
            f"{name} equation for the index of air: the air correction and its uncertainty "
            f"used the index at {edge:.0f} nm, which can be off by {bound}{size:.2g} ppm "
            f"there (standard-air dispersion, Morton 2000); measure in vacuum "
            "(medium='vacuum') or treat these wavelengths as uncertain by that much"
        )
    if options.air_model == "edlen":
        vlo, vhi = EDLEN_VERIFIED_RANGE_NM
        outside = [w for w in wls if not vlo <= w <= vhi and lo <= w <= hi]
        if outside:
            notes.append(
                f"the modified Edlén equation is verified in the visible ({vlo:.0f}–{vhi:.0f} "
                f"nm) only; the line(s) at {', '.join(f'{w:.2f}' for w in outside[:5])} nm lie "
                "outside it: air_model='ciddor' (the default) is the equation for them"
            )
    return tuple(notes)
