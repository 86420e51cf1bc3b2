"""Finding and fitting spectral lines.

A line is fitted with its profile *convolved with the instrument line shape* of the spectrum
(:class:`ftsource.spectrum.spectrum.LineShape`), so a line near the resolution limit is not reported
wider than it is. Profiles: Gaussian, Lorentzian and Voigt, chosen by Akaike's information
criterion on the effective number of independent points (zero-filling and apodization make
neighbouring points correlated), the choice carried into the uncertainty by Akaike weights,
and claimed only when the line spans at least :data:`MIN_ELEMENTS_FOR_PROFILE` resolution
elements and the data decide between Gaussian and Lorentzian. A peak in the wings of a
resolved line is a new line only when it beats the wings alone clearly (Schwarz's criterion,
:data:`WING_BIC`); a resolved line narrower than :data:`PAIR_ELEMENTS` elements that a pair of
unresolved lines fits as well is marked ``pair_possible``. The rules are stated in
``docs/measurements.md``.

Uncertainties are the "sandwich" covariance of the least-squares estimate with the spectral
noise correlation of the apodized transform, scaled by the residuals (a residual-based,
Type A evaluation, JCGM 100:2008 §4.2).

Kernel units: wavenumber in cm⁻¹.
"""

from __future__ import annotations

from dataclasses import dataclass, field, replace

import numpy as np

from ftsource.spectrum.spectrum import Spectrum

__all__ = [
    "SEARCH_BAND_NM",
    "LineFit",
    "fit_line",
    "find_lines",
    "voigt_fwhm",
    "akaike_average",
    "MIN_ELEMENTS_FOR_PROFILE",
    "PROFILE_WEIGHT",
    "PAIR_ELEMENTS",
    "WING_BIC",
    "two_lines_gain",
    "magnitude_wing_bound",
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
#: A profile is claimed only when its Akaike weight among the fitted profiles reaches this.
PROFILE_WEIGHT = 0.9
#: Resolved lines narrower than this many resolution elements are also fitted as a pair of
#: unresolved lines.
PAIR_ELEMENTS = 3.0
#: "Clearly better" for information criteria: a difference above 10 leaves the worse model
#: essentially no support (Burnham & Anderson 2002, §2.6; Kass & Raftery 1995, "very strong").
PAIR_AIC_MARGIN = 10.0
#: A new line among the wings of a resolved line must beat the wings alone by this much
#: in Schwarz's criterion (BIC), see :func:`find_lines`.
WING_BIC = 10.0
#: How far (in its FWHMs, at least instrument FWHMs) a line's wings are searched with
#: :data:`WING_BIC`.
WING_REACH = 30.0
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
    ``profile_weights`` are the Akaike weights of the profiles fitted (one, 1.0, for an
    unresolved line), ``profile_widths`` each profile's ``(gauss_fwhm, lorentz_fwhm,
    u_fwhm)``; ``pair_possible`` says a pair of unresolved lines fits as well as this one
    broad line, and ``pair_lines`` holds the pair's ``(centre, height)`` when the pair fits
    clearly better (ΔAIC > :data:`PAIR_AIC_MARGIN`); on a magnitude spectrum such a pair is
    kept as this one line, ``pair_possible`` set and ``magnitude_pair`` holding the pair's
    ``(h1, σ1, h2, σ2, φ)`` (its model, :func:`line_model`); ``bic_gain`` is Schwarz's
    criterion of the line against the baseline alone.
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
    profile_weights: dict = field(default_factory=dict)
    profile_widths: dict = field(default_factory=dict)
    pair_possible: bool = False
    pair_lines: tuple = ()
    bic_gain: float = float("nan")
    magnitude_pair: tuple = ()

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


def _observed_fwhm(sig, y, i0, base: float = 0.0):
    """Width of the peak at ``i0`` at half its height above ``base``."""
    half = base + (y[i0] - base) / 2 if y[i0] > base else y[i0] / 2
    lo = i0
    while lo > 0 and y[lo] > half:
        lo -= 1
    hi = i0
    while hi < y.size - 1 and y[hi] > half:
        hi += 1
    return float(sig[hi] - sig[lo])


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


def akaike_average(values, uncertainties, aics, *, about=None):
    """Model-averaged value and its unconditional standard uncertainty.

    Akaike weights ``w_i ∝ exp(−ΔAIC_i/2)``; the value is ``θ̄ = Σ w_i θ_i`` and its
    uncertainty ``Σ w_i √(u_i² + (θ_i − θ̄)²)``, which carries the choice between models
    into the uncertainty (Buckland, Burnham & Augustin 1997; Burnham & Anderson 2002, eq. 4.9).
    With ``about`` (the selected model's estimate) the value returned is ``about`` and the
    spread is taken about it, ``Σ w_i √(u_i² + (θ_i − about)²)``.

    Returns
    -------
    (float, float, ndarray)
        ``θ̄``, its uncertainty and the weights.

    References
    ----------
    .. [1] S. T. Buckland, K. P. Burnham and N. H. Augustin, "Model selection: an integral part
       of inference", Biometrics 53, 603–618 (1997).
    .. [2] K. P. Burnham and D. R. Anderson, *Model Selection and Multimodel Inference*, 2nd
       ed., Springer (2002), §4.3.2.
    """
    v = np.asarray(values, float)
    u = np.asarray(uncertainties, float)
    a = np.asarray(aics, float)
    w = np.exp(-0.5 * (a - a.min()))
    w = w / w.sum()
    mean = float(np.sum(w * v)) if about is None else float(about)
    return mean, float(np.sum(w * np.sqrt(u * u + (v - mean) ** 2))), w


