"""Tests of ftsource.linelists and the shipped line lists in reference_spectra/.

Sources of the expected values (status codes as in check-values.md: V = seen in a retrieved
text, V2 = seen in a secondary text quoting the primary, C = independent calculation):

* NIST Handbook of Basic Atomic Spectroscopic Data (SRD 108) strong-line tables, air
  wavelengths; check-values §6 lists the status of each line used below.
* D. C. Morton, ApJS 130, 403 (2000), eq. 8 (IAU standard air); check-values §5/§6 give the
  vacuum values it yields (C).
* E. R. Peck and K. Reeder, JOSA 62, 958 (1972): vacuum values converted with it and quoted on
  a public page for Sansonetti et al. (2004) Ne I lines (V; stored in lamp_ne's metadata).
* CIPM recommended radiations and CIPM 2007 Recommendation 2 (V), and the SI definition
  c = 299 792 458 m/s (exact).
"""

from __future__ import annotations

import importlib.resources
import math
import sys
import types
from pathlib import Path

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from ftsource import linelists as reference
from ftsource.errors import FtsourceError, OptionError
from ftsource.linelists import (
    Candidate,
    identify,
    line_list_names,
    load_line_list,
    search_lines,
    standard_air_to_vacuum_nm,
    standard_vacuum_to_air_nm,
)

C_M_PER_S = 299_792_458.0  # SI definition of the metre (exact)
LAMPS = ["lamp_ar", "lamp_he", "lamp_hg", "lamp_kr", "lamp_na", "lamp_ne"]
LASERS = ["laser_nominal", "laser_standards"]
ALL_LISTS = LAMPS + LASERS


# ---------------------------------------------------------------------------------------------
# files and metadata
# ---------------------------------------------------------------------------------------------
def test_all_lists_are_shipped():
    names = line_list_names()
    for name in ALL_LISTS:
        assert name in names
    assert names == sorted(names)


@pytest.mark.parametrize("name", ALL_LISTS)
def test_list_loads_with_columns_and_source(name):
    t = load_line_list(name)
    assert len(t) > 0
    for col in reference.REQUIRED_COLUMNS:
        assert col in t.colnames
    meta = t.meta
    for key in ("source", "version", "retrieved", "retrieved_via", "vacuum_method", "references"):
        assert meta.get(key), f"{name}: metadata {key!r} missing"
    assert meta["retrieved"] == "2026-12-02"
    if name != "laser_nominal":  # nominal labels have no document behind them (common practice)
        assert meta["source_url"].startswith("https://")
    # every row names a reference that the metadata explains, and a verification status
    for ref, status in zip(t["ref"], t["status"], strict=True):
        assert ref in meta["references"]
        assert status
    # sorted by vacuum wavelength, one kind per list family
    vac = np.asarray(t["wavelength_vac_nm"], dtype=float)
    assert np.all(np.diff(vac) >= 0)
    kinds = set(t["kind"])
    if name.startswith("lamp_"):
        assert kinds == {"atomic line"}
        assert meta["source"].startswith("NIST Handbook")
    elif name == "laser_standards":
        assert kinds == {"standard"}
        assert "CIPM" in meta["source"]
    else:
        assert kinds == {"nominal"}


@pytest.mark.parametrize("name", LAMPS)
def test_lamp_lists_cover_visible_near_ir(name):
    t = load_line_list(name)
    vac = np.asarray(t["wavelength_vac_nm"], dtype=float)
    assert vac.min() >= 350.0 and vac.max() <= 1000.0
    element = t.meta["element"]
    assert all(s.split()[0] == element for s in t["species"])


def test_unknown_list_names_the_valid_ones():
    with pytest.raises(OptionError) as err:
        load_line_list("lamp_xx")
    msg = str(err.value)
    assert "lamp_xx" in msg and "lamp_ne" in msg and "laser_standards" in msg


def test_load_returns_independent_copies():
    a = load_line_list("lamp_na")
    a["wavelength_vac_nm"][0] = -1.0
    b = load_line_list("lamp_na")
    assert b["wavelength_vac_nm"][0] > 0


# ---------------------------------------------------------------------------------------------
# data found via the package path
# ---------------------------------------------------------------------------------------------
def test_data_folder_is_package_resource_or_source_tree():
    folder = reference._data_folder()
    packaged = Path(str(importlib.resources.files("ftsource") / "reference_spectra"))
    source_tree = Path(reference.__file__).resolve().parent.parent / "reference_spectra"
    assert folder in (packaged, source_tree)
    for name in ALL_LISTS:
        assert (folder / f"{name}.ecsv").is_file()


