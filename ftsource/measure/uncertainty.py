"""The uncertainty budget of a result, after JCGM 100:2008 (the GUM).

A :class:`Budget` is a list of :class:`Component` s, each a standard uncertainty already
expressed in the measurand's unit (that is, multiplied by its sensitivity coefficient
``c_i = ∂y/∂x_i``), with its degrees of freedom and its type of evaluation:

- **Type A**: from the statistics of repeated observations or of a fit (finite ``dof``);
- **Type B**: by other means — a certificate, a specification, a bound (``dof`` infinite
  unless the reliability of the bound itself is judged, GUM G.4.2).

The combined standard uncertainty is the root sum of squares of the components (GUM 5.1.2,
law of propagation of uncertainty for independent inputs; correlations only when given), the
effective degrees of freedom come from the Welch–Satterthwaite formula (GUM G.4.1, G.6.4) and
the expanded uncertainty is ``U = k·u_c``.

Coverage factor rule
--------------------
GUM G.6.2/G.6.4: take ``k_p = t_p(ν_eff)``, the two-sided Student-t factor for coverage ``p``
at ``ν_eff`` degrees of freedom. For large ν the conventional factor for about 95 % is
``k = 2`` (GUM 6.3.3, from memory; NIST/SEMATECH e-Handbook §2.5.7: "for large degrees of
freedom, k = 2 approximates 95 % coverage"). Both are honoured without an arbitrary
switch-over:

    k = max(k_∞, t_{(1+p)/2}(⌊ν_eff⌋)),   k_∞ = 2 for p = 0.95, else the normal quantile.

For p = 0.95 the t factor exceeds 2 up to ν ≈ 60 (t_0.975(60) = 2.0003, t_0.975(61) = 1.9996),
so ``k = t`` below that and ``k = 2`` above it; ``k`` is continuous in ν_eff. ν_eff is
truncated to the next lower integer before the t quantile is taken (GUM G.6.4 allows
truncation or interpolation; truncation is the conservative choice), but is reported
unrounded. Above ν_eff = 10⁶ (:data:`DOF_AS_INFINITE`) ν is taken as infinite: the t factor
then differs from the normal quantile by less than 3×10⁻⁶ relative for p ≤ 0.99.

References
----------
.. [1] JCGM 100:2008, *Evaluation of measurement data — Guide to the expression of
   uncertainty in measurement* (GUM 1995 with minor corrections), BIPM, clauses 4–6 and
   Annex G.
.. [2] NIST/SEMATECH e-Handbook of Statistical Methods, §2.5.7 "Standard and expanded
   uncertainties", https://www.itl.nist.gov/div898/handbook/mpc/section5/mpc57.htm
.. [3] R. T. Birge, "The calculation of errors by the method of least squares",
   Phys. Rev. 40, 207-227 (1932) (the ratio of external to internal consistency).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import NamedTuple

import numpy as np

from ftsource._checks import finite_float
from ftsource.errors import OptionError
from ftsource.interferogram.scale import CALIBRATED_QUANTITIES

__all__ = [
    "Component",
    "Budget",
    "Consistency",
    "rectangular",
    "one_sided_rectangular",
    "wavelength_budget",
    "sweep_consistency",
    "with_sweep_scatter",
    "scatter_rule",
    "DOF_AS_INFINITE",
    "OPD_SCALES",
]

_KINDS = ("A", "B")
#: Above this many effective degrees of freedom the Student-t factor is taken as the normal
#: one: t_0.975(10⁶) − z_0.975 = 2.4×10⁻⁶ (scipy.stats), far below any stated digit, and
#: scipy's t quantile refuses a floor(ν) too large for its integer conversion (e.g. 10²⁶).
DOF_AS_INFINITE = 1e6
#: What sets the optical-path scale, and so what a calibration rescales: a reference laser's
#: fringes, a position encoder, or an assumed constant mirror speed (one list, in
#: :mod:`ftsource.interferogram.scale`).
OPD_SCALES = CALIBRATED_QUANTITIES


def _dof(name: str, value) -> float:
    try:
        v = float(value)
    except (TypeError, ValueError):
        raise OptionError(f"{name} must be a number or inf, got {value!r}") from None
    if not (v > 0) or math.isnan(v):
        raise OptionError(f"{name} = {v!r} is not allowed; degrees of freedom must be > 0 (or inf)")
    return v


@dataclass(frozen=True)
class Component:
    """One line of an uncertainty budget.

    Parameters
    ----------
    name : str
        Short name of the influence (``"line fit"``, ``"reference wavelength"``).
    u : float
        Standard uncertainty **contributed to the measurand**, in the measurand's unit:
        ``u = |c|·u(x)`` with ``u(x)`` the standard uncertainty of the input quantity and
        ``c`` its sensitivity coefficient (GUM 5.1.3). Always ≥ 0.
    dof : float
        Degrees of freedom of ``u`` (GUM G.3 for Type A, G.4.2 for Type B); ``inf`` when
        ``u`` is taken as exactly known.
    kind : {"A", "B"}
        Type of evaluation (GUM 4.2, 4.3).
    note : str
        How the value was obtained (one sentence; goes into the result).
    sensitivity : float
        The sensitivity coefficient ``c = ∂y/∂x``, kept so that the input uncertainty
        ``u(x) = u/|c|`` (:attr:`u_input`) can be shown, and so that its sign enters given
        correlations. ``1.0`` when ``u`` was evaluated directly in the measurand's unit.

    References
    ----------
    .. [1] JCGM 100:2008, clauses 4.2, 4.3, 5.1 and G.3–G.4.
    """

    name: str
    u: float
    dof: float = math.inf
    kind: str = "B"
    note: str = ""
    sensitivity: float = 1.0

    def __post_init__(self):
        object.__setattr__(self, "u", finite_float(f"u of {self.name!r}", self.u, minimum=0.0))
        object.__setattr__(self, "dof", _dof(f"dof of {self.name!r}", self.dof))
        if self.kind not in _KINDS:
            raise OptionError(
                f"kind of {self.name!r} = {self.kind!r} is not allowed; use 'A' or 'B'"
            )
        c = finite_float(f"sensitivity of {self.name!r}", self.sensitivity)
        if c == 0:
            raise OptionError(
                f"sensitivity of {self.name!r} = 0 is not allowed; leave out a component "
                "that does not act on the measurand"
            )
        object.__setattr__(self, "sensitivity", c)

    @classmethod
    def from_input(
        cls,
        name: str,
        u_input: float,
        sensitivity: float,
        *,
        dof: float = math.inf,
        kind: str = "B",
        note: str = "",
    ) -> Component:
        """Build a component from the input's own standard uncertainty ``u(x)`` and
        ``c = ∂y/∂x``: the contribution is ``|c|·u(x)`` (GUM 5.1.3)."""
        ux = finite_float(f"u_input of {name!r}", u_input, minimum=0.0)
        c = finite_float(f"sensitivity of {name!r}", sensitivity)
        return cls(name, abs(c) * ux, dof, kind, note, c)

    @property
    def u_input(self) -> float:
        """Standard uncertainty of the input quantity itself, ``u/|c|``."""
        return self.u / abs(self.sensitivity)

    @property
    def variance(self) -> float:
        return self.u * self.u


def rectangular(half_width: float) -> float:
    """Standard uncertainty of a rectangular distribution of half-width ``a``: ``a/√3``.

    For a quantity known only to lie within ``x ± a`` with every value equally likely
    (GUM 4.3.7).

    References
    ----------
    .. [1] JCGM 100:2008, 4.3.7 and Equation (7).
    """
    a = abs(finite_float("half_width", half_width))
    return a / math.sqrt(3.0)


def one_sided_rectangular(a: float) -> tuple[float, float]:
    """Correction and standard uncertainty of an effect known to lie between 0 and ``a``.

    An effect uniformly distributed on ``[0, a]`` has mean ``a/2`` and standard deviation
    ``|a|/√12`` (a rectangle of full width ``|a|``, GUM 4.3.7 with half-width ``|a|/2``).
    ``a`` may be negative: the effect then lies on ``[a, 0]``.

    Returns
    -------
    correction : float
        ``a/2``, the expected value of the effect. **Sign convention:** if the measured value
        is ``y_meas = Y + e`` with ``e`` on ``[0, a]``, the corrected value is
        ``y_meas − a/2``, which sits at the middle of the interval of possible true values.
    u : float
        ``|a|/√12``.

    References
    ----------
    .. [1] JCGM 100:2008, 4.3.7 and 4.3.8 (asymmetric bounds: the estimate is the midpoint).
    """
    a = finite_float("a", a)
    return a / 2.0, abs(a) / math.sqrt(12.0)


def _t_quantile(q: float, dof: float) -> float:
    from scipy.stats import t  # slow import (~1 s); only when a finite dof needs it

    return float(t.ppf(q, dof))


def _normal_quantile(q: float) -> float:
    from statistics import NormalDist

    return NormalDist().inv_cdf(q)


@dataclass(frozen=True)
class Budget:
    """A JCGM 100 uncertainty budget for one measurand.

    Parameters
    ----------
    measurand : str
        What is measured (``"centre wavelength (vacuum)"``).
    unit : str
        Unit of the measurand and of every component's ``u`` (``"nm"``).
    components : tuple of Component
    coverage : float
        Coverage probability ``p`` of the expanded uncertainty (0 < p < 1), default 0.95.
    correlations : tuple of (str, str, float)
        Correlation coefficients ``r(x_i, x_j)`` between named components; none by default
        (the inputs are independent). They enter ``u_c`` through GUM Equation (16) with the
        signs of the sensitivity coefficients. The Welch–Satterthwaite formula assumes
        independent components (GUM G.4.1); with correlations it is applied to the correlated
        ``u_c`` as an approximation.

    Notes
    -----
    ``combined`` = ``u_c = √(Σ u_i² + 2 Σ_{i<j} s_i s_j r_ij u_i u_j)`` with ``s_i`` the sign
    of ``c_i`` (GUM 5.1.2, 5.2.2); ``effective_dof`` = ``u_c⁴ / Σ u_i⁴/ν_i`` (GUM G.2b), inf
    when every ν_i is infinite; ``coverage_factor`` as in the module notes; ``expanded`` =
    ``k·u_c``.

    References
    ----------
    .. [1] JCGM 100:2008, 5.1.2, 5.2.2, 6.2–6.3 and G.4–G.6.
    .. [2] NIST/SEMATECH e-Handbook of Statistical Methods, §2.5.7.
    """

    measurand: str
    unit: str
    components: tuple[Component, ...]
    coverage: float = 0.95
    correlations: tuple[tuple[str, str, float], ...] = field(default=())

    def __post_init__(self):
        comps = tuple(self.components)
        for c in comps:
            if not isinstance(c, Component):
                raise OptionError(f"components must be Component objects, got {c!r}")
        names = [c.name for c in comps]
        if len(set(names)) != len(names):
            dup = sorted({n for n in names if names.count(n) > 1})
            raise OptionError(f"component names must be unique; repeated: {dup}")
        object.__setattr__(self, "components", comps)
        p = finite_float("coverage", self.coverage)
        if not 0.0 < p < 1.0:
            raise OptionError(f"coverage = {p:g} is not allowed; it must lie in (0, 1)")
        object.__setattr__(self, "coverage", p)
        corr = []
        for item in self.correlations:
            try:
                a, b, r = item
            except (TypeError, ValueError):
                raise OptionError(
                    f"correlations must be (name, name, r) triples, got {item!r}"
                ) from None
            for n in (a, b):
                if n not in names:
                    raise OptionError(f"correlation names unknown component {n!r}; have {names}")
            if a == b:
                raise OptionError(f"correlation of {a!r} with itself is not allowed")
            r = finite_float(f"correlation r({a}, {b})", r)
            if not -1.0 <= r <= 1.0:
                raise OptionError(f"correlation r({a}, {b}) = {r:g} must lie in [-1, 1]")
            corr.append((a, b, r))
        object.__setattr__(self, "correlations", tuple(corr))

    @property
    def combined(self) -> float:
        """Combined standard uncertainty ``u_c`` in :attr:`unit` (GUM 5.1.2 / 5.2.2)."""
        var = sum(c.variance for c in self.components)
        if self.correlations:
            by = {c.name: c for c in self.components}
            for a, b, r in self.correlations:
                ca, cb = by[a], by[b]
                s = math.copysign(1.0, ca.sensitivity) * math.copysign(1.0, cb.sensitivity)
                var += 2.0 * s * r * ca.u * cb.u
        return math.sqrt(max(var, 0.0))

    @property
    def effective_dof(self) -> float:
        """Welch–Satterthwaite ``ν_eff = u_c⁴ / Σ(u_i⁴/ν_i)`` (GUM G.2b); inf when all
        components with a non-zero ``u`` have infinite degrees of freedom."""
        den = sum(c.u**4 / c.dof for c in self.components if math.isfinite(c.dof) and c.u > 0)
        uc = self.combined
        if den == 0.0 or uc == 0.0:
            return math.inf
        return uc**4 / den

    @property
    def coverage_factor(self) -> float:
        """``k = max(k_∞, t_{(1+p)/2}(⌊ν_eff⌋))``; ``k_∞ = 2`` for p = 0.95 (see module);
        ``k_∞`` alone when ν_eff is infinite or above :data:`DOF_AS_INFINITE`."""
        q = 0.5 * (1.0 + self.coverage)
        k_inf = 2.0 if math.isclose(self.coverage, 0.95) else _normal_quantile(q)
        nu = self.effective_dof
        if not math.isfinite(nu) or nu > DOF_AS_INFINITE:
            return k_inf
        nu_t = max(1.0, float(math.floor(nu)))
        return max(k_inf, _t_quantile(q, nu_t))

    @property
    def expanded(self) -> float:
        """Expanded uncertainty ``U = k·u_c`` in :attr:`unit`."""
        return self.coverage_factor * self.combined

    def to_dict(self, suffix: str | None = None) -> dict:
        """The budget as plain JSON-ready values.

        ``suffix=None`` gives generic keys (``u``, ``combined``, ``expanded``) plus a
        ``unit`` field; a suffix such as ``"_nm"`` gives ``u_nm``, ``combined_nm``,
        ``expanded_nm`` and no ``unit`` field (the result JSON's ``uncertainty`` object).
        An infinite ``dof`` or ``effective_dof`` is written as ``None`` (JSON ``null``),
        since JSON has no infinity; so is an ``effective_dof`` above
        :data:`DOF_AS_INFINITE`, which the coverage factor already takes as infinite.
        """
        sfx = "" if suffix is None else str(suffix)

        def dof(v):
            return None if not math.isfinite(v) else float(v)

        out = {
            "measurand": self.measurand,
            "components": [
                {
                    "name": c.name,
                    f"u{sfx}": float(c.u),
                    "dof": dof(c.dof),
                    "type": c.kind,
                    "note": c.note,
                }
                for c in self.components
            ],
            f"combined{sfx}": float(self.combined),
            # above DOF_AS_INFINITE the coverage factor treats ν_eff as infinite: so does the
            # JSON (a Welch–Satterthwaite figure such as 2.5e13 only says "no finite limit")
            "effective_dof": (None if self.effective_dof > DOF_AS_INFINITE
                              else dof(self.effective_dof)),
            "coverage_factor": float(self.coverage_factor),
            f"expanded{sfx}": float(self.expanded),
            "coverage": float(self.coverage),
        }
        if suffix is None:
            out["unit"] = self.unit
        return out


def wavelength_budget(
    centre_nm: float,
    *,
    u_fit_nm: float,
    dof_fit: float,
    reference_rel_u: float,
    air_ratio_rel_u: float = 0.0,
    alignment_allowance_rel: float = 0.0,
    extra: tuple[Component, ...] = (),
    coverage: float = 0.95,
    opd_scale: str = "reference",
    alignment_note: str | None = None,
) -> tuple[float, Budget]:
    """The budget of a centre (vacuum) wavelength, from mostly relative inputs.

    The measured wavelength is ``λ = λ_ref · N_ref/N_src`` (fringe counts over the same mirror
    travel), so relative uncertainties of the scale carry straight over to λ; each relative
    input ``ε`` becomes ``λ·ε`` nm (sensitivity ``c = λ``).

    Components
    ----------
    ``line fit`` (Type A, ``dof_fit``)
        The statistical uncertainty of the fitted line centre, ``u_fit_nm`` (from the fit's
        covariance, scaled by its residuals), with the fit's degrees of freedom (points used
        minus parameters fitted, GUM G.3.3).
    ``reference wavelength`` (Type B; ``opd_scale="reference"`` only)
        Relative standard uncertainty of the vacuum wavelength of the reference laser that
        sets the OPD scale (its certificate or the CIPM value of its kind), ``reference_rel_u``.
        Listed even when zero, so that a reference taken as exact is visible.
    ``refractive-index ratio`` (Type B; ``opd_scale="reference"``)
        Relative standard uncertainty of ``n(λ_src)/n(λ_ref)`` when the arms are in air: the
        reference counts path in air at its own wavelength, so the source's vacuum wavelength
        needs the index ratio (dispersion of air) — from the air model and the uncertainty of
        the measured temperature, pressure and humidity, ``air_ratio_rel_u``. Zero in vacuum.
    ``refractive index of air`` (Type B; ``opd_scale`` ``"encoder"`` or ``"constant-speed"``)
        With a geometric OPD scale (x = 2 × mirror position) the source's phase is
        2π·n(λ)·x/λ, so its vacuum wavelength needs the **absolute** index of air:
        ``air_ratio_rel_u`` is then u(n)/n (about 1 ppm per kelvin, 2.7 ppm per kPa).
    ``alignment (cosine error)`` (Type B, one-sided)
        A beam at angle θ to the mirror travel sees the path ``x·cos θ``. If the source beam
        is tilted and the reference is not, the measured wavelength is **too long** by a
        relative amount between 0 and ``a = 1/cos θ_max − 1 ≈ θ_max²/2``; if the reference is
        tilted and the source is not, it is too short. ``alignment_allowance_rel`` is that
        signed ``a``: positive for "possibly too long", negative for "possibly too short".
        The effect is uniform on ``[0, a]`` (:func:`one_sided_rectangular`): the returned
        centre is corrected by ``−a/2`` (relative), i.e. ``λ·(1 − a/2)``, to the middle of the
        interval, and the component is ``λ·|a|/√12``.
    ``alignment (cosine/Abbe error)`` (Type B, one-sided; ``opd_scale="encoder"``)
        The same allowance for an encoder: a scale tilted by θ against the beam reads the
        travel as d/cos θ (the result too long by up to ``a``; or d·cos θ, too short), and an
        Abbe error of one sign (a pitch that grows steadily along the travel, times the offset
        between the scale and the beam) is also a scale error of one sign. A two-sided Abbe
        error belongs in the encoder's scale uncertainty instead.
    ``extra``
        Further components already in nm (for example the field-of-view residual after the
        Jacquinot correction of :mod:`ftsource.physics.instrument`, or the encoder's
        scale), appended as given.

    Components whose uncertainty is zero are left out of the budget (air index in vacuum),
    except the reference wavelength of a reference-laser scale and the alignment component,
    which is named with u = 0 and a note when no allowance was given (not for an assumed
    constant speed, whose own uncertainty dwarfs it).

    Parameters
    ----------
    alignment_note : str, optional
        The note of the zero alignment component when no allowance is given (default: says
        none was given), e.g. that a rig calibration holds it.
    opd_scale : {"reference", "encoder", "constant-speed"}
        What sets the OPD scale (:data:`OPD_SCALES`). Without a reference laser there is no
        ``reference wavelength`` component (``reference_rel_u`` must be 0) and the air
        component is the absolute index, not a ratio.

    Returns
    -------
    corrected_centre_nm : float
    budget : Budget
        Measurand ``"centre wavelength (vacuum)"``, unit ``"nm"``.

    References
    ----------
    .. [1] JCGM 100:2008, 4.3.7–4.3.9 (Type B from bounds), 5.1 and G.6.
    """
    lam = finite_float("centre_nm", centre_nm, minimum=0.0, strict=True)
    u_fit = finite_float("u_fit_nm", u_fit_nm, minimum=0.0)
    nu_fit = _dof("dof_fit", dof_fit)
    ref = finite_float("reference_rel_u", reference_rel_u, minimum=0.0)
    air = finite_float("air_ratio_rel_u", air_ratio_rel_u, minimum=0.0)
    a = finite_float("alignment_allowance_rel", alignment_allowance_rel)
    if abs(a) >= 0.1:
        raise OptionError(
            f"alignment_allowance_rel = {a:g} is not allowed; it is a small relative allowance "
            "(|a| < 0.1, typically 1e-7 to 1e-4)"
        )
    if opd_scale not in OPD_SCALES:
        raise OptionError(
            f"opd_scale = {opd_scale!r} is not known; use one of {', '.join(OPD_SCALES)}"
        )
    laser = opd_scale == "reference"
    if not laser and ref > 0:
        raise OptionError(
            f"reference_rel_u = {ref:g} is not allowed with opd_scale = {opd_scale!r}: there is "
            "no reference laser; give the scale's own uncertainty as an extra component"
        )
    corr, u_align = one_sided_rectangular(a)
    corrected = lam * (1.0 - corr)
    comps = [
        Component(
            "line fit", u_fit, nu_fit, "A",
            f"statistical uncertainty of the fitted centre, {nu_fit:g} degrees of freedom",
        ),
        *_scale_components(corrected, ref, air, laser=laser),
        *_alignment_components(corrected, a, u_align, opd_scale, alignment_note),
    ]
    comps.extend(extra)
    return corrected, Budget("centre wavelength (vacuum)", "nm", tuple(comps), coverage)


def _scale_components(corrected: float, ref: float, air: float, *, laser: bool) -> list:
    """The OPD scale's components: the reference wavelength (always named for a laser scale)
    and the air's index ratio (laser scale) or absolute index (geometric scale)."""
    comps = []
    if laser:
        comps.append(Component.from_input(
            "reference wavelength", ref, corrected, kind="B",
            note=f"relative standard uncertainty {ref:.3g} of the reference vacuum wavelength",
        ))
    if air > 0 and laser:
        comps.append(Component.from_input(
            "refractive-index ratio", air, corrected, kind="B",
            note=f"relative standard uncertainty {air:.3g} of n(source)/n(reference)",
        ))
    elif air > 0:
        comps.append(Component.from_input(
            "refractive index of air", air, corrected, kind="B",
            note=(
                f"relative standard uncertainty {air:.3g} of the absolute index n(source) "
                "of air: the OPD scale is geometric, x = 2 × mirror position"
            ),
        ))
    return comps


