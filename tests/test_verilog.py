"""The structural Verilog reader: IEEE 1364 width rules against Python integers, flops,
instances, and every refused construct at its line and column.

The reference evaluator below is written from IEEE 1364-2005 section 5.4
(expression bit lengths, table 5-22): ``+ - & | ^ ~^ ~`` and ``?:`` take the
largest width of their operands and of the context, comparisons and
reductions and logical operators give one bit from self-determined operands,
a concatenation is the sum of its items, and an assignment extends the
right-hand side to the left-hand side's width first and then truncates.
It shares no code with the reader.
"""

from __future__ import annotations

import itertools
import random

import pytest
from hypothesis import HealthCheck, given, settings, strategies as st

from checker.claims import run_check
from checker.claims.common import Options
from checker.elab import load_namespace
from checker.errors import InputError

WIDTHS = {"a": 3, "b": 5, "c": 1, "d": 8}

BIN = ["+", "-", "&", "|", "^", "~^", "==", "!=", "<", "<=", ">", ">=", "&&", "||"]
UN = ["~", "-", "!", "&", "|", "^", "~&", "~|", "~^"]


def exprs():
    leaf = st.one_of(
        st.sampled_from(sorted(WIDTHS)).map(lambda n: ("var", n)),
        st.tuples(st.integers(1, 6), st.integers(0, 63)).map(lambda t: ("const", t[0], t[1] & ((1 << t[0]) - 1))),
        st.integers(0, 20).map(lambda v: ("int", v)),
    )

    def grow(inner):
        return st.one_of(
            st.tuples(st.sampled_from(UN), inner).map(lambda t: ("un", t[0], t[1])),
            st.tuples(st.sampled_from(BIN), inner, inner).map(lambda t: ("bin", t[0], t[1], t[2])),
            st.tuples(inner, inner, inner).map(lambda t: ("cond", *t)),
            st.tuples(inner, inner).filter(lambda t: sized(t[0]) and sized(t[1])).map(lambda t: ("cat", *t)),
        )

    return st.recursive(leaf, grow, max_leaves=6)


def sized(e) -> bool:
    return e[0] != "int" and (e[0] != "un" or sized(e[2])) and all(
        sized(x) for x in e[1:] if isinstance(x, tuple))


def width(e) -> int:
    k = e[0]
    if k == "var":
        return WIDTHS[e[1]]
    if k == "const":
        return e[1]
    if k == "int":
        return 32
    if k == "un":
        return width(e[2]) if e[1] in ("~", "-") else 1
    if k == "bin":
        return max(width(e[2]), width(e[3])) if e[1] in ("+", "-", "&", "|", "^", "~^") else 1
    if k == "cond":
        return max(width(e[2]), width(e[3]))
    return width(e[1]) + width(e[2])


def signed(e) -> bool:
    """Only unsized decimal numbers are signed here; an operator is signed when its operands are."""
    k = e[0]
    if k == "int":
        return True
    if k == "un":
        return e[1] in ("~", "-") and signed(e[2])
    if k == "bin":
        return e[1] in ("+", "-", "&", "|", "^", "~^") and signed(e[2]) and signed(e[3])
    if k == "cond":
        return signed(e[2]) and signed(e[3])
    return False


def value(e, env, w) -> int:
    """``e`` evaluated in a context of ``w`` bits (w >= width(e))."""
    mask = (1 << w) - 1
    k = e[0]
    if k == "var":
        return env[e[1]]
    if k in ("const", "int"):
        return e[-1]
    if k == "un":
        op, x = e[1], e[2]
        if op == "~":
            return ~value(x, env, w) & mask
        if op == "-":
            return -value(x, env, w) & mask
        wx = width(x)
        v = value(x, env, wx)
        bits = [(v >> i) & 1 for i in range(wx)]
        return {"!": int(v == 0), "&": int(all(bits)), "|": int(any(bits)), "^": sum(bits) % 2,
                "~&": int(not all(bits)), "~|": int(not any(bits)), "~^": 1 - sum(bits) % 2}[op]
    if k == "bin":
        op, x, y = e[1], e[2], e[3]
        if op in ("+", "-", "&", "|", "^", "~^"):
            a, b = value(x, env, w), value(y, env, w)
            return {"+": a + b, "-": a - b, "&": a & b, "|": a | b, "^": a ^ b, "~^": ~(a ^ b)}[op] & mask
        if op in ("&&", "||"):
            a, b = value(x, env, width(x)) != 0, value(y, env, width(y)) != 0
            return int(a and b) if op == "&&" else int(a or b)
        wc = max(width(x), width(y))
        a, b = value(x, env, wc), value(y, env, wc)
        if signed(x) and signed(y):  # IEEE 1364 5.5.1: both operands signed, a signed comparison
            a, b = a - ((a >> (wc - 1)) << wc), b - ((b >> (wc - 1)) << wc)
        return int({"==": a == b, "!=": a != b, "<": a < b, "<=": a <= b, ">": a > b, ">=": a >= b}[op])
    if k == "cond":
        c = value(e[1], env, width(e[1]))
        return value(e[2], env, w) if c else value(e[3], env, w)
    return (value(e[1], env, width(e[1])) << width(e[2])) | value(e[2], env, width(e[2]))


