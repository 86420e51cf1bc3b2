"""Ghost lines: spectral features that are not light of the source.

A line in the measured spectrum is flagged, not reported as a source line, when its position
and strength say it was made by the instrument:

``reference-ghost``
    Reference-laser light or electrical crosstalk of the reference fringes in the source
    channel puts a line at the reference wavenumber σ_ref; mixed with the main line it gives
    lines at σ_s ± σ_ref.
``reference-harmonic``
    Harmonic distortion of the reference channel(s) leaves a phase error periodic in the
    reference fringe phase (:mod:`ftsource.interferogram.periodic` removes most of it); it
    modulates the OPD scale at k cycles per reference wavelength and puts weak lines at
    |σ_s ± k·σ_ref|, k = 1 … :data:`MAX_REFERENCE_HARMONIC`, beside every source line σ_s
    (k = 1 beside the main line only: elsewhere it may as well be a real line), of
    relative strength about β_k·σ_s/(2σ_ref) for an error of β_k rad (first-order sidebands of
    a phase modulation). A line there at most :data:`REFERENCE_HARMONIC_LEVEL` of its parent
    is flagged.
``harmonic``
    A clipped (saturated) detector is a memoryless nonlinearity y = g(x) of the interferogram
    x(OPD): a fringe cos(2πσx) passing through it comes out with harmonics at m·σ,
    m = 2, 3, ... (Maas 2003, ch. 1).
``intermodulation``
    The same nonlinearity fed with two fringes of wavenumbers σ_i and σ_j gives mixing products
    at |m·σ_i ± n·σ_j|, m, n ≥ 1, of order m + n (Maas 2003, ch. 1; Pedro & Carvalho 2003,
    ch. 2). Their strength falls with the order, so only orders up to
    :data:`MAX_INTERMOD_ORDER` are searched.

A product is always weaker than the lines that make it, so a line is flagged only when it is
weaker than its parent(s); lines are classified from the strongest down and only lines kept as
source lines can be parents. Nonlinear products are looked for only when the detector clips:
a detector kept in its linear range makes none worth flagging (Griffiths & de Haseth 2007,
detector nonlinearity).

Products within one parent spacing of their parents, such as the odd-order 2σ_i − σ_j
(coefficients differing by one), fall among the source's own lines, on the grid a real comb
of modes also occupies: a multimode laser's mode k+1 sits exactly at 2σ_k − σ_(k−1) and is
weaker than both. Such a product is flagged only when no other source line lies between it
and its parents (in a comb, the nearer modes do) and it is at least :data:`IN_BAND_MARGIN`
times weaker than either parent, or than a_i²/a_j, the value a Gaussian envelope through the
parents would give it (a comb has a_k·a_j/a_i² = exp(−8 ln 2/F²) for an envelope FWHM of F
mode spacings: above 1/10 for F ≥ 1.6). Adjacent modes of a Gaussian comb above 5 % of the
strongest are also less than 10× apart. A detector saturating above the fringes' mean
(one-sided clipping, as a photodiode or an ADC does) gives products that pass one test or the
other; both statements are checked numerically in ``tests/test_ghosts.py``. Clipping below
the mean makes stronger in-band products, which are then left as source lines (the result's
clipping warning still stands).

Units: wavenumbers in cm⁻¹; strengths in any common unit (line areas).

References
----------
S. A. Maas, *Nonlinear Microwave and RF Circuits*, 2nd ed., Artech House, 2003, ch. 1
(power-series analysis of a memoryless nonlinearity: harmonics and mixing products
m·f₁ + n·f₂ of order |m| + |n|) — from memory.

J. C. Pedro and N. B. Carvalho, *Intermodulation Distortion in Microwave and Wireless
Circuits*, Artech House, 2003, ch. 2 — from memory.

P. R. Griffiths and J. A. de Haseth, *Fourier Transform Infrared Spectrometry*, 2nd ed.,
Wiley, 2007 (detector nonlinearity and spurious spectral features) — from memory.
"""

from __future__ import annotations

import math
from collections.abc import Sequence

import numpy as np

__all__ = [
    "MAX_INTERMOD_ORDER",
    "IN_BAND_MARGIN",
    "GHOST_FLAGS",
    "MAX_REFERENCE_HARMONIC",
    "REFERENCE_HARMONIC_LEVEL",
    "flag_ghosts",
]

