"""Structural Verilog (a subset of IEEE 1364-2005) to the syntax tree.

Each module becomes a design of the same name, built of the same
:mod:`checker.lang.parse` dataclasses the ``.cnl`` parser produces: ports and
``wire`` nets become inputs, outputs and nodes, every ``reg`` bit assigned in
an ``always @(posedge C)`` block a D flop (with ``clock`` when C is another
reg bit, and asynchronous ``clear``/``preset`` for the leading ``if (R)``
branches of ``always @(posedge C or posedge R)``), every instance a part.

Operators are bit-blasted with the width rules of IEEE 1364-2005 section 5.4:
``+ - & | ^ ~^ ~`` and ``?:`` are context-determined (operands extended to the
largest width of the expression and of what it is assigned to), comparisons,
reductions and logical operators give one bit from self-determined operands,
and an assignment truncates to its target. Every value is unsigned (the
``signed`` keyword is refused). ``a + b`` is a ripple-carry adder, ``a - b``
adds the complement plus one, and ``a < b`` is the borrow of ``a - b``.

The grammar is ``grammar/verilog.lark``; constructs outside the subset are
refused by name (``REFUSED_WORDS``, ``REFUSED_OPERATORS``) before it runs.
"""

from __future__ import annotations

import functools
import re
from dataclasses import dataclass, field
from pathlib import Path
from typing import Optional

from lark import Lark, Token, Tree
from lark.exceptions import UnexpectedCharacters, UnexpectedInput, UnexpectedToken

from ..words import count
from ..errors import InputError, Pos
from .tables import build_lark
from . import netlist as N
from . import parse as P
from .verilog_fast import parse_fast

MAX_WIDTH = 4096

REFUSED_WORDS = {
    "initial": "initial blocks", "case": "case statements", "casez": "casez statements",
    "casex": "casex statements", "endcase": "case statements", "for": "for loops", "while": "while loops",
    "repeat": "repeat loops", "forever": "forever loops", "function": "functions", "endfunction": "functions",
    "task": "tasks", "endtask": "tasks", "generate": "generate blocks", "endgenerate": "generate blocks",
    "genvar": "generate variables (genvar)", "parameter": "parameters", "localparam": "parameters (localparam)",
    "defparam": "parameter overrides (defparam)", "inout": "inout ports", "integer": "integer variables",
    "real": "real variables", "realtime": "realtime variables", "time": "time variables",
    "event": "named events", "fork": "fork-join blocks", "join": "fork-join blocks", "wait": "wait statements",
    "disable": "disable statements", "force": "force statements", "release": "release statements",
    "deassign": "procedural continuous assignments", "signed": "signed arithmetic",
    "unsigned": "signed arithmetic", "specify": "specify blocks", "endspecify": "specify blocks",
    "primitive": "user-defined primitives", "table": "user-defined primitive tables",
    "supply0": "supply nets", "supply1": "supply nets", "tri": "tri-state nets", "tri0": "tri-state nets",
    "tri1": "tri-state nets", "triand": "tri-state nets", "trior": "tri-state nets", "trireg": "charge-storage nets",
    "wand": "wired-and nets", "wor": "wired-or nets", "bufif0": "tri-state gates (bufif0)",
    "bufif1": "tri-state gates (bufif1)", "notif0": "tri-state gates (notif0)", "notif1": "tri-state gates (notif1)",
    "nmos": "switch primitives", "pmos": "switch primitives", "cmos": "switch primitives", "rnmos": "switch primitives",
    "rpmos": "switch primitives", "rcmos": "switch primitives", "tran": "switch primitives",
    "tranif0": "switch primitives", "tranif1": "switch primitives", "rtran": "switch primitives",
    "rtranif0": "switch primitives", "rtranif1": "switch primitives", "pullup": "pull gates", "pulldown": "pull gates",
    "automatic": "automatic tasks and functions", "macromodule": "macromodules", "config": "configurations",
    "library": "library declarations", "specparam": "specify parameters", "edge": "edge control specifiers",
    "scalared": "scalared nets", "vectored": "vectored nets", "highz0": "drive strengths",
    "highz1": "drive strengths", "strong0": "drive strengths", "strong1": "drive strengths",
    "weak0": "drive strengths", "weak1": "drive strengths", "pull0": "drive strengths", "pull1": "drive strengths",
    "small": "charge strengths", "medium": "charge strengths", "large": "charge strengths",
}

_TOKEN = re.compile(r"""(?P<comment>//[^\n]*|/\*.*?\*/)|(?P<ts>`timescale[^\n]*)|(?P<str>"(?:[^"\\\n]|\\.)*")|(?P<esc>\\\S+)
    |(?P<word>[A-Za-z_][A-Za-z0-9_$]*)|(?P<sys>\$[A-Za-z0-9_$]*)|(?P<dir>`[A-Za-z_][A-Za-z0-9_]*)
    |(?P<num>[0-9][0-9_]*)|(?P<based>'[sS]?[bBoOdDhH]\s*[0-9a-fA-FxXzZ?_]+)
    |(?P<op>===|!==|\*\*|<<<|>>>|<<|>>|->|\(\*|\*\)|@\s*\*|@\s*\(\s*\*\s*\)|[*/%\#]|\S)""",
                    re.S | re.X)
_OPS = {"===": "case equality (===)", "!==": "case inequality (!==)", "**": "the power operator (**)",
        "<<": "shift operators (<<)", ">>": "shift operators (>>)", "<<<": "shift operators (<<<)",
        ">>>": "shift operators (>>>)", "*": "multiplication (*)", "/": "division (/)", "%": "modulus (%)",
        "#": "delays and parameter lists (#)", "(*": "attributes ((* ... *))", "->": "event triggers (->)"}


def _line_col(text: str, offset: int) -> tuple[int, int]:
    return text.count("\n", 0, offset) + 1, offset - (text.rfind("\n", 0, offset) + 1) + 1


