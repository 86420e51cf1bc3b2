"""What the figures need, kept compact enough to save with the result and redraw later.

:func:`plot_data` reduces the stages' outputs (record, optical path, interferograms, spectrum,
lines, budget) to a :class:`PlotData` of a few thousand numbers: the record and the speed as
per-bin envelopes and medians, the interferogram in a window around zero path difference, the
spectrum at the stored band's points (thinned to at most :data:`MAX_POINTS` by keeping each
bin's largest value, so peaks survive), the instrument line shape at the main line, the sweeps'
main figure and the budget. :meth:`ftsource.result.Result.to_dict` shapes it into the result
JSON's ``plot`` object and :meth:`PlotData.from_dict` reads it back;
:func:`ftsource.report.figures.draw` turns it into matplotlib figures.
"""

from __future__ import annotations

from dataclasses import dataclass, fields

import numpy as np

from ftsource.lines.fitting import SEARCH_BAND_NM

__all__ = ["PlotData", "plot_data", "envelope", "FIGURE_NAMES", "DIGITS", "SpectrumBand",
           "spectrum_band"]

#: Points kept per curve (bins of the record and the speed, spectrum points).
MAX_POINTS = 1000
#: Significant digits stored per number.
DIGITS = 5
#: Figure names, in the report's order (also the PNG file names: ``fig-<name>.png``).
FIGURE_NAMES = ("spectrum", "interferogram", "speed", "record", "sweeps", "budget")


#: Detector band (vacuum nm): the band the analysis searches for lines.
DETECTOR_BAND_NM = SEARCH_BAND_NM
#: Margin kept around the source's extent, in resolution elements (common practice: enough
#: to see the line shape's sidelobes and the baseline next to the line).
MARGIN_RESOLUTIONS = 40.0
#: The source is where the density exceeds this many times its noise (about 5 standard
#: uncertainties: a chance excursion of noise this large is rare over 10⁶ points) ...
SOURCE_THRESHOLD_NOISE = 5.0
#: ... and this fraction of the band's peak (a magnitude spectrum's noise has a positive
#: mean, which the noise estimate does not remove; 1e-3 keeps an LED's wings).
SOURCE_THRESHOLD_PEAK = 1e-3


@dataclass(frozen=True)
class SpectrumBand:
    """Which points of a spectrum are stored.

    ``index`` are indices into the spectrum's arrays (increasing), ``step`` the stride
    (``zero_fill`` for the instrument's sampling, 1 for the full spectrum) and
    ``limits_per_cm`` the lowest and highest stored wavenumber.
    """

    index: np.ndarray
    step: int
    limits_per_cm: tuple[float, float]
    full: bool


