"""Tests of ftsource.spectrum.transform against numpy.fft (a general-purpose library)."""

from __future__ import annotations

import numpy as np
import pytest

from ftsource.errors import OptionError
from ftsource.spectrum.transform import FFTPlanner, next_fft_length

LENGTHS = [1, 2, 3, 7, 64, 1000, 1025, 4096, 10007]


def _rel_err(got, want):
    return np.max(np.abs(got - want)) / max(np.max(np.abs(want)), 1e-300)


@pytest.mark.parametrize("n", LENGTHS)
def test_rfft_equals_numpy(n):
    planner = FFTPlanner()
    a = np.random.default_rng(n).normal(size=n)
    # both are O(log n) rounding of a float64 transform: 1e-12 relative is ~1000 eps
    for m in (None, n + 5, 2 * n, max(n // 2, 1)):  # as is, zero-filled, truncated
        got = planner.rfft(a, m)
        want = np.fft.rfft(a, m)
        assert got.shape == want.shape
        assert _rel_err(got, want) < 1e-12


@pytest.mark.parametrize("effort", ["estimate", "measure"])
def test_effort_and_threads_do_not_change_result(effort):
    a = np.random.default_rng(1).normal(size=300)
    got = FFTPlanner(effort=effort, threads=2).rfft(a, 512)
    assert _rel_err(got, np.fft.rfft(a, 512)) < 1e-12


def test_plans_cached_per_length():
    planner = FFTPlanner()
    a = np.random.default_rng(2).normal(size=100)
    planner.rfft(a, 256)
    plan = planner._plans[(256, 1)]
    planner.rfft(a[:50], 256)
    planner.rfft(a, 128)
    assert planner.cached_lengths == (128, 256)
    assert planner._plans[(256, 1)] is plan  # reused, not re-planned


def test_results_are_independent_arrays():
    planner = FFTPlanner()
    a, b = np.random.default_rng(3).normal(size=(2, 64))
    ra = planner.rfft(a)
    rb = planner.rfft(b)
    assert _rel_err(ra, np.fft.rfft(a)) < 1e-12  # not overwritten by the second call
    assert not np.shares_memory(ra, rb)


def test_input_not_mutated():
    planner = FFTPlanner()
    a = np.random.default_rng(4).normal(size=1000)
    a0 = a.copy()
    planner.rfft(a, 512)  # truncation
    planner.rfft(a, 4096)  # zero fill
    np.testing.assert_array_equal(a, a0)
    ro = a.copy()
    ro.setflags(write=False)  # read-only input (records are read-only) is fine
    assert _rel_err(planner.rfft(ro), np.fft.rfft(a)) < 1e-12


def test_integer_and_strided_input():
    planner = FFTPlanner()
    a = np.arange(40)
    assert _rel_err(planner.rfft(a), np.fft.rfft(a)) < 1e-12
    b = np.random.default_rng(5).normal(size=80)[::2]
    assert _rel_err(planner.rfft(b), np.fft.rfft(b)) < 1e-12


def test_unknown_effort_raises():
    with pytest.raises(OptionError, match="effort"):
        FFTPlanner(effort="exhaustive")


def test_wisdom_round_trip():
    p1 = FFTPlanner()
    p1.rfft(np.ones(32))
    wisdom = p1.export_wisdom()
    p2 = FFTPlanner(wisdom=wisdom)
    a = np.random.default_rng(6).normal(size=32)
    assert _rel_err(p2.rfft(a), np.fft.rfft(a)) < 1e-12


@pytest.mark.parametrize(
    "n,expected",
    [(0, 1), (1, 1), (2, 2), (3, 4), (4, 4), (5, 8), (1023, 1024), (1024, 1024),
     (1025, 2048), (3 * 2**20, 2**22)],
)
def test_next_fft_length(n, expected):
    # closed form: the smallest power of two ≥ n
    assert next_fft_length(n) == expected


def test_plans_cached_per_thread_count():
    planner = FFTPlanner()
    a = np.random.default_rng(7).normal(size=256)
    one = planner.rfft(a)
    two = planner.rfft(a, threads=2)
    assert set(planner._plans) == {(256, 1), (256, 2)}
    assert planner.cached_lengths == (256,)
    # closed reference: numpy.fft (general-purpose library)
    assert _rel_err(one, np.fft.rfft(a)) < 1e-12 and _rel_err(two, np.fft.rfft(a)) < 1e-12


@pytest.mark.parametrize("bad", [0, -1, 1.5, True])
def test_bad_thread_count_raises(bad):
    with pytest.raises(OptionError, match="threads"):
        FFTPlanner(threads=bad)


def test_numpy_backend_equals_pyfftw():
    a = np.random.default_rng(8).normal(size=1000)
    fallback = FFTPlanner(backend="numpy")
    assert fallback.backend == "numpy" and fallback.export_wisdom() is None
    assert FFTPlanner().backend == "pyfftw"
    # numpy.fft is the reference (general-purpose library)
    assert _rel_err(fallback.rfft(a, 1024), FFTPlanner().rfft(a, 1024)) < 1e-12


def test_wisdom_file_round_trip(tmp_path):
    p1 = FFTPlanner()
    p1.rfft(np.ones(48))
    f = tmp_path / "fft.wisdom"
    p1.save_wisdom(f)
    wisdom = FFTPlanner.load_wisdom(f)
    assert wisdom == p1.export_wisdom()
    a = np.random.default_rng(9).normal(size=48)
    assert _rel_err(FFTPlanner(wisdom=wisdom).rfft(a), np.fft.rfft(a)) < 1e-12
    assert list(tmp_path.iterdir()) == [f]  # no temporary file left


def test_not_a_wisdom_file_raises(tmp_path):
    f = tmp_path / "x.wisdom"
    f.write_text("hello\n")
    with pytest.raises(OptionError, match="wisdom"):
        FFTPlanner.load_wisdom(f)