def text(e) -> str:
    k = e[0]
    if k == "var":
        return e[1]
    if k == "const":
        return f"{e[1]}'d{e[2]}"
    if k == "int":
        return str(e[1])
    if k == "un":
        return f"({e[1]} {text(e[2])})"
    if k == "bin":
        return f"({text(e[2])} {e[1]} {text(e[3])})"
    if k == "cond":
        return f"({text(e[1])} ? {text(e[2])} : {text(e[3])})"
    return "{" + text(e[1]) + ", " + text(e[2]) + "}"


@settings(max_examples=150, suppress_health_check=[HealthCheck.too_slow, HealthCheck.function_scoped_fixture])
@given(e=exprs(), out_width=st.integers(1, 12), seed=st.integers(0, 2**16))
def test_operators_follow_ieee_1364_widths(tmp_path_factory, e, out_width, seed):
    ports = ", ".join(f"input [{w - 1}:0] {n}" for n, w in WIDTHS.items())
    src = f"module calc ({ports}, output [{out_width - 1}:0] y);\n  assign y = {text(e)};\nendmodule\n"
    p = tmp_path_factory.mktemp("v") / "calc.v"
    p.write_text(src)
    m = load_namespace(str(p)).designs["calc"].model
    rng = random.Random(seed)
    w = max(out_width, width(e))
    for _ in range(12):
        env = {n: rng.randrange(1 << wd) for n, wd in WIDTHS.items()}
        inputs = {f"{n}[{i}]": (v >> i) & 1 for n, v in env.items() for i in range(WIDTHS[n])}
        if WIDTHS["c"] == 1:
            inputs["c[0]"] = env["c"] & 1
        _, outs, _ = m.step({}, inputs)
        got = sum(outs[f"y[{i}]"] << i for i in range(out_width))
        want = value(e, env, w) & ((1 << out_width) - 1)
        assert got == want, f"{src} with {env}: got {got}, IEEE 1364 gives {want}"


def test_adder_carry_out_and_comparators_exhaustively(tmp_path):
    src = """module alu (input [2:0] a, input [2:0] b, output [3:0] sum, output [2:0] diff,
            output lt, output ge, output eq);
  assign sum = a + b;          // 4-bit context: the carry is kept
  assign diff = a - b;         // wraps modulo 8
  assign lt = a < b;
  assign ge = a >= b;
  assign eq = a == b;
endmodule
"""
    p = tmp_path / "alu.v"
    p.write_text(src)
    m = load_namespace(str(p)).designs["alu"].model
    for a, b in itertools.product(range(8), repeat=2):
        inputs = {**{f"a[{i}]": (a >> i) & 1 for i in range(3)}, **{f"b[{i}]": (b >> i) & 1 for i in range(3)}}
        _, o, _ = m.step({}, inputs)
        assert sum(o[f"sum[{i}]"] << i for i in range(4)) == a + b
        assert sum(o[f"diff[{i}]"] << i for i in range(3)) == (a - b) % 8
        assert (o["lt"], o["ge"], o["eq"]) == (int(a < b), int(a >= b), int(a == b))


