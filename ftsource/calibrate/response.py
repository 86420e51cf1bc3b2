"""Relative spectral response of the instrument, and its correction.

The detector, beam splitter and optics do not pass every wavenumber equally, so a measured
spectrum is the source's spectrum times the instrument's relative response. Measuring a lamp of
known spectral shape gives that response (:func:`calibrate_response`); dividing another
measurement by it gives the source's own shape (:func:`apply_response`). Only the *shape*
matters here: the response is normalised to 1 at its maximum.

Conventions: wavenumber ``sigma`` in cm⁻¹ (vacuum), densities per unit wavenumber, wavelength
in nm (vacuum) where a name says ``_nm``. See ``docs/response_and_calibration.md``.
"""

from __future__ import annotations

import io
import math
import os
import warnings
from dataclasses import dataclass

import numpy as np

from ftsource._checks import finite_pair, positive_array
from ftsource.errors import AnalysisError, FtsourceWarning, OptionError

__all__ = [
    "ResponseCurve",
    "planck_density_per_cm",
    "planck_dlog_dtemperature",
    "calibrate_response",
    "apply_response",
    "power_outside_band",
    "silicon_photodiode_response",
    "correct_band",
    "response_shape_uncertainty",
    "MAX_OUTSIDE_FRACTION",
]

#: Largest fraction of a band's measured power that may lie outside the response's valid band
#: for the band to be corrected (:func:`correct_band`); above it the band stays uncorrected.
MAX_OUTSIDE_FRACTION = 1e-3

# 2019 SI defining constants (exact).
_H = 6.62607015e-34  # J s
_C = 299792458.0  # m/s
_K = 1.380649e-23  # J/K
_C2_CM_K = _H * _C / _K * 100.0  # second radiation constant, cm K

_FILE_KIND = "ftsource-response"
_FILE_VERSION = 1
_LAMPS = ("blackbody", "table")
_EMISSIVITY_NOTE = (
    "the lamp is taken as a blackbody at its distribution temperature; tungsten's emissivity "
    "is not flat in wavelength, so this is only an approximation of the lamp's shape"
)


# --------------------------------------------------------------------------------------------
# Planck
# --------------------------------------------------------------------------------------------
def _check_temperature(temperature_k, name="temperature_k") -> float:
    t = positive_array(name, temperature_k)
    if t.ndim != 0:
        raise OptionError(f"{name} is one temperature in kelvin, not an array")
    return float(t)


def _check_sigma(sigma_per_cm, name="sigma_per_cm") -> np.ndarray:
    return positive_array(name, sigma_per_cm, allow_zero=True)


def planck_density_per_cm(sigma_per_cm, temperature_k):
    """Planck spectral radiance per unit wavenumber.

    Parameters
    ----------
    sigma_per_cm : float or array_like
        Vacuum wavenumber(s), cm⁻¹, ``>= 0``.
    temperature_k : float
        Temperature, K, ``> 0``.

    Returns
    -------
    float or numpy.ndarray
        ``B_σ = 2hc²σ³ / (exp(hcσ/kT) − 1)`` in W·m⁻²·sr⁻¹ per cm⁻¹ (0 at σ = 0). Only the
        relative shape is used by :func:`calibrate_response`.

    Raises
    ------
    OptionError
        For a negative or non-finite wavenumber or a temperature that is not > 0.

    Notes
    -----
    With σ in m⁻¹ the formula gives W·m⁻²·sr⁻¹ per m⁻¹; per cm⁻¹ is 100 times that. The
    denominator uses ``expm1`` so the Rayleigh–Jeans end stays accurate. B_σ = c·B_ν, since
    ν = cσ.

    References
    ----------
    .. [1] M. Planck, "Ueber das Gesetz der Energieverteilung im Normalspectrum", Ann. Phys.
       309, 553 (1901).
    .. [2] BIPM, The International System of Units (SI), 9th edition (2019): exact values of
       h, c and k.
    """
    s = _check_sigma(sigma_per_cm)
    t = _check_temperature(temperature_k)
    s_m = s * 100.0
    x = _C2_CM_K * s / t
    with np.errstate(over="ignore", invalid="ignore", divide="ignore"):
        out = np.where(s > 0, 2.0 * _H * _C**2 * s_m**3 / np.expm1(x) * 100.0, 0.0)
    return float(out) if np.ndim(sigma_per_cm) == 0 else out


def planck_dlog_dtemperature(sigma_per_cm, temperature_k):
    """Sensitivity of the Planck shape to temperature, ∂ ln B_σ / ∂T.

    Parameters
    ----------
    sigma_per_cm : float or array_like
        Vacuum wavenumber(s), cm⁻¹.
    temperature_k : float
        Temperature, K.

    Returns
    -------
    float or numpy.ndarray
        ``(x/T)·eˣ/(eˣ − 1)`` with ``x = c₂σ/T`` (c₂ = hc/k), in K⁻¹; tends to ``1/T`` at σ → 0.

    Notes
    -----
    From ln B_σ = const + 3 ln σ − ln(eˣ − 1) and ∂x/∂T = −x/T.

    References
    ----------
    .. [1] M. Planck, Ann. Phys. 309, 553 (1901) (differentiated here in closed form).
    """
    s = _check_sigma(sigma_per_cm)
    t = _check_temperature(temperature_k)
    x = _C2_CM_K * s / t
    with np.errstate(over="ignore", invalid="ignore", divide="ignore"):
        # x e^x/(e^x - 1) = x/(1 - e^-x), written to avoid overflow
        f = np.where(x > 0, x / -np.expm1(-np.where(x > 0, x, 1.0)), 1.0)
    out = f / t
    return float(out) if np.ndim(sigma_per_cm) == 0 else out


# --------------------------------------------------------------------------------------------
# the curve
# --------------------------------------------------------------------------------------------
def _readonly(a) -> np.ndarray:
    a = np.array(a, dtype=float)
    a.flags.writeable = False
    return a


