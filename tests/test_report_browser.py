"""A real browser opens report.html: the figures render and a crafted record runs no script.

Debian's Chromium, headless, driven by subprocess (flags from the machine notes: no sandbox as
root, no GPU, no network: every host name resolves to nothing). A missing browser FAILS this
test (it is installed by `.ci/run`; install it with
`apt-get install -y --no-install-recommends chromium`): it is never skipped.

Reference: the W3C Content Security Policy Level 3 (``script-src``) that the page declares;
the check is behavioural (no numerical value).
"""

from __future__ import annotations

import os
import re
import shutil
import subprocess
from pathlib import Path

import numpy as np
import pytest
from cli_helpers import run

from ftsource import simulate as sim
from ftsource.io.records import write_record_csv

CRAFTED = {
    "description": "<script>document.title='PWNED'</script>"
                   "<img src=x onerror=\"document.title='PWNED2'\">",
    "operator": "</td></tr></table><script>alert(1)</script>",
    "note": "\"><svg onload=\"document.title='PWNED3'\">",
}
BLUE = (0x00, 0x72, 0xB2)  # Okabe–Ito blue: the spectrum's line


def _browser() -> str:
    for name in ("chromium", "chromium-browser", "google-chrome"):
        path = shutil.which(name)
        if path:
            return path
    pytest.fail(
        f"no Chromium found: this test needs a real browser (CI={os.environ.get('CI', '')}); "
        "install it with 'apt-get update && apt-get install -y --no-install-recommends chromium'"
    )


def _chromium(page: Path, tmp: Path, *extra: str) -> subprocess.CompletedProcess:
    exe = _browser()
    profile = tmp / f"profile-{len(list(tmp.glob('profile-*')))}"
    cmd = [
        exe, "--headless", "--no-sandbox", "--disable-gpu", "--no-first-run",
        "--disable-background-networking", "--disable-component-update", "--disable-sync",
        "--host-resolver-rules=MAP * ~NOTFOUND, EXCLUDE localhost, EXCLUDE 127.0.0.1",
        f"--user-data-dir={profile}", "--hide-scrollbars", *extra, page.as_uri(),
    ]
    r = subprocess.run(cmd, capture_output=True, text=True, timeout=180, cwd=tmp)
    assert r.returncode == 0, r.stderr[-2000:]
    return r


def _count_colour(png: Path, rgb, tol: int = 6) -> int:
    from matplotlib.image import imread

    img = imread(png)[..., :3]
    if img.dtype != np.uint8:
        img = np.round(img * 255).astype(int)
    diff = np.abs(img.astype(int) - np.array(rgb)[None, None, :]).max(axis=2)
    return int((diff <= tol).sum())


@pytest.fixture(scope="module")
def crafted_report(tmp_path_factory):
    """A report of a simulated laser record whose metadata and file name are crafted."""
    tmp = tmp_path_factory.mktemp("browser")
    s = sim.simulate(sim.laser(650.0), sim.Scan(duration_s=1.5, opd_amplitude_cm=0.04),
                     rng=3)
    path = tmp / "rec<b>bold<i>.csv"  # a file name is text from the record too
    write_record_csv(path, s.record, metadata={**s.record.metadata, **CRAFTED})
    return tmp, path


def test_report_renders_figures_and_runs_no_script(crafted_report, capsys):
    tmp, path = crafted_report
    out_dir = tmp / "out"
    status, out, err = run(capsys, ["analyze", path, "--reference-wavelength", "632.991nm",
                                    "--medium", "vacuum", "--out", out_dir, "--quiet"])
    assert status == 0, err
    page = out_dir / "report.html"
    text = page.read_text(encoding="utf-8")
    # the crafted texts are there, as text
    assert "&lt;script&gt;document.title=&#x27;PWNED&#x27;&lt;/script&gt;" in text
    assert "rec&lt;b&gt;bold&lt;i&gt;.csv" in text
    assert "<script" not in text.lower() and "onerror=" not in text.replace("onerror=&quot;", "")

    # 1. the DOM after load: no script element, no injected element, the title unchanged
    dom = _chromium(page, tmp, "--dump-dom", "--virtual-time-budget=2000").stdout
    assert "<title>ftsource report: rec&lt;b&gt;bold&lt;i&gt;.csv</title>" in dom
    assert "PWNED" not in re.sub(r"&[#\w]+;", "", dom.split("<title>")[1].split("</title>")[0])
    assert not re.search(r"<script\b", dom, re.I)
    assert not re.search(r"<img[^>]*\bsrc=\"x\"", dom)
    assert not re.search(r"<svg\b", dom, re.I)
    assert "&lt;script&gt;" in dom  # shown as text

    # 2. a screenshot: the spectrum figure (its Okabe–Ito blue line) is drawn on the page
    shot = tmp / "shot.png"
    _chromium(page, tmp, f"--screenshot={shot}", "--window-size=1200,2600")
    blue_fig = _count_colour(out_dir / "fig-spectrum.png", BLUE)
    blue_page = _count_colour(shot, BLUE)
    assert blue_fig > 200
    assert blue_page >= 0.5 * blue_fig, (blue_page, blue_fig)

    # 3. control: the same page with its image data broken shows no such pixels, so the
    #    check above can fail
    broken = tmp / "broken.html"
    broken.write_text(re.sub(r"base64,[A-Za-z0-9+/=]+", "base64,AAAA", text), encoding="utf-8")
    shot2 = tmp / "shot-broken.png"
    _chromium(broken, tmp, f"--screenshot={shot2}", "--window-size=1200,2600")
    assert _count_colour(shot2, BLUE) < 0.05 * blue_fig
