"""Bounded resources (issue 14): every input gets an error with a position or a verdict,
limits are checked before the work they limit, and no command leaves a partial file.

Each reproduction is built here (generated where large). Assertions are on
the error or the verdict; elapsed time is checked only against bounds many
times what the case needs, to catch a limit or a deadline that is ignored, not
to measure speed (that lives in ``tests/perf/bench_limits.py``).
"""

from __future__ import annotations

import contextlib
import io
import json
import os
import signal
import subprocess
import sys
import time
import xml.etree.ElementTree as ET
from pathlib import Path

import pytest

from checker import api
from checker.cli import main
from checker.elab.bits import MAX_VECTOR
from checker.elab.flatten import MAX_BITS, MAX_PART_DEPTH, MAX_PARTS
from checker.errors import InputError
from checker.lang.parse import MAX_FILE_BYTES, MAX_LITERAL_BITS

from conftest import ROOT

CASE = str(ROOT / "cases" / "sixpack_t.cnl")

FLIP = """design flip
  in go
  flop q : T (t = go)
  out o = q
end
check flips of flip
  code q
  count 0 1
  hold when !go
end
"""


def run(argv):
    out, err = io.StringIO(), io.StringIO()
    with contextlib.redirect_stdout(out), contextlib.redirect_stderr(err):
        rc = main(argv)
    return rc, out.getvalue(), err.getvalue()


def error_of(argv):
    """(exit status, the JSON error document) of a command that must fail with exit 2."""
    rc, out, err = run(argv + ["--json"])
    assert rc == 2, (argv, rc, err)
    assert "Traceback" not in err and "internal error" not in err
    return json.loads(out)["error"]


def leftovers(folder: Path) -> list[str]:
    """Temporary files an output left behind."""
    return sorted(p.name for p in folder.iterdir() if p.name.endswith(".part"))


# --- 1. literals ----------------------------------------------------------------

def test_literal_limit_is_the_widest_vector():
    assert MAX_LITERAL_BITS == MAX_VECTOR


@pytest.mark.parametrize("digits", ["1" + "0" * 5000, "0x" + "f" * 1025, "9" * 1300, "0b" + "1" * 4097])
def test_a_literal_wider_than_any_vector_is_an_error_at_it(write, digits):
    p = write(f"design a\n  in x\n  out o = {digits}\nend\n")
    e = error_of(["check", p])
    assert (e["line"], e["col"]) == (3, 11)
    assert f"wider than {MAX_LITERAL_BITS} bits" in e["message"]


def test_leading_zeros_do_not_count(write):
    # a value that fits, written with 6,000 leading zeros, is the value
    from checker.model.simulate import run as clock

    p = write("design a\n  in x\n  out o[3:0] = " + "0" * 6000 + "5\nend\n")
    d = api.load(p).designs["a"]
    outs = clock(d.model, {}, [{"x": 0}], 0)[0].outputs
    assert [outs[f"o[{i}]"] for i in (3, 2, 1, 0)] == [0, 1, 0, 1]


def test_the_widest_literal_fills_the_widest_vector(write):
    big = str((1 << MAX_VECTOR) - 1)
    p = write(f"design a\n  in x\n  out o[{MAX_VECTOR - 1}:0] = {big}\nend\n")
    d = api.load(p).designs["a"]
    assert len(d.model.outputs) == MAX_VECTOR


def test_a_huge_number_in_a_trace_is_an_error_at_the_trace(write, tmp_path):
    p = write(FLIP)
    trace = tmp_path / "t.json"
    trace.write_text('[{"clock": 0, "code": ' + "1" * 5000 + ', "inputs": {"go": 1}}]')
    e = error_of(["sim", p, "flip", "--trace", str(trace)])
    assert e["file"] == str(trace) and "wider than any code" in e["message"]
    e = error_of(["sim", p, "flip", "--from", "1" * 5000])
    assert e["file"] == "<command line>" and "wider than any code" in e["message"]


