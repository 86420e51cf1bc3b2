"""Speed and memory of ``ftsource`` against baselines measured in the same run.

Run:  python benchmarks/bench_speed.py [--log2n 22] [--repeat 3] [--sizes 18,20,22,24]
                                       [--workdir DIR] [--skip-sizes]

Every figure is a ratio to something timed in this run on this machine, so it can be compared
across machines:

1. end-to-end ``read_record`` + ``analyze`` of a 2**log2n-sample quadrature ``.npz`` (time,
   signal, I, Q) against the plain script a user would write (:func:`plain_script`:
   ``np.load``, ``arctan2`` + ``unwrap``, ``np.interp`` onto a uniform grid, numpy ``rfft``)
   — target ≤ 1 — and against one planned pyfftw real FFT of the same length — target ≤ 10;
   the same two as fresh processes (``ftsource analyze`` against ``python plain.py``:
   imports included);
2. peak memory of reading + analysing (tracemalloc, in a fresh process) over the record's
   size in memory — target ≤ 6 — for the ``.npz`` (read into memory) and for the same record
   as a memory-mapped ``.npy`` (tracemalloc does not count the mapped file);
3. time per sample at several sizes (cost should grow as N log N);
4. a record with resolved lines (an LED) and one with a resolved laser line against the
   clean narrow-line record of the same length — target ≤ 2;
5. ``ftsource --help`` and ``ftsource analyze --help`` — target < 0.5 s.

The records are simulated here (invented data): a 632 nm line with a quadrature reference at
85°, uneven mirror speed, 192 kHz sampling.
"""

from __future__ import annotations

import argparse
import json
import os
import subprocess
import sys
import tempfile
import textwrap
import time
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(ROOT))  # the checkout's ftsource, whatever is installed

FS = 192_000.0
REF_NM = 632.991

PLAIN = textwrap.dedent(
    """
    import sys
    import numpy as np

    def plain_script(path):
        d = np.load(path)
        t, s, i, q = d["time"], d["signal"], d["ref_i"], d["ref_q"]
        fs = 1.0 / (t[1] - t[0])
        phase = np.unwrap(np.arctan2(q - q.mean(), i - i.mean()))
        x = phase / (2 * np.pi) * 632.991e-7              # OPD, cm
        x = np.maximum.accumulate(x)                      # np.interp needs it increasing
        grid = np.linspace(x[0], x[-1], x.size)
        y = np.interp(grid, x, s - s.mean())
        spec = np.abs(np.fft.rfft(y))
        return fs, spec

    if __name__ == "__main__":
        plain_script(sys.argv[1])
    """
)


def plain_script(path):
    """The plain script a user would write (the same code as :data:`PLAIN`)."""
    ns: dict = {}
    exec(compile(PLAIN, "plain.py", "exec"), ns)  # noqa: S102 - our own text above
    return ns["plain_script"](path)


#: "cpu" times CPU seconds (this process and its children) instead of the wall clock: on a
#: machine shared with other work the wall clock measures the other work too.
CLOCK = {"name": "wall"}


def _now():
    if CLOCK["name"] == "wall":
        return time.perf_counter()
    import resource

    me = resource.getrusage(resource.RUSAGE_SELF)
    kids = resource.getrusage(resource.RUSAGE_CHILDREN)
    return me.ru_utime + me.ru_stime + kids.ru_utime + kids.ru_stime


def _best(fn, repeat):
    best, out = np.inf, None
    for _ in range(repeat):
        t0 = _now()
        out = fn()
        best = min(best, _now() - t0)
    return best, out


def make_record(path: Path, log2n: int, source: str = "laser") -> None:
    from ftsource import simulate as S
    from ftsource.io.records import write_record_npz

    n = 1 << log2n
    scan = S.Scan(sample_rate_hz=FS, duration_s=n / FS, opd_amplitude_cm=0.5,
                  sweep_rate_hz=0.5, speed_jitter=0.05)
    model = {
        "laser": lambda: S.laser(632.0),
        "led": lambda: S.led(630.0, 20.0),
        "resolved-laser": lambda: S.laser(632.0, fwhm_nm=0.02),
    }[source]()
    sim = S.simulate(model, scan, S.ReferenceChannel(quadrature_deg=85), rng=1)
    assert sim.record.n_samples == n
    write_record_npz(path, sim.record)


