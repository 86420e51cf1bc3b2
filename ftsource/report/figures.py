"""Figures of a result, drawn with matplotlib's object API on the Agg canvas (no pyplot).

Every plotting function takes plain arrays (never a result or a dict), an optional matplotlib
``Axes`` (``ax=None`` makes a new figure) and returns the artists it drew, so that a caller can
restyle or test them. Colours come from the Okabe–Ito palette, which stays distinct under the
common colour-vision deficiencies; lines also differ in style, so the figures read in grey print.
matplotlib is imported only when a figure is drawn.

References
----------
.. [1] M. Okabe and K. Ito, "Color Universal Design (CUD): how to make figures and
   presentations that are friendly to colorblind people", J*Fly (2002/2008),
   https://jfly.uni-koeln.de/color/ (the eight-colour palette).
.. [2] B. Wong, "Points of view: Color blindness", Nature Methods 8, 441 (2011).
"""

from __future__ import annotations

import io

import numpy as np

__all__ = [
    "OKABE_ITO",
    "new_axes",
    "figure_png",
    "plot_record",
    "plot_speed",
    "plot_interferogram",
    "plot_spectrum",
    "plot_sweeps",
    "plot_budget",
    "draw",
]

#: The Okabe–Ito palette (black, orange, sky blue, bluish green, yellow, blue, vermilion,
#: reddish purple), as hex codes [1]_.
OKABE_ITO = {
    "black": "#000000",
    "orange": "#E69F00",
    "sky_blue": "#56B4E9",
    "bluish_green": "#009E73",
    "yellow": "#F0E442",
    "blue": "#0072B2",
    "vermilion": "#D55E00",
    "reddish_purple": "#CC79A7",
}
_C = OKABE_ITO
FIGSIZE_IN = (7.0, 3.2)
DPI = 110


def new_axes(figsize=FIGSIZE_IN):
    """A new ``Axes`` on a new matplotlib ``Figure`` with the Agg canvas (no pyplot, no GUI)."""
    from matplotlib.backends.backend_agg import FigureCanvasAgg
    from matplotlib.figure import Figure

    fig = Figure(figsize=figsize, dpi=DPI, layout="constrained")
    FigureCanvasAgg(fig)
    ax = fig.add_subplot()
    ax.grid(True, color="#d0d0d0", linewidth=0.6)
    ax.set_axisbelow(True)
    return ax


def _axes(ax):
    return new_axes() if ax is None else ax


def figure_png(fig) -> bytes:
    """The figure as PNG bytes (deterministic: no timestamp in the PNG's metadata)."""
    buf = io.BytesIO()
    fig.savefig(buf, format="png", dpi=DPI, metadata={"Software": None})
    return buf.getvalue()


def plot_record(time_s, signal, reference=None, *, ax=None):
    """The raw record against time: the source detector and, when given, one reference
    channel (already decimated to an envelope: see :func:`ftsource.measure.plotdata.envelope`).
    Returns the list of line artists."""
    ax = _axes(ax)
    arts = ax.plot(np.asarray(time_s), np.asarray(signal), color=_C["blue"], lw=0.7,
                   label="source detector")
    if reference is not None:
        arts += ax.plot(np.asarray(time_s), np.asarray(reference), color=_C["orange"], lw=0.7,
                        ls="--", label="reference detector", alpha=0.8)
    ax.set_xlabel("time (s)")
    ax.set_ylabel("detector signal (record units)")
    ax.set_title("Record (decimated: the envelope of each time bin)")
    ax.legend(loc="upper right", fontsize="small")
    return arts


