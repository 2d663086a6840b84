"""The stored parser tables: written to the user's cache folder, checked before use, never required."""

from __future__ import annotations

import re
import subprocess
import sys
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
SMALL = "design d\n  in e\n  flop a : T (t = 1)\n  flop b : T (t = a)\nend\ncheck c of d\n  code {b, a}\n  count 0 .. 3\nend\n"


def _run(tmp_path: Path, env_extra: dict[str, str]) -> subprocess.CompletedProcess:
    src = tmp_path / "d.cnl"
    src.write_text(SMALL)
    env = {"PATH": "/usr/bin:/bin", "PYTHONPATH": str(ROOT), "HOME": str(tmp_path / "home")}
    env.update(env_extra)
    return subprocess.run([sys.executable, "-c", "from checker.cli import entry; raise SystemExit(entry())",
                           "check", str(src)], capture_output=True, text=True, env=env, timeout=120)


def _same(a: str, b: str) -> bool:
    """The same report but for the claims' times, which vary from run to run on a busy machine."""
    def masked(t: str) -> str:
        return re.sub(r"\b\d+\.\d+ s\b", "T s", t)
    return masked(a) == masked(b)


def test_tables_are_stored_in_the_cache_folder_and_reused(tmp_path):
    cache = tmp_path / "xdg"
    first = _run(tmp_path, {"XDG_CACHE_HOME": str(cache)})
    stored = sorted((cache / "countersign").glob("lalr-*.tables"))
    assert first.returncode == 0, first.stderr
    assert len(stored) == 1
    second = _run(tmp_path, {"XDG_CACHE_HOME": str(cache)})
    assert second.returncode == 0 and _same(second.stdout, first.stdout)


def test_a_damaged_table_file_is_rebuilt_not_fatal(tmp_path):
    cache = tmp_path / "xdg"
    first = _run(tmp_path, {"XDG_CACHE_HOME": str(cache)})
    (stored,) = (cache / "countersign").glob("lalr-*.tables")
    stored.write_bytes(b"not a table\n\x80\x04garbage")
    again = _run(tmp_path, {"XDG_CACHE_HOME": str(cache)})
    assert again.returncode == 0 and _same(again.stdout, first.stdout)
    assert "Traceback" not in again.stderr


def test_cache_can_be_turned_off(tmp_path):
    cache = tmp_path / "xdg"
    r = _run(tmp_path, {"XDG_CACHE_HOME": str(cache), "COUNTERSIGN_NO_CACHE": "1"})
    assert r.returncode == 0, r.stderr
    assert not (cache / "countersign").exists()


def test_an_unwritable_cache_location_is_not_fatal(tmp_path):
    blocker = tmp_path / "file-not-folder"
    blocker.write_text("x")
    r = _run(tmp_path, {"XDG_CACHE_HOME": str(blocker)})
    assert r.returncode == 0, r.stderr
    assert "Traceback" not in r.stderr
