"""Build script: everything is declared in pyproject.toml; this file only checks, before
pip builds anything, that the machine can compile pyeda (a dependency with no binary
wheel for Linux), so that a missing C compiler is said in one plain sentence rather
than deep inside pyeda's build log."""

from __future__ import annotations

import os
import shutil
import sys
import sysconfig
from typing import Callable, Optional

NOTE = ("countersign needs pyeda, which has no binary wheel for Linux and is compiled when it is "
        "installed: install a C compiler and the Python headers first (Debian/Ubuntu: "
        "sudo apt-get install build-essential python3-dev), then run pip again. "
        "Set COUNTERSIGN_NO_BUILD_CHECK=1 to skip this check (e.g. when pyeda is already installed).")


def missing_build_tools(which: Callable[[str], Optional[str]] = shutil.which,
                        include_dir: Optional[str] = None, platform: str = sys.platform) -> Optional[str]:
    """The note above when this Linux machine has no C compiler or no Python.h, else None."""
    if not platform.startswith("linux"):
        return None
    cc = (sysconfig.get_config_var("CC") or "").split()
    compilers = ([cc[0]] if cc else []) + ["cc", "gcc", "clang"]
    include_dir = sysconfig.get_paths()["include"] if include_dir is None else include_dir
    has_compiler = any(which(c) for c in compilers)
    has_headers = os.path.isfile(os.path.join(include_dir, "Python.h"))
    return None if has_compiler and has_headers else NOTE


def _pyeda_present() -> bool:
    try:
        import pyeda  # noqa: F401  (installed already: nothing to compile)
    except ImportError:
        return False
    return True


if __name__ == "__main__":
    from setuptools import setup

    problem = None if os.environ.get("COUNTERSIGN_NO_BUILD_CHECK") or _pyeda_present() else missing_build_tools()
    if problem:
        sys.stderr.write("\n" + problem + "\n\n")
        raise SystemExit(1)
    setup()