def test_a_trace_code_that_does_not_fit_names_the_trace_entry(write, tmp_path):
    p = write(FLIP)
    trace = tmp_path / "t.json"
    trace.write_text('[{"clock": 0, "code": -1, "inputs": {"go": 1}}, {"clock": 1, "code": 0}]')
    e = error_of(["sim", p, "flip", "--trace", str(trace)])
    assert e["file"] == str(trace) and e["message"].startswith("trace entry 0: code -1 does not fit")
    assert "--from" not in e["message"]
    trace.write_text('[{"clock": 0, "code": 0}, {"clock": 1, "code": 0, "inputs": {"stop": 1}}]')
    e = error_of(["sim", p, "flip", "--trace", str(trace)])
    assert e["message"].startswith("trace entry 1: input 'stop'")


# --- 2. the VCD's own clock ---------------------------------------------------------

def test_a_signal_named_clk_does_not_collide_with_the_dump_clock(write, tmp_path):
    p = write("design a\n  in clk, clk_\n  flop q : D (d = clk)\n  out o = q & clk_\nend\n")
    vcd = tmp_path / "run.vcd"
    rc, _, err = run(["sim", p, "a", "--set", "clk=1,clk_=1", "--cycles", "2", "--vcd", str(vcd)])
    assert rc == 0, err
    names = [line.split()[4] for line in vcd.read_text().splitlines() if line.startswith("$var")]
    assert sorted(names) == ["clk", "clk_", "clk__", "o", "q"]


# --- 3. file names that are not UTF-8 -------------------------------------------------

def test_non_utf8_file_names_in_every_report(tmp_path):
    if sys.platform == "win32" or os.fsencode("x") != b"x":  # pragma: no cover
        pytest.skip("needs a POSIX file system with byte file names")
    raw = os.fsdecode(b"fl\xffp.cnl")  # the name as Python sees it: a lone surrogate
    src = tmp_path / raw
    src.write_text(FLIP)
    junit = tmp_path / os.fsdecode(b"rep\xfe.xml")
    rc, out, err = run(["check", str(src), "--junit", str(junit)])
    assert rc == 0, err
    assert "fl\\xffp.cnl" in out
    suite = ET.parse(junit).getroot().find("testsuite")
    assert suite.get("file").endswith("fl\\xffp.cnl")
    rc, out, _ = run(["check", str(src), "--json"])
    assert rc == 0
    out.encode("utf-8")  # valid Unicode throughout: no lone surrogate
    assert json.loads(out)["claims"][0]["file"].endswith("fl\\xffp.cnl")
    cnf = tmp_path / os.fsdecode(b"out\xfd.cnf")
    rc, out, err = run(["export", str(src), "flips", "--claim", "8", "-o", str(cnf)])
    assert rc == 0, err
    assert "fl\\xffp.cnl:8" in cnf.read_text(encoding="utf-8")
    bad = tmp_path / os.fsdecode(b"b\xfead.cnl")
    bad.write_text("design b\n  out y = z\nend\n")
    rc, out, err = run(["check", str(bad), "--json"])
    assert rc == 2 and err.startswith(str(tmp_path)) and "b\\xfead.cnl:2:11:" in err
    json.loads(out)["error"]["file"].encode("utf-8")


# --- 4. Ctrl-C ------------------------------------------------------------------------

def _processes_mentioning(marker: str) -> list[int]:
    found = []
    for d in Path("/proc").iterdir():
        if d.name.isdigit():
            with contextlib.suppress(OSError):
                if marker.encode() in (d / "cmdline").read_bytes():
                    found.append(int(d.name))
    return found


@pytest.mark.skipif(not Path("/proc").is_dir(), reason="reads /proc to find the worker")
@pytest.mark.parametrize("timeout", [None, "600"])
def test_ctrl_c_during_a_solve_is_exit_130_with_no_partial_file(tmp_path, timeout):
    from test_timeouts import multiplier

    # two 12-bit multipliers with their operands swapped: an equal claim that
    # the solver works on for minutes (multiplier miters are hard for SAT)
    src = tmp_path / "mul.cnl"
    src.write_text(multiplier("mul_a", 12, False) + multiplier("mul_b", 12, True)
                   + "check same of mul_a\n  equal mul_b\nend\n")
    junit = tmp_path / "report.xml"
    argv = [sys.executable, "-m", "checker", "check", str(src), "--junit", str(junit)]
    argv += [] if timeout is None else ["--timeout", timeout]
    proc = subprocess.Popen(argv, cwd=str(ROOT), stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True,
                            start_new_session=True)
    time.sleep(4.0)  # loading takes well under a second; the solver is busy by now
    assert proc.poll() is None, proc.communicate()
    os.killpg(proc.pid, signal.SIGINT)  # what a terminal's Ctrl-C does: the whole foreground group
    out, err = proc.communicate(timeout=60)
    assert proc.returncode == 130, err
    assert err.strip() == "interrupted"
    assert not junit.exists() and leftovers(tmp_path) == []
    time.sleep(0.5)
    assert _processes_mentioning(str(src)) == []  # the worker went with it


