"""Packaging claims in pyproject.toml: the Python floor and the package list."""

from __future__ import annotations

import fnmatch
import pathlib
import re
import sys
import tomllib
from importlib import metadata

from packaging.requirements import Requirement
from packaging.specifiers import SpecifierSet
from packaging.version import Version

ROOT = pathlib.Path(__file__).resolve().parents[1]
PYPROJECT = tomllib.loads((ROOT / "pyproject.toml").read_text())


def _floor(spec: SpecifierSet) -> Version:
    floors = [Version(s.version) for s in spec if s.operator in (">=", "~=", "==")]
    assert floors, f"requires-python {spec} has no lower bound"
    return max(floors)


def test_requires_python_is_true_for_every_dependency():
    # Our Requires-Python floor must be one every installed dependency accepts (numpy 2.3 needs 3.11),
    # and the interpreter running the suite (CI's Python) must satisfy it.
    ours = SpecifierSet(PYPROJECT["project"]["requires-python"])
    floor = _floor(ours)
    assert Version(".".join(map(str, sys.version_info[:3]))) in ours
    deps = list(PYPROJECT["project"]["dependencies"]) + list(PYPROJECT["project"]["optional-dependencies"]["test"])
    refused = {}
    for dep in deps:
        name = Requirement(dep).name
        theirs = metadata.metadata(name).get("Requires-Python")
        if theirs and not SpecifierSet(theirs).contains(floor, prereleases=True):
            refused[f"{name} {metadata.version(name)}"] = theirs
    assert not refused, f"requires-python >= {floor} is false: {refused}"
    assert floor >= Version("3.11")


def test_every_package_folder_is_listed():
    # A folder setuptools can import but that is not in `packages` makes the install print a long
    # "Package would be ignored" warning and its files may not ship.
    tool = PYPROJECT["tool"]["setuptools"]
    listed = set(tool["packages"])
    dirs = {"cvdfilter.cone_data": ROOT / "cone_data"}
    for path in (ROOT / "cvdfilter").rglob("*"):
        if path.is_dir() and "__pycache__" not in path.parts:
            dirs[".".join(path.relative_to(ROOT).parts)] = path
    dirs["cvdfilter"] = ROOT / "cvdfilter"
    assert set(dirs) == listed
    # every data file of a listed package is matched by its package-data globs
    data = tool["package-data"]
    for name, folder in dirs.items():
        for f in folder.iterdir():
            if f.is_file() and f.suffix not in (".py", ".pyc"):
                assert any(fnmatch.fnmatch(f.name, g) for g in data.get(name, [])), f"{name}: {f.name} not shipped"


def test_version_is_single_sourced():
    text = (ROOT / "cvdfilter" / "_version.py").read_text()
    assert re.search(r'__version__ = "[0-9]+\.[0-9]+\.[0-9]+"', text)
    assert PYPROJECT["tool"]["setuptools"]["dynamic"]["version"]["attr"] == "cvdfilter._version.__version__"
