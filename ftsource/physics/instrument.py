"""Instrument formulas: the finite field of view (Jacquinot) and encoder optical path.

Pure formulas over floats or arrays. Wavenumbers in cm⁻¹ (vacuum), solid angles in sr,
lengths in m where the name says ``_m``, OPD in cm.

A ray at angle θ to the axis of a Michelson sees the path difference x·cos θ, so a line at σ
appears at σ cos θ. A circular field stop of diameter d at the focus of a lens of focal
length f admits the cone θ ≤ θ_max = arctan(d/2f), of solid angle
Ω = 2π(1 − cos θ_max) ≈ π(d/2f)². Rays fill the cone uniformly in solid angle, i.e. uniformly
in cos θ, so a monochromatic line becomes a rectangle from σ(1 − Ω/2π) to σ: width σΩ/2π and
centroid σ(1 − Ω/4π) [1]_ [2]_.

References
----------
.. [1] P. Jacquinot, "The luminosity of spectrometers with prisms, gratings, or Fabry-Perot
   etalons", J. Opt. Soc. Am. 44, 761-765 (1954).
.. [2] S. P. Davis, M. C. Abrams and J. W. Brault, *Fourier Transform Spectrometry*,
   Academic Press (2001), chapter on the field of view (from memory).
"""

from __future__ import annotations

import math

import numpy as np

from ftsource._checks import positive_array
from ftsource.errors import OptionError
from ftsource.physics.air import air_index

__all__ = [
    "OPD_PER_MIRROR_TRAVEL",
    "field_solid_angle",
    "jacquinot_shift",
    "field_of_view_correction",
    "field_of_view_broadening",
    "encoder_opd_cm",
]

#: A Michelson's optical path difference per unit of mirror travel: the beam crosses the
#: moving arm twice (common practice).
OPD_PER_MIRROR_TRAVEL = 2.0



def _omega(omega_sr):
    a = positive_array("omega_sr", omega_sr, allow_zero=True)
    if np.any(a > 2 * math.pi):
        raise OptionError(
            f"omega_sr = {np.max(a):g} sr is not allowed; a circular field is at most a "
            f"hemisphere, 0 to {2 * math.pi:.6g} sr"
        )
    return a


def _out(a):
    a = np.asarray(a, dtype=float)
    return float(a) if a.ndim == 0 else a


def field_solid_angle(aperture_diameter_m, focal_length_m):
    """Solid angle of the cone admitted by a circular field stop at a lens focus.

    Parameters
    ----------
    aperture_diameter_m : float or array_like, m
        Diameter d of the field stop (iris, pinhole, fibre core).
    focal_length_m : float or array_like, m
        Focal length f of the collimating (or focusing) optic.

    Returns
    -------
    float or ndarray, sr
        Ω = 2π(1 − cos θ) with θ = arctan(d/2f); ≈ π(d/2f)² for small fields.

    References
    ----------
    .. [1] P. Jacquinot, J. Opt. Soc. Am. 44, 761-765 (1954).
    """
    d = positive_array("aperture_diameter_m", aperture_diameter_m)
    f = positive_array("focal_length_m", focal_length_m)
    theta = np.arctan(d / (2.0 * f))
    return _out(4.0 * math.pi * np.sin(theta / 2.0) ** 2)  # = 2π(1 − cos θ), no cancellation


def field_of_view_broadening(sigma_per_cm, omega_sr):
    """Full width of the rectangle a monochromatic line becomes in a field of solid angle Ω.

    Parameters
    ----------
    sigma_per_cm : float or array_like, cm⁻¹
        True (vacuum) wavenumber of the line.
    omega_sr : float or array_like, sr
        Field solid angle, 0 to 2π.

    Returns
    -------
    float or ndarray, cm⁻¹
        σΩ/2π. It also sets the self-apodization: the interferogram envelope is
        sinc(x·σΩ/2π), first zero at x = 2π/(σΩ).

    References
    ----------
    .. [1] P. Jacquinot, J. Opt. Soc. Am. 44, 761-765 (1954).
    .. [2] S. P. Davis, M. C. Abrams and J. W. Brault, Fourier Transform Spectrometry,
       Academic Press (2001) (from memory).
    """
    return _out(positive_array("sigma_per_cm", sigma_per_cm) * _omega(omega_sr) / (2.0 * math.pi))