#: Highest order m + n of the intermodulation products searched.
MAX_INTERMOD_ORDER = 4
#: An odd-order product landing among the source's lines (coefficients summing to ±1) must be
#: this many times weaker than both its parents to be flagged.
IN_BAND_MARGIN = 10.0
#: The flags :func:`flag_ghosts` can give (besides None, a source line).
GHOST_FLAGS = ("reference-ghost", "reference-harmonic", "harmonic", "intermodulation")
#: Highest k of the side lines |σ_s ± k·σ_ref| of a distorted reference: 2nd and 3rd harmonic
#: distortion of the channels give phase errors at k = 1 … 4 cycles per fringe.
MAX_REFERENCE_HARMONIC = 4
#: A side line of a distorted reference is at most this fraction of its parent line: a phase
#: error of β rad gives β·σ_s/(2σ_ref) (first-order Bessel sideband), 0.05 for β = 0.1 rad
#: (about 10 % harmonic distortion of the channels) at σ_s = σ_ref — common practice.
REFERENCE_HARMONIC_LEVEL = 0.05

#: A line at the reference wavenumber that is the strongest line is a source line when no line
#: away from the reference reaches this fraction of its strength (common practice: crosstalk
#: is weak beside the source it leaks into).
REFERENCE_DOMINANCE = 0.1


def flag_ghosts(
    centres_per_cm: Sequence[float],
    strengths: Sequence[float],
    tolerances_per_cm: Sequence[float],
    *,
    reference_per_cm: float | None = None,
    clipped: bool = False,
    band_edge_per_cm: float = math.inf,
    eligible: Sequence[bool] | None = None,
    max_intermod_order: int = MAX_INTERMOD_ORDER,
    reference_harmonic_spread_per_cm: float = 0.0,
) -> list[str | None]:
    """Flag the lines that are ghosts: reference light, harmonics, intermodulation products.

    Parameters
    ----------
    centres_per_cm : sequence of float
        Line centres (wavenumber, cm⁻¹).
    strengths : sequence of float
        Line strengths (e.g. fitted areas) in a common unit; they order the lines and decide
        which line can be a product of which.
    tolerances_per_cm : sequence of float
        For each line, how far (cm⁻¹) its centre may lie from a predicted ghost position and
        still be taken for that ghost (e.g. a few instrument line widths).
    reference_per_cm : float or None
        Wavenumber of the reference laser; None when the record has no reference laser (no
        reference ghost is looked for).
    clipped : bool
        Whether the detector clips. Harmonics and intermodulation products are looked for only
        then.
    band_edge_per_cm : float
        Highest wavenumber searched: harmonics m·σ and products above it are not considered.
    eligible : sequence of bool, optional
        Lines that may be ghosts at all (e.g. those as narrow as the instrument line shape,
        like the ghosts of a laser); by default every line.
    max_intermod_order : int
        Highest order m + n of the intermodulation products (≥ 2).
    reference_harmonic_spread_per_cm : float
        Extra distance (cm⁻¹) a side line of a distorted reference may lie from
        |σ_i ± m·σ_ref|: an uneven mirror speed makes the residual phase error vary along the
        path and spreads each side line into a cluster at ± j/P (P the wobble's period).

    Returns
    -------
    list of str or None
        Per line, in the input order: ``"reference-ghost"``, ``"reference-harmonic"``,
        ``"harmonic"``, ``"intermodulation"`` or None (a source line).

    Raises
    ------
    ValueError
        When the sequences differ in length or an argument is out of range.

    Notes
    -----
    Checks, in this order, for a line k:

    1. reference ghost: ``|σ_k − σ_ref| < tol_k``, or ``|σ_k − (σ_s ± σ_ref)| < tol_k`` with s
       the strongest line or the strongest line not at σ_ref (k ≠ s); independent of clipping
       and of strengths, as a reference ghost can be strong. One exception: the strongest
       line at σ_ref is kept as a source line when no line away from σ_ref reaches
       :data:`REFERENCE_DOMINANCE` of its strength, since a source at the reference's own
       wavelength (a He-Ne, a 633 nm diode) is then far likelier than crosstalk with nothing
       else to see (the caller warns and says how to tell);
    2. reference harmonic: ``|σ_k − |σ_i ± m·σ_ref|| < tol_k`` for a source line i with
       ``a_k ≤`` :data:`REFERENCE_HARMONIC_LEVEL` ``· a_i`` and m = 2 …
       :data:`MAX_REFERENCE_HARMONIC`, or m = 1 when i is a main line of step 1
       (independent of clipping), the tolerance widened by
       ``reference_harmonic_spread_per_cm``;
    3. harmonic (clipped only): ``|σ_k − m·σ_i| < tol_k`` for a source line i stronger than k
       and m = 2 … ⌊band_edge/σ_i⌋;
    4. intermodulation (clipped only): ``|σ_k − |m·σ_i ± n·σ_j|| < tol_k`` for two source lines
       i ≠ j both stronger than k, m, n ≥ 1, m + n ≤ ``max_intermod_order``; a product
       among the source's lines (within |σ_i − σ_j| of the parents, or a difference with
       |m − n| = 1) must also have no other source line between it and its parents, and
       ``M·a_k ≤ min(a_i, a_j)`` or (m = n + 1) ``M·a_k·a_j^n ≤ a_i^m``, with
       M = :data:`IN_BAND_MARGIN`.

    Lines are visited from the strongest down, so every possible parent is classified before
    its products, and flagged lines are never parents.

    References
    ----------
    S. A. Maas, *Nonlinear Microwave and RF Circuits*, 2nd ed., Artech House, 2003, ch. 1 —
    from memory.
    """
    sig = np.asarray(centres_per_cm, dtype=float)
    amp = np.asarray(strengths, dtype=float)
    tol = np.asarray(tolerances_per_cm, dtype=float)
    n_lines = sig.size
    ok = np.ones(n_lines, bool) if eligible is None else np.asarray(eligible, dtype=bool)
    _check_ghost_inputs(sig, amp, tol, ok, max_intermod_order,
                        reference_harmonic_spread_per_cm)
    flags: list[str | None] = [None] * n_lines
    if n_lines == 0:
        return flags
    strongest = int(np.argmax(amp))
    mains, source_at_reference = _main_lines(sig, amp, tol, reference_per_cm)
    sources: list[int] = []  # lines kept as source lines so far (all stronger than the current)
    for k in map(int, np.argsort(-amp, kind="stable")):
        flag = None
        if ok[k] and not (k == strongest and source_at_reference):  # else: the source itself
            flag = _ghost_flag(k, sources, mains, sig, amp, tol[k], reference_per_cm,
                               reference_harmonic_spread_per_cm, clipped, band_edge_per_cm,
                               max_intermod_order)
        flags[k] = flag
        if flag is None:
            sources.append(k)
    return flags


