"""Scan health: how well the record was taken, item by item, with a verdict and advice.

:func:`scan_health` is a pure function of the stages' outputs (the reference and source
columns, the optical path, the sampling limits, the interferograms, the main line). Each
:class:`HealthItem` carries its value, a ``good``/``poor`` verdict against a stated threshold
with the threshold's source (``common practice`` where the trade has no published figure),
or ``note`` when the value is to be read rather than judged, and one line of advice.

Definitions
-----------
* Fringe visibility ``V = (I_max − I_min)/(I_max + I_min)`` (Michelson's visibility; Born &
  Wolf, *Principles of Optics*, 7th ed., §7.5.4), with the 1st and 99th percentiles for the
  extremes so that a few noisy samples do not count. It needs a DC-coupled channel (a zero
  level at no light); a channel that goes below zero cannot give it, and for a reference
  channel the steadiness of the fringe amplitude (5th percentile over the median of the
  per-window amplitude) is given instead.
* Source visibility near ZPD: the largest envelope of the DC-free interferogram over its
  DC level.
* Mirror speed: the median speed in the middle 80 % of the used sweeps, measured over windows
  of two reference fringes; jitter the relative RMS of that speed about a degree-4 polynomial
  in time fitted per sweep (fast wobble and vibration, not the slow change over a sweep);
  turnarounds the sweep ends.
* Drift: the range of the sweeps' DC levels over the larger of their mean and the fringe
  amplitude (so that it means something for an AC-coupled channel too).
* Sampling margin: ``1 − λ_min/λ_s`` for the shortest source line ``λ_s`` and the shortest
  alias-free wavelength ``λ_min``.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from ftsource.interferogram.channels import MIN_SAMPLES_PER_FRINGE

__all__ = ["HealthItem", "ScanHealth", "scan_health", "fringe_visibility",
           "amplitude_steadiness", "speed_jitter"]

COMMON = "common practice"

# thresholds (each with its source in the item)
REFERENCE_VISIBILITY_MIN = 0.3
REFERENCE_STEADINESS_MIN = 0.5
SOURCE_VISIBILITY_MIN = 0.3
SPEED_JITTER_MAX = 0.10
CLIPPED_FRACTION_MAX = 1e-3
DRIFT_MAX = 0.05
SNR_MIN = 100.0
#: Twice what the analysis needs (:data:`ftsource.interferogram.channels.MIN_SAMPLES_PER_FRINGE`,
#: below which it refuses the record), so that a faster stretch of the scan does not make the
#: record unusable (common practice).
SAMPLES_PER_FRINGE_MIN = 2 * MIN_SAMPLES_PER_FRINGE
SAMPLING_MARGIN_MIN = 0.10
#: Degree of the polynomial in time that stands for the slow change of speed over a sweep.
TREND_DEGREE = 4


@dataclass(frozen=True)
class HealthItem:
    """One item of the scan health.

    ``verdict`` is ``good``, ``poor``, ``note`` (read, not judged) or ``not measured``
    (``value`` is then None and ``advice`` says why).
    """

    name: str
    value: float | None
    unit: str
    verdict: str
    threshold: str
    source: str
    advice: str


@dataclass(frozen=True)
class ScanHealth:
    """All items, in a fixed order."""

    items: tuple[HealthItem, ...]

    @property
    def poor(self) -> tuple[HealthItem, ...]:
        return tuple(i for i in self.items if i.verdict == "poor")

    def item(self, name: str) -> HealthItem:
        for i in self.items:
            if i.name == name:
                return i
        raise KeyError(name)


#: Samples per pass of :func:`percentiles` over a long column.
PERCENTILE_BLOCK = 1 << 20
#: Bins of :func:`percentiles`' first pass.
PERCENTILE_BINS = 1 << 16


def _all_finite(x: np.ndarray) -> bool:
    return all(np.isfinite(x[a : a + PERCENTILE_BLOCK]).all()
               for a in range(0, x.size, PERCENTILE_BLOCK))


def percentiles(x, q) -> np.ndarray:
    """``numpy.percentile(x, q)`` (its default linear method) of finite values, without a
    copy of a long ``x``: the values are binned by value in blocks (a count per bin), then
    only the values in the bins that hold the wanted ranks are gathered and sorted.

    The result is numpy's to the last bit: the same order statistics, combined by the same
    interpolation formula. A record's column is mapped or large; ``numpy.percentile``
    partitions a full copy of it.
    """
    x = np.asarray(x, float)
    n = x.size
    qs = np.atleast_1d(np.asarray(q, float))
    if n <= 2 * PERCENTILE_BLOCK:
        return np.percentile(x, qs)
    blocks = [(a, min(a + PERCENTILE_BLOCK, n)) for a in range(0, n, PERCENTILE_BLOCK)]
    mn = min(float(x[a:b].min()) for a, b in blocks)
    mx = max(float(x[a:b].max()) for a, b in blocks)
    if mn == mx:
        return np.full(qs.shape, mn)
    scale = PERCENTILE_BINS / (mx - mn)

    def bins(v):  # monotonic in v: order between bins is the order of the values
        return np.minimum(((v - mn) * scale).astype(np.int64), PERCENTILE_BINS - 1)

    counts = np.zeros(PERCENTILE_BINS, np.int64)
    for a, b in blocks:
        counts += np.bincount(bins(x[a:b]), minlength=PERCENTILE_BINS)
    cum = np.cumsum(counts)
    pos = qs / 100.0 * (n - 1)
    lo_rank = np.floor(pos).astype(np.int64)
    hi_rank = np.minimum(lo_rank + 1, n - 1)
    ranks = np.unique(np.concatenate([lo_rank, hi_rank]))
    where = np.searchsorted(cum, ranks, side="right")  # the bin of each rank
    values = {}
    for k in np.unique(where):
        # the bin's distinct values with their counts, gathered block by block
        vals, cnt = [], []
        for a, b in blocks:
            v = x[a:b]
            u, c = np.unique(v[bins(v) == k], return_counts=True)
            vals.append(u)
            cnt.append(c)
        u, inv = np.unique(np.concatenate(vals), return_inverse=True)
        c = np.bincount(inv, weights=np.concatenate(cnt)).astype(np.int64)
        start = cum[k - 1] if k > 0 else 0
        for r, kk in zip(ranks, where, strict=True):
            if kk == k:
                values[int(r)] = float(u[np.searchsorted(np.cumsum(c), r - start, side="right")])
    a_v = np.array([values[int(r)] for r in lo_rank])
    b_v = np.array([values[int(r)] for r in hi_rank])
    t = pos - lo_rank
    # numpy's linear interpolation (numpy.lib._function_base_impl._lerp)
    diff = b_v - a_v
    out = a_v + diff * t
    return np.where(t >= 0.5, b_v - diff * (1 - t), out)


def fringe_visibility(channel) -> float | None:
    """Michelson visibility from the 1st and 99th percentiles; None when the channel goes
    below zero (AC-coupled or offset-subtracted: no zero level to refer to)."""
    c = np.asarray(channel, float)
    if not _all_finite(c):
        c = c[np.isfinite(c)]
    if c.size < 16:
        return None
    lo, hi = percentiles(c, [1.0, 99.0])
    if lo < 0 or hi <= 0:
        return None
    return float((hi - lo) / (hi + lo))


def _window_amplitude(channel, window: int) -> np.ndarray:
    c = np.asarray(channel, float)
    n = c.size // window
    if n < 1:
        return np.array([])
    blocks = c[: n * window].reshape(n, window)
    return (blocks.max(1) - blocks.min(1)) / 2


def amplitude_steadiness(channel, samples_per_fringe: float) -> float | None:
    """5th percentile over median of the fringe amplitude in windows of three fringes."""
    w = max(8, int(round(3 * samples_per_fringe))) if np.isfinite(samples_per_fringe) else 64
    a = _window_amplitude(channel, w)
    if a.size < 10:
        return None
    med = float(np.median(a))
    return float(np.percentile(a, 5.0) / med) if med > 0 else None


def speed_jitter(opd_cm, sweeps, sample_rate_hz: float, samples_per_fringe: float):
    """``(median mirror speed cm/s, relative RMS jitter)`` over the middle 80 % of ``sweeps``."""
    x = np.asarray(opd_cm, float)
    w = max(4, int(round(2 * samples_per_fringe))) if np.isfinite(samples_per_fringe) else 16
    speeds, rel = [], []
    for sw in sweeps:
        n = sw.stop - sw.start
        a, b = sw.start + n // 10, sw.stop - n // 10
        seg = x[a:b]
        k = seg.size // w
        if k < 20:
            continue
        ends = seg[: k * w].reshape(k, w)
        v = np.abs(ends[:, -1] - ends[:, 0]) * sample_rate_hz / (w - 1) / 2.0  # mirror speed
        v = v[np.isfinite(v)]
        if v.size < 20:
            continue
        tt = np.arange(v.size) / v.size
        trend = np.polyval(np.polyfit(tt, v, TREND_DEGREE), tt)
        ok = trend > 0
        speeds.append(float(np.median(v)))
        rel.append((v[ok] - trend[ok]) / trend[ok])
    if not speeds:
        return None, None
    r = np.concatenate(rel)
    return float(np.median(speeds)), float(np.sqrt(np.mean(r**2)))


def _judge(value, good: bool) -> str:
    if value is None or (isinstance(value, float) and not math.isfinite(value)):
        return "not measured"
    return "good" if good else "poor"


def scan_health(
    signal,
    reference_channels,
    opd_cm,
    sweeps,
    interferograms,
    sample_rate_hz: float,
    *,
    opd_kind: str,
    used_sweeps,
    dropouts: int,
    samples_per_reference_fringe: float,
    min_wavelength_nm: float,
    source_kind: str,
    main_snr: float | None,
    shortest_line_nm: float | None,
    clipped_fraction: float,
) -> ScanHealth:
    """Every health item of a record (plain arrays and numbers in, a frozen
    :class:`ScanHealth` out; nothing is warned: the poor items are in the result).

    Parameters
    ----------
    signal : array
        The source detector column.
    reference_channels : sequence of arrays
        The reference detector columns (empty for an encoder or an assumed speed).
    opd_kind : str
        Where the OPD came from (``quadrature``, ``single``, ``encoder``, ``constant-speed``).
    opd_cm, sweeps, used_sweeps
        The optical path per sample, the sweeps and the indices of the used ones.
    dropouts : int
        Reference dropouts found by the OPD stage.
    sample_rate_hz, samples_per_reference_fringe, min_wavelength_nm
        The sampling and what it supports.
    interferograms : sequence of Interferogram
        The used sweeps on the OPD grid (DC removed, with their DC level).
    source_kind : str
        ``narrow``, ``multimode``, ``broadband`` or ``none``.
    main_snr : float or None
        Peak signal-to-noise ratio of the main line.
    shortest_line_nm : float or None
        The shortest source line.
    clipped_fraction : float
        Fraction of source samples at the record's extreme value.
    """
    spf = float(samples_per_reference_fringe)
    used = [s for s in sweeps if s.index in set(used_sweeps)] or list(sweeps)
    items = [
        *_reference_items(reference_channels, opd_kind, spf),
        *_source_visibility_items(interferograms, source_kind),
        *_motion_items(opd_cm, sweeps, used, sample_rate_hz, spf),
        *_fault_items(dropouts, clipped_fraction),
        *_drift_items(signal, interferograms),
        *_snr_items(main_snr),
        *_sampling_items(opd_kind, spf, min_wavelength_nm, shortest_line_nm),
    ]
    return ScanHealth(tuple(items))


def _reference_items(reference_channels, opd_kind: str, spf: float) -> list:
    """The reference fringes: visibility, or the amplitude's steadiness of an AC-coupled channel."""
    items = []
    # ---- reference fringes
    if opd_kind in ("quadrature", "single") and reference_channels:
        vis = [fringe_visibility(c) for c in reference_channels]
        if all(v is not None for v in vis):
            v = min(vis)
            items.append(HealthItem(
                "reference fringe visibility", v, "", _judge(v, v >= REFERENCE_VISIBILITY_MIN),
                f"≥ {REFERENCE_VISIBILITY_MIN:g}", COMMON,
                "good: the reference beams overlap" if v >= REFERENCE_VISIBILITY_MIN else
                "overlap the two reference beams and square the mirrors (a tilted mirror or "
                "stray light lowers the visibility and the phase's precision)",
            ))
        else:
            st = [amplitude_steadiness(c, spf) for c in reference_channels]
            st = [s for s in st if s is not None]
            v = min(st) if st else None
            items.append(HealthItem(
                "reference fringe amplitude (5th percentile / median)", v, "",
                _judge(v, v is not None and v >= REFERENCE_STEADINESS_MIN),
                f"≥ {REFERENCE_STEADINESS_MIN:g}", COMMON,
                "the reference channel has no zero level (AC-coupled), so its visibility "
                "cannot be told; its fringe amplitude is steady" if v is not None
                and v >= REFERENCE_STEADINESS_MIN else
                "the reference fringes fade in places: check the reference beam's alignment, "
                "its detector and for vibration",
            ))
    else:
        items.append(HealthItem(
            "reference fringe visibility", None, "", "not measured", "—", "—",
            "no reference laser in this record (OPD from "
            f"{opd_kind}): nothing to judge",
        ))
    return items