def _refuse_outside(path: str, text: str) -> None:
    """Every word and operator outside the subset, refused by name at its position."""
    for m in _TOKEN.finditer(text):
        kind = m.lastgroup
        tok = m.group(kind)
        where = None
        if kind == "word" and tok in REFUSED_WORDS:
            where = f"{REFUSED_WORDS[tok]} ('{tok}')"
        elif kind == "sys":
            where = f"system tasks and functions ('{tok}')"
        elif kind == "dir" and tok != "`timescale":
            where = f"compiler directives ('{tok}')"
        elif kind == "str":
            where = "strings"
        elif kind == "based" and re.search(r"[xXzZ?]", tok.split("'", 1)[1][1:]):
            where = "x and z values in numbers"
        elif kind == "based" and tok[1] in "sS":
            where = "signed numbers"
        elif kind == "op" and tok.startswith("@") and "*" in tok:
            where = "combinational always blocks (always @(*))"
        elif kind == "op" and tok in _OPS:
            where = _OPS[tok]
        if where is not None:
            line, col = _line_col(text, m.start())
            raise InputError(Pos(path, line, col), f"not in the Verilog subset countersign reads: {where} "
                                                   f"(structural netlists: see 'Standard netlists' in the README)")


def grammar_path() -> Path:
    package = Path(__file__).resolve().parent.parent
    for cand in (package.parent / "grammar" / "verilog.lark", package / "grammar" / "verilog.lark"):
        if cand.is_file():
            return cand
    raise FileNotFoundError("grammar/verilog.lark is missing from the installation")


@functools.lru_cache(maxsize=1)
def _parser() -> Lark:
    return build_lark(grammar_path().read_text(encoding="utf-8"), propagate_positions=True,
                      maybe_placeholders=True)


# --- small syntax helpers --------------------------------------------------------
@dataclass
class Sig:
    name: str
    kind: str  # input, output, wire, reg
    msb: Optional[int]
    lsb: Optional[int]
    pos: Pos
    is_reg: bool = False

    @property
    def width(self) -> int:
        return 1 if self.msb is None else abs(self.msb - self.lsb) + 1

    def index_of(self, k: int) -> Optional[int]:
        """Declared index of bit k (0 = least significant)."""
        if self.msb is None:
            return None
        return self.lsb + k if self.msb >= self.lsb else self.lsb - k

    def position(self, i: int, pos: Pos) -> int:
        """k (0 = least significant) of declared index i."""
        if self.msb is None:
            raise InputError(pos, f"'{self.name}' is a single bit; it takes no index")
        lo, hi = min(self.msb, self.lsb), max(self.msb, self.lsb)
        if not lo <= i <= hi:
            raise InputError(pos, f"index {i} is outside {self.name}[{self.msb}:{self.lsb}]")
        return i - self.lsb if self.msb >= self.lsb else self.lsb - i


@dataclass
class Module:
    name: str
    pos: Pos
    tree: Tree
    sigs: dict[str, Sig] = field(default_factory=dict)
    ports: list[str] = field(default_factory=list)
    clocks: set[str] = field(default_factory=set)  # inputs that are the system clock
    clocked: bool = False  # find_clocks has run