def _ghost_flag(k, sources, mains, sig, amp, tol_k, reference_per_cm, spread, clipped,
                band_edge_per_cm, max_intermod_order):
    """The flag of line ``k`` (None: a source line), given the source lines kept so far (all
    stronger than it)."""
    if reference_per_cm is not None and _is_reference_ghost(k, mains, sig, tol_k,
                                                            reference_per_cm):
        return "reference-ghost"
    if reference_per_cm is not None and _is_reference_harmonic(
        k, sources, mains, sig, amp, tol_k + spread, reference_per_cm,
    ):
        return "reference-harmonic"
    if clipped:
        parents = [i for i in sources if amp[i] > amp[k]]
        if _is_harmonic(sig[k], tol_k, sig[parents], band_edge_per_cm):
            return "harmonic"
        if _is_intermodulation(sig[k], amp[k], tol_k, sig[parents], amp[parents], sig[sources],
                               band_edge_per_cm, max_intermod_order):
            return "intermodulation"
    return None


def _check_ghost_inputs(sig, amp, tol, ok, max_intermod_order, spread) -> None:
    """Refuse arrays of different shapes, a mixing order below 2 and negative tolerances."""
    if not (sig.ndim == amp.ndim == tol.ndim == ok.ndim == 1) or not (
        amp.size == tol.size == ok.size == sig.size
    ):
        raise ValueError("centres, strengths, tolerances and eligible must be 1-D and of equal "
                         "length")
    if max_intermod_order < 2:
        raise ValueError(f"max_intermod_order must be at least 2, got {max_intermod_order!r}")
    if not (spread >= 0 and math.isfinite(spread)):
        raise ValueError("reference_harmonic_spread_per_cm must be finite and non-negative, "
                         f"got {spread!r}")
    if np.any(tol < 0) or np.any(~np.isfinite(tol)):
        raise ValueError("tolerances must be finite and non-negative")


