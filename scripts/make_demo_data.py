"""Make the bundled demo records (an invented scenario; every number here is made up).

Scenario, invented for the demo: a small community workshop has built a Michelson
interferometer on a breadboard with a He-Ne reference laser and checks three sources before a
student project: a green laser pointer (sold as 532 nm), a red laser pointer (sold as 650 nm)
and an amber LED (sold as 590 nm). The records are made with ftsource.simulate from known
truths; they are not measurements.

Run from the repository root:  python scripts/make_demo_data.py
"""

from __future__ import annotations

import json
from pathlib import Path

import numpy as np

from ftsource import simulate as S
from ftsource.io.records import write_record_wav
from ftsource.physics.air import AirConditions

OUT = Path(__file__).resolve().parent.parent / "ftsource" / "demo_data"
AIR = AirConditions.measured(21.5, 99_100.0, 38.0)
REF = 632.991  # nm, vacuum: an unstabilised He-Ne laser (CIPM 2007 value, rounded)


def _csv(path: Path, columns: dict, meta: dict) -> None:
    names = list(columns)
    data = np.column_stack([columns[n] for n in names])
    head = "".join(f"# {k} = {v}\n" for k, v in meta.items())
    with open(path, "w", encoding="utf-8") as fh:
        fh.write(head)
        fh.write(",".join(names) + "\n")
        np.savetxt(fh, data, delimiter=",", fmt="%.6g")


def main() -> None:
    OUT.mkdir(exist_ok=True)
    manifest = []

    # 1. green pointer, single reference channel, CSV from a USB DAQ at 50 kHz
    green = S.SourceModel(
        S.laser(532.18).lines
        + S.laser(1064.36, strength=0.004).lines,  # a little leaking pump/fundamental light
        label="green pointer",
    )
    sim = S.simulate(
        green,
        S.Scan(sample_rate_hz=50_000, duration_s=0.6, opd_centre_cm=0.42,
               opd_amplitude_cm=0.06, sweep_rate_hz=2.0, speed_jitter=0.06),
        S.ReferenceChannel(kind="single", wavelength_nm=REF, level_drift=0.1),
        S.Detector(noise_rms=0.004, drift=0.03),
        medium="air", air=AIR, rng=11,
    )
    cols = dict(sim.record.columns)
    meta = {
        "description": "INVENTED demo record: green laser pointer, single reference channel",
        "sample_rate": "50 kHz",
        "reference_wavelength": f"{REF} nm",
        "air_temperature": "21.5 degC",
        "air_pressure": "991 hPa",
        "air_humidity": "38 %",
    }
    _csv(OUT / "green_pointer.csv", {"time": cols["time"], "signal": cols["signal"],
                                      "ref": cols["ref"]}, meta)
    manifest.append({
        "file": "green_pointer.csv",
        "title": "Green laser pointer sold as 532 nm (single reference channel, USB DAQ)",
        "options": {"medium": "air", "air": [21.5, 99100.0, 38.0]},
    })

    # 2. red pointer, multimode, quadrature reference on a 3-channel sound card (WAV)
    red = S.multimode(650.4, 0.17, 0.9)
    sim = S.simulate(
        red,
        S.Scan(sample_rate_hz=44_100, duration_s=6.0, opd_centre_cm=0.0,
               opd_amplitude_cm=0.7, sweep_rate_hz=0.125, speed_jitter=0.04),
        S.ReferenceChannel(kind="quadrature", wavelength_nm=REF, quadrature_deg=83,
                           gains=(1.0, 0.85), offsets=(0.04, -0.06)),
        S.Detector(noise_rms=0.003, drift=0.02),
        medium="air", air=AIR, rng=12,
    )
    c = sim.record.columns
    chans = {k: np.asarray(c[k]) for k in ("signal", "ref_i", "ref_q")}
    chans = {k: (v - v.mean()) / (1.1 * np.abs(v - v.mean()).max()) for k, v in chans.items()}
    write_record_wav(OUT / "red_pointer.wav", chans, 44_100, bits=16, overwrite=True)
    manifest.append({
        "file": "red_pointer.wav",
        "title": "Red laser pointer sold as 650 nm (quadrature reference, 3-channel sound card)",
        "options": {"medium": "air", "air": [21.5, 99100.0, 38.0],
                    "reference_wavelength_nm": REF},
    })

    # 3. amber LED through zero path difference, NumPy archive from an oscilloscope
    # the bundled record was made with the shape on the density per unit wavenumber (the
    # simulator's convention before led() switched to per unit wavelength)
    amber = S.led(591.0, 16.0, asymmetry=0.25, density="per-wavenumber")
    sim = S.simulate(
        amber,
        S.Scan(sample_rate_hz=50_000, duration_s=0.5, opd_centre_cm=0.0,
               opd_amplitude_cm=0.012, sweep_rate_hz=4.0, speed_jitter=0.05),
        S.ReferenceChannel(kind="quadrature", wavelength_nm=REF),
        S.Detector(noise_rms=0.001, drift=0.01),
        medium="air", air=AIR, rng=13,
    )
    # an oscilloscope export: float32 columns and a metadata array of "key = value" strings
    np.savez_compressed(
        OUT / "amber_led.npz",
        **{k: np.asarray(v, dtype=np.float32) for k, v in sim.record.columns.items()
           if k != "time"},
        metadata=np.array([
            "description = INVENTED demo record: amber LED through zero path difference",
            "sample_rate = 50 kHz",
            f"reference_wavelength = {REF} nm",
        ]),
    )
    manifest.append({
        "file": "amber_led.npz",
        "title": "Amber LED sold as 590 nm (through zero path difference, oscilloscope capture)",
        "options": {"medium": "air", "air": [21.5, 99100.0, 38.0]},
    })

    (OUT / "demo.json").write_text(json.dumps({
        "scenario": "INVENTED: a community workshop checks three sources on a home-built "
                    "Michelson interferometer with a He-Ne reference. The records are "
                    "simulated (ftsource.simulate), not measurements.",
        "records": manifest,
    }, indent=2) + "\n")


if __name__ == "__main__":
    main()