def _fake_layout(monkeypatch, tmp_path, *, packaged: bool, source: bool) -> tuple[Path, Path]:
    """Point the data locator at a fake installed package and a fake source tree."""
    from ftsource import _data
    pkg = tmp_path / "site" / "ftsource" / "reference_spectra"
    src = tmp_path / "checkout" / "reference_spectra"
    for folder, wanted in ((pkg, packaged), (src, source)):
        folder.mkdir(parents=True)
        if wanted:
            (folder / "lamp_zz.ecsv").write_text("# placeholder\n", encoding="utf-8")
    monkeypatch.setattr(importlib.resources, "files", lambda name: pkg.parent)
    monkeypatch.setattr(_data, "__file__", str(tmp_path / "checkout" / "ftsource" / "_data.py"))
    return pkg, src


def test_installed_package_is_tried_first(monkeypatch, tmp_path):
    pkg, _ = _fake_layout(monkeypatch, tmp_path, packaged=True, source=True)
    assert reference._data_folder() == pkg


def test_falls_back_to_source_tree(monkeypatch, tmp_path):
    # an installed-package folder without line lists is skipped
    _, src = _fake_layout(monkeypatch, tmp_path, packaged=False, source=True)
    assert reference._data_folder() == src
    assert line_list_names() == ["lamp_zz"]


def test_missing_data_is_an_ftsource_error(monkeypatch, tmp_path):
    _fake_layout(monkeypatch, tmp_path, packaged=False, source=False)
    with pytest.raises(FtsourceError, match="reference_spectra"):
        line_list_names()


# ---------------------------------------------------------------------------------------------
# check values (check-values.md §6)
# ---------------------------------------------------------------------------------------------
# (list, air value quoted by NIST, vacuum value from check-values §6 [C, Morton], status of air)
SECTION6 = [
    ("lamp_ne", 632.81646, 632.99145, "V2"),
    ("lamp_ne", 585.24879, 585.41103, "V2"),
    ("lamp_ne", 640.2248, 640.40178, "V2"),
    ("lamp_na", 588.9950, 589.15824, "V"),
    ("lamp_na", 589.5924, 589.75580, "V"),
    ("lamp_hg", 435.8328, 435.95530, "V2"),
    ("lamp_hg", 546.0735, 546.22526, "V2"),
    ("lamp_hg", 576.9598, 577.11982, "V2"),
    ("lamp_hg", 579.0663, 579.22688, "V2"),
    ("lamp_ar", 696.5431, 696.73523, "V2"),
    ("lamp_ar", 763.5106, 763.72079, "V2"),
]


@pytest.mark.parametrize(("name", "air", "vac", "status"), SECTION6)
def test_section6_lines(name, air, vac, status):
    t = load_line_list(name)
    airs = np.asarray(t["wavelength_air_nm"], dtype=float)
    i = int(np.argmin(np.abs(airs - air)))
    # quoted values are copied digit for digit: 1e-9 nm only absorbs float printing
    assert airs[i] == pytest.approx(air, abs=1e-9)
    assert t["status"][i].startswith(f"air {status};")
    # check-values gives the vacuum value to 1e-5 nm (rounding <= 5e-6 nm) -> 1e-5 nm
    assert float(t["wavelength_vac_nm"][i]) == pytest.approx(vac, abs=1e-5)


def test_hg_pencil_lamp_caution_is_recorded():
    # NIST mercurytable7 (V): pencil lamps read 0.0068(32) A longer
    meta = load_line_list("lamp_hg").meta
    assert "0.00068 nm" in meta["lamp_caution"]


# ---------------------------------------------------------------------------------------------
# relative intensities
# ---------------------------------------------------------------------------------------------
def _intensity_ref(status: str) -> str | None:
    """The references key of a status's "; int <code> (<key>)" part, or None without one."""
    _, sep, tail = status.rpartition("; int ")
    if not sep:
        return None
    code, _, key = tail.partition(" (")
    assert code in ("V", "V2", "C", "M") and key.endswith(")"), status
    return key[:-1]


