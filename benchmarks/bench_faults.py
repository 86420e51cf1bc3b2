"""Time ``analyze`` on 2**22-sample records with rig faults against a clean one.

Run:  python benchmarks/bench_faults.py [--log2n 22] [--cases clean,abrupt,...]

Issue 11 asks that no record of at most 2**22 samples take longer than twice a clean record of
that length. Each case is made by the forward model of ``tests/rig_model.py`` (invented data,
made here): ``clean`` (a 650 nm laser, quadrature reference, 5 % wobble), ``abrupt`` (a
triangle scan with sharp reversals on a single reference channel), ``wobble`` (30 % speed
wobble at 3 Hz, quadrature), ``undersampled`` (3.4 samples per fringe: refused),
``dead`` (a constant source channel: refused), ``comb`` (a multimode laser with revivals) and
``edge`` (a 0.5 nm line scanned from 0.2 mm past ZPD). Prints each time and its ratio to
``clean``.
"""

from __future__ import annotations

import argparse
import time

import _paths  # noqa: F401  (the tests' forward model; the checkout's ftsource)
import numpy as np
import rig_model as rm

FS = 400e3


def make(case: str, n: int):
    rng = np.random.default_rng(1)
    t = np.arange(n) / FS
    fs = FS
    spf = 12.0  # samples per reference fringe on the straight parts of the scan
    wob, rounding, amp, centre, src = 0.05, 0.2, 0.5, 0.6, ("line", 0.0)
    single = False
    if case == "abrupt":
        rounding, single = 0.0, True
    elif case == "wobble":
        wob = 0.3
    elif case == "undersampled":
        spf = 3.4
    elif case == "comb":
        src = ("comb", 0.0)
        amp, centre = 0.8, 0.7
    elif case == "edge":
        src = ("line", 0.5)
        amp, centre = 0.15, 0.17
    period = 4 * amp / (FS * rm.HENE_NM * 1e-7 / spf)  # triangle of OPD speed 4A/T
    tau = rm.wobbled_time(t, depth=wob, freq_hz=3.0)
    x = rm.triangle_opd(tau, amplitude_cm=amp, period_s=period, rounding=rounding, phase=0.1,
                        centre_cm=centre)
    if src[0] == "comb":
        sig = rm.comb(x, 650.0, 1 / 0.775, 7)
    else:
        sig = rm.gaussian_line(x, 650.0, src[1])
    sig = sig + 0.002 * rng.normal(size=n)
    if case == "dead":
        sig = np.zeros(n)
    if single:
        return rm.record(sig, fs, ref=rm.single_channel(x, rng))
    i, q = rm.quadrature_channels(x, rng)
    return rm.record(sig, fs, ref_i=i, ref_q=q)


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--log2n", type=int, default=22)
    ap.add_argument("--cases", default="clean,abrupt,wobble,undersampled,dead,comb,edge")
    args = ap.parse_args()
    n = 1 << args.log2n

    from ftsource.analysis import AnalysisOptions, analyze
    from ftsource.errors import FtsourceError

    opts = AnalysisOptions(medium="vacuum")
    analyze(make("clean", 1 << 19), opts)  # warm-up: imports
    times = {}
    for case in args.cases.split(","):
        rec = make(case, n)
        t0 = time.perf_counter()
        try:
            analyze(rec, opts)
            what = "result"
        except FtsourceError as e:
            what = f"refused: {str(e)[:60]}..."
        times[case] = time.perf_counter() - t0
        ratio = times[case] / times["clean"] if "clean" in times else float("nan")
        print(f"{case:>13}: {times[case]:8.2f} s  ({ratio:5.2f} x clean)  {what}", flush=True)


if __name__ == "__main__":
    main()
