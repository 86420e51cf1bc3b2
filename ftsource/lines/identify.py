"""Which bundled reference line a measured line may be: the nearest entries of the line lists
(:mod:`ftsource.linelists`) and the nearest of them within tolerance.

:func:`identify_line` is the stage; it returns an :class:`Identification`.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

__all__ = ["Identification", "identify_line", "IDENTIFY_RANGE_NM"]

#: Lines are compared with the bundled lists between these vacuum wavelengths (nm).
IDENTIFY_RANGE_NM = (200.0, 3000.0)


@dataclass(frozen=True)
class Identification:
    """The (up to 3) nearest reference entries (:class:`ftsource.linelists.Candidate`),
    nearest first, and the nearest within tolerance (None: no match)."""

    best: object | None = None
    nearest: tuple = ()


def identify_line(wl_nm, u_fit_nm, reference_uncertainty_ppm, *, source_line=True,
                  tables=None) -> Identification:
    """Candidates for one measured line of vacuum wavelength ``wl_nm``.

    The tolerance is k = 2 times the line's fit uncertainty ``u_fit_nm`` combined with the
    reference laser's relative uncertainty (``reference_uncertainty_ppm``) and the entry's own
    stated uncertainty (:func:`ftsource.linelists.identify`), so a He-Ne-referenced
    measurement is not asked to be better than its own reference. Lines flagged as artefacts
    (``source_line`` False) and lines outside :data:`IDENTIFY_RANGE_NM` get no candidates.
    ``tables`` caches the lists read (shared over the lines of one analysis).

    References
    ----------
    .. [1] JCGM 100:2008 (GUM), §6 (expanded uncertainty, k = 2).
    """
    from ftsource.linelists import identify

    lo, hi = IDENTIFY_RANGE_NM
    if not (source_line and np.isfinite(wl_nm) and lo <= wl_nm <= hi):
        return Identification()
    u = float(np.hypot(u_fit_nm if np.isfinite(u_fit_nm) else 0.0,
                       wl_nm * reference_uncertainty_ppm * 1e-6))
    candidates = tuple(identify(wl_nm, u, max_candidates=3, tables=tables))
    best = next((c for c in candidates if c.within_tolerance), None)
    return Identification(best, candidates)
