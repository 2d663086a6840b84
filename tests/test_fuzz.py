"""A mutation fuzzer over the shipped cases, through the command line.

Each example takes one file of ``cases/``, applies a few byte and token
mutations (delete, duplicate or swap a span; insert a reserved word,
punctuation, a number far too wide, a bad byte, a line break), and runs
``check --json`` on it, then ``sim --vcd`` on the first design it still
names. Whatever the mutant, the run must end with a verdict
or a positioned error: exit 0, 1, 2 or 3, never 70; no traceback; and every
error names a file, a line and a column inside it.

Bounded: a fixed number of examples, each claim under ``--timeout``. Under
CI (the ``ci`` hypothesis profile of ``conftest.py``) the examples are
derandomized, so a failure there reproduces; a developer's run explores new
mutants each time.
"""

from __future__ import annotations

import contextlib
import io
import json
import re
import shutil
from pathlib import Path

import pytest
from hypothesis import HealthCheck, given, settings, strategies as st

from checker.cli import main
from checker.lang.parse import RESERVED

from conftest import ROOT

CASES = sorted(p.name for p in (ROOT / "cases").glob("*.cnl"))

TOKENS = sorted(RESERVED) + [
    "(", ")", "{", "}", "[", "]", ",", ":", "=", ".", "..", "&", "|", "^", "!", "~", "==", "!=", "#", '"',
    "0", "1", "7", "0b1011", "0xFF", "4096", "99999999999", "1" * 1500, "0x" + "f" * 1100,
    "q", "x", "en", "clk", "u1", "D", "T", "JK", "SR", "and(", "mux(", "at(", "q[3:0]", "q[99]",
    "\n", "\n\n", " ", "\t", "\\", "\x00", "\u00e9", "\ufeff", 'use "demo.cnl"\n', 'use "nowhere.cnl"\n',
    "part u : ", "design z\nend\n", "check k of z\nend\n",
]
BYTES = [b"\xff", b"\xc3", b"\x80", b"\xe2\x82", b"\r", b"\r\n"]


@pytest.fixture(scope="module")
def workdir(tmp_path_factory):
    """A copy of cases/, so that mutants' use lines find their neighbours."""
    d = tmp_path_factory.mktemp("fuzz") / "cases"
    shutil.copytree(ROOT / "cases", d)
    return d


mutation = st.tuples(st.sampled_from(["delete", "duplicate", "swap", "token", "byte"]),
                     st.floats(0, 1), st.floats(0, 1), st.integers(0, len(TOKENS) - 1),
                     st.integers(0, len(BYTES) - 1))


def mutate(data: bytes, muts) -> bytes:
    for kind, a, b, tok, byte in muts:
        n = len(data)
        i = int(a * n)
        j = min(n, i + 1 + int(b * 40))
        if kind == "delete":
            data = data[:i] + data[j:]
        elif kind == "duplicate":
            data = data[:j] + data[i:j] + data[j:]
        elif kind == "swap":
            k = int(b * n)
            lo, hi = sorted((i, k))
            data = data[:lo] + data[hi:hi + 8] + data[lo + 8:hi] + data[lo:lo + 8] + data[hi + 8:] if hi - lo >= 8 else data
        elif kind == "token":
            data = data[:i] + TOKENS[tok].encode("utf-8") + data[i:]
        else:
            data = data[:i] + BYTES[byte] + data[i:]
    return data


@settings(max_examples=60, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(st.sampled_from(CASES), st.lists(mutation, min_size=1, max_size=4))
def test_mutants_get_a_verdict_or_a_positioned_error(workdir, case, muts):
    mutant = workdir / "mutant.cnl"
    data = mutate((workdir / case).read_bytes(), muts)
    mutant.write_bytes(data)
    rc, doc = _run(["check", str(mutant), "--json", "--timeout", "20"], case, muts)
    if rc != 2:
        assert all(c["status"] in ("proved", "refuted", "open") for c in doc["claims"])
    # the first design the mutant still names, clocked a few times with a dump
    names = re.findall(rb"^design ([A-Za-z_]\w*)", data, re.M)
    if names:
        vcd = workdir / "mutant.vcd"
        rc, doc = _run(["sim", str(mutant), names[0].decode(), "--cycles", "3", "--vcd", str(vcd), "--json"],
                       case, muts)
        assert (rc == 0) == vcd.exists()  # an output exists exactly when the command succeeded
        vcd.unlink(missing_ok=True)


def _run(argv, case, muts):
    out, err = io.StringIO(), io.StringIO()
    with contextlib.redirect_stdout(out), contextlib.redirect_stderr(err):
        rc = main(argv)
    err_text = err.getvalue()
    assert rc in (0, 1, 2, 3), (case, muts, argv, rc, err_text)
    assert "Traceback" not in err_text and "internal error" not in err_text, (case, muts, argv, err_text)
    doc = json.loads(out.getvalue())
    if rc == 2:
        e = doc["error"]
        assert e["file"] != "<command line>" and Path(e["file"]).name.endswith(".cnl"), (argv, e)
        assert isinstance(e["line"], int) and e["line"] >= 1 and isinstance(e["col"], int) and e["col"] >= 1, e
        assert err_text.startswith(f"{e['file']}:{e['line']}:{e['col']}: "), err_text
    return rc, doc


def test_the_mutator_mutates():
    data = b"design a\n  in x\nend\n"
    assert mutate(data, [("delete", 0.0, 0.0, 0, 0)]) == data[1:]
    assert mutate(data, [("token", 0.0, 0.0, TOKENS.index("("), 0)]) == b"(" + data
    assert mutate(data, [("byte", 1.0, 0.0, 0, 0)]) == data + b"\xff"
