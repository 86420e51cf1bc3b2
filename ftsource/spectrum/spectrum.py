"""The measured spectrum: sweeps transformed, phase-corrected or not, and co-added.

Every sweep is transformed on one common wavenumber grid (same OPD step, same transform
length), so co-adding is a plain mean. A sweep that holds the centre burst (ZPD) is
phase-corrected (:mod:`ftsource.spectrum.phase`) and gives a real spectrum whose line shape is known
exactly; a sweep without ZPD — typical for a narrow laser line scanned away from equal arms —
gives the magnitude of the transform of the apodized sweep about its own centre, so its
resolution is set by half the transformed span, never more.

The spectrum carries its :class:`LineShape` (what a monochromatic line looks like in it, for
the line fits) and a noise estimate per point.

Kernel units: wavenumber in cm⁻¹, OPD in cm.
"""

from __future__ import annotations

import functools
from dataclasses import dataclass, field, replace

import numpy as np

from ftsource.errors import AnalysisError, OptionError
from ftsource.interferogram.resample import Interferogram
from ftsource.spectrum.apodization import get_apodization

__all__ = [
    "LineShape", "KernelEvaluator", "Spectrum", "SweepSpectrum", "sweep_spectrum", "coadd",
    "reconvolve", "noise_correlation",
]

_LN2 = np.log(2.0)
#: Largest trigonometric table (points × nodes) :meth:`LineShape.kernel_shifted` keeps.
TABLE_LIMIT = 1 << 21


