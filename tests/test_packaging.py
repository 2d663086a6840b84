"""Packaging (issue 11, point 14): pyeda needs a C compiler, and the install says so first;
python-sat is pinned to one published release."""

from __future__ import annotations

import importlib.util
import re
import tomllib
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent


def _setup_module():
    spec = importlib.util.spec_from_file_location("countersign_setup", ROOT / "setup.py")
    mod = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(mod)  # not run as __main__: setup() is not called
    return mod


def test_install_without_compiler_names_the_packages(tmp_path):
    m = _setup_module()
    headers = tmp_path / "inc"
    headers.mkdir()
    (headers / "Python.h").write_text("/* stand-in */")
    note = m.missing_build_tools(which=lambda name: None, include_dir=str(headers), platform="linux")
    assert note is not None
    assert "build-essential" in note and "python3-dev" in note and "pyeda" in note
    # a compiler but no headers: still refused with the same note
    assert m.missing_build_tools(which=lambda name: "/usr/bin/" + name, include_dir=str(tmp_path),
                                 platform="linux") == note
    # both present: nothing to say, so `pip install .` goes ahead
    assert m.missing_build_tools(which=lambda name: "/usr/bin/" + name, include_dir=str(headers),
                                 platform="linux") is None


def test_readme_setup_names_the_debian_packages():
    text = (ROOT / "README.md").read_text(encoding="utf-8")
    setup = text.split("## Set up and run", 1)[1].split("\n## ", 1)[0]
    assert "build-essential" in setup and "python3-dev" in setup


def test_python_sat_is_pinned_to_one_release():
    deps = tomllib.loads((ROOT / "pyproject.toml").read_text(encoding="utf-8"))["project"]["dependencies"]
    sat = [d for d in deps if d.startswith("python-sat")]
    assert len(sat) == 1
    # an exact release (python-sat numbers its releases X.Y.devN), never an open range from dev0
    assert re.fullmatch(r"python-sat==\d+\.\d+\.dev\d+", sat[0].split("#")[0].strip()), sat
    assert not sat[0].endswith("dev0")
