"""Finding and fitting spectral lines.

A line is fitted with its profile *convolved with the instrument line shape* of the spectrum
(:class:`ftsource.spectrum.spectrum.LineShape`), so a line near the resolution limit is not reported
wider than it is. Profiles: Gaussian, Lorentzian and Voigt, chosen by Akaike's information
criterion on the effective number of independent points (zero-filling and apodization make
neighbouring points correlated), and claimed only when the line spans at least
:data:`MIN_ELEMENTS_FOR_PROFILE` resolution elements.

Uncertainties are the "sandwich" covariance of the least-squares estimate with the spectral
noise correlation of the apodized transform, scaled by the residuals (a residual-based,
Type A evaluation, JCGM 100:2008 §4.2).

Kernel units: wavenumber in cm⁻¹.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ftsource.spectrum.spectrum import Spectrum

__all__ = [
    "SEARCH_BAND_NM",
    "LineFit",
    "fit_line",
    "find_lines",
    "voigt_fwhm",
    "MIN_ELEMENTS_FOR_PROFILE",
    "RESOLVED_FACTOR",
    "DETECTION_SNR",
]

#: Lines are searched for between these vacuum wavelengths (nm) unless the sampling limits
#: the short end further: below 200 nm air and ordinary optics absorb, and silicon and InGaAs
#: detectors see nothing beyond 3.3 µm (common practice).
SEARCH_BAND_NM = (200.0, 3300.0)
#: A profile (Gaussian/Lorentzian/Voigt) is claimed only for lines at least this many
#: resolution elements wide.
MIN_ELEMENTS_FOR_PROFILE = 5.0
#: A line counts as resolved when its fitted intrinsic FWHM is at least this many instrument
#: FWHMs and exceeds three times its own standard uncertainty.
RESOLVED_FACTOR = 1.0
#: Peaks below this many noise standard deviations are not reported as lines.
DETECTION_SNR = 8.0
#: Most spectral points used in one line fit (broad lines are subsampled).
MAX_FIT_POINTS = 600
#: Coverage factor used for the upper bound of an unresolved width (about 95 %).
BOUND_K = 2.0


def voigt_fwhm(gauss_fwhm: float, lorentz_fwhm: float) -> float:
    """FWHM of a Voigt profile (Olivero & Longbothum 1977, accurate to 0.02 %).

    References
    ----------
    .. [1] J. J. Olivero and R. L. Longbothum, "Empirical fits to the Voigt line width: a brief
       review", J. Quant. Spectrosc. Radiat. Transfer 17, 233–236 (1977).
    """
    fl, fg = float(lorentz_fwhm), float(gauss_fwhm)
    return 0.5346 * fl + np.sqrt(0.2166 * fl * fl + fg * fg)


@dataclass(frozen=True)
class LineFit:
    """A fitted line. Widths are intrinsic (instrument line shape removed), cm⁻¹.

    ``fwhm_per_cm`` is meaningful only when ``resolved``; otherwise ``fwhm_upper_bound_per_cm``
    holds the bound (at coverage factor :data:`BOUND_K`, never below the instrument FWHM).
    ``success`` is False with a ``message`` when the fit failed; the object is still returned
    so callers can inspect it.
    """

    centre_per_cm: float
    u_centre_per_cm: float
    height: float
    peak: float
    area: float
    u_area: float
    profile: str
    gauss_fwhm_per_cm: float
    lorentz_fwhm_per_cm: float
    fwhm_per_cm: float
    u_fwhm_per_cm: float
    resolved: bool
    fwhm_upper_bound_per_cm: float | None
    instrument_fwhm_per_cm: float
    snr: float
    n_points: int
    n_effective: float
    dof: float
    success: bool
    message: str
    aic: dict

    @property
    def wavelength_nm(self) -> float:
        return 1e7 / self.centre_per_cm

    @property
    def u_wavelength_nm(self) -> float:
        return 1e7 * self.u_centre_per_cm / self.centre_per_cm**2


def _fit_window(spec: Spectrum, i0: int, half_width: float) -> slice:
    s = spec.sigma_per_cm
    ds = s[1] - s[0]
    k = int(np.ceil(half_width / ds))
    return slice(max(i0 - k, 1), min(i0 + k + 1, s.size))


def _observed_fwhm(sig, y, i0):
    half = y[i0] / 2
    lo = i0
    while lo > 0 and y[lo] > half:
        lo -= 1
    hi = i0
    while hi < y.size - 1 and y[hi] > half:
        hi += 1
    return float(sig[hi] - sig[lo])


def _model_factory(spec: Spectrum, profile: str):
    """Model ``h·K(σ−c; widths)/K(0) + b`` with signed width parameters (see
    :meth:`ftsource.spectrum.spectrum.LineShape.kernel_signed`): ``[h, c, b, q]`` for a Gaussian
    (q = FWHM²), ``[h, c, b, l]`` for a Lorentzian, ``[h, c, b, q, l]`` for a Voigt."""
    shape = spec.line_shape
    k00 = shape.kernel(np.zeros(1))[0]

    def model(p, sig):
        q = p[3] if profile in ("gaussian", "voigt") else 0.0
        lor = p[-1] if profile in ("lorentzian", "voigt") else 0.0
        return p[0] * shape.kernel_signed(sig - p[1], q, lor) / k00 + p[2]

    return model


def _widths(profile: str, p: np.ndarray, cov: np.ndarray):
    """Intrinsic FWHM, its standard uncertainty, and the Gaussian/Lorentzian parts."""
    if profile == "gaussian":
        q, uq = p[3], np.sqrt(max(cov[3, 3], 0.0))
        w = np.sqrt(max(q, 0.0))
        # u(w) = u(q)/(2w); at w → 0 the square root's own scale √u(q) takes over
        uw = uq / (2 * w) if w > np.sqrt(uq) else np.sqrt(uq)
        return w, uw, w, 0.0
    if profile == "lorentzian":
        lw = max(p[3], 0.0)
        return lw, np.sqrt(max(cov[3, 3], 0.0)), 0.0, lw
    g, lw = np.sqrt(max(p[3], 0.0)), max(p[4], 0.0)
    w = voigt_fwhm(g, lw)
    eps = 1e-6 * max(w, 1e-12)
    dq = (voigt_fwhm(np.sqrt(max(p[3] + eps * max(w, 1e-12), 0.0)), lw) - w) / (eps * max(w, 1e-12))
    dl = (voigt_fwhm(g, lw + eps) - w) / eps
    jw = np.array([dq, dl])
    return w, float(np.sqrt(max(jw @ cov[3:5, 3:5] @ jw, 0.0))), g, lw


def fit_line(
    spec: Spectrum,
    centre_guess_per_cm: float,
    *,
    profile: str = "auto",
    others=None,
) -> LineFit:
    """Fit one line near ``centre_guess_per_cm``.

    A Gaussian is fitted first; it decides whether the line is resolved. Only a resolved line
    at least :data:`MIN_ELEMENTS_FOR_PROFILE` resolution elements wide is also fitted with a
    Lorentzian and a Voigt profile, and the profile with the lowest AIC (on the effective number
    of independent points) is kept; otherwise the profile is "undetermined".

    Parameters
    ----------
    spec : Spectrum
        The co-added spectrum with its line shape and noise.
    centre_guess_per_cm : float
        Where the line is.
    profile : {"auto", "gaussian", "lorentzian", "voigt"}
        ``auto`` as above; a name forces that profile.
    others : callable, optional
        ``others(sigma)`` gives the model of other lines to subtract first.

    Returns
    -------
    LineFit
        Always returned; ``success`` False when the fit did not converge.

    References
    ----------
    .. [1] H. Akaike, "A new look at the statistical model identification", IEEE Trans.
       Autom. Control 19, 716–723 (1974).
    .. [2] JCGM 100:2008, Evaluation of measurement data — Guide to the expression of
       uncertainty in measurement, §4.2 (Type A evaluation).
    """
    if profile not in ("auto", "gaussian", "lorentzian", "voigt"):
        raise ValueError(f"profile must be auto, gaussian, lorentzian or voigt, not {profile!r}")
    win = _fit_window_data(spec, centre_guess_per_cm, others)
    ils = win.ils
    first = "gaussian" if profile in ("auto", "gaussian") else profile
    results = {first: _run_profile(spec, win, first)}
    res = results[first][0]
    cov, dof = _covariance(res, win)
    w, uw, g, lw = _widths(first, res.x, cov)
    resolved = bool(w >= RESOLVED_FACTOR * ils and w > 3 * uw)
    elements = w / ils if ils > 0 else 0.0
    best = first
    if profile == "auto" and resolved and elements >= MIN_ELEMENTS_FOR_PROFILE:
        for prof in ("lorentzian", "voigt"):
            results[prof] = _run_profile(spec, win, prof)
        # a Voigt with a Gaussian or Lorentzian part at or below zero width is no Voigt (the
        # other pure profile, or an envelope growing with OPD): it cannot be the one claimed
        v = results["voigt"][0].x
        choices = [k for k in results if k != "voigt" or (v[3] > 0 and v[4] > 0)]
        best = min(choices, key=lambda k: results[k][1])
        res = results[best][0]
        cov, dof = _covariance(res, win)
        w, uw, g, lw = _widths(best, res.x, cov)
    perr = np.sqrt(np.clip(np.diag(cov), 0, None))
    claimed = best if (resolved and elements >= MIN_ELEMENTS_FOR_PROFILE) else "undetermined"
    bound = None
    if not resolved:
        # upper bound at coverage factor BOUND_K on the Gaussian width parameter q = FWHM²
        q, uq = (res.x[3], perr[3]) if best in ("gaussian", "voigt") else (w**2, 2 * w * uw)
        bound = float(max(np.sqrt(max(q + BOUND_K * uq, 0.0)), ils))
    k00 = spec.line_shape.kernel(np.zeros(1))[0]
    noise_at = float(spec.noise[win.i0])
    p = res.x
    peak = float(p[0] * spec.line_shape.kernel(np.zeros(1), g, lw)[0] / k00)
    return LineFit(
        centre_per_cm=float(p[1]),
        u_centre_per_cm=float(perr[1]),
        height=float(p[0]),
        peak=peak,
        area=float(p[0] / k00),
        u_area=float(perr[0] / k00),
        profile=claimed,
        gauss_fwhm_per_cm=float(g),
        lorentz_fwhm_per_cm=float(lw),
        fwhm_per_cm=float(w),
        u_fwhm_per_cm=float(uw),
        resolved=resolved,
        fwhm_upper_bound_per_cm=bound,
        instrument_fwhm_per_cm=float(ils),
        snr=float(peak / noise_at) if noise_at > 0 else float("inf"),
        n_points=int(win.x.size),
        n_effective=float(win.n_eff),
        dof=float(dof),
        success=bool(res.success),
        message=str(res.message),
        aic={k: float(v[1]) for k, v in results.items()},
    )


@dataclass(frozen=True)
class _Window:
    """The points a line is fitted on, their weights and the noise correlation between them."""

    i0: int
    x: np.ndarray
    y: np.ndarray
    wts: np.ndarray
    ils: float
    excess2: float
    peak_value: float
    peak_sigma: float
    n_eff: float
    rmat: np.ndarray


def _fit_window_data(spec: Spectrum, centre_guess_per_cm: float, others) -> _Window:
    """The fit window around the local maximum nearest ``centre_guess_per_cm``."""
    sig = spec.sigma_per_cm
    y_all = spec.density
    if others is not None:
        y_all = y_all - others(sig)
    i0 = int(np.argmin(np.abs(sig - centre_guess_per_cm)))
    while 0 < i0 < sig.size - 1 and y_all[i0 + 1] > y_all[i0]:
        i0 += 1
    while 0 < i0 < sig.size - 1 and y_all[i0 - 1] > y_all[i0]:
        i0 -= 1
    ils = spec.line_shape.fwhm_per_cm
    obs = _observed_fwhm(sig, y_all, i0)
    # the main lobe of an unresolved line (first nulls near ±1.2 FWHM for the usual
    # apodizations) plus a margin; wider for resolved lines
    win = _fit_window(spec, i0, max(2.0 * ils, 2.5 * obs))
    # a broad line spans thousands of grid points: fit every k-th (at most MAX_FIT_POINTS), the
    # noise correlation below is built for the points actually used
    stride = max(1, int(np.ceil((win.stop - win.start) / MAX_FIT_POINTS)))
    win = slice(win.start, win.stop, stride)
    x = sig[win]
    ds = (sig[1] - sig[0]) * stride
    # effective number of independent points: N / Σ_k R(k·Δσ)
    lags = ds * np.arange(-x.size + 1, x.size)
    r = spec.line_shape.noise_correlation(lags)
    corr_len = float(np.sum(r[np.abs(lags) <= 4 * ils]))
    return _Window(
        i0=i0, x=x, y=y_all[win], wts=1.0 / spec.noise[win], ils=ils,
        excess2=max(obs**2 - ils**2, 0.0), peak_value=float(y_all[i0]),
        peak_sigma=float(sig[i0]), n_eff=x.size / max(corr_len, 1.0),
        rmat=r[(np.arange(x.size)[:, None] - np.arange(x.size)[None, :]) + x.size - 1],
    )


def _run_profile(spec: Spectrum, win: _Window, prof: str):
    """Least-squares fit of profile ``prof`` on the window: ``(result, AIC)``."""
    from scipy.optimize import least_squares

    model = _model_factory(spec, prof)
    ils, excess2, x, y, wts = win.ils, win.excess2, win.x, win.y, win.wts
    p0 = [win.peak_value, win.peak_sigma, 0.0]
    scale = [abs(win.peak_value) + 1e-300, ils, abs(win.peak_value) + 1e-300]
    if prof in ("gaussian", "voigt"):
        p0.append(excess2 if prof == "gaussian" else 0.5 * excess2)
        scale.append(ils**2)
    if prof in ("lorentzian", "voigt"):
        p0.append(np.sqrt(excess2) * (1.0 if prof == "lorentzian" else 0.5))
        scale.append(ils)
    # trial steps to large negative (signed) widths overflow the growing envelope; the
    # solver rejects their non-finite cost, so numpy's overflow warnings are noise here
    with np.errstate(over="ignore", invalid="ignore"):
        res = least_squares(
            lambda p: (model(p, x) - y) * wts, p0, x_scale=np.array(scale), method="trf",
            max_nfev=100 * len(p0),
        )
    rss = float(np.sum(res.fun**2))
    aic = win.n_eff * np.log(max(rss, 1e-300) / x.size) + 2 * res.x.size
    return res, aic


def _covariance(res, win: _Window):
    """Covariance of the fitted parameters for correlated noise, and its degrees of freedom.

    The Jacobian's columns are scaled to unit norm first: the width column is orders of
    magnitude below the height column, and pinv's relative cutoff would otherwise drop it.
    The residual degrees of freedom for correlated noise are ``tr((I − H)R) = n −
    tr((JᵀJ)⁻¹JᵀRJ)``, not ``n − p`` (which biases the residual scale low). The residuals are
    weighted by the spectrum's noise estimate (from thousands of points), so their variance
    should be 1; they scale the covariance only when significantly larger (model mismatch,
    noise the estimate misses), and then with ``dof`` degrees of freedom; otherwise the
    uncertainty rests on the noise estimate, whose degrees of freedom are many (infinite).
    """
    d = np.linalg.norm(res.jac, axis=0)
    d[d == 0] = 1.0
    J = res.jac / d
    jtj_inv = np.linalg.pinv(J.T @ J)
    jrj = J.T @ win.rmat @ J
    dof = max(win.x.size - float(np.trace(jtj_inv @ jrj)), 1.0)
    ratio = float(np.sum(res.fun**2)) / dof
    if ratio > 1.0 + 2.0 * np.sqrt(2.0 / dof):
        s2, dof_out = ratio, dof
    else:
        s2, dof_out = 1.0, np.inf
    return jtj_inv @ jrj @ jtj_inv * s2 / np.outer(d, d), dof_out


def _reach(fit: LineFit) -> float:
    """Distance from a line's centre within which its model is subtracted, cm⁻¹."""
    return 12 * max(fit.instrument_fwhm_per_cm, fit.fwhm_per_cm)


