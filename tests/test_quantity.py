"""Tests of ftsource.quantity: quantities with units from the command line and metadata.

Sources (named again beside each check):
- SI Brochure: BIPM, "The International System of Units (SI)", 9th edition (2019):
  prefixes (Table 7: k = 1e3, h = 1e2, m = 1e-3, n = 1e-9, µ = 1e-6), the bar (Table 8:
  1 bar = 1e5 Pa, so 1 mbar = 1 hPa = 100 Pa), the degree Celsius (section 2.3.1:
  t/°C = T/K - 273.15) and the percent (section 5.4.7: % = 0.01).
- ppm = 1e-6 and ppb = 1e-9: common practice (the SI Brochure 5.4.7 discourages the names but
  they are used this way throughout metrology).
- astropy.units (general-purpose library from PyPI) as the reference for unit conversion in
  the round-trip property test.
- The list of quantity examples is the contract, ``docs/contract.md`` section "Quantities".
"""

from __future__ import annotations

import math

import astropy.units as u
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from ftsource.errors import OptionError
from ftsource.quantity import PHYSICAL_TYPES, parse_quantity, ppm, to_float

# --- every example of docs/contract.md parses to the right value --------------------------

# (text, physical type, unit to compare in, expected value in that unit, source)
CONTRACT_EXAMPLES = [
    ("632.991nm", "length", u.m, 632.991e-9, "SI Brochure Table 7: n = 1e-9"),
    ("632.991 nm", "length", u.m, 632.991e-9, "SI Brochure Table 7: n = 1e-9"),
    ("48kHz", "frequency", u.Hz, 48e3, "SI Brochure Table 7: k = 1e3"),
    ("20degC", "temperature", u.K, 293.15, "SI Brochure 2.3.1: T = t + 273.15 K"),
    ("20 °C", "temperature", u.K, 293.15, "SI Brochure 2.3.1"),
    ("20C", "temperature", u.K, 293.15, "SI Brochure 2.3.1; contract alias C -> °C"),
    ("1013.25 hPa", "pressure", u.Pa, 101325.0, "SI Brochure Table 7: h = 1e2"),
    ("1013 mbar", "pressure", u.Pa, 101300.0, "SI Brochure Table 8: 1 bar = 1e5 Pa"),
    ("45%", "dimensionless", u.one, 0.45, "SI Brochure 5.4.7: % = 0.01"),
    ("0.5 mm/s", "speed", u.m / u.s, 0.5e-3, "SI Brochure Table 7: m = 1e-3"),
    ("2 ppm", "dimensionless", u.one, 2e-6, "common practice: ppm = 1e-6"),
    ("0.1 mrad", "angle", u.rad, 1e-4, "SI Brochure Table 7: m = 1e-3"),
]


@pytest.mark.parametrize("text, ptype, unit, expected, source", CONTRACT_EXAMPLES)
def test_contract_examples_parse_to_the_right_value(text, ptype, unit, expected, source):
    q = parse_quantity(text, physical_type=ptype, name="--x")
    eq = u.temperature() if ptype == "temperature" else []
    # rel 1e-12: the values are exact decimal scalings; only binary rounding remains
    assert q.to_value(unit, equivalencies=eq) == pytest.approx(expected, rel=1e-12), source


@pytest.mark.parametrize("text, ptype, unit, expected, source", CONTRACT_EXAMPLES)
def test_contract_examples_parse_without_a_type(text, ptype, unit, expected, source):
    q = parse_quantity(text)
    eq = u.temperature() if ptype == "temperature" else []
    assert q.to_value(unit, equivalencies=eq) == pytest.approx(expected, rel=1e-12), source


def test_aliases_keep_the_written_magnitude():
    # the alias table renames units; it never rescales the number (contract "Quantities")
    assert parse_quantity("1013 mbar").unit == u.hPa
    assert parse_quantity("1013 mbar").value == 1013.0
    assert parse_quantity("45%").unit == u.percent
    assert parse_quantity("2 ppm").unit == ppm
    assert parse_quantity("20C").unit == u.deg_C


@pytest.mark.parametrize(
    "text", ["20 degC", "20°C", "20 ºC", "20 ℃", "20 celsius", "20 Celsius", "20 deg C", "20 deg_C"]
)
def test_celsius_spellings(text):
    # SI Brochure 2.3.1: 20 °C is 293.15 K
    assert to_float(text, "K", name="t") == pytest.approx(293.15, rel=1e-12)


@pytest.mark.parametrize("text", ["45 %RH", "45% RH", "45 percent"])
def test_humidity_spellings(text):
    # SI Brochure 5.4.7: 45 % is 0.45
    assert to_float(text, u.one, name="h") == pytest.approx(0.45, rel=1e-12)