@dataclass(frozen=True, eq=False)
class ResponseCurve:
    """Relative spectral response of the instrument over the band where it is known.

    Attributes
    ----------
    sigma_per_cm : ndarray
        Vacuum wavenumber, cm⁻¹, strictly ascending, all inside ``valid_band_per_cm``.
    relative_response : ndarray
        Response normalised to 1 at its maximum in the band (dimensionless).
    u_relative : ndarray
        Standard uncertainty of ``relative_response`` (same dimensionless scale), ``>= 0``.
    valid_band_per_cm : tuple of float
        ``(low, high)``, cm⁻¹: the contiguous band around the lamp's peak where the lamp signal
        was above ``min_fraction`` of its peak and ``min_snr`` times its noise (see
        :func:`calibrate_response`). :meth:`at` gives NaN outside it.
    source : str
        How the curve was made (lamp, temperature, smoothing, caveats).
    lamp : str
        ``"blackbody"`` or ``"table"``.
    temperature_k, u_temperature_k : float or None
        Lamp distribution temperature and its standard uncertainty, where used.
    date : str or None
        Date of the calibration as given by the caller (none is invented).
    """

    sigma_per_cm: np.ndarray
    relative_response: np.ndarray
    u_relative: np.ndarray
    valid_band_per_cm: tuple[float, float]
    source: str
    lamp: str = "blackbody"
    temperature_k: float | None = None
    u_temperature_k: float | None = None
    date: str | None = None

    def __post_init__(self):
        s = np.asarray(self.sigma_per_cm, dtype=float)
        r = np.asarray(self.relative_response, dtype=float)
        u = np.asarray(self.u_relative, dtype=float)
        if s.ndim != 1 or s.size < 2 or r.shape != s.shape or u.shape != s.shape:
            raise OptionError(
                "ResponseCurve: sigma_per_cm, relative_response and u_relative are 1-D arrays "
                f"of one length >= 2 (got shapes {s.shape}, {r.shape}, {u.shape})"
            )
        if not (np.all(np.isfinite(s)) and np.all(np.diff(s) > 0) and s[0] > 0):
            raise OptionError("ResponseCurve: sigma_per_cm is finite, > 0 and strictly ascending")
        if not (np.all(np.isfinite(r)) and np.all(r > 0)):
            raise OptionError("ResponseCurve: relative_response is finite and > 0 in the band")
        if not (np.all(np.isfinite(u)) and np.all(u >= 0)):
            raise OptionError("ResponseCurve: u_relative is finite and >= 0")
        try:
            lo, hi = (float(v) for v in self.valid_band_per_cm)
        except (TypeError, ValueError):
            raise OptionError(
                f"ResponseCurve: valid_band_per_cm = {self.valid_band_per_cm!r} is not a pair "
                "of wavenumbers (low, high) in cm^-1"
            ) from None
        if not (lo <= s[0] and s[-1] <= hi and lo < hi):
            raise OptionError(
                f"ResponseCurve: valid_band_per_cm = ({lo!r}, {hi!r}) does not hold the curve's "
                f"points ({s[0]!r} to {s[-1]!r} cm^-1)"
            )
        if self.lamp not in _LAMPS:
            raise OptionError(f"ResponseCurve: lamp = {self.lamp!r}; allowed: {_LAMPS}")
        for name in ("temperature_k", "u_temperature_k"):
            v = getattr(self, name)
            if v is not None:
                v = float(v)
                if not math.isfinite(v) or v < 0:
                    raise OptionError(f"ResponseCurve: {name} = {v!r} is finite and >= 0")
                object.__setattr__(self, name, v)
        if not isinstance(self.source, str) or (
            self.date is not None and not isinstance(self.date, str)
        ):
            raise OptionError("ResponseCurve: source is a string and date a string or None")
        object.__setattr__(self, "sigma_per_cm", _readonly(s))
        object.__setattr__(self, "relative_response", _readonly(r))
        object.__setattr__(self, "u_relative", _readonly(u))
        object.__setattr__(self, "valid_band_per_cm", (lo, hi))

    def at(self, sigma_per_cm):
        """The relative response at ``sigma_per_cm`` (cm⁻¹), linearly interpolated.

        Parameters
        ----------
        sigma_per_cm : float or array_like
            Vacuum wavenumber(s), cm⁻¹.

        Returns
        -------
        float or numpy.ndarray
            Relative response; NaN outside ``valid_band_per_cm``. Between the band's edges and
            the first/last point the end values are held.

        References
        ----------
        .. [1] Linear interpolation (``numpy.interp``).
        """
        return self._interp(self.relative_response, sigma_per_cm)

    def u_at(self, sigma_per_cm):
        """Standard uncertainty of :meth:`at` (same rules; NaN outside the band).

        References
        ----------
        .. [1] Linear interpolation (``numpy.interp``).
        """
        return self._interp(self.u_relative, sigma_per_cm)

    def _interp(self, values, sigma_per_cm):
        s = np.asarray(sigma_per_cm, dtype=float)
        lo, hi = self.valid_band_per_cm
        out = np.interp(s, self.sigma_per_cm, values)
        out = np.where((s >= lo) & (s <= hi), out, np.nan)
        return float(out) if np.ndim(sigma_per_cm) == 0 else out

    # ---- files ------------------------------------------------------------------------------
    def to_file(self, path, *, overwrite: bool = False) -> None:
        """Write the curve as an ECSV table with its metadata.

        Parameters
        ----------
        path : str or os.PathLike
            Target file (``.ecsv`` recommended).
        overwrite : bool
            Replace an existing file. Without it an existing file is an error.

        Raises
        ------
        OutputError
            If the file exists (and ``overwrite`` is false), is a directory or cannot be
            written. The write is atomic: a temporary file in the same folder is renamed.

        Notes
        -----
        Columns ``sigma_per_cm``, ``relative_response``, ``u_relative``; metadata ``kind``,
        ``version``, ``source``, ``lamp``, ``temperature_k``, ``u_temperature_k``,
        ``valid_band_per_cm`` and ``date`` (only what the caller gave; no timestamp).

        References
        ----------
        .. [1] Astropy ECSV format, APE 6 (Enhanced Character Separated Values).
        """
        from astropy.table import Table

        from ftsource.io.records import atomic_write

        t = Table()
        t["sigma_per_cm"] = np.asarray(self.sigma_per_cm)
        t["relative_response"] = np.asarray(self.relative_response)
        t["u_relative"] = np.asarray(self.u_relative)
        t["sigma_per_cm"].unit = "1 / cm"
        t.meta.update(
            {
                "kind": _FILE_KIND,
                "version": _FILE_VERSION,
                "source": self.source,
                "lamp": self.lamp,
                "temperature_k": self.temperature_k,
                "u_temperature_k": self.u_temperature_k,
                "valid_band_per_cm": [float(v) for v in self.valid_band_per_cm],
                "date": self.date,
            }
        )
        buf = io.StringIO()
        # astropy formats floats through numpy's str(); a global legacy print mode (set by some
        # libraries on import) would cut them to 12 digits, so write with today's exact repr
        with np.printoptions(legacy=False):
            t.write(buf, format="ascii.ecsv")
        data = buf.getvalue().encode("utf-8")
        atomic_write(path, lambda fh: fh.write(data), overwrite=overwrite)

    @classmethod
    def from_file(cls, path) -> ResponseCurve:
        """Read a curve written by :meth:`to_file`.

        Parameters
        ----------
        path : str or os.PathLike
            An ECSV file.

        Returns
        -------
        ResponseCurve

        Raises
        ------
        OptionError
            If the file cannot be read, is not a response curve of a known version, or holds
            values a :class:`ResponseCurve` does not allow. The message is one line.

        References
        ----------
        .. [1] Astropy ECSV format, APE 6 (its header is parsed with a safe YAML loader).
        """
        from astropy.table import Table

        name = os.fspath(path)
        try:
            if os.path.getsize(name) > 64 * 1024 * 1024:
                raise OptionError(f"{name}: larger than 64 MiB; not a response curve")
            with warnings.catch_warnings():
                warnings.simplefilter("ignore")
                t = Table.read(name, format="ascii.ecsv")
        except OptionError:
            raise
        except Exception as exc:  # anything the reader raises on a bad file
            msg = str(exc).splitlines()[0] if str(exc) else type(exc).__name__
            raise OptionError(f"{name}: not a readable ECSV response curve ({msg})") from None
        meta = dict(t.meta)
        if meta.get("kind") != _FILE_KIND:
            raise OptionError(f"{name}: kind is {meta.get('kind')!r}, not {_FILE_KIND!r}")
        if meta.get("version") != _FILE_VERSION or isinstance(meta.get("version"), bool):
            raise OptionError(
                f"{name}: version {meta.get('version')!r} is not supported (allowed: "
                f"{_FILE_VERSION})"
            )
        for col in ("sigma_per_cm", "relative_response", "u_relative"):
            if col not in t.colnames:
                raise OptionError(f"{name}: column {col!r} is missing")
        band = meta.get("valid_band_per_cm")
        if not isinstance(band, (list, tuple)) or len(band) != 2:
            raise OptionError(f"{name}: valid_band_per_cm is not a pair (low, high) in cm^-1")
        try:
            return cls(
                np.asarray(t["sigma_per_cm"], dtype=float),
                np.asarray(t["relative_response"], dtype=float),
                np.asarray(t["u_relative"], dtype=float),
                (float(band[0]), float(band[1])),
                str(meta.get("source", "")),
                meta.get("lamp", "blackbody"),
                meta.get("temperature_k"),
                meta.get("u_temperature_k"),
                meta.get("date"),
            )
        except OptionError as exc:
            raise OptionError(f"{name}: {exc}") from None
        except (TypeError, ValueError) as exc:
            raise OptionError(f"{name}: bad value in the response curve ({exc})") from None


