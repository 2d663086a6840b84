"""Check blocks to specifications: code bits, sequence, rules and claims.

Expressions of a check (conditions, properties, load values) are built into
the literals of the checked design's own and-inverter graph, so every engine
sees them as part of the one circuit model.
"""

from __future__ import annotations

from typing import Optional

from ..errors import InputError, Pos
from ..words import count
from ..lang import parse as P
from ..lang.unparse import unparse_stmt
from .bits import BExpr, bitwise, bnot, build, gate, kind_text, num_bits, select_bits
from .design import Check, Claim, Design, Rule
from .sequence import SequenceError, make_sequence

FAMILIES = ("bcd", "gray", "johnson", "ring", "lfsr")


class _Scope:
    """Resolves names of a check's expressions inside one flattened design."""

    def __init__(self, design: Design, mode: str, code: Optional[list[int]] = None) -> None:
        self.design = design
        self.mode = mode  # 'cond' (inputs only), 'prop' (anything), 'code' (flops only)
        self.code = code

    def vec(self, e: P.Expr, want: Optional[int] = None) -> list[BExpr]:
        if isinstance(e, P.Num):
            return num_bits(e, want)
        if isinstance(e, P.Ref):
            return [("r", b) for b in self.resolve(e)]
        if isinstance(e, P.Not):
            return [bnot(x) for x in self.vec(e.arg, want)]
        if isinstance(e, P.Op):
            return bitwise(e.op, [self.vec(a, want) for a in e.args], e)
        if isinstance(e, P.Cat):
            out: list[BExpr] = []
            for it in e.items:
                out.extend(self.vec(it))
            return out
        if isinstance(e, P.Call):
            if e.name == "at":
                return [self.at(e)]
            return gate(e, [self.vec(a, want) for a in e.args])
        if isinstance(e, P.Cmp):
            if self.mode != "prop":
                raise InputError(e.pos, f"'{e.op}' is allowed only in an always claim")
            a, b = self.cmp_sides(e)
            eq: BExpr = ("&", [bnot(("^", [x, y])) for x, y in zip(a, b)])
            return [eq if e.op == "==" else bnot(eq)]
        raise AssertionError(e)

    def cmp_sides(self, e: P.Cmp) -> tuple[list[BExpr], list[BExpr]]:
        # A decimal or hex literal takes the width of the other side.
        if isinstance(e.right, P.Num) and e.right.binary_width is None:
            a = self.vec(e.left)
            return a, self.vec(e.right, len(a))
        if isinstance(e.left, P.Num) and e.left.binary_width is None:
            b = self.vec(e.right)
            return self.vec(e.left, len(b)), b
        a, b = self.vec(e.left), self.vec(e.right)
        if len(a) != len(b):
            raise InputError(e.pos, f"width mismatch: '{e.op}' compares {count(len(a), 'bit')} with {count(len(b), 'bit')}")
        return a, b

    def at(self, e: P.Call) -> BExpr:
        if self.mode != "prop":
            raise InputError(e.pos, "at(N) is allowed only in an always claim")
        if len(e.args) != 1 or not isinstance(e.args[0], P.Num):
            raise InputError(e.pos, "at(N) takes one number, a code")
        n = e.args[0].value
        assert self.code is not None
        w = len(self.code)
        if n >> w:
            raise InputError(e.args[0].pos, f"code {n} does not fit the {w}-bit code")
        names = self.design.model.states
        terms: list[BExpr] = []
        for k, i in enumerate(self.code):
            bit: BExpr = ("r", names[i])
            terms.append(bit if (n >> (w - 1 - k)) & 1 else bnot(bit))
        return ("&", terms)

    def resolve(self, r: P.Ref) -> list[str]:
        name = r.dotted
        sym = self.design.vectors.get(name)
        if sym is None:
            raise InputError(r.pos, f"design {self.design.name} has no signal '{name}'")
        if self.mode == "cond" and (sym.kind != "in" or "." in name):
            raise InputError(r.pos, f"a condition reads inputs only; '{name}' is {kind_text(sym.kind)}")
        if self.mode == "code" and sym.kind != "flop":
            raise InputError(r.pos, f"code takes flop bits only; '{name}' is {kind_text(sym.kind)}")
        return select_bits(sym, r.index, name)

    def lits(self, e: P.Expr, want: Optional[int] = None) -> list[int]:
        bits = self.vec(e, want)
        m = self.design.model
        return [build(m.aig, x, m.signals) for x in bits]

    def bit(self, e: P.Expr, what: str) -> int:
        v = self.lits(e)
        if len(v) != 1:
            raise InputError(e.pos, f"{what} must be a single bit; this expression is {len(v)} bits wide")
        return v[0]