@pytest.mark.parametrize(
    "text, unit, expected, source",
    [
        ("1 µm", u.m, 1e-6, "SI Brochure Table 7: µ = 1e-6 (micro sign U+00B5)"),
        ("1 μm", u.m, 1e-6, "SI Brochure Table 7 (Greek mu U+03BC)"),
        ("1 um", u.m, 1e-6, "common practice: 'u' for micro in plain text"),
        ("−5 °C", u.K, 268.15, "SI Brochure 2.3.1; Unicode minus sign accepted"),
        ("1e3\u00a0nm", u.m, 1e-6, "SI Brochure Table 7; no-break space accepted"),
        ("+.5 kHz", u.Hz, 500.0, "SI Brochure Table 7"),
        ("3 ppb", u.one, 3e-9, "common practice: ppb = 1e-9"),
    ],
)
def test_other_spellings(text, unit, expected, source):
    q = parse_quantity(text)
    eq = u.temperature() if q.unit.physical_type == "temperature" else []
    assert q.to_value(unit, equivalencies=eq) == pytest.approx(expected, rel=1e-12), source


def test_bare_number_only_where_dimensionless():
    # contract: "A bare number is refused where the unit is ambiguous"; a ratio is a fraction
    assert parse_quantity("1.5e-6", physical_type="dimensionless").to_value(u.one) == 1.5e-6
    assert to_float("1.5e-6", "ppm", name="a") == pytest.approx(1.5, rel=1e-12)  # ppm = 1e-6
    with pytest.raises(OptionError, match=r"--sample-rate: '48000' has no unit; a frequency"):
        parse_quantity("48000", physical_type="frequency", name="--sample-rate")
    with pytest.raises(OptionError, match="has no unit; write the number with its unit"):
        parse_quantity("1.5e-6")
    with pytest.raises(OptionError, match="has no unit; a length needs one"):
        parse_quantity(632.991, physical_type="length")
    assert parse_quantity(0.5, physical_type="dimensionless").value == 0.5


# --- errors ----------------------------------------------------------------------------------


@pytest.mark.parametrize(
    "text, ptype, fragment",
    [
        ("632.991 nm", "frequency", "'632.991 nm' is a length; expected a frequency such as"),
        ("20 °C", "pressure", "is a temperature; expected a pressure"),
        ("5 khz", "frequency", "the unit 'khz' in '5 khz' is not understood"),
        ("nm", "length", "'nm' is not a number followed by a unit"),
        ("", None, "'' is not a number followed by a unit"),
        ("nan nm", "length", "'nan nm' is not a finite number"),
        ("inf Hz", "frequency", "'inf Hz' is not a finite number"),
        ("1e999 nm", "length", "'1e999 nm' is not a finite number"),
        ("5 0.1", None, "'5 0.1' is not one number followed by a unit"),
        ("1 2 nm", "length", "is not one number followed by a unit"),
        ("632,991 nm", "length", "is not understood"),
        ("5 dB", None, "the unit 'dB' in '5 dB' is not a plain unit"),
        ("0.1 mrad", "dimensionless", "is an angle; expected a dimensionless"),
        ("x" * 300, None, "is too long to be a quantity"),
        ("1 nm\x00", "length", "is not understood"),
    ],
)
def test_bad_quantities_raise_option_error_naming_the_option(text, ptype, fragment):
    with pytest.raises(OptionError) as info:
        parse_quantity(text, physical_type=ptype, name="--opt")
    msg = str(info.value)
    assert msg.startswith("--opt: ")
    assert fragment in msg
    assert "\n" not in msg


def test_non_text_and_non_scalar_inputs():
    with pytest.raises(OptionError, match="is not a quantity such as"):
        parse_quantity(["1 nm"], name="--x")
    with pytest.raises(OptionError, match="is not a single value"):
        parse_quantity([1.0, 2.0] * u.nm, name="--x")
    with pytest.raises(OptionError, match="is not a finite number"):
        parse_quantity(math.nan * u.nm, physical_type="length")
    assert parse_quantity(3 * u.nm, physical_type="length") == 3 * u.nm


def test_unknown_physical_type_is_a_programming_error():
    with pytest.raises(ValueError, match="physical_type 'colour' is not one of"):
        parse_quantity("1 nm", physical_type="colour")


# --- to_float ------------------------------------------------------------------------------