@pytest.mark.skipif(not sys.platform.startswith("linux"), reason="the worker asks Linux to end it with its parent")
def test_a_worker_does_not_outlive_a_killed_command(tmp_path):
    # the worker leaves the terminal's process group (so that Ctrl-C reaches only the parent);
    # killed outright, the parent cannot kill it, so the worker must end by itself
    from test_timeouts import multiplier

    src = tmp_path / "mulk.cnl"
    src.write_text(multiplier("mul_a", 12, False) + multiplier("mul_b", 12, True)
                   + "check same of mul_a\n  equal mul_b\nend\n")
    proc = subprocess.Popen([sys.executable, "-m", "checker", "check", str(src)], cwd=str(ROOT),
                            stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
    deadline = time.monotonic() + 60
    while len(_processes_mentioning(str(src))) < 2 and time.monotonic() < deadline:
        time.sleep(0.2)
    assert len(_processes_mentioning(str(src))) >= 2  # the command and its worker
    proc.kill()
    proc.wait()
    deadline = time.monotonic() + 20
    while _processes_mentioning(str(src)) and time.monotonic() < deadline:
        time.sleep(0.2)
    assert _processes_mentioning(str(src)) == []


# --- 5. what is not a regular file ------------------------------------------------------

def test_devices_and_fifos_are_refused_before_reading(tmp_path):
    e = error_of(["check", "/dev/zero"])
    assert e["file"] == "/dev/zero" and "a device, not a regular file" in e["message"]
    fifo = tmp_path / "pipe.cnl"
    os.mkfifo(fifo)
    user = tmp_path / "user.cnl"
    user.write_text('use "pipe.cnl"\n' + FLIP)
    e = error_of(["check", str(user)])  # reading the FIFO would block forever
    assert (e["file"], e["line"], e["col"]) == (str(user), 1, 5) and "a pipe (FIFO)" in e["message"]
    dev = tmp_path / "dev.cnl"
    dev.write_text('use "/dev/zero"\n' + FLIP)
    assert "a device" in error_of(["check", str(dev)])["message"]


def test_trace_files_are_refused_when_not_regular(write, tmp_path):
    p = write(FLIP)
    fifo = tmp_path / "t.json"
    os.mkfifo(fifo)
    for bad in ("/dev/zero", str(fifo)):
        e = error_of(["sim", p, "flip", "--trace", bad])
        assert e["file"] == bad and "not a regular file" in e["message"]
    # a trace whose "file" is a device: the code order falls back to the design's own
    trace = tmp_path / "claim.json"
    trace.write_text(json.dumps({"file": "/dev/zero", "check": "flips",
                                 "trace": [{"clock": 0, "code": 1, "inputs": {"go": 1}}, {"clock": 1, "code": 0}]}))
    rc, out, _ = run(["sim", p, "flip", "--trace", str(trace), "--json"])
    assert rc == 0 and [e["code"] for e in json.loads(out)["trace"]] == [1, 0]


def test_a_name_with_a_nul_character_is_no_file(write, tmp_path):
    p = write(FLIP)
    trace = tmp_path / "t.json"
    trace.write_text(json.dumps({"file": "a\x00b", "check": "flips", "trace": [{"clock": 0, "code": 1}]}))
    rc, out, err = run(["sim", p, "flip", "--trace", str(trace), "--json"])
    assert rc == 0, err  # the trace's file cannot be read: the design's own code order
    e = error_of(["check", "a\x00b"])
    assert "NUL" in e["message"] or "no such file" in e["message"]


def test_size_is_checked_before_reading(tmp_path):
    big = tmp_path / "big.cnl"
    with open(big, "wb") as f:  # sparse: 1 byte over the limit costs no disk and, refused, no memory
        f.truncate(MAX_FILE_BYTES + 1)
    e = error_of(["check", str(big)])
    assert e["file"] == str(big) and "larger than 32 MiB" in e["message"]


# --- 6. part trees, nesting -----------------------------------------------------------------

def part_tree(levels: int, bits: bool = False) -> str:
    """``e{k}`` places two parts of ``e{k-1}``: 2^levels instances from a few hundred bytes."""
    if bits:
        s = "design e0\n  in x\n  out y = x\nend\n"
        body = "  in x\n  part a : e{p} (x = x)\n  part b : e{p} (x = x)\n  out y = a.y & b.y\n"
    else:
        s = "design e0\nend\n"
        body = "  part a : e{p} ()\n  part b : e{p} ()\n"
    for k in range(1, levels + 1):
        s += f"design e{k}\n" + body.format(p=k - 1) + "end\n"
    return s


def part_chain(levels: int) -> str:
    s = "design e0\n  in x\n  flop q : T (t = x)\n  out y = q\nend\n"
    for k in range(1, levels + 1):
        s += f"design e{k}\n  in x\n  part a : e{k - 1} (x = x)\n  out y = a.y\nend\n"
    top = f"e{levels}"
    q = ".".join(["a"] * levels + ["q"])
    return s + f"check deep of {top}\n  code {q}\n  count 0 1\n  step when x\n  hold when !x\nend\n"


def test_a_tree_of_parts_is_refused_before_flattening(write):
    p = write(part_tree(40))
    t0 = time.monotonic()
    with pytest.raises(InputError, match=f"more than {MAX_PARTS} part instances") as ei:
        api.load(p)
    assert time.monotonic() - t0 < 20  # flattening it would take hours and terabytes
    # the first design that would go over, at its part statement
    first = next(k for k in range(40) if 2 ** (k + 1) - 2 > MAX_PARTS)
    assert ei.value.pos.line == part_tree(first).count("\n") - 1


def test_bits_of_parts_count_before_flattening(write):
    # e0 holds 3,001 flop bits; e6 flattens into 64 of them, 192,064 bits: over the limit long before 10,000 parts
    src = part_tree(8).replace("design e0\nend\n", "design e0\n  flop n[3000:0] : D (d = n)\nend\n")
    p = write(src)
    with pytest.raises(InputError, match=f"more than {MAX_BITS} bits") as ei:
        api.load(p)
    assert "design e6 " in ei.value.message  # 64 x 3,001 = 192,064 bits at e6's second part


def test_parts_nested_past_the_limit_are_an_input_error_with_a_position(write):
    p = write(part_chain(400))
    with pytest.raises(InputError, match=f"nest more than {MAX_PART_DEPTH} levels") as ei:
        api.load(p)
    assert ei.value.pos.file == p and ei.value.pos.line > 1
    e = error_of(["check", p])
    assert e["file"] == p and e["line"] == ei.value.pos.line


def test_parts_nested_to_the_limit_are_checked(write):
    # at the limit, with an expression nested to its own limit at the bottom: no RecursionError
    src = part_chain(MAX_PART_DEPTH).replace("flop q : T (t = x)", "flop q : T (t = " + "(" * 190 + "x" + ")" * 190 + ")")
    p = write(src)
    rc, out, err = run(["check", p, "--json"])
    assert rc == 0, err
    assert [c["status"] for c in json.loads(out)["claims"]] == ["proved"]


def test_a_recursive_part_is_an_error_at_the_part(write):
    p = write("design a\n  in x\n  part u : b (x = x)\nend\ndesign b\n  in x\n  part v : a (x = x)\nend\n")
    with pytest.raises(InputError, match="recursive part") as ei:
        api.load(p)
    assert ei.value.pos.line in (3, 7)


# --- 7. --timeout over loading ------------------------------------------------------------

def slow_loading(designs: int) -> str:
    """Many designs of wide xor chains: each is honest work to elaborate (about 80,000 gates),
    and every design of a file is elaborated."""
    s = ""
    for k in range(designs):
        s += (f"design w{k}\n  in a[4095:0], b[4095:0]\n"
              f"  out o[4095:0] = a ^ b ^ (a & b) ^ (a | b) ^ !a ^ (b & !a) ^ {{a[4094:0], b[0]}}"
              f" ^ {{b[0], a[4095:1]}}\nend\n")
    return s + "check c of w0\n  code o\nend\n"


def test_timeout_bounds_loading(write, tmp_path):
    # what runs out of time is open (exit 3), for reading a file as for a claim
    p = write(slow_loading(100))
    junit = tmp_path / "j.xml"
    docs = {}
    for argv in (["check", p, "--junit", str(junit)], ["map", p, "c"], ["compare", p, p]):
        t0 = time.monotonic()
        rc, out, err = run(argv + ["--timeout", "1", "--json"])
        assert time.monotonic() - t0 < 30, argv
        assert rc == 3, (argv, err)
        docs[argv[0]] = json.loads(out)
    assert docs["check"]["claims"] == []
    assert [u["file"] for u in docs["check"]["unread"]] == [p]
    assert "took longer than --timeout 1 s" in docs["check"]["unread"][0]["message"]
    assert docs["map"]["status"] == "open" and docs["map"]["worst"] is None
    assert docs["compare"]["open"] is True and docs["compare"]["differs"] is False
    case = ET.parse(junit).getroot().find("testsuite").find("testcase")
    assert case.find("failure") is not None and case.find("failure").get("type") == "open"
    rc, out, _ = run(["check", p, CASE, "--timeout", "1"])  # the other file's claims still run
    assert rc == 1 and "open: reading and elaborating" in out and "refuted" in out


# --- 8. nothing half-written ---------------------------------------------------------------

def test_a_failing_second_output_leaves_no_first(tmp_path):
    dot = tmp_path / "m.dot"
    e = error_of(["map", CASE, "pack_t", "--dot", str(dot), "--svg", str(tmp_path / "nodir" / "m.svg")])
    assert e["file"] in ("<command line>", str(tmp_path / "nodir" / "m.svg"))
    assert not dot.exists() and leftovers(tmp_path) == []


def test_outputs_appear_whole_when_the_command_succeeds(tmp_path):
    vcd, dot, junit, cnf = (tmp_path / n for n in ("r.vcd", "m.dot", "j.xml", "c.cnf"))
    assert run(["sim", CASE, "sixpack_t", "--vcd", str(vcd)])[0] == 0
    assert run(["map", CASE, "pack_t", "--dot", str(dot)])[0] == 0
    assert run(["check", CASE, "--junit", str(junit)])[0] in (0, 1)
    assert run(["export", CASE, "pack_t", "--claim", "49", "-o", str(cnf)])[0] == 0
    assert vcd.read_text().startswith("$date") and dot.read_text().rstrip().endswith("}")
    ET.parse(junit)
    assert "p cnf" in cnf.read_text()
    assert leftovers(tmp_path) == []
    os.chmod(vcd, 0o640)  # replacing a file keeps its permissions
    assert run(["sim", CASE, "sixpack_t", "--vcd", str(vcd)])[0] == 0
    assert vcd.stat().st_mode & 0o777 == 0o640


def test_a_read_only_output_is_not_replaced(tmp_path, monkeypatch):
    import checker.fileio

    vcd = tmp_path / "r.vcd"
    vcd.write_text("keep")
    os.chmod(vcd, 0o444)
    if os.access(vcd, os.W_OK):  # root may write anything: ask as a user would be answered
        monkeypatch.setattr(checker.fileio.os, "access", lambda p, mode: False)
    e = error_of(["sim", CASE, "sixpack_t", "--vcd", str(vcd)])
    assert e["file"] == str(vcd) and "permission denied" in e["message"]
    assert vcd.read_text() == "keep"


def test_an_output_that_is_a_device_is_written_not_replaced(tmp_path):
    rc, _, err = run(["sim", CASE, "sixpack_t", "--vcd", "/dev/null"])
    assert rc == 0, err
    assert Path("/dev/null").is_char_device()


@pytest.mark.skipif(not Path("/dev/full").exists(), reason="needs /dev/full")
def test_a_full_disk_names_the_path():
    for argv in (["sim", CASE, "sixpack_t", "--vcd", "/dev/full"], ["check", CASE, "--junit", "/dev/full"]):
        e = error_of(argv)
        assert e["file"] == "/dev/full" and e["message"].startswith("cannot write '/dev/full'")


def test_an_interrupted_write_leaves_nothing(tmp_path, monkeypatch):
    from checker.fileio import atomic_output, output_transaction

    target = tmp_path / "out.txt"
    with pytest.raises(KeyboardInterrupt):
        with atomic_output(str(target)) as f:
            f.write("half")
            raise KeyboardInterrupt
    assert not target.exists() and leftovers(tmp_path) == []
    target.write_text("old")
    with pytest.raises(KeyboardInterrupt):
        with output_transaction():
            with atomic_output(str(target)) as f:
                f.write("new")
            raise KeyboardInterrupt  # after the file was written, before the command ended
    assert target.read_text() == "old" and leftovers(tmp_path) == []


# --- 9. work that grew faster than the input ------------------------------------------------

def test_a_single_bit_applied_to_a_wide_vector_is_built_once(write):
    # 4,096 bits ANDed with one 10,000-term bit (issue 14, item 8): built once, not once per bit
    from checker.model.simulate import run as clock

    terms = 10_000
    p = write("design wide\n  in v[4095:0], a, b\n  out o[4095:0] = v & (a" + " & b" * terms + ")\nend\n")
    rc, out, err = run(["check", p, "--timeout", "30", "--json"])  # reading it took minutes
    assert rc == 2 and "no claims in" in err  # read and elaborated in time: only then is this known
    d = api.load(p).designs["wide"]
    ins = {f"v[{i}]": i % 2 for i in range(4096)}
    for a, b in ((1, 1), (1, 0), (0, 1)):
        outs = clock(d.model, {}, [{**ins, "a": a, "b": b}], 0)[0].outputs
        assert [outs[f"o[{i}]"] for i in range(8)] == [i % 2 & a & b for i in range(8)]


def test_equal_between_designs_with_many_flops_reads_in_time(write):
    # 4 x 4,096 flops on each side (issue 14, item 9): the name comparison was quadratic
    body = "".join(f"  flop {n}[4095:0] : D (d = {n})\n" for n in "abce")
    p = write(f"design p\n  in x\n{body}end\ndesign r\n  in x\n{body}end\ncheck k of p\n  equal r\nend\n")
    rc, out, err = run(["check", p, "--timeout", "30", "--json"])
    assert rc == 0, err
    assert [c["status"] for c in json.loads(out)["claims"]] == ["proved"]


def test_a_design_over_the_bit_limit_is_refused_while_reading(write):
    # issue 14, item 10: the declared bits are counted as the file is read, so what follows the
    # declaration that goes over is never parsed (here, a syntax error that would be reported first)
    from checker.lang.parse import MAX_DESIGN_BITS

    assert MAX_DESIGN_BITS == MAX_BITS
    decls = "".join(f"  node n{i}[4095:0] = v\n" for i in range(30))
    p = write("design wide\n  in v[4095:0]\n" + decls + "  out @@@\nend\n")
    e = error_of(["check", p])
    # v is 4,096 bits; 23 nodes make 98,304 in all; the 24th goes over
    assert (e["line"], e["col"]) == (3 + 23, 8) and f"past {MAX_BITS} bits" in e["message"]
    # pieces, lists and single bits count too; a declaration over the vector limit keeps its own message
    p = write("design w\n  in a, b[3:0], " + ", ".join(f"c{i}[0:4095]" for i in range(25)) + "\nend\n")
    assert f"past {MAX_BITS} bits" in error_of(["check", p])["message"]
    p = write("design w\n  in x\n  node big[5000:0] = x\nend\n")
    assert "limit is 4096 bits in one vector" in error_of(["check", p])["message"]


def test_a_simulation_too_large_to_hold_is_refused_before_it_starts(write):
    # issue 14, item 11: a million clocks of a 4,096-bit design would take hours and 120 GiB
    from checker.api import MAX_SIM_VALUES

    p = write("design wide\n  in go\n  flop q[4095:0] : D (d = {q[4094:0], go})\n  out o = q[4095]\nend\n")
    t0 = time.monotonic()
    e = error_of(["sim", p, "wide", "--cycles", "1000000"])
    assert time.monotonic() - t0 < 20
    most = MAX_SIM_VALUES // (4096 + 1 + 1) - 1
    assert e["file"] == "<command line>" and f"run at most {most} clocks" in e["message"]
    rc, out, _ = run(["sim", p, "wide", "--cycles", "3", "--set", "go=1", "--json"])
    assert rc == 0 and [t["code"] for t in json.loads(out)["trace"]] == [0, 1, 3, 7]
