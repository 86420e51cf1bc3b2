"""The analysis's options as a scientist writes them: keyword parameters with units.

:func:`option_fields` turns keywords such as ``reference_wavelength=632.991 * u.nm``,
``air_temperature="21 degC"`` or ``medium="air"`` into the fields of an
:class:`~ftsource.analysis.AnalysisOptions` (plain floats in the units of their names). A
quantity may be an astropy Quantity or text with its unit (parsed by
:func:`ftsource.quantity.parse_quantity`, the command line's parser); a ratio may also be a
bare fraction. Errors name the parameter as it is written here
(``reference_wavelength``); the command line spells the same names as its flags
(``--reference-wavelength``, see :func:`cli_terms`).
"""

from __future__ import annotations

import re

from ftsource._checks import quote

__all__ = ["PARAMETERS", "option_fields", "positive_value", "cli_terms"]

#: Every keyword parameter of :func:`ftsource.analyze`, with what it is.
PARAMETERS: dict[str, str] = {
    "reference_wavelength": "vacuum wavelength of the reference laser (length)",
    "reference_uncertainty": "its standard uncertainty: a ratio (ppm, %) or a length "
                             "(default 1.5 ppm only for a He-Ne's vacuum wavelength or a "
                             "bundled standard's own; required for any other laser)",
    "alignment_allowance": "cosine-error allowance, a ratio (default 0)",
    "medium": "'air' (default) or 'vacuum'",
    "air_temperature": "air temperature in the arms (temperature)",
    "air_pressure": "air pressure (pressure)",
    "air_humidity": "relative humidity (ratio, e.g. '45 %'; a bare number above 1 is "
                    "percent, a fraction is written '0.45 fraction')",
    "air_co2": "CO2 mole fraction (ratio, e.g. '420 ppm')",
    "air_temperature_uncertainty": "standard uncertainty of the air temperature",
    "air_pressure_uncertainty": "standard uncertainty of the air pressure",
    "air_humidity_uncertainty": "standard uncertainty of the humidity",
    "air_co2_uncertainty": "standard uncertainty of the CO2 fraction",
    "air_model": "'ciddor' (default) or 'edlen'",
    "encoder_scale_uncertainty": "relative standard uncertainty of an encoder's scale (ratio)",
    "sample_rate": "sample rate (frequency), when the record does not give it",
    "columns": "column mapping of a record file, e.g. 'signal=PD1,ref=PD2'",
    "mirror_speed": "assumed constant mirror speed when there is no reference (speed)",
    "apodization": "apodization name (default 'happ-genzel')",
    "phase_correction": "'auto' (default), 'mertz', 'forman' or 'magnitude'",
    "fft_planning": "'estimate' (default) or 'measure'",
    "calibration": "rig calibration: a RigCalibration or the file 'calibrate' saved",
    "response": "instrument response: a ResponseCurve or its ECSV file",
    "aperture_diameter": "field stop diameter (length; extended sources only)",
    "focal_length": "collimator focal length (length)",
    "zero_fill": "zero-filling factor of the FFT (integer ≥ 1, default 4)",
}

_AIR = ("temperature", "pressure", "humidity", "co2")
_AIR_TYPES = {"temperature": "temperature", "pressure": "pressure",
              "humidity": "dimensionless", "co2": "dimensionless"}
_EXAMPLE = {"nm": "'632.991nm'", "Hz": "'48kHz'", "m/s": "'0.5mm/s'", "m": "'25mm'",
            "s": "'2s'", "cm": "'1mm'"}


def positive_value(value, unit, name):
    """A plain float in ``unit`` from a quantity (text or Quantity), above zero."""
    from ftsource.errors import OptionError
    from ftsource.quantity import to_float

    v = to_float(value, unit, name=name)
    if not v > 0:
        raise OptionError(
            f"{name}: {quote(value)} is not allowed; it must be above zero "
            f"(e.g. {_EXAMPLE.get(unit, unit)})"
        )
    return v


def _ratio_ppm(value, name):
    """A ratio in ppm from a quantity (ppm, %, or a bare fraction)."""
    from ftsource.quantity import parse_quantity

    q = parse_quantity(value, physical_type="dimensionless", name=name)
    return float(q.to_value("")) * 1e6


