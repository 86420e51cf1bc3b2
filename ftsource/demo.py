"""``ftsource demo``: the main job on the bundled records of an invented scenario.

The records in ``ftsource/demo_data/`` were made with :mod:`ftsource.simulate` by
``scripts/make_demo_data.py`` from known truths; they are labelled as invented and are not
measurements.
"""

from __future__ import annotations

import json
from importlib import resources
from pathlib import Path

__all__ = ["demo_records", "run_demo"]


def _demo_dir() -> Path:
    try:
        p = Path(str(resources.files("ftsource") / "demo_data"))
        if (p / "demo.json").is_file():
            return p
    except (ModuleNotFoundError, TypeError):  # pragma: no cover
        pass
    return Path(__file__).resolve().parent / "demo_data"


def demo_records() -> tuple[str, list[dict]]:
    """The scenario text and the list of demo records (file path, title, options)."""
    from ftsource.errors import FtsourceError

    d = _demo_dir()
    try:
        manifest = json.loads((d / "demo.json").read_text(encoding="utf-8"))
    except OSError as e:
        raise FtsourceError(
            f"the demo data is missing ({e.strerror}); reinstall ftsource"
        ) from None
    recs = []
    for r in manifest["records"]:
        recs.append({**r, "path": str(d / r["file"])})
    return manifest["scenario"], recs


def run_demo(out, *, out_dir=None, overwrite: bool = False, quiet: bool = False) -> int:
    """Analyse every demo record and print a summary of each (and write files to ``out_dir``,
    with one ``wrote PATH`` line per file unless ``quiet``)."""
    from ftsource.analysis import AnalysisOptions, analyze
    from ftsource.io.records import read_record
    from ftsource.physics.air import AirConditions
    from ftsource.report.text import format_summary, write_outputs
    from ftsource.spectrum.transform import FFTPlanner

    scenario, recs = demo_records()
    out.write(f"ftsource demo — {scenario}\n")
    planner = FFTPlanner()
    for r in recs:
        o = dict(r["options"])
        air = o.pop("air", None)
        options = AnalysisOptions(
            air=AirConditions.measured(*air) if air else None,
            air_given=("humidity", "pressure", "temperature") if air else (),
            **o,
        )
        record = read_record(r["path"])
        result = analyze(record, options, planner=planner)
        out.write("\n" + "=" * 78 + f"\n{r['title']}\n" + "-" * 78 + "\n")
        text = format_summary(result).splitlines()
        out.write("\n".join(t for t in text if not t.startswith("safety:")) + "\n")
        if out_dir is not None:
            written = write_outputs(result, Path(out_dir) / Path(r["file"]).stem,
                                    overwrite=overwrite)
            if not quiet:
                out.write("".join(f"wrote {p}\n" for p in written))
    from ftsource.safety import LASER_NOTICE

    out.write("\n" + LASER_NOTICE + "\n")
    if out_dir is not None:
        out.write(f"results written under {out_dir}\n")
    return 0