def spectrum_band(
    sigma_per_cm: np.ndarray,
    density: np.ndarray,
    noise: np.ndarray,
    resolution_per_cm: float,
    *,
    line_centres_per_cm=(),
    min_wavelength_nm: float | None = None,
    zero_fill: int = 1,
    full: bool = False,
) -> SpectrumBand:
    """The stored points: the source's extent (density above :data:`SOURCE_THRESHOLD_NOISE`
    times the noise and :data:`SOURCE_THRESHOLD_PEAK` times the peak, and every listed line)
    widened by :data:`MARGIN_RESOLUTIONS` resolution elements, inside the detector band and the
    alias-free limit, every ``zero_fill``-th point.

    ``full=True`` keeps every point of the detector band (the zero-filled grid).
    """
    sig = np.asarray(sigma_per_cm, float)
    lo = 1e7 / DETECTOR_BAND_NM[1]
    hi = 1e7 / max(DETECTOR_BAND_NM[0], min_wavelength_nm or 0.0)
    inside = (sig >= lo) & (sig <= hi)
    step = max(1, int(zero_fill))
    if full:
        idx = np.flatnonzero(inside)
        step = 1
    else:
        d = np.asarray(density, float)
        n = np.asarray(noise, float)
        floor = np.where(np.isfinite(n) & (n > 0), n, np.inf)
        peak = float(np.nanmax(np.where(inside, d, -np.inf))) if inside.any() else 0.0
        src = inside & np.isfinite(d) & (d > SOURCE_THRESHOLD_NOISE * floor) & (
            d > SOURCE_THRESHOLD_PEAK * peak)
        margin = MARGIN_RESOLUTIONS * float(resolution_per_cm)
        centres = np.array([float(c) for c in line_centres_per_cm if np.isfinite(c)])
        # every listed line and every run of source points, widened by the margin: intervals
        # [lo, hi] of wavenumber marked on the (increasing) grid in one pass (a noisy magnitude
        # spectrum has thousands of runs)
        edges = np.flatnonzero(np.diff(np.concatenate([[0], src.astype(np.int8), [0]])))
        lows = np.concatenate([centres - margin, sig[edges[::2]] - margin])
        highs = np.concatenate([centres + margin, sig[edges[1::2] - 1] + margin])
        marks = np.zeros(sig.size + 1, np.int64)
        np.add.at(marks, np.searchsorted(sig, lows, "left"), 1)
        np.add.at(marks, np.searchsorted(sig, highs, "right"), -1)
        keep = (np.cumsum(marks[:-1]) > 0) & inside
        if not keep.any():
            keep = inside
        idx = np.flatnonzero(keep)
        # the instrument's own sampling: every step-th point of the zero-filled grid
        idx = idx[idx % step == 0]
    if idx.size == 0:
        return SpectrumBand(idx, step, (float("nan"), float("nan")), full)
    return SpectrumBand(idx, step, (float(sig[idx[0]]), float(sig[idx[-1]])), full)