def _reference_uncertainty(value):
    """``reference_uncertainty`` as a ratio (ppm, %, a bare fraction) or as a length:
    ``(ppm, None)`` or ``(None, nm)``; a length becomes a ratio once the reference wavelength
    is known (:func:`ftsource.interferogram.scale.reference_uncertainty`, from the parameter
    or the record's metadata)."""
    from ftsource.errors import OptionError
    from ftsource.quantity import parse_quantity, to_float

    name = "reference_uncertainty"
    try:
        return _ratio_ppm(value, name), None
    except OptionError:
        q = parse_quantity(value, name=name)  # re-raises a text or unit that cannot be read
    if q.unit.physical_type != "length":
        raise OptionError(
            f"{name}: {quote(value)} is neither a ratio nor a length; write e.g. '1.5ppm' or "
            "'0.001nm'"
        )
    return None, to_float(value, "nm", name=name)


def _air(params):
    """The air conditions from ``air_*`` parameters, and which were given."""
    from ftsource.errors import OptionError
    from ftsource.physics.air import AirConditions
    from ftsource.quantity import parse_humidity, parse_quantity

    given = {k: params[f"air_{k}"] for k in _AIR if params.get(f"air_{k}") is not None}
    u_given = {k: params[f"air_{k}_uncertainty"] for k in _AIR
               if params.get(f"air_{k}_uncertainty") is not None}
    if params["medium"] != "air":
        if given or u_given:
            first = next(iter(given or u_given))
            raise OptionError(
                f"air_{first}{'' if given else '_uncertainty'} needs medium='air' (the "
                "default); in vacuum there is no air to describe"
            )
        return None, (), ()
    def parse(value, k, name):
        # a bare humidity above 1 is percent (ftsource.quantity.parse_humidity)
        if k == "humidity":
            return parse_humidity(value, name=name)
        return parse_quantity(value, physical_type=_AIR_TYPES[k], name=name)

    q = {k: parse(v, k, f"air_{k}") for k, v in given.items()}
    for k, v in u_given.items():
        name = f"air_{k}_uncertainty"
        uq = parse(v, k, name)
        if not (float(uq.value) >= 0 and float(uq.value) < float("inf")):
            raise OptionError(f"{name}: {quote(v)} is not allowed; give a finite value ≥ 0")
        q[f"u_{k}"] = uq
    try:
        air = AirConditions.from_quantities(**q)
    except OptionError as exc:
        # the kernels name their own arguments (humidity_percent); here the keywords
        raise OptionError(_AIR_FIELDS.sub(lambda m: _AIR_KEYWORDS[m.group(1)], str(exc))) from None
    return air, tuple(sorted(k for k in given if k != "co2")), tuple(sorted(u_given))


#: The air kernels' argument names (:class:`ftsource.physics.air.AirConditions`) and the
#: keyword parameters that give them.
_AIR_KEYWORDS = {
    "u_temperature_c": "air_temperature_uncertainty", "u_pressure_pa": "air_pressure_uncertainty",
    "u_humidity_percent": "air_humidity_uncertainty", "u_co2_ppm": "air_co2_uncertainty",
    "temperature_c": "air_temperature", "pressure_pa": "air_pressure",
    "humidity_percent": "air_humidity", "co2_ppm": "air_co2",
}
_AIR_FIELDS = re.compile(r"(?<![\w-])(" + "|".join(_AIR_KEYWORDS) + r")(?![\w-])")