@pytest.mark.parametrize("name", LAMPS)
def test_every_intensity_cites_a_reference(name):
    t = load_line_list(name)
    assert t.meta["intensity_scale"]
    for value, status in zip(t["relative_intensity"], t["status"], strict=True):
        key = _intensity_ref(str(status))
        if math.isfinite(float(value)):
            assert float(value) > 0
            assert key is not None, f"{name}: {status!r} names no intensity source"
            assert key in t.meta["references"]
        else:  # no intensity, no intensity status
            assert key is None, status


# (list, NIST air value, Handbook intensity) as printed in the copy of the NIST Handbook
# strong-line tables in astropy/specreduce, specreduce/datasets/line_lists/NIST/
# NIST_combined.csv (commit 12908bca); Kr from nist_air_strong_lines_Kr.txt there (c4e65316).
HANDBOOK_INTENSITIES = [
    ("lamp_hg", 435.8328, 1000.0),
    ("lamp_hg", 546.0735, 500.0),
    ("lamp_hg", 614.9475, 250.0),  # Hg II
    ("lamp_ar", 696.5431, 300.0),
    ("lamp_ar", 811.5311, 1000.0),
    ("lamp_he", 587.56148, 500.0),
    ("lamp_he", 388.86456, 200.0),  # 0.00033 nm from the 388.86489 nm component (300)
    ("lamp_he", 388.86489, 300.0),
    ("lamp_ne", 640.2248, 200.0),
    ("lamp_ne", 692.94673, 1000.0),
    ("lamp_ne", 849.53595, 700.0),  # the copy prints 8495.3598 A
    ("lamp_kr", 877.67505, 1000.0),
]


@pytest.mark.parametrize(("name", "air", "intensity"), HANDBOOK_INTENSITIES)
def test_handbook_intensity_spot_checks(name, air, intensity):
    t = load_line_list(name)
    airs = np.asarray(t["wavelength_air_nm"], dtype=float)
    i = int(np.argmin(np.abs(airs - air)))
    assert airs[i] == pytest.approx(air, abs=1e-9)
    assert float(t["relative_intensity"][i]) == intensity  # integers as printed
    assert str(t["status"][i]).endswith("; int V2 (nist_hb_specreduce)") or name == "lamp_kr"


# NIST ASD Ar I lines as listed in GeminiDRSoftware/F2Cookbook, source/calib/Ar_NIR_lowres.txt
# (commit 87cbebb5): (air value of our row, ASD vacuum wavelength in A, ASD intensity)
ASD_ARGON = [(763.5106, 7637.208, 25000), (912.2967, 9125.471, 35000), (866.7944, 8670.325, 4500)]


@pytest.mark.parametrize(("air", "vac_angstrom", "intensity"), ASD_ARGON)
def test_argon_asd_intensities_kept_apart(air, vac_angstrom, intensity):
    t = load_line_list("lamp_ar")
    asd = t.meta["asd_relative_intensity"]["values"]
    assert asd[str(air)] == intensity  # keyed by the air value as written in the rows
    assert "810.3693" not in asd  # labelled Ar_I+Ar_II in that copy
    i = int(np.argmin(np.abs(np.asarray(t["wavelength_air_nm"], dtype=float) - air)))
    # the ASD's own vacuum value (0.001 A digits) checks our Morton conversion of the air value
    assert float(t["wavelength_vac_nm"][i]) == pytest.approx(vac_angstrom / 10, abs=6e-5)
    assert float(t["relative_intensity"][i]) < 2000  # the column keeps the Handbook scale


def test_sodium_intensities_are_missing_and_say_so():
    t = load_line_list("lamp_na")
    assert np.all(np.isnan(np.asarray(t["relative_intensity"], dtype=float)))
    assert "not found" in t.meta["intensity_scale"]


# ---------------------------------------------------------------------------------------------
# standard air
# ---------------------------------------------------------------------------------------------
@pytest.mark.parametrize("name", LAMPS)
def test_every_air_vacuum_pair_is_standard_air(name):
    # Peck-Reeder and Ciddor standard air agree with Morton to <= 2e-5 nm (check-values §6)
    t = load_line_list(name)
    air = np.asarray(t["wavelength_air_nm"], dtype=float)
    vac = np.asarray(t["wavelength_vac_nm"], dtype=float)
    assert np.all(vac > air)
    np.testing.assert_allclose(standard_air_to_vacuum_nm(air), vac, rtol=0, atol=2e-5)