class VerilogReader:
    """One Verilog file: modules to design blocks."""

    def __init__(self, path: str) -> None:
        self.path = path

    def pos(self, item) -> Pos:
        if isinstance(item, Token):
            return Pos(self.path, item.line, item.column)
        meta = getattr(item, "meta", None)
        if meta is not None and not getattr(meta, "empty", True):
            return Pos(self.path, meta.line, meta.column)
        for ch in getattr(item, "children", []):
            if ch is not None:
                return self.pos(ch)
        return Pos(self.path, 1, 1)

    def name(self, t) -> str:
        tok = t.children[0] if isinstance(t, Tree) else t
        s = str(tok)
        return s[1:] if s.startswith("\\") else s

    # --- constants ------------------------------------------------------
    def const(self, t) -> int:
        if isinstance(t, Tree):
            if t.data == "number":
                return int(str(t.children[0]).replace("_", ""))
            if t.data == "based":
                return self.based(t.children[0])[0]
            if t.data == "plus":
                return self.const(t.children[0]) + self.const(t.children[1])
            if t.data == "minus":
                return self.const(t.children[0]) - self.const(t.children[1])
            if t.data == "negate":
                return -self.const(t.children[0])
        raise InputError(self.pos(t), "a range, an index or a repetition count must be a constant number here")

    def based(self, tok: Token) -> tuple[int, Optional[int]]:
        text = str(tok).replace("_", "")
        size_t, rest = text.split("'")
        rest = rest.strip()
        base = {"b": 2, "o": 8, "d": 10, "h": 16}[rest[0].lower()]
        digits = rest[1:].strip()
        try:
            value = int(digits, base)
        except ValueError:
            raise InputError(self.pos(tok), f"'{digits}' is not a base-{base} number") from None
        size = int(size_t) if size_t.strip() else None
        if size is not None:
            if size == 0 or size > MAX_WIDTH:
                raise InputError(self.pos(tok), f"a number's size must be 1 to {MAX_WIDTH} bits, not {size}")
            value &= (1 << size) - 1  # IEEE 1364 truncates a value too wide for its size
        return value, size

    def range_of(self, r: Optional[Tree]) -> tuple[Optional[int], Optional[int]]:
        if r is None:
            return None, None
        msb, lsb = self.const(r.children[0]), self.const(r.children[1])
        if msb < 0 or lsb < 0:
            raise InputError(self.pos(r), "negative indices are not read")
        if abs(msb - lsb) + 1 > MAX_WIDTH:
            raise InputError(self.pos(r), f"a vector of {abs(msb - lsb) + 1} bits; the limit is {MAX_WIDTH}")
        return msb, lsb

    # --- pass A: declarations and interfaces --------------------------------
    def declare(self, m: Module, name: str, kind: str, rng, pos: Pos, is_reg: bool = False) -> None:
        msb, lsb = self.range_of(rng)
        old = m.sigs.get(name)
        if old is not None:
            # `output q; reg q;` and `output [3:0] q; wire [3:0] q;` complete one declaration
            if old.kind in ("input", "output") and kind in ("wire", "reg") and old.width == (1 if msb is None else abs(msb - lsb) + 1):
                if kind == "reg":
                    if old.kind == "input":
                        raise InputError(pos, f"input '{name}' cannot be a reg")
                    old.is_reg = True
                return
            if old.kind in ("input", "output") and kind in ("input", "output") and old.pos == pos:
                return
            raise InputError(pos, f"'{name}' is declared twice (first at line {old.pos.line}, col {old.pos.col})")
        m.sigs[name] = Sig(name, kind, msb, lsb, pos, is_reg or kind == "reg")

    def interface(self, t: Tree) -> Module:
        name_t, ports, *items = t.children
        m = Module(self.name(name_t), self.pos(t), t)
        ansi = False
        if ports is not None:
            cur = None
            for p in ports.children:
                if p is None:
                    continue
                if p.data == "ansi_port":
                    d, k, r, n = p.children
                    cur = (str(d.children[0]), k, r)
                    ansi = True
                if p.data == "plain_port" and not ansi:
                    m.ports.append(self.name(p.children[0]))
                    continue
                if cur is None:
                    raise InputError(self.pos(p), "a port list mixes declared and bare ports")
                n = p.children[-1]
                d, k, r = cur
                nm = self.name(n)
                kind_word = None if k is None else str(k.children[0])
                if d == "input" and kind_word == "reg":
                    raise InputError(self.pos(p), f"input '{nm}' cannot be a reg")
                self.declare(m, nm, d, r, self.pos(n), is_reg=kind_word == "reg")
                m.ports.append(nm)
        for it in items:
            if it.data == "port_decl":
                d, k, r, *names = it.children
                if ansi:
                    raise InputError(self.pos(it), "a module with declared ports in its header declares none in its body")
                kind_word = None if k is None else str(k.children[0])
                for n in names:
                    nm = self.name(n)
                    if nm not in m.ports:
                        raise InputError(self.pos(n), f"'{nm}' is declared {d} but is not in the port list of {m.name}")
                    if str(d.children[0]) == "input" and kind_word == "reg":
                        raise InputError(self.pos(n), f"input '{nm}' cannot be a reg")
                    self.declare(m, nm, str(d.children[0]), r, self.pos(n), is_reg=kind_word == "reg")
        for it in items:
            if it.data == "net_decl":
                k, r, *ones = it.children
                for one in ones:
                    self.declare(m, self.name(one.children[0]), str(k.children[0]), r, self.pos(one))
        for nm in m.ports:
            if nm not in m.sigs:
                raise InputError(m.pos, f"port '{nm}' of {m.name} is never declared input or output")
        return m

    def read(self, text: str) -> P.File:
        _refuse_outside(self.path, text)
        tree = parse_fast(text)  # the same tree, quicker; None sends the text to lark (and its errors)
        if tree is None:
            try:
                tree = _parser().parse(text)
            except UnexpectedInput as e:
                raise self.syntax_error(text, e) from None
        mods: dict[str, Module] = {}
        for t in tree.children:
            m = self.interface(t)
            if m.name in mods:
                raise InputError(m.pos, f"module '{m.name}' is defined twice (first at line {mods[m.name].pos.line})")
            mods[m.name] = m
        self.mods = mods
        for m in mods.values():
            self.find_clocks(m, [])
        f = P.File(self.path)
        for m in mods.values():
            f.designs.append(_Body(self, m).build())
        return f

    def syntax_error(self, text: str, e: UnexpectedInput) -> InputError:
        line, col = getattr(e, "line", None), getattr(e, "column", None)
        if isinstance(e, UnexpectedToken) and e.token.type != "$END":
            msg = f"unexpected {str(e.token)!r}"
        elif isinstance(e, UnexpectedCharacters):
            msg = f"unexpected character {text[e.pos_in_stream]!r}"
        else:
            msg = "unexpected end of file"
            line, col = _line_col(text, len(text))
        if not isinstance(line, int) or line < 1:
            line, col = _line_col(text, len(text))
        return InputError(Pos(self.path, line, col if isinstance(col, int) and col > 0 else 1),
                          msg + " (structural Verilog: see 'Standard netlists' in the README)")

    def find_clocks(self, m: Module, stack: list[str]) -> None:
        """The system clock of ``m``: the inputs that only clock flops, directly or through parts."""
        if m.clocked:
            return
        if m.name in stack:
            raise InputError(m.pos, "recursive module instances: " + " -> ".join(stack + [m.name]))
        used_as_clock: dict[str, Pos] = {}
        edges: dict[str, str] = {}
        for it in m.tree.children[2:]:
            if it.data == "always":
                for name, pos, edge in self.clock_events(m, it):
                    if edges.setdefault(name, edge) != edge:
                        raise InputError(pos, f"flops of {m.name} take both edges of {name}; one edge of "
                                              f"the system clock is read (a half-cycle design is not)")
                    used_as_clock[name] = pos
            elif it.data == "mod_inst":
                sub = self.mods.get(self.name(it.children[0]))
                if sub is None:
                    continue
                self.find_clocks(sub, stack + [m.name])
                for one in it.children[1:]:
                    conns = [c for c in one.children[1:] if c is not None]
                    for k, c in enumerate(conns):
                        port = self.name(c.children[0]) if c.data == "named_conn" else (
                            sub.ports[k] if k < len(sub.ports) else None)
                        e = c.children[-1]
                        if port in sub.clocks and e is not None and e.data == "ident":
                            nm = self.name(e.children[0])
                            if nm in m.sigs and m.sigs[nm].kind == "input":
                                used_as_clock[nm] = self.pos(e)
        m.clocks = set(used_as_clock)
        if len(m.clocks) > 1:
            names = sorted(m.clocks)
            raise InputError(used_as_clock[names[1]], f"module {m.name} is clocked by inputs {' and '.join(names)}; "
                                                     f"one input is its system clock")
        m.clocked = True

    def clock_events(self, m: Module, t: Tree) -> list[tuple[str, Pos, str]]:
        """Inputs of ``m`` used as the clock (not an asynchronous reset) of an always block,
        with the edge."""
        edge, e = self.split_events(m, t)[0]
        if e.data == "ident":
            nm = self.name(e.children[0])
            s = m.sigs.get(nm)
            if s is not None and s.kind == "input":
                return [(nm, self.pos(e), edge)]
        return []

    def split_events(self, m: Module, t: Tree):
        """(clock event, [(reset event, branch)], remaining statement) of an always block."""
        *events, body = t.children
        evs = []
        for ev in events:
            if ev.data == "level_event":
                raise InputError(self.pos(ev), "combinational always blocks (a sensitivity list without "
                                               "posedge or negedge) are outside the Verilog subset countersign reads")
            evs.append((str(ev.children[0].children[0]), ev.children[1]))
        resets = []
        stmt = body
        while len(evs) - len(resets) > 1:
            while isinstance(stmt, Tree) and stmt.data == "block" and len(stmt.children) == 1:
                stmt = stmt.children[0]
            if not (isinstance(stmt, Tree) and stmt.data == "if_stmt"):
                raise InputError(self.pos(stmt if stmt is not None else t),
                                 "an always block with several events starts with 'if (RESET) ... else' for each "
                                 "asynchronous clear or preset")
            cond, then, other = stmt.children
            hit = None
            for k, (edge, e) in enumerate(evs):
                if any(k == r[0] for r in resets):
                    continue
                if self.tests(cond, edge, e):
                    hit = k
                    break
            if hit is None:
                raise InputError(self.pos(cond), "this condition tests none of the block's reset events "
                                                 "('if (R)' for posedge R, 'if (!R)' for negedge R)")
            if other is None:
                raise InputError(self.pos(stmt), "the asynchronous reset's 'if' needs an 'else' holding the clocked part")
            resets.append((hit, cond, then))
            stmt = other
        rest = [ev for k, ev in enumerate(evs) if all(k != r[0] for r in resets)]
        return rest[0], resets, stmt

    def tests(self, cond: Tree, edge: str, e: Tree) -> bool:
        if edge == "posedge":
            return self.same(cond, e)
        return cond.data in ("log_not", "bit_not") and self.same(cond.children[0], e)

    def same(self, a: Tree, b: Tree) -> bool:
        if not (isinstance(a, Tree) and isinstance(b, Tree)) or a.data != b.data:
            return False
        if a.data == "ident":
            return self.name(a.children[0]) == self.name(b.children[0])
        if a.data == "bit_sel":
            return self.name(a.children[0]) == self.name(b.children[0]) and self.const(a.children[1]) == self.const(b.children[1])
        return False


