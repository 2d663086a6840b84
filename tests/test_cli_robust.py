"""No command line, however wrong, gets a traceback: exit 2 with FILE:LINE:COL."""

from __future__ import annotations

import contextlib
import io
import json
from pathlib import Path

from hypothesis import given, settings, strategies as st

from checker.cli import main

CASE = str(Path(__file__).resolve().parent.parent / "cases" / "sixpack_t.cnl")
WORDS = ["check", "map", "compare", "sim", "export", CASE, "sixpack_t", "pack_t", "--json", "--timeout",
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


def test_a_run_without_claims_is_exit_2(tmp_path):
    # contract v2: a check that finds no claim at all exits 2, so a CI job pointed at the wrong place fails
    p = tmp_path / "empty.cnl"
    p.write_text("# nothing here yet\n")
    rc, out, err = _run(["check", str(p), "--json"])
    assert rc == 2 and "no claims in" in json.loads(out)["error"]["message"]
    (tmp_path / "sub").mkdir()
    rc, _, err = _run(["check", str(tmp_path / "sub")])
    assert rc == 2 and "no claims in" in err


def test_folder_scan_skips_hidden_folders_and_virtual_environments(tmp_path):
    src = ("design flip\n  in go\n  flop q : T (t = go)\nend\n"
           "check flips of flip\n  code q\n  count 0 1\n  hold when !go\nend\n")
    for folder in (".git", "venv", "ok"):
        (tmp_path / folder).mkdir()
        (tmp_path / folder / "c.cnl").write_text(src)
    (tmp_path / "venv" / "pyvenv.cfg").write_text("home = /usr\n")
    rc, out, _ = _run(["check", str(tmp_path), "--json"])
    files = {c["file"] for c in json.loads(out)["claims"]}
    assert files == {str(tmp_path / "ok" / "c.cnl")}


def test_unwritable_output_files_are_exit_2(tmp_path):
    bad = str(tmp_path / "no" / "such" / "dir" / "out.cnf")
    for argv in (["sim", CASE, "sixpack_t", "--vcd", bad], ["check", CASE, "--junit", bad],
                 ["map", CASE, "pack_t", "--dot", bad], ["export", CASE, "pack_t", "--claim", "49", "-o", bad]):
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
