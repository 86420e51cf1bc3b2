"""Time ``analyze`` on hard 2**22-sample records against a clean one of the same length.

Run:  python benchmarks/hard_records.py [--log2n 22] [--cases clean,lorentzian,...]

Issue 11 asks that no record of at most 2**22 samples take longer than twice a clean record.
The records are invented and made here by the forward model of ``tests/rig_model.py`` plus
closed-form sources: ``clean`` (a 650 nm laser, quadrature reference without distortion, 5 %
speed wobble), ``lorentzian`` (a resolved Lorentzian line of 0.5 nm FWHM through ZPD),
``lorentzian-edge`` (the same line with ZPD 0.5 mm from a turnaround, inside its rounded part,
so the sweeps give magnitude spectra and the profile is fitted on them), ``doublet`` (two equal
lines 1.4 resolution elements apart), ``harmonic`` (3 % second and third
harmonic distortion of both reference channels, 10-bit quantisation), ``wobble`` (30 % speed
wobble at 3 Hz) and ``multimode`` (a laser diode comb scanned from before ZPD to past its first
revival). Prints wall-clock and CPU seconds of each and their ratios to ``clean``; on a shared
machine the CPU ratio is the one to read.
"""

from __future__ import annotations

import argparse
import time

import _paths  # noqa: F401  (the tests' forward model; the checkout's ftsource)
import numpy as np
import rig_model as rm

FS = 400e3
CENTRE_NM = 650.0
CASES = ("clean", "lorentzian", "lorentzian-edge", "doublet", "harmonic", "wobble",
         "multimode")


def _quadrature(x, rng, *, h2, h3, bits):
    ph = 2 * np.pi * x / (rm.HENE_NM * 1e-7)
    i = 0.04 + np.cos(ph) + h2 * np.cos(2 * ph + 0.4) + h3 * np.cos(3 * ph + 1.3)
    q = (-0.02 + 0.85 * np.sin(ph + np.deg2rad(7)) + h2 * np.sin(2 * ph + 1.1)
         + h3 * np.sin(3 * ph + 0.2))
    return (rm.quantise(i + rng.normal(0, 0.003, x.size), bits, 3.0),
            rm.quantise(q + rng.normal(0, 0.003, x.size), bits, 3.0))


def make(case: str, n: int):
    """The record of one case (invented data)."""
    rng = np.random.default_rng(1)
    t = np.arange(n) / FS
    spf = 12.0  # samples per reference fringe on the straight parts of the scan
    # -1.5 mm .. 8.5 mm: ZPD well inside the straight part of each sweep (the rounded
    # turnarounds take 1 mm at each end)
    wob, amp, centre = 0.05, 0.5, 0.35
    if case == "wobble":
        wob = 0.3
    elif case == "multimode":
        amp, centre = 0.55, 0.35  # -2 mm .. 9 mm: ZPD and the first revival at 7.75 mm
    elif case == "lorentzian-edge":
        centre = 0.45  # -0.5 mm .. 9.5 mm: ZPD inside the rounded turnaround
    period = 4 * amp / (FS * rm.HENE_NM * 1e-7 / spf)  # triangle of OPD speed 4A/T
    tau = rm.wobbled_time(t, depth=wob, freq_hz=3.0)
    x = rm.triangle_opd(tau, amplitude_cm=amp, period_s=period, rounding=0.2, phase=0.1,
                        centre_cm=centre)
    s0 = 1e7 / CENTRE_NM
    if case.startswith("lorentzian"):
        w = 0.5 * 1e7 / CENTRE_NM**2  # 0.5 nm FWHM in cm⁻¹
        sig = np.exp(-np.pi * w * np.abs(x)) * np.cos(2 * np.pi * s0 * x)
    elif case == "doublet":
        res = 1.81 / (2 * (amp + centre))  # Happ-Genzel FWHM for the longest side (about)
        sig = 0.5 * (np.cos(2 * np.pi * s0 * x) + np.cos(2 * np.pi * (s0 + 1.4 * res) * x))
    elif case == "multimode":
        k = np.arange(11) - 5
        a = np.exp(-4 * np.log(2) * (k / 5.0) ** 2)
        sig = sum(ak * np.cos(2 * np.pi * (s0 + kk / 0.775) * x) for ak, kk in zip(a, k,
                                                                                strict=True))
        sig = sig / a.sum() * np.exp(-np.pi * 0.05 * np.abs(x))
    else:
        sig = np.cos(2 * np.pi * s0 * x)
    sig = sig + 0.002 * rng.normal(size=n)
    h = 0.03 if case == "harmonic" else 0.0
    i, q = _quadrature(x, rng, h2=h, h3=h, bits=10 if case == "harmonic" else 14)
    return rm.record(sig, FS, ref_i=i, ref_q=q)


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--log2n", type=int, default=22)
    ap.add_argument("--cases", default=",".join(CASES))
    args = ap.parse_args()
    n = 1 << args.log2n

    import warnings

    from ftsource.analysis import AnalysisOptions, analyze
    from ftsource.errors import FtsourceWarning

    warnings.simplefilter("ignore", FtsourceWarning)  # each case's findings are in its result

    opts = AnalysisOptions(medium="vacuum")
    analyze(make("clean", 1 << 18), opts)  # warm-up: imports
    wall, cpu = {}, {}
    for case in args.cases.split(","):
        rec = make(case, n)
        t0, c0 = time.perf_counter(), time.process_time()
        d = analyze(rec, opts).to_dict()
        wall[case], cpu[case] = time.perf_counter() - t0, time.process_time() - c0
        rw = wall[case] / wall["clean"] if "clean" in wall else float("nan")
        rc = cpu[case] / cpu["clean"] if "clean" in cpu else float("nan")
        src = [ln for ln in d["lines"] if ln["flag"] is None]
        pair = " (unresolved pair possible)" if any(ln["pair_possible"] for ln in src) else ""
        print(f"{case:>15}: wall {wall[case]:7.2f} s ({rw:4.2f} x clean)  cpu {cpu[case]:7.2f} s "
              f"({rc:4.2f} x clean)  kind {d['summary']['kind']}, {len(src)} source "
              f"line(s){pair}", flush=True)


if __name__ == "__main__":
    main()