def option_fields(**params) -> dict:
    """The fields of an :class:`~ftsource.analysis.AnalysisOptions` from keyword parameters
    with units.

    Parameters
    ----------
    **params
        Any of :data:`PARAMETERS` (``columns`` is for reading a record file and is ignored
        here). Quantities are astropy Quantities or text with units (``"632.991 nm"``,
        ``"21 degC"``, ``"1013 hPa"``, ``"45 %"``, ``"2 ppm"``); ratios may be bare fractions;
        ``calibration`` and ``response`` may be objects or file paths.

    Returns
    -------
    dict
        Field name → value (``reference_wavelength_nm``, ``air``, ...), checked further by
        ``AnalysisOptions`` itself.

    Raises
    ------
    OptionError
        Naming the parameter, the bad value and what is allowed (an unknown parameter, a value
        without a unit, a unit of the wrong kind, a value out of range).
    """
    from ftsource.errors import OptionError

    unknown = sorted(set(params) - set(PARAMETERS))
    if unknown:
        raise OptionError(
            f"{unknown[0]} is not a parameter of the analysis; known: {', '.join(PARAMETERS)}"
        )
    p = {"medium": "air", "air_model": "ciddor", "apodization": "happ-genzel",
         "phase_correction": "auto", "fft_planning": "estimate", **params}
    for key in ("medium", "air_model", "apodization", "phase_correction", "fft_planning"):
        if not isinstance(p[key], str):
            raise OptionError(f"{key}: {quote(p[key])} is not a name; give it as text "
                              f"({PARAMETERS[key]})")
    air, air_given, air_u_given = _air(p)
    lam = None
    if p.get("reference_wavelength") is not None:
        lam = positive_value(p["reference_wavelength"], "nm", "reference_wavelength")
    ref_u_ppm, ref_u_nm = (None, None) if p.get("reference_uncertainty") is None else \
        _reference_uncertainty(p["reference_uncertainty"])
    esu = None
    if p.get("encoder_scale_uncertainty") is not None:
        esu = _ratio_ppm(p["encoder_scale_uncertainty"], "encoder_scale_uncertainty")
        if not 0.0 <= esu <= 1e5:
            raise OptionError(
                f"encoder_scale_uncertainty: {quote(p['encoder_scale_uncertainty'])} is not "
                "allowed; give a ratio from 0 to 10 %, e.g. '5ppm'"
            )

    def opt(key, unit):
        return None if p.get(key) is None else positive_value(p[key], unit, key)

    extra = {}
    if p.get("zero_fill") is not None:
        zf = p["zero_fill"]
        if isinstance(zf, bool) or not isinstance(zf, int):
            raise OptionError(f"zero_fill: {quote(zf)} is not an integer; give e.g. 4")
        extra["zero_fill"] = zf
    return dict(
        reference_wavelength_nm=lam,
        reference_uncertainty_ppm=ref_u_ppm,
        reference_uncertainty_nm=ref_u_nm,
        alignment_allowance_ppm=_ratio_ppm(p.get("alignment_allowance", "0ppm"),
                                           "alignment_allowance"),
        medium=p["medium"],
        air=air,
        air_given=air_given,
        air_uncertainty_given=air_u_given,
        air_model=p["air_model"],
        encoder_scale_uncertainty_ppm=esu,
        sample_rate_hz=opt("sample_rate", "Hz"),
        mirror_speed_m_s=opt("mirror_speed", "m/s"),
        apodization=p["apodization"],
        phase_correction=p["phase_correction"],
        fft_planning=p["fft_planning"],
        calibration=_calibration(p.get("calibration")),
        response=_response(p.get("response")),
        aperture_diameter_m=opt("aperture_diameter", "m"),
        focal_length_m=opt("focal_length", "m"),
        **extra,
    )


def _calibration(value):
    """A rig calibration: the object, or loaded from its file."""
    if value is None or not isinstance(value, str) and not hasattr(value, "__fspath__"):
        return value
    from ftsource.calibrate.calibration import load_calibration

    return load_calibration(value)


def _response(value):
    """An instrument response: the object, or read from its ECSV file."""
    if value is None or not isinstance(value, str) and not hasattr(value, "__fspath__"):
        return value
    from ftsource.calibrate.response import ResponseCurve

    return ResponseCurve.from_file(value)


_ASSIGN = re.compile(r"(?<![\w'\-])(" + "|".join(PARAMETERS) + r")='([^']*)'")
_TERM = re.compile(
    r"(?<![\w'\-])(?<!metadata )(" + "|".join(
        sorted((k for k in PARAMETERS if "_" in k), key=len, reverse=True)
    ) + r")(?![\w'\-])(?! metadata| \(metadata| argument| = )"
)
_LEADING = re.compile(r"^(" + "|".join(k for k in PARAMETERS if "_" not in k) + r")(?=[: ])")


def cli_terms(message: str) -> str:
    """A library message with its parameter names spelled as the command line's flags
    (``reference_wavelength`` → ``--reference-wavelength``, ``medium='air'`` → ``--medium
    air``). Names in quotes (metadata keys such as ``'reference_wavelength'``), words next
    to ``metadata``, a metadata entry written ``name = value`` and a function's ``argument``
    stay as they are; a one-word parameter
    (``medium``) is spelled as a flag only where the message starts with it or gives it a
    value."""
    def flag(m):
        return "--" + m.group(1).replace("_", "-")

    message = _ASSIGN.sub(lambda m: f"{flag(m)} {m.group(2)}", message)
    return _LEADING.sub(flag, _TERM.sub(flag, message))