def _source_visibility_items(interferograms, source_kind: str) -> list:
    """The source's fringe visibility near ZPD (judged for a laser only)."""
    items = []
    # ---- source visibility near ZPD
    vis_src = None
    for ig in interferograms:
        if ig.dc_level > 0:
            y = np.asarray(ig.y, float)
            vis_src = float(np.max(np.abs(y)) / ig.dc_level) if y.size else None
            if vis_src is not None and vis_src > 1.05:
                vis_src = None  # swings below zero: the channel has no zero level (AC-coupled)
            elif vis_src is not None:
                vis_src = min(vis_src, 1.0)
            break
    if source_kind in ("broadband", "multimode"):
        items.append(HealthItem(
            "source visibility near ZPD", vis_src, "", "note" if vis_src is not None
            else "not measured", "—", "—",
            "a broad or multimode source's visibility falls away from zero path difference "
            "by nature, so it does not judge the alignment here",
        ))
    else:
        ok = vis_src is not None and vis_src >= SOURCE_VISIBILITY_MIN
        items.append(HealthItem(
            "source visibility near ZPD", vis_src, "", _judge(vis_src, ok),
            f"≥ {SOURCE_VISIBILITY_MIN:g}", COMMON,
            ("good: the source beams overlap" if ok else
             "for a laser low visibility means the beams do not overlap or a mirror is "
             "tilted: align the source through the same path as the reference")
            if vis_src is not None else
            "the source channel has no zero level (AC-coupled): its visibility cannot be told",
        ))
    return items