def to_npy(npz: Path, npy: Path) -> None:
    """The record as a structured ``.npy`` (one float64 field per column) with its sidecar."""
    d = np.load(npz)
    names = [k for k in d.files if k != "metadata"]
    out = np.zeros(d[names[0]].size, dtype=[(k, "<f8") for k in names])
    for k in names:
        out[k] = d[k]
    np.save(npy, out)
    if "metadata" in d.files:
        (npy.parent / (npy.name + ".meta")).write_text(
            "\n".join(str(m) for m in d["metadata"]) + "\n")


def analyse_file(path):
    from ftsource.analysis import AnalysisOptions, analyze
    from ftsource.io.records import read_record
    from ftsource.spectrum.transform import FFTPlanner

    record = read_record(path)
    opts = AnalysisOptions(reference_wavelength_nm=REF_NM, medium="vacuum")
    return analyze(record, opts, planner=FFTPlanner())


def fft_time(n, repeat):
    from ftsource.spectrum.transform import FFTPlanner

    planner = FFTPlanner()
    x = np.random.default_rng(0).normal(size=n)
    planner.rfft(x)  # plan once (FFTW_ESTIMATE), then time execution only
    t, _ = _best(lambda: planner.rfft(x), repeat)
    return t, planner.backend


def _run(argv, env=None):
    t0 = _now()
    proc = subprocess.run(argv, capture_output=True, text=True, env=env, check=False)
    dt = _now() - t0
    if proc.returncode not in (0,):
        raise SystemExit(f"{argv} failed ({proc.returncode}): {proc.stderr[-2000:]}")
    return dt, proc.stdout


def _env():
    return dict(os.environ, PYTHONPATH=str(ROOT) + os.pathsep + os.environ.get("PYTHONPATH", ""))