# --------------------------------------------------------------------------------------------
# calibration
# --------------------------------------------------------------------------------------------
def _valid_band_mask(density, noise, min_fraction, min_snr) -> np.ndarray:
    """Contiguous run around the peak where density > min_fraction·peak and > min_snr·noise."""
    ok = np.isfinite(density) & np.isfinite(noise)
    d = np.where(ok, density, -np.inf)
    peak = int(np.argmax(d))
    good = ok & (density > min_fraction * density[peak]) & (density > min_snr * noise)
    mask = np.zeros(density.shape, dtype=bool)
    if not good[peak]:
        return mask
    lo = peak
    while lo > 0 and good[lo - 1]:
        lo -= 1
    hi = peak
    while hi < density.size - 1 and good[hi + 1]:
        hi += 1
    mask[lo : hi + 1] = True
    return mask


def _local_quadratic(x, y, u, fwhm):
    """Local quadratic regression with Gaussian weights.

    At each ``x_i`` a quadratic in ``d = (x_j − x_i)/fwhm`` is fitted to ``y`` with weights
    ``K(x_j − x_i)/u_j²`` (K Gaussian of FWHM ``fwhm``, cut at ±2 FWHM, where it is below
    2×10⁻⁵ of its peak) and its intercept kept. The estimate is linear, ``s_i = Σ_j ℓ_ij y_j``.

    Returns ``s``, ``var_i = Σ_j ℓ_ij² u_j²`` and ``cov_with(m)``: the covariance
    ``Σ_j ℓ_ij ℓ_mj u_j²`` of every ``s_i`` with ``s_m``.
    """
    n = x.size
    h = fwhm / (2.0 * math.sqrt(2.0 * math.log(2.0)))
    reach = 2.0 * fwhm
    lo_idx = np.searchsorted(x, x - reach, side="left")
    hi_idx = np.searchsorted(x, x + reach, side="right")
    kmax = int(max(np.max(np.arange(n) - lo_idx), np.max(hi_idx - 1 - np.arange(n))))
    wy = 1.0 / u**2
    idx = np.arange(n)

    def weights_at(k):
        """Kernel·(1/u²) weight and scaled offset d for the pairs (i, i+k), all i."""
        j = idx + k
        ok = (j >= 0) & (j < n)
        jj = np.where(ok, j, 0)
        dx = np.where(ok, x[jj] - x, 0.0)
        ok &= np.abs(dx) <= reach
        w = np.where(ok, np.exp(-0.5 * (dx / h) ** 2) * wy[jj], 0.0)
        return jj, w, dx / fwhm

    mom = np.zeros((5, n))
    for k in range(-kmax, kmax + 1):
        _, w, d = weights_at(k)
        p = w.copy()
        for q in range(5):
            mom[q] += p
            p = p * d
    mat = np.empty((n, 3, 3))
    for r_ in range(3):
        for c_ in range(3):
            mat[:, r_, c_] = mom[r_ + c_]
    # intercept row of (X'WX)^-1 X'W: coefficients (c0, c1, c2) with ell = w·(c0 + c1 d + c2 d²);
    # where the quadratic is not determined (a band edge with few points) fall back to a line,
    # then to the weighted mean
    coef = np.zeros((n, 3))
    scale = mom[0][:, None, None]
    det3 = np.linalg.det(mat / scale)
    good3 = np.abs(det3) > 1e-10
    if np.any(good3):
        rhs = np.zeros((int(good3.sum()), 3, 1))
        rhs[:, 0, 0] = 1.0
        coef[good3] = np.linalg.solve(mat[good3], rhs)[..., 0]
    det2 = (mom[0] * mom[2] - mom[1] ** 2) / mom[0] ** 2
    good2 = ~good3 & (np.abs(det2) > 1e-10)
    coef[good2, 0] = mom[2][good2] / (mom[0][good2] * mom[2][good2] - mom[1][good2] ** 2)
    coef[good2, 1] = -mom[1][good2] / (mom[0][good2] * mom[2][good2] - mom[1][good2] ** 2)
    rest = ~good3 & ~good2
    coef[rest, 0] = 1.0 / mom[0][rest]
    s = np.zeros(n)
    var = np.zeros(n)
    for k in range(-kmax, kmax + 1):
        jj, w, d = weights_at(k)
        ell = w * (coef[:, 0] + coef[:, 1] * d + coef[:, 2] * d * d)
        s += ell * y[jj]
        var += ell**2 * u[jj] ** 2

    def row(i):
        j = np.arange(lo_idx[i], hi_idx[i])
        d = (x[j] - x[i]) / fwhm
        w = np.exp(-0.5 * ((x[j] - x[i]) / h) ** 2) * wy[j]
        return j, w * (coef[i, 0] + coef[i, 1] * d + coef[i, 2] * d * d)

    def cov_with(m):
        jm, lm = row(m)
        full = np.zeros(n)
        full[jm] = lm * u[jm] ** 2
        out = np.zeros(n)
        for i in range(max(0, m - 2 * kmax), min(n, m + 2 * kmax + 1)):
            j, li = row(i)
            out[i] = li @ full[j]
        return out

    return s, var, cov_with


