"""The public names of ftsource are pinned (a change here is an API change).

No published value is involved: the oracles are Python's own list of standard-library modules
(``sys.stdlib_module_names``, Python 3.10+) for the start-up imports, and common practice for
a stable public API (an explicit, tested list of names).
"""

import subprocess
import sys

import pytest

import ftsource


def test_public_names_exact():
    assert sorted(dir(ftsource)) == sorted(
        [
            "analyze", "AnalysisOptions", "read_record", "Record", "Result", "write_outputs",
            "FFTPlanner", "simulate", "FtsourceError", "FtsourceWarning", "AnalysisWarning",
            "__version__",
        ]
    )


def test_every_public_name_resolves():
    for name in ftsource.__all__:
        assert getattr(ftsource, name) is not None


def test_unknown_name_raises_attribute_error():
    try:
        ftsource.no_such_name  # noqa: B018
    except AttributeError as e:
        assert "no_such_name" in str(e)
    else:  # pragma: no cover
        raise AssertionError("expected AttributeError")


# The command line's help and version, each of which must load the standard library only
# (issue 2: "`ftsource --help` imports only the standard library"; heavy libraries load inside
# the commands that use them).
LIGHT_COMMANDS = [
    ["--help"], ["--version"],
    *([cmd, "--help"] for cmd in
      ("analyze", "simulate", "demo", "lines", "calibrate", "response", "batch", "plot",
       "plan")),
]

# Runs ftsource.cli.main in a fresh interpreter and prints, as JSON, its status and the modules
# it loaded: those in sys.modules afterwards that were not there before ftsource was imported
# (the interpreter's start-up, e.g. .pth hooks of site-packages, is not ftsource's doing).
_WRAPPER = """
import sys
before = set(sys.modules)
import contextlib, io, json
from ftsource.cli import main
with contextlib.redirect_stdout(io.StringIO()) as shown:
    status = main(json.loads(sys.argv[1]))
loaded = sorted(set(sys.modules) - before)
print(json.dumps({"status": status, "shown": shown.getvalue(), "loaded": loaded}))
"""


def _fresh_python(args):
    import os
    from pathlib import Path

    env = dict(os.environ)
    root = str(Path(ftsource.__file__).resolve().parents[1])
    env["PYTHONPATH"] = os.pathsep.join(p for p in (root, env.get("PYTHONPATH")) if p)
    return subprocess.run([sys.executable, *args], capture_output=True, text=True, env=env,
                          timeout=120)


def _outside_stdlib(modules):
    # sys.stdlib_module_names (Python >= 3.10) lists the standard library's top-level modules
    return sorted(
        m for m in modules
        if m.split(".")[0] not in sys.stdlib_module_names and m.split(".")[0] != "ftsource"
    )


def test_outside_stdlib_check_can_fail():
    """The check itself sees a third-party library (numpy is a dependency) and passes the
    standard library and ftsource."""
    assert _outside_stdlib(["numpy", "numpy.linalg", "astropy.units"]) == [
        "astropy.units", "numpy", "numpy.linalg",
    ]
    assert _outside_stdlib(["argparse", "json.decoder", "ftsource.cli", "__future__"]) == []


@pytest.mark.parametrize("argv", LIGHT_COMMANDS, ids=" ".join)
def test_help_and_version_import_only_the_standard_library(argv):
    import json

    proc = _fresh_python(["-c", _WRAPPER, json.dumps(argv)])
    assert proc.returncode == 0 and proc.stderr == "", proc.stderr
    report = json.loads(proc.stdout)
    assert report["status"] == 0
    shown = report["shown"]
    assert shown.startswith("ftsource ") if argv == ["--version"] else "usage: ftsource" in shown
    assert "ftsource.cli" in report["loaded"]  # the wrapper really saw the import happen
    assert _outside_stdlib(report["loaded"]) == []


def test_python_m_ftsource_help():
    """`python -m ftsource --help` prints the usage and exits with status 0."""
    proc = _fresh_python(["-m", "ftsource", "--help"])
    assert proc.returncode == 0, proc.stderr
    assert proc.stdout.startswith("usage: ftsource") and proc.stderr == ""
