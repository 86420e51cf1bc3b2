"""The calibrate and response commands end to end (in-process ``main``).

Oracles: the simulator (tested against closed forms in test_simulate.py); Planck's law through
ftsource.response.planck_density_per_cm (tested against astropy's BlackBody in
test_response.py).
"""

import numpy as np
import pytest

from ftsource import simulate as S
from ftsource.cli import main
from ftsource.records import write_record_npz
from ftsource.response import ResponseCurve, planck_density_per_cm


def _write(path, source, scan, seed):
    sim = S.simulate(source, scan, S.ReferenceChannel(), S.Detector(noise_rms=0.001), rng=seed)
    write_record_npz(path, sim.record)
    return sim


def test_calibrate_writes_a_calibration_that_analyze_uses(tmp_path, capsys):
    rec = tmp_path / "known.npz"
    _write(rec, S.laser(532.24503610), S.Scan(duration_s=1.0, opd_centre_cm=0.2), 1)
    cal = tmp_path / "rig.json"
    code = main(["calibrate", str(rec), "--known-wavelength", "532.24503610nm",
                 "--reference-wavelength", "632.991nm", "--medium", "vacuum", "--save", str(cal)])
    assert code == 0 and cal.exists()
    assert "effective reference wavelength" in capsys.readouterr().out
    # refuses to overwrite without --overwrite, file unchanged
    before = cal.read_bytes()
    assert main(["calibrate", str(rec), "--known-wavelength", "532.24503610nm",
                 "--reference-wavelength", "632.991nm", "--save", str(cal)]) == 2
    assert cal.read_bytes() == before
    assert main(["analyze", str(rec), "--calibration", str(cal), "--medium", "vacuum"]) == 0


def _lamp(temperature_k, response):
    """A lamp seen through a detector: blackbody × response, as a comb of narrow Gaussians."""
    sig = np.arange(1e7 / 950.0, 1e7 / 480.0, 20.0)
    w = planck_density_per_cm(sig, temperature_k) * response(1e7 / sig)
    w = w / w.sum()
    return S.SourceModel(tuple(S.SpectralLine(float(s), float(a), 50.0) for s, a in zip(sig, w)))


@pytest.mark.slow
def test_response_command_recovers_a_known_response(tmp_path, capsys):
    def resp(wl_nm):  # an invented smooth detector response peaking near 750 nm
        return np.exp(-0.5 * ((wl_nm - 750.0) / 180.0) ** 2)

    rec = tmp_path / "lamp.npz"
    _write(rec, _lamp(2856.0, resp),
           S.Scan(duration_s=1.0, opd_centre_cm=0.0, opd_amplitude_cm=0.01, sweep_rate_hz=4.0), 2)
    out = tmp_path / "resp.ecsv"
    code = main(["response", str(rec), "--lamp-temperature", "2856K", "--reference-wavelength",
                 "632.991nm", "--medium", "vacuum", "--save", str(out)])
    assert code == 0, capsys.readouterr().err
    curve = ResponseCurve.from_file(out)
    lo, hi = curve.valid_band_per_cm
    sig = np.linspace(lo, hi, 50)[5:-5]
    got = curve.at(sig)
    truth = resp(1e7 / sig)
    truth = truth / truth.max() * np.nanmax(got) / np.nanmax(got)
    ratio = got / truth
    # the response is relative: compare shapes after normalising at the middle of the band;
    # 5 % allows for the comb approximation of the lamp and the 2.5 nm-scale smoothing
    ratio = ratio / ratio[len(ratio) // 2]
    assert np.all(np.abs(ratio - 1) < 0.05), ratio
