"""No command line, however wrong, gets a traceback: exit 2 with FILE:LINE:COL."""

from __future__ import annotations

import contextlib
import io
import json
from pathlib import Path

from hypothesis import given, settings, strategies as st

from checker.cli import main

CASE = str(Path(__file__).resolve().parent.parent / "cases" / "sixpack_t.cnl")
WORDS = ["check", "map", "compare", "sim", "cnf", CASE, "sixpack_t", "pack_t", "--json", "--timeout",
         "0", "-3", "abc", "--from", "--set", "en=1", "en", "=", "--cycles", "99999999999", "--code", "q[9]",
         "--when", "&&", "--limit", "--engine", "warp", "--solver", "nosuch", "/nonexistent", "--trace",
         "--claim", "-o", "/dev/null/x", "--vcd", "", "\x00", "q", "--dot", "{"]


def _run(argv):
    out, err = io.StringIO(), io.StringIO()
    with contextlib.redirect_stdout(out), contextlib.redirect_stderr(err):
        try:
            rc = main(argv)
        except SystemExit as e:  # --help and --version exit through argparse
            rc = e.code
    return rc, out.getvalue(), err.getvalue()


@settings(max_examples=150, deadline=None)
@given(st.lists(st.sampled_from(WORDS), max_size=7))
def test_random_command_lines_never_crash(argv):
    rc, out, err = _run(argv)
    assert rc in (0, 1, 2, 3), (argv, rc, err)
    assert "Traceback" not in err and "internal error" not in err, (argv, err)
    if rc == 2 and "--json" in argv and out.strip():
        assert "error" in json.loads(out)


def test_errors_carry_positions(tmp_path):
    rc, out, err = _run(["check", str(tmp_path / "gone.cnl"), "--json"])
    assert rc == 2
    e = json.loads(out)["error"]
    assert set(e) == {"file", "line", "col", "message"}
    assert err.strip() == f"{e['file']}:{e['line']}:{e['col']}: {e['message']}"


def test_empty_file_has_no_claims(tmp_path):
    p = tmp_path / "empty.cnl"
    p.write_text("# nothing here yet\n")
    rc, out, _ = _run(["check", str(p), "--json"])
    assert rc == 0 and json.loads(out) == {"claims": []}


def test_unwritable_output_files_are_exit_2(tmp_path):
    bad = str(tmp_path / "no" / "such" / "dir" / "out")
    for argv in (["sim", CASE, "sixpack_t", "--vcd", bad], ["check", CASE, "--junit", bad],
                 ["map", CASE, "pack_t", "--dot", bad], ["cnf", CASE, "pack_t", "--claim", "49", "-o", bad]):
        rc, out, err = _run(argv + ["--json"])
        assert rc == 2, (argv, err)
        assert json.loads(out)["error"]["file"] == bad
        assert err.startswith(f"{bad}:1:1: cannot write")


def test_every_bad_file_of_a_folder_is_named(tmp_path):
    (tmp_path / "a.cnl").write_text("design a\n  in x y\nend\n")
    (tmp_path / "sub").mkdir()
    (tmp_path / "sub" / "b.cnl").write_text("design b\n  out y = z\nend\n")
    (tmp_path / "good.cnl").write_text("design g\n  in x\n  out y = x\nend\n")
    rc, out, err = _run(["check", str(tmp_path), "--json"])
    assert rc == 2
    lines = err.strip().splitlines()
    assert [l.split(":")[0] for l in lines] == [str(tmp_path / "a.cnl"), str(tmp_path / "sub" / "b.cnl")]
    assert json.loads(out)["error"]["file"] == str(tmp_path / "a.cnl")
