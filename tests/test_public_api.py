"""The public names of ftsource are pinned (a change here is an API change)."""

import subprocess
import sys

import ftsource


def test_public_names_exact():
    assert sorted(dir(ftsource)) == sorted(
        [
            "analyze", "AnalysisOptions", "read_record", "Record", "Result", "write_outputs",
            "FFTPlanner", "simulate", "FtsourceError", "FtsourceWarning", "__version__",
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


def test_help_imports_only_the_standard_library():
    """`ftsource --help` must not load numpy, scipy, astropy, matplotlib or pyfftw."""
    code = (
        "import sys, io, contextlib\n"
        "from ftsource.cli import main\n"
        "with contextlib.redirect_stdout(io.StringIO()):\n"
        "    try:\n"
        "        main(['--help'])\n"
        "    except SystemExit:\n"
        "        pass\n"
        "heavy = [m for m in ('numpy', 'scipy', 'astropy', 'matplotlib', 'pyfftw') if m in sys.modules]\n"
        "print(','.join(heavy))\n"
    )
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    assert out.stdout.strip() == ""
