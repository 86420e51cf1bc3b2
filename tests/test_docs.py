"""The docs cannot rot: every example in README.md and docs/*.md runs here (issue 16).

Each Markdown file's fenced blocks run in document order in one fresh temporary directory, so
a guide can make a record in one block and analyse it in the next:

- ```` ```console ````: lines starting with ``$ `` are commands; the lines after one, up to
  the next command, are its expected output. Each expected line must appear in the output
  (standard output, then standard error), in order; other output lines may come between them
  (the docs show the lines that matter). Whitespace runs count as one space and leading
  whitespace is ignored. A line ending in ``...`` matches any output line that starts with
  the text before it (a long warning is shortened this way, never wrapped); a line that is
  only ``...`` stands for elided lines. A command exits with status 0 unless one of its
  expected lines starts with ``error:``.
- ```` ```bash ````: every command must exit with status 0; its output is not compared.
- ```` ```python ````: run in one namespace per file (blocks build on each other). A block
  written as an interactive session (``>>>``) is a doctest: the printed values must match
  (``...`` elides, whitespace is normalised).

``ftsource`` in a command runs ``python -m ftsource`` from this source tree (the worktree
under test, not an installed copy). ``pip install`` lines are not run (the test environment
is installed already): they are checked against pyproject.toml instead — the extras they
name must exist and the ``ftsource`` script must be declared. ``pytest`` lines are not run
(the suite would run itself): the paths they name must exist.

Docstring examples (``>>>`` in any ftsource module) run as doctests in
:func:`test_docstring_examples`.

The oracles are the docs themselves: a failure means a doc example and the tool disagree.
"""

from __future__ import annotations

import doctest
import importlib
import os
import pkgutil
import re
import shlex
import subprocess
import sys
import warnings
from dataclasses import dataclass
from pathlib import Path

import pytest

import ftsource

ROOT = Path(__file__).resolve().parents[1]  # the source tree, also when ftsource is installed
DOC_FILES = sorted([ROOT / "README.md", *(ROOT / "docs").glob("*.md")])
RUN_LANGUAGES = ("console", "bash", "python")
_FENCE = re.compile(r"^(?P<indent> {0,3})(?P<fence>```+)(?P<info>[^`]*)$")


@dataclass(frozen=True)
class Block:
    """One fenced block: its language, first line number (1-based) and text."""

    language: str
    line: int
    text: str


def fenced_blocks(markdown: str) -> list[Block]:
    """Every fenced block of ``markdown`` with its info string's first word as language."""
    blocks, lines, i = [], markdown.splitlines(), 0
    while i < len(lines):
        m = _FENCE.match(lines[i])
        if not m:
            i += 1
            continue
        fence, language = m["fence"], (m["info"].split() or [""])[0].lower()
        body, j = [], i + 1
        while j < len(lines) and not lines[j].strip().startswith(fence):
            body.append(lines[j][len(m["indent"]):])
            j += 1
        blocks.append(Block(language, i + 2, "\n".join(body)))
        i = j + 1
    return blocks


@dataclass(frozen=True)
class Command:
    """A command of a console block with the output lines the doc shows for it."""

    text: str
    expected: tuple[str, ...]
    line: int


def console_commands(block: Block) -> list[Command]:
    """The ``$ `` commands of a console block, each with its expected lines (whitespace runs
    made one space, leading whitespace dropped)."""
    commands: list[list] = []
    for k, raw in enumerate(block.text.splitlines()):
        if raw.startswith("$ "):
            commands.append([raw[2:].strip(), [], block.line + k])
        elif not commands:
            if raw.strip():
                raise ValueError(f"line {block.line + k}: output before the first '$ ' command")
        elif raw.strip():
            commands[-1][1].append(raw.strip())
    return [Command(text, tuple(" ".join(e.split()) for e in exp), line)
            for text, exp, line in commands]


def unmatched_lines(expected, output: str) -> list[str]:
    """The expected lines that the output does not show in order (empty when it does)."""
    actual = [" ".join(line.split()) for line in output.splitlines()]
    missing, pos = [], 0
    for exp in expected:
        if exp == "...":
            continue
        if exp.endswith("..."):
            stem = exp[:-3].rstrip()

            def hit(line, stem=stem):
                return line.startswith(stem)
        else:

            def hit(line, exp=exp):
                return line == exp
        for k in range(pos, len(actual)):
            if hit(actual[k]):
                pos = k + 1
                break
        else:
            missing.append(exp)
    return missing


