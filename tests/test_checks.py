"""The one set of input checks and the quoting helper (ftsource._checks), and the known-line
policy of calibrations in the library (ftsource.calibrate.known).

Oracles: the Python and numpy definitions of finite numbers and printable characters
(str.isprintable, math.isfinite); the CIPM values stored in
reference_spectra/laser_standards.ecsv (CIPM recommended radiation, I2-stabilised He-Ne,
632.991 212 58 nm, u_r = 2.1e-11; check-values §6); the rule that nominal laser labels are
never standards (common practice, docs/reference_spectra.md).
"""

import math

import numpy as np
import pytest
from hypothesis import given
from hypothesis import strategies as st

from ftsource._checks import (
    QUOTE_LIMIT,
    finite_float,
    finite_pair,
    float_array,
    one_line,
    positive_array,
    quote,
)
from ftsource.calibrate.known import PARAMETER_NAMES, known_line, parse_list_entry
from ftsource.errors import AnalysisError, OptionError

# --------------------------------------------------------------------------------------------
# quoting


@given(st.text(max_size=200))
def test_quote_is_one_printable_quoted_line_of_bounded_length(text):
    q = quote(text)
    assert q[0] == q[-1] and q[0] in "'\""
    inner = eval(q)  # noqa: S307 - repr of a str, made above
    assert all(ch.isprintable() for ch in inner)
    assert len(inner) <= QUOTE_LIMIT
    if len(text) <= QUOTE_LIMIT and text.isprintable():
        assert inner == text


def test_quote_replaces_terminal_escapes_and_cuts():
    assert quote("48 khz") == "'48 khz'"
    assert quote("\x1b[31mred") == "'?[31mred'"
    assert quote("x" * 100) == repr("x" * (QUOTE_LIMIT - 3) + "...")
    assert quote(1.5) == "'1.5'"


@given(st.text(max_size=300))
def test_one_line_has_no_line_break_or_control(text):
    s = one_line(text)
    assert "\n" not in s and all(ch.isprintable() for ch in s)
    assert one_line(text, 50) == s if len(s) <= 50 else len(one_line(text, 50)) == 50


def test_one_line_collapses_whitespace():
    assert one_line("a\n  b\t\u2028c") == "a b c"
    assert one_line("abcdef", 5) == "ab..."


# --------------------------------------------------------------------------------------------
# numbers and arrays


def test_finite_float():
    assert finite_float("x", "2.5") == 2.5
    assert finite_float("x", 0.0, minimum=0.0) == 0.0
    for bad, words in [("a", "must be a number"), (math.inf, "must be finite"),
                       (math.nan, "must be finite"), (None, "must be a number")]:
        with pytest.raises(OptionError, match=f"x .*{words}|x {words}"):
            finite_float("x", bad)
    with pytest.raises(OptionError, match="x = -1 is not allowed; it must be ≥ 0"):
        finite_float("x", -1, minimum=0.0)
    with pytest.raises(OptionError, match="x = 0 is not allowed; it must be > 0"):
        finite_float("x", 0, minimum=0.0, strict=True)


def test_arrays():
    np.testing.assert_array_equal(float_array("a", [1, 2]), [1.0, 2.0])
    with pytest.raises(OptionError, match="a must be a number or an array of them"):
        float_array("a", "abc")
    np.testing.assert_array_equal(positive_array("s", [0.0, 1.0], allow_zero=True), [0, 1])
    with pytest.raises(OptionError, match="s = 0 is not allowed; it must be finite and > 0"):
        positive_array("s", [1.0, 0.0])
    with pytest.raises(OptionError, match="s = nan is not allowed"):
        positive_array("s", np.nan, allow_zero=True)


@given(st.lists(st.floats(allow_nan=True, allow_infinity=True), min_size=1, max_size=8))
def test_finite_pair_accepts_exactly_finite_equal_length_arrays(values):
    a = np.array(values)
    finite = bool(np.all(np.isfinite(a)))
    if finite:
        x, y = finite_pair(a, a, "x", "y")
        np.testing.assert_array_equal(x, y)
    else:
        with pytest.raises(AnalysisError, match="x and y must be finite"):
            finite_pair(a, a, "x", "y")
    with pytest.raises(AnalysisError, match="1-D arrays of one length"):
        finite_pair(a, np.append(a, 1.0), "x", "y")


# --------------------------------------------------------------------------------------------
# the known line of a calibration, in the library


def test_known_line_from_a_standard_takes_its_stated_uncertainty():
    k = known_line(line="laser_standards:632.99121258nm")
    assert k.wavelength_nm == 632.99121258
    # u_r = 2.1e-11 (CIPM), stored as 1.3e-8 nm (two digits)
    assert k.u_nm == pytest.approx(2.1e-11 * 632.99121258, rel=0.05)
    assert "as stated in laser_standards" in k.description
    # by its value, as a known wavelength
    assert known_line(wavelength_nm=632.99121258).u_nm == k.u_nm


def test_known_line_refuses_what_would_make_a_calibration_silently_wrong():
    names = dict(PARAMETER_NAMES)
    with pytest.raises(OptionError, match="never standards"):
        known_line(line="laser_nominal:532nm")
    with pytest.raises(OptionError, match="never standards"):
        known_line(wavelength_nm=650.0, u_nm=1.0)
    with pytest.raises(OptionError, match=f"needs {names['uncertainty']}"):
        known_line(wavelength_nm=640.40178)
    with pytest.raises(OptionError, match="no stated uncertainty"):
        known_line(line="lamp_ne:640.2248nm")
    with pytest.raises(OptionError, match="cannot be better than its standard"):
        known_line(line="laser_standards:632.9908nm", u_nm=1e-4)
    with pytest.raises(OptionError, match="is not allowed; give a standard uncertainty ≥ 0"):
        known_line(wavelength_nm=640.40178, u_nm=-1e-3)
    with pytest.raises(OptionError, match="exactly one"):
        known_line()
    with pytest.raises(OptionError, match="LIST:QTY"):
        parse_list_entry("632.9908nm")
    assert parse_list_entry(" lamp_ne : 640.2248 nm ") == ("lamp_ne", 640.2248)


def test_known_line_names_parameters_as_the_caller_asks():
    names = {"wavelength": "--kw", "line": "--kl", "uncertainty": "--ku"}
    with pytest.raises(OptionError, match="--kw needs --ku .* --kl LIST:QTY"):
        known_line(wavelength_nm=640.40178, names=names)
    k = known_line(wavelength_nm=700.0, u_nm=1e-4, names=names)
    assert (k.wavelength_nm, k.u_nm) == (700.0, 1e-4) and "(as given)" in k.description