def envelope(t, y, n_bins: int = MAX_POINTS // 2):
    """Per-bin minimum and maximum of ``y`` (two points per bin, at the bin's time span), so
    that a decimated trace keeps its full swing. Returns ``(t2, y2)``."""
    y = np.asarray(y, float)
    t = np.asarray(t, float)
    if y.size <= 2 * n_bins:
        return t, y
    edges = np.linspace(0, y.size, n_bins + 1).astype(int)
    lo = np.minimum.reduceat(y, edges[:-1])
    hi = np.maximum.reduceat(y, edges[:-1])
    tt = np.column_stack([t[edges[:-1]], t[np.maximum(edges[1:] - 1, 0)]]).ravel()
    yy = np.column_stack([lo, hi]).ravel()
    return tt, yy


def _sampled_envelope(y, fs: float, n_bins: int = MAX_POINTS // 2):
    """:func:`envelope` of ``y`` against the sample times ``arange(n) / fs``, without making
    the times of every sample (a long record's column would be copied for a few thousand
    points)."""
    if y.size <= 2 * n_bins:
        return np.arange(y.size) / fs, y
    edges = np.linspace(0, y.size, n_bins + 1).astype(int)
    lo = np.minimum.reduceat(y, edges[:-1])
    hi = np.maximum.reduceat(y, edges[:-1])
    tt = np.column_stack([edges[:-1] / fs, np.maximum(edges[1:] - 1, 0) / fs]).ravel()
    return tt, np.column_stack([lo, hi]).ravel()


def _median_speed(x, a: int, b: int, fs: float) -> float:
    """Median mirror speed (mm/s, half the OPD speed) over samples ``a:b`` of the path ``x``
    (cm), NaN where unknown: ``numpy.gradient`` of the whole path, taken bin by bin (a bin
    sees its neighbours' samples, so the differences are the same)."""
    lo, hi = max(a - 1, 0), min(b + 1, x.size)
    seg = x[lo:hi]
    if seg.size < 2:
        return np.nan
    v = (np.gradient(seg) * fs / 2.0 * 10.0)[a - lo : a - lo + (b - a)]
    return float(np.nanmedian(v)) if np.isfinite(v).any() else np.nan


def _thin_max(x, y, n: int = MAX_POINTS):
    x = np.asarray(x, float)
    y = np.asarray(y, float)
    if y.size <= n:
        return x, y
    edges = np.linspace(0, y.size, n + 1).astype(int)
    pick = np.array([a + int(np.argmax(y[a:b])) for a, b in zip(edges[:-1], edges[1:],
                                                                    strict=True)])
    return x[pick], y[pick]


@dataclass(frozen=True)
class PlotData:
    """The numbers behind the figures (tuples of floats; empty when a figure has no data)."""

    record_time_s: tuple = ()
    record_signal: tuple = ()
    record_reference: tuple = ()
    speed_time_s: tuple = ()
    speed_mm_s: tuple = ()
    sweep_bounds_s: tuple = ()
    sweep_used: tuple = ()
    ifg_opd_mm: tuple = ()
    ifg_values: tuple = ()
    ifg_envelope: tuple = ()
    spectrum_wavelength_nm: tuple = ()
    spectrum_density: tuple = ()
    line_wavelength_nm: tuple = ()
    line_height: tuple = ()
    line_flagged: tuple = ()
    ils_wavelength_nm: tuple = ()
    ils_density: tuple = ()
    sweep_index: tuple = ()
    sweep_value_nm: tuple = ()
    sweep_u_nm: tuple = ()
    sweep_mean_nm: float | None = None
    sweep_u_mean_nm: float | None = None
    budget_names: tuple = ()
    budget_u_nm: tuple = ()

    @classmethod
    def from_dict(cls, d: dict) -> PlotData:
        """Back from the result JSON's ``plot`` object (unknown keys are ignored, missing ones
        left empty)."""
        def tup(v):
            if isinstance(v, list):
                return tuple(tup(e) for e in v)
            return float("nan") if v is None else v

        kw = {}
        for f in fields(cls):
            if f.name in d:
                v = d[f.name]
                kw[f.name] = tup(v) if isinstance(v, list) else v
        return cls(**kw)


def _tuple(a):
    return tuple(float(v) for v in np.asarray(a, float).ravel())


def plot_data(
    *,
    signal,
    sample_rate_hz: float,
    reference=None,
    opd_cm=None,
    sweeps=(),
    used=(),
    interferogram=None,
    zpd_x_cm: float | None = None,
    spectrum=None,
    band_index=None,
    lines=(),
    main_centre_per_cm: float | None = None,
    sweep_centres=(),
    mean_nm: float | None = None,
    u_mean_nm: float | None = None,
    budget=(),
) -> PlotData:
    """Reduce the stages' outputs to :class:`PlotData`.

    Parameters (all keyword-only; any may be left out and its figure is then empty)
    ----------
    signal, reference : array
        The record's source column and one reference column.
    opd_cm, sweeps, used
        The optical path per sample and the sweeps (``start``, ``stop`` sample indices) with
        the indices of the sweeps used.
    interferogram, zpd_x_cm
        One resampled sweep (``x_cm``, ``y``) and its zero path difference.
    spectrum, band_index
        The co-added spectrum and the indices of its stored band
        (:func:`ftsource.spectrum.band.spectrum_band`).
    lines : sequence of (wavelength_nm, flagged)
        Every line found.
    main_centre_per_cm : float
        The main line, where the instrument line shape is drawn.
    sweep_centres : sequence of (sweep index, centre nm, u nm)
        The main figure per sweep; ``mean_nm`` and ``u_mean_nm`` the co-added one.
    budget : sequence of (name, u_nm)
        The budget's components.
    """
    from ftsource.interferogram.zpd import analytic_envelope

    fs = float(sample_rate_hz)
    sig = np.asarray(signal, float)
    rt, rs = _sampled_envelope(sig, fs)
    rr = ()
    if reference is not None:
        rr = _tuple(_sampled_envelope(np.asarray(reference, float), fs)[1])
    kw: dict = {"record_time_s": _tuple(rt), "record_signal": _tuple(rs),
                "record_reference": rr}

    if opd_cm is not None and np.asarray(opd_cm).size > 2:
        x = np.asarray(opd_cm, float)
        n_bins = min(MAX_POINTS, x.size)
        edges = np.linspace(0, x.size, n_bins + 1).astype(int)
        with np.errstate(all="ignore"):
            med = np.array([_median_speed(x, a, b, fs)
                            for a, b in zip(edges[:-1], edges[1:], strict=True)])
        tc = (edges[:-1] + edges[1:]) / 2 / fs
        kw.update(speed_time_s=_tuple(tc), speed_mm_s=_tuple(med))
        used_set = set(used)
        kw["sweep_bounds_s"] = tuple((sw.start / fs, sw.stop / fs) for sw in sweeps)
        kw["sweep_used"] = tuple(sw.index in used_set for sw in sweeps)

    if interferogram is not None:
        x = np.asarray(interferogram.x_cm, float)
        y = np.asarray(interferogram.y, float)
        centre = zpd_x_cm if zpd_x_cm is not None and np.isfinite(zpd_x_cm) else x[np.argmax(
            np.abs(y - y.mean()))]
        i0 = int(np.argmin(np.abs(x - centre)))
        half = min(MAX_POINTS // 2, y.size // 2)
        a, b = max(0, i0 - half), min(y.size, i0 + half)
        yy = y[a:b] - np.mean(y[a:b])
        kw.update(ifg_opd_mm=_tuple(x[a:b] * 10), ifg_values=_tuple(yy),
                  ifg_envelope=_tuple(analytic_envelope(yy)))

    if spectrum is not None:
        sig_ax = np.asarray(spectrum.sigma_per_cm, float)
        idx = np.asarray(band_index if band_index is not None else np.arange(sig_ax.size))
        wl = 1e7 / sig_ax[idx]
        d = np.asarray(spectrum.density, float)[idx] * sig_ax[idx] ** 2 / 1e7
        peak = float(np.nanmax(d)) if d.size and np.nanmax(d) > 0 else 1.0
        order = np.argsort(wl)
        tw, td = _thin_max(wl[order], d[order] / peak)
        kw.update(spectrum_wavelength_nm=_tuple(tw), spectrum_density=_tuple(td))
        full_wl = 1e7 / np.maximum(sig_ax, 1e-9)
        full_d = np.asarray(spectrum.density, float) * sig_ax**2 / 1e7 / peak
        lw, lh, lf = [], [], []
        for w, flagged in lines:
            j = int(np.argmin(np.abs(full_wl - w)))
            lw.append(float(w))
            lh.append(float(full_d[j]))
            lf.append(bool(flagged))
        kw.update(line_wavelength_nm=tuple(lw), line_height=tuple(lh), line_flagged=tuple(lf))
        if main_centre_per_cm is not None and np.isfinite(main_centre_per_cm):
            res = float(spectrum.resolution_per_cm)
            ds = np.linspace(-6 * res, 6 * res, 241)
            k = np.asarray(spectrum.line_shape.kernel(ds), float)
            j = int(np.argmin(np.abs(sig_ax - main_centre_per_cm)))
            top = float(full_d[j])
            k = k / k[ds.size // 2] * top
            kw.update(ils_wavelength_nm=_tuple(1e7 / (main_centre_per_cm + ds)),
                      ils_density=_tuple(k))

    if sweep_centres:
        idx, val, u = zip(*sweep_centres, strict=True)
        kw.update(sweep_index=tuple(int(i) for i in idx), sweep_value_nm=_tuple(val),
                  sweep_u_nm=_tuple(u), sweep_mean_nm=mean_nm, sweep_u_mean_nm=u_mean_nm)
    if budget:
        names, us = zip(*budget, strict=True)
        kw.update(budget_names=tuple(str(n) for n in names), budget_u_nm=_tuple(us))
    return PlotData(**kw)