def plot_speed(time_s, speed_mm_s, *, sweep_bounds_s=(), sweep_used=(), ax=None):
    """Mirror speed against time with the sweeps shaded (used ones darker) and the turnarounds
    (sweep boundaries) marked. ``speed_mm_s`` is the speed of the mirror (half the OPD speed).
    Returns the artists (speed line, spans, turnaround lines)."""
    ax = _axes(ax)
    arts = ax.plot(np.asarray(time_s), np.asarray(speed_mm_s), color=_C["black"], lw=0.8,
                   label="mirror speed")
    used = list(sweep_used) or [True] * len(sweep_bounds_s)
    for (a, b), u in zip(sweep_bounds_s, used, strict=False):
        arts.append(ax.axvspan(a, b, color=_C["sky_blue"], alpha=0.30 if u else 0.10, lw=0))
    bounds = sorted((float(a), float(b)) for a, b in sweep_bounds_s)
    turns = [(b0 + a1) / 2 for (_, b0), (a1, _) in zip(bounds[:-1], bounds[1:], strict=True)]
    for t in turns:
        arts.append(ax.axvline(t, color=_C["vermilion"], ls=":", lw=1.0))
    ax.set_xlabel("time (s)")
    ax.set_ylabel("mirror speed (mm/s)")
    ax.set_title("Recovered mirror speed (shaded: sweeps, dotted: turnarounds)")
    return arts


def plot_interferogram(opd_mm, values, envelope=None, *, ax=None):
    """The interferogram against optical path difference with its visibility envelope.
    Returns the artists."""
    ax = _axes(ax)
    x = np.asarray(opd_mm)
    arts = ax.plot(x, np.asarray(values), color=_C["blue"], lw=0.6, label="interferogram")
    if envelope is not None:
        env = np.asarray(envelope)
        arts += ax.plot(x, env, color=_C["vermilion"], lw=1.2, ls="--", label="envelope")
        arts += ax.plot(x, -env, color=_C["vermilion"], lw=1.2, ls="--")
    ax.set_xlabel("optical path difference (mm)")
    ax.set_ylabel("signal − mean (record units)")
    ax.set_title("Interferogram near zero path difference")
    ax.legend(loc="upper right", fontsize="small")
    return arts


def plot_spectrum(wavelength_nm, density, *, lines_nm=(), line_heights=(), line_flagged=(),
                  ils_nm=None, ils_density=None, ax=None):
    """The spectrum against vacuum wavelength with the lines marked (flagged ones hollow) and
    the instrument line shape drawn at the main line. ``density`` is per unit wavelength,
    normalised. Returns the artists."""
    ax = _axes(ax)
    arts = ax.plot(np.asarray(wavelength_nm), np.asarray(density), color=_C["blue"], lw=0.9,
                   label="spectrum")
    flagged = list(line_flagged) or [False] * len(lines_nm)
    src = [(w, h) for w, h, f in zip(lines_nm, line_heights, flagged, strict=False) if not f]
    other = [(w, h) for w, h, f in zip(lines_nm, line_heights, flagged, strict=False) if f]
    if src:
        arts += ax.plot(*zip(*src, strict=True), ls="none", marker="v", ms=7,
                        color=_C["vermilion"], label="source line")
    if other:
        arts += ax.plot(*zip(*other, strict=True), ls="none", marker="v", ms=7, mfc="none",
                        color=_C["reddish_purple"], label="flagged (not the source)")
    if ils_nm is not None and ils_density is not None:
        arts += ax.plot(np.asarray(ils_nm), np.asarray(ils_density), color=_C["orange"], lw=1.3,
                        ls="--", label="instrument line shape")
    ax.set_xlabel("vacuum wavelength (nm)")
    ax.set_ylabel("spectral density per nm (relative)")
    ax.set_title("Spectrum")
    ax.legend(loc="upper right", fontsize="small")
    return arts


def plot_sweeps(sweep_index, values, uncertainties, *, mean=None, u_mean=None,
                label="centre wavelength", unit="nm", ax=None):
    """One figure per sweep with error bars (k = 1), and the co-added result as a band.
    Values are drawn relative to ``mean`` (or their own mean) so that ppm-level scatter shows.
    Returns the artists."""
    ax = _axes(ax)
    v = np.asarray(values, float)
    ref = float(np.mean(v)) if mean is None else float(mean)
    arts = [ax.errorbar(np.asarray(sweep_index), v - ref, yerr=np.asarray(uncertainties, float),
                        fmt="o", ms=4, color=_C["blue"], ecolor=_C["sky_blue"], capsize=2,
                        label="each sweep (±1 u)")]
    if u_mean is not None and np.isfinite(u_mean):
        arts.append(ax.axhspan(-u_mean, u_mean, color=_C["orange"], alpha=0.25, lw=0,
                               label="co-added (±1 u)"))
    arts.append(ax.axhline(0.0, color=_C["black"], lw=0.8))
    ax.set_xlabel("sweep index")
    from matplotlib.ticker import MaxNLocator

    ax.xaxis.set_major_locator(MaxNLocator(integer=True))  # sweeps are counted
    ax.set_ylabel(f"{label} − {ref:.6g} {unit} ({unit})")
    ax.set_title(f"Sweep-to-sweep agreement of the {label}")
    ax.legend(loc="upper right", fontsize="small")
    return arts