def fit_line(
    spec: Spectrum,
    centre_guess_per_cm: float,
    *,
    profile: str = "auto",
    others=None,
    min_snr: float | None = None,
) -> LineFit:
    """Fit one line near ``centre_guess_per_cm``.

    A Gaussian is fitted first; it decides whether the line is resolved. A resolved line is
    also fitted with a Lorentzian and a Voigt profile, whatever its width. The reported centre
    and FWHM are those of the profile of lowest AIC (also the line model subtracted before
    looking for further lines), with the unconditional uncertainty over the valid profiles
    (:func:`akaike_average` about the selected estimate), so a profile the data cannot pick
    carries the spread between profiles into the uncertainty. A profile is *claimed* only when
    the line spans at least :data:`MIN_ELEMENTS_FOR_PROFILE` resolution elements and the data
    decide between Gaussian and Lorentzian: the rival pure profile keeps at most
    1 − :data:`PROFILE_WEIGHT` of the Akaike weight; otherwise it is "undetermined".

    A resolved line narrower than :data:`PAIR_ELEMENTS` resolution elements is also fitted as a
    pair of unresolved lines; when the pair's AIC is not worse than the single line's by
    :data:`PAIR_AIC_MARGIN`, ``pair_possible`` is set: the data cannot tell one broad line from
    two close narrow ones.

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
    min_snr : float, optional
        A peak whose first (Gaussian) fit stands below this signal-to-noise ratio is not
        examined further (no other profiles, no pair test): the caller will not take it as a
        line. :func:`find_lines` passes half its detection threshold.

    Returns
    -------
    LineFit
        Always returned; ``success`` False when the fit did not converge.

    References
    ----------
    .. [1] H. Akaike, "A new look at the statistical model identification", IEEE Trans.
       Autom. Control 19, 716–723 (1974).
    .. [2] K. P. Burnham and D. R. Anderson, *Model Selection and Multimodel Inference*, 2nd
       ed., Springer (2002), §2.9 (ΔAIC > 10: essentially no support) and §4.3.2.
    .. [3] JCGM 100:2008, Evaluation of measurement data — Guide to the expression of
       uncertainty in measurement, §4.2 (Type A evaluation).
    """
    if profile not in ("auto", "gaussian", "lorentzian", "voigt"):
        raise ValueError(f"profile must be auto, gaussian, lorentzian or voigt, not {profile!r}")
    win = _window(spec, centre_guess_per_cm, others)
    ils = win.ils
    first = "gaussian" if profile in ("auto", "gaussian") else profile
    # a candidate whose height collapses far below the noise (or turns negative) is not a
    # line: its fit is given up (a ripple or a smooth residual makes the solver crawl to zero
    # or negative height for hundreds of steps)
    give_up = None if min_snr is None else 0.25 * min_snr * float(spec.noise[win.i0])
    results = {first: _run_profile(win, first, give_up_below=give_up)}
    cov, dof = _covariance(results[first][0], win)
    w, uw, g, lw = _widths(first, results[first][0].x, cov)
    resolved = bool(w >= RESOLVED_FACTOR * ils and w > 3 * uw)
    sel = _Selection(first, results[first][0], cov, dof, float(results[first][0].x[1]),
                     float(np.sqrt(max(cov[1, 1], 0.0))), w, uw, g, lw, {first: 1.0},
                     {first: (float(g), float(lw), float(uw))})
    examine = profile == "auto"
    if examine and min_snr is not None:
        noise0 = float(spec.noise[win.i0])
        examine = noise0 <= 0 or _peak(spec, win, sel.res.x[0], g, lw) / noise0 >= min_snr
    if examine and resolved:
        for prof in ("lorentzian", "voigt"):
            results[prof] = _run_profile(win, prof)
        sel = _select_profile(win, results)
    elements = sel.fwhm / ils if ils > 0 else 0.0
    claimed = _claimed_profile(sel, resolved and elements >= MIN_ELEMENTS_FOR_PROFILE,
                               forced=profile != "auto")
    pair, pair_lines, mag_pair, u_centre = False, (), (), sel.u_centre
    if examine and (resolved and elements < PAIR_ELEMENTS
                              or not resolved and sel.fwhm > 0.5 * ils):
        aic_pair, pp = _run_pair(win, sel.centre, sel.fwhm)
        results["pair"] = (None, aic_pair)
        pair, pair_lines = _pair_verdict(aic_pair, pp, results[sel.best][1], ils, resolved)
        if pair_lines and win.magnitude:
            # two lines whose complex responses interfere: one subtraction each cannot
            # separate them, so they stay one line, marked, modelled as the pair, with the
            # centre's uncertainty spanning both
            pair_lines, mag_pair = (), tuple(float(v) for v in pp[:5])
            u_centre = float(np.hypot(u_centre, 0.5 * abs(pp[3] - pp[1])))
    res, perr = sel.res, np.sqrt(np.clip(np.diag(sel.cov), 0, None))
    bound = None
    if not resolved:
        # upper bound at coverage factor BOUND_K on the Gaussian width parameter q = FWHM²
        q, uq = ((res.x[3], perr[3]) if sel.best in ("gaussian", "voigt")
                 else (sel.fwhm**2, 2 * sel.fwhm * sel.u_fwhm))
        bound = float(max(np.sqrt(max(q + BOUND_K * uq, 0.0)), ils))
    noise_at = float(spec.noise[win.i0])
    p = res.x
    peak = _peak(spec, win, p[0], sel.gauss, sel.lorentz)
    return LineFit(
        centre_per_cm=sel.centre,
        u_centre_per_cm=u_centre,
        height=float(p[0]),
        peak=peak,
        area=float(p[0] / win.k00),
        u_area=float(perr[0] / win.k00),
        profile=claimed,
        gauss_fwhm_per_cm=float(sel.gauss),
        lorentz_fwhm_per_cm=float(sel.lorentz),
        fwhm_per_cm=float(sel.fwhm),
        u_fwhm_per_cm=float(sel.u_fwhm),
        resolved=resolved,
        fwhm_upper_bound_per_cm=bound,
        instrument_fwhm_per_cm=float(ils),
        snr=float(peak / noise_at) if noise_at > 0 else float("inf"),
        n_points=int(win.x.size),
        n_effective=float(win.n_eff),
        dof=float(sel.dof),
        success=bool(res.success),
        message=str(res.message),
        aic={k: float(v[1]) for k, v in results.items()},
        profile_weights=sel.weights,
        profile_widths=sel.widths,
        pair_possible=pair,
        pair_lines=pair_lines,
        bic_gain=_bic_gain(win, res),
        magnitude_pair=mag_pair,
    )