Bits = list  # of P.Expr, least significant first


class _Body:
    """Pass B for one module: drivers, flops and parts, then the design block."""

    def __init__(self, r: VerilogReader, m: Module) -> None:
        self.r, self.m = r, m
        self.stmts: list = []
        self.tmp = N.fresh_prefix(m.sigs, "_t")
        self.ntmp = 0
        self.drivers: dict[tuple[str, Optional[int]], tuple[P.Expr, Pos]] = {}
        self.reads: list[tuple[str, Optional[int], Pos]] = []
        self.flop_bits: dict[tuple[str, Optional[int]], Pos] = {}
        self.inits: dict[str, Optional[int]] = {}

    # --- bits ---------------------------------------------------------------
    def share(self, x: P.Expr) -> P.Expr:
        if isinstance(x, (P.Num, P.Ref)) or (isinstance(x, P.Not) and isinstance(x.arg, P.Ref)):
            return x
        name = f"{self.tmp}{self.ntmp}"
        self.ntmp += 1
        self.stmts.append(P.NodeDecl(N.decl(name, None, None, x.pos), x, x.pos))
        return P.Ref([name], None, x.pos)

    def sig(self, t) -> Sig:
        nm = self.r.name(t)
        s = self.m.sigs.get(nm)
        if s is None:
            raise InputError(self.r.pos(t), f"'{nm}' is not declared (implicit nets are not read)")
        if nm in self.m.clocks:
            raise InputError(self.r.pos(t), f"'{nm}' is the system clock of {self.m.name}; it clocks flops and "
                                            f"is not read as logic")
        return s

    def bit_ref(self, s: Sig, k: int, pos: Pos) -> P.Expr:
        i = s.index_of(k)
        self.reads.append((s.name, i, pos))
        return P.Ref([s.name], None if i is None else P.Index(i, None, pos), pos)

    def width(self, t: Tree) -> int:
        d = t.data
        if d == "number":
            return 32
        if d == "based":
            return self.r.based(t.children[0])[1] or 32
        if d == "ident":
            return self.sig(t.children[0]).width
        if d == "bit_sel":
            return 1
        if d == "part_sel":
            return abs(self.r.const(t.children[1]) - self.r.const(t.children[2])) + 1
        if d == "concat":
            for c in t.children:
                if c.data == "number" or (c.data == "based" and self.r.based(c.children[0])[1] is None):
                    raise InputError(self.r.pos(c), "an unsized number inside a concatenation has no width "
                                                    "(IEEE 1364 forbids it); give it a size, as 4'd3")
            return sum(self.width(c) for c in t.children)
        if d == "repl":
            n = self.r.const(t.children[0])
            if n < 1 or n > MAX_WIDTH:
                raise InputError(self.r.pos(t), f"a repetition count must be 1 to {MAX_WIDTH}, not {n}")
            inner = Tree("concat", t.children[1:], t.meta)
            w = n * self.width(inner)
            if w > MAX_WIDTH:
                raise InputError(self.r.pos(t), f"a {w}-bit replication; the limit is {MAX_WIDTH}")
            return w
        if d in ("bit_not", "negate", "unary_plus"):
            return self.width(t.children[0])
        if d in ("plus", "minus", "bit_and", "bit_or", "bit_xor", "bit_xnor"):
            return max(self.width(t.children[0]), self.width(t.children[1]))
        if d == "cond":
            return max(self.width(t.children[1]), self.width(t.children[2]))
        return 1  # comparisons, reductions, logical operators

    def ev(self, t: Tree, w: int) -> Bits:
        """``t`` evaluated at width ``w`` (at least its own), least significant bit first."""
        d = t.data
        p = self.r.pos(t)
        zero = N.const(0, p)
        if _constant(t):
            self.width(t)  # the width checks (unsized numbers in braces, repetition counts)
            v = self.cval(t) % (1 << w)
            return [N.const((v >> k) & 1, p) for k in range(w)]
        if d in ("number", "based"):
            v = int(str(t.children[0]).replace("_", "")) if d == "number" else self.r.based(t.children[0])[0]
            if d == "number" and v >> 32:
                raise InputError(p, f"{v} does not fit the 32 bits of an unsized number; give it a size")
            return [N.const((v >> k) & 1, p) for k in range(w)]
        if d == "ident":
            s = self.sig(t.children[0])
            return self.ext([self.bit_ref(s, k, p) for k in range(s.width)], w, p)
        if d == "bit_sel":
            s = self.sig(t.children[0])
            k = s.position(self.r.const(t.children[1]), p)
            return self.ext([self.bit_ref(s, k, p)], w, p)
        if d == "part_sel":
            s = self.sig(t.children[0])
            a, b = s.position(self.r.const(t.children[1]), p), s.position(self.r.const(t.children[2]), p)
            if a < b:
                raise InputError(p, f"part select [{self.r.const(t.children[1])}:{self.r.const(t.children[2])}] "
                                    f"runs against the direction of {s.name}[{s.msb}:{s.lsb}]")
            return self.ext([self.bit_ref(s, k, p) for k in range(b, a + 1)], w, p)
        if d in ("concat", "repl"):
            items = t.children if d == "concat" else t.children[1:]
            bits: Bits = []
            for c in reversed(items):
                bits += self.ev(c, self.width(c))
            if d == "repl":
                self.width(t)
                bits = bits * self.r.const(t.children[0])
            return self.ext(bits, w, p)
        if d == "bit_not":
            return [N.neg(x, p) for x in self.ev(t.children[0], w)]
        if d == "unary_plus":
            return self.ev(t.children[0], w)
        if d == "negate":
            return self.add([zero] * w, self.ev(t.children[0], w), subtract=True, p=p)[0]
        if d in ("plus", "minus"):
            a, b = self.ev(t.children[0], w), self.ev(t.children[1], w)
            return self.add(a, b, subtract=d == "minus", p=p)[0]
        if d in ("bit_and", "bit_or", "bit_xor", "bit_xnor"):
            a, b = self.ev(t.children[0], w), self.ev(t.children[1], w)
            if d == "bit_and":
                return [N.and_([x, y], p) for x, y in zip(a, b)]
            if d == "bit_or":
                return [N.or_([x, y], p) for x, y in zip(a, b)]
            out = [N.xor([x, y], p) for x, y in zip(a, b)]
            return out if d == "bit_xor" else [N.neg(x, p) for x in out]
        if d == "cond":
            c = self.share(self.truth(t.children[0]))
            a, b = self.ev(t.children[1], w), self.ev(t.children[2], w)
            return [self.mux(c, y, x, p) for x, y in zip(a, b)]
        return self.ext([self.one_bit(t)], w, p)

    def cval(self, t: Tree) -> int:
        """A constant expression as a Python integer: its value modulo 2**w is its value at width w.

        Unsized decimal numbers are signed in IEEE 1364 (section 3.5.1), so an expression
        of those alone is signed (section 5.5.1); a comparison of two signed operands
        compares them as 32-bit two's complement. Everything else is unsigned."""
        d = t.data
        ch = t.children
        if d == "number":
            return int(str(ch[0]).replace("_", ""))
        if d == "based":
            return self.r.based(ch[0])[0]
        if d == "bit_not":
            return ~self.cval(ch[0])
        if d == "negate":
            return -self.cval(ch[0])
        if d == "unary_plus":
            return self.cval(ch[0])
        if d in ("plus", "minus", "bit_and", "bit_or", "bit_xor", "bit_xnor"):
            a, b = self.cval(ch[0]), self.cval(ch[1])
            return {"plus": a + b, "minus": a - b, "bit_and": a & b, "bit_or": a | b, "bit_xor": a ^ b,
                    "bit_xnor": ~(a ^ b)}[d]
        if d == "cond":
            c = self.cval(ch[0]) % (1 << self.width(ch[0]))
            return self.cval(ch[1]) if c else self.cval(ch[2])
        if d in ("concat", "repl"):
            items = ch if d == "concat" else ch[1:]
            v = 0
            for c in items:
                wc = self.width(c)
                v = (v << wc) | (self.cval(c) % (1 << wc))
            if d == "repl":
                wi = sum(self.width(c) for c in items)
                v = sum(v << (wi * k) for k in range(self.r.const(ch[0])))
            return v
        if d in ("eq", "ne", "lt", "le", "gt", "ge"):
            wc = max(self.width(ch[0]), self.width(ch[1]))
            a, b = self.cval(ch[0]) % (1 << wc), self.cval(ch[1]) % (1 << wc)
            if _signed(ch[0]) and _signed(ch[1]):
                a, b = a - ((a >> (wc - 1)) << wc), b - ((b >> (wc - 1)) << wc)
            return int({"eq": a == b, "ne": a != b, "lt": a < b, "le": a <= b, "gt": a > b, "ge": a >= b}[d])
        if d in ("log_and", "log_or", "log_not"):
            vals = [self.cval(c) % (1 << self.width(c)) != 0 for c in ch]
            return int(not vals[0]) if d == "log_not" else int(all(vals) if d == "log_and" else any(vals))
        if d.startswith("red_"):
            wx = self.width(ch[0])
            v = self.cval(ch[0]) % (1 << wx)
            ones = bin(v).count("1")
            return {"and": int(ones == wx), "nand": int(ones != wx), "or": int(ones > 0), "nor": int(ones == 0),
                    "xor": ones % 2, "xnor": 1 - ones % 2}[d[4:]]
        raise InputError(self.r.pos(t), f"'{d}' is not a constant")  # pragma: no cover

    def mux(self, s: P.Expr, a: P.Expr, b: P.Expr, p: Pos) -> P.Expr:
        """``a`` when ``s`` is 0, ``b`` when 1."""
        if repr(a) == repr(b):
            return a
        if isinstance(s, P.Num):
            return b if s.value else a
        return P.Call("mux", [s, a, b], p)

    def ext(self, bits: Bits, w: int, p: Pos) -> Bits:
        return bits[:w] + [N.const(0, p)] * (w - len(bits))

    def truth(self, t: Tree) -> P.Expr:
        """An expression as one bit: 1 when any of its bits is 1."""
        return N.or_(self.ev(t, self.width(t)), self.r.pos(t))

    def one_bit(self, t: Tree) -> P.Expr:
        d = t.data
        p = self.r.pos(t)
        if d == "log_not":
            return N.neg(self.truth(t.children[0]), p)
        if d in ("log_and", "log_or"):
            a, b = self.truth(t.children[0]), self.truth(t.children[1])
            return N.and_([a, b], p) if d == "log_and" else N.or_([a, b], p)
        if d.startswith("red_"):
            bits = self.ev(t.children[0], self.width(t.children[0]))
            base = {"and": N.and_, "nand": N.and_, "or": N.or_, "nor": N.or_, "xor": N.xor, "xnor": N.xor}[d[4:]]
            x = base(bits, p)
            return N.neg(x, p) if d[4:] in ("nand", "nor", "xnor") else x
        if d in ("eq", "ne", "lt", "le", "gt", "ge"):
            a_t, b_t = t.children
            wc = max(self.width(a_t), self.width(b_t))
            a, b = self.ev(a_t, wc), self.ev(b_t, wc)
            if d in ("eq", "ne"):
                same = N.and_([N.neg(N.xor([x, y], p), p) for x, y in zip(a, b)], p)
                return same if d == "eq" else N.neg(same, p)
            if d in ("gt", "le"):
                a, b = b, a
            carry = self.add(a, b, subtract=True, p=p)[1]  # a - b: carry out 1 when a >= b
            return N.neg(carry, p) if d in ("lt", "gt") else carry
        raise InputError(p, f"'{d}' is outside the Verilog subset countersign reads")  # pragma: no cover

    def add(self, a: Bits, b: Bits, subtract: bool, p: Pos) -> tuple[Bits, P.Expr]:
        """Ripple-carry ``a + b`` (or ``a + ~b + 1``): the sum bits and the carry out."""
        carry: P.Expr = N.const(1 if subtract else 0, p)
        out: Bits = []
        for x, y in zip(a, b):
            x = self.share(x)
            y = self.share(N.neg(y, p) if subtract else y)
            h = self.share(N.xor([x, y], p)) if not (isinstance(x, P.Num) or isinstance(y, P.Num)) else N.xor([x, y], p)
            out.append(N.xor([h, carry], p) if not _is_zero(carry) else h)
            carry = self.share(N.or_([N.and_([x, y], p), N.and_([carry, h], p)], p))
        return out, carry

    # --- left-hand sides ----------------------------------------------------------
    def lvalue(self, t: Tree) -> list[tuple[Sig, int]]:
        """(signal, bit k) of an assignment target, least significant first."""
        d = t.data
        p = self.r.pos(t)
        if d == "lv_cat":
            out = []
            for c in reversed(t.children):
                out += self.lvalue(c)
            return out
        s = self.m.sigs.get(self.r.name(t.children[0]))
        if s is None:
            raise InputError(p, f"'{self.r.name(t.children[0])}' is not declared (implicit nets are not read)")
        if s.kind == "input":
            raise InputError(p, f"'{s.name}' is an input; it cannot be assigned")
        if d == "lv_name":
            return [(s, k) for k in range(s.width)]
        if d == "lv_bit":
            return [(s, s.position(self.r.const(t.children[1]), p))]
        a, b = s.position(self.r.const(t.children[1]), p), s.position(self.r.const(t.children[2]), p)
        if a < b:
            raise InputError(p, f"part select runs against the direction of {s.name}[{s.msb}:{s.lsb}]")
        return [(s, k) for k in range(b, a + 1)]

    def rhs_for(self, targets: list, e: Tree) -> Bits:
        w = max(len(targets), self.width(e))
        return self.ev(e, w)[:len(targets)]

    def drive(self, s: Sig, k: int, x: P.Expr, pos: Pos) -> None:
        if s.is_reg:
            raise InputError(pos, f"'{s.name}' is a reg; regs are assigned in always blocks only")
        key = (s.name, s.index_of(k))
        if key in self.drivers:
            first = self.drivers[key][1]
            bit = s.name if key[1] is None else f"{s.name}[{key[1]}]"
            raise InputError(pos, f"{bit} is driven twice (first at line {first.line}, col {first.col})")
        self.drivers[key] = (x, pos)

    # --- items ------------------------------------------------------------------
    def build(self) -> P.DesignBlock:
        m = self.m
        for it in m.tree.children[2:]:
            getattr(self, "i_" + it.data)(it)
        for (name, i, pos) in self.reads:
            s = m.sigs[name]
            if s.kind == "input":
                continue
            if s.is_reg:
                if (name, i) not in self.flop_bits:
                    bit = name if i is None else f"{name}[{i}]"
                    raise InputError(pos, f"reg bit {bit} is read here but assigned in no always block")
            elif (name, i) not in self.drivers:
                bit = name if i is None else f"{name}[{i}]"
                raise InputError(pos, f"{bit} is read here but never driven")
        out: list = []
        ins = [m.sigs[n] for n in m.ports if m.sigs[n].kind == "input" and n not in m.clocks]
        if ins:
            out.append(P.InDecl([N.decl(s.name, s.msb, s.lsb, s.pos) for s in ins], m.pos))
        for s in m.sigs.values():
            if s.kind == "input" or s.is_reg:
                continue
            keys = [(s.name, s.index_of(k)) for k in range(s.width)]
            have = [k for k in keys if k in self.drivers]
            if not have:
                if s.kind == "output":
                    raise InputError(s.pos, f"output '{s.name}' is never driven")
                continue
            missing = [k for k in keys if k not in self.drivers]
            if missing:
                name, i = missing[0]
                raise InputError(s.pos, f"{name}[{i}] is never driven (wire {s.name} is driven in part)")
            bits = [self.drivers[k][0] for k in reversed(keys)]  # msb first
            e = bits[0] if s.msb is None else P.Cat(bits, s.pos)
            cls = P.OutDecl if s.kind == "output" else P.NodeDecl
            out.append(cls(N.decl(s.name, s.msb, s.lsb, s.pos), e, s.pos))
        for s in m.sigs.values():
            if s.is_reg:
                for k in range(s.width):
                    if (s.name, s.index_of(k)) not in self.flop_bits:
                        raise InputError(s.pos, f"reg {s.name} is never assigned in an always block")
                if s.kind == "output":
                    out.append(P.OutDecl(N.decl(s.name, s.msb, s.lsb, s.pos), P.Ref([s.name], None, s.pos), s.pos))
        return P.DesignBlock(m.name, out + self.stmts, m.pos, source="verilog", inits=self.inits)

    def i_port_decl(self, t: Tree) -> None:
        pass

    def i_net_decl(self, t: Tree) -> None:
        k, r, *ones = t.children
        for one in ones:
            n, e = one.children
            if e is None:
                continue
            s = self.m.sigs[self.r.name(n)]
            if s.is_reg:
                v = self.r.const(e) if e.data in ("number", "based") else None
                if v is None or v >> s.width:
                    raise InputError(self.r.pos(e), "a reg's initial value is a number of its width")
                for kk in range(s.width):
                    i = s.index_of(kk)
                    self.inits[s.name if i is None else f"{s.name}[{i}]"] = (v >> kk) & 1
                continue
            targets = [(s, kk) for kk in range(s.width)]
            for (sg, kk), x in zip(targets, self.rhs_for(targets, e)):
                self.drive(sg, kk, x, self.r.pos(one))

    def i_assign(self, t: Tree) -> None:
        for a in t.children:
            lv, e = a.children
            targets = self.lvalue(lv)
            for (s, k), x in zip(targets, self.rhs_for(targets, e)):
                self.drive(s, k, x, self.r.pos(a))

    def i_gate_inst(self, t: Tree) -> None:
        g = str(t.children[0].children[0])
        for one in t.children[1:]:
            _, *terms = one.children
            p = self.r.pos(one)
            if g in ("buf", "not"):
                if len(terms) < 2:
                    raise InputError(p, f"a {g} gate has one or more outputs and then one input")
                outs, ins = terms[:-1], terms[-1:]
            else:
                if len(terms) < 3:
                    raise InputError(p, f"an {g} gate has one output and two or more inputs")
                outs, ins = terms[:1], terms[1:]
            vals = []
            for e in ins:
                if self.width(e) != 1:
                    raise InputError(self.r.pos(e), f"a gate primitive's terminal is one bit; this one is {self.width(e)}")
                vals.append(self.ev(e, 1)[0])
            if g in ("buf", "not"):
                x = vals[0] if g == "buf" else N.neg(vals[0], p)
            else:
                base = {"and": N.and_, "nand": N.and_, "or": N.or_, "nor": N.or_, "xor": N.xor, "xnor": N.xor}[g]
                x = base(vals, p)
                if g in ("nand", "nor", "xnor"):
                    x = N.neg(x, p)
            for o in outs:
                tg = self.lvalue(self.as_lvalue(o))
                if len(tg) != 1:
                    raise InputError(self.r.pos(o), "a gate primitive's output is one bit")
                self.drive(tg[0][0], tg[0][1], x, p)

    def as_lvalue(self, e: Tree) -> Tree:
        """An expression used as a target (a gate's or an instance's output) as an lvalue."""
        d = {"ident": "lv_name", "bit_sel": "lv_bit", "part_sel": "lv_part", "concat": "lv_cat"}.get(e.data)
        if d is None:
            raise InputError(self.r.pos(e), "an output connects to a net, a bit or part of one, or a concatenation of those")
        ch = [self.as_lvalue(c) for c in e.children] if d == "lv_cat" else e.children
        return Tree(d, ch, e.meta)

    def i_mod_inst(self, t: Tree) -> None:
        mod = self.r.name(t.children[0])
        sub = self.r.mods.get(mod)
        if sub is None:
            raise InputError(self.r.pos(t.children[0]), f"module '{mod}' is not defined in this file "
                                                        f"(an instance's module must be in the same Verilog file)")
        for one in t.children[1:]:
            inst = self.r.name(one.children[0])
            p = self.r.pos(one)
            if inst in self.m.sigs:
                raise InputError(p, f"instance name '{inst}' is also a signal of {self.m.name}")
            conns = [c for c in one.children[1:] if c is not None]
            given: dict[str, tuple[Optional[Tree], Pos]] = {}
            named = [c.data == "named_conn" for c in conns]
            if any(named) and not all(named):
                raise InputError(p, "an instance connects all ports by name or all in order")
            for k, c in enumerate(conns):
                if c.data == "named_conn":
                    port = self.r.name(c.children[0])
                    if port not in sub.sigs or port not in sub.ports:
                        raise InputError(self.r.pos(c), f"module {mod} has no port '{port}'")
                else:
                    if k >= len(sub.ports):
                        raise InputError(self.r.pos(c), f"module {mod} has {count(len(sub.ports), 'port')}; this is connection {k + 1}")
                    port = sub.ports[k]
                if port in given:
                    raise InputError(self.r.pos(c), f"port {port} is connected twice")
                given[port] = (c.children[-1], self.r.pos(c))
            pconns = []
            for port in sub.ports:
                ps = sub.sigs[port]
                e, cp = given.get(port, (None, p))
                if port in sub.clocks:
                    if e is None or e.data != "ident" or self.r.name(e.children[0]) not in self.m.clocks:
                        raise InputError(cp, f"port {port} clocks the flops of {mod}; connect it to the system clock "
                                             f"of {self.m.name} (a part clocked by another signal is not read)")
                    continue
                if ps.kind == "input":
                    if e is None:
                        raise InputError(cp, f"input {port} of instance {inst} ({mod}) is not connected")
                    w = ps.width
                    bits = self.ev(e, max(w, self.width(e)))[:w]
                    val = bits[0] if ps.msb is None else P.Cat(list(reversed(bits)), cp)
                    pconns.append(P.Conn(port, None, val, cp))
                elif e is not None:
                    targets = self.lvalue(self.as_lvalue(e))
                    for k, (s, kk) in enumerate(targets):
                        if k < ps.width:
                            i = ps.index_of(k)
                            x = P.Ref([inst, port], None if i is None else P.Index(i, None, cp), cp)
                        else:
                            x = N.const(0, cp)
                        self.drive(s, kk, x, cp)
            self.stmts.append(P.PartDecl(inst, mod, self.r.pos(t.children[0]), pconns, p))

    def i_always(self, t: Tree) -> None:
        (edge, ce), resets, body = self.r.split_events(self.m, t)
        clock = None
        if ce.data == "ident" and self.r.name(ce.children[0]) in self.m.clocks:
            pass
        else:
            if ce.data not in ("ident", "bit_sel"):
                raise InputError(self.r.pos(ce), "a clock is a signal or one bit of a vector")
            s = self.m.sigs.get(self.r.name(ce.children[0]))
            if s is None:
                raise InputError(self.r.pos(ce), f"'{self.r.name(ce.children[0])}' is not declared")
            bit = self.ev(ce, 1)[0]
            clock = P.Clock("rise" if edge == "posedge" else "fall", bit, self.r.pos(ce))
        env = self.exec(body, {})
        assigned = dict(env)
        clear: dict = {}
        preset: dict = {}
        none_before: P.Expr = N.const(1, self.r.pos(t))
        for _, cond, branch in resets:
            c = self.share(self.truth(cond))
            p = self.r.pos(cond)
            benv = self.exec(branch, {})
            for key, (x, s, k) in benv.items():
                if not isinstance(x, P.Num):
                    raise InputError(p, "an asynchronous clear or preset branch assigns numbers only")
                (clear if x.value == 0 else preset).setdefault(key, []).append(N.and_([none_before, c], p))
                if key not in assigned:
                    assigned[key] = (self.bit_ref(s, k, p), s, k)
            none_before = N.and_([none_before, N.neg(c, p)], p)
        order = {n: i for i, n in enumerate(self.m.sigs)}
        # flop bits in declaration order, most significant first (the order of a code)
        for key, (x, s, k) in sorted(assigned.items(), key=lambda kv: (order[kv[1][1].name], -kv[1][2])):
            if key in self.flop_bits:
                first = self.flop_bits[key]
                bit = key[0] if key[1] is None else f"{key[0]}[{key[1]}]"
                raise InputError(self.r.pos(t), f"reg bit {bit} is assigned in two always blocks "
                                                f"(first at line {first.line})")
            self.flop_bits[key] = self.r.pos(t)
            p = self.r.pos(t)
            i = key[1]
            cl = clear.get(key)
            pr = preset.get(key)
            f = P.FlopDecl(N.decl(s.name, i, i, p, bit=i is not None), "D", p, [P.Pin("d", x, p)], clock,
                           None if cl is None else N.or_(cl, p), None if pr is None else N.or_(pr, p), p,
                           clear_async=cl is not None, preset_async=pr is not None)
            self.stmts.append(f)

    def exec(self, t, env: dict) -> dict:
        """Symbolic run of a clocked block: reg bit -> (next value, sig, k)."""
        if t is None:
            return env
        d = t.data
        if d == "block":
            for c in t.children:
                env = self.exec(c, env)
            return env
        if d == "empty":
            return env
        if d == "blocking":
            raise InputError(self.r.pos(t), "blocking assignments ('=') in a clocked always block are outside the "
                                            "subset; flops take nonblocking assignments ('<=')")
        if d == "nonblocking":
            lv, e = t.children
            targets = self.lvalue(lv)
            out = dict(env)
            for (s, k), x in zip(targets, self.rhs_for(targets, e)):
                if not s.is_reg:
                    raise InputError(self.r.pos(lv), f"'{s.name}' is a wire; an always block assigns regs")
                out[(s.name, s.index_of(k))] = (x, s, k)
            return out
        if d == "if_stmt":
            cond, then, other = t.children
            p = self.r.pos(cond)
            c = self.share(self.truth(cond))
            a = self.exec(then, dict(env))
            b = self.exec(other, dict(env))
            out = {}
            for key in list(a) + [k for k in b if k not in a]:
                xa = a.get(key) or env.get(key)
                xb = b.get(key) or env.get(key)
                s, k = (xa or xb)[1], (xa or xb)[2]
                va = xa[0] if xa else self.bit_ref(s, k, p)
                vb = xb[0] if xb else self.bit_ref(s, k, p)
                out[key] = (self.share(self.mux(c, vb, va, p)), s, k)
            return out
        raise InputError(self.r.pos(t), f"'{d}' is outside the Verilog subset")  # pragma: no cover


def _constant(t: Tree) -> bool:
    """No signal anywhere in ``t``."""
    if t.data in ("ident", "bit_sel", "part_sel"):
        return False
    return all(_constant(c) for c in t.children if isinstance(c, Tree))


def _signed(t: Tree) -> bool:
    """IEEE 1364 section 5.5.1: signed when every operand is; only unsized decimal numbers are."""
    d = t.data
    if d == "number":
        return True
    if d in ("bit_not", "negate", "unary_plus"):
        return _signed(t.children[0])
    if d in ("plus", "minus", "bit_and", "bit_or", "bit_xor", "bit_xnor"):
        return _signed(t.children[0]) and _signed(t.children[1])
    if d == "cond":
        return _signed(t.children[1]) and _signed(t.children[2])
    return False


def _is_zero(x: P.Expr) -> bool:
    return isinstance(x, P.Num) and x.value == 0


def verilog_file(path: str, data: bytes) -> P.File:
    """A Verilog file as a :class:`P.File`: one design per module."""
    text = P.decode_source(path, data)
    return VerilogReader(path).read(text)