def _main_lines(sig, amp, tol, reference_per_cm):
    """The main line(s) whose mixing with reference light is looked for (the strongest line,
    and the strongest one not at the reference wavenumber when that is another), and whether
    the strongest line is the source itself sitting at the reference wavenumber."""
    strongest = int(np.argmax(amp))
    mains = [strongest]
    if reference_per_cm is None:
        return mains, False
    off_ref = np.flatnonzero(np.abs(sig - reference_per_cm) >= tol)
    if off_ref.size:
        mains.append(int(off_ref[np.argmax(amp[off_ref])]))
    at_reference = bool(
        abs(sig[strongest] - reference_per_cm) < tol[strongest]
        and (off_ref.size == 0 or np.max(amp[off_ref]) < REFERENCE_DOMINANCE * amp[strongest])
    )
    return mains, at_reference


def _is_reference_ghost(k, mains, sig, tol, s_ref) -> bool:
    if abs(sig[k] - s_ref) < tol:
        return True
    return any(k != i and abs(sig[k] - (sig[i] + s * s_ref)) < tol
               for i in mains for s in (-1.0, 1.0))


def _is_reference_harmonic(k, sources, mains, sig, amp, tol, s_ref) -> bool:
    for i in sources:
        if amp[k] > REFERENCE_HARMONIC_LEVEL * amp[i]:
            continue
        # m = 1 beside a line other than the main ones stays a source line: a weak line at
        # σ_i ± σ_ref is as likely a real line as reference light mixed in (see above)
        for m in range(1 if i in mains else 2, MAX_REFERENCE_HARMONIC + 1):
            if min(abs(sig[k] - abs(sig[i] + s * m * s_ref)) for s in (-1.0, 1.0)) < tol:
                return True
    return False


def _is_harmonic(s_k, tol, parents, band_edge) -> bool:
    for s_i in parents:
        if s_i <= 0:
            continue
        m = round(s_k / s_i)
        if m >= 2 and m * s_i <= band_edge + tol and abs(s_k - m * s_i) < tol:
            return True
    return False


def _is_intermodulation(s_k, a_k, tol, parents, strengths, sources, band_edge, max_order):
    """Whether s_k is |m·σ_i ± n·σ_j| of two parents (all stronger than the line k)."""
    n_par = len(parents)
    for i in range(n_par):
        for j in range(n_par):
            if i == j:
                continue
            s_i, s_j, a_i, a_j = parents[i], parents[j], strengths[i], strengths[j]
            # the products within one parent spacing of the parents lie among the source's lines
            gap = abs(s_i - s_j) + tol
            among = min(s_i, s_j) - gap <= s_k <= max(s_i, s_j) + gap
            for m in range(1, max_order):
                for n in range(1, max_order - m + 1):
                    p_sum = m * s_i + n * s_j
                    d = m * s_i - n * s_j  # the other sign comes with (j, i)
                    if j > i and p_sum <= band_edge + tol and abs(s_k - p_sum) < tol:
                        in_band, coef = among, 0
                    elif d > 0 and abs(s_k - d) < tol:
                        in_band, coef = among or abs(m - n) == 1, m - n
                    else:
                        continue
                    if not in_band or _in_band_product(
                        s_k, a_k, s_i, s_j, a_i, a_j, m, n, coef, sources
                    ):
                        return True
    return False


def _in_band_product(s_k, a_k, s_i, s_j, a_i, a_j, m, n, coef, sources) -> bool:
    """A product among the source's lines (within one parent spacing of its parents, or
    m·σ_i − n·σ_j with |m − n| = 1): flagged when no other source line lies between it and
    its parents (a comb would have one) and it is :data:`IN_BAND_MARGIN` times weaker than
    both parents or, for m = n + 1, than the Gaussian-comb continuation a_i^m / a_j^n of its
    parents."""
    lo, hi = min(s_k, s_i, s_j), max(s_k, s_i, s_j)
    if any(lo < s < hi and s not in (s_i, s_j) for s in sources):
        return False
    if a_k * IN_BAND_MARGIN <= min(a_i, a_j):
        return True
    # a Gaussian envelope has a_k·a_j^n / a_i^m = exp(-α·m·n·Δ²): near 1 for a real comb
    return coef == 1 and a_k * a_j**n * IN_BAND_MARGIN <= a_i**m