def peak_memory(path) -> dict:
    """Peak traced memory (tracemalloc) and max RSS growth of read + analyse, in a fresh
    process, with the record's size in memory."""
    code = textwrap.dedent(
        f"""
        import json, resource, sys, tracemalloc
        sys.path.insert(0, {str(ROOT)!r})
        import numpy, scipy.fft, astropy.table, pyfftw  # imports are not the record's cost
        from ftsource.analysis import AnalysisOptions, analyze
        from ftsource.io.records import read_record
        from ftsource.spectrum.transform import FFTPlanner
        import ftsource.result, ftsource.lines.fitting, ftsource.interferogram.resample
        def hwm():  # peak resident set of this process since exec (ru_maxrss would start
            # from the parent's: fork copies it)
            for line in open("/proc/self/status"):
                if line.startswith("VmHWM:"):
                    return int(line.split()[1]) * 1024
        rss0 = hwm()
        tracemalloc.start()
        rec = read_record({str(path)!r})
        size = sum(c.nbytes for c in rec.columns.values())
        res = analyze(rec, AnalysisOptions(reference_wavelength_nm={REF_NM}, medium="vacuum"),
                      planner=FFTPlanner())
        cur, peak = tracemalloc.get_traced_memory()
        rss1 = hwm()
        print(json.dumps(dict(size=size, peak=peak, rss_growth=rss1 - rss0)))
        """
    )
    _, out = _run([sys.executable, "-c", code], env=_env())
    return json.loads(out.strip().splitlines()[-1])


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--log2n", type=int, default=22)
    ap.add_argument("--repeat", type=int, default=3)
    ap.add_argument("--sizes", default="18,20,22,24")
    ap.add_argument("--skip-sizes", action="store_true", help="skip the time-per-sample table")
    ap.add_argument("--workdir", help="keep the simulated records here (default: a temp dir)")
    ap.add_argument("--clock", choices=("wall", "cpu"), default="wall",
                    help="time by the wall clock (default) or by CPU seconds (a busy machine)")
    args = ap.parse_args()
    CLOCK["name"] = args.clock
    work = Path(args.workdir or tempfile.mkdtemp(prefix="ftsource-bench-"))
    work.mkdir(parents=True, exist_ok=True)
    n = 1 << args.log2n

    def record(log2n, source="laser"):
        p = work / f"{source}-{log2n}.npz"
        if not p.exists():
            make_record(p, log2n, source)
        return p

    main_rec = record(args.log2n)
    print(f"machine: {os.cpu_count()} CPUs, Python {sys.version.split()[0]}, numpy "
          f"{np.__version__}; load average {os.getloadavg()[0]:.2f} at start; clock: "
          f"{args.clock}")
    print(f"record: 2^{args.log2n} = {n} samples, {main_rec.stat().st_size / 2**20:.0f} MiB "
          "(time, signal, ref_i, ref_q as float64)")

    # 1. end to end, in process
    t_fft, backend = fft_time(n, args.repeat)
    plain_script(main_rec)  # warm the page cache and numpy
    t_plain, _ = _best(lambda: plain_script(main_rec), args.repeat)
    analyse_file(main_rec)  # warm: imports
    t_all, res = _best(lambda: analyse_file(main_rec), args.repeat)
    print(f"\none planned {backend} rfft of {n} points: {t_fft * 1e3:.1f} ms")
    print(f"plain script (np.load, arctan2+unwrap, np.interp, numpy rfft): {t_plain:.3f} s")
    print(f"ftsource read + analyze:                 {t_all:.3f} s")
    print(f"  ratio analyze / plain script = {t_all / t_plain:.2f}   (target <= 1)")
    print(f"  ratio analyze / one FFT      = {t_all / t_fft:.1f}   (target <= 10, stretch 3)")
    print(f"  (centre {res.centre_wavelength.to_value('nm'):.6f} nm, truth 632.000000 nm)")

    # 1b. fresh processes: imports included
    plain_py = work / "plain.py"
    plain_py.write_text(PLAIN)
    env = _env()
    t_plain_p, _ = _best(lambda: _run([sys.executable, str(plain_py), str(main_rec)], env),
                         args.repeat)
    cli = [sys.executable, "-m", "ftsource", "analyze", str(main_rec),
           "--reference-wavelength", f"{REF_NM}nm", "--medium", "vacuum"]
    t_cli, _ = _best(lambda: _run(cli, env), args.repeat)
    print(f"\nfresh process: python plain.py {t_plain_p:.2f} s; ftsource analyze {t_cli:.2f} s; "
          f"ratio {t_cli / t_plain_p:.2f}; ratio to one FFT {t_cli / t_fft:.0f}")

    # 2. memory
    mem = peak_memory(main_rec)
    print(f"\npeak memory (tracemalloc) {mem['peak'] / 2**20:.0f} MiB, record in memory "
          f"{mem['size'] / 2**20:.0f} MiB: ratio {mem['peak'] / mem['size']:.2f} (target <= 6); "
          f"max RSS grew {mem['rss_growth'] / 2**20:.0f} MiB "
          f"({mem['rss_growth'] / mem['size']:.2f}x)")

    # 2b. the same record as a memory-mapped .npy (columns are views of the file)
    npy = work / f"laser-{args.log2n}.npy"
    if not npy.exists():
        to_npy(main_rec, npy)
    mem = peak_memory(npy)
    print(f"memory-mapped .npy of it: peak memory (tracemalloc) {mem['peak'] / 2**20:.0f} MiB, "
          f"{mem['peak'] / mem['size']:.2f} x the record in memory; max RSS grew "
          f"{mem['rss_growth'] / 2**20:.0f} MiB (mapped pages of the file included)")

    # 3. time per sample
    if not args.skip_sizes:
        print("\nsize      samples    analyze s   ns/sample   ns/(sample*log2 N)")
        for k in (int(s) for s in args.sizes.split(",")):
            p = record(k)
            reps = max(1, args.repeat if k <= 22 else 1)
            analyse_file(p)
            t, _ = _best(lambda p=p: analyse_file(p), reps)
            m = 1 << k
            print(f"2^{k:<6} {m:>10} {t:>10.3f} {t / m * 1e9:>11.1f} {t / m / k * 1e9:>14.2f}")

    # 4. resolved lines
    print("\nrecord kind          analyze s   ratio to the clean record (target <= 2)")
    for source in ("led", "resolved-laser"):
        p = record(args.log2n, source)
        analyse_file(p)
        t, r = _best(lambda p=p: analyse_file(p), args.repeat)
        print(f"{source:<20} {t:>9.3f}   {t / t_all:.2f}   (kind {r.kind})")

    # 5. help
    t_help, _ = _best(lambda: _run([sys.executable, "-m", "ftsource", "--help"], env), 5)
    t_ahelp, _ = _best(lambda: _run([sys.executable, "-m", "ftsource", "analyze", "--help"],
                                    env), 5)
    print(f"\nftsource --help {t_help:.3f} s; ftsource analyze --help {t_ahelp:.3f} s "
          "(target < 0.5 s)")
    print(f"load average at the end {os.getloadavg()[0]:.2f}")


if __name__ == "__main__":
    main()
