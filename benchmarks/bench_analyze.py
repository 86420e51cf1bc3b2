"""Time the whole ``analyze`` path on a 2**22-sample record against one planned FFT.

Run:  python benchmarks/bench_analyze.py [--log2n 22] [--repeat 3]

Prints the time of each stage and the ratio of the whole analysis to one planned pyfftw
real FFT of the same length, both measured in this run on this machine, so the ratio is
comparable across machines. The record is simulated (a narrow line with a quadrature
reference, uneven mirror speed): invented data, made here.
"""

from __future__ import annotations

import argparse
import time

import numpy as np

try:  # run from a source checkout without installing
    import ftsource  # noqa: F401
except ImportError:  # pragma: no cover
    import sys
    from pathlib import Path

    sys.path.insert(0, str(Path(__file__).resolve().parent.parent))


def _best(fn, repeat):
    best = np.inf
    out = None
    for _ in range(repeat):
        t0 = time.perf_counter()
        out = fn()
        best = min(best, time.perf_counter() - t0)
    return best, out


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--log2n", type=int, default=22)
    ap.add_argument("--repeat", type=int, default=3)
    args = ap.parse_args()
    n = 1 << args.log2n

    from ftsource import simulate as S
    from ftsource.analysis import AnalysisOptions, analyze
    from ftsource.spectrum.transform import FFTPlanner

    fs = 192_000.0
    scan = S.Scan(sample_rate_hz=fs, duration_s=n / fs, opd_amplitude_cm=0.5,
                  sweep_rate_hz=0.5, speed_jitter=0.05)
    t0 = time.perf_counter()
    sim = S.simulate(S.laser(632.0), scan, S.ReferenceChannel(quadrature_deg=85), rng=1)
    t_sim = time.perf_counter() - t0
    assert sim.record.n_samples == n

    planner = FFTPlanner()
    x = np.random.default_rng(0).normal(size=n)
    planner.rfft(x)  # plan once (FFTW_ESTIMATE), then time execution only
    t_fft, _ = _best(lambda: planner.rfft(x), args.repeat)

    opts = AnalysisOptions(reference_wavelength_nm=632.991, medium="vacuum")
    analyze(sim.record, opts, planner=planner)  # warm-up: imports, plans
    t_all, res = _best(lambda: analyze(sim.record, opts, planner=planner), args.repeat)

    from ftsource.interferogram import opd, resample
    c = sim.record.columns
    t_opd, path = _best(lambda: opd.opd_from_quadrature(c["ref_i"], c["ref_q"], fs, 632.991), 1)
    lim = resample.sampling_limits(path, fs, 632.991)
    t_res, _ = _best(lambda: resample.resample_sweeps(c["signal"], path, lim.dx_cm), 1)

    print(f"record: 2^{args.log2n} = {n} samples (simulated in {t_sim:.2f} s)")
    print(f"one planned pyfftw rfft of {n} points: {t_fft * 1e3:.1f} ms ({planner.backend})")
    print(f"optical path from the reference:      {t_opd:.3f} s  ({t_opd / t_fft:.0f}x FFT)")
    print(f"resampling to a uniform OPD grid:     {t_res:.3f} s  ({t_res / t_fft:.0f}x FFT)")
    print(f"whole analyze():                      {t_all:.3f} s  ({t_all / t_fft:.0f}x FFT)")
    print(f"ratio analyze / FFT = {t_all / t_fft:.1f}")
    print(f"(centre found: {res.figures.centre_wavelength_nm:.6f} nm, truth 632.000000 nm)")


if __name__ == "__main__":
    main()