def test_to_float_conversions():
    assert to_float("20 °C", "K", name="t") == pytest.approx(293.15, rel=1e-12)  # SI 2.3.1
    assert to_float("293.15 K", "deg_C", name="t") == pytest.approx(20.0, rel=1e-12)  # SI 2.3.1
    assert to_float("20 °C", "degC", name="t") == 20.0  # alias table, no conversion
    assert to_float("1013 mbar", "Pa", name="p") == pytest.approx(101300.0, rel=1e-12)  # Table 8
    assert to_float("45%", "%", name="h") == pytest.approx(45.0, rel=1e-12)
    assert to_float("0.45", "%", name="h") == pytest.approx(45.0, rel=1e-12)  # SI 5.4.7
    assert to_float("48 kHz", u.Hz, name="fs") == 48000.0  # Table 7
    assert to_float(48 * u.kHz, "Hz", name="fs") == 48000.0  # Table 7
    # a Python number is taken in the caller's unit (the caller names the unit)
    assert to_float(3.5, "Hz", name="fs") == 3.5


def test_to_float_errors():
    with pytest.raises(OptionError, match=r"--air-pressure: '20 °C' is a temperature; expected a"):
        to_float("20 °C", "Pa", name="--air-pressure")
    with pytest.raises(OptionError, match="is not a finite number"):
        to_float(math.inf, "Hz", name="fs")
    with pytest.raises(OptionError, match="has no unit"):
        to_float("48000", "Hz", name="fs")
    # angles convert to ratios only when the caller allows it (astropy's dimensionless_angles)
    with pytest.raises(OptionError, match="expected a dimensionless"):
        to_float("0.1 mrad", u.one, name="a")
    value = to_float("0.1 mrad", u.one, name="a", equivalencies=u.dimensionless_angles())
    assert value == pytest.approx(1e-4, rel=1e-12)  # SI Brochure Table 4: rad = m/m = 1


# --- property: a random float with a unit round-trips ---------------------------------------

UNITS = [
    ("nm", "length"),
    ("mm", "length"),
    ("kHz", "frequency"),
    ("Hz", "frequency"),
    ("hPa", "pressure"),
    ("kPa", "pressure"),
    ("mm/s", "speed"),
    ("ms", "time"),
    ("K", "temperature"),
    ("mrad", "angle"),
    ("ppm", "dimensionless"),
    ("%", "dimensionless"),
    ("deg_C", "temperature"),
]


@settings(max_examples=300, deadline=None)
@given(
    value=st.floats(allow_nan=False, allow_infinity=False, min_value=-1e300, max_value=1e300),
    unit_type=st.sampled_from(UNITS),
    space=st.sampled_from(["", " ", "  "]),
)
def test_random_float_with_unit_round_trips(value, unit_type, space):
    unit_text, ptype = unit_type
    text = f"{value!r}{space}{unit_text}"
    q = parse_quantity(text, physical_type=ptype, name="--x")
    # repr() of a float round-trips exactly (Python float repr, shortest round-trip digits)
    assert q.value == value
    # astropy.units as reference for the unit itself
    ref_unit = ppm if unit_text == "ppm" else u.Unit(unit_text)
    assert q.unit == ref_unit
    assert q.unit.physical_type == PHYSICAL_TYPES[ptype][0].physical_type or ptype == "temperature"


@settings(max_examples=300, deadline=None)
@given(text=st.text(max_size=40))
def test_random_text_raises_only_option_error(text):
    try:
        q = parse_quantity(text, name="--x")
    except OptionError as exc:
        assert "\n" not in str(exc)
    else:
        assert math.isfinite(float(q.value))


# --- relative humidity: bare numbers (issue 12, part 8) -------------------------------------


@pytest.mark.parametrize(
    "text, percent",
    [("45", 45.0), (45, 45.0), ("100", 100.0), ("1.5", 1.5), ("45%", 45.0), ("45 %RH", 45.0),
     ("0.45 fraction", 45.0), ("0.5%", 0.5), ("4500 ppm", 0.45)],
)
def test_humidity_bare_numbers_above_one_are_percent(text, percent):
    # Common practice (relative humidity is quoted in percent): a bare 45 means 45 %;
    # a value with a unit is taken as written (SI Brochure 5.4.7: 45 % = 0.45; 1 ppm = 1e-6)
    from ftsource.quantity import parse_humidity

    q = parse_humidity(text, name="--air-humidity")
    assert q.unit == u.percent
    assert q.value == pytest.approx(percent, rel=1e-12)


@pytest.mark.parametrize("text", ["0.45", 0.45, "1", "0", "-5", "1e-1"])
def test_humidity_bare_numbers_up_to_one_are_refused_with_advice(text):
    from ftsource.errors import OptionError
    from ftsource.quantity import parse_humidity

    with pytest.raises(OptionError) as e:
        parse_humidity(text, name="--air-humidity")
    msg = str(e.value)
    assert "--air-humidity" in msg and "45%" in msg and "0.45 fraction" in msg


def test_humidity_with_a_unit_that_is_not_a_ratio_is_refused():
    from ftsource.errors import OptionError
    from ftsource.quantity import parse_humidity

    with pytest.raises(OptionError, match="--air-humidity"):
        parse_humidity("45 hPa", name="--air-humidity")
