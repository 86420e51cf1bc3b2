"""Aliasing in the time sampling: where folded content can land, and what a record shows.

A fringe of wavenumber σ recorded at OPD speed v has the frequency σv. Sampled at f_s, a
frequency above f_s/2 folds back: the line appears at the apparent wavenumber
``|σ − m·F|`` with ``F = f_s/v`` and the fold number m that brings it into ``[0, F/2]``. One
spectrum at one speed cannot tell a folded line from a real one; sweeps at different speeds
can (:func:`ftsource.lines.sweeps.aliasing_check`). This module gives

* :func:`folded_band` / :func:`band_at_risk`: the apparent wavenumbers onto which light the
  detector can see but the sampling cannot support would fold at the recorded speeds;
* :func:`assess_lines`: one verdict per measured line from the band at risk and the
  speed-diversity check, with a sentence saying what it means and what to change.

Verdicts (the ``aliasing`` key of each line in the result):

``not at risk``
    No alias of light between :data:`SHORTEST_DETECTED_NM` and the alias-free limit can land
    at the line's place at the recorded speeds.
``ruled out``
    The line is where an alias could land, but it stays put in sweeps whose speeds differ
    enough to move an alias.
``alias``
    The line moves between sweeps as the alias of one wavenumber would (the true wavenumber
    is given in the warning), or it lies beyond the alias-free limit of the fastest sweeps.
``cannot be excluded``
    The line is where an alias could land, and the sweeps cannot tell (speeds too alike, line
    too weak for the check, or inconsistent behaviour).
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np

from ftsource.lines.fitting import SEARCH_BAND_NM

__all__ = [
    "SHORTEST_DETECTED_NM",
    "LineAliasing",
    "assess_lines",
    "band_at_risk",
    "folded_band",
    "speed_step_needed",
    "band_text",
    "alias_notes",
]

#: Shortest wavelength assumed to reach the detector (nm): the short end of the line search
#: (:data:`ftsource.lines.fitting.SEARCH_BAND_NM`). Common practice: air and ordinary optics
#: absorb the vacuum ultraviolet below about 190–200 nm, and silicon photodiodes lose their
#: response there; a source emitting only longer wavelengths is safer still.
SHORTEST_DETECTED_NM = SEARCH_BAND_NM[0]

VERDICTS = ("not at risk", "ruled out", "alias", "cannot be excluded")


def folded_band(sigma_lo: float, sigma_hi: float, fold_per_cm: float) -> list[tuple[float, float]]:
    """Apparent wavenumbers of the band ``[sigma_lo, sigma_hi]`` sampled with fold ``F``.

    Parameters
    ----------
    sigma_lo, sigma_hi : float
        The true band, cm⁻¹ (``0 <= sigma_lo <= sigma_hi``).
    fold_per_cm : float
        ``F = f_s/v``: the sample rate over the OPD speed, cm⁻¹. The apparent wavenumber of σ is
        ``|σ − F·round(σ/F)|``, in ``[0, F/2]``.

    Returns
    -------
    list of (float, float)
        Disjoint intervals of apparent wavenumber, sorted.

    References
    ----------
    .. [1] H. Nyquist, Trans. AIEE 47, 617 (1928); C. E. Shannon, Proc. IRE 37, 10 (1949)
       (a sampled frequency f is indistinguishable from |f − m f_s|).
    """
    F = float(fold_per_cm)
    lo, hi = float(sigma_lo), float(sigma_hi)
    if not (F > 0 and np.isfinite(F)) or not (0 <= lo <= hi):
        raise ValueError("folded_band needs F > 0 and 0 <= sigma_lo <= sigma_hi")
    if hi - lo >= F:  # a whole period of the fold: every apparent wavenumber
        return [(0.0, F / 2)]
    # the fold is linear between multiples of F/2: the image of each piece is an interval
    cuts = [lo] + [m * F / 2 for m in range(int(np.floor(lo / (F / 2))) + 1,
                                              int(np.ceil(hi / (F / 2))))] + [hi]
    pieces = []
    for a, b in zip(cuts[:-1], cuts[1:], strict=True):
        fa, fb = _fold(a, F), _fold(b, F)
        pieces.append((min(fa, fb), max(fa, fb)))
    return _merge(pieces)


def band_at_risk(
    sample_rate_hz: float,
    speeds_cm_s: Sequence[float],
    bandwidth_fraction: float,
    *,
    shortest_nm: float = SHORTEST_DETECTED_NM,
) -> list[tuple[float, float]]:
    """Apparent wavenumbers where aliases of detectable light may land at the given speeds.

    For each speed v the alias-free band ends at ``β f_s/v`` (β: the usable fraction of the
    sample rate); light from there up to ``1e7/shortest_nm`` cm⁻¹ folds (:func:`folded_band`).

    Parameters
    ----------
    sample_rate_hz : float
        The record's sample rate.
    speeds_cm_s : sequence of float
        OPD speeds met in the record (each sweep's typical and fastest speeds, say).
    bandwidth_fraction : float
        β: 0.5 for an ADC, 0.45 for a sound card (its anti-alias filter's edge).
    shortest_nm : float
        Shortest wavelength that reaches the detector.

    Returns
    -------
    list of (float, float)
        Disjoint sorted intervals, cm⁻¹; empty when the sampling supports every detectable
        wavelength at all the speeds.

    References
    ----------
    .. [1] H. Nyquist, Trans. AIEE 47, 617 (1928); C. E. Shannon, Proc. IRE 37, 10 (1949).
    """
    sigma_max = 1e7 / float(shortest_nm)
    pieces: list[tuple[float, float]] = []
    for v in np.abs(np.asarray(speeds_cm_s, float)):
        if not (np.isfinite(v) and v > 0):
            continue
        F = float(sample_rate_hz) / v
        start = float(bandwidth_fraction) * F
        if start < sigma_max:
            pieces += folded_band(start, sigma_max, F)
    return _merge(pieces)


def speed_step_needed(speed_rtol: float, k: float = 3.0) -> float:
    """Relative speed difference (per cent) two sweeps need to tell a line from its alias.

    A first-fold alias sits at ``F − σ`` with ``F = f_s/v``; between speeds ``v`` and
    ``v(1 + s)`` it moves by about ``F·s``. Each sweep's effective speed is known to
    ``speed_rtol`` (relative), so the move must exceed ``k·√2·F·speed_rtol``: ``s > k√2·rtol``
    (the centres' own uncertainties, far smaller for a line above the check's SNR threshold,
    are neglected here).

    Parameters
    ----------
    speed_rtol : float
        Relative uncertainty of a sweep's effective speed.
    k : float
        The check's threshold in standard uncertainties.

    Returns
    -------
    float
        Per cent.
    """
    return float(100 * k * np.sqrt(2) * speed_rtol)


@dataclass(frozen=True)
class LineAliasing:
    """The aliasing verdict for one measured line.

    ``verdict`` is one of :data:`VERDICTS`; ``message`` is a sentence for ``warnings``
    (empty when there is nothing to say); ``true_sigma_per_cm`` is the wavenumber an alias
    comes from (NaN otherwise).
    """

    verdict: str
    message: str
    true_sigma_per_cm: float = float("nan")


def assess_lines(
    centres_per_cm: Sequence[float],
    band: Sequence[tuple[float, float]],
    check=None,
    *,
    tolerance_per_cm: float,
    speed_step_percent: float = 5.0,
    speed_rtol: float = 0.01,
    alias_free_limit_per_cm: float = np.inf,
    shortest_nm: float = SHORTEST_DETECTED_NM,
) -> list[LineAliasing]:
    """Give each measured line an aliasing verdict.

    Parameters
    ----------
    centres_per_cm : sequence of float
        Apparent line centres (on the axis the sweep spectra use), cm⁻¹.
    band : sequence of (float, float)
        The band at risk (:func:`band_at_risk`).
    check : ftsource.lines.sweeps.AliasCheck, optional
        The speed-diversity check of the record's sweeps; None when there was none (one
        sweep).
    tolerance_per_cm : float
        How far a line may be from a checked peak's centre in any sweep to take its verdict
        (a few resolution elements: the co-added line is an average over sweeps).
    speed_rtol : float
        Relative uncertainty of a sweep's effective speed: the wavenumber an alias folds from,
        ``σ = m·F ∓ σ_app``, is known to about ``m·F·speed_rtol``, which the message states.
    speed_step_percent : float
        The speed difference between sweeps, in per cent, that the check needs to move an
        alias (:func:`speed_step_needed`); quoted in the advice.
    alias_free_limit_per_cm : float
        The alias-free limit of the fastest sweeps, cm⁻¹: a feature beyond it is an alias or
        an interpolation image of one (verdict ``alias``; the caller flags it and says so).
    shortest_nm : float
        Shortest wavelength a detector sees: an alias whose fold points below it is called an
        image of another alias in the message.

    Returns
    -------
    list of LineAliasing
        One per line, in order.
    """
    out = []
    for c in centres_per_cm:
        c = float(c)
        wl = 1e7 / c if c > 0 else float("inf")
        at_risk = any(lo - tolerance_per_cm <= c <= hi + tolerance_per_cm for lo, hi in band)
        match = _nearest_verdict(check, c, tolerance_per_cm) if check is not None else None
        is_alias = match is not None and match.verdict == "alias"
        if c > alias_free_limit_per_cm and not is_alias:
            out.append(LineAliasing("alias", ""))
        elif not at_risk and not is_alias:
            out.append(LineAliasing("not at risk", ""))
        elif match is not None and match.verdict == "real":
            out.append(LineAliasing("ruled out", ""))
        elif is_alias:
            true_nm = 1e7 / match.true_sigma_per_cm
            if true_nm >= shortest_nm:
                # m·F ≤ σ_true + σ_app (first branch σ = mF − σ_app; the other is smaller)
                u_nm = 1e7 * (match.true_sigma_per_cm + c) * speed_rtol / match.true_sigma_per_cm**2
                what = (
                    f"as light at about {true_nm:.1f} nm (fold {match.fold}) folded by the time "
                    f"sampling would (that wavelength is known to about ±{u_nm:.2g} nm, from the "
                    f"sweeps' speed uncertainty); to measure that light, sample faster or move "
                    f"the mirror more slowly"
                )
            else:
                what = (
                    f"as an alias does (its fold {match.fold} fits light near {true_nm:.0f} nm, "
                    f"shorter than a detector sees: more likely an image of another alias)"
                )
            out.append(LineAliasing(
                "alias",
                f"the feature at {wl:.2f} nm is an alias, not a source line: it moves between "
                f"sweeps of different speeds {what}",
                match.true_sigma_per_cm,
            ))
        else:
            if check is None:
                why = "the record has only one usable sweep"
            elif match is None:
                why = "the line is too weak for the speed-diversity check"
            else:
                why = match.reason
            out.append(LineAliasing(
                "cannot be excluded",
                f"aliasing cannot be excluded for the line at {wl:.2f} nm ({why}): light "
                f"shorter than the alias-free limit would fold onto it; sample faster, move the "
                f"mirror more slowly, or record sweeps at mirror speeds at least "
                f"{speed_step_percent:.2g} % apart",
            ))
    return out


# --------------------------------------------------------------------------------------------
def _fold(sigma: float, F: float) -> float:
    return abs(sigma - F * np.round(sigma / F))


def _merge(pieces):
    pieces = sorted(pieces)
    merged: list[tuple[float, float]] = []
    for a, b in pieces:
        if merged and a <= merged[-1][1]:
            merged[-1] = (merged[-1][0], max(merged[-1][1], b))
        else:
            merged.append((a, b))
    return merged


def _nearest_verdict(check, centre, tol):
    best, best_d = None, np.inf
    for ln in check.lines:
        cs = [x for x in (ln.sigma_per_cm, *ln.centres_per_cm) if np.isfinite(x)]
        d = min(abs(x - centre) for x in cs) if cs else np.inf
        if d <= tol and d < best_d:
            best, best_d = ln, d
    return best


def band_text(band, max_ranges: int = 3) -> str:
    """Apparent-wavenumber intervals as wavelength ranges, e.g. ``"640–910 nm"``."""
    merged: list[tuple[float, float]] = []
    for a, b in sorted(band):  # ranges closer than 2 % read as one
        if merged and a <= 1.02 * merged[-1][1]:
            merged[-1] = (merged[-1][0], max(b, merged[-1][1]))
        else:
            merged.append((a, b))
    parts = []
    for a, b in sorted(merged, key=lambda ab: ab[1] - ab[0], reverse=True)[:max_ranges]:
        short_nm = 1e7 / b
        long_end = f"–{1e7 / a:.0f} nm" if a > 100.0 else " nm and beyond"
        parts.append(f"{short_nm:.0f}{long_end}")
    more = " and elsewhere" if len(merged) > max_ranges else ""
    return ", ".join(parts) + more


def alias_notes(main, min_wavelength_nm: float, band) -> tuple[str, ...]:
    """What the time sampling leaves unmeasured: a note when the main line (a
    :class:`ftsource.lines.fitting.LineFit`, or None) lies below the shortest alias-free
    wavelength, else where shorter light would fold to (``band``, apparent-wavenumber
    intervals from :func:`band_at_risk`; None when unknown, empty when nothing can fold)."""
    if main is not None and 1e7 / main.centre_per_cm < min_wavelength_nm:
        return (
            f"the main line lies below the shortest wavelength the time sampling supports "
            f"({min_wavelength_nm:.1f} nm): it may be an alias; sample faster or scan slower",
        )
    if band is None or band:
        where = band_text(band) if band else "the spectrum"
        return (
            f"light shorter than {min_wavelength_nm:.0f} nm (if the source emits any and the "
            f"detector sees it) is not measured: the time sampling folds it onto {where} at "
            "these mirror speeds (aliasing); each line's aliasing verdict says what the sweeps' "
            "speeds could tell; sample faster or move the mirror more slowly to cover shorter "
            "wavelengths",
        )
    return ()