def _interp_lamp_table(lamp_sigma, lamp_density, u_lamp_density, sigma):
    from scipy.interpolate import PchipInterpolator

    ls = _check_sigma(lamp_sigma, "lamp_sigma")
    try:
        ld = np.asarray(lamp_density, dtype=float)
    except (TypeError, ValueError):
        raise OptionError("lamp_density is not numeric") from None
    if ls.ndim != 1 or ls.size < 2 or ld.shape != ls.shape:
        raise OptionError(
            f"lamp_sigma and lamp_density are 1-D of one length >= 2 (got {ls.shape}, {ld.shape})"
        )
    if not (np.all(np.isfinite(ld)) and np.all(ld > 0)):
        raise OptionError("lamp_density holds a value that is not finite and > 0")
    order = np.argsort(ls)
    ls, ld = ls[order], ld[order]
    if np.any(np.diff(ls) <= 0):
        raise OptionError("lamp_sigma holds a repeated wavenumber")
    inside = (sigma >= ls[0]) & (sigma <= ls[-1])
    known = np.full(sigma.shape, np.nan)
    known[inside] = np.exp(PchipInterpolator(ls, np.log(ld))(sigma[inside]))
    rel_u = np.zeros(sigma.shape)
    if u_lamp_density is not None:
        try:
            lu = np.asarray(u_lamp_density, dtype=float)
        except (TypeError, ValueError):
            raise OptionError("u_lamp_density is not numeric") from None
        if lu.shape != ld.shape or not np.all(np.isfinite(lu)) or np.any(lu < 0):
            raise OptionError("u_lamp_density has the shape of lamp_density and is finite, >= 0")
        rel_u = np.interp(sigma, ls, lu[order] / ld)
    return known, inside, rel_u