def _alignment_components(corrected: float, a: float, u_align: float, opd_scale: str,
                          alignment_note: str | None) -> list:
    """The one-sided alignment component; named with u = 0 when no allowance was given (not
    for an assumed constant speed, whose own uncertainty dwarfs it)."""
    what = "cosine/Abbe error" if opd_scale == "encoder" else "cosine error"
    if a == 0:
        if opd_scale == "constant-speed":
            return []
        # named even when no allowance was given: the budget says what it leaves out
        return [Component(
            f"alignment ({what})", 0.0, kind="B",
            note=alignment_note or (
                "no allowance given (alignment_allowance): a reference beam or encoder tilted "
                "by θ against the mirror's travel reads every wavelength about θ²/2 short; a "
                "rig calibration (calibration='FILE') removes it"
            ),
        )]
    side = "long" if a > 0 else "short"
    return [Component.from_input(
        f"alignment ({what})", u_align, corrected, kind="B",
        note=(
            f"one-sided: measured up to {abs(a):.3g} (relative) too {side}; "
            f"corrected by half of it, u = |a|/sqrt(12)"
        ),
    )]


class Consistency(NamedTuple):
    """Outcome of :func:`sweep_consistency`."""

    chi2_per_dof: float
    p_value: float
    consistent: bool

    @property
    def birge_ratio(self) -> float:
        """``R_B = √(χ²/ν)``; about 1 when the scatter matches the stated uncertainties."""
        return math.sqrt(self.chi2_per_dof)


