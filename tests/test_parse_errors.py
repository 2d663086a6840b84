"""Every kind of bad input gives FILE:LINE:COL and a message, never a traceback."""

from __future__ import annotations

import json

import pytest

from checker.elab import load_namespace
from checker.errors import InputError
from conftest import run_cli

GOOD = """\
design tally
  in en
  flop q[1:0] : D (d = {q[1] ^ (q[0] & en), q[0] ^ en})
  out top = q[1] & q[0]
end
"""


def error_of(write, text: str) -> InputError:
    path = write(text)
    with pytest.raises(InputError) as ei:
        load_namespace(path)
    return ei.value


# (text, line, col, words the message must contain)
CASES = [
    ("design a\n  in x y\nend\n", 2, 8, ["unexpected 'y'"]),
    ("design a\n  in x\n  out y = x &\nend\n", 3, 14, ["end of line"]),
    ("design a\n  in x\n  out y = z\nend\n", 3, 11, ["undefined name 'z'"]),
    ("design a\n  in x\n  in x\n  out y = x\nend\n", 3, 6, ["defined twice"]),
    ("design a\n  in x\n  flop q : D (d = x, d = !x)\nend\n", 3, 22, ["pin d", "twice"]),
    ("design a\n  in x\n  flop q : JK (j = x)\nend\n", 3, 3, ["pin k", "not given"]),
    ("design a\n  in x\n  flop q : T (d = x)\nend\n", 3, 15, ["no pin 'd'"]),
    ("design a\n  in x\n  flop q : D\nend\n", 3, 12, ["(d ="]),
    ("design a\n  in x\n  flop q[1:0] : D (d = {x, x})\n  flop q[0] : D (d = x)\nend\n", 4, 8, ["overlaps", "q[0]"]),
    ("design a\n  in x\n  flop q[3] : D (d = x)\n  flop q[1:0] : D (d = {x, x})\nend\n", 3, 8, ["q[2]", "range"]),
    ("design a\n  in x[1:0]\n  out y[2:0] = x\nend\n", 3, 16, ["width mismatch"]),
    ("design a\n  in x\n  part u : nothing (x = x)\nend\n", 3, 12, ["unknown design 'nothing'"]),
    ("design a\n  in x\n  part u : a (x = x)\n  out y = x\nend\n", 3, 3, ["recursive part"]),
    ("design a\n  in x\n  node n = m & x\n  node m = n\n  out y = m\nend\n", 3, 3, ["combinational loop", "n", "m"]),
    ("design a\n  in x\n  flop q : D (d = x)\nend\ncheck c of a\n  code x\n  count 0 1\nend\n", 6, 8, ["flop bits only"]),
    ("design a\n  in x\n  flop q[1:0] : D (d = {x, x})\nend\ncheck c of a\n  code q\n  count 0 1 2 1\nend\n", 7, 15, ["repeat"]),
    ("design a\n  in x\n  flop q[1:0] : D (d = {x, x})\nend\ncheck c of a\n  code q\n  count 0 1 7\nend\n", 7, 13, ["7"]),
    ("design a\n  in x\n  flop q : D (d = and(x))\nend\n", 3, 19, ["two or more"]),
    ("design a\n  in x\n  flop q : D (d = frob(x, x))\nend\n", 3, 19, ["unknown gate 'frob'"]),
    ("design a\n  in x\n  flop q : Q (d = x)\nend\n", 3, 12, ["unknown flop kind"]),
    ("design a\n  in x\n  out y = x\nend\ncheck c of b\n  code q\nend\n", 5, 12, ["unknown design 'b'"]),
    ("design a\n  in count\nend\n", 2, 6, ["reserved"]),
    ("design a\n  in x[3:0]\n  out y = x[4]\nend\n", 3, 12, ["outside"]),
    ("design a\n  in x\n  out y = x\n", 4, 1, ["end of file"]),
    ("design a\n  in x\n  flop q : D (d = x)\nend\ncheck c of a\n  code q\n  count 0 1\n  hold when q\nend\n", 8, 13, ["inputs only"]),
    # v2: an unclosed bracket is reported at the bracket, not at the end of the file
    ("design a\n  in x\n  flop q : T (t = (x & x)\n  out y = x\nend\n", 3, 14, ["'(' is never closed"]),
    ("design a\n  in x\n  node n[1:0] = {x,\n  out y = x\nend\n", 3, 17, ["'{' is never closed"]),
    # a trailing comma continues the statement; a keyword on the next line is a mistake
    ("design a\n  in x,\nend\n", 2, 7, ["ends with ','", "'end'"]),
    # clear and preset are one bit: a vector there is an error
    ("design a\n  in x[1:0]\n  flop q[1:0] : D (d = x) clear x\nend\n", 3, 33, ["clear is one bit"]),
    # pieces: declared whole and in pieces; ascending mixed with descending
    ("design a\n  in x\n  flop q : D (d = x)\n  flop q[1] : D (d = x)\nend\n", 3, 8, ["whole", "pieces"]),
    ("design a\n  in x\n  flop q[1:0] : D (d = {x, x})\n  flop q[2:3] : D (d = {x, x})\nend\n", 3, 8, ["ascending"]),
    # reserved for the asynchronous designs to come: refused clearly, not parsed as names
    ("design a\n  in settle\nend\n", 2, 6, ["reserved"]),
    # clocks: a flop bit or a plain copy of one; never an input, never through a gate
    # (a design clocked from its own input is usable only as a part: the error comes where it is checked)
    ("design a\n  in x\n  flop q : T (t = x) clock rise x\nend\ncheck c of a\n  code q\n  count 0 1\nend\n", 5, 12,
     ["only as a part", "clock of flop q", "input x"]),
    ("design a\n  in x\n  flop p : T (t = x)\n  flop q : T (t = x) clock rise !p\nend\n", 4, 22, ["clock of flop q", "gate"]),
    ("design a\n  in x\n  flop p : T (t = x)\n  node c = p & x\n  flop q : T (t = x) clock rise c\nend\n", 5, 22, ["gate"]),
    # buf and a double negation are gates too, even though the logic folds them away
    ("design a\n  in x\n  flop p : T (t = x)\n  flop q : T (t = x) clock fall buf(p)\nend\n", 4, 22, ["gate"]),
    ("design a\n  in x\n  flop p : T (t = x)\n  node c = !!p\n  flop q : T (t = x) clock fall c\nend\n", 5, 22, ["gate at c"]),
    ("design a\n  in x\n  flop p[1:0] : T (t = {x, x})\n  flop q[2:0] : T (t = {x, x, x}) clock fall p\nend\n", 4, 46, ["width mismatch"]),
    ("design a\n  in x\n  flop q : T (t = x) clock up q\nend\n", 3, 28, ["rise or fall"]),
]