def calibrate_response(
    measured_sigma,
    measured_density,
    measured_noise,
    *,
    lamp: str = "blackbody",
    temperature_k: float | None = None,
    lamp_sigma=None,
    lamp_density=None,
    u_temperature_k: float | None = None,
    emissivity_note: bool = True,
    u_lamp_density=None,
    min_fraction: float = 0.05,
    min_snr: float = 20.0,
    smooth_fwhm_per_cm: float = 25.0,
    noise_correlation_per_cm: float | None = None,
    date: str | None = None,
) -> ResponseCurve:
    """Relative response of the instrument from a measured lamp of known spectral shape.

    Parameters
    ----------
    measured_sigma : array_like
        Vacuum wavenumbers of the lamp measurement, cm⁻¹.
    measured_density : array_like
        Measured density per unit wavenumber (any units).
    measured_noise : array_like or float
        Standard uncertainty of ``measured_density`` per point (``> 0``).
    lamp : {"blackbody", "table"}
        ``"blackbody"``: the lamp is a Planck radiator at its distribution temperature
        ``temperature_k``. ``"table"``: a certified table ``lamp_sigma``/``lamp_density``
        (density per cm⁻¹, any units) is interpolated.
    temperature_k : float, optional
        Lamp distribution temperature, K (required for ``"blackbody"``; recorded for
        ``"table"`` when given).
    lamp_sigma, lamp_density : array_like, optional
        The certified table (``"table"`` only). A table per nm converts as
        ``S_σ = S_λ·λ²/10⁷`` (λ in nm) at ``σ = 10⁷/λ``.
    u_temperature_k : float, optional
        Standard uncertainty of ``temperature_k`` (``"blackbody"``); its effect on the shape is
        propagated into ``u_relative``.
    emissivity_note : bool
        Put the caveat about tungsten's emissivity into ``source`` (``"blackbody"``). Turn it
        off only for a true cavity blackbody.
    u_lamp_density : array_like, optional
        Standard uncertainty of ``lamp_density`` (``"table"``), taken as independent between
        table points.
    min_fraction, min_snr : float
        The valid band is the contiguous run of points around the measured peak where the
        measured density exceeds ``min_fraction`` × its peak *and* ``min_snr`` × its noise.
    smooth_fwhm_per_cm : float
        FWHM, cm⁻¹, of the Gaussian weights of the local quadratic smoothing (default 25 cm⁻¹,
        about 1 nm at 630 nm). Use 0 for no smoothing.
    noise_correlation_per_cm : float, optional
        Width over which the measured noise is correlated (about the resolution of an apodized,
        zero-filled spectrum). The statistical variance of the smoothed ratio is multiplied by
        ``max(1, width/grid step)``; without it points are taken as independent.
    date : str, optional
        Calibration date to record (nothing is invented).

    Returns
    -------
    ResponseCurve
        On the measured grid restricted to the valid band.

    Raises
    ------
    OptionError
        For inconsistent or invalid options and inputs.
    AnalysisError
        If fewer than 5 points pass the signal criteria.

    Notes
    -----
    * ratio ``ρ(σ) = measured(σ)/known(σ)``, with standard uncertainty
      ``noise(σ)/known(σ)``;
    * smoothing: at each point a quadratic is fitted to ρ with weights ``K(Δσ)/u²``, K a
      Gaussian of FWHM ``smooth_fwhm_per_cm`` truncated at ±3 FWHM, and its value at the point
      is kept (local polynomial regression; a Savitzky–Golay filter of degree 2 on a
      non-uniform, weighted grid). It leaves quadratics untouched, so a smooth response is not
      biased by it, while narrow features (absorption lines in the air path) are smeared;
    * normalisation: ``r = s/s_m`` with ``m`` the maximum of the smoothed ratio ``s`` in the
      band;
    * ``u_relative``: first-order propagation of (a) the measured noise through the smoothing
      and the normalisation (covariance of ``s_i`` and ``s_m`` included), (b) the lamp's shape:
      for a blackbody ``r_i·|g_i − g_m|·u_T`` with ``g = ∂ ln B_σ/∂T``
      (:func:`planck_dlog_dtemperature`) — a change of T changes the shape only through the
      difference from the normalising point; for a table ``r_i·√(q_i² + q_m²)`` with ``q`` the
      table's relative uncertainty interpolated. Components are combined in quadrature.

    A blackbody at the distribution temperature is only an approximation of a tungsten lamp:
    tungsten's emissivity falls with wavelength, so its shape differs from Planck's at the
    level of a few per cent over the visible (common practice). A certified table is better.

    References
    ----------
    .. [1] A. Savitzky and M. J. E. Golay, "Smoothing and differentiation of data by
       simplified least squares procedures", Anal. Chem. 36, 1627 (1964).
    .. [2] W. S. Cleveland, "Robust locally weighted regression and smoothing scatterplots",
       J. Am. Stat. Assoc. 74, 829 (1979).
    .. [3] JCGM 100:2008 (GUM), §5.1: propagation of uncertainty.
    .. [4] CIE 15:2018, Colorimetry: illuminant A, a Planckian radiator at about 2856 K.
    """
    if lamp not in _LAMPS:
        raise OptionError(f"lamp = {lamp!r} is not known; allowed: {', '.join(_LAMPS)}")
    sigma = _check_sigma(measured_sigma, "measured_sigma")
    try:
        dens = np.asarray(measured_density, dtype=float)
        noise = np.broadcast_to(np.asarray(measured_noise, dtype=float), dens.shape).copy()
    except (TypeError, ValueError):
        raise OptionError(
            "measured_density and measured_noise are numeric and of the shape of measured_sigma"
        ) from None
    if sigma.ndim != 1 or dens.shape != sigma.shape:
        raise OptionError(
            f"measured_sigma and measured_density are 1-D of one length (got {sigma.shape}, "
            f"{dens.shape})"
        )
    if not np.all(np.isfinite(noise)) or np.any(noise <= 0):
        raise OptionError("measured_noise holds a value that is not finite and > 0")
    for name, v in (("min_fraction", min_fraction), ("min_snr", min_snr)):
        if not (isinstance(v, (int, float)) and math.isfinite(v) and v >= 0):
            raise OptionError(f"{name} = {v!r} is not allowed; it is a finite number >= 0")
    if not (
        isinstance(smooth_fwhm_per_cm, (int, float))
        and math.isfinite(smooth_fwhm_per_cm)
        and smooth_fwhm_per_cm >= 0
    ):
        raise OptionError(
            f"smooth_fwhm_per_cm = {smooth_fwhm_per_cm!r} is not allowed; it is finite, >= 0"
        )
    if date is not None and not isinstance(date, str):
        raise OptionError(f"date = {date!r} is a string or None")
    order = np.argsort(sigma, kind="stable")
    sigma, dens, noise = sigma[order], dens[order], noise[order]
    if np.any(np.diff(sigma) <= 0):
        raise OptionError("measured_sigma holds a repeated wavenumber")

    t = None if temperature_k is None else _check_temperature(temperature_k)
    u_t = 0.0
    if u_temperature_k is not None:
        u_t = float(u_temperature_k)
        if not math.isfinite(u_t) or u_t < 0:
            raise OptionError(f"u_temperature_k = {u_temperature_k!r} is finite and >= 0 K")
    if lamp == "blackbody":
        if t is None:
            raise OptionError('lamp = "blackbody" needs temperature_k (the distribution '
                              "temperature, K)")
        if lamp_sigma is not None or lamp_density is not None or u_lamp_density is not None:
            raise OptionError('lamp_sigma/lamp_density/u_lamp_density belong to lamp = "table"')
        known = planck_density_per_cm(sigma, t)
        covered = sigma > 0
        q = np.zeros(sigma.shape)
    else:
        if lamp_sigma is None or lamp_density is None:
            raise OptionError('lamp = "table" needs lamp_sigma and lamp_density')
        if u_temperature_k is not None:
            raise OptionError('u_temperature_k belongs to lamp = "blackbody"')
        known, covered, q = _interp_lamp_table(lamp_sigma, lamp_density, u_lamp_density, sigma)

    mask = _valid_band_mask(np.where(covered, dens, np.nan), noise, min_fraction, min_snr)
    if mask.sum() < 5:
        raise AnalysisError(
            f"the lamp measurement has {int(mask.sum())} points above {min_fraction:g} of its "
            f"peak and {min_snr:g} times its noise (inside the lamp table); 5 or more needed"
        )
    x, kn, qn = sigma[mask], known[mask], q[mask]
    ratio = dens[mask] / kn
    u_ratio = noise[mask] / kn
    if smooth_fwhm_per_cm > 0:
        s, var, cov_with = _local_quadratic(x, ratio, u_ratio, float(smooth_fwhm_per_cm))
    else:
        s, var = ratio, u_ratio**2

        def cov_with(m):
            out = np.zeros(x.size)
            out[m] = var[m]
            return out

    inflate = 1.0
    if noise_correlation_per_cm is not None:
        c = float(noise_correlation_per_cm)
        if not math.isfinite(c) or c < 0:
            raise OptionError(f"noise_correlation_per_cm = {c!r} is finite and >= 0")
        inflate = max(1.0, c / float(np.median(np.diff(x))))
    if not np.all(s > 0):
        raise AnalysisError(
            "the smoothed lamp ratio is not positive everywhere in the band; raise min_snr or "
            "min_fraction"
        )
    m = int(np.argmax(s))
    r = s / s[m]
    var = var * inflate
    cov = cov_with(m) * inflate
    var_r = r**2 * (var / s**2 + var[m] / s[m] ** 2 - 2.0 * cov / (s * s[m]))
    var_r = np.clip(var_r, 0.0, None)
    parts = []
    if lamp == "blackbody":
        g = planck_dlog_dtemperature(x, t)
        var_r = var_r + (r * (g - g[m]) * u_t) ** 2
        parts.append(f"lamp: blackbody at distribution temperature {t:g} K")
        parts.append(f"u(T) = {u_t:g} K propagated into u_relative" if u_temperature_k
                     is not None else "temperature uncertainty not given (not propagated)")
        if emissivity_note:
            parts.append(_EMISSIVITY_NOTE)
    else:
        var_r = var_r + r**2 * (qn**2 + qn[m] ** 2)
        parts.append("lamp: certified table (ln density interpolated by PCHIP)")
    parts.append(
        f"response = measured/known, local quadratic smoothing FWHM {smooth_fwhm_per_cm:g} "
        f"cm^-1, normalised to 1 at {x[m]:.6g} cm^-1"
    )
    parts.append(f"valid band: density > {min_fraction:g} x peak and > {min_snr:g} x noise")
    return ResponseCurve(
        x,
        r,
        np.sqrt(var_r),
        (float(x[0]), float(x[-1])),
        "; ".join(parts),
        lamp,
        t,
        u_t if u_temperature_k is not None else None,
        date,
    )


