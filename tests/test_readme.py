"""Every command printed in README.md runs as printed.

The `cvdfilter ...` lines of the README's `sh` blocks and its `python` blocks are run in a temporary
folder holding a copy of `examples/` (so outputs do not litter the repository), with this interpreter
standing in for `bin/cvdfilter` (the checkout's launcher of `.venv/bin/cvdfilter`). The set-up lines
(`make ...`) are what CI itself runs.
"""

from __future__ import annotations

import os
import pathlib
import re
import shlex
import shutil
import subprocess
import sys

import pytest

ROOT = pathlib.Path(__file__).resolve().parents[1]
README = ROOT / "README.md"
#: Options whose value is a file the command writes (not an input that must exist).
OUTPUT_OPTIONS = {"-o", "--output", "--out"}

pytestmark = pytest.mark.readme


def _blocks(lang: str) -> list[str]:
    return re.findall(rf"```{lang}\n(.*?)```", README.read_text(), flags=re.S)


def _commands() -> list[list[str]]:
    out = []
    for block in _blocks("sh"):
        text = block.replace("\\\n", " ")
        for line in text.splitlines():
            args = shlex.split(line, comments=True)
            if args and args[0].endswith("cvdfilter"):
                out.append(args)
    return out


COMMANDS = _commands()


def test_readme_has_commands_and_only_known_set_up_lines():
    assert len(COMMANDS) >= 8
    for block in _blocks("sh"):
        for line in block.replace("\\\n", " ").splitlines():
            args = shlex.split(line, comments=True)
            assert not args or args[0].endswith("cvdfilter") or args[0] == "make", line


def test_readme_commands_start_with_a_program_in_the_repository():
    # Every command runs as printed from a fresh clone: its program is a file of the repository.
    for args in COMMANDS:
        program = ROOT / args[0]
        assert program.is_file() and os.access(program, os.X_OK), args[0]


def test_readme_inputs_exist_in_the_repository():
    # Every file or folder a README command reads is shipped (no my-lens.csv, no stimuli/ to invent).
    for args in COMMANDS:
        for prev, arg in zip(args, args[1:]):
            if prev in OUTPUT_OPTIONS or ":" in arg or "=" in arg:
                continue
            if "/" in arg or re.search(r"\.(csv|txt|png|tif|tiff|npz|xml|jpg)$", arg):
                assert (ROOT / arg).exists(), f"{' '.join(args)}: {arg} does not exist"


@pytest.fixture(scope="module")
def workdir(tmp_path_factory):
    work = tmp_path_factory.mktemp("readme")
    shutil.copytree(ROOT / "examples", work / "examples", ignore=shutil.ignore_patterns("*.py", "__pycache__"))
    return work


@pytest.mark.parametrize("args", COMMANDS, ids=[" ".join(a[1:3]) for a in COMMANDS])
def test_readme_command_runs(args, workdir):
    env = {**os.environ, "COLUMNS": "120"}
    r = subprocess.run([sys.executable, "-m", "cvdfilter", *args[1:]], cwd=workdir, env=env, capture_output=True,
                       text=True, timeout=600)
    assert r.returncode == 0, f"{' '.join(args)}\n{r.stderr}"
    assert "Traceback" not in r.stderr
    for prev, arg in zip(args, args[1:]):
        if prev in OUTPUT_OPTIONS:
            assert (workdir / arg).exists(), f"{' '.join(args)} wrote no {arg}"


def test_readme_python_runs(workdir):
    for code in _blocks("python"):
        r = subprocess.run([sys.executable, "-c", code], cwd=workdir, capture_output=True, text=True, timeout=600)
        assert r.returncode == 0, f"{code}\n{r.stderr}"