def _motion_items(opd_cm, sweeps, used, sample_rate_hz: float, spf: float) -> list:
    """The mirror's speed, its jitter and the turnarounds."""
    items = []
    # ---- speed, jitter, turnarounds
    med, jit = speed_jitter(opd_cm, used, sample_rate_hz, spf)
    items.append(HealthItem(
        "mirror speed", None if med is None else med * 10.0, "mm/s", "note"
        if med is not None else "not measured", "—", "—",
        "the median speed of the mirror (half the OPD speed) in the middle of the used sweeps",
    ))
    items.append(HealthItem(
        "speed jitter", jit, "relative RMS", _judge(jit, jit is not None and
                                                    jit <= SPEED_JITTER_MAX),
        f"≤ {SPEED_JITTER_MAX:.0%}", COMMON,
        "good: the drive runs smoothly" if jit is not None and jit <= SPEED_JITTER_MAX else
        "the mirror speed wobbles: isolate the rig from vibration, check the drive and its "
        "bearings; fast wobble moves fringes through the detector's bandwidth",
    ))
    n_turns = max(0, len(sweeps) - 1)
    items.append(HealthItem(
        "turnarounds", float(n_turns), "", "note", "—", "—",
        f"{len(sweeps)} sweep(s), {len(used)} used; each turnaround joins two sweeps",
    ))
    return items