# --------------------------------------------------------------------------------------------
# correction
# --------------------------------------------------------------------------------------------
_NO_CURVE = object()


def _spectrum_inputs(sigma, density, noise, curve=_NO_CURVE):
    """A spectrum's arrays, checked; given ``curve``, also that it is a ResponseCurve."""
    if curve is not _NO_CURVE and not isinstance(curve, ResponseCurve):
        raise OptionError(f"curve is a ResponseCurve, not {type(curve).__name__}")
    s = _check_sigma(sigma, "sigma")
    try:
        d = np.asarray(density, dtype=float)
        n = np.broadcast_to(np.asarray(noise, dtype=float), d.shape)
    except (TypeError, ValueError):
        raise OptionError("density and noise are numeric and of the shape of sigma") from None
    s, d = finite_pair(s, d, "sigma", "density", finite=False, error=OptionError)
    return s, d, n


def _trapezoid(y: np.ndarray, x: np.ndarray) -> float:
    return float(np.sum(0.5 * (y[1:] + y[:-1]) * np.diff(x)))


def power_outside_band(sigma, density, noise, curve: ResponseCurve, *, k_sigma: float = 3.0):
    """Fraction of the measured power that lies outside the response's valid band.

    Parameters
    ----------
    sigma, density, noise : array_like
        Wavenumber (cm⁻¹), measured density per cm⁻¹ and its standard uncertainty.
    curve : ResponseCurve
    k_sigma : float
        Only points where the density exceeds ``k_sigma`` × noise count as signal, so the noise
        over a wide grid does not pass for power.

    Returns
    -------
    float
        ``∫ outside S dσ / ∫ S dσ`` over signal points (trapezoid rule on the measured,
        uncorrected density — no correction exists outside the band); 0 when nothing is signal.

    References
    ----------
    .. [1] Trapezoid rule (closed form); the k·σ signal criterion is common practice.
    """
    s, d, n = _spectrum_inputs(sigma, density, noise, curve)
    order = np.argsort(s, kind="stable")
    s, d, n = s[order], d[order], n[order]
    sig = np.where(np.isfinite(d) & (d > k_sigma * n), d, 0.0)
    lo, hi = curve.valid_band_per_cm
    inside = (s >= lo) & (s <= hi)
    total = _trapezoid(sig, s)
    if total <= 0:
        return 0.0
    out = np.where(inside, 0.0, sig)
    part = _trapezoid(out, s)
    return min(1.0, max(0.0, part / total))


