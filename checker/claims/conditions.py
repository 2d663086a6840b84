"""A condition over the inputs in the designer's words: ``en=1, clr=0``, or a few such cubes.

A recover claim without ``when`` assumes the inputs under which the rules make
the counter step; the report names them. The condition is a literal of the
design's graph that reads inputs only; over up to :data:`MAX_SUPPORT` input
bits it is evaluated on every assignment and written as a cover of prime
cubes (Quine 1952, McCluskey 1956: prime implicants by merging cubes that
differ in one bit; then a greedy cover), each cube as ``NAME=0|1`` pairs.
"""

from __future__ import annotations

from typing import Optional

from ..elab import Check, Claim
from ..model import FALSE, TRUE
from ..model.aig import evaluate
from .common import stepping

MAX_SUPPORT = 10
"""Input bits a condition may read and still be written out as cubes."""

MAX_CUBES = 6
"""Cubes written out; a longer cover is described instead."""


def support(check: Check, lit: int) -> list[str]:
    """The input bits ``lit`` reads, in declaration order."""
    m = check.design.model
    cone = set(m.aig.cone([lit]))
    return [name for name, il in zip(m.inputs, m.input_lits) if il >> 1 in cone]


def _minterms(check: Check, lit: int, names: list[str]) -> set[int]:
    """Assignments of ``names`` (bit k of an assignment = names[k]) under which ``lit`` is 1."""
    m = check.design.model
    n = len(names)
    full = (1 << (1 << n)) - 1
    lits = dict(zip(m.inputs, m.input_lits))
    leaves: dict[int, object] = {}
    for k, name in enumerate(names):
        # bit a of this value is bit k of assignment a
        pattern = 0
        for a in range(1 << n):
            if a >> k & 1:
                pattern |= 1 << a
        leaves[lits[name] >> 1] = pattern
    for node in m.aig.cone([lit]):
        if m.aig.is_leaf(node) and node not in leaves:
            leaves[node] = 0  # not an input (cannot happen for a condition); read as 0
    (value,) = evaluate(m.aig, leaves, [lit], full)
    return {a for a in range(1 << n) if value >> a & 1}


def prime_cover(ones: set[int], n: int) -> list[tuple[int, int]]:
    """A cover of ``ones`` (assignments of n bits) by prime cubes ``(value, care mask)``:
    every prime implicant by merging (Quine-McCluskey), then the essential ones and greedily
    the largest of the rest."""
    full = (1 << n) - 1
    layer = {(a, full) for a in ones}
    primes: set[tuple[int, int]] = set()
    while layer:
        merged: set[tuple[int, int]] = set()
        used: set[tuple[int, int]] = set()
        items = sorted(layer)
        index = set(items)
        for v, mask in items:
            for k in range(n):
                bit = 1 << k
                if mask & bit and not v & bit and (v | bit, mask) in index:
                    merged.add((v, mask & ~bit))
                    used.add((v, mask))
                    used.add((v | bit, mask))
        primes |= layer - used
        layer = merged
    left = set(ones)
    cover: list[tuple[int, int]] = []

    def covers(c: tuple[int, int]) -> set[int]:
        return {a for a in left if a & c[1] == c[0]}
    while left:
        best = max(sorted(primes), key=lambda c: (len(covers(c)), -bin(c[1]).count("1")))
        cover.append(best)
        left -= covers(best)
    return cover


def cube_text(names: list[str], value: int, mask: int) -> str:
    """One cube as ``en=1, clr=0`` (bits it does not care about are left out)."""
    return ", ".join(f"{name}={value >> k & 1}" for k, name in reversed(list(enumerate(names)))
                     if mask >> k & 1)


def condition_words(check: Check, lit: int) -> Optional[str]:
    """``lit`` (over inputs) as cubes: ``en=1, clr=0`` or ``(a=1, b=0) or c=1``; ``any input`` when
    it always holds; None when it reads too many inputs or needs too many cubes to be written."""
    if lit == TRUE:
        return "any input"
    if lit == FALSE:
        return "no input"
    names = support(check, lit)
    if len(names) > MAX_SUPPORT:
        return None
    names = list(reversed(names))  # bit 0 is the last declared input
    cover = prime_cover(_minterms(check, lit, names), len(names))
    if not cover or len(cover) > MAX_CUBES:
        return None
    texts = [cube_text(names, v, m) for v, m in cover]
    if texts == [""]:
        return "any input"
    if len(texts) == 1:
        return texts[0]
    return " or ".join(f"({t})" if "," in t else t for t in texts)


def recover_condition(check: Check, claim: Claim) -> str:
    """The inputs a recover claim assumes, in the designer's words: ``when tick & !reset`` as
    written, or ``under the stepping inputs: en=1, clr=0`` when the claim has no ``when``."""
    if claim.cond is not None:
        _, sep, cond = claim.text.partition(" when ")
        return f"when {cond}" if sep else "under the inputs its 'when' allows"
    if not check.design.model.inputs:
        return "no inputs to assume (the design has none)"
    words = condition_words(check, stepping(check))
    if words == "any input":
        return "under any input (the rules make the counter step under every input)"
    if words is None:
        return "under the stepping inputs (those under which the rules make the counter step)"
    return f"under the stepping inputs: {words}"
