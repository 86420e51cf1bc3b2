"""What the figures need, kept compact enough to save with the result and redraw later.

:func:`plot_data` reduces the stages' outputs (record, optical path, interferograms, spectrum,
lines, budget) to a :class:`PlotData` of a few thousand numbers: the record and the speed as
per-bin envelopes and medians, the interferogram in a window around zero path difference, the
spectrum at the stored band's points (thinned to at most :data:`MAX_POINTS` by keeping each
bin's largest value, so peaks survive), the instrument line shape at the main line, the sweeps'
main figure and the budget. :meth:`PlotData.to_dict` / :meth:`PlotData.from_dict` make the
result JSON's ``plot`` object; :func:`draw` turns it into matplotlib figures.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, fields

import numpy as np

__all__ = ["PlotData", "plot_data", "draw", "envelope", "FIGURE_NAMES"]

#: Points kept per curve (bins of the record and the speed, spectrum points).
MAX_POINTS = 1000
#: Significant digits stored per number.
DIGITS = 5
#: Figure names, in the report's order (also the PNG file names: ``fig-<name>.png``).
FIGURE_NAMES = ("spectrum", "interferogram", "speed", "record", "sweeps", "budget")


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


def _thin_max(x, y, n: int = MAX_POINTS):
    x = np.asarray(x, float)
    y = np.asarray(y, float)
    if y.size <= n:
        return x, y
    edges = np.linspace(0, y.size, n + 1).astype(int)
    pick = np.array([a + int(np.argmax(y[a:b])) for a, b in zip(edges[:-1], edges[1:],
                                                                    strict=True)])
    return x[pick], y[pick]


def _analytic_envelope(y):
    """|analytic signal| of ``y`` (Hilbert transform by FFT, closed form of the one-sided
    spectrum; Bracewell, The Fourier Transform and its Applications, ch. 12)."""
    n = y.size
    f = np.fft.fft(y)
    h = np.zeros(n)
    h[0] = 1.0
    if n % 2 == 0:
        h[n // 2] = 1.0
        h[1:n // 2] = 2.0
    else:
        h[1:(n + 1) // 2] = 2.0
    return np.abs(np.fft.ifft(f * h))


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

    def to_dict(self) -> dict:
        """Plain JSON values, each number to :data:`DIGITS` significant digits."""
        def num(v):
            if isinstance(v, bool) or v is None or isinstance(v, str):
                return v
            v = float(v)
            return float(f"{v:.{DIGITS}g}") if math.isfinite(v) else None

        def conv(v):
            if isinstance(v, tuple | list):
                return [conv(e) for e in v]
            return num(v)

        return {f.name: conv(getattr(self, f.name)) for f in fields(self)}

    @classmethod
    def from_dict(cls, d: dict) -> PlotData:
        """Back from :meth:`to_dict` (unknown keys are ignored, missing ones left empty)."""
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
        (:func:`ftsource.report.files.spectrum_band`).
    lines : sequence of (wavelength_nm, flagged)
        Every line found.
    main_centre_per_cm : float
        The main line, where the instrument line shape is drawn.
    sweep_centres : sequence of (sweep index, centre nm, u nm)
        The main figure per sweep; ``mean_nm`` and ``u_mean_nm`` the co-added one.
    budget : sequence of (name, u_nm)
        The budget's components.
    """
    fs = float(sample_rate_hz)
    sig = np.asarray(signal, float)
    t = np.arange(sig.size) / fs
    rt, rs = envelope(t, sig)
    rr = ()
    if reference is not None:
        rr = _tuple(envelope(t, np.asarray(reference, float))[1])
    kw: dict = {"record_time_s": _tuple(rt), "record_signal": _tuple(rs),
                "record_reference": rr}

    if opd_cm is not None and np.asarray(opd_cm).size > 2:
        x = np.asarray(opd_cm, float)
        v = np.gradient(x) * fs / 2.0 * 10.0  # mirror speed (half the OPD speed), mm/s
        n_bins = min(MAX_POINTS, v.size)
        edges = np.linspace(0, v.size, n_bins + 1).astype(int)
        with np.errstate(all="ignore"):
            med = np.array([np.nanmedian(v[a:b]) if np.isfinite(v[a:b]).any() else np.nan
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
                  ifg_envelope=_tuple(_analytic_envelope(yy)))

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


def _empty(name: str, why: str):
    from ftsource.report import figures as fg

    ax = fg.new_axes()
    ax.set_axis_off()
    ax.text(0.5, 0.5, f"{name}: {why}", ha="center", va="center", transform=ax.transAxes)
    return ax.figure


def draw(data: PlotData) -> dict:
    """Every figure of :data:`FIGURE_NAMES` as ``{name: matplotlib Figure}``, in that order; a
    figure without data says why instead (so the set of files is always the same)."""
    from ftsource.report import figures as fg

    out = {}
    if data.spectrum_wavelength_nm:
        ax = fg.new_axes()
        fg.plot_spectrum(data.spectrum_wavelength_nm, data.spectrum_density,
                         lines_nm=data.line_wavelength_nm, line_heights=data.line_height,
                         line_flagged=data.line_flagged,
                         ils_nm=data.ils_wavelength_nm or None,
                         ils_density=data.ils_density or None, ax=ax)
        out["spectrum"] = ax.figure
    else:
        out["spectrum"] = _empty("spectrum", "no spectrum")
    if data.ifg_opd_mm:
        ax = fg.new_axes()
        fg.plot_interferogram(data.ifg_opd_mm, data.ifg_values, data.ifg_envelope or None, ax=ax)
        out["interferogram"] = ax.figure
    else:
        out["interferogram"] = _empty("interferogram", "no sweep")
    if data.speed_time_s:
        ax = fg.new_axes()
        fg.plot_speed(data.speed_time_s, data.speed_mm_s, sweep_bounds_s=data.sweep_bounds_s,
                      sweep_used=data.sweep_used, ax=ax)
        out["speed"] = ax.figure
    else:
        out["speed"] = _empty("mirror speed", "no optical path")
    if data.record_time_s:
        ax = fg.new_axes()
        fg.plot_record(data.record_time_s, data.record_signal,
                       data.record_reference or None, ax=ax)
        out["record"] = ax.figure
    else:
        out["record"] = _empty("record", "no samples")
    if len(data.sweep_index) >= 2:
        ax = fg.new_axes()
        fg.plot_sweeps(data.sweep_index, data.sweep_value_nm, data.sweep_u_nm,
                       mean=data.sweep_mean_nm, u_mean=data.sweep_u_mean_nm, ax=ax)
        out["sweeps"] = ax.figure
    else:
        out["sweeps"] = _empty("sweep agreement", "fewer than two sweeps could be fitted")
    if data.budget_names:
        ax = fg.new_axes((7.0, 1.2 + 0.35 * len(data.budget_names)))
        fg.plot_budget(data.budget_names, data.budget_u_nm, ax=ax)
        out["budget"] = ax.figure
    else:
        out["budget"] = _empty("uncertainty budget", "no budget (no source line)")
    return out
