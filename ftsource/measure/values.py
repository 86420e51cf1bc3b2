"""Small conversions shared by the measuring stages: wavenumber to wavelength, a figure as a
finite number or ``None``, a vacuum wavelength in the air of the analysis."""

from __future__ import annotations

import math

__all__ = ["C_M_S", "finite_or_none", "nm_from_per_cm", "u_nm_from_per_cm", "air_wavelength_nm"]

#: Speed of light in vacuum, m/s (exact, SI).
C_M_S = 299_792_458.0


def finite_or_none(v) -> float | None:
    """``v`` as a float, or None when it is missing or not finite (JSON has no NaN)."""
    if v is None:
        return None
    v = float(v)
    return v if math.isfinite(v) else None


def nm_from_per_cm(sigma_per_cm: float) -> float:
    """Vacuum wavelength (nm) of a wavenumber (cm⁻¹)."""
    return 1e7 / sigma_per_cm


def u_nm_from_per_cm(sigma_per_cm: float, u_sigma_per_cm: float) -> float:
    """A wavenumber interval (cm⁻¹) at ``sigma_per_cm`` as a wavelength interval (nm), first
    order: ``Δλ = 10⁷·Δσ/σ²``."""
    return 1e7 * u_sigma_per_cm / sigma_per_cm**2


def air_wavelength_nm(wl_vac_nm: float, options) -> float | None:
    """The wavelength in the analysis's air (``options.air`` by ``options.air_model``), or
    None in vacuum and outside 300–1700 nm, where the air equations do not hold."""
    if options.medium != "air" or options.air is None:
        return None
    from ftsource.physics.air import WAVELENGTH_RANGE_NM, vacuum_to_air_nm

    lo, hi = WAVELENGTH_RANGE_NM
    if not lo <= wl_vac_nm <= hi:
        return None
    return float(vacuum_to_air_nm(wl_vac_nm, options.air, model=options.air_model))