def _fault_items(dropouts: int, clipped_fraction: float) -> list:
    """Reference dropouts and detector clipping."""
    items = []
    # ---- dropouts, clipping
    items.append(HealthItem(
        "reference dropouts", float(dropouts), "", "good" if dropouts == 0 else "poor", "0",
        COMMON,
        "good: the reference never faded" if dropouts == 0 else
        "the reference faded out: check its beam, detector and cable; the record was split "
        "there",
    ))
    items.append(HealthItem(
        "detector clipping", float(clipped_fraction), "fraction of samples",
        "good" if clipped_fraction <= CLIPPED_FRACTION_MAX else "poor",
        f"≤ {CLIPPED_FRACTION_MAX:g}", COMMON,
        "good: the detector stays in range" if clipped_fraction <= CLIPPED_FRACTION_MAX else
        "the detector or ADC clips, which makes harmonics: lower the gain or the light",
    ))
    return items


def _drift_items(signal, interferograms) -> list:
    """The DC drift between sweeps, against the level or the fringe swing."""
    items = []
    # ---- drift
    dcs = np.array([ig.dc_level for ig in interferograms], float)
    sig = np.asarray(signal, float)
    if dcs.size >= 2 and sig.size:
        lo, hi = percentiles(sig, [1.0, 99.0])
        scale = max(abs(float(np.mean(dcs))), (hi - lo) / 2)
        drift = float((dcs.max() - dcs.min()) / scale) if scale > 0 else None
    else:
        drift = None
    items.append(HealthItem(
        "DC drift", drift, "of the level", _judge(drift, drift is not None and
                                                  drift <= DRIFT_MAX),
        f"≤ {DRIFT_MAX:.0%}", COMMON,
        ("good: the level is steady" if drift <= DRIFT_MAX else
         "the source or detector level drifts: let them warm up, shield stray light, check "
         "the power supply") if drift is not None else "needs at least two sweeps",
    ))
    return items