def jacquinot_shift(sigma_per_cm, aperture_diameter_m, focal_length_m):
    """Shift of a line's centroid caused by the field of view of a circular field stop.

    Parameters
    ----------
    sigma_per_cm : float or array_like, cm⁻¹
        True (vacuum) wavenumber σ.
    aperture_diameter_m, focal_length_m : float or array_like, m
        Field stop diameter and focal length, see :func:`field_solid_angle`.

    Returns
    -------
    float or ndarray, cm⁻¹
        Δσ = σΩ/4π ≥ 0: the measured centroid is σ' = σ(1 − Ω/4π) = σ − Δσ.

    Notes
    -----
    Mean of σ cos θ over the cone, uniform in solid angle:
    σ ∫cos θ dΩ / Ω = σ(1 + cos θ_max)/2 = σ(1 − Ω/4π), exact for Ω = 2π(1 − cos θ_max).
    When the reference laser shares the field the same factor applies to it and the shift
    cancels in the ratio; it matters for a source whose beam fills a wider field than the
    reference.

    References
    ----------
    .. [1] P. Jacquinot, J. Opt. Soc. Am. 44, 761-765 (1954).
    .. [2] S. P. Davis, M. C. Abrams and J. W. Brault, Fourier Transform Spectrometry,
       Academic Press (2001) (from memory).
    """
    omega = field_solid_angle(aperture_diameter_m, focal_length_m)
    return _out(positive_array("sigma_per_cm", sigma_per_cm) * omega / (4.0 * math.pi))


def field_of_view_correction(sigma_measured_per_cm, omega_sr):
    """True wavenumber from a centroid measured through a field of solid angle Ω.

    Parameters
    ----------
    sigma_measured_per_cm : float or array_like, cm⁻¹
        Measured centroid σ'.
    omega_sr : float or array_like, sr
        Field solid angle, 0 to 2π.

    Returns
    -------
    float or ndarray, cm⁻¹
        σ = σ' / (1 − Ω/4π).

    References
    ----------
    .. [1] P. Jacquinot, J. Opt. Soc. Am. 44, 761-765 (1954).
    """
    sigma = positive_array("sigma_measured_per_cm", sigma_measured_per_cm)
    return _out(sigma / (1.0 - _omega(omega_sr) / (4.0 * math.pi)))


def encoder_opd_cm(position_m, wavelength_vac_nm, conditions=None, *, model="ciddor"):
    """Optical path difference from an encoder reading of the moving mirror of a Michelson.

    Parameters
    ----------
    position_m : float or array_like, m
        Mirror displacement (geometric) from the encoder, relative to any origin.
    wavelength_vac_nm : float, nm
        Vacuum wavelength at which the OPD is wanted (the index depends on it).
    conditions : AirConditions or None
        Air in the arms; ``None`` means the interferometer is evacuated (n = 1).
    model : {"ciddor", "edlen"}

    Returns
    -------
    float or ndarray, cm
        x = 2·n(λ)·position·100, so that σ_vac·x counts fringes of that wavelength.

    Notes
    -----
    The beam crosses the displaced arm twice, hence the factor 2. In air the optical path is
    n times the geometric one, and because n depends on λ an encoder OPD scale is exact for
    one wavelength only; the phase of another line σ is 2π σ·2n(λ_σ)·position. In vacuum
    x = 2·position for every wavelength. The encoder's own scale error (thermal expansion,
    calibration) is not included.

    References
    ----------
    .. [1] S. P. Davis, M. C. Abrams and J. W. Brault, Fourier Transform Spectrometry,
       Academic Press (2001) (from memory).
    .. [2] P. E. Ciddor, Appl. Opt. 35, 1566-1573 (1996) (index of air).
    """
    try:
        pos = np.asarray(position_m, dtype=float)
    except (TypeError, ValueError):
        raise OptionError(f"position_m must be a number or an array, got {position_m!r}") from None
    if not np.all(np.isfinite(pos)):
        raise OptionError("position_m contains values that are not finite (NaN or inf)")
    n = 1.0 if conditions is None else air_index(wavelength_vac_nm, conditions, model=model)
    return _out(OPD_PER_MIRROR_TRAVEL * n * pos * 100.0)