def test_statements_continue_across_lines(write):
    # contract v2: a line break inside ( { [ or after a trailing comma does not end a statement
    text = ("design a\n  in x,\n     y\n  flop q[1:0] : JK (\n    j = {x,\n         y},\n"
            "    k = {y, x})  # comment inside\n  out o = and(q[1],\n              q[0])\nend\n")
    ns = load_namespace(write(text))
    m = ns.designs["a"].model
    assert m.inputs == ["x", "y"] and m.states == ["q[1]", "q[0]"] and m.outputs == ["o"]


def test_flop_pieces_tile_one_vector(write):
    # each bit its own equation; the whole name reads the vector msb first
    text = ("design a\n  in x\n  flop q[0] : T (t = x)\n  flop q[2:1] : D (d = {q[1], q[0]})\n"
            "  out all[2:0] = q\nend\n")
    d = load_namespace(write(text)).designs["a"]
    assert d.vectors["q"].bits == ["q[2]", "q[1]", "q[0]"]
    assert d.model.states == ["q[0]", "q[2]", "q[1]"]  # declaration order
    nxt, outs, _ = d.model.step({"q[2]": 0, "q[1]": 1, "q[0]": 1}, {"x": 1})
    assert nxt == {"q[0]": 0, "q[2]": 1, "q[1]": 1} and outs == {"all[2]": 0, "all[1]": 1, "all[0]": 1}


@pytest.mark.parametrize("text,line,col,words", CASES)
def test_error_position_and_message(write, text, line, col, words):
    e = error_of(write, text)
    assert (e.pos.line, e.pos.col) == (line, col), str(e)
    for w in words:
        assert w in e.message, e.message


def test_v1_pin_statement_is_refused_with_the_v2_form(write):
    # v1 drove a pin by its own statement; v2 names pins in the declaration only
    e = error_of(write, "design a\n  in x\n  flop q : T (t = x)\n  q.t = x\nend\n")
    assert (e.pos.line, e.pos.col) == (4, 3), str(e)
    assert "flop q" in e.message and "(t =" in e.message, e.message