def test_conversion_agrees_with_peck_reeder_values_quoted_for_neon():
    # vacuum values converted with Peck & Reeder (1972) and quoted to 1e-5 nm on a public page
    # (V): agreement within 2e-5 nm (formula difference) + 5e-6 nm (their rounding)
    quoted = load_line_list("lamp_ne").meta["peck_reeder_vacuum_nm"]["values"]
    assert len(quoted) == 7
    for air, vac in quoted.items():
        assert standard_air_to_vacuum_nm(float(air)) == pytest.approx(vac, abs=2.5e-5)


def test_i2_633_in_standard_air():
    # check-values §6 (C): 632.99121258 nm vacuum is 632.81622 nm in standard air
    assert standard_vacuum_to_air_nm(632.99121258) == pytest.approx(632.81622, abs=1e-5)


@settings(max_examples=200, deadline=None)
@given(st.floats(min_value=200.1, max_value=2000.0))
def test_standard_air_round_trip(wl_vac):
    # closed form: the iteration solves air = vac / n(vac); inverse must return vac
    # (200.1 nm: the air value of 200 nm vacuum is below the 200 nm limit of the air range)
    air = standard_vacuum_to_air_nm(wl_vac)
    assert air < wl_vac
    assert standard_air_to_vacuum_nm(air) == pytest.approx(wl_vac, abs=1e-9)


def test_standard_air_array_and_range_errors():
    out = standard_air_to_vacuum_nm(np.array([500.0, 600.0]))
    assert out.shape == (2,)
    for bad in (150.0, 2500.0, float("nan"), "x"):
        with pytest.raises(OptionError):
            standard_air_to_vacuum_nm(bad)


# ---------------------------------------------------------------------------------------------
# laser standards
# ---------------------------------------------------------------------------------------------
def _standards():
    t = load_line_list("laser_standards")
    return {str(n): t[i] for i, n in enumerate(t["name"])}


def test_i2_stabilised_633_matches_cipm():
    # CIPM recommended radiation sheet (V): f = 473 612 353 604 kHz, lambda = 632.99121258 nm
    row = _standards()["I2-stabilised He-Ne 633 nm"]
    assert float(row["frequency_hz"]) == 473_612_353_604e3
    assert float(row["wavelength_vac_nm"]) == pytest.approx(632.99121258, abs=1e-12)
    assert float(row["u_r"]) == 2.1e-11


def test_free_running_hene_matches_cipm_2007():
    # CIPM 2007 Recommendation 2 (V): 473.6127 THz, 632.9908 nm, u_r = 1.5e-6
    row = _standards()["He-Ne 633 nm, unstabilised"]
    assert float(row["frequency_hz"]) == 473.6127e12
    assert float(row["wavelength_vac_nm"]) == pytest.approx(632.9908, abs=1e-12)
    assert float(row["u_r"]) == 1.5e-6


# relative tolerance of lambda*f = c: the rounding of the quoted digits
C_TOLERANCE = {
    "I2-stabilised He-Ne 633 nm": 1e-11,  # lambda to 1e-8 nm: <= 7.9e-12 relative
    "He-Ne 633 nm, unstabilised": 1.1e-7,  # f to 0.1 GHz: <= 1.06e-7 relative
    "I2-stabilised frequency-doubled Nd:YAG 532 nm": 1e-11,  # lambda = c/f to 1e-8 nm
}


@pytest.mark.parametrize("name", sorted(C_TOLERANCE))
def test_wavelength_is_c_over_f(name):
    # SI: lambda * f = c exactly (the CIPM list states lambda is rounded)
    row = _standards()[name]
    lam_m = float(row["wavelength_vac_nm"]) * 1e-9
    assert abs(lam_m * float(row["frequency_hz"]) / C_M_PER_S - 1.0) <= C_TOLERANCE[name]
    assert float(row["u_vac_nm"]) == pytest.approx(
        float(row["u_r"]) * float(row["wavelength_vac_nm"]), rel=0.05
    )


