"""Tests of ftsource.safety: the laser notice and the green-pointer infrared warning.

Sources: NIST TN 1668 (Galang, Restelli, Hagley & Clark, "A Green Laser Pointer Hazard", 2010)
for the 808 nm / 1064 nm leak of diode-pumped green pointers; IEC 60825-1 and ANSI Z136.1 as the
standards that classify hazards (check-values §11).
"""

from __future__ import annotations

import math

import pytest

from ftsource.errors import FtsourceError, OptionError
from ftsource.safety import (
    GREEN_POINTER_CENTRE_NM,
    GREEN_POINTER_HALF_WINDOW_NM,
    GREEN_POINTER_WARNING,
    LASER_NOTICE,
    green_pointer_warning,
)


@pytest.mark.parametrize(
    "needle",
    [
        "never look into",  # never look into the beam (common practice; check-values §11)
        "reflections",
        "interferometer",  # looking through the instrument's optics is looking into the beam
        "reference laser is a laser too",  # check-values §11
        "532 nm",
        "808 nm",  # pump diode wavelength, NIST TN 1668
        "1064 nm",  # Nd fundamental, NIST TN 1668
        "infrared",
        "cannot rule",
        "NIST TN 1668",
        "Galang et al. 2010",
        "not hazard class",
        "IEC 60825-1",
        "ANSI Z136.1",
        "label",
        "local",
    ],
)
def test_laser_notice_says_what_it_must(needle):
    assert needle in LASER_NOTICE


def test_laser_notice_is_short_and_plain():
    # "short": a user reads it every run; 800 characters is our own limit (common practice).
    assert len(LASER_NOTICE) < 800
    assert LASER_NOTICE.isascii()
    assert LASER_NOTICE.endswith(".")


def test_green_pointer_centre_is_doubled_nd_line():
    # Closed form: second harmonic of the 1064 nm Nd line is 1064/2 = 532 nm (NIST TN 1668).
    assert GREEN_POINTER_CENTRE_NM == pytest.approx(1064.0 / 2.0, abs=0.0)
    assert GREEN_POINTER_HALF_WINDOW_NM == 3.0  # the window the brief specifies, ±3 nm


@pytest.mark.parametrize(
    "wavelength_nm",
    [532.0, 532.2, 531.85, 529.0, 535.0, 529.5, 534.999],
)
def test_warning_inside_window(wavelength_nm):
    # Window 532 ± 3 nm inclusive (module specification); 532.2 nm and 531.85 nm are
    # 532 nm in vacuum vs in air (difference ~0.15 nm, Edlén 1966, from memory).
    assert green_pointer_warning(wavelength_nm) == GREEN_POINTER_WARNING


@pytest.mark.parametrize(
    "wavelength_nm",
    [528.99, 535.01, 520.0, 515.0, 632.8, 650.0, 405.0, 808.0, 1064.0],
)
def test_no_warning_outside_window(wavelength_nm):
    # 520 nm direct green diodes, 515 nm, He-Ne 632.8 nm, red 650 nm and violet 405 nm
    # pointers are not doubled Nd lasers (common practice); 808/1064 themselves are outside
    # the visible-line window by construction.
    assert green_pointer_warning(wavelength_nm) is None


def test_warning_text_content():
    for needle in ("808 nm", "1064 nm", "invisible", "cannot rule out", "NIST TN 1668"):
        assert needle in GREEN_POINTER_WARNING


def test_warning_accepts_numpy_scalars():
    import numpy

    assert green_pointer_warning(numpy.float32(532.1)) == GREEN_POINTER_WARNING
    assert green_pointer_warning(numpy.int64(600)) is None


@pytest.mark.parametrize("bad", [math.nan, math.inf, -532.0, 0.0, "green", None, [532.0, 1.0]])
def test_bad_wavelength_raises(bad):
    with pytest.raises(OptionError, match="wavelength_nm") as info:
        green_pointer_warning(bad)
    assert isinstance(info.value, FtsourceError)


# --------------------------------------------------------------------------------------------
# end to end: the caution, or the infrared actually found (NIST TN 1668: DPSS green pointers
# can emit 808 nm pump and 1064 nm fundamental light)


def _green_result(ir_strength):
    from ftsource import simulate as S
    from ftsource.analysis import AnalysisOptions, analyze

    lines = [S.SpectralLine(1e7 / 532.0, 1.0)]
    if ir_strength:
        lines.append(S.SpectralLine(1e7 / 1064.0, ir_strength))
    sim = S.simulate(S.SourceModel(tuple(lines), label="invented"),
                     S.Scan(duration_s=0.6, opd_centre_cm=0.05, opd_amplitude_cm=0.03),
                     S.ReferenceChannel(), S.Detector(noise_rms=0.002), rng=21)
    return analyze(sim.record, AnalysisOptions(reference_wavelength_nm=632.991,
                                               medium="vacuum")).to_dict()


def test_green_line_alone_gets_the_caution():
    d = _green_result(0.0)
    assert GREEN_POINTER_WARNING in d["warnings"]
    assert not any(w.startswith("INFRARED FOUND") for w in d["warnings"])


def test_green_line_with_1064_nm_names_the_infrared_instead():
    d = _green_result(0.3)
    found = [w for w in d["warnings"] if w.startswith("INFRARED FOUND")]
    assert found and "1064.0" in found[0]
    # not both "cannot rule out" and "found": the found one replaces the caution
    assert GREEN_POINTER_WARNING not in d["warnings"]