def sweep_consistency(values, uncertainties, *, significance: float = 0.01) -> Consistency:
    """Do per-sweep results scatter as their own uncertainties say they should?

    With per-sweep values ``x_i`` and standard uncertainties ``u_i``, the weighted mean is
    ``x̄ = Σ x_i/u_i² / Σ 1/u_i²`` and ``χ² = Σ ((x_i − x̄)/u_i)²`` has ``n − 1`` degrees of
    freedom. ``χ²/(n−1)`` is the square of the Birge ratio: about 1 when the sweeps agree
    within what each sweep's fit predicts, much larger when something the fits do not see
    (drift, a slipping reference, speed-dependent delays) moves the result between sweeps.

    This is a **check**, not a budget component: the sweep-to-sweep scatter is the same noise
    the fit uncertainty already describes, so adding it would count it twice. When the check
    fails the caller should warn (and may choose to scale the fit uncertainty by the Birge
    ratio, [2]_).

    Parameters
    ----------
    values, uncertainties : array_like
        At least two values and their standard uncertainties (> 0).
    significance : float
        The sweeps are called consistent when ``P(χ²_{n−1} ≥ χ²) ≥ significance``. Default
        0.01, so a healthy instrument is flagged in one run in a hundred.

    Returns
    -------
    Consistency
        ``(chi2_per_dof, p_value, consistent)``, also with ``birge_ratio``.

    References
    ----------
    .. [1] R. T. Birge, Phys. Rev. 40, 207-227 (1932).
    .. [2] Particle Data Group, "Introduction", scale factor S = √(χ²/(N−1)) for unweighted
       averages (from memory).
    """
    x = np.asarray(values, dtype=float).ravel()
    u = np.asarray(uncertainties, dtype=float).ravel()
    problem = (
        f"values ({x.size}) and uncertainties ({u.size}) differ in length" if x.size != u.size
        else f"at least 2 values are needed, got {x.size}" if x.size < 2
        else "values and uncertainties must be finite"
        if not np.isfinite(np.concatenate((x, u))).all()
        else f"uncertainties must be > 0, got minimum {u.min():g}" if u.min() <= 0
        else None
    )
    if problem:
        raise OptionError(f"sweep_consistency: {problem}")
    alpha = finite_float("significance", significance)
    if not 0.0 < alpha < 1.0:
        raise OptionError(f"significance = {alpha:g} is not allowed; it must lie in (0, 1)")
    from scipy.stats import chi2 as _chi2

    w = 1.0 / u**2
    mean = float(np.sum(w * x) / np.sum(w))
    chi2 = float(np.sum(((x - mean) / u) ** 2))
    nu = x.size - 1
    p = float(_chi2.sf(chi2, nu))
    return Consistency(chi2 / nu, p, bool(p >= alpha))