def test_good_file_loads(write):
    ns = load_namespace(write(GOOD))
    assert ns.designs["tally"].model.states == ["q[1]", "q[0]"]


def test_per_bit_loop_is_legal(write):
    # the contract's own example: no bit of k depends on itself
    ns = load_namespace(write("design a\n  in a, b, c\n  node k[2:0] = {k[1] & a, k[0] & b, c}\n  out y = k[2]\nend\n"))
    assert "y" in ns.designs["a"].model.outputs


def test_use_cycle_and_missing_use(write, tmp_path):
    write('use "b.cnl"\n', "a.cnl")
    write('use "a.cnl"\n', "b.cnl")
    with pytest.raises(InputError) as ei:
        load_namespace(str(tmp_path / "a.cnl"))
    assert "use cycle" in ei.value.message and ei.value.pos.line == 1
    p = write('\n\nuse "missing.cnl"\n', "c.cnl")
    with pytest.raises(InputError) as ei:
        load_namespace(p)
    assert (ei.value.pos.line, ei.value.pos.col) == (3, 5) and "no such file" in ei.value.message


def test_use_is_read_once_and_designs_clash(write, tmp_path):
    write(GOOD, "lib.cnl")
    write('use "lib.cnl"\n', "mid.cnl")
    p = write('use "lib.cnl"\nuse "mid.cnl"\ncheck c of tally\n  code q\n  count 0 .. 3\nend\n', "top.cnl")
    ns = load_namespace(p)
    assert list(ns.designs) == ["tally"]
    p2 = write('use "lib.cnl"\n' + GOOD, "clash.cnl")
    with pytest.raises(InputError) as ei:
        load_namespace(p2)
    assert "defined twice" in ei.value.message and ei.value.pos.line == 2


def test_limits_are_stated(write):
    e = error_of(write, "design a\n  in x[99999999:0]\nend\n")
    assert "4096" in e.message and e.pos.line == 2
    deep = "design a\n  in x\n  out y = " + "(" * 6000 + "x" + ")" * 6000 + "\nend\n"
    e = error_of(write, deep)
    assert "200" in e.message and e.pos.line == 3
    nots = "design a\n  in x\n  out y = " + "!" * 6000 + "x\nend\n"
    assert "nests deeper" in error_of(write, nots).message


def test_flattened_bit_limit(write):
    # 30 parts of 4096 flops: past the 100,000-bit limit
    text = "design wide\n  in x\n  flop q[4095:0] : D (d = {q[4094:0], x})\n  out y = q[0]\nend\n"
    text += "design many\n  in x\n" + "".join(f"  part u{i} : wide (x = x)\n" for i in range(30)) + "  out y = u0.y\nend\n"
    assert "100000" in error_of(write, text).message


@pytest.mark.parametrize("data", [
    b"\xff\xfe\x00garbage\x81",
    bytes(range(256)),
    b"design a\n  in x\x00\nend\n",
    b"\x89PNG\r\n\x1a\n\x00\x00\x00\rIHDR",
])
def test_binary_garbage_cli(tmp_path, data):
    p = tmp_path / "bad.cnl"
    p.write_bytes(data)
    r = run_cli("check", str(p), "--json")
    assert r.returncode == 2
    assert "Traceback" not in r.stderr
    err = json.loads(r.stdout)["error"]
    assert err["file"] == str(p) and err["line"] >= 1 and err["col"] >= 1
    assert r.stderr.startswith(f"{p}:{err['line']}:{err['col']}: ")


def test_missing_file_and_bad_command_line(tmp_path):
    r = run_cli("check", str(tmp_path / "none.cnl"))
    assert r.returncode == 2 and "no such file" in r.stderr and "Traceback" not in r.stderr
    r = run_cli("sim", "--frobnicate")
    assert r.returncode == 2 and "Traceback" not in r.stderr and r.stderr.count(":") >= 3


def test_decimal_numbers_may_have_leading_zeros(write):
    ns = load_namespace(write("design a\n  in x\n  flop q[1:0] : D (d = {x & 01, x})\nend\n"
                              "check c of a\n  code q\n  count 00 01 02\n  recover within 007\nend\n"))
    chk = ns.checks[0]
    assert [c for c in chk.sequence.codes()] == [0, 1, 2]
    assert chk.claims[1].within == 7