def test_free_running_hene_is_distinct_from_ne_line():
    std = _standards()["He-Ne 633 nm, unstabilised"]
    ne = search_lines(element="Ne", near_nm=632.99, tolerance_nm=0.01)
    assert len(ne) == 1
    assert ne["list_name"][0] == "lamp_ne" and ne["kind"][0] == "atomic line"
    assert ne["species"][0] == "Ne I"
    # Ne I 632.81646 nm (air) is 632.99145 nm vacuum; the CIPM laser value is 632.9908 nm
    assert abs(float(ne["wavelength_vac_nm"][0]) - float(std["wavelength_vac_nm"])) > 5e-4
    assert std["kind"] == "standard" and "laser" in str(std["species"])
    both = search_lines(near_nm=632.99, tolerance_nm=0.01)
    assert set(both["list_name"]) == {"lamp_ne", "laser_standards"}
    assert len(both) == 3  # Ne I line, free-running He-Ne, I2-stabilised He-Ne


# ---------------------------------------------------------------------------------------------
# nominal lasers
# ---------------------------------------------------------------------------------------------
def test_nominal_lasers_are_labelled_not_standards():
    t = load_line_list("laser_nominal")
    assert set(t["kind"]) == {"nominal"}
    assert "NOT wavelength standards" in t.meta["caution"]
    for nm in (405, 445, 450, 520, 532, 635, 650, 670, 780, 808, 850, 980, 1064):
        assert nm in set(np.asarray(t["wavelength_vac_nm"], dtype=int))
    # rectangular distribution: u = a / sqrt(3) (JCGM 100 §4.3.7)
    np.testing.assert_allclose(t["u_vac_nm"], t["tolerance_nm"] / math.sqrt(3), atol=5e-4)


# ---------------------------------------------------------------------------------------------
# search_lines
# ---------------------------------------------------------------------------------------------
def test_search_by_element_and_range_sorted():
    t = search_lines(element="hg", min_nm=400, max_nm=600)
    assert len(t) >= 5
    assert set(t["list_name"]) == {"lamp_hg"}
    wl = np.asarray(t["wavelength_nm"], dtype=float)
    assert np.all(np.diff(wl) > 0)
    assert wl.min() >= 400 and wl.max() <= 600
    assert t.meta["medium"] == "vacuum"


def test_search_air_uses_stored_standard_air_values():
    t = search_lines(element="Na", near_nm=589.0, tolerance_nm=0.01, medium="air")
    assert len(t) == 1
    assert float(t["wavelength_nm"][0]) == pytest.approx(588.9950, abs=1e-9)
    assert t.meta["standard_air"] is True
    # the same line in vacuum is 589.15824 nm (check-values §6, C): outside the air window
    assert len(search_lines(element="Na", near_nm=589.0, tolerance_nm=0.01)) == 0


def test_search_air_with_callable():
    def shift(wl):
        return np.asarray(wl) - 1.0  # an arbitrary stand-in for real-air dispersion

    t = search_lines(element="Na", medium="air", conditions={"t": 20}, to_air=shift)
    np.testing.assert_allclose(t["wavelength_air_nm"], t["wavelength_vac_nm"] - 1.0)
    assert t.meta["standard_air"] is False


def test_search_air_with_conditions_uses_air_module(monkeypatch):
    fake = types.ModuleType("ftsource.physics.air")
    calls = []

    def vacuum_to_air_nm(wl, conditions):
        calls.append(conditions)
        return np.asarray(wl) * 0.5

    fake.vacuum_to_air_nm = vacuum_to_air_nm
    monkeypatch.setitem(sys.modules, "ftsource.physics.air", fake)
    t = search_lines(element="He", medium="air", conditions="lab")
    assert calls and calls[0] == "lab"
    np.testing.assert_allclose(t["wavelength_nm"], t["wavelength_vac_nm"] * 0.5)


def test_search_air_conditions_without_air_module(monkeypatch):
    monkeypatch.setitem(sys.modules, "ftsource.physics.air", None)  # import fails
    with pytest.raises(OptionError, match="to_air"):
        search_lines(medium="air", conditions="lab")


@pytest.mark.parametrize(
    "kwargs",
    [
        {"medium": "water"},
        {"min_nm": 700, "max_nm": 600},
        {"near_nm": 600},
        {"tolerance_nm": 1},
        {"min_nm": -1},
        {"lists": ["nope"]},
        {"near_nm": "x", "tolerance_nm": 1},
    ],
)
def test_search_rejects_bad_options(kwargs):
    with pytest.raises(OptionError):
        search_lines(**kwargs)


def test_search_empty_result():
    t = search_lines(element="Kr", min_nm=350, max_nm=360)
    assert len(t) == 0