TALLY_V = """\
// A crate tally for a dairy's returnable-crate dock: counts 0..11, synchronous clear,
// hold without a crate; the carry pulses on the last code.
module crate_tally (input clk, input crate, input clr, output reg [3:0] n, output last);
  wire at_end = n == 4'd11;
  assign last = at_end & crate;
  always @(posedge clk) begin
    if (clr)
      n <= 4'd0;
    else if (crate)
      n <= at_end ? 4'd0 : n + 4'd1;
  end
endmodule

module dock (input clk, input crate, input clr, output [7:0] total, output full);
  wire lo_last;
  crate_tally lo (.clk(clk), .crate(crate), .clr(clr), .n(total[3:0]), .last(lo_last));
  crate_tally hi (clk, lo_last, clr, total[7:4], full);
endmodule
"""


def test_clocked_blocks_and_instances(tmp_path):
    (tmp_path / "tally.v").write_text(TALLY_V)
    (tmp_path / "c.cnl").write_text("""use "tally.v"
design ref
  in crate, clr
  node at11 = n[3] & !n[2] & n[1] & n[0]
  flop n[3:0] : D (d = mux(crate, n, {n[3] ^ (n[2] & n[1] & n[0]), n[2] ^ (n[1] & n[0]), n[1] ^ n[0], !n[0]} & !at11)) clear clr
  out n[3:0] = n
  out last = at11 & crate
end
check t of crate_tally
  code n
  count 0 .. 11
  load 0 when clr
  hold when !crate
  recover within 4
  equal ref
end
check d of dock
  code {hi.n, lo.n}
  count bcd
  load 0 when clr
  hold when !crate
end
""")
    ns = load_namespace(str(tmp_path / "c.cnl"))
    got = {(c.name, r.claim): r.status for c in ns.checks for r in run_check(c, Options())}
    assert got[("t", "count")] == "proved" and got[("t", "equal")] == "proved"
    assert got[("t", "recover")] == "proved"
    assert got[("d", "count")] == "refuted"  # two 0..11 digits are not BCD: 12..15 of a digit never occur, but 10, 11 do
    d = ns.designs["dock"]
    assert "clk" not in d.model.inputs and sorted(d.model.inputs) == ["clr", "crate"]
    assert d.output_vectors["total"][0] == "total[7]"


def test_ripple_stage_and_asynchronous_clear_reach_the_elaborator(tmp_path):
    # A flop clocked by another reg bit, and an asynchronous clear: the reader maps them
    # to the syntax tree's clock and async fields, and the event model reads them.
    p = tmp_path / "rip.v"
    p.write_text("""module rip (input clk, input rst, output reg [1:0] q);
  always @(posedge clk or posedge rst)
    if (rst) q[0] <= 1'b0;
    else q[0] <= ~q[0];
  always @(negedge q[0]) q[1] <= ~q[1];
endmodule
""")
    from checker.lang.verilog import verilog_file
    f = verilog_file(str(p), p.read_bytes())
    flops = [s for s in f.designs[0].stmts if type(s).__name__ == "FlopDecl"]
    assert flops[0].clear_async and flops[0].clock is None
    assert flops[1].clock.edge == "fall" and flops[1].clock.signal.path == ["q"]
    m = load_namespace(str(p)).designs["rip"].model
    i0, i1 = m.states.index("q[0]"), m.states.index("q[1]")
    assert m.clocks[i1] == ("fall", i0) and m.async_clear[i0] != 0 and m.async_clear[i1] == 0
    from checker.model.simulate import run
    steps = run(m, {"q[0]": 0, "q[1]": 0}, [{"rst": 0}], 4)
    assert [(s.state["q[1]"], s.state["q[0]"]) for s in steps] == [(0, 0), (0, 1), (1, 0), (1, 1), (0, 0)]


