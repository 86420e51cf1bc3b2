"""Refractive index of air, air/vacuum wavelengths and the dispersion correction.

Conventions: wavelengths in nm and wavenumbers in cm⁻¹ are **vacuum** values unless the name
says ``air``. Temperature in °C, pressure in Pa, relative humidity in percent (0-100, over
liquid water at or above 0 °C and over ice below), CO₂ mole fraction in µmol/mol (ppm).

Two equations are offered, both as written out in the NIST documentation [1]_ Appendix A:

* ``"ciddor"`` - Ciddor 1996 [2]_, the default: valid 300-1700 nm, -40-100 °C, 10-140 kPa,
  0-100 % RH, 0-2000 ppm CO₂.
* ``"edlen"`` - Edlén's equation as updated by Birch & Downs [3]_ [4]_ with the NIST water
  vapour term [1]_. Verified for the visible only; the same input ranges are accepted.

Public API
----------
ciddor_index, edlen_index, air_index
    n as a function of vacuum wavelength and air conditions.
saturation_vapour_pressure_pa
    saturation vapour pressure of water (IAPWS), over ice below 0 °C.
AirConditions
    frozen air state with standard uncertainties.
index_uncertainty, index_ratio, index_ratio_uncertainty
    JCGM 100 propagation of the conditions' uncertainties.
vacuum_to_air_nm, air_to_vacuum_nm
    wavelength in the given air and back.
vacuum_to_standard_air_nm, standard_air_to_vacuum_nm
    the IAU "standard air" convention of line tables (Morton 2000 [5]_).
correct_dispersion
    vacuum wavenumber of a source measured against reference fringes in air.

References
----------
.. [1] J. A. Stone and J. H. Zimmerman, "Index of Refraction of Air", NIST Engineering
   Metrology Toolbox, Refractive Index of Air Calculator, documentation, Appendix A,
   https://emtoolbox.nist.gov/Wavelength/Documentation.asp
.. [2] P. E. Ciddor, "Refractive index of air: new equations for the visible and near
   infrared", Appl. Opt. 35, 1566-1573 (1996).
.. [3] K. P. Birch and M. J. Downs, "An updated Edlén equation for the refractive index of
   air", Metrologia 30, 155-162 (1993).
.. [4] K. P. Birch and M. J. Downs, "Correction to the updated Edlén equation for the
   refractive index of air", Metrologia 31, 315-316 (1994).
.. [5] D. C. Morton, "Atomic data for resonance absorption lines. II.", Astrophys. J. Suppl.
   130, 403-436 (2000), eq. 8.
.. [6] JCGM 100:2008, "Evaluation of measurement data - Guide to the expression of
   uncertainty in measurement", sections 5.1.2-5.1.3.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, fields
from types import MappingProxyType

import numpy as np

from ftsource._checks import float_array
from ftsource.errors import OptionError

__all__ = [
    "MODELS",
    "WAVELENGTH_RANGE_NM",
    "EDLEN_VERIFIED_RANGE_NM",
    "MODEL_STANDARD_UNCERTAINTY",
    "UNMEASURED_UNCERTAINTY",
    "MEASURED_UNCERTAINTY",
    "AirConditions",
    "saturation_vapour_pressure_pa",
    "ciddor_index",
    "edlen_index",
    "air_index",
    "index_uncertainty",
    "index_ratio",
    "index_ratio_uncertainty",
    "vacuum_to_air_nm",
    "air_to_vacuum_nm",
    "vacuum_to_standard_air_nm",
    "standard_air_to_vacuum_nm",
    "correct_dispersion",
]

MODELS = ("ciddor", "edlen")
"""Names accepted by ``model=``."""

WAVELENGTH_RANGE_NM = (300.0, 1700.0)
"""Vacuum wavelengths (nm) where the equations are evaluated: Ciddor's validity range [2]_.
Callers that extrapolate beyond it (the spectrum axis) must say so for any reported line."""

EDLEN_VERIFIED_RANGE_NM = (380.0, 780.0)
"""The visible (CIE convention, common practice), where the modified Edlén equation is
verified here against Ciddor (within 2×10⁻⁸, ``tests/test_air.py``); prefer ``"ciddor"``
beyond."""

MODEL_STANDARD_UNCERTAINTY = MappingProxyType({"ciddor": 1.0e-8, "edlen": 1.0e-8})
"""Standard uncertainty of the equation itself near ambient conditions (from memory: the
NIST documentation (Stone & Zimmerman, section VI) and Ciddor 1996 put the equations'
expanded uncertainty at a few parts in 10⁸, about 2×10⁻⁸ at k = 2, near 20 °C and 101 kPa;
larger far from there)."""

UNMEASURED_UNCERTAINTY = MappingProxyType(
    {"temperature_c": 2.0, "pressure_pa": 2000.0, "humidity_percent": 20.0, "co2_ppm": 150.0}
)
"""Standard uncertainties used when the user gives no value (a nominal laboratory at sea
level: 20 ± 2 °C, 101.3 ± 2 kPa, 50 ± 20 % RH, 450 ± 150 ppm CO₂; common practice). The
pressure figure covers sea-level weather only: pressure falls by about 1.2 kPa per 100 m of
altitude, so a laboratory above ~150 m must give its pressure."""

MEASURED_UNCERTAINTY = MappingProxyType(
    {"temperature_c": 0.3, "pressure_pa": 120.0, "humidity_percent": 3.0, "co2_ppm": 30.0}
)
"""Standard uncertainties used when the user gives a value without its uncertainty: ordinary
calibrated sensors of ±0.5 K, ±2 hPa, ±5 % RH and ±50 ppm, read as rectangular half-widths
a with u = a/√3 (JCGM 100 4.3.7; sensor classes common practice)."""

_RANGES = {
    "wavelength_vac_nm": (*WAVELENGTH_RANGE_NM, "nm"),
    "temperature_c": (-40.0, 100.0, "°C"),
    "pressure_pa": (10.0e3, 140.0e3, "Pa"),
    "humidity_percent": (0.0, 100.0, "%"),
    "co2_ppm": (0.0, 2000.0, "ppm"),
}
STANDARD_AIR_RANGE_NM = (200.0, 2000.0)


def _checked(name, value, lo=None, hi=None, unit=None, what="the refractive-index equations"):
    if lo is None:
        lo, hi, unit = _RANGES[name]
    a = float_array(name, value)
    bad = ~((a >= lo) & (a <= hi))
    if np.any(bad):
        v = a[bad].flat[0] if a.ndim else float(a)
        raise OptionError(
            f"{name} = {v:g} {unit} is outside the range {lo:g} to {hi:g} {unit} of {what}"
        )
    return a


def _out(a):
    a = np.asarray(a, dtype=float)
    return float(a) if a.ndim == 0 else a


def _model(model):
    if model not in MODELS:
        raise OptionError(f"model = {model!r} is not known; use one of {', '.join(MODELS)}")
    return model


# --- kernels (floats/arrays in, no checks) -------------------------------------------------

def _svp(t):
    """Saturation vapour pressure in Pa: IAPWS over water at t ≥ 0 °C, else over ice (NIST A-I)."""
    t = np.asarray(t, dtype=float)
    T = t + 273.15
    k = (1.16705214528e03, -7.24213167032e05, -1.70738469401e01, 1.20208247025e04,
         -3.23255503223e06, 1.49151086135e01, -4.82326573616e03, 4.05113405421e05,
         -2.38555575678e-01, 6.50175348448e02)
    om = T + k[8] / (T - k[9])
    a = om**2 + k[0] * om + k[1]
    b = k[2] * om**2 + k[3] * om + k[4]
    c = k[5] * om**2 + k[6] * om + k[7]
    water = 1.0e6 * (2.0 * c / (-b + np.sqrt(b**2 - 4.0 * a * c))) ** 4
    theta = T / 273.16
    ice = 611.657 * np.exp(-13.928169 * (1 - theta**-1.5) + 34.7078238 * (1 - theta**-1.25))
    return np.where(t >= 0.0, water, ice)


def _mole_fraction(t, p, rh):
    """Water-vapour mole fraction x_v = f·(RH/100)·p_sv/p, enhancement factor f (NIST A-II)."""
    f = 1.00062 + 3.14e-8 * p + 5.6e-7 * t**2
    return f * (rh / 100.0) * _svp(t) / p


def _ciddor(wl_nm, t, p, rh, co2):
    """Ciddor 1996 phase index in the form of NIST Appendix A-III."""
    s = (1.0e3 / wl_nm) ** 2  # (vacuum wavenumber in µm⁻¹)²
    T = t + 273.15
    xv = _mole_fraction(t, p, rh)
    r_as = 1e-8 * (5792105.0 / (238.0185 - s) + 167917.0 / (57.362 - s))
    r_vs = 1.022e-8 * (295.235 + 2.6422 * s - 0.032380 * s**2 + 0.004028 * s**3)
    m_a = 0.0289635 + 1.2011e-8 * (co2 - 400.0)
    r_axs = r_as * (1.0 + 5.34e-7 * (co2 - 450.0))
    pt = p / T
    z = (1.0 - pt * (1.58123e-6 - 2.9331e-8 * t + 1.1043e-10 * t**2
                     + (5.707e-6 - 2.051e-8 * t) * xv + (1.9898e-4 - 2.376e-6 * t) * xv**2)
         + pt**2 * (1.83e-11 - 0.765e-8 * xv**2))  # BIPM 1981/91 compressibility
    gas = 8.314472
    rho_axs = 101325.0 * m_a / (0.9995922115 * gas * 288.15)
    rho_v = xv * p * 0.018015 / (z * gas * T)
    rho_a = (1.0 - xv) * p * m_a / (z * gas * T)
    return 1.0 + (rho_a / rho_axs) * r_axs + (rho_v / 0.00985938) * r_vs


def _edlen(wl_nm, t, p, rh, co2):
    """Birch & Downs updated Edlén with the NIST water term, NIST Appendix A-IV."""
    s = (1.0e3 / wl_nm) ** 2
    ns1 = 1e-8 * (8342.54 + 2406147.0 / (130.0 - s) + 15998.0 / (38.9 - s))
    ns1 = ns1 * (1.0 + 5.34e-7 * (co2 - 450.0))  # CO₂ scaling as in Ciddor 1996
    x = (1.0 + 1e-8 * (0.601 - 0.00972 * t) * p) / (1.0 + 0.003661 * t)
    pv = (rh / 100.0) * _svp(t)
    return 1.0 + p * ns1 * x / 96095.43 - 1e-10 * (292.75 / (t + 273.15)) * (
        3.7345 - 0.0401 * s) * pv


_KERNELS = {"ciddor": _ciddor, "edlen": _edlen}


def _checked_inputs(wavelength_vac_nm, temperature_c, pressure_pa, humidity_percent, co2_ppm):
    args = [
        _checked(name, value)
        for name, value in (
            ("wavelength_vac_nm", wavelength_vac_nm), ("temperature_c", temperature_c),
            ("pressure_pa", pressure_pa), ("humidity_percent", humidity_percent),
            ("co2_ppm", co2_ppm),
        )
    ]
    _, t, p, rh, _ = args
    pv = (rh / 100.0) * _svp(t)
    if np.any(pv >= p):
        raise OptionError(
            f"a relative humidity (humidity_percent) of {np.max(rh):g} % at {np.max(t):g} °C "
            f"gives a water vapour pressure of {np.max(pv):g} Pa, not below the air pressure "
            f"(pressure_pa) of {np.min(p):g} Pa; lower the humidity or the temperature, or "
            "check the pressure"
        )
    return args


# --- public functions ----------------------------------------------------------------------

def saturation_vapour_pressure_pa(temperature_c):
    """Saturation vapour pressure of water, over liquid water at or above 0 °C, over ice below.

    Parameters
    ----------
    temperature_c : float or array_like, °C
        Air temperature, -40 to 100 °C.

    Returns
    -------
    float or ndarray, Pa

    Notes
    -----
    Over water, the IAPWS saturation-pressure equation in the form of NIST Appendix A-I [1]_;
    over ice, p = 611.657 Pa · exp(A₁(1 − θ^-1.5) + A₂(1 − θ^-1.25)), θ = T/273.16 K.

    References
    ----------
    .. [1] Stone & Zimmerman, NIST Refractive Index of Air Calculator, Appendix A-I.
    """
    return _out(_svp(_checked("temperature_c", temperature_c)))


def ciddor_index(wavelength_vac_nm, temperature_c, pressure_pa, humidity_percent,
                 co2_ppm=450.0):
    """Phase refractive index of moist air by the Ciddor equation.

    Parameters
    ----------
    wavelength_vac_nm : float or array_like, nm
        Vacuum wavelength, 300-1700 nm.
    temperature_c : float or array_like, °C
        Air temperature, -40 to 100 °C.
    pressure_pa : float or array_like, Pa
        Total air pressure, 10-140 kPa.
    humidity_percent : float or array_like, %
        Relative humidity 0-100 % (over water at or above 0 °C, over ice below).
    co2_ppm : float or array_like, µmol/mol
        CO₂ mole fraction, 0-2000 ppm.

    Returns
    -------
    float or ndarray
        n (dimensionless); inputs broadcast together.

    Raises
    ------
    OptionError
        An input is outside its range, or the vapour pressure reaches the total pressure.

    Notes
    -----
    With S = (1 µm/λ)², the standard refractivities of dry air (15 °C, 101 325 Pa, 450 ppm)
    and of water vapour (20 °C, 1333 Pa) are scaled by the ratios of the actual densities of
    the dry-air and water components to those standard densities; densities come from the
    BIPM-1981/91 equation of state (compressibility Z), the vapour mole fraction from the IAPWS
    saturation pressure and the enhancement factor f = 1.00062 + 3.14×10⁻⁸ p + 5.6×10⁻⁷ t²,
    all as in NIST Appendix A [1]_. Uncertainty of the equation: `MODEL_STANDARD_UNCERTAINTY`.

    References
    ----------
    .. [1] J. A. Stone and J. H. Zimmerman, NIST Refractive Index of Air Calculator,
       documentation, Appendix A-I to A-III.
    .. [2] P. E. Ciddor, Appl. Opt. 35, 1566-1573 (1996).
    """
    return _out(_ciddor(*_checked_inputs(wavelength_vac_nm, temperature_c, pressure_pa,
                                         humidity_percent, co2_ppm)))


def edlen_index(wavelength_vac_nm, temperature_c, pressure_pa, humidity_percent,
                co2_ppm=450.0):
    """Phase refractive index of moist air by the modified Edlén equation.

    Same parameters, ranges, return and errors as :func:`ciddor_index`. The equation is
    verified for the **visible only**; prefer :func:`ciddor_index` elsewhere.

    Notes
    -----
    Standard dry air (15 °C, 450 ppm): (n_s − 1)·10⁸ = 8342.54 + 2406147/(130 − S) +
    15998/(38.9 − S), S = (1 µm/λ)² [3]_ [4]_; pressure and temperature scaling
    (n_s − 1)·p·[1 + 10⁻⁸(0.601 − 0.00972 t)p] / [96095.43 (1 + 0.003661 t)]; water vapour
    subtracts 10⁻¹⁰ (292.75/T)(3.7345 − 0.0401 S) p_v with p_v = (RH/100)·p_sv [1]_. CO₂ other
    than 450 ppm scales (n_s − 1) by 1 + 5.34×10⁻⁷ (x_CO₂ − 450), the factor of Ciddor [2]_.

    References
    ----------
    .. [1] J. A. Stone and J. H. Zimmerman, NIST Refractive Index of Air Calculator,
       documentation, Appendix A-IV.
    .. [2] P. E. Ciddor, Appl. Opt. 35, 1566-1573 (1996).
    .. [3] K. P. Birch and M. J. Downs, Metrologia 30, 155-162 (1993).
    .. [4] K. P. Birch and M. J. Downs, Metrologia 31, 315-316 (1994).
    """
    return _out(_edlen(*_checked_inputs(wavelength_vac_nm, temperature_c, pressure_pa,
                                        humidity_percent, co2_ppm)))


@dataclass(frozen=True)
class AirConditions:
    """State of the air in the interferometer, with standard uncertainties.

    The defaults describe a user who gave no conditions: 20 °C, 101 325 Pa, 50 % RH, 450 ppm
    CO₂ with the wide :data:`UNMEASURED_UNCERTAINTY`. Use :meth:`measured` (or
    :meth:`from_quantities`) for values read from sensors.

    Attributes
    ----------
    temperature_c, pressure_pa, humidity_percent, co2_ppm : float
        °C, Pa, % RH, µmol/mol; ranges as in :func:`ciddor_index`.
    u_temperature_c, u_pressure_pa, u_humidity_percent, u_co2_ppm : float
        Standard uncertainties (k = 1) in the same units, ≥ 0.

    References
    ----------
    .. [1] JCGM 100:2008 (GUM), 4.3.7 (rectangular distributions).
    """

    temperature_c: float = 20.0
    pressure_pa: float = 101325.0
    humidity_percent: float = 50.0
    co2_ppm: float = 450.0
    u_temperature_c: float = UNMEASURED_UNCERTAINTY["temperature_c"]
    u_pressure_pa: float = UNMEASURED_UNCERTAINTY["pressure_pa"]
    u_humidity_percent: float = UNMEASURED_UNCERTAINTY["humidity_percent"]
    u_co2_ppm: float = UNMEASURED_UNCERTAINTY["co2_ppm"]

    def __post_init__(self):
        for f in fields(self):
            value = getattr(self, f.name)
            if f.name.startswith("u_"):
                v = _checked(f.name, value, 0.0, math.inf, "", "a standard uncertainty")
            else:
                v = _checked(f.name, value)
            if v.ndim:
                raise OptionError(f"{f.name} must be a single number, got an array")
            object.__setattr__(self, f.name, float(v))
        _checked_inputs(1000.0, self.temperature_c, self.pressure_pa,
                        self.humidity_percent, self.co2_ppm)

    @classmethod
    def measured(cls, temperature_c, pressure_pa, humidity_percent, co2_ppm=450.0, *,
                 u_temperature_c=MEASURED_UNCERTAINTY["temperature_c"],
                 u_pressure_pa=MEASURED_UNCERTAINTY["pressure_pa"],
                 u_humidity_percent=MEASURED_UNCERTAINTY["humidity_percent"],
                 u_co2_ppm=UNMEASURED_UNCERTAINTY["co2_ppm"]):
        """Conditions read from sensors; uncertainties default to :data:`MEASURED_UNCERTAINTY`
        (CO₂ stays at the unmeasured value unless given).

        References
        ----------
        .. [1] JCGM 100:2008 (GUM), 4.3.7.
        """
        return cls(temperature_c, pressure_pa, humidity_percent, co2_ppm, u_temperature_c,
                   u_pressure_pa, u_humidity_percent, u_co2_ppm)

    @classmethod
    def from_quantities(cls, temperature=None, pressure=None, humidity=None, co2=None, *,
                        u_temperature=None, u_pressure=None, u_humidity=None, u_co2=None):
        """Build from astropy Quantities (the boundary of the package).

        A value that is given gets :data:`MEASURED_UNCERTAINTY` unless its uncertainty is
        given; a value left out takes the nominal default with :data:`UNMEASURED_UNCERTAINTY`.

        Parameters
        ----------
        temperature : Quantity, temperature (°C or K)
        pressure : Quantity, pressure
        humidity : Quantity, dimensionless (e.g. ``50 * u.percent``)
        co2 : Quantity, dimensionless mole fraction (e.g. ``450e-6 * u.one``)
        u_temperature : Quantity, K or °C (a temperature difference)
        u_pressure, u_humidity, u_co2 : Quantity, as their values

        References
        ----------
        .. [1] JCGM 100:2008 (GUM), 4.3.7.
        """
        import astropy.units as u

        def convert(name, q, unit, scale=1.0, equivalencies=None):
            if q is None:
                return None
            if not isinstance(q, u.Quantity):
                raise OptionError(f"{name} must be an astropy Quantity with units, got {q!r}")
            try:
                return float(q.to_value(unit, equivalencies=equivalencies or [])) * scale
            except (u.UnitsError, TypeError, ValueError):
                raise OptionError(f"{name} = {q} cannot be expressed in {unit}") from None

        def convert_dt(name, q):  # a temperature difference: 1 °C == 1 K
            if isinstance(q, u.Quantity) and q.unit == u.deg_C:
                q = q.value * u.K
            return convert(name, q, u.K)

        given = {
            "temperature_c": convert("temperature", temperature, u.deg_C,
                                     equivalencies=u.temperature()),
            "pressure_pa": convert("pressure", pressure, u.Pa),
            "humidity_percent": convert("humidity", humidity, u.percent),
            "co2_ppm": convert("co2", co2, u.one, 1e6),
        }
        u_given = {
            "temperature_c": convert_dt("u_temperature", u_temperature),
            "pressure_pa": convert("u_pressure", u_pressure, u.Pa),
            "humidity_percent": convert("u_humidity", u_humidity, u.percent),
            "co2_ppm": convert("u_co2", u_co2, u.one, 1e6),
        }
        nominal = cls()
        kwargs = {}
        for name, value in given.items():
            table = UNMEASURED_UNCERTAINTY if value is None else MEASURED_UNCERTAINTY
            kwargs[name] = getattr(nominal, name) if value is None else value
            uv = u_given[name]
            kwargs["u_" + name] = table[name] if uv is None else uv
        return cls(**kwargs)


def _conditions(conditions):
    if conditions is None:
        return AirConditions()
    if not isinstance(conditions, AirConditions):
        raise OptionError(f"conditions must be an AirConditions or None, got {conditions!r}")
    return conditions


def air_index(wavelength_vac_nm, conditions=None, *, model="ciddor"):
    """Refractive index for an :class:`AirConditions` (``None``: the nominal laboratory).

    Parameters
    ----------
    wavelength_vac_nm : float or array_like, nm
    conditions : AirConditions or None
    model : {"ciddor", "edlen"}

    Returns
    -------
    float or ndarray

    References
    ----------
    .. [1] P. E. Ciddor, Appl. Opt. 35, 1566-1573 (1996); Birch & Downs, Metrologia 30,
       155-162 (1993) and 31, 315-316 (1994); via NIST Appendix A (Stone & Zimmerman).
    """
    c = _conditions(conditions)
    fn = ciddor_index if _model(model) == "ciddor" else edlen_index
    return fn(wavelength_vac_nm, c.temperature_c, c.pressure_pa, c.humidity_percent, c.co2_ppm)


_STEPS = {"temperature_c": 0.01, "pressure_pa": 10.0, "humidity_percent": 0.1, "co2_ppm": 1.0}


def _propagate(f, c):
    """√Σ(∂f/∂x_i · u_i)² with central differences of f(t, p, rh, co2) (uncorrelated inputs)."""
    names = ("temperature_c", "pressure_pa", "humidity_percent", "co2_ppm")
    x0 = [getattr(c, n) for n in names]
    total = 0.0
    for i, name in enumerate(names):
        h = _STEPS[name]
        up, dn = list(x0), list(x0)
        up[i] += h
        dn[i] -= h
        total = total + ((f(*up) - f(*dn)) / (2 * h) * getattr(c, "u_" + name)) ** 2
    return np.sqrt(total)


def index_uncertainty(wavelength_vac_nm, conditions, model="ciddor"):
    """Standard uncertainty of n from the conditions' uncertainties and the equation's own.

    Parameters
    ----------
    wavelength_vac_nm : float or array_like, nm
    conditions : AirConditions
    model : {"ciddor", "edlen"}

    Returns
    -------
    float or ndarray
        u(n), dimensionless, k = 1.

    Notes
    -----
    u²(n) = Σᵢ (∂n/∂xᵢ)² u²(xᵢ) + u²_model over x = (t, p, RH, x_CO₂), taken as uncorrelated
    (JCGM 100 eq. 10 [1]_); the partial derivatives are central differences (steps 0.01 K,
    10 Pa, 0.1 % RH, 1 ppm), u_model is :data:`MODEL_STANDARD_UNCERTAINTY`. Near 633 nm,
    ∂n/∂t ≈ −0.93×10⁻⁶ K⁻¹ and ∂n/∂p ≈ 2.7×10⁻⁹ Pa⁻¹, so the conditions usually dominate.

    References
    ----------
    .. [1] JCGM 100:2008 (GUM), 5.1.2.
    .. [2] Stone & Zimmerman, NIST Refractive Index of Air Calculator, section VI.
    """
    c = _conditions(conditions)
    kernel = _KERNELS[_model(model)]
    wl = _checked("wavelength_vac_nm", wavelength_vac_nm)
    air_index(wl, c, model=model)  # range checks
    u_c = _propagate(lambda t, p, rh, co2: kernel(wl, t, p, rh, co2), c)
    return _out(np.hypot(u_c, MODEL_STANDARD_UNCERTAINTY[model]))


def index_ratio(reference_wavelength_vac_nm, wavelength_vac_nm, conditions, model="ciddor"):
    """n(λ_ref)/n(λ) in the same air.

    Returns
    -------
    float or ndarray

    References
    ----------
    .. [1] P. E. Ciddor, Appl. Opt. 35, 1566-1573 (1996).
    """
    n_ref = air_index(reference_wavelength_vac_nm, conditions, model=model)
    return _out(n_ref / air_index(wavelength_vac_nm, conditions, model=model))


def index_ratio_uncertainty(reference_wavelength_vac_nm, wavelength_vac_nm, conditions,
                            model="ciddor"):
    """Standard uncertainty of n(λ_ref)/n(λ) from the conditions' uncertainties.

    Parameters
    ----------
    reference_wavelength_vac_nm, wavelength_vac_nm : float or array_like, nm
    conditions : AirConditions
    model : {"ciddor", "edlen"}

    Returns
    -------
    float or ndarray
        u(n_ref/n), k = 1.

    Notes
    -----
    Both indices share t, p, RH and CO₂, so the ratio is propagated directly,
    u² = Σᵢ (∂r/∂xᵢ)² u²(xᵢ) with r − 1 = (n_ref − n)/n (JCGM 100 eq. 10 [1]_). Because
    (n − 1) is nearly the product of a density factor and a dispersion factor, r − 1 scales
    with the density: u(r) ≈ |r − 1|·u(ρ)/ρ, about 100 times smaller than u(n). The
    equation's own uncertainty is *not* included: it is mostly a common scale error of
    n − 1 at both wavelengths that cancels in the ratio; what remains is the error of the
    dispersion shape, which is not quantified here.

    References
    ----------
    .. [1] JCGM 100:2008 (GUM), 5.1.2.
    """
    c = _conditions(conditions)
    kernel = _KERNELS[_model(model)]
    wl_ref = _checked("wavelength_vac_nm", reference_wavelength_vac_nm)
    wl = _checked("wavelength_vac_nm", wavelength_vac_nm)
    index_ratio(wl_ref, wl, c, model)  # range checks

    def ratio_minus_one(t, p, rh, co2):
        n = kernel(wl, t, p, rh, co2)
        return (kernel(wl_ref, t, p, rh, co2) - n) / n

    return _out(_propagate(ratio_minus_one, c))


def vacuum_to_air_nm(wl_vac_nm, conditions=None, model="ciddor"):
    """Wavelength in the given air, λ_air = λ_vac / n(λ_vac).

    Parameters
    ----------
    wl_vac_nm : float or array_like, nm (vacuum)
    conditions : AirConditions or None
        ``None`` is the nominal laboratory of :class:`AirConditions` (20 °C, 101 325 Pa,
        50 % RH), **not** standard air: for line tables use
        :func:`vacuum_to_standard_air_nm`.
    model : {"ciddor", "edlen"}

    Returns
    -------
    float or ndarray, nm (air)

    References
    ----------
    .. [1] Stone & Zimmerman, NIST Refractive Index of Air Calculator, eq. 1.
    """
    wl = float_array("wl_vac_nm", wl_vac_nm)
    return _out(wl / air_index(wl, conditions, model=model))


def _invert(wl_air, index, tol=1e-14):
    wl = wl_air
    for _ in range(20):
        new = wl_air * index(wl)
        if np.all(np.abs(new - wl) <= tol * np.abs(wl_air)):
            return new
        wl = new
    return new  # the map contracts by ~1e-8 per step: never reached in practice


def air_to_vacuum_nm(wl_air_nm, conditions=None, model="ciddor"):
    """Vacuum wavelength from a wavelength in the given air, solving λ_vac = λ_air·n(λ_vac).

    Parameters and conventions as :func:`vacuum_to_air_nm`.

    Returns
    -------
    float or ndarray, nm (vacuum)

    Notes
    -----
    Fixed-point iteration from λ_vac = λ_air; each step shrinks the error by
    λ·|dn/dλ| ≈ 10⁻⁸, so it converges to 1e-14 relative in two or three steps.

    References
    ----------
    .. [1] Stone & Zimmerman, NIST Refractive Index of Air Calculator, eq. 1.
    """
    wl_air = float_array("wl_air_nm", wl_air_nm)
    c = _conditions(conditions)
    return _out(_invert(wl_air, lambda wl: air_index(wl, c, model=model)))


def standard_air_index(wl_vac_nm):
    """Refractive index of IAU standard air (Morton 2000, eq. 8; see
    :func:`vacuum_to_standard_air_nm`) at vacuum wavelength(s) in nm, unchecked: the one
    place the formula is written. It holds for :data:`STANDARD_AIR_RANGE_NM`.

    References
    ----------
    .. [1] D. C. Morton, Astrophys. J. Suppl. 130, 403-436 (2000), eq. 8.
    """
    s = (1.0e3 / wl_vac_nm) ** 2
    return 1.0 + 8.34254e-5 + 2.406147e-2 / (130.0 - s) + 1.5998e-4 / (38.9 - s)


def vacuum_to_standard_air_nm(wl_vac_nm):
    """Vacuum wavelength to the "standard air" wavelength of line tables (IAU convention).

    Parameters
    ----------
    wl_vac_nm : float or array_like, nm, 200-2000 nm

    Returns
    -------
    float or ndarray, nm (standard air)

    Notes
    -----
    n − 1 = 8.34254×10⁻⁵ + 2.406147×10⁻²/(130 − s²) + 1.5998×10⁻⁴/(38.9 − s²), s the vacuum
    wavenumber in µm⁻¹ (Morton 2000 eq. 8 [1]_, from Birch & Downs [2]_): dry air, 15 °C,
    101 325 Pa, 450 ppm CO₂. Tables (e.g. NIST's) quote air wavelengths above 200 nm this way.
    Above ~1 µm it is an extrapolation of visible data; it stays within 10⁻⁸ of Ciddor's
    standard air up to 1.7 µm (``tests/test_air.py``).

    References
    ----------
    .. [1] D. C. Morton, Astrophys. J. Suppl. 130, 403-436 (2000), eq. 8.
    .. [2] K. P. Birch and M. J. Downs, Metrologia 31, 315-316 (1994).
    """
    lo, hi = STANDARD_AIR_RANGE_NM
    wl = _checked("wl_vac_nm", wl_vac_nm, lo, hi, "nm", "the standard-air formula")
    return _out(wl / standard_air_index(wl))


def standard_air_to_vacuum_nm(wl_air_nm):
    """Standard-air wavelength (line tables, IAU convention) to vacuum wavelength.

    Inverse of :func:`vacuum_to_standard_air_nm` by fixed-point iteration.

    Parameters
    ----------
    wl_air_nm : float or array_like, nm, 200-2000 nm

    Returns
    -------
    float or ndarray, nm (vacuum)

    References
    ----------
    .. [1] D. C. Morton, Astrophys. J. Suppl. 130, 403-436 (2000), eq. 8.
    """
    lo, hi = STANDARD_AIR_RANGE_NM
    wl = _checked("wl_air_nm", wl_air_nm, lo, hi, "nm", "the standard-air formula")
    return _out(_invert(wl, standard_air_index))


def correct_dispersion(sigma_apparent_per_cm, reference_wavelength_vac_nm, conditions,
                       model="ciddor"):
    """Vacuum wavenumber of the source from its apparent wavenumber on a reference OPD scale.

    Parameters
    ----------
    sigma_apparent_per_cm : float or array_like, cm⁻¹
        Wavenumber measured on the OPD scale x = N·λ_ref (N reference fringes counted, λ_ref
        the reference's vacuum wavelength), both beams in the same air.
    reference_wavelength_vac_nm : float or None, nm
        Vacuum wavelength of the reference laser. ``None`` means the OPD scale is geometric
        (x = 2 × mirror position from an encoder, or an assumed mirror speed), i.e. n_ref = 1.
    conditions : AirConditions or None
    model : {"ciddor", "edlen"}

    Returns
    -------
    float or ndarray, cm⁻¹ (vacuum)

    Notes
    -----
    For a geometric path difference d in air the reference passes N = n_ref·d/λ_ref fringes,
    so the scale reads x = N·λ_ref = n_ref·d. The source's phase is 2π σ_x n_x d =
    2π (σ_x n_x/n_ref) x, so the transform peaks at σ_app = σ_x n_x/n_ref and

        σ_x = σ_app · n(λ_ref) / n(λ_x),   λ_x = 1/σ_x,

    solved by fixed-point iteration from σ_x = σ_app (λ|dn/dλ| ≈ 10⁻⁸ per step). Ignoring
    the correction makes the reported wavelength wrong by n_ref/n_x − 1: about −1.65×10⁻⁶ at
    532 nm and +2.5×10⁻⁶ at 1064 nm against a 633 nm reference in laboratory air. If the scale
    were built from the reference's *air* wavelength, or is geometric
    (``reference_wavelength_vac_nm=None``), the factor is 1/n(λ_x).

    References
    ----------
    .. [1] P. E. Ciddor, Appl. Opt. 35, 1566-1573 (1996).
    .. [2] Stone & Zimmerman, NIST Refractive Index of Air Calculator, eq. 1.
    """
    lo, hi = 1e7 / _RANGES["wavelength_vac_nm"][1], 1e7 / _RANGES["wavelength_vac_nm"][0]
    sigma_app = _checked("sigma_apparent_per_cm", sigma_apparent_per_cm, lo, hi, "cm⁻¹")
    c = _conditions(conditions)
    if reference_wavelength_vac_nm is None:
        n_ref = 1.0
    else:
        n_ref = air_index(reference_wavelength_vac_nm, c, model=model)
    sigma = sigma_app
    for _ in range(20):
        new = sigma_app * n_ref / air_index(1e7 / sigma, c, model=model)
        if np.all(np.abs(new - sigma) <= 1e-14 * sigma_app):
            break
        sigma = new
    return _out(new)