def _code(stmt: P.CodeStmt, design: Design) -> list[int]:
    e = stmt.expr
    scope = _Scope(design, "code")
    bits = [x[1] for x in scope.vec(e) if x[0] == "r"]
    if len(bits) != len(scope.vec(e)) or any(not isinstance(b, str) for b in bits):
        raise InputError(e.pos, "code takes flop bits only (no constants or operators)")
    states = design.model.states
    index = {n: i for i, n in enumerate(states)}
    seen: set[str] = set()
    for b in bits:
        if b in seen:
            raise InputError(e.pos, f"flop {b} appears twice in code")
        seen.add(b)
    missing = [s for s in states if s not in seen]
    if missing:
        more = f" and {len(missing) - 8} more" if len(missing) > 8 else ""
        raise InputError(e.pos, f"code must name every flop of {design.name} once; missing: {', '.join(missing[:8])}{more}")
    return [index[b] for b in bits]


def _sequence(stmt: P.CountStmt, width: int):
    items = stmt.items
    head = items[0][0]
    args: list = []
    poss: list[Pos] = []
    if isinstance(head, str) and head != "..":
        if head not in FAMILIES:
            raise InputError(items[0][1], f"unknown sequence family '{head}'; the families are {', '.join(FAMILIES)}")
        form = head
        rest = items[1:]
        if form != "lfsr" and rest:
            raise InputError(rest[0][1], f"'{form}' takes no arguments")
        if form == "lfsr":
            if not rest or not isinstance(rest[0][0], int):
                raise InputError(items[0][1], "lfsr needs its taps: count lfsr T1 T2 ... [from C]")
            for k, (v, pos) in enumerate(rest):
                if v == "from":
                    if k + 2 != len(rest) or not isinstance(rest[k + 1][0], int):
                        raise InputError(pos, "'from' takes one code and ends the line")
                elif not isinstance(v, int):
                    raise InputError(pos, f"unexpected '{v}' in lfsr taps")
                args.append(v)
                poss.append(pos)
    else:
        if any(v == ".." for v, _ in items):
            if len(items) != 3 or items[1][0] != ".." or not all(isinstance(items[i][0], int) for i in (0, 2)):
                where = items[1][1] if len(items) > 1 else items[0][1]
                raise InputError(where, "a range is written FIRST .. LAST")
            form, args, poss = "range", [items[0][0], items[2][0]], [items[0][1], items[2][1]]
        else:
            for v, pos in items:
                if not isinstance(v, int):
                    raise InputError(pos, f"unexpected '{v}' in a list of codes")
            form, args, poss = "list", [v for v, _ in items], [p for _, p in items]
    try:
        return make_sequence(form, args, width)
    except SequenceError as e:
        pos = poss[e.arg] if e.arg is not None and e.arg < len(poss) else stmt.pos
        raise InputError(pos, e.message) from None


def _same_names(c: P.EqualStmt, a: Design, b: Design, paired: bool) -> None:
    diffs = []
    for what, xa, xb in (("inputs", a.model.inputs, b.model.inputs),
                         ("outputs", a.model.outputs, b.model.outputs),
                         *((("flops", a.model.states, b.model.states),) if paired else ())):
        sa, sb = set(xa), set(xb)  # once: built per name, the comparison was quadratic
        only_a = [n for n in xa if n not in sb]
        only_b = [n for n in xb if n not in sa]
        if only_a or only_b:
            parts = []
            for d, only in ((a, only_a), (b, only_b)):
                if only:
                    more = f" and {len(only) - 8} more" if len(only) > 8 else ""
                    parts.append(f"only in {d.name}: {', '.join(only[:8])}{more}")
            diffs.append(f"{what} differ ({'; '.join(parts)})")
    if diffs:
        raise InputError(c.pos, f"equal {b.name}: " + "; ".join(diffs))


def _part_only(where: Pos, name: str, part_only: Optional[dict]) -> None:
    e = (part_only or {}).get(name)
    if e is not None:
        raise InputError(where, f"design {name} takes a clock from its own input, so it can be checked only as "
                                f"a part of a design that clocks it ({e.pos}: {e.message})")


