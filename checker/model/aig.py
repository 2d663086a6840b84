"""The and-inverter graph (AIG) every model is built of, and its bit-parallel evaluator.

A literal is an int: ``2 * node + negated``. Node 0 is the constant, so
literal 0 is false and literal 1 is true. Leaves (primary inputs and state
bits) and and-nodes are numbered in creation order, so every and-node's
children have smaller numbers: node order is a topological order.

"""

from __future__ import annotations

from typing import Iterable, Sequence

FALSE = 0
TRUE = 1



class Aig:
    """An append-only and-inverter graph with structural hashing.

    ``and_`` folds constants, ``a & a = a`` and ``a & !a = 0``, and returns the
    existing node for an (unordered) pair of children already built.
    """

    def __init__(self) -> None:
        # For node n: left[n], right[n] are child literals; a leaf has left = -1.
        self.left: list[int] = [-1]
        self.right: list[int] = [-1]
        self.leaf_names: dict[int, str] = {}
        self._hash: dict[tuple[int, int], int] = {}

    # --- construction -------------------------------------------------
    def leaf(self, name: str) -> int:
        """A new leaf (input or state bit); returns its positive literal."""
        n = len(self.left)
        self.left.append(-1)
        self.right.append(-1)
        self.leaf_names[n] = name
        return 2 * n

    def and_(self, a: int, b: int) -> int:
        if a > b:
            a, b = b, a
        if a == FALSE:
            return FALSE
        if a == TRUE:
            return b
        if a == b:
            return a
        if a ^ 1 == b:
            return FALSE
        key = (a, b)
        n = self._hash.get(key)
        if n is None:
            n = len(self.left)
            self.left.append(a)
            self.right.append(b)
            self._hash[key] = n
        return 2 * n

    def or_(self, a: int, b: int) -> int:
        return self.and_(a ^ 1, b ^ 1) ^ 1

    def xor(self, a: int, b: int) -> int:
        if a > b:
            a, b = b, a
        if a == FALSE:
            return b
        if a == TRUE:
            return b ^ 1
        if a == b:
            return FALSE
        if a ^ 1 == b:
            return TRUE
        return self.or_(self.and_(a, b ^ 1), self.and_(a ^ 1, b))

    def xnor(self, a: int, b: int) -> int:
        return self.xor(a, b) ^ 1

    def mux(self, s: int, a: int, b: int) -> int:
        """``a`` when ``s`` is 0, ``b`` when ``s`` is 1."""
        if s == FALSE or a == b:
            return a
        if s == TRUE:
            return b
        return self.or_(self.and_(s ^ 1, a), self.and_(s, b))

    def and_all(self, lits: Iterable[int]) -> int:
        """Balanced conjunction (keeps depth logarithmic)."""
        items = list(lits)
        if not items:
            return TRUE
        while len(items) > 1:
            nxt = [self.and_(items[i], items[i + 1]) for i in range(0, len(items) - 1, 2)]
            if len(items) % 2:
                nxt.append(items[-1])
            items = nxt
        return items[0]

    def or_all(self, lits: Iterable[int]) -> int:
        return self.and_all(l ^ 1 for l in lits) ^ 1

    def xor_all(self, lits: Iterable[int]) -> int:
        items = list(lits)
        if not items:
            return FALSE
        while len(items) > 1:
            nxt = [self.xor(items[i], items[i + 1]) for i in range(0, len(items) - 1, 2)]
            if len(items) % 2:
                nxt.append(items[-1])
            items = nxt
        return items[0]

    def equal_const(self, bits: Sequence[int], value: int) -> int:
        """1 when ``bits`` (least significant first) spell ``value``."""
        return self.and_all(b if (value >> i) & 1 else b ^ 1 for i, b in enumerate(bits))

    # --- inspection ---------------------------------------------------
    def __len__(self) -> int:
        return len(self.left)

    def is_leaf(self, node: int) -> bool:
        return node != 0 and self.left[node] < 0

    def cone(self, roots: Iterable[int]) -> list[int]:
        """Nodes (and leaves) in the transitive fan-in of ``roots``, ascending."""
        seen: set[int] = set()
        stack = [r >> 1 for r in roots]
        while stack:
            n = stack.pop()
            if n in seen or n == 0:
                continue
            seen.add(n)
            if self.left[n] >= 0:
                stack.append(self.left[n] >> 1)
                stack.append(self.right[n] >> 1)
        return sorted(seen)

    def copy_into(self, target: "Aig", roots: Sequence[int], leaf_map: dict[int, int]) -> list[int]:
        """Rebuild the cones of ``roots`` in ``target``.

        ``leaf_map`` maps each leaf node number of this graph in those cones to
        a literal of ``target``. Returns the literals of ``roots`` in ``target``.
        """
        m: dict[int, int] = {0: FALSE}
        for n in self.cone(roots):
            if self.left[n] < 0:
                m[n] = leaf_map[n]
            else:
                a, b = self.left[n], self.right[n]
                m[n] = target.and_(m[a >> 1] ^ (a & 1), m[b >> 1] ^ (b & 1))
        return [m[r >> 1] ^ (r & 1) for r in roots]


def evaluate(aig: Aig, leaf_values: dict[int, object], roots: Sequence[int], ones: object) -> list:
    """Evaluate ``roots`` given a value per leaf node, bit-parallel.

    Values are any type with ``&`` and ``^``: Python ints used as bit sets or
    NumPy unsigned / bool arrays. ``ones`` is the all-ones value of that type
    (``1`` for a single sample). A leaf missing from ``leaf_values`` is an
    error. Only the cones of ``roots`` are computed, and a value is dropped as
    soon as no later node needs it, so memory stays near the graph's width.
    """
    zero = ones ^ ones
    nodes = aig.cone(roots)
    left, right = aig.left, aig.right
    last_use: dict[int, int] = {}
    for n in nodes:
        if left[n] >= 0:
            last_use[left[n] >> 1] = n
            last_use[right[n] >> 1] = n
    keep = {r >> 1 for r in roots}
    val: dict[int, object] = {0: zero}
    for n in nodes:
        if left[n] < 0:
            val[n] = leaf_values[n]
            continue
        a, b = left[n], right[n]
        va = val[a >> 1]
        if a & 1:
            va = va ^ ones
        vb = val[b >> 1]
        if b & 1:
            vb = vb ^ ones
        val[n] = va & vb
        for c in (a >> 1, b >> 1):
            if last_use.get(c) == n and c not in keep and c != 0:
                val.pop(c, None)
    out = []
    for r in roots:
        v = val[r >> 1]
        out.append(v ^ ones if r & 1 else v)
    return out