def apply_response(sigma, density, noise, curve: ResponseCurve, *, warn_above: float = 0.01):
    """Divide a measured spectrum by the instrument's relative response.

    Parameters
    ----------
    sigma : array_like
        Vacuum wavenumber, cm⁻¹.
    density, noise : array_like
        Measured density per cm⁻¹ and its standard uncertainty (``noise`` may be a scalar).
    curve : ResponseCurve
    warn_above : float
        Warn (``FtsourceWarning``) when more than this fraction of the measured power lies
        outside the valid band (:func:`power_outside_band`); the fraction is in the message.

    Returns
    -------
    density_corrected : numpy.ndarray
        ``density / r(σ)`` inside the valid band, NaN outside.
    noise_corrected : numpy.ndarray
        ``√((noise/r)² + (density·u_r/r²)²)`` inside, NaN outside. The response part is
        correlated across the spectrum (a shape error), so it does not average down.
    coverage_mask : numpy.ndarray of bool
        True where a correction was made.

    References
    ----------
    .. [1] JCGM 100:2008 (GUM), §5.1: propagation of uncertainty for a quotient.
    """
    s, d, n = _spectrum_inputs(sigma, density, noise, curve)
    r = curve.at(s)
    u = curve.u_at(s)
    cover = np.isfinite(r) & (r > 0)
    rr = np.where(cover, r, 1.0)
    dc = np.where(cover, d / rr, np.nan)
    nc = np.where(cover, np.hypot(n / rr, d * np.where(cover, u, 0.0) / rr**2), np.nan)
    frac = power_outside_band(s, d, n, curve)
    if frac > warn_above:
        warnings.warn(
            f"{100 * frac:.3g} % of the measured power lies outside the response's valid band "
            f"({curve.valid_band_per_cm[0]:.6g} to {curve.valid_band_per_cm[1]:.6g} cm^-1) and "
            "is left uncorrected (NaN)",
            FtsourceWarning,
            stacklevel=2,
        )
    return dc, nc, cover


def correct_band(sigma, density, noise, curve: ResponseCurve, *,
                 max_outside: float = MAX_OUTSIDE_FRACTION):
    """Correct one emission band for the response, or say why it cannot be corrected.

    Parameters
    ----------
    sigma, density, noise : array_like
        Wavenumber (cm⁻¹), measured density per cm⁻¹ and its standard uncertainty, over the
        window that holds the band (for example ±4 FWHM around it).
    curve : ResponseCurve
    max_outside : float
        Largest fraction of the band's measured power (:func:`power_outside_band`) that may lie
        outside ``curve.valid_band_per_cm``; default :data:`MAX_OUTSIDE_FRACTION` (0.1 %).

    Returns
    -------
    density : numpy.ndarray
        ``density / r(σ)`` when corrected (NaN where the curve is not known, which then holds
        at most ``max_outside`` of the power), otherwise the measured density unchanged.
    noise : numpy.ndarray
        The *statistical* part only, ``noise / r(σ)`` (or ``noise`` when not corrected). The
        response's own uncertainty is a shape error, correlated across the band, and is
        evaluated separately by :func:`response_shape_uncertainty`.
    applied : bool
        Whether the correction was made.
    messages : list of str
        Warnings to pass to the user: those :func:`apply_response` raised and, when the band
        could not be corrected, why (the figures are then detector-weighted).

    Notes
    -----
    Correcting only the part of a band the curve covers would drop the rest and move the
    centroid by about (fraction dropped) × (its distance from the centroid) — for 1 % of
    an LED's power two FWHM out, a fifth of a nanometre for a 10 nm wide band, as much as the
    detector weighting the correction is meant to remove. So the band is corrected whole or not
    at all, with the limit at 0.1 % of its power (at most a few hundredths of a nanometre).

    References
    ----------
    .. [1] JCGM 100:2008 (GUM), §5.1: propagation of uncertainty for a quotient.
    """
    s, d, n = _spectrum_inputs(sigma, density, noise, curve)
    limit = float(max_outside)
    if not (math.isfinite(limit) and 0.0 <= limit < 1.0):
        raise OptionError(f"max_outside = {max_outside!r} is a fraction in [0, 1)")
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always", FtsourceWarning)
        dc, _, cover = apply_response(s, d, n, curve)
    frac = power_outside_band(s, d, n, curve)
    messages = [str(c.message) for c in caught if issubclass(c.category, FtsourceWarning)]
    if frac > limit:
        lo, hi = curve.valid_band_per_cm
        reason = (
            f"the instrument response was not applied: {100 * frac:.3g} % of the band's "
            f"measured power lies outside the response's valid band ({1e7 / hi:.0f}–"
            f"{1e7 / lo:.0f} nm; at most {100 * limit:.2g} % may), and correcting only part of "
            "the band would bias its figures; the broadband figures are detector-weighted. "
            "Calibrate the response with a lamp record whose signal covers the whole band"
        )
        return np.array(d, dtype=float), np.array(n, dtype=float), False, [reason]
    r = np.where(cover, curve.at(s), np.nan)
    return dc, np.where(cover, n / np.where(cover, r, 1.0), np.nan), True, messages