# ---------------------------------------------------------------------------------------------
# identify
# ---------------------------------------------------------------------------------------------
def test_identify_finds_ne_633():
    # Ne I 632.81646 nm air -> 632.99145 nm vacuum (check-values §6: V2 / C)
    found = identify(632.9915, 0.0001)
    assert isinstance(found[0], Candidate)
    best = found[0]
    assert best.list_name == "lamp_ne" and best.species == "Ne I"
    assert best.wavelength_vac_nm == pytest.approx(632.99145, abs=1e-5)
    assert best.within_tolerance
    assert best.kind == "atomic line"
    assert best.difference_nm == pytest.approx(632.9915 - best.wavelength_vac_nm, abs=1e-12)
    assert best.difference_ppm == pytest.approx(
        best.difference_nm / best.wavelength_vac_nm * 1e6, rel=1e-12
    )
    diffs = [abs(c.difference_nm) for c in found]
    assert diffs == sorted(diffs) and len(found) == 3


def test_identify_says_no_match_at_700nm():
    found = identify(700.000, 0.001)
    assert found, "the nearest entries are still reported"
    assert not any(c.within_tolerance for c in found)


def test_identify_i2_standard_only_with_tight_uncertainty():
    found = identify(632.99121258, 1e-6, lists="laser_standards", max_candidates=1)
    assert found[0].within_tolerance and found[0].kind == "standard"
    # the Ne atomic line is 0.24 pm away: outside k*u = 2 fm
    ne = identify(632.99121258, 1e-6, lists=["lamp_ne"], max_candidates=1)
    assert not ne[0].within_tolerance


def test_identify_nominal_laser_uses_its_tolerance():
    found = identify(652.0, 0.01, lists="laser_nominal", max_candidates=1)
    # 650 nm nominal +-5 nm: u_ref = 5/sqrt(3) = 2.89 nm, k*u = 5.77 nm > 2 nm
    assert found[0].within_tolerance and found[0].kind == "nominal"


def test_identify_empty_lists_gives_empty_list():
    assert identify(600.0, 0.1, lists=[]) == []


@pytest.mark.parametrize(
    ("args", "kwargs"),
    [
        ((-1.0, 0.1), {}),
        ((600.0, -0.1), {}),
        ((600.0, 0.1), {"k": 0}),
        ((600.0, 0.1), {"max_candidates": 0}),
        ((600.0, 0.1), {"max_candidates": 1.5}),
        ((600.0, 0.1), {"lists": "lamp_xx"}),
    ],
)
def test_identify_rejects_bad_input(args, kwargs):
    with pytest.raises(OptionError):
        identify(*args, **kwargs)


def test_candidate_is_frozen():
    c = identify(632.9915, 0.0001)[0]
    with pytest.raises(AttributeError):
        c.species = "x"


def test_fast_reader_gives_astropys_table():
    """load_line_list reads the bundled ECSV files with PyYAML's C loader and the csv module;
    astropy's ECSV reader (a general-purpose library) is the oracle: the same columns, types,
    units, descriptions, formats, masks, values and meta for every bundled list."""
    import numpy as np
    from astropy.table import Table

    from ftsource.linelists import _data_folder, _read_ecsv, line_list_names

    for name in line_list_names():
        path = _data_folder() / (name + ".ecsv")
        want, got = Table.read(path, format="ascii.ecsv"), _read_ecsv(path)
        assert got is not None, name
        assert got.colnames == want.colnames and got.meta == want.meta, name
        for c in want.colnames:
            a, b = want[c], got[c]
            assert (type(a), a.dtype, a.unit, a.description, a.format) == (
                type(b), b.dtype, b.unit, b.description, b.format), (name, c)
            assert np.array_equal(np.ma.getmaskarray(a), np.ma.getmaskarray(b)), (name, c)
            fa, fb = np.ma.filled(a, a.dtype.type()), np.ma.filled(b, b.dtype.type())
            assert np.array_equal(fa, fb, equal_nan=a.dtype.kind == "f"), (name, c)


def test_fast_reader_declines_other_forms(tmp_path):
    from ftsource.linelists import _read_ecsv

    p = tmp_path / "x.ecsv"
    p.write_text("# %ECSV 1.0\n# ---\n# datatype:\n# - {name: a, datatype: complex128}\na\n1j\n")
    assert _read_ecsv(p) is None  # astropy's reader takes over
    p.write_text("a,b\n1,2\n")
    assert _read_ecsv(p) is None