def _gauss_legendre_01(n: int, cache: dict):
    """Gauss–Legendre nodes and weights on [0, 1], memoised in ``cache`` (n rounded up to a
    multiple of 32 so a handful of rules serve every call; the rules on [−1, 1] come from
    :func:`_legendre`'s table, shared by every line shape)."""
    n = 32 * ((n + 31) // 32)
    rule = cache.get(n)
    if rule is None:
        t, w = _legendre(n)
        rule = cache[n] = (0.5 * (t + 1.0), 0.5 * w)
    return rule


def _integration_reach(L: float, q_gauss: float, l_lorentz: float) -> float:
    """How far along the path (cm, at most ``L``) the line-shape integral must run: a
    decaying envelope ends the integrand long before L for a broad line."""
    x = L
    if q_gauss > 0:
        x = min(x, 3.0 / np.sqrt(q_gauss))  # exp(-(3π)²/4ln2) < 1e-13
    if l_lorentz > 0:
        x = min(x, 10.0 / l_lorentz)  # exp(-10π) < 1e-13
    return x


@functools.lru_cache(maxsize=1024)
def _legendre(n: int) -> tuple[np.ndarray, np.ndarray]:
    """Gauss–Legendre nodes and weights on [−1, 1] (``scipy.special.roots_legendre``),
    read-only. A table of constants kept across calls (the same ``n`` always gives the same
    rule): every line fit builds its quadrature from a few hundred of them."""
    from scipy.special import roots_legendre

    t, w = roots_legendre(n)
    t.flags.writeable = False
    w.flags.writeable = False
    return t, w


@dataclass(frozen=True)
class LineShape:
    """What a line looks like in the co-added spectrum.

    A line of Gaussian FWHM ``g`` and Lorentzian FWHM ``l`` (Voigt) seen through maximum OPD
    ``L`` and apodization ``A`` has the spectral shape

    ``K(δ) = 2 ∫₀ᴸ A(x/L) γ(x) cos(2πδx) dx``,  γ(x) = exp(−(πgx)²/(4 ln 2)) · exp(−πl|x|),

    of unit area (Fourier inversion at x = 0). The co-added spectrum mixes sweeps of different
    ``L``, so ``K`` is the weighted mean over them. ``kind="magnitude"`` takes ``|K|`` (a
    magnitude spectrum folds negative sidelobes up).
    """

    apodization: str
    L_cm: tuple[float, ...]
    weights: tuple[float, ...]
    kind: str = "real"
    _rules: dict = field(default_factory=dict, compare=False, repr=False, init=False)

    def kernel(
        self, delta_per_cm: np.ndarray, gauss_fwhm: float = 0.0, lorentz_fwhm: float = 0.0
    ) -> np.ndarray:
        """The line shape at offsets ``delta_per_cm`` from the centre (area 1 per cm⁻¹)."""
        return self._transform(delta_per_cm, gauss_fwhm**2, lorentz_fwhm, power=1)

    def kernel_signed(self, delta_per_cm: np.ndarray, q_gauss: float, l_lorentz: float):
        """:meth:`kernel` continued analytically to negative widths, for smooth fits.

        ``q_gauss`` is the *square* of the Gaussian FWHM and may be negative (an envelope that
        grows with OPD), ``l_lorentz`` the Lorentzian FWHM, also signed. Near zero width the
        shape then depends smoothly (linearly) on both parameters, so a least-squares fit of an
        unresolved line neither stalls at zero nor loses its uncertainty.
        """
        return self._transform(delta_per_cm, q_gauss, l_lorentz, power=1)

    def kernel_shifted(self, sigma_per_cm: np.ndarray, centre_per_cm: float, q_gauss: float,
                       l_lorentz: float) -> np.ndarray:
        """:meth:`kernel_signed` at ``sigma − centre``, fast when called again and again with
        the same ``sigma`` (a line fit moves only the centre and the widths).

        cos 2π(σ−c)x = cos 2πσx · cos 2πcx + sin 2πσx · sin 2πcx: the tables of cos 2πσx and
        sin 2πσx over the quadrature nodes are made once for the window (kept in this object,
        the last few windows only), so a call costs two matrix–vector products instead of
        one cosine per node and point. The nodes span the whole [0, L] (no cut where a
        decaying envelope ends), enough of them to follow the fastest oscillation; a window
        too large for tables of :data:`TABLE_LIMIT` elements is computed as
        :meth:`kernel_signed` computes it.
        """
        s = np.asarray(sigma_per_cm, dtype=float)
        c = float(centre_per_cm)
        if s.ndim != 1 or not s.size:
            return self.kernel_signed(s - c, q_gauss, l_lorentz)
        ref = float(s[s.size // 2])  # small arguments: reference the window's middle
        d_max = float(np.max(np.abs(s - c)))
        apo = get_apodization(self.apodization)
        out = np.zeros(s.shape)
        for L, w in self._groups().items():
            x_need = _integration_reach(L, q_gauss, l_lorentz)
            x_tab = min(L, 1.5 * x_need)  # room for the widths to shrink during a fit
            n = 32 * ((64 + int(5 * x_tab * d_max) + 31) // 32)  # 25 % above 2·(2 x d_max)
            if n * s.size > TABLE_LIMIT:
                return self.kernel_signed(s - c, q_gauss, l_lorentz)
            x, wq, cos_t, sin_t = self._trig_table(s, ref, L, x_tab, x_need, n)
            env = np.ones_like(x)
            if q_gauss:
                env = env * np.exp(-(np.pi**2) * q_gauss * x**2 / (4 * _LN2))
            if l_lorentz:
                env = env * np.exp(-np.pi * l_lorentz * x)
            f = apo(x / L) * env * wq * (2 * L)
            ph = 2 * np.pi * (c - ref) * x
            k = cos_t @ (f * np.cos(ph)) + sin_t @ (f * np.sin(ph))
            out += w * (np.abs(k) if self.kind == "magnitude" else k)
        return out

    def _groups(self) -> dict[float, float]:
        """Sweeps of (nearly) the same span share a kernel: span → summed weight.

        Spans within a relative :data:`SPAN_MERGE` of a group's shortest are one group at
        their weighted mean span (the resampled sweeps of one scan differ by a few grid steps,
        ~1e-5 of their span, and each distinct span would cost its own quadrature). The
        weighted mean cancels the first-order change of the kernel with span, so the merged
        kernel differs from the weighted sum of the separate ones by the second order,
        (1e-4)² of the line shape at most. Kept per shape (the shape is immutable)."""
        hit = self._rules.get("groups")
        if hit is not None:
            return dict(hit)
        pairs = sorted(zip(self.L_cm, self.weights, strict=False))
        groups: dict[float, float] = {}
        i = 0
        while i < len(pairs):
            j = i
            while j < len(pairs) and pairs[j][0] <= pairs[i][0] * (1 + SPAN_MERGE):
                j += 1
            w = sum(p[1] for p in pairs[i:j])
            L = (sum(p[0] * p[1] for p in pairs[i:j]) / w if w
                 else sum(p[0] for p in pairs[i:j]) / (j - i))
            key = float(np.round(L, 12))
            groups[key] = groups.get(key, 0.0) + w
            i = j
        self._rules["groups"] = dict(groups)
        return groups

    def _trig_table(self, s, ref, L, x_tab, x_need, n):
        """Nodes over [0, ``x_tab``] (weights relative to ``L``) and the cos/sin tables of
        ``s − ref``; an existing table that reaches ``x_need`` with enough nodes for its own
        reach serves too. The last four are kept."""
        tables = self._rules.setdefault("trig", {})
        key = (s.size, ref, float(s[0]), float(s[-1]), L)
        have = tables.get(key)
        if have is not None and np.array_equal(have[1], s):
            x_have, n_have = have[2], have[0]
            if x_have >= x_need and n_have >= n * x_have / x_tab:
                return have[3]
        xi, wq = _gauss_legendre_01(n, self._rules)
        x = xi * x_tab
        arg = 2 * np.pi * np.outer(s - ref, x)
        entry = (x, wq * (x_tab / L), np.cos(arg), np.sin(arg))
        tables.pop(key, None)
        if len(tables) >= 4:
            tables.pop(next(iter(tables)))
        tables[key] = (n, s.copy(), x_tab, entry)
        return entry

    def noise_correlation(self, delta_per_cm: np.ndarray) -> np.ndarray:
        """Correlation between spectral points ``delta`` apart for white interferogram noise:
        the transform of A², normalised to 1 at zero offset (Wiener–Khinchin).

        Offsets that are whole multiples of one step (a fit window's lags) are computed by
        rotating ``exp(2πi·step·x)`` from one multiple to the next: one complex product per
        node and lag instead of a cosine."""
        d = np.abs(np.asarray(delta_per_cm, dtype=float))
        steps = np.diff(np.unique(d))
        step = float(steps.min()) if steps.size >= 2 else 0.0
        if step > 0 and float(d.max()) / step <= 4 * d.size:
            mult = np.rint(d / step).astype(int)
            if np.allclose(mult * step, d, rtol=0.0, atol=1e-9 * step):
                r = self._transform_multiples(step, int(mult.max()))
                return r[mult] / r[0]
        k = self._transform(delta_per_cm, 0.0, 0.0, power=2)
        k0 = self._transform(np.zeros(1), 0.0, 0.0, power=2)[0]
        return k / k0

    def _transform_multiples(self, step: float, kmax: int) -> np.ndarray:
        """``_transform(k·step, 0, 0, power=2)`` for k = 0 … kmax, with the same nodes."""
        apo = get_apodization(self.apodization)
        out = np.zeros(kmax + 1)
        for L, w in self._groups().items():
            u = 2 * L * kmax * step
            xi, wq = _gauss_legendre_01(64 + int(2 * u), self._rules)
            x = xi * L
            f = apo(x / L) ** 2 * wq * (2 * L)
            rot = np.exp(2j * np.pi * step * x)
            z = np.ones_like(rot)
            vals = np.empty(kmax + 1)
            vals[0] = f.sum()
            for k in range(1, kmax + 1):
                z *= rot
                vals[k] = f @ z.real
            out += w * vals
        return out

    def _transform(self, delta, q_gauss, lorentz_fwhm, power):
        apo = get_apodization(self.apodization)
        d = np.abs(np.asarray(delta, dtype=float))
        out = np.zeros(d.shape)
        for L, w in self._groups().items():
            x_end = _integration_reach(L, q_gauss, lorentz_fwhm)
            u = 2 * x_end * (float(d.max()) if d.size else 0.0)
            xi, wq = _gauss_legendre_01(64 + int(2 * u), self._rules)
            x = xi * x_end
            a = apo(x / L)
            wq = wq * (x_end / L)
            env = np.ones_like(x)
            if q_gauss:
                env = env * np.exp(-(np.pi**2) * q_gauss * x**2 / (4 * _LN2))
            if lorentz_fwhm:
                env = env * np.exp(-np.pi * lorentz_fwhm * x)
            f = (a**power) * env * wq * (2 * L)
            k = (np.cos(2 * np.pi * np.outer(d.ravel(), x)) @ f).reshape(d.shape)
            # sweeps are co-added after taking the modulus, so fold each one's sidelobes
            out += w * (np.abs(k) if self.kind == "magnitude" and power == 1 else k)
        return out

    def evaluator(self, sigma_per_cm: np.ndarray) -> KernelEvaluator:
        """A fast :meth:`kernel_signed` at fixed points ``sigma_per_cm``, for line fits.

        The nodes of the OPD quadrature and their cosines and sines at the points are built
        once, so a fit's trial centres and widths cost matrix-vector products only, with exact
        derivatives (see :class:`KernelEvaluator`).
        """
        return KernelEvaluator(self, np.asarray(sigma_per_cm, dtype=float))

    def sidelobe_envelope(self, delta_per_cm: np.ndarray) -> np.ndarray:
        """Upper envelope of |ILS(δ)|/ILS(0) (a monochromatic line's sidelobes).

        Computed on a fine grid of offsets out to 100 instrument widths, as the running maximum
        of |K| from far to near, and interpolated; 1 inside the main lobe; beyond, a 1/δ decay
        from the largest lobe of the last two widths.
        """
        d = np.abs(np.asarray(delta_per_cm, dtype=float))
        # the table depends on the shape only: computed once per LineShape (find_lines asks
        # for it after every line it finds)
        table = self._rules.get("sidelobe_envelope")
        if table is None:
            fw = self.fwhm_per_cm
            # numerically out to 100 instrument widths, beyond that a 1/δ decay (an upper
            # bound: the sidelobes of any apodization that is not smooth at the ends fall as
            # 1/δ or faster)
            top = 100 * fw
            # a uniform step of fw/12 (sidelobes repeat every 0.4–0.8 fw; a log grid of 400
            # points missed lobe tops by up to a quarter of their height), each local maximum
            # raised to the top of the parabola through it and its neighbours and spread to
            # them (the top lies within half a step)
            grid = np.linspace(0.0, top, 1201)
            k = np.abs(self.kernel(grid)) / self.kernel(np.zeros(1))[0]
            a, b, c = k[:-2], k[1:-1], k[2:]
            curv = 2 * b - a - c
            lobe = (b >= a) & (b >= c) & (curv > 0)
            tops = np.where(lobe, b + (c - a) ** 2 / (8 * np.where(lobe, curv, 1.0)), b)
            k = np.concatenate([k[:1], tops, k[-1:]])
            k[1:-1] = np.maximum(k[1:-1], np.maximum(k[:-2], k[2:]))
            env = np.maximum.accumulate(k[::-1])[::-1]
            env[grid <= fw] = 1.0
            # start the decay from the top of a lobe, not from the kernel at the last grid
            # point (which can sit on a null: u = 2L·top = 200 exactly for Hann)
            far0 = env[np.searchsorted(grid, top - 2 * fw)]
            table = self._rules["sidelobe_envelope"] = (top, grid, env, far0)
        top, grid, env, far0 = table
        far = far0 * top / np.maximum(d, top)
        return np.where(d <= top, np.interp(d, grid, env), far)

    @property
    def fwhm_per_cm(self) -> float:
        """FWHM of the instrument line shape itself (a monochromatic line), cm⁻¹ (worked out
        once per line shape: every line fit asks for it)."""
        fw = self._rules.get("fwhm")
        if fw is None:
            fw = self._rules["fwhm"] = _kernel_fwhm(self, 0.0, 0.0)
        return fw

    @property
    def max_opd_cm(self) -> float:
        """Weighted mean of the sweeps' maximum OPD (the L of ``fwhm_factor/(2L)``)."""
        return float(np.dot(self.L_cm, self.weights))


#: Sweep spans within this relative difference share one line-shape quadrature
#: (:meth:`LineShape._groups`).
SPAN_MERGE = 1e-4
#: Largest growth (natural log) of a signed-width envelope along the path that
#: :class:`KernelEvaluator` evaluates; beyond it a trial gives NaN.
GROWTH_LIMIT = 50.0
#: Graded panels of the fit quadrature: [L/2^(k+1), L/2^k] for k < _N_PANELS - 1, then [0, ...].
_N_PANELS = 14
#: Gauss–Legendre nodes per panel on top of those the oscillation needs (exact for
#: polynomials of degree 2·n − 1; 16 keep an exponential of up to ~20 e-folds per panel to 1e-12).
_PANEL_NODES = 16


class KernelEvaluator:
    """The line shape of a :class:`LineShape` at fixed wavenumbers, for fits.

    ``K(σ − c) = Σ_j f_j cos(2π(σ − c)x_j)`` over quadrature nodes ``x_j`` in ``[0, L]``
    (weights ``f_j`` = apodization × envelope × Gauss–Legendre weight) is split as
    ``C·(f cos 2πc'x) + S·(f sin 2πc'x)`` with ``C = cos(2πσ'x)``, ``S = sin(2πσ'x)`` built once
    (``σ' = σ − σ_ref``, ``c' = c − σ_ref``: small arguments). The nodes lie on panels graded
    geometrically towards x = 0 (each ``[L/2^(k+1), L/2^k]``), each with
    :data:`_PANEL_NODES` nodes plus what the fastest oscillation ``cos(2π d_max x)`` over the
    panel needs, so every width from far below to far above the resolution is integrated
    accurately with the same nodes; panels where the trial envelope has fallen below 1e-15 are
    skipped, and their matrices are only built when a trial needs them.
    """

    def __init__(self, shape: LineShape, sigma: np.ndarray):
        self.shape = shape
        self.sigma = sigma
        self.ref = float(0.5 * (sigma.min() + sigma.max())) if sigma.size else 0.0
        sp = sigma - self.ref
        # |σ − c| for any centre inside the points' span, with a margin
        self._dmax = float(2 * np.max(np.abs(sp))) if sp.size else 0.0
        self._sp = sp
        self._recent: dict = {}  # the last few (centre, q, l) → (K, ∂K/∂c, ∂K/∂q, ∂K/∂l)
        apo = get_apodization(shape.apodization)
        self._groups = []
        for L, w in shape._groups().items():
            xs, bases, los, starts = [], [], [], []
            edges = [L / 2**k for k in range(_N_PANELS)] + [0.0]
            for hi, lo in zip(edges[:-1], edges[1:], strict=True):
                n = _PANEL_NODES + int(np.ceil(1.5 * np.pi * self._dmax * (hi - lo)))
                t, wt = _legendre(n)
                x = lo + (hi - lo) * 0.5 * (t + 1.0)
                starts.append(sum(a.size for a in xs))
                xs.append(x)
                bases.append(apo(x / L) * wt * 0.5 * (hi - lo) * 2.0)  # ∫₀ᴸ … dx, unit area
                los.append(lo)
            # the panels' nodes side by side, the outermost panel first: the panels a decaying
            # envelope skips are then a leading block of columns
            x = np.concatenate(xs)
            factors = np.column_stack([np.ones_like(x), 2 * np.pi * x, x * x, -np.pi * x])
            self._groups.append(_PanelGroup(w, x, np.concatenate(bases), np.array(los),
                                            np.array(starts), factors, float(x.max())))

    def _mats(self, g: _PanelGroup, start: int):
        """The tables ``cos/sin 2πσ'x`` of the group's nodes from column ``start`` on, built
        when first needed (a broad line's fits never need the outer panels)."""
        if g.cos is None:
            # stored node by node (the transpose), so the nodes built together are one
            # contiguous block of memory and the unbuilt ones are never touched
            g.cos = np.empty((g.x.size, self._sp.size))
            g.sin = np.empty((g.x.size, self._sp.size))
            g.built = g.x.size
        if start < g.built:
            ph = 2 * np.pi * np.outer(g.x[start : g.built], self._sp)
            np.cos(ph, out=g.cos[start : g.built])
            np.sin(ph, out=g.sin[start : g.built])
            g.built = start
        return g.cos[start:].T, g.sin[start:].T

    def __call__(self, centre: float, q_gauss: float, l_lorentz: float, *, derivatives=False):
        """``K(σ − centre)`` with signed widths as in :meth:`LineShape.kernel_signed`; with
        ``derivatives`` also ``(∂K/∂centre, ∂K/∂q, ∂K/∂l)`` (for the magnitude kind, of |K|).

        The derivatives cost little more than the kernel (the tables are read once for all
        four sums), so they are always computed and the last few trials are remembered: a
        least-squares solver asks for the residuals and then the Jacobian at the same point.
        """
        key = (float(centre), float(q_gauss), float(l_lorentz))
        hit = self._recent.get(key)
        if hit is None:
            hit = self._evaluate(*key)
            if len(self._recent) >= 8:
                self._recent.pop(next(iter(self._recent)))
            self._recent[key] = hit
        return hit if derivatives else hit[0]

    def by_span(self, centre: float) -> tuple[np.ndarray, np.ndarray]:
        """The zero-width line shape of each sweep span, signed (before any magnitude):
        ``(weights, K)`` with ``K[g, :, 0]`` the kernel of span ``g`` at ``σ − centre`` and
        ``K[g, :, 1]`` its derivative in ``centre``; the shape is ``Σ_g weights[g]·K[g]`` (for
        the magnitude kind, of ``|K[g]|``). A magnitude spectrum of two close lines is the
        modulus of the sum of their *complex* responses, which needs each span's signed
        kernel (:func:`ftsource.lines.fitting.fit_line`'s pair test)."""
        key = ("span", float(centre))
        hit = self._recent.get(key)
        if hit is not None:
            return hit
        c = float(centre) - self.ref
        out = np.empty((len(self._groups), self._sp.size, 2))
        for k, g in enumerate(self._groups):
            arg = (2 * np.pi * c) * g.x
            fc, fs = g.base * np.cos(arg), g.base * np.sin(arg)
            C, S = self._mats(g, 0)
            a = np.column_stack([fc, -fs * g.factors[:, 1]])
            b = np.column_stack([fs, fc * g.factors[:, 1]])
            out[k] = C @ a + S @ b
        out.flags.writeable = False
        hit = (np.array([g.weight for g in self._groups]), out)
        if len(self._recent) >= 8:
            self._recent.pop(next(iter(self._recent)))
        self._recent[key] = hit
        return hit

    def _evaluate(self, centre: float, q_gauss: float, l_lorentz: float):
        """``(K, ∂K/∂centre, ∂K/∂q, ∂K/∂l)``, read-only (they are shared by the memo).

        All panels of a span are summed by two matrix products (the Python work does not grow
        with the number of panels). Outer panels where the trial envelope is below 1e-15 over
        the whole panel are left out.
        """
        c = float(centre) - self.ref
        acc = np.zeros((self._sp.size, 4))  # K and its three derivatives, by column
        gq = -(np.pi**2) / (4 * _LN2)
        x_end = max((g.reach for g in self._groups), default=0.0)
        if gq * q_gauss * x_end**2 - np.pi * l_lorentz * x_end > GROWTH_LIMIT:
            # a trial step to a large negative width: an envelope growing by more than
            # e^GROWTH_LIMIT along the path is no line shape (it overflows soon after); NaN
            # makes the solver reject the step without building every table for it
            acc[:] = np.nan
            acc.flags.writeable = False
            return acc[:, 0], acc[:, 1], acc[:, 2], acc[:, 3]
        for g in self._groups:
            expo = gq * q_gauss * g.lo * g.lo - np.pi * l_lorentz * g.lo
            live = np.flatnonzero(expo >= -35.0)
            if not live.size:
                continue
            start = int(g.starts[live[0]])
            x, p = g.x[start:], g.factors[start:]
            with np.errstate(over="ignore"):
                f = g.base[start:] * np.exp((gq * q_gauss) * p[:, 2] - (np.pi * l_lorentz) * x)
            arg = (2 * np.pi * c) * x
            fc, fs = f * np.cos(arg), f * np.sin(arg)
            C, S = self._mats(g, start)
            # the four sums as two matrix products: C and S are read once, not four times
            # (they are large: points × nodes; reading them is the cost). Columns: K, ∂/∂c,
            # ∂/∂q, ∂/∂l, from f·cos and f·sin times (1, 2πx, x², −πx) (gq applied below).
            a = fc[:, None] * p
            a[:, 1] = -fs * p[:, 1]
            b = fs[:, None] * p
            b[:, 1] = fc * p[:, 1]
            r = C @ a
            r += S @ b
            r[:, 2] *= gq
            if self.shape.kind == "magnitude":  # |K| and its derivatives
                r *= np.sign(r[:, :1])
            r *= g.weight
            acc += r
        acc.flags.writeable = False
        return acc[:, 0], acc[:, 1], acc[:, 2], acc[:, 3]


@dataclass(eq=False)
class _PanelGroup:
    """The quadrature of one sweep span for :class:`KernelEvaluator`: nodes, apodization ×
    Gauss–Legendre weights, each panel's lower end and first column, the nodes' derivative
    factors and the lazily built trigonometric tables (columns from ``built`` on are
    filled)."""

    weight: float
    x: np.ndarray
    base: np.ndarray
    lo: np.ndarray
    starts: np.ndarray
    #: per node: 1, 2πx, x², −πx (the factors of the kernel's derivatives)
    factors: np.ndarray
    #: the largest node (cm)
    reach: float
    cos: np.ndarray | None = None
    sin: np.ndarray | None = None
    built: int = 0


def _kernel_fwhm(shape: LineShape, g: float, lor: float) -> float:
    """FWHM of ``shape.kernel`` for the given widths (numerical, by bisection)."""
    from scipy.optimize import brentq

    L = min(shape.L_cm)
    guess = 2.0 / L + 1.5 * (g + lor)
    k0 = shape.kernel(np.zeros(1), g, lor)[0]
    f = lambda d: shape.kernel(np.array([d]), g, lor)[0] - 0.5 * k0  # noqa: E731
    hi = guess
    while f(hi) > 0:
        hi *= 2
    return 2 * brentq(f, 0.0, hi, xtol=1e-12 * hi)


@dataclass(frozen=True)
class SweepSpectrum:
    """One sweep's spectrum on the common grid."""

    values: np.ndarray
    imag_residual: np.ndarray
    L_cm: float
    method: str
    zpd_found: bool
    x_zpd_cm: float
    sweep_index: int
    #: Bursts in the sweep (:class:`ftsource.interferogram.zpd.ZpdInfo`), their spacing (cm)
    #: and whether the one used as the phase reference may be a revival rather than ZPD.
    n_bursts: int = 0
    burst_spacing_cm: float = float("nan")
    zpd_ambiguous: bool = False
    #: OPD of the sweep's envelope maximum, cm (:attr:`ZpdInfo.peak_cm`; NaN when not looked
    #: for).
    peak_cm: float = float("nan")
    #: Group-delay dispersion of the phase, cm², when the sweep needed the dispersion
    #: treatment (:func:`dispersed_mertz`); NaN otherwise.
    dispersion_cm2: float = float("nan")
    u_dispersion_cm2: float = float("nan")

    @functools.cached_property
    def noise_level(self) -> float:
        """The spectrum's noise standard deviation (:func:`_noise_level`), computed once: every
        co-add of a set of sweeps (each sweep alone for the scatter checks, subsets for the
        jackknife) asks for it again."""
        return _noise_level(self)


@dataclass(frozen=True)
class Spectrum:
    """A co-added spectrum.

    Attributes
    ----------
    sigma_per_cm : ndarray
        Vacuum wavenumber, cm⁻¹ (after the medium correction when one was applied).
    density : ndarray
        Spectral density per unit wavenumber (arbitrary units × cm).
    noise : ndarray
        Standard uncertainty of ``density`` at each point.
    line_shape : LineShape
        How a monochromatic line appears (for fits and the resolution).
    phase_method : str
        ``mertz``, ``forman``, ``magnitude`` or ``mixed``.
    """

    sigma_per_cm: np.ndarray
    density: np.ndarray
    noise: np.ndarray
    line_shape: LineShape
    phase_method: str
    sweeps: tuple[SweepSpectrum, ...] = field(repr=False)

    @property
    def resolution_per_cm(self) -> float:
        """FWHM of the co-added instrument line shape, cm⁻¹: ``fwhm_factor / (2·max_opd)`` of
        the apodization used when all sweeps reach the same OPD. Sweeps of different span
        (partial sweeps at a record's ends) mix line shapes of different width, whose FWHM is
        not that of the mean OPD; line widths and their bounds use this same FWHM."""
        return self.line_shape.fwhm_per_cm

    @property
    def max_opd_cm(self) -> float:
        return self.line_shape.max_opd_cm

    @property
    def wavelength_nm(self) -> np.ndarray:
        """Vacuum wavelength, nm (inf at zero wavenumber)."""
        with np.errstate(divide="ignore"):
            return 1e7 / self.sigma_per_cm

    @property
    def density_per_nm(self) -> np.ndarray:
        """Density per unit wavelength, S_λ = S_σ·σ²/10⁷ (σ in cm⁻¹; CIE 127 works per nm)."""
        return self.density * self.sigma_per_cm**2 / 1e7

    @property
    def noise_per_nm(self) -> np.ndarray:
        return self.noise * self.sigma_per_cm**2 / 1e7

    def with_axis(self, sigma_per_cm: np.ndarray) -> Spectrum:
        """Copy on a corrected wavenumber axis (same values)."""
        return Spectrum(
            np.asarray(sigma_per_cm, float),
            self.density,
            self.noise,
            self.line_shape,
            self.phase_method,
            self.sweeps,
        )


def sweep_spectrum(
    ifg: Interferogram,
    n_fft: int,
    *,
    apodization: str = "happ-genzel",
    phase_correction: str = "auto",
    planner=None,
) -> SweepSpectrum:
    """Transform one resampled sweep.

    ``phase_correction``: ``auto`` uses Mertz when the sweep holds ZPD and the magnitude about
    the sweep's centre otherwise; ``mertz``/``forman`` require ZPD in the sweep (else the
    magnitude is used and the method says so); ``magnitude`` always uses the magnitude.
    """
    from ftsource.interferogram.zpd import ZpdInfo, find_zpd
    from ftsource.spectrum import phase

    x = ifg.x_cm
    zpd = find_zpd(x, ifg.y) if phase_correction != "magnitude" else None
    if zpd is not None and zpd.found:
        method = "mertz" if phase_correction in ("auto", "mertz") else phase_correction
        fn = phase.forman if method == "forman" else phase.mertz
        try:
            ps = fn(x, ifg.y, zpd, apodization=apodization, n_fft=n_fft, planner=planner)
            if phase_correction == "auto":
                ps = dispersed_mertz(x, ifg.y, zpd, ps, apodization=apodization, n_fft=n_fft,
                                     planner=planner)
        except AnalysisError:
            # a burst too close to the sweep's end for a double-sided phase segment: treat the
            # sweep as one without ZPD
            zpd = None
    if zpd is not None and zpd.found:
        return SweepSpectrum(
            ps.real, ps.imag_residual, ps.L_cm, ps.method, True, zpd.x_zpd_cm, ifg.sweep.index,
            zpd.n_bursts, zpd.burst_spacing_cm, zpd.ambiguous, zpd.peak_cm,
            ps.dispersion_cm2, ps.u_dispersion_cm2,
        )
    # no ZPD: magnitude about the sweep's centre, L = half the span
    half = (ifg.y.size - 1) // 2
    centre = ifg.x0_cm + half * ifg.dx_cm
    fake = ZpdInfo(True, centre, half, half * ifg.dx_cm, half * ifg.dx_cm, 1.0, "")
    ps = phase.magnitude(
        x[: 2 * half + 1], ifg.y[: 2 * half + 1], fake, apodization=apodization, n_fft=n_fft,
        planner=planner,
    )
    return SweepSpectrum(
        ps.real, ps.imag_residual, ps.L_cm, "magnitude", False, float("nan"), ifg.sweep.index,
        peak_cm=zpd.peak_cm if zpd is not None else float("nan"),
    )


def dispersed_mertz(x_cm, y, zpd, first, *, apodization="happ-genzel", n_fft=None,
                    planner=None):
    """A Mertz spectrum redone for a chirped burst (unequal glass in the arms), or ``first``.

    When ``first`` (a Mertz spectrum with the default phase segment) leaves more than
    :data:`ftsource.spectrum.dispersion.PHASE_ERROR_RATIO_MAX` of its energy in the imaginary
    residual, the burst is measured on its envelope
    (:func:`ftsource.spectrum.dispersion.burst_half_width_cm`, out to 5 % of the peak). If it
    lies within the short side, the phase is taken from the whole double-sided part (a
    shorter segment smears the curved phase of a chirped burst: with ±2 burst half-widths the
    residual of an 850/60 nm LED behind 6 mm of N-BK7 stayed at 6e-3, with the whole part it
    fell to 1e-4) and fitted by a weighted quartic in wavenumber. That
    spectrum is kept when it at least halves the residual; if its residual is still above the
    limit the phase cannot be trusted and the magnitude of the double-sided part is returned
    instead (noise-rectified, see :func:`ftsource.spectrum.phase.magnitude`). Records without
    the trouble come back unchanged.

    References
    ----------
    .. [1] L. Mertz, Infrared Phys. 7, 17-23 (1967); module :mod:`ftsource.spectrum.dispersion`.
    """
    from ftsource.spectrum import dispersion as disp
    from ftsource.spectrum import phase

    r0 = disp.phase_error_ratio(first.real, first.imag_residual)
    if first.method != "mertz" or r0 <= disp.PHASE_ERROR_RATIO_MAX:
        return first
    half = disp.burst_half_width_cm(x_cm, y, zpd.x_zpd_cm)
    if half >= zpd.short_side_cm:
        return first  # the burst runs off the short side: no double-sided phase can hold it
    if zpd.kind == "one-sided":
        # the Mertz ramp weights each component by ½ + Δx(σ)/2l, Δx its group delay from ZPD:
        # on a chirped burst that tilts the band (±5 % across an 850/60 nm LED behind 6 mm of
        # N-BK7 with l = 0.1 mm); only the double-sided part is used (lower resolution)
        x_cm, y, zpd = _double_sided_part(x_cm, y, zpd)
        if zpd is None:
            return first
    seg = zpd.short_side_cm * (1 - 1e-9)
    try:
        poly = phase.mertz(x_cm, y, zpd, apodization=apodization, n_fft=n_fft,
                           double_sided_cm=seg, planner=planner, phase_model="polynomial")
    except (AnalysisError, OptionError):
        return first
    r1 = disp.phase_error_ratio(poly.real, poly.imag_residual)
    if r1 <= disp.PHASE_ERROR_RATIO_MAX:
        return poly
    if zpd.kind == "double-sided" and min(r0, r1) > 10 * disp.PHASE_ERROR_RATIO_MAX:
        mag = phase.magnitude(x_cm, y, zpd, apodization=apodization, n_fft=n_fft,
                              planner=planner)
        return replace(mag, dispersion_cm2=poly.dispersion_cm2,
                       u_dispersion_cm2=poly.u_dispersion_cm2)
    return poly if r1 <= 0.5 * r0 else first


def _double_sided_part(x_cm, y, zpd):
    """The samples within the short side of ZPD on both sides, with their ZPD (or Nones)."""
    from ftsource.interferogram.zpd import find_zpd

    x = np.asarray(x_cm, dtype=float)
    keep = np.abs(x - zpd.x_zpd_cm) <= zpd.short_side_cm
    if keep.sum() < 16:
        return x_cm, y, None
    xs, ys = x[keep], np.asarray(y, dtype=float)[keep]
    z = find_zpd(xs, ys)
    return xs, ys, (z if z.found else None)


def coadd(
    sweep_spectra: list[SweepSpectrum],
    sigma_per_cm: np.ndarray,
    apodization: str,
) -> Spectrum:
    """Mean of sweep spectra on the same grid, with a noise estimate.

    The noise is each sweep's robust noise level (:func:`_noise_level`: most of the grid lies
    outside the source's band and holds only noise) combined for the mean. Noise that grows
    with the signal is not in it; line fits scale their uncertainties by their residuals.
    """
    if not sweep_spectra:
        raise AnalysisError("no sweep could be transformed")
    n = len(sweep_spectra)
    # summed in sweep order, as numpy's mean over the first axis of the stacked values does,
    # without stacking them (one more copy of every sweep's spectrum)
    mean = np.array(sweep_spectra[0].values, dtype=float)
    for s in sweep_spectra[1:]:
        mean += s.values
    mean /= n
    methods = {s.method for s in sweep_spectra}
    kind = "magnitude" if methods == {"magnitude"} else "real"
    # each sweep's own noise level (its spectrum is noise over most of the grid); sweeps of
    # different span have different line shapes, so their scatter at a line is not noise
    floors = np.array([s.noise_level for s in sweep_spectra])
    noise = np.full(mean.shape, np.sqrt(np.sum(floors**2)) / n)
    L = tuple(float(s.L_cm) for s in sweep_spectra)
    w = tuple(1.0 / n for _ in sweep_spectra)
    shape = LineShape(apodization, L, w, kind)
    method = methods.pop() if len(methods) == 1 else "mixed"
    return Spectrum(np.asarray(sigma_per_cm, float), mean, noise, shape, method,
                    tuple(sweep_spectra))


def _block_medians(v: np.ndarray, edges: np.ndarray, *, spread: bool = False) -> np.ndarray:
    """Median of each block ``v[edges[k]:edges[k+1]]`` (blocks of at most two sizes, as
    ``numpy.linspace`` edges give), one vectorised median per block size; with ``spread`` the
    medians are returned spread over the samples of their blocks."""
    starts, sizes = edges[:-1], np.diff(edges)
    med = np.empty(starts.size)
    for size in np.unique(sizes):
        sel = sizes == size
        med[sel] = np.median(v[starts[sel, None] + np.arange(size)], axis=1)
    return np.repeat(med, sizes) if spread else med


def _noise_level(s: SweepSpectrum, block: int = 1024) -> float:
    """Noise standard deviation of one sweep's spectrum (one value: white noise is flat in
    wavenumber), from blocks of points.

    In each block of a phase-corrected spectrum the robust spread is 1.4826 × the median
    absolute deviation (Gaussian noise); a magnitude spectrum is Rayleigh distributed where
    there is no line, so the noise per component is its median / √(2 ln 2). Block medians ignore
    the few points a narrow line occupies, and the median over blocks ignores the blocks a broad
    source fills. (The imaginary residual of a one-sided record comes from its short
    double-sided part and has another noise level, so it is not used.)
    """
    v = np.abs(s.values)
    scale = 1.0 / np.sqrt(2 * np.log(2)) if s.method == "magnitude" else 1.4826
    nb = max(v.size // block, 1)
    edges = np.linspace(0, v.size, nb + 1).astype(int)
    if s.method != "magnitude":
        # deviations about each block's median (a broad source lifts a whole block)
        med = _block_medians(np.abs(s.values - _block_medians(s.values, edges, spread=True)),
                             edges) * scale
    else:
        med = _block_medians(v, edges) * scale
    # white interferogram noise is flat in wavenumber: the median over blocks is robust to the
    # blocks a source occupies
    level = float(np.median(med))
    return max(level, np.finfo(float).tiny)


def reconvolve(spectrum: Spectrum, band_per_cm: tuple[float, float], *,
               reach: float = 30.0) -> np.ndarray:
    """The density convolved once more with the spectrum's own line shape, over a band.

    Used to remove the first-order bias that the instrument line shape puts on a figure f of a
    broad band (peak, FWHM): f(S∗K) − f(S) ≈ f(S∗K∗K) − f(S∗K) when the band spans many
    resolution elements, so ``2 f(measured) − f(reconvolved)`` estimates f(S) with a
    second-order error (Richardson extrapolation in the line-shape width).

    Parameters
    ----------
    spectrum : Spectrum
        On a uniform wavenumber grid.
    band_per_cm : (float, float)
        Where the result is needed; the convolution reads ``reach`` resolution elements beyond.
    reach : float
        Half-width of the kernel, in resolution elements (the apodized line shapes have fallen
        to below 1e-3 of their peak there; the boxcar's sinc to about 1 %, whose area beyond
        is a few 1e-4).

    Returns
    -------
    ndarray
        Same shape as ``spectrum.density``; NaN outside the band.

    References
    ----------
    .. [1] L. F. Richardson, Phil. Trans. R. Soc. A 210, 307-357 (1911) (extrapolation in a
       small parameter).
    .. [2] P. H. van Cittert, Z. Phys. 69, 298-308 (1931) (the same first-order step applied
       to the data: S ≈ 2M − M∗K).
    """
    sig = spectrum.sigma_per_cm
    step = float(np.median(np.diff(sig)))
    n_half = int(np.ceil(reach * spectrum.resolution_per_cm / step))
    kern = spectrum.line_shape.kernel(np.arange(-n_half, n_half + 1) * step) * step
    kern = kern / kern.sum()  # the truncated kernel keeps the band's area
    lo, hi = band_per_cm
    inside = np.flatnonzero((sig >= lo) & (sig <= hi))
    out = np.full(sig.shape, np.nan)
    if inside.size == 0:
        return out
    a = max(int(inside[0]) - n_half, 0)
    b = min(int(inside[-1]) + n_half + 1, sig.size)
    conv = np.convolve(spectrum.density[a:b], kern, mode="same")
    out[inside] = conv[inside - a]
    return out


def noise_correlation(spec: Spectrum) -> float:
    """How many grid points of ``spec`` share one independent noise value.

    White interferogram noise, apodized by ``w(x)`` (``x`` within ±L) and zero-filled, gives
    spectrum points whose correlations sum to ``Σρ = w(0)²/(δσ·∫w² dx)``
    (``δσ`` the grid step; the covariance of two points is the transform of ``w²``, and the
    sum of a transform's samples is ``1/δσ`` times the function at 0: Poisson summation). For
    a box without zero-filling it is 1; with zero-filling by ``z``, ``z``. A mean or median
    over ``n`` points has the spread of one over ``n/Σρ`` independent points. The window is
    taken double-sided over ``±max_opd`` (a one-sided Mertz window is close).

    References
    ----------
    .. [1] R. N. Bracewell, The Fourier Transform and Its Applications, 3rd ed., McGraw-Hill
       (2000), ch. 6 (autocorrelation theorem) and ch. 10 (Poisson summation).
    """
    from ftsource.spectrum.apodization import get_apodization

    sig = np.asarray(spec.sigma_per_cm, dtype=float)
    step = float(np.median(np.abs(np.diff(sig)))) if sig.size > 1 else float("nan")
    L = float(spec.max_opd_cm)
    if not (step > 0 and L > 0 and np.isfinite(step * L)):
        return 1.0
    apo = get_apodization(spec.line_shape.apodization)
    xi = np.linspace(0.0, 1.0, 2001)
    mean_sq = float(np.trapezoid(np.asarray(apo(xi), dtype=float) ** 2, xi))  # ∫w²dx / 2L
    return max(1.0, 1.0 / (step * 2 * L * mean_sq))