def response_shape_uncertainty(sigma, density_corrected, curve: ResponseCurve, figures, *,
                               centre_per_cm: float, width_per_cm: float):
    """Standard uncertainty of a band's figures from the response's correlated shape error.

    Parameters
    ----------
    sigma : array_like
        Wavenumber, cm⁻¹, where ``density_corrected`` is given.
    density_corrected : array_like
        The band divided by ``curve`` (:func:`correct_band`); NaN where not covered.
    curve : ResponseCurve
    figures : callable
        ``figures(sigma, density) -> sequence of float``: the figures (e.g. peak, centroid and
        FWHM) of a density on ``sigma``.
    centre_per_cm, width_per_cm : float
        Centre and FWHM of the band in wavenumber (they set the tilt below).

    Returns
    -------
    numpy.ndarray
        One standard uncertainty per figure: ``√(Δ_shift² + Δ_tilt²)``, each Δ half the change
        of the figure between the two signs of one shape error of the response:

        * shift: ``r → r ± u_r`` (every point moved together by its standard uncertainty);
        * tilt: ``r → r ± u_r·t`` with ``t = clip((σ − centre)/width, −1, 1)``, a tilt
          through the band's centre that reaches the full ``u_r`` one FWHM out.

    Notes
    -----
    ``u_relative`` of a calibrated curve is dominated by errors shared by neighbouring points —
    the lamp's temperature or table, the lamp record's noise smoothed over the resolution — so
    the error of the response is a *shape*, and it does not average down over a band as
    independent per-point noise would. A shift with the same relative size everywhere leaves
    every shape figure unchanged; a blackbody's temperature error is a tilt about the curve's
    normalising point, which the shift reproduces for a band on one side of that point and the
    tilt for a band across it. The two are added in quadrature (conservative: the real error is
    one shape). This is a one-at-a-time sensitivity evaluation, GUM §5.1.3 with finite
    differences.

    References
    ----------
    .. [1] JCGM 100:2008 (GUM), §5.1.3 (sensitivity coefficients, here by finite differences)
       and §5.2 (correlated input quantities).
    """
    s = _check_sigma(sigma, "sigma")
    s, dc = finite_pair(s, density_corrected, "sigma", "density_corrected", finite=False,
                        error=OptionError)
    w = float(width_per_cm)
    if not (math.isfinite(w) and w > 0 and math.isfinite(float(centre_per_cm))):
        raise OptionError("centre_per_cm is finite and width_per_cm finite and > 0")
    r, u = curve.at(s), curve.u_at(s)
    ok = np.isfinite(r) & (r > 0)
    r, u = np.where(ok, r, 1.0), np.where(ok, u, 0.0)
    tilt = np.clip((s - float(centre_per_cm)) / w, -1.0, 1.0)
    deltas = []
    for shape in (u, u * tilt):
        pair = []
        for sign in (1.0, -1.0):
            rr = np.maximum(r + sign * shape, 1e-3 * r)  # keep the response positive
            pair.append(np.asarray(figures(s, dc * r / rr), dtype=float))
        deltas.append(0.5 * (pair[0] - pair[1]))
    return np.sqrt(np.sum(np.square(deltas), axis=0))


# --------------------------------------------------------------------------------------------
# a typical silicon photodiode
# --------------------------------------------------------------------------------------------
# Absorption coefficient of crystalline silicon at 300 K, cm^-1: rounded values from memory,
# of the size tabulated by M. A. Green, Sol. Energy Mater. Sol. Cells 92, 1305 (2008).
_SI_ALPHA_NM = np.array(
    [300, 350, 400, 450, 500, 550, 600, 650, 700, 750, 800, 850, 900, 950, 1000, 1050, 1100,
     1150, 1200], dtype=float
)
_SI_ALPHA_PER_CM = np.array(
    [1.7e6, 1.0e6, 9.5e4, 2.55e4, 1.1e4, 6.4e3, 4.1e3, 2.8e3, 1.9e3, 1.3e3, 8.5e2, 5.35e2,
     3.06e2, 1.57e2, 64.0, 16.3, 3.5, 0.3, 0.022]
)
_SI_REFLECTANCE = 0.10  # with an anti-reflection window, common practice / from memory
_SI_DEAD_CM = 0.05e-4  # 50 nm surface layer that collects nothing, from memory
_SI_DEPTH_CM = 150e-4  # 150 um collection depth, from memory
_HC_EV_NM = 1239.84198  # h·c/e in eV·nm (exact SI constants)


def silicon_photodiode_response(wavelength_nm):
    """Approximate responsivity of a typical silicon photodiode (a *shape*, not for correction).

    Parameters
    ----------
    wavelength_nm : float or array_like
        Vacuum wavelength(s), nm.

    Returns
    -------
    float or numpy.ndarray
        Responsivity, A/W: ``(λ/1239.84 nm)·QE`` with
        ``QE = (1 − R)·exp(−α·d₀)·(1 − exp(−α·d))`` — surface reflectance ``R`` = 0.10, a dead
        surface layer ``d₀`` = 50 nm, a collection depth ``d`` = 150 µm and silicon's
        absorption coefficient α(λ) (a smooth cubic spline through rounded values). 0 outside
        300–1200 nm. It peaks near 0.6 A/W around 900–950 nm.

    Notes
    -----
    This is a *typical shape* (common practice / from memory) for the simulator and the
    documentation's examples. Real photodiodes differ by tens of per cent; never correct a
    measurement with it — calibrate the instrument with :func:`calibrate_response`.

    References
    ----------
    .. [1] M. A. Green, "Self-consistent optical parameters of intrinsic silicon at 300 K
       including temperature coefficients", Sol. Energy Mater. Sol. Cells 92, 1305 (2008)
       (the size of α; values here are rounded, from memory).
    .. [2] S. M. Sze and K. K. Ng, Physics of Semiconductor Devices, 3rd ed. (Wiley, 2007),
       ch. 13: quantum efficiency of a photodiode.
    """
    from scipy.interpolate import CubicSpline

    try:
        lam = np.asarray(wavelength_nm, dtype=float)
    except (TypeError, ValueError):
        raise OptionError("wavelength_nm is not numeric; give wavelengths in nm") from None
    if np.any(np.isnan(lam)):
        raise OptionError("wavelength_nm holds NaN; give wavelengths in nm")
    inside = (lam >= _SI_ALPHA_NM[0]) & (lam <= _SI_ALPHA_NM[-1])
    # spline of ln(alpha) against photon energy: smooth (C2) and positive
    e = _HC_EV_NM / _SI_ALPHA_NM[::-1]
    spline = CubicSpline(e, np.log(_SI_ALPHA_PER_CM[::-1]))
    lam_in = np.where(inside, lam, 600.0)
    alpha = np.exp(spline(_HC_EV_NM / lam_in))
    qe = (1 - _SI_REFLECTANCE) * np.exp(-alpha * _SI_DEAD_CM) * -np.expm1(-alpha * _SI_DEPTH_CM)
    out = np.where(inside, lam_in / _HC_EV_NM * qe, 0.0)
    return float(out) if np.ndim(wavelength_nm) == 0 else out