def with_sweep_scatter(u: float, dof: float, values) -> tuple[float, float]:
    """The one rule for sweep scatter: ``max(u, s/√n)`` with its degrees of freedom.

    ``s`` is the sample standard deviation (``ddof=1``) of the ``n`` per-sweep values of a
    figure whose co-added estimate has standard uncertainty ``u`` with ``dof`` degrees of
    freedom. The standard error of the mean of the sweeps, ``s/√n``, is a Type A evaluation
    that sees what the noise model behind ``u`` leaves out (drift, speed-dependent delays,
    mirror tilt, correlated points); the larger of the two is kept, and when the scatter wins
    its ``n − 1`` degrees of freedom go with it. Used for narrow lines' centres and for
    broadband figures alike (docs/measurements.md).

    Parameters
    ----------
    u : float
        Standard uncertainty of the co-added figure.
    dof : float
        Its degrees of freedom (inf allowed).
    values : array_like
        The figure from each sweep alone; fewer than 2 finite values leave ``u`` unchanged.

    Returns
    -------
    (float, float)
        The uncertainty and its degrees of freedom.

    References
    ----------
    .. [1] JCGM 100:2008 (GUM), §4.2.3 (experimental standard deviation of the mean).
    """
    v = np.asarray(values, dtype=float)
    v = v[np.isfinite(v)]
    if v.size < 2:
        return float(u), float(dof)
    return scatter_rule(u, dof, float(np.std(v, ddof=1) / np.sqrt(v.size)), v.size)


def scatter_rule(u: float, dof: float, standard_error: float, n: int) -> tuple[float, float]:
    """``max(u, standard_error)``: the standard error of the mean of ``n`` sweeps wins (with
    ``n − 1`` degrees of freedom) when it is the larger or ``u`` is not a number. The rule of
    :func:`with_sweep_scatter`, for callers that have the standard error already."""
    if not (float(u) >= float(standard_error)):  # also when u is NaN
        return float(standard_error), float(n - 1)
    return float(u), float(dof)
