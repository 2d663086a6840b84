"""Syntax tree back to .cnl text: the inverse of :mod:`checker.parse`.

``unparse_file`` writes a :class:`checker.parse.File` as source text that
parses to the same tree (positions aside); ``unparse_expr`` does the same for
one expression. Number literals keep the text they were written with; every
other choice of layout is fixed: one statement per line, two-space
indentation, a blank line between blocks, ``use`` lines first, then designs,
then checks. Comments are not part of the tree and so are not written.
"""

from __future__ import annotations

from typing import Callable, Optional

from . import parse as P

# Binding strength, loosest first, as in the grammar: ==/!= < | < ^ < & < prefix !.
_CMP, _OR, _XOR, _AND, _NOT, _ATOM = range(6)
_OP_LEVEL = {"|": _OR, "^": _XOR, "&": _AND}


def _level(e: P.Expr) -> int:
    if isinstance(e, P.Cmp):
        return _CMP
    if isinstance(e, P.Op):
        return _OP_LEVEL[e.op]
    if isinstance(e, P.Not):
        return _NOT
    return _ATOM


def _wrap(e: P.Expr, least: int) -> str:
    """``e`` as text, in parentheses when it binds looser than ``least``."""
    text = unparse_expr(e)
    return f"({text})" if _level(e) < least else text


def _index(ix: Optional[P.Index]) -> str:
    if ix is None:
        return ""
    return f"[{ix.first}]" if ix.last is None else f"[{ix.first}:{ix.last}]"


def unparse_expr(e: P.Expr) -> str:
    """The source text of expression ``e``, parenthesised only where the tree needs it.

    An operand of ``&``, ``|`` or ``^`` is parenthesised when it binds as loosely
    as its parent or looser: the parser folds a chain ``a & b & c`` into one
    :class:`~checker.parse.Op`, so a nested Op of the same operator was written
    in parentheses. Operands of ``==``/``!=`` are parenthesised only when they
    are comparisons themselves, the operand of ``!`` when it is not a primary.
    """
    if isinstance(e, P.Num):
        return e.text or str(e.value)
    if isinstance(e, P.Ref):
        return ".".join(e.path) + _index(e.index)
    if isinstance(e, P.Call):
        return f"{e.name}({', '.join(unparse_expr(a) for a in e.args)})"
    if isinstance(e, P.Cat):
        return "{" + ", ".join(unparse_expr(a) for a in e.items) + "}"
    if isinstance(e, P.Not):
        return "!" + _wrap(e.arg, _NOT)
    if isinstance(e, P.Op):
        lvl = _OP_LEVEL[e.op]
        return f" {e.op} ".join(_wrap(a, lvl + 1) for a in e.args)
    if isinstance(e, P.Cmp):
        return f"{_wrap(e.left, _OR)} {e.op} {_wrap(e.right, _OR)}"
    raise TypeError(f"not an expression node: {type(e).__name__}")


# --- statements ----------------------------------------------------------
def _decl(d: P.Decl) -> str:
    if d.msb is None:
        return d.name
    return f"{d.name}[{d.msb}]" if d.bit else f"{d.name}[{d.msb}:{d.lsb}]"


def _in(s: P.InDecl) -> str:
    return "in " + ", ".join(_decl(d) for d in s.decls)


def _out(s: P.OutDecl) -> str:
    return f"out {_decl(s.decl)} = {unparse_expr(s.expr)}"


def _node(s: P.NodeDecl) -> str:
    return f"node {_decl(s.decl)} = {unparse_expr(s.expr)}"


def _flop(s: P.FlopDecl) -> str:
    text = f"flop {_decl(s.decl)} : {s.kind}"
    if s.pins is not None:
        text += " (" + ", ".join(f"{p.name} = {unparse_expr(p.expr)}" for p in s.pins) + ")"
    if s.clock is not None:
        text += f" clock {s.clock.edge} {unparse_expr(s.clock.signal)}"
    if s.clear is not None:
        text += f" clear {'async ' if s.clear_async else ''}{unparse_expr(s.clear)}"
    if s.preset is not None:
        text += f" preset {'async ' if s.preset_async else ''}{unparse_expr(s.preset)}"
    return text


def _part(s: P.PartDecl) -> str:
    conns = ", ".join(f"{c.port}{_index(c.index)} = {unparse_expr(c.expr)}" for c in s.conns)
    return f"part {s.name} : {s.design} ({conns})"


def _code(s: P.CodeStmt) -> str:
    return f"code {unparse_expr(s.expr)}"


def _count(s: P.CountStmt) -> str:
    return "count " + " ".join(str(v) for v, _ in s.items)


def _rule(s: P.RuleStmt) -> str:
    if s.kind == "load":
        assert s.value is not None, "a load rule needs its CODE"
        return f"load {unparse_expr(s.value)} when {unparse_expr(s.cond)}"
    return f"{s.kind} when {unparse_expr(s.cond)}"


def _recover(s: P.RecoverStmt) -> str:
    text = "recover"
    if s.within is not None:
        text += f" within {s.within}"
    if s.cond is not None:
        text += f" when {unparse_expr(s.cond)}"
    return text


def _always(s: P.AlwaysStmt) -> str:
    return f"always {unparse_expr(s.prop)}"


def _settle(s: P.SettleStmt) -> str:
    return f"settle within {s.within}"


def _glitch(s: P.GlitchStmt) -> str:
    text = "glitchfree " + ", ".join(unparse_expr(x) for x in s.signals)
    return text if s.cond is None else f"{text} when {unparse_expr(s.cond)}"


def _equal(s: P.EqualStmt) -> str:
    if s.mode is None:
        return f"equal {s.design}"
    if s.mode == "sequence":
        return f"equal {s.design} on sequence"
    assert s.cond is not None, "equal ... after needs its COND"
    return f"equal {s.design} after {unparse_expr(s.cond)}"


_STMT: dict[type, Callable] = {
    P.InDecl: _in, P.OutDecl: _out, P.NodeDecl: _node, P.FlopDecl: _flop,
    P.PartDecl: _part,
    P.CodeStmt: _code, P.CountStmt: _count, P.RuleStmt: _rule, P.RecoverStmt: _recover,
    P.AlwaysStmt: _always, P.EqualStmt: _equal, P.SettleStmt: _settle, P.GlitchStmt: _glitch,
}


def unparse_stmt(s) -> str:
    """One design or check statement as one line of text, without indentation."""
    fn = _STMT.get(type(s))
    if fn is None:
        raise TypeError(f"not a statement node: {type(s).__name__}")
    return fn(s)


def _block(head: str, stmts: list) -> str:
    return "\n".join([head, *("  " + unparse_stmt(s) for s in stmts), "end"])


def unparse_file(f: P.File) -> str:
    """The source text of a whole file; parsing it gives ``f`` again, positions aside.

    ``use`` lines come first, then the design blocks, then the check blocks, each
    in the order of ``f`` (the tree keeps the three kinds apart, so their
    original interleaving is not recorded and does not matter to the language).
    """
    parts: list[str] = []
    if f.uses:
        parts.append("\n".join(f'use "{u.path}"' for u in f.uses))
    parts += [_block(f"design {d.name}", d.stmts) for d in f.designs]
    parts += [_block(f"check {c.name} of {c.design}", c.stmts) for c in f.checks]
    return "\n\n".join(parts) + "\n" if parts else ""