def _env() -> dict[str, str]:
    env = dict(os.environ)
    env["PYTHONPATH"] = os.pathsep.join(p for p in (str(ROOT), env.get("PYTHONPATH")) if p)
    env["MPLBACKEND"] = "Agg"
    env["COLUMNS"] = "100"
    return env


# ``ftsource`` inside a doc command is this source tree's command line
_PRELUDE = f'ftsource() {{ {shlex.quote(sys.executable)} -m ftsource "$@"; }}\n' \
           f'python() {{ {shlex.quote(sys.executable)} "$@"; }}\n'


def _shell(command: str, cwd: Path) -> subprocess.CompletedProcess:
    return subprocess.run(["bash", "-c", _PRELUDE + command], cwd=cwd, env=_env(),
                          capture_output=True, text=True, timeout=600)


def _pyproject_keys(table: str) -> set[str]:
    """The keys set in one ``[table]`` of pyproject.toml (read by hand: ``tomllib`` is not in
    Python 3.10, which the project supports)."""
    keys, inside = set(), False
    for line in (ROOT / "pyproject.toml").read_text().splitlines():
        if line.startswith("["):
            inside = line.strip() == f"[{table}]"
        elif inside and (m := re.match(r"([A-Za-z0-9_.-]+)\s*=", line)):
            keys.add(m[1])
    return keys


def _not_run_problem(command: str) -> str | None:
    """For a ``pip install`` or ``pytest`` command: what is wrong with it (None: fine).
    Returns ``""`` for any other command (it is run)."""
    words = shlex.split(command, comments=True)
    if words[:2] == ["pip", "install"]:
        if "ftsource" not in _pyproject_keys("project.scripts"):
            return "pyproject.toml declares no 'ftsource' script"
        for target in [w for w in words[2:] if not w.startswith("-")]:
            m = re.fullmatch(r"\.(?:\[(?P<extras>[^\]]*)\])?", target)
            if not m:
                return f"installs {target!r}, not this source tree ('.')"
            for extra in filter(None, (m["extras"] or "").split(",")):
                if extra not in _pyproject_keys("project.optional-dependencies"):
                    return f"extra {extra!r} is not in pyproject.toml"
        return None
    if words[:1] == ["pytest"]:
        for w in words[1:]:
            if not w.startswith("-") and not (ROOT / w.split("::")[0]).exists():
                return f"pytest path {w!r} does not exist"
        return None
    return ""


def _split_commands(line: str) -> list[str]:
    """``a && b`` as two commands (the docs chain install and run on one line)."""
    return [part.strip() for part in line.split("&&") if part.strip()]


def _run_command(command: str, cwd: Path, where: str) -> subprocess.CompletedProcess | None:
    """Run one doc command line (parts joined by ``&&``); None when nothing was run."""
    to_run = []
    for part in _split_commands(command):
        problem = _not_run_problem(part)
        assert problem in ("", None), f"{where}: {part!r}: {problem}"
        if problem == "":
            to_run.append(part)
    return _shell(" && ".join(to_run), cwd) if to_run else None


def _run_console(block: Block, cwd: Path, doc: str) -> None:
    for cmd in console_commands(block):
        where = f"{doc}:{cmd.line}"
        r = _run_command(cmd.text, cwd, where)
        if r is None:
            continue
        output = r.stdout + r.stderr
        wants_error = any(e.startswith("error:") for e in cmd.expected)
        assert (r.returncode != 0) == wants_error, (
            f"{where}: '$ {cmd.text}' exited with {r.returncode}\n{output}"
        )
        missing = unmatched_lines(cmd.expected, output)
        assert not missing, (
            f"{where}: '$ {cmd.text}' did not print, in order:\n  " + "\n  ".join(missing)
            + "\n--- it printed:\n" + output
        )


def _bash_lines(text: str) -> list[tuple[int, str]]:
    """Commands of a bash block: comments dropped, backslash continuations joined."""
    out, pending, first = [], "", 0
    for k, raw in enumerate(text.splitlines()):
        line = raw.rstrip()
        if not pending:
            first = k
        if line.endswith("\\"):
            pending += line[:-1] + " "
            continue
        line = pending + line
        pending = ""
        if line.strip() and not line.lstrip().startswith("#"):
            out.append((first, line.strip()))
    return out


