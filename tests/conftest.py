"""Shared fixtures: write .cnl text to a temporary file and load it."""

from __future__ import annotations

import os
import subprocess
import sys
from pathlib import Path

import pytest
from hypothesis import settings

# CI runs the same examples every time (a failure there is reproducible, not
# luck); a developer's run explores new ones. Set HYPOTHESIS_PROFILE to choose.
settings.register_profile("ci", derandomize=True, deadline=None, print_blob=True)
settings.register_profile("dev", deadline=None)
settings.load_profile(os.environ.get("HYPOTHESIS_PROFILE", "ci" if os.environ.get("CI") else "dev"))

ROOT = Path(__file__).resolve().parent.parent


@pytest.fixture
def write(tmp_path):
    """write(text, name='t.cnl') -> path of a new file holding ``text``."""

    def _write(text: str, name: str = "t.cnl") -> str:
        p = tmp_path / name
        p.write_text(text, encoding="utf-8")
        return str(p)

    return _write


def run_cli(*args: str, cwd: str | None = None) -> subprocess.CompletedProcess:
    """Run ``python -m checker ARGS`` and capture its output."""
    return subprocess.run([sys.executable, "-m", "checker", *args], capture_output=True, text=True,
                          cwd=cwd or str(ROOT), timeout=600)
