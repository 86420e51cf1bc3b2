"""Make the figures of the guides in docs/ from the bundled demo data (an invented scenario).

The tool itself does the work: ``ftsource demo --out DIR`` analyses the three bundled records
and writes each result (``result.json``, ``spectrum.ecsv``); the figures are drawn from those
files with matplotlib's object interface (Agg, no display). Run from the source tree:

    python scripts/make_doc_figures.py            # writes docs/figures/*.png
    python scripts/make_doc_figures.py --out DIR  # somewhere else

``tests/test_docs.py`` runs it and checks that it makes every figure the docs show.
"""

from __future__ import annotations

import argparse
import json
import subprocess
import sys
import tempfile
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]

#: figure file -> (demo record folder, drawing function name); the docs link these files
FIGURES = {
    "green-pointer-spectrum.png": ("green_pointer", "draw_spectrum_wide"),
    "red-pointer-modes.png": ("red_pointer", "draw_modes"),
    "amber-led-spectrum.png": ("amber_led", "draw_led"),
    "green-pointer-budget.png": ("green_pointer", "draw_budget"),
}

# Okabe & Ito's colour-blind-safe palette (common practice in scientific figures)
BLUE, ORANGE, GREEN, VERMILLION, GREY = "#0072B2", "#E69F00", "#009E73", "#D55E00", "#555555"


def _load(folder: Path):
    from astropy.table import Table

    result = json.loads((folder / "result.json").read_text(encoding="utf-8"))
    spectrum = Table.read(folder / "spectrum.ecsv", format="ascii.ecsv")
    return result, spectrum


def _figure(width=6.4, height=3.2):
    from matplotlib.figure import Figure

    fig = Figure(figsize=(width, height), layout="constrained")
    return fig, fig.add_subplot()


def _spectrum_axes(ax, spectrum, lo, hi):
    import numpy as np

    wl = np.asarray(spectrum["wavelength"], float)
    y = np.asarray(spectrum["density_per_wavelength"], float)
    keep = (wl >= lo) & (wl <= hi)
    order = np.argsort(wl[keep])
    y = y[keep][order] / np.max(y[keep])
    ax.plot(wl[keep][order], y, color=BLUE, lw=1.2)
    ax.set_xlim(lo, hi)
    ax.set_xlabel("vacuum wavelength (nm)")
    ax.set_ylabel("spectral density per nm\n(relative)")
    return wl[keep][order], y


def draw_spectrum_wide(result, spectrum):
    """The green pointer from 450 to 1150 nm: the green line and the infrared beside it."""
    fig, ax = _figure()
    _spectrum_axes(ax, spectrum, 450.0, 1150.0)
    ax.set_yscale("log")  # the infrared line is far weaker than the green one
    ax.set_ylim(1e-5, 3.0)
    ax.set_ylabel("spectral density per nm\n(relative, log scale)")
    for line in result["lines"]:
        if line["flag"] is None:
            wl = line["wavelength_nm"]
            ax.axvline(wl, color=VERMILLION if wl > 700 else GREEN, ls="--", lw=0.8)
            ax.annotate(f"{wl:.2f} nm" + (" (infrared)" if wl > 700 else ""), (wl, 1.0),
                        xytext=(6, 0), textcoords="offset points", fontsize=8)
    ax.set_title("Green pointer (invented demo record): the green line and an infrared leak",
                 fontsize=9)
    return fig


def draw_modes(result, spectrum):
    """The red pointer's longitudinal modes around its centre."""
    fig, ax = _figure()
    centre = result["summary"]["centre_wavelength_nm"]
    _spectrum_axes(ax, spectrum, centre - 1.6, centre + 1.6)
    modes = result["summary"]["modes"]
    ax.set_title(f"Red pointer (invented demo record): {modes['n_modes']} modes spaced "
                 f"{modes['spacing_nm']:.3f} nm", fontsize=9)
    return fig


def draw_led(result, spectrum):
    """The amber LED with its peak, centroid and full width at half maximum."""
    fig, ax = _figure()
    s = result["summary"]
    peak, centroid, fwhm = s["peak_wavelength_nm"], s["centroid_wavelength_nm"], s["fwhm_nm"]
    _spectrum_axes(ax, spectrum, centroid - 3 * fwhm, centroid + 3 * fwhm)
    ax.axvline(peak, color=ORANGE, lw=1, label=f"peak {peak:.1f} nm")
    ax.axvline(centroid, color=GREEN, ls="--", lw=1, label=f"centroid {centroid:.1f} nm")
    ax.annotate("", xy=(peak - fwhm / 2, 0.5), xytext=(peak + fwhm / 2, 0.5),
                arrowprops={"arrowstyle": "<->", "color": GREY})
    ax.text(peak + fwhm / 2 + 1.0, 0.5, f"FWHM {fwhm:.1f} nm", va="center", fontsize=8)
    ax.legend(fontsize=8, loc="upper right")
    ax.set_title("Amber LED (invented demo record), detector-weighted", fontsize=9)
    return fig


def draw_budget(result, spectrum):
    """The uncertainty budget of the centre wavelength as horizontal bars."""
    budget = result["uncertainty"]
    names = [c["name"] for c in budget["components"]][::-1]
    values = [c["u_nm"] * 1e3 for c in budget["components"]][::-1]
    fig, ax = _figure(height=2.4)
    ax.barh(names, values, color=BLUE)
    ax.axvline(budget["combined_nm"] * 1e3, color=VERMILLION, ls="--", lw=1,
               label=f"combined u_c = {budget['combined_nm'] * 1e3:.2g} pm")
    ax.set_xlabel("standard uncertainty of the centre wavelength (pm)")
    ax.legend(fontsize=8, loc="lower right")
    ax.set_title("Green pointer (invented demo record): uncertainty budget", fontsize=9)
    return fig


def make_figures(out_dir: Path) -> list[Path]:
    """Run the demo into a temporary folder and draw every figure of :data:`FIGURES` into
    ``out_dir``; returns the files written."""
    out_dir.mkdir(parents=True, exist_ok=True)
    written = []
    with tempfile.TemporaryDirectory() as tmp:
        subprocess.run([sys.executable, "-m", "ftsource", "demo", "--out", tmp], check=True,
                       cwd=ROOT, stdout=subprocess.DEVNULL)
        for name, (record, draw) in FIGURES.items():
            result, spectrum = _load(Path(tmp) / record)
            fig = globals()[draw](result, spectrum)
            fig.savefig(out_dir / name, dpi=110, metadata={"Software": None})
            written.append(out_dir / name)
    return written


def main(argv=None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--out", type=Path, default=ROOT / "docs" / "figures",
                        help="folder for the PNG files (default: docs/figures)")
    args = parser.parse_args(argv)
    for path in make_figures(args.out):
        print(f"wrote {path}")
    return 0


if __name__ == "__main__":
    sys.exit(main())