@pytest.mark.parametrize("body,line,col,what", [
    ("  initial q = 0;", 3, 3, "initial blocks"),
    ("  always @(*) y2 = a;", 3, 10, "always @(*)"),
    ("  always @(a) y2 <= a;", 3, 12, "combinational always blocks"),
    ("  assign y = a * 2;", 3, 16, "multiplication"),
    ("  assign y = a << 1;", 3, 16, "shift operators"),
    ("  assign y = a === 1;", 3, 16, "case equality"),
    ("  assign #2 y = a;", 3, 10, "delays"),
    ("  always @(posedge clk) case (a) 0: q <= 1; endcase", 3, 25, "case statements"),
    ("  generate endgenerate", 3, 3, "generate blocks"),
    ("  parameter W = 4;", 3, 3, "parameters"),
    ("  function f; endfunction", 3, 3, "functions"),
    ("  task t; endtask", 3, 3, "tasks"),
    ("  always @(posedge clk) for (;;) q <= 1;", 3, 25, "for loops"),
    ("  assign y = 4'bx01z;", 3, 15, "x and z values"),
    ("  always @(posedge clk) $display(a);", 3, 25, "system tasks"),
    ("  always @(posedge clk) q = a;", 3, 25, "blocking assignments"),
    ("  wire signed s;", 3, 8, "signed"),
    ("  assign y = w;", 3, 14, "not declared"),
    ("  assign q = a;", 3, 10, "reg"),
    ("  assign y = a;\n  assign y = !a;", 4, 10, "driven twice"),
    ("  reg r;\n  always @(negedge clk) r <= a;", 5, 20, "both edges"),
])
def test_refused_constructs_name_themselves(tmp_path, body, line, col, what):
    src = f"// refusals\nmodule m (input clk, input a, output y, output reg q);\n{body}\n  always @(posedge clk) q <= a;\nendmodule\n"
    if "assign y" not in body and "y2" not in body:
        src = src.replace("endmodule", "  assign y = a;\nendmodule")
    p = tmp_path / "m.v"
    p.write_text(src)
    with pytest.raises(InputError) as e:
        load_namespace(str(p))
    assert what in e.value.message, e.value.message
    assert (e.value.pos.line, e.value.pos.col) == (line, col), str(e.value)


def test_inout_port_is_refused(tmp_path):
    p = tmp_path / "io.v"
    p.write_text("module io (inout x);\nendmodule\n")
    with pytest.raises(InputError) as e:
        load_namespace(str(p))
    assert "inout" in e.value.message and (e.value.pos.line, e.value.pos.col) == (1, 12)


def test_syntax_error_has_line_and_column(tmp_path):
    p = tmp_path / "s.v"
    p.write_text("module s (input a, output y);\n  assign y = a &;\nendmodule\n")
    with pytest.raises(InputError) as e:
        load_namespace(str(p))
    assert (e.value.pos.line, e.value.pos.col) == (2, 17)


def _refusal(tmp_path, line3: str):
    src = f"// every refused word\nmodule m (input a, output y);\n{line3}\n  assign y = a;\nendmodule\n"
    p = tmp_path / "m.v"
    p.write_text(src)
    with pytest.raises(InputError) as e:
        load_namespace(str(p))
    return e.value


@pytest.mark.parametrize("word", sorted(__import__("checker.lang.verilog", fromlist=["x"]).REFUSED_WORDS))
def test_every_refused_word_is_named_at_its_place(tmp_path, word):
    from checker.lang.verilog import REFUSED_WORDS
    err = _refusal(tmp_path, f"  wire w; {word}")
    assert (err.pos.line, err.pos.col) == (3, 11) and REFUSED_WORDS[word] in err.message


@pytest.mark.parametrize("op,what", [("*", "multiplication"), ("/", "division"), ("%", "modulus"),
                                     ("**", "power"), ("<<", "shift"), (">>", "shift"), ("<<<", "shift"),
                                     (">>>", "shift"), ("===", "case equality"), ("!==", "case inequality")])
def test_every_refused_operator_is_named_at_its_place(tmp_path, op, what):
    err = _refusal(tmp_path, f"  wire w = a {op} a;")
    assert (err.pos.line, err.pos.col) == (3, 14) and what in err.message


@pytest.mark.parametrize("text,col,what", [
    ("  (* keep *) wire w;", 3, "attributes"),
    ("  `define W 4", 3, "compiler directives"),
    ('  wire w = "a";', 12, "strings"),
    ("  wire w = 4'sd3;", 13, "signed numbers"),
    ("  wire w = 'bz;", 12, "x and z"),
    ("  always @ * w = a;", 10, "always @(*)"),
])
def test_other_refusals(tmp_path, text, col, what):
    err = _refusal(tmp_path, text)
    assert (err.pos.line, err.pos.col) == (3, col) and what in err.message, str(err)


def test_timescale_is_read_and_ignored(tmp_path):
    p = tmp_path / "t.v"
    p.write_text("`timescale 1ns/1ps\nmodule t (input a, output y);\n  assign y = !a;\nendmodule\n")
    assert load_namespace(str(p)).designs["t"].model.step({}, {"a": 0})[1] == {"y": 1}
