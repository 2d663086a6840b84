"""The stored parser tables: written to the user's cache folder, checked before use, never required.

A well-formed .cnl file is read by the hand-written reader (checker/lang/cnl_fast.py), which needs no
tables; a file with an error goes to lark for its message, so the file here has one.
"""

from __future__ import annotations

import subprocess
import sys
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
SMALL = "design d\n  in e\n  flop a : T (t = 1)\n  flop b : T (t = a &)\nend\ncheck c of d\n  code {b, a}\n  count 0 .. 3\nend\n"
MESSAGE = "d.cnl:4:22: unexpected ')'"


def _read_by_lark(r: subprocess.CompletedProcess) -> bool:
    """The run ended with the file's syntax error, which only the lark route reports."""
    return r.returncode == 2 and MESSAGE in r.stdout + r.stderr and "Traceback" not in r.stderr


def _run(tmp_path: Path, env_extra: dict[str, str]) -> subprocess.CompletedProcess:
    src = tmp_path / "d.cnl"
    src.write_text(SMALL)
    env = {"PATH": "/usr/bin:/bin", "PYTHONPATH": str(ROOT), "HOME": str(tmp_path / "home")}
    env.update(env_extra)
    return subprocess.run([sys.executable, "-c", "from checker.cli import entry; raise SystemExit(entry())",
                           "check", str(src)], capture_output=True, text=True, env=env, timeout=120)


def test_tables_are_stored_in_the_cache_folder_and_reused(tmp_path):
    cache = tmp_path / "xdg"
    first = _run(tmp_path, {"XDG_CACHE_HOME": str(cache)})
    stored = sorted((cache / "countersign").glob("lalr-*.tables"))
    assert _read_by_lark(first), first.stderr
    assert len(stored) == 1
    second = _run(tmp_path, {"XDG_CACHE_HOME": str(cache)})
    assert _read_by_lark(second) and (second.stdout, second.stderr) == (first.stdout, first.stderr)


def test_a_damaged_table_file_is_rebuilt_not_fatal(tmp_path):
    cache = tmp_path / "xdg"
    first = _run(tmp_path, {"XDG_CACHE_HOME": str(cache)})
    (stored,) = (cache / "countersign").glob("lalr-*.tables")
    stored.write_bytes(b"not a table\n\x80\x04garbage")
    again = _run(tmp_path, {"XDG_CACHE_HOME": str(cache)})
    assert _read_by_lark(again) and (again.stdout, again.stderr) == (first.stdout, first.stderr)


def test_cache_can_be_turned_off(tmp_path):
    cache = tmp_path / "xdg"
    r = _run(tmp_path, {"XDG_CACHE_HOME": str(cache), "COUNTERSIGN_NO_CACHE": "1"})
    assert _read_by_lark(r), r.stderr
    assert not (cache / "countersign").exists()


def test_an_unwritable_cache_location_is_not_fatal(tmp_path):
    blocker = tmp_path / "file-not-folder"
    blocker.write_text("x")
    r = _run(tmp_path, {"XDG_CACHE_HOME": str(blocker)})
    assert _read_by_lark(r), r.stderr