def _run_bash(block: Block, cwd: Path, doc: str) -> None:
    for offset, command in _bash_lines(block.text):
        where = f"{doc}:{block.line + offset}"
        r = _run_command(command, cwd, where)
        if r is not None:
            assert r.returncode == 0, f"{where}: {command!r} exited with {r.returncode}\n" \
                                      f"{r.stdout}{r.stderr}"


def _run_python(block: Block, namespace: dict, doc: str) -> None:
    from ftsource.errors import FtsourceWarning

    where = f"{doc}:{block.line}"
    with warnings.catch_warnings():
        # ftsource's warnings are part of each result (Result.warnings), printed by the docs
        # that show them; the test's warnings-are-errors rule still holds for all others
        warnings.simplefilter("ignore", FtsourceWarning)
        if ">>>" in block.text:
            test = doctest.DocTestParser().get_doctest(block.text, namespace, where, doc,
                                                       block.line)
            runner = doctest.DocTestRunner(
                optionflags=doctest.ELLIPSIS | doctest.NORMALIZE_WHITESPACE
            )
            report = []
            runner.run(test, out=report.append, clear_globs=False)
            namespace.update(test.globs)  # DocTest works on a copy: keep what it defined
            assert runner.failures == 0, "".join(report)
        else:
            code = compile(block.text, where, "exec")
            exec(code, namespace)  # noqa: S102 - the docs' own example code


def _doc_id(path: Path) -> str:
    return str(path.relative_to(ROOT))


@pytest.mark.parametrize("path", DOC_FILES, ids=_doc_id)
def test_doc_examples_run(path, tmp_path, monkeypatch):
    doc = _doc_id(path)
    blocks = [b for b in fenced_blocks(path.read_text()) if b.language in RUN_LANGUAGES]
    monkeypatch.chdir(tmp_path)  # python blocks write where the shell commands do
    monkeypatch.setenv("MPLBACKEND", "Agg")
    namespace: dict = {"__name__": "__doc_example__"}
    for block in blocks:
        if block.language == "console":
            _run_console(block, tmp_path, doc)
        elif block.language == "bash":
            _run_bash(block, tmp_path, doc)
        else:
            _run_python(block, namespace, doc)


def test_the_docs_have_examples_to_run():
    """The walk above finds runnable blocks (a renamed fence would silently test nothing):
    README's worked example is a console block, and the guides hold more."""
    found = {_doc_id(p): [b.language for b in fenced_blocks(p.read_text())]
             for p in DOC_FILES}
    assert "console" in found["README.md"]
    assert sum(lang in RUN_LANGUAGES for langs in found.values() for lang in langs) >= 30


# ---------------------------------------------------------------------------------------------
# the comparison itself, on made-up pages (so that it can be seen to fail)

_PAGE = """\
Text.

```console
$ ftsource --version
ftsource 9.9.9
$ echo one; echo two
one
  indented  line
warning: a long line...
```

  ```python
  x = 1
  ```
"""


def test_fenced_blocks_and_commands_are_read():
    blocks = fenced_blocks(_PAGE)
    assert [(b.language, b.line) for b in blocks] == [("console", 4), ("python", 13)]
    assert blocks[1].text == "x = 1"
    cmds = console_commands(blocks[0])
    assert [c.text for c in cmds] == ["ftsource --version", "echo one; echo two"]
    assert cmds[1].expected == ("one", "indented line", "warning: a long line...")


@pytest.mark.parametrize(
    "expected, output, missing",
    [
        (("a", "c"), "a\nb\nc\n", []),
        (("c", "a"), "a\nb\nc\n", ["a"]),  # order matters
        (("a b...",), "a  b c d\n", []),  # whitespace runs, then a prefix
        (("a b",), "a b c\n", ["a b"]),  # without '...' the whole line must match
        (("...", "z"), "a\n", ["z"]),
    ],
)
def test_unmatched_lines(expected, output, missing):
    assert unmatched_lines(expected, output) == missing


def test_a_wrong_doc_output_fails(tmp_path):
    block = fenced_blocks("```console\n$ echo 41\n42\n```\n")[0]
    with pytest.raises(AssertionError, match="did not print"):
        _run_console(block, tmp_path, "page.md")
    block = fenced_blocks("```console\n$ ftsource analyze missing.csv\n```\n")[0]
    with pytest.raises(AssertionError, match="exited with 2"):
        _run_console(block, tmp_path, "page.md")