def elaborate_check(c: P.CheckBlock, designs: dict[str, Design], part_only: Optional[dict] = None) -> Check:
    """Turn one check block into a :class:`Check` bound to its design's model."""
    _part_only(c.design_pos, c.design, part_only)
    design = designs.get(c.design)
    if design is None:
        raise InputError(c.design_pos, f"unknown design '{c.design}'")
    chk = Check(c.name, c.pos, design)
    code_stmts = [s for s in c.stmts if isinstance(s, P.CodeStmt)]
    count_stmts = [s for s in c.stmts if isinstance(s, P.CountStmt)]
    for kind, lst in (("code", code_stmts), ("count", count_stmts)):
        if len(lst) > 1:
            raise InputError(lst[1].pos, f"a check has one {kind} line; the first is at line {lst[0].pos.line}")
    if code_stmts:
        chk.code = _code(code_stmts[0], design)
        chk.code_pos = code_stmts[0].pos
    if count_stmts:
        if not code_stmts:
            raise InputError(count_stmts[0].pos, "count needs a code line in its check")
        chk.sequence = _sequence(count_stmts[0], chk.width)
        chk.sequence_pos = count_stmts[0].pos
    cond_scope = _Scope(design, "cond")
    claims: list[Claim] = []
    for s in c.stmts:
        if isinstance(s, (P.RuleStmt, P.RecoverStmt, P.AlwaysStmt, P.SettleStmt, P.GlitchStmt)) or (isinstance(s, P.EqualStmt) and s.mode == "sequence"):
            if chk.sequence is None:
                what = s.kind if isinstance(s, P.RuleStmt) else {
                    P.RecoverStmt: "recover", P.AlwaysStmt: "always", P.EqualStmt: "equal on sequence",
                    P.SettleStmt: "settle", P.GlitchStmt: "glitchfree"}[type(s)]
                raise InputError(s.pos, f"{what} needs a count line (the sequence) in its check")
        if isinstance(s, P.RuleStmt):
            r = Rule(s.kind, cond_scope.bit(s.cond, "a rule's condition"), s.pos)
            if s.kind == "load":
                assert s.value is not None
                if isinstance(s.value, P.Num):  # a literal is a number wherever a code is read
                    if s.value.value >> chk.width:
                        raise InputError(s.value.pos, f"load code {s.value.text} does not fit the {chk.width}-bit code")
                    r.load_const = s.value.value
                else:
                    bits = cond_scope.lits(s.value, chk.width)
                    if len(bits) != chk.width:
                        raise InputError(s.value.pos, f"width mismatch: the code is {count(chk.width, 'bit')} wide, the load value gives {len(bits)}")
                    r.load_bits = bits
            chk.rules.append(r)
        elif isinstance(s, P.CountStmt):
            claims.append(Claim("count", s.pos))
        elif isinstance(s, P.RecoverStmt):
            cond = None if s.cond is None else cond_scope.bit(s.cond, "a recover condition")
            claims.append(Claim("recover", s.pos, within=s.within, cond=cond))
        elif isinstance(s, P.SettleStmt):
            claims.append(Claim("settle", s.pos, within=s.within))
        elif isinstance(s, P.GlitchStmt):
            cond = None if s.cond is None else cond_scope.bit(s.cond, "a glitchfree condition")
            claims.append(Claim("glitchfree", s.pos, cond=cond, signals=_watched(design, s.signals)))
        elif isinstance(s, P.AlwaysStmt):
            prop = _Scope(design, "prop", chk.code).bit(s.prop, "an always property")
            claims.append(Claim("always", s.pos, prop=prop))
        elif isinstance(s, P.EqualStmt):
            _part_only(s.design_pos, s.design, part_only)
            other = designs.get(s.design)
            if other is None:
                raise InputError(s.design_pos, f"unknown design '{s.design}'")
            _same_names(s, design, other, paired=s.mode != "after")
            cl = Claim("equal", s.pos, other=other, mode=s.mode)
            if s.mode == "after":
                assert s.cond is not None
                cl.cond = cond_scope.bit(s.cond, "an equal condition")
                cl.other_cond = _Scope(other, "cond").bit(s.cond, "an equal condition")
            claims.append(cl)
        if claims and claims[-1].pos is s.pos and not claims[-1].text:
            claims[-1].text = unparse_stmt(s)
    chk.claims = claims
    return chk


def _watched(design: Design, exprs: list[P.Expr]) -> list[tuple[str, int]]:
    """The bits a glitchfree claim watches: outputs or nodes, bits or whole vectors."""
    out: list[tuple[str, int]] = []
    for e in exprs:
        if not isinstance(e, P.Ref):
            raise InputError(e.pos, "glitchfree watches named outputs or nodes (a bit or a vector), not expressions")
        name = e.dotted
        sym = design.vectors.get(name)
        if sym is None:
            raise InputError(e.pos, f"design {design.name} has no signal '{name}'")
        if sym.kind not in ("out", "node") or "." in name:
            raise InputError(e.pos, f"glitchfree watches outputs and nodes; '{name}' is {kind_text(sym.kind)}")
        for b in select_bits(sym, e.index, name):
            if b not in {n for n, _ in out}:
                out.append((b, design.model.signals[b]))
    return out


def condition_literal(design: Design, expr: P.Expr) -> int:
    """A condition over ``design``'s inputs (for example ``map --when``) as a literal."""
    return _Scope(design, "cond").bit(expr, "a condition")


def flop_indices(design: Design, expr: P.Expr) -> list[int]:
    """State indices (most significant first) of a VEC of flop bits, each at most once."""
    scope = _Scope(design, "code")
    bits = scope.vec(expr)
    if any(b[0] != "r" for b in bits):
        raise InputError(expr.pos, "a code takes flop bits only (no constants or operators)")
    index = {n: i for i, n in enumerate(design.model.states)}
    out: list[int] = []
    for _, b in bits:
        if index[b] in out:
            raise InputError(expr.pos, f"flop {b} appears twice in the code")
        out.append(index[b])
    return out