@dataclass(frozen=True)
class _Window:
    """The points a line is fitted on: weights, noise correlation and line-shape tables."""

    i0: int
    x: np.ndarray
    y: np.ndarray
    wts: np.ndarray
    ils: float
    excess2: float
    h0: float
    sigma0: float
    n_eff: float
    rmat: np.ndarray
    ev: object
    k00: float
    magnitude: bool = False

    def aic(self, rss: float, n_par: int) -> float:
        """Akaike's criterion on the effective number of independent points."""
        return self.n_eff * np.log(max(rss, 1e-300) / self.x.size) + 2 * n_par


def _window(spec: Spectrum, centre_guess_per_cm: float, others) -> _Window:
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
    # A magnitude spectrum stands on the noise's own mean (Rayleigh-distributed points are
    # positive): half maximum is measured above that level (the spectrum's median, which the
    # noise fills over most of the band), or a weak peak seems as wide as the noise around it.
    base = (max(float(np.median(y_all[:: max(1, y_all.size // 65536)])), 0.0)
            if spec.line_shape.kind == "magnitude" else 0.0)
    obs = _observed_fwhm(sig, y_all, i0, base)
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
        excess2=max(obs**2 - ils**2, 0.0), h0=float(y_all[i0]), sigma0=float(sig[i0]),
        n_eff=x.size / max(corr_len, 1.0),
        rmat=r[(np.arange(x.size)[:, None] - np.arange(x.size)[None, :]) + x.size - 1],
        # the line shape at the fit points, with quadrature and trigonometric tables built once
        ev=spec.line_shape.evaluator(x), k00=float(spec.line_shape.kernel(np.zeros(1))[0]),
        magnitude=spec.line_shape.kind == "magnitude",
    )


def _peak(spec: Spectrum, win: _Window, height: float, gauss: float, lorentz: float) -> float:
    """The fitted line's peak value: its height scaled by the line shape at zero offset for
    those widths over the zero-width shape's."""
    return float(height * spec.line_shape.kernel(np.zeros(1), gauss, lorentz)[0] / win.k00)


def _run_profile(win: _Window, prof: str, *, give_up_below: float | None = None):
    """Least-squares fit of profile ``prof`` on the window: ``(result, AIC)``.

    With ``give_up_below`` the solver stops (``success`` False) once the height is below
    that value (or negative) after 10 iterations."""
    from scipy.optimize import least_squares

    ev, k00, y, wts, ils = win.ev, win.k00, win.y, win.wts, win.ils
    hs = abs(win.h0) + 1e-300
    gq = prof in ("gaussian", "voigt")
    lz = prof in ("lorentzian", "voigt")
    p0 = [win.h0, win.sigma0, 0.0]
    scale = [hs, ils, hs]
    if gq:
        p0.append(win.excess2 if prof == "gaussian" else 0.5 * win.excess2)
        scale.append(ils**2)
    if lz:
        p0.append(np.sqrt(win.excess2) * (1.0 if prof == "lorentzian" else 0.5))
        scale.append(ils)

    def widths(p):
        return (p[3] if gq else 0.0), (p[-1] if lz else 0.0)

    def fun(p):
        q, lor = widths(p)
        return (p[0] * ev(p[1], q, lor) / k00 + p[2] - y) * wts

    def jac(p):
        q, lor = widths(p)
        k, dc, dq, dl = ev(p[1], q, lor, derivatives=True)
        cols = [k / k00, p[0] * dc / k00, np.ones_like(k)]
        if gq:
            cols.append(p[0] * dq / k00)
        if lz:
            cols.append(p[0] * dl / k00)
        return np.column_stack(cols) * wts[:, None]

    # trial steps to large negative (signed) widths overflow the growing envelope; the
    # solver rejects their non-finite cost, so numpy's overflow warnings are noise here
    def give_up(intermediate_result):
        if intermediate_result.nit >= 10 and intermediate_result.x[0] < give_up_below:
            raise StopIteration

    with np.errstate(over="ignore", invalid="ignore"):
        res = least_squares(fun, p0, jac=jac, x_scale=np.array(scale), method="trf",
                            max_nfev=100 * len(p0),
                            callback=None if give_up_below is None else give_up)
    return res, win.aic(float(np.sum(res.fun**2)), res.x.size)


def _run_pair(win: _Window, fit_c: float, fit_w: float):
    """Two unresolved lines (instrument line shape) instead of one broad line:
    ``(AIC, parameters)`` with parameters ``(h1, σ1, h2, σ2, baseline)`` (on a magnitude
    spectrum ``(h1, σ1, h2, σ2, φ, baseline)``, :func:`_run_magnitude_pair`)."""
    from scipy.optimize import least_squares

    ev, k00, y, wts, ils = win.ev, win.k00, win.y, win.wts, win.ils
    hs = abs(win.h0) + 1e-300
    half = 0.5 * max(fit_w, 0.5 * ils)
    if win.magnitude:
        return _run_magnitude_pair(win, fit_c, half)

    def fun(p):
        return (p[0] * ev(p[1], 0.0, 0.0) / k00 + p[2] * ev(p[3], 0.0, 0.0) / k00 + p[4]
                - y) * wts

    def jac(p):
        k1, d1, _, _ = ev(p[1], 0.0, 0.0, derivatives=True)
        k2, d2, _, _ = ev(p[3], 0.0, 0.0, derivatives=True)
        cols = [k1 / k00, p[0] * d1 / k00, k2 / k00, p[2] * d2 / k00, np.ones_like(k1)]
        return np.column_stack(cols) * wts[:, None]

    p0 = [0.5 * win.h0, fit_c - half, 0.5 * win.h0, fit_c + half, 0.0]
    with np.errstate(over="ignore", invalid="ignore"):
        res = least_squares(fun, p0, jac=jac, x_scale=np.array([hs, ils, hs, ils, hs]),
                            method="trf", max_nfev=500)
    return win.aic(float(np.sum(res.fun**2)), res.x.size), res.x


def magnitude_pair_model(weights, k1, k2, h1, h2, phi, k00):
    """Magnitude spectrum of two lines: ``Σ_g w_g |A1 + A2 e^{iφ}|``, ``A = h·K_g/k00`` with
    ``K_g`` each sweep span's signed line shape.

    About the centre ``x_c`` of a sweep that does not hold ZPD, a line at σ_k contributes
    ``(h_k/2) K(σ − σ_k) e^{2πiσ_k x_c}`` to the complex spectrum (shift theorem): the two
    lines' responses add with the relative phase ``φ = 2π(σ2 − σ1)x_c``, which the magnitude
    does not remove (the cross term ``2A1A2 cos φ``); ``φ`` is fitted. Returns the model and
    ``(∂/∂A1, ∂/∂A2, ∂/∂φ)`` of each span's modulus, for the Jacobian.

    References
    ----------
    .. [1] R. N. Bracewell, *The Fourier Transform and Its Applications*, 3rd ed., McGraw-Hill
       (2000), the shift theorem.
    """
    a1 = h1 * k1 / k00
    a2 = h2 * k2 / k00
    cp, sp = np.cos(phi), np.sin(phi)
    m = np.sqrt(np.maximum(a1 * a1 + a2 * a2 + 2 * a1 * a2 * cp, 1e-300))
    return (np.tensordot(weights, m, axes=1),
            ((a1 + a2 * cp) / m, (a2 + a1 * cp) / m, -a1 * a2 * sp / m))


def _run_magnitude_pair(win: _Window, fit_c: float, half: float):
    """The pair test on a magnitude spectrum (:func:`magnitude_pair_model`): parameters
    ``(h1, σ1, h2, σ2, φ, baseline)``, fitted from three starting phases (``φ`` and ``−φ``
    give the same modulus), the best kept."""
    from scipy.optimize import least_squares

    ev, k00, y, wts, ils = win.ev, win.k00, win.y, win.wts, win.ils
    hs = abs(win.h0) + 1e-300

    def parts(p):
        w, t1 = ev.by_span(p[1])
        _, t2 = ev.by_span(p[3])
        return w, t1, t2, magnitude_pair_model(w, t1[..., 0], t2[..., 0], p[0], p[2], p[4], k00)

    def fun(p):
        return (parts(p)[3][0] + p[5] - y) * wts

    def jac(p):
        w, t1, t2, (_, (d1, d2, dphi)) = parts(p)
        cols = [np.tensordot(w, d1 * t1[..., 0], axes=1) / k00,
                p[0] * np.tensordot(w, d1 * t1[..., 1], axes=1) / k00,
                np.tensordot(w, d2 * t2[..., 0], axes=1) / k00,
                p[2] * np.tensordot(w, d2 * t2[..., 1], axes=1) / k00,
                np.tensordot(w, dphi, axes=1), np.ones_like(y)]
        return np.column_stack(cols) * wts[:, None]

    best = None
    for phi0 in (0.6, 1.6, 2.6):
        p0 = [0.5 * win.h0, fit_c - half, 0.5 * win.h0, fit_c + half, phi0, 0.0]
        with np.errstate(over="ignore", invalid="ignore"):
            res = least_squares(fun, p0, jac=jac, method="trf", max_nfev=300,
                                x_scale=np.array([hs, ils, hs, ils, 1.0, hs]))
        if best is None or res.cost < best.cost:
            best = res
    x = best.x.copy()
    for k in (0, 2):  # (−h, φ + π) is the same pair as (h, φ): heights positive
        if x[k] < 0:
            x[k], x[4] = -x[k], x[4] + np.pi
    x[4] = abs(np.angle(np.exp(1j * x[4])))  # φ in [0, π]
    return win.aic(float(np.sum(best.fun**2)), x.size), x


def _covariance(res, win: _Window):
    """Covariance of the fitted parameters for correlated noise, and its degrees of freedom.

    The Jacobian's columns are scaled to unit norm first: the width column is orders of
    magnitude below the height column, and pinv's relative cutoff would otherwise drop it.
    The residual degrees of freedom for correlated noise are ``E[rss] = tr((I − H)R) = n −
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


@dataclass(frozen=True)
class _Selection:
    """The profile chosen for a line and the estimates reported from it."""

    best: str
    res: object
    cov: np.ndarray
    dof: float
    centre: float
    u_centre: float
    fwhm: float
    u_fwhm: float
    gauss: float
    lorentz: float
    weights: dict
    widths: dict


def _select_profile(win: _Window, results: dict) -> _Selection:
    """The profile of lowest AIC among Gaussian, Lorentzian and a genuine Voigt, with the
    spread over the valid profiles carried into the uncertainties (:func:`akaike_average`)."""
    # a Voigt with a Gaussian or Lorentzian part at or below zero width is no Voigt (the
    # other pure profile, or an envelope growing with OPD): it cannot be the one claimed
    v = results["voigt"][0].x
    choices = [k for k in results if k != "voigt" or (v[3] > 0 and v[4] > 0)]
    best = min(choices, key=lambda k: results[k][1])
    fits = {}
    for k in choices:
        ck, dk = _covariance(results[k][0], win)
        fits[k] = (results[k][0], ck, dk, _widths(k, results[k][0].x, ck))
    res, cov, dof, (_, _, g, lw) = fits[best]
    aics = [results[k][1] for k in choices]
    w, uw, wts_m = akaike_average([fits[k][3][0] for k in choices],
                                  [fits[k][3][1] for k in choices], aics,
                                  about=fits[best][3][0])
    centre, u_centre, _ = akaike_average(
        [fits[k][0].x[1] for k in choices],
        [np.sqrt(max(fits[k][1][1, 1], 0.0)) for k in choices], aics, about=res.x[1])
    return _Selection(
        best, res, cov, dof, centre, u_centre, w, uw, g, lw,
        {k: float(v) for k, v in zip(choices, wts_m, strict=True)},
        {k: (float(fits[k][3][2]), float(fits[k][3][3]), float(fits[k][3][1])) for k in choices},
    )


def _claimed_profile(sel: _Selection, wide: bool, *, forced: bool) -> str:
    """The profile claimed for a line: only for a line of at least
    :data:`MIN_ELEMENTS_FOR_PROFILE` elements when the data decide between Gaussian and
    Lorentzian (the other pure profile, for a Voigt the pure profile it is further from, keeps
    at most 1 − :data:`PROFILE_WEIGHT` of the weight; a Voigt that fits as well as the pure
    profile it contains does not argue against that profile), or when the profile was forced."""
    g_w, l_w = sel.weights.get("gaussian", 0.0), sel.weights.get("lorentzian", 0.0)
    rivals = {"gaussian": ("lorentzian",), "lorentzian": ("gaussian",),
              "voigt": ("gaussian",) if l_w >= g_w else ("lorentzian",)}[sel.best]
    clear = sum(sel.weights.get(k, 0.0) for k in rivals) <= 1.0 - PROFILE_WEIGHT
    return sel.best if wide and (clear or forced) else "undetermined"


def _pair_verdict(aic_pair: float, pp, aic_single: float, ils: float, resolved: bool):
    """``(pair_possible, pair_lines)`` from the pair fit against the single line's."""
    if aic_pair < aic_single - PAIR_AIC_MARGIN and min(pp[0], pp[2]) > 0 \
            and abs(pp[3] - pp[1]) > 0.25 * ils:
        # the data show two lines clearly: find_lines takes them as two
        return True, ((float(pp[1]), float(pp[0])), (float(pp[3]), float(pp[2])))
    # a broad line a pair of narrow ones fits as well: the data cannot tell (a pair nests an
    # unresolved single line, so this is asked of resolved lines only)
    return bool(resolved and aic_pair < aic_single + PAIR_AIC_MARGIN), ()


def _bic_gain(win: _Window, res) -> float:
    """Evidence for a line here at all: Schwarz's criterion of the fit against the baseline
    alone (others subtracted), on the effective number of points."""
    rss_fit = float(np.sum(res.fun**2))
    y, wts = win.y, win.wts
    b0 = float(np.sum(y * wts * wts) / np.sum(wts * wts))
    rss_null = float(np.sum(((y - b0) * wts) ** 2))
    return float(win.n_eff * np.log(max(rss_null, 1e-300) / max(rss_fit, 1e-300))
                 - (res.x.size - 1) * np.log(max(win.n_eff, 2.0)))


def magnitude_wing_bound(fit: LineFit, sigma_per_cm: np.ndarray) -> np.ndarray:
    """How high a resolved line's magnitude spectrum may stand at ``sigma_per_cm`` when its
    fringe envelope decays across the sweep (no ZPD in it): ``peak · min(1, w/|δ|)``, w the
    line's FWHM.

    The magnitude is ``|F(δ)| = |∫ f(x) e^{2πiδx} dx|`` with ``f`` the apodized envelope over
    the sweep. Integration by parts bounds it by ``(f(a) + f(b) + TV(f))/(2π|δ|) ≤ max f/(π|δ|)``
    for an ``f`` that rises and falls once, against the peak ``F(0) = ∫f``. For an envelope
    ``e^{−x/ℓ}`` falling from the sweep's start, ``∫f/max f = ℓ`` and the magnitude's FWHM is
    ``√3/(πℓ)``, so the bound is ``peak · w/(√3|δ|)`` (twice the exact asymptote
    ``peak · w/(2√3|δ|)``); ``w/|δ|`` keeps a further margin of √3 for envelopes of other shapes.

    References
    ----------
    .. [1] R. N. Bracewell, *The Fourier Transform and Its Applications*, 3rd ed., McGraw-Hill
       (2000): the transform of the one-sided exponential, ``ℓ/(1 − 2πiδℓ)`` (its table of
       transforms; cited from memory).
    .. [2] The bound ``|∫f e^{iωx}dx| ≤ (|f(a)| + |f(b)| + TV(f))/|ω|`` for ``f`` of bounded
       variation on [a, b] is integration by parts (Riemann–Stieltjes); common practice.
    """
    w = max(fit.fwhm_per_cm, fit.instrument_fwhm_per_cm)
    d = np.abs(np.asarray(sigma_per_cm, float) - fit.centre_per_cm)
    return fit.peak * np.minimum(1.0, w / np.maximum(d, 1e-300))


def _wing_height(fit: LineFit) -> float:
    """The height whose sidelobes a line's far wings are: its peak, or for a pair kept as one
    line on a magnitude spectrum the two lines' heights added (each has its own sidelobes)."""
    if fit.magnitude_pair:
        return abs(fit.magnitude_pair[0]) + abs(fit.magnitude_pair[2])
    return fit.peak


def _reach(fit: LineFit) -> float:
    """Distance from a line's centre within which its model is subtracted, cm⁻¹."""
    return 12 * max(fit.instrument_fwhm_per_cm, fit.fwhm_per_cm)


def line_model(spec: Spectrum, fits: list[LineFit], *, memo: dict | None = None):
    """Callable model of a set of fitted lines (without baselines).

    Within :func:`_reach` of its centre a line is its profile convolved with the line shape;
    beyond, a line with a Lorentzian part keeps its wings as the closed-form Voigt profile
    (scipy.special.voigt_profile; there the instrument line shape, of unit area and far
    narrower than the distance, no longer changes the profile), so slowly falling Lorentzian
    wings are not left behind to be found as lines.

    ``memo``, a dict the caller owns, keeps each line's model on the spectrum's own axis
    (:func:`find_lines` asks for the model of the same lines again and again as it adds lines).
    """
    from scipy.special import voigt_profile

    shape = spec.line_shape
    k00 = shape.kernel(np.zeros(1))[0]
    to_sigma = 1.0 / (2.0 * np.sqrt(2.0 * np.log(2.0)))

    def one(lf, sig):
        """(indices within reach, the model there, the far wings on all of sig or None)."""
        d = sig - lf.centre_per_cm
        near = np.flatnonzero(np.abs(d) < _reach(lf))
        if lf.magnitude_pair:
            h1, c1, h2, c2, phi = lf.magnitude_pair
            spans = [replace(shape, L_cm=(L,), weights=(1.0,), kind="real")
                     for L in shape._groups()]
            k1 = np.array([sh.kernel(sig[near] - c1) for sh in spans])
            k2 = np.array([sh.kernel(sig[near] - c2) for sh in spans])
            w = np.array(list(shape._groups().values()))
            return near, magnitude_pair_model(w, k1, k2, h1, h2, phi, k00)[0], None
        vals = lf.height * _broad_kernel(shape, d[near], lf) / k00
        far = None
        if lf.lorentz_fwhm_per_cm > 0:
            far = lf.area * voigt_profile(d, lf.gauss_fwhm_per_cm * to_sigma,
                                          lf.lorentz_fwhm_per_cm / 2)
            far[near] = 0.0
        return near, vals, far

    def f(sig):
        out = np.zeros_like(sig)
        own_axis = memo is not None and sig is spec.sigma_per_cm
        for lf in fits:
            if not lf.success:
                continue
            hit = memo.get(id(lf)) if own_axis else None
            if hit is None or hit[0] is not lf:
                hit = (lf, *one(lf, sig))
                if own_axis:
                    memo[id(lf)] = hit  # the fit is kept in the entry, so its id stays its own
            _, near, vals, far = hit
            out[near] += vals
            if far is not None:
                out += far
        return out

    return f


#: A line broader than this many instrument FWHMs has its model evaluated every
#: 1/:data:`BROAD_STEPS` of its FWHM and interpolated (cubic spline) in between.
BROAD_FACTOR = 4.0
BROAD_STEPS = 64


def _broad_kernel(shape, delta: np.ndarray, lf: LineFit) -> np.ndarray:
    """``shape.kernel(delta, …)`` for the line ``lf``; for a line broader than
    :data:`BROAD_FACTOR` instrument FWHMs, on a grid of FWHM/:data:`BROAD_STEPS` and
    interpolated by a cubic spline (scipy) when that saves points.

    The profile convolved with the line shape is then smooth on the scale of its own FWHM
    (the line shape's ringing is averaged over the broad profile), so the spline's error,
    of order (step/FWHM)⁴ of the peak, is below 1e-6 of it (tested against the direct sum,
    tests/test_fast_paths.py); an LED's model, tens of thousands of points times hundreds of
    nodes, took a second of cosines per evaluation otherwise."""
    from scipy.interpolate import CubicSpline

    g, lor = lf.gauss_fwhm_per_cm, lf.lorentz_fwhm_per_cm
    w = voigt_fwhm(max(g, 0.0), max(lor, 0.0))  # of the widths modelled, not the reported one
    if not (w > BROAD_FACTOR * lf.instrument_fwhm_per_cm) or delta.size < 4096:
        return shape.kernel(delta, g, lor)
    lo, hi = float(delta.min()), float(delta.max())
    n = int(np.ceil((hi - lo) / (w / BROAD_STEPS))) + 1
    if n >= delta.size // 2:
        return shape.kernel(delta, g, lor)
    knots = np.linspace(lo, hi, n)
    return CubicSpline(knots, shape.kernel(knots, g, lor))(delta)


def _refit(spec: Spectrum, fits: list[LineFit], profile: str) -> list[LineFit]:
    """Close lines pull on each other's fits: refit each with all the others subtracted
    (twice)."""
    fits = list(fits)
    for _ in range(2 if len(fits) > 1 else 0):
        for i in range(len(fits)):
            others = [f for j, f in enumerate(fits) if j != i]
            refit = fit_line(spec, fits[i].centre_per_cm, profile=profile,
                             others=line_model(spec, others))
            moved = abs(refit.centre_per_cm - fits[i].centre_per_cm)
            if (refit.success and np.isfinite(refit.centre_per_cm) and refit.peak > 0
                    and moved < 0.5 * refit.instrument_fwhm_per_cm):
                fits[i] = refit
    return fits


def _split_pair(spec, fit: LineFit, model, profile: str) -> list[LineFit]:
    """Two line fits from a fit whose pair model won: each fitted with the other (as an
    unresolved line of the pair's fitted height) and ``model`` subtracted."""
    from dataclasses import replace

    k00 = spec.line_shape.kernel(np.zeros(1))[0]
    seeds = [replace(fit, centre_per_cm=c, height=h, area=h / k00, gauss_fwhm_per_cm=0.0,
                     lorentz_fwhm_per_cm=0.0, fwhm_per_cm=0.0, pair_lines=())
             for c, h in fit.pair_lines]
    out = []
    for i, sd in enumerate(seeds):
        other = line_model(spec, [seeds[1 - i]])
        base = (lambda s, o=other: o(s) + model(s)) if model is not None else other
        f = fit_line(spec, sd.centre_per_cm, profile=profile, others=base)
        out.append(replace(f, pair_lines=()) if f.success else sd)
    ils = spec.line_shape.fwhm_per_cm
    if not (all(f.success and f.peak > 0 for f in out)
            and abs(out[0].centre_per_cm - out[1].centre_per_cm) > 0.5 * ils):
        # the two did not stay apart as lines: keep the single line, marked as a possible pair
        return [replace(fit, pair_lines=(), pair_possible=True)]
    return out


def _host(fit: LineFit, fits: list[LineFit]) -> LineFit | None:
    """The strongest stronger line in whose wings ``fit`` lies (within :data:`WING_REACH` of
    its FWHM, at least of the instrument's), or None."""
    near = [f for f in fits if f.peak > fit.peak and abs(fit.centre_per_cm - f.centre_per_cm)
            < WING_REACH * max(f.fwhm_per_cm, f.instrument_fwhm_per_cm)]
    return max(near, key=lambda f: f.peak) if near else None


def two_lines_gain(spec: Spectrum, host: LineFit, extra: LineFit, *, others=None) -> float:
    """How much better two lines fit than one: ΔBIC of (Voigt + line) over (Voigt alone).

    Over a window covering both lines (``others`` subtracted), the host line is fitted as a
    Voigt profile (Gaussian and Lorentzian parts free and signed, so the family includes both
    pure profiles and wings of either kind) with a constant baseline; then the same together
    with a second line of free height, centre and Gaussian width. The gain is Schwarz's
    criterion ``n_eff·ln(RSS₁/RSS₂) − 3·ln n_eff`` on the effective number of independent
    points; above :data:`WING_BIC` (10, "very strong" evidence) two lines beat one profile
    clearly.

    References
    ----------
    .. [1] G. Schwarz, "Estimating the dimension of a model", Ann. Stat. 6, 461–464 (1978).
    .. [2] R. E. Kass and A. E. Raftery, "Bayes factors", J. Am. Stat. Assoc. 90, 773–795
       (1995), §3.2 (2 ln B > 10: very strong).
    """
    from scipy.optimize import least_squares

    sig = spec.sigma_per_cm
    y_all = spec.density - (others(sig) if others is not None else 0.0)
    ils = spec.line_shape.fwhm_per_cm
    wh = max(host.fwhm_per_cm, ils)
    lo = min(host.centre_per_cm - 2.5 * wh, extra.centre_per_cm - 2.5 * max(ils, extra.fwhm_per_cm))
    hi = max(host.centre_per_cm + 2.5 * wh, extra.centre_per_cm + 2.5 * max(ils, extra.fwhm_per_cm))
    i_lo, i_hi = (int(np.clip(np.searchsorted(sig, v), 1, sig.size)) for v in (lo, hi))
    stride = max(1, int(np.ceil((i_hi - i_lo) / MAX_FIT_POINTS)))
    win = slice(i_lo, i_hi + 1, stride)
    x, y, wts = sig[win], y_all[win], 1.0 / spec.noise[win]
    if x.size < 12:
        return float("inf")
    ds = (sig[1] - sig[0]) * stride
    lags = ds * np.arange(-x.size + 1, x.size)
    r = spec.line_shape.noise_correlation(lags)
    n_eff = x.size / max(float(np.sum(r[np.abs(lags) <= 4 * ils])), 1.0)
    ev = spec.line_shape.evaluator(x)
    k00 = spec.line_shape.kernel(np.zeros(1))[0]
    hs = abs(host.height) + 1e-300

    def one(p):
        return p[0] * ev(p[1], p[3], p[4]) / k00 + p[2]

    def two(p):
        return one(p) + p[5] * ev(p[6], p[7], 0.0) / k00

    def jac_one(p):  # exact derivatives from the evaluator: no finite differences
        k, dc, dq, dl = ev(p[1], p[3], p[4], derivatives=True)
        cols = [k / k00, p[0] * dc / k00, np.ones_like(k), p[0] * dq / k00, p[0] * dl / k00]
        return np.column_stack(cols) * wts[:, None]

    def jac_two(p):
        k, dc, dq, _ = ev(p[6], p[7], 0.0, derivatives=True)
        extra = np.column_stack([k / k00, p[5] * dc / k00, p[5] * dq / k00]) * wts[:, None]
        return np.hstack([jac_one(p), extra])

    q0 = max(host.gauss_fwhm_per_cm, 0.0) ** 2
    p1 = [host.height, host.centre_per_cm, 0.0, q0, max(host.lorentz_fwhm_per_cm, 0.0)]
    s1 = [hs, ils, hs, ils**2, ils]
    q2 = max(extra.gauss_fwhm_per_cm, 0.0) ** 2
    p2 = p1 + [max(extra.height, 0.0), extra.centre_per_cm, q2]
    s2 = s1 + [hs, ils, ils**2]
    with np.errstate(over="ignore", invalid="ignore"):
        # the gain needs the residual sums to a relative 1e-6 (n_eff·1e-6 ≪ WING_BIC), not the
        # solver's default 1e-8: a near-degenerate pair otherwise crawls for hundreds of steps
        tol = {"ftol": 1e-6, "xtol": 1e-6, "gtol": 1e-6}
        r1 = least_squares(lambda p: (one(p) - y) * wts, p1, jac=jac_one,
                           x_scale=np.array(s1), method="trf", max_nfev=400, **tol)
        # two starts (the lines as found; the single profile plus the second line): the pair
        # contains the single profile, so it must fit at least as well
        rss2 = np.inf
        for start in (p2, list(r1.x) + p2[5:]):
            r2 = least_squares(lambda p: (two(p) - y) * wts, start, jac=jac_two,
                               x_scale=np.array(s2), method="trf", max_nfev=600, **tol)
            rss2 = min(rss2, float(np.sum(r2.fun**2)))
    rss1 = float(np.sum(r1.fun**2))
    if not (np.isfinite(rss1) and np.isfinite(rss2)):
        return float("nan")
    return float(n_eff * np.log(max(rss1, 1e-300) / max(rss2, 1e-300))
                 - 3 * np.log(max(n_eff, 2.0)))


def find_lines(
    spec: Spectrum,
    *,
    band_per_cm: tuple[float, float] | None = None,
    snr_threshold: float = DETECTION_SNR,
    max_lines: int = 40,
    profile: str = "auto",
    envelope_decays: bool = False,
) -> list[LineFit]:
    """Find lines one at a time: fit the strongest peak, subtract its model, repeat.

    Subtracting the fitted model (line shape included) removes the line's apodization
    sidelobes with it, so they are not mistaken for lines. A peak counts when it stands
    ``snr_threshold`` noise standard deviations above zero in the residual.

    ``envelope_decays``: the spectrum is a magnitude spectrum of sweeps without ZPD whose fringe
    envelope decays across them (:func:`ftsource.measure.coherence.envelope_decay`). A resolved
    line's coherence then ends inside the sweep, and its magnitude wings fall only as 1/|δ|
    (:func:`magnitude_wing_bound`), far above any instrument line shape's: residuals below
    that bound are not taken as lines.
    """
    sig = spec.sigma_per_cm
    lo, hi = band_per_cm if band_per_cm is not None else (sig[1], sig[-1])
    inband = (sig >= lo) & (sig <= hi)
    fits: list[LineFit] = []
    # Near a fitted line the floor is its fit residual, not the white noise: a strong line
    # carries sidebands from mirror-speed and sampling errors that must not become "lines".
    floor2 = spec.noise**2
    memo: dict = {}  # each line's model on the axis, made once
    for _ in range(max_lines):
        model = line_model(spec, fits, memo=memo)
        resid = spec.density - model(sig)
        score = np.where(inband, resid / np.sqrt(floor2), -np.inf)
        i0 = int(np.argmax(score))
        if score[i0] < snr_threshold:
            break
        fit = fit_line(spec, sig[i0], profile=profile, others=model if fits else None,
                       min_snr=0.5 * snr_threshold)
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
        if plausible and fit.pair_lines:
            # two lines fit clearly better than this one: take them as two
            fit = _split_pair(spec, fit, model if fits else None, profile)
            fits.extend(fit[:-1])
            fit = fit[-1]
        if not plausible:
            # an unfittable peak: raise the floor there so the search moves on
            floor2[_fit_window(spec, i0, 2 * spec.line_shape.fwhm_per_cm)] = np.inf
            continue
        fits.append(fit)
        win = _fit_window(spec, int(np.argmin(np.abs(sig - fit.centre_per_cm))),
                          2 * max(fit.instrument_fwhm_per_cm, fit.fwhm_per_cm))
        r = (spec.density - line_model(spec, fits, memo=memo)(sig))[win]
        floor2[win] = np.maximum(floor2[win], np.median(r**2))
        # beyond the fitted model's reach, the line's far sidelobes (2× their envelope)
        far = inband & (np.abs(sig - fit.centre_per_cm) > _reach(fit))
        env = spec.line_shape.sidelobe_envelope(sig[far] - fit.centre_per_cm)
        floor2[far] += (2 * _wing_height(fit) * env / snr_threshold) ** 2
        if envelope_decays and fit.resolved and spec.line_shape.kind == "magnitude":
            floor2[inband] += (magnitude_wing_bound(fit, sig[inband]) / snr_threshold) ** 2
    fits = _refit(spec, fits, profile)
    # the same line twice (two fits drawn to one peak) is one line: the stronger stays
    for fit in sorted(fits, key=lambda f: f.peak):
        if any(g is not fit and g.peak >= fit.peak
               and abs(g.centre_per_cm - fit.centre_per_cm) <= 0.5 * g.instrument_fwhm_per_cm
               for g in fits):
            fits = [g for g in fits if g is not fit]
    # in the wings of a stronger line, two lines must beat one profile clearly; tested once
    # every line is modelled (an unmodelled neighbour would swamp the comparison), weakest first
    dropped = False
    for fit in sorted(fits, key=lambda f: f.peak):
        rest = [f for f in fits if f is not fit]
        host = _host(fit, rest)
        if host is None:
            continue
        others = line_model(spec, [f for f in rest if f is not host], memo=memo)
        # a weak feature far broader than the line it sits under is a pedestal (the line's
        # profile or baseline not quite right), not a second line
        pedestal = (fit.peak < 0.1 * host.peak and fit.fwhm_per_cm
                    > 3 * max(host.fwhm_per_cm, host.instrument_fwhm_per_cm))
        if pedestal or not two_lines_gain(spec, host, fit, others=others) >= WING_BIC:
            fits = rest
            dropped = True
    if dropped:
        fits = _refit(spec, fits, profile)
    fits.sort(key=lambda f: -f.centre_per_cm)  # by increasing wavelength
    return fits
