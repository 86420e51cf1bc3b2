"""Peak and centroid wavelength of a set of lines (narrow and multimode sources).

A laser diode's data sheet quotes the centroid of its modes; a lamp's doublet is named by its
stronger line. For a source made of resolved or unresolved lines (not a broad band, whose
figures come from :mod:`ftsource.measure.broadband`):

- **peak**: the vacuum wavelength of the line of largest integrated intensity (area), with
  that line's standard uncertainty;
- **centroid**: the intensity-weighted mean wavelength ``λ_c = Σ a_i λ_i / Σ a_i`` — the first
  moment of S_λ when each line is narrow against the spread of the lines (the integrated
  intensity of a line is the same per unit wavelength and per unit wavenumber). Its standard
  uncertainty propagates both the centres and the areas (uncorrelated):
  ``u² = Σ (a_i/A)² u(λ_i)² + Σ ((λ_i − λ_c)/A)² u(a_i)²``, ``A = Σ a_i``.

References
----------
.. [1] Illuminating Engineering Society, definition "centroid wavelength" (first moment of the
   spectral distribution).
.. [2] JCGM 100:2008 (GUM), §5.1.2 (law of propagation of uncertainty, uncorrelated inputs).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from ftsource.errors import AnalysisError, OptionError

__all__ = ["LineSetFigures", "line_set_figures"]


@dataclass(frozen=True)
class LineSetFigures:
    """Peak and centroid of a set of lines, vacuum nm, with standard uncertainties."""

    peak_nm: float
    u_peak_nm: float
    centroid_nm: float
    u_centroid_nm: float
    n_lines: int


def line_set_figures(wavelength_nm, u_wavelength_nm, area, u_area=None) -> LineSetFigures:
    """Peak (strongest line) and intensity-weighted centroid of lines (module notes).

    Parameters
    ----------
    wavelength_nm, u_wavelength_nm : array_like
        Vacuum wavelengths of the lines and their standard uncertainties (non-finite u count
        as 0).
    area : array_like
        Integrated intensities (any unit); non-positive areas are left out.
    u_area : array_like, optional
        Their standard uncertainties (default 0).

    Returns
    -------
    LineSetFigures

    Raises
    ------
    OptionError
        Mismatched lengths.
    AnalysisError
        No line with a positive area.
    """
    lam = np.asarray(wavelength_nm, dtype=float).ravel()
    ul = np.asarray(u_wavelength_nm, dtype=float).ravel()
    a = np.asarray(area, dtype=float).ravel()
    ua = np.zeros_like(a) if u_area is None else np.asarray(u_area, dtype=float).ravel()
    if not (lam.size == ul.size == a.size == ua.size):
        raise OptionError(
            f"wavelength_nm ({lam.size}), u_wavelength_nm ({ul.size}), area ({a.size}) and "
            f"u_area ({ua.size}) must have the same length"
        )
    ok = np.isfinite(lam) & np.isfinite(a) & (a > 0)
    if not np.any(ok):
        raise AnalysisError("no line with a positive intensity: no peak or centroid")
    lam, ul, a, ua = lam[ok], ul[ok], a[ok], ua[ok]
    ul = np.where(np.isfinite(ul), ul, 0.0)
    ua = np.where(np.isfinite(ua), ua, 0.0)
    i = int(np.argmax(a))
    total = float(a.sum())
    c = float(np.sum(a * lam) / total)
    u_c = math.sqrt(float(np.sum((a / total * ul) ** 2) + np.sum(((lam - c) / total * ua) ** 2)))
    return LineSetFigures(float(lam[i]), float(ul[i]), c, u_c, int(lam.size))