def line_model(spec: Spectrum, fits: list[LineFit]):
    """Callable model of a set of fitted lines (without baselines)."""
    shape = spec.line_shape
    k00 = shape.kernel(np.zeros(1))[0]

    def f(sig):
        out = np.zeros_like(sig)
        for lf in fits:
            if not lf.success:
                continue
            m = np.abs(sig - lf.centre_per_cm) < _reach(lf)
            out[m] += lf.height * shape.kernel(
                sig[m] - lf.centre_per_cm, lf.gauss_fwhm_per_cm, lf.lorentz_fwhm_per_cm
            ) / k00
        return out

    return f


def find_lines(
    spec: Spectrum,
    *,
    band_per_cm: tuple[float, float] | None = None,
    snr_threshold: float = DETECTION_SNR,
    max_lines: int = 40,
    profile: str = "auto",
) -> list[LineFit]:
    """Find lines one at a time: fit the strongest peak, subtract its model, repeat.

    Subtracting the fitted model (line shape included) removes the line's apodization
    sidelobes with it, so they are not mistaken for lines. A peak counts when it stands
    ``snr_threshold`` noise standard deviations above zero in the residual.
    """
    sig = spec.sigma_per_cm
    lo, hi = band_per_cm if band_per_cm is not None else (sig[1], sig[-1])
    inband = (sig >= lo) & (sig <= hi)
    fits: list[LineFit] = []
    # Near a fitted line the floor is its fit residual, not the white noise: a strong line
    # carries sidebands from mirror-speed and sampling errors that must not become "lines".
    floor2 = spec.noise**2
    for _ in range(max_lines):
        model = line_model(spec, fits)
        resid = spec.density - model(sig)
        score = np.where(inband, resid / np.sqrt(floor2), -np.inf)
        i0 = int(np.argmax(score))
        if score[i0] < snr_threshold:
            break
        fit = fit_line(spec, sig[i0], profile=profile, others=model if fits else None)
        near = np.abs(sig - fit.centre_per_cm) < max(fit.instrument_fwhm_per_cm, fit.fwhm_per_cm)
        peak = float(resid[near].max()) if near.any() else float(resid[i0])
        plausible = (
            fit.success
            and np.isfinite(fit.centre_per_cm)
            and 0 < fit.peak < 2 * peak
            and abs(fit.centre_per_cm - sig[i0])
            < 2 * max(fit.instrument_fwhm_per_cm, fit.fwhm_per_cm)
            and fit.snr >= snr_threshold
            # the same line again (a residual of an imperfect subtraction) is not a new line
            and all(abs(fit.centre_per_cm - f.centre_per_cm) > 0.5 * f.instrument_fwhm_per_cm
                    for f in fits)
        )
        if not plausible:
            # an unfittable peak: raise the floor there so the search moves on
            floor2[_fit_window(spec, i0, 2 * spec.line_shape.fwhm_per_cm)] = np.inf
            continue
        fits.append(fit)
        win = _fit_window(spec, int(np.argmin(np.abs(sig - fit.centre_per_cm))),
                          2 * max(fit.instrument_fwhm_per_cm, fit.fwhm_per_cm))
        r = (spec.density - line_model(spec, fits)(sig))[win]
        floor2[win] = np.maximum(floor2[win], np.median(r**2))
        # beyond the fitted model's reach, the line's far sidelobes (2× their envelope)
        far = inband & (np.abs(sig - fit.centre_per_cm) > _reach(fit))
        env = spec.line_shape.sidelobe_envelope(sig[far] - fit.centre_per_cm)
        floor2[far] += (2 * fit.peak * env / snr_threshold) ** 2
    # close lines pull on each other's fits: refit each with all the others subtracted
    for _ in range(2 if len(fits) > 1 else 0):
        for i in range(len(fits)):
            others = [f for j, f in enumerate(fits) if j != i]
            refit = fit_line(spec, fits[i].centre_per_cm, profile=profile,
                             others=line_model(spec, others))
            moved = abs(refit.centre_per_cm - fits[i].centre_per_cm)
            if (refit.success and np.isfinite(refit.centre_per_cm) and refit.peak > 0
                    and moved < 0.5 * refit.instrument_fwhm_per_cm):
                fits[i] = refit
    fits.sort(key=lambda f: -f.centre_per_cm)  # by increasing wavelength
    return fits