def test_python_blocks_share_a_namespace_and_doctests_compare():
    namespace: dict = {}
    page = "```python\nx = 41\n```\n\n```python\n>>> x + 1\n42\n>>> y = x\n```\n"
    for block in fenced_blocks(page):
        _run_python(block, namespace, "page.md")
    assert namespace["y"] == 41
    wrong = fenced_blocks("```python\n>>> 1 + 1\n3\n```\n")[0]
    with pytest.raises(AssertionError, match="Expected"):
        _run_python(wrong, namespace, "page.md")


@pytest.mark.parametrize(
    "command, problem",
    [
        ("pip install .", None),
        ("pip install '.[test]'", None),
        ("pip install '.[docs]'", "extra 'docs' is not in pyproject.toml"),
        ("pip install numpy", "installs 'numpy', not this source tree ('.')"),
        ("pytest tests/test_docs.py", None),
        ("pytest tests/test_nothing.py", "pytest path 'tests/test_nothing.py' does not exist"),
        ("ftsource demo", ""),
    ],
)
def test_install_and_test_lines_are_checked_not_run(command, problem):
    assert _not_run_problem(command) == problem


# ---------------------------------------------------------------------------------------------
# docstring examples


def _modules_with_examples() -> list[str]:
    names = []
    for info in pkgutil.walk_packages(ftsource.__path__, "ftsource."):
        if info.name.endswith("__main__"):
            continue
        spec = importlib.util.find_spec(info.name)
        if spec and spec.origin and spec.origin.endswith(".py"):
            if ">>>" in Path(spec.origin).read_text():
                names.append(info.name)
    return names


MODULES_WITH_EXAMPLES = _modules_with_examples()


def test_some_docstrings_have_examples():
    assert "ftsource.report.numbers" in MODULES_WITH_EXAMPLES


@pytest.mark.parametrize("name", MODULES_WITH_EXAMPLES)
def test_docstring_examples(name):
    module = importlib.import_module(name)
    finder = doctest.DocTestFinder(exclude_empty=True)
    runner = doctest.DocTestRunner(optionflags=doctest.ELLIPSIS | doctest.NORMALIZE_WHITESPACE)
    report: list[str] = []
    tests = [t for t in finder.find(module) if t.examples]
    assert tests, f"{name} has '>>>' but no doctest was found"
    for test in tests:
        runner.run(test, out=report.append)
    assert runner.failures == 0, "".join(report)


# ---------------------------------------------------------------------------------------------
# links

_LINK = re.compile(r"\]\(([^)\s]+)\)")


def test_the_index_links_every_page():
    index = (ROOT / "docs" / "README.md").read_text()
    linked = {m.split("#")[0] for m in _LINK.findall(index)}
    pages = {p.name for p in (ROOT / "docs").glob("*.md")} - {"README.md"}
    assert sorted(pages - linked) == []


@pytest.mark.parametrize("path", DOC_FILES, ids=_doc_id)
def test_relative_links_resolve(path):
    broken = []
    for target in _LINK.findall(path.read_text()):
        if "://" in target or target.startswith(("#", "mailto:")):
            continue
        if not (path.parent / target.split("#")[0]).exists():
            broken.append(target)
    assert broken == []


# ---------------------------------------------------------------------------------------------
# figures


def test_the_figure_script_makes_every_figure_the_docs_show(tmp_path):
    """scripts/make_doc_figures.py (run from the demo data) writes each PNG the docs link, and
    each is a readable image; docs/figures holds no figure the script does not make."""
    import matplotlib.image

    r = subprocess.run([sys.executable, str(ROOT / "scripts" / "make_doc_figures.py"),
                        "--out", str(tmp_path)], env=_env(), capture_output=True, text=True,
                       timeout=900)
    assert r.returncode == 0, r.stderr
    made = {p.name for p in tmp_path.glob("*.png")}
    linked = {Path(t).name for p in DOC_FILES for t in _LINK.findall(p.read_text())
              if t.startswith("figures/")}
    assert linked and linked <= made
    assert {p.name for p in (ROOT / "docs" / "figures").glob("*.png")} == made
    for name in made:
        image = matplotlib.image.imread(tmp_path / name)
        assert image.shape[0] > 100 and image.shape[1] > 100
        assert image[..., :3].std() > 0.05  # not a blank canvas