def plot_budget(names, u_values, *, unit="nm", ax=None):
    """The uncertainty budget as horizontal bars of each component's standard uncertainty.
    Returns the bar container."""
    ax = _axes(ax)
    names = list(names)
    u = np.asarray(u_values, float)
    bars = ax.barh(np.arange(len(names)), u, color=_C["bluish_green"], edgecolor=_C["black"],
                   lw=0.5)
    ax.set_yticks(np.arange(len(names)), labels=names)
    ax.invert_yaxis()
    if u.size and np.all(u > 0) and u.max() / u.min() > 100:
        ax.set_xscale("log")
    ax.set_xlabel(f"standard uncertainty ({unit})")
    ax.set_title("Uncertainty budget of the centre wavelength")
    return bars


def _empty(name: str, why: str):
    ax = new_axes()
    ax.set_axis_off()
    ax.text(0.5, 0.5, f"{name}: {why}", ha="center", va="center", transform=ax.transAxes)
    return ax.figure


def draw(data) -> dict:
    """Every figure of a :class:`ftsource.measure.plotdata.PlotData` as ``{name: matplotlib
    Figure}``, named and ordered as :data:`ftsource.measure.plotdata.FIGURE_NAMES`; a figure
    without data says why instead (so the set of files is always the same)."""
    out = {}
    if data.spectrum_wavelength_nm:
        ax = new_axes()
        plot_spectrum(data.spectrum_wavelength_nm, data.spectrum_density,
                         lines_nm=data.line_wavelength_nm, line_heights=data.line_height,
                         line_flagged=data.line_flagged,
                         ils_nm=data.ils_wavelength_nm or None,
                         ils_density=data.ils_density or None, ax=ax)
        out["spectrum"] = ax.figure
    else:
        out["spectrum"] = _empty("spectrum", "no spectrum")
    if data.ifg_opd_mm:
        ax = new_axes()
        plot_interferogram(data.ifg_opd_mm, data.ifg_values, data.ifg_envelope or None, ax=ax)
        out["interferogram"] = ax.figure
    else:
        out["interferogram"] = _empty("interferogram", "no sweep")
    if data.speed_time_s:
        ax = new_axes()
        plot_speed(data.speed_time_s, data.speed_mm_s, sweep_bounds_s=data.sweep_bounds_s,
                      sweep_used=data.sweep_used, ax=ax)
        out["speed"] = ax.figure
    else:
        out["speed"] = _empty("mirror speed", "no optical path")
    if data.record_time_s:
        ax = new_axes()
        plot_record(data.record_time_s, data.record_signal,
                       data.record_reference or None, ax=ax)
        out["record"] = ax.figure
    else:
        out["record"] = _empty("record", "no samples")
    if len(data.sweep_index) >= 2:
        ax = new_axes()
        plot_sweeps(data.sweep_index, data.sweep_value_nm, data.sweep_u_nm,
                       mean=data.sweep_mean_nm, u_mean=data.sweep_u_mean_nm, ax=ax)
        out["sweeps"] = ax.figure
    else:
        out["sweeps"] = _empty("sweep agreement", "fewer than two sweeps could be fitted")
    if data.budget_names:
        ax = new_axes((7.0, 1.2 + 0.35 * len(data.budget_names)))
        plot_budget(data.budget_names, data.budget_u_nm, ax=ax)
        out["budget"] = ax.figure
    else:
        out["budget"] = _empty("uncertainty budget", "no budget (no source line)")
    return out