def _snr_items(main_snr) -> list:
    """The main line's signal-to-noise ratio."""
    items = []
    # ---- SNR
    ok = main_snr is not None and main_snr >= SNR_MIN
    items.append(HealthItem(
        "signal-to-noise ratio", main_snr, "peak / noise", _judge(main_snr, ok),
        f"≥ {SNR_MIN:g}", COMMON,
        ("good" if ok else "the main line is weak against the noise: more light, more "
         "sweeps, or a lower detector noise; widths near the noise are not reliable")
        if main_snr is not None else "no line was found",
    ))
    return items


def _sampling_items(opd_kind: str, spf: float, min_wavelength_nm: float, shortest_line_nm) -> list:
    """Samples per reference fringe and the margin of the shortest line to the alias limit."""
    items = []
    # ---- sampling
    if opd_kind in ("quadrature", "single"):
        ok = spf >= SAMPLES_PER_FRINGE_MIN
        items.append(HealthItem(
            "samples per reference fringe", spf, "at the fastest speed", _judge(spf, ok),
            f"≥ {SAMPLES_PER_FRINGE_MIN:g}", COMMON,
            "good" if ok else "sample faster or scan slower: the fringe phase is poorly "
            f"followed with fewer samples, and below {MIN_SAMPLES_PER_FRINGE:g} the record "
            "cannot be analysed",
        ))
    margin = (1.0 - min_wavelength_nm / shortest_line_nm) if shortest_line_nm else None
    ok = margin is not None and margin >= SAMPLING_MARGIN_MIN
    items.append(HealthItem(
        "sampling margin", margin, "1 − λ_min/λ_line", _judge(margin, ok),
        f"≥ {SAMPLING_MARGIN_MIN:.0%}", COMMON,
        ("good: the shortest line sits well inside the alias-free band" if ok else
         f"the shortest line lies close to (or beyond) the alias-free limit "
         f"{min_wavelength_nm:.0f} nm: sample faster or scan slower") if margin is not None
        else "no source line was found",
    ))
    return items
