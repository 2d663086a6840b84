"""Counting sequences: which codes a counter visits, and in what order.

:func:`make_sequence` turns the arguments of a ``count`` line into a
:class:`Sequence`. Every sequence answers questions about single codes
(``contains``, ``next``, ``prev``), lists its codes lazily, builds circuits
over symbolic code bits in an :class:`~checker.model.Aig` (membership,
successor, predecessor) and evaluates the same over NumPy arrays of codes.

Ranges and the named families are symbolic: nothing here lists their codes.
Only explicit lists (and the orbit of an lfsr that is not of maximal length,
which is walked once) are held code by code, at most :data:`LIST_LIMIT` codes.

Whether an lfsr is of maximal length is decided in :mod:`checker.gf2`.
"""

from __future__ import annotations

from bisect import bisect_left
from dataclasses import dataclass, field
from typing import TYPE_CHECKING, Iterable, Iterator

if TYPE_CHECKING:
    import numpy as np

from ..model import FALSE, TRUE, Aig
from ..words import plural
from .gf2 import Unfactored, primitive

LIST_LIMIT = 65536
"""Most codes an explicit sequence may hold."""

MAX_WIDTH = 4096
"""Widest code (the language's vector limit)."""

LFSR_WALK_LIMIT_BITS = 24
"""Above this width an lfsr must be of maximal length."""


class SequenceError(Exception):
    """A ``count`` line that does not define a valid sequence.

    ``arg`` is the index of the offending argument in the list handed to
    :func:`make_sequence`, or None when the statement as a whole is wrong.
    """

    def __init__(self, message: str, arg: int | None = None) -> None:
        super().__init__(message)
        self.message = message
        self.arg = arg


# ---------------------------------------------------------------------------
# Circuit helpers (bits are literals, least significant first)
# ---------------------------------------------------------------------------

def _const_bits(value: int, width: int) -> list[int]:
    return [TRUE if (value >> i) & 1 else FALSE for i in range(width)]


def _increment(aig: Aig, bits: list[int]) -> list[int]:
    out, carry = [], TRUE
    for b in bits:
        out.append(aig.xor(b, carry))
        carry = aig.and_(b, carry)
    return out


def _decrement(aig: Aig, bits: list[int]) -> list[int]:
    out, borrow = [], TRUE
    for b in bits:
        out.append(aig.xor(b, borrow))
        borrow = aig.and_(b ^ 1, borrow)
    return out


def _ge_const(aig: Aig, bits: list[int], k: int) -> int:
    """1 when the unsigned value of ``bits`` is at least ``k``."""
    if k >> len(bits):
        return FALSE
    g = TRUE
    for i, b in enumerate(bits):
        g = aig.and_(b, g) if (k >> i) & 1 else aig.or_(b, g)
    return g


def _le_const(aig: Aig, bits: list[int], k: int) -> int:
    """1 when the unsigned value of ``bits`` is at most ``k``."""
    if k >> len(bits):
        return TRUE
    g = TRUE
    for i, b in enumerate(bits):
        g = aig.or_(b ^ 1, g) if (k >> i) & 1 else aig.and_(b ^ 1, g)
    return g


def _mux_vec(aig: Aig, s: int, a: list[int], b: list[int]) -> list[int]:
    return [aig.mux(s, x, y) for x, y in zip(a, b)]


def _u64(codes: np.ndarray, width: int) -> np.ndarray:
    import numpy as np
    if width > 64:
        raise ValueError(f"array evaluation needs a code of at most 64 bits, not {width}")
    return np.asarray(codes, dtype=np.uint64)


def _count_text(n: int) -> str:
    """A count for people: exact when short, as a power when it is one."""
    if n < 10**12:
        return str(n)
    if n & (n - 1) == 0:
        return f"2^{n.bit_length() - 1}"
    if (n + 1) & n == 0:
        return f"2^{n.bit_length()} - 1"
    s = str(n)
    if s == "1" + "0" * (len(s) - 1):
        return f"10^{len(s) - 1}"
    return f"about {s[0]}.{s[1:4]}e{len(s) - 1}" if len(s) > 15 else s


def _code_text(c: int) -> str:
    return str(c) if c < 1 << 64 else hex(c)


# ---------------------------------------------------------------------------
# Sequences
# ---------------------------------------------------------------------------

@dataclass
class Sequence:
    """The codes of a counter, in order; after the last comes the first again.

    ``kind`` is the form of the ``count`` line ('list', 'range', 'bcd', 'gray',
    'johnson', 'ring', 'lfsr'); ``width`` the number of code bits.
    """

    kind: str
    width: int

    # --- single codes -------------------------------------------------
    def length(self) -> int:
        """The number of codes in the sequence."""
        raise NotImplementedError

    def first(self) -> int:
        """The code the sequence starts from."""
        raise NotImplementedError

    def contains(self, c: int) -> bool:
        """Whether ``c`` is a code of the sequence."""
        raise NotImplementedError

    def next(self, c: int) -> int:
        """The code after member ``c`` (the first after the last)."""
        raise NotImplementedError

    def prev(self, c: int) -> int:
        """The code whose successor is member ``c``."""
        raise NotImplementedError

    def codes(self) -> Iterator[int]:
        """Every code once, in sequence order from :meth:`first`, lazily."""
        c = self.first()
        for _ in range(self.length()):
            yield c
            c = self._step(c)

    def describe(self) -> str:
        """A short human description, e.g. 'gray, 16 codes'."""
        raise NotImplementedError

    # --- circuits -----------------------------------------------------
    def member(self, aig: Aig, bits: list[int]) -> int:
        """A literal that is 1 exactly when ``bits`` (lsb first) spell a member."""
        raise NotImplementedError

    def next_bits(self, aig: Aig, bits: list[int]) -> list[int]:
        """Literals (lsb first) of the successor of the code ``bits``.

        Correct for members; anything for other codes.
        """
        raise NotImplementedError

    def prev_bits(self, aig: Aig, bits: list[int]) -> list[int]:
        """Literals (lsb first) of the predecessor of the code ``bits``.

        Correct for members; anything for other codes.
        """
        raise NotImplementedError

    # --- arrays ---------------------------------------------------------
    def member_array(self, codes: np.ndarray) -> np.ndarray:
        """A bool array: which of ``codes`` (uint64) are members."""
        raise NotImplementedError

    def next_array(self, codes: np.ndarray) -> np.ndarray:
        """The successors of ``codes`` (uint64); anything at non-members."""
        raise NotImplementedError

    # --- shared -------------------------------------------------------
    @property
    def mask(self) -> int:
        return (1 << self.width) - 1

    def _fits(self, c: int) -> bool:
        return 0 <= c and not c >> self.width

    def _step(self, c: int) -> int:
        """``next`` without the membership check."""
        return self.next(c)

    def _need_member(self, c: int) -> None:
        if not self.contains(c):
            raise ValueError(f"{c} is not a code of the sequence ({self.describe()})")

    def _need_width(self, bits: list[int]) -> None:
        if len(bits) != self.width:
            raise ValueError(f"expected {self.width} code bits, got {len(bits)}")

    def _np_mask(self) -> np.uint64:
        import numpy as np
        return np.uint64(self.mask)

    def _np_fits(self, a: np.ndarray) -> np.ndarray:
        import numpy as np
        if self.width >= 64:
            return np.ones(a.shape, dtype=bool)
        return a <= self._np_mask()


@dataclass
class RangeSequence(Sequence):
    """Binary codes from ``start`` to ``end`` inclusive, up or down by one."""

    start: int
    end: int

    @property
    def up(self) -> bool:
        return self.end >= self.start

    @property
    def lo(self) -> int:
        return min(self.start, self.end)

    @property
    def hi(self) -> int:
        return max(self.start, self.end)

    def length(self) -> int:
        return self.hi - self.lo + 1

    def first(self) -> int:
        return self.start

    def contains(self, c: int) -> bool:
        return self.lo <= c <= self.hi

    def next(self, c: int) -> int:
        self._need_member(c)
        return self._step(c)

    def _step(self, c: int) -> int:
        if c == self.end:
            return self.start
        return c + 1 if self.up else c - 1

    def prev(self, c: int) -> int:
        self._need_member(c)
        if c == self.start:
            return self.end
        return c - 1 if self.up else c + 1

    def codes(self) -> Iterator[int]:
        return iter(range(self.start, self.end + 1) if self.up else range(self.start, self.end - 1, -1))

    def describe(self) -> str:
        way = "" if self.up else " (descending)"
        ends = f"{_code_text(self.start)} .. {_code_text(self.end)}"
        return f"range {ends}{way}, {_count_text(self.length())} {plural('code', self.length())}"

    def member(self, aig: Aig, bits: list[int]) -> int:
        self._need_width(bits)
        return aig.and_(_ge_const(aig, bits, self.lo), _le_const(aig, bits, self.hi))

    def _wrapping(self, aig: Aig, bits: list[int], frm: int, to: int, forward: bool) -> list[int]:
        # Step by one, except that `frm` goes to `to`; when the plain step
        # already does that (a full-width range) the comparator is left out.
        stepped = _increment(aig, bits) if forward else _decrement(aig, bits)
        if (frm + (1 if forward else -1)) & self.mask == to:
            return stepped
        return _mux_vec(aig, aig.equal_const(bits, frm), stepped, _const_bits(to, self.width))

    def next_bits(self, aig: Aig, bits: list[int]) -> list[int]:
        self._need_width(bits)
        return self._wrapping(aig, bits, self.end, self.start, self.up)

    def prev_bits(self, aig: Aig, bits: list[int]) -> list[int]:
        self._need_width(bits)
        return self._wrapping(aig, bits, self.start, self.end, not self.up)

    def member_array(self, codes: np.ndarray) -> np.ndarray:
        import numpy as np
        a = _u64(codes, self.width)
        return (a >= np.uint64(self.lo)) & (a <= np.uint64(self.hi))

    def next_array(self, codes: np.ndarray) -> np.ndarray:
        import numpy as np
        a = _u64(codes, self.width)
        stepped = a + np.uint64(1) if self.up else a - np.uint64(1)
        return np.where(a == np.uint64(self.end), np.uint64(self.start), stepped)


@dataclass
class BcdSequence(Sequence):
    """Binary-coded decimal over width/4 digits: 0 .. 10^digits - 1."""

    @property
    def digits(self) -> int:
        return self.width // 4

    def length(self) -> int:
        return 10 ** self.digits

    def first(self) -> int:
        return 0

    def contains(self, c: int) -> bool:
        # A code's hexadecimal spelling is its digit list.
        return self._fits(c) and format(c, "x").isdecimal()

    def next(self, c: int) -> int:
        self._need_member(c)
        return self._step(c)

    def _step(self, c: int) -> int:
        v = (int(format(c, "x")) + 1) % self.length()
        return int(str(v), 16)

    def prev(self, c: int) -> int:
        self._need_member(c)
        v = (int(format(c, "x")) - 1) % self.length()
        return int(str(v), 16)

    def codes(self) -> Iterator[int]:
        return (int(str(i), 16) for i in range(self.length()))

    def describe(self) -> str:
        d = self.digits
        return f"bcd, {d} digit{'s' if d > 1 else ''}, {_count_text(self.length())} {plural('code', self.length())}"

    def member(self, aig: Aig, bits: list[int]) -> int:
        self._need_width(bits)
        # A digit is at most 9 unless its 8 bit is set together with its 4 or 2 bit.
        over = [aig.and_(bits[k + 3], aig.or_(bits[k + 2], bits[k + 1])) for k in range(0, self.width, 4)]
        return aig.or_all(over) ^ 1

    def next_bits(self, aig: Aig, bits: list[int]) -> list[int]:
        self._need_width(bits)
        out: list[int] = []
        carry = TRUE
        for k in range(0, self.width, 4):
            d = bits[k:k + 4]
            nine = aig.and_(d[3], d[0])  # 9 is the only member digit with bits 8 and 1
            plus = _increment(aig, d)
            rolled = [aig.and_(nine ^ 1, p) for p in plus]
            out += _mux_vec(aig, carry, d, rolled)
            carry = aig.and_(carry, nine)
        return out

    def prev_bits(self, aig: Aig, bits: list[int]) -> list[int]:
        self._need_width(bits)
        out: list[int] = []
        borrow = TRUE
        for k in range(0, self.width, 4):
            d = bits[k:k + 4]
            zero = aig.and_all(b ^ 1 for b in d)
            minus = _decrement(aig, d)
            rolled = _mux_vec(aig, zero, minus, _const_bits(9, 4))
            out += _mux_vec(aig, borrow, d, rolled)
            borrow = aig.and_(borrow, zero)
        return out

    def member_array(self, codes: np.ndarray) -> np.ndarray:
        import numpy as np
        a = _u64(codes, self.width)
        ok = self._np_fits(a)
        for k in range(self.digits):
            ok &= ((a >> np.uint64(4 * k)) & np.uint64(15)) <= np.uint64(9)
        return ok

    def next_array(self, codes: np.ndarray) -> np.ndarray:
        import numpy as np
        a = _u64(codes, self.width)
        out = np.zeros_like(a)
        carry = np.ones(a.shape, dtype=bool)
        for k in range(self.digits):
            sh = np.uint64(4 * k)
            d = (a >> sh) & np.uint64(15)
            nine = d == np.uint64(9)
            nd = np.where(carry, np.where(nine, np.uint64(0), d + np.uint64(1)), d)
            out |= nd << sh
            carry &= nine
        return out


def _gray_to_binary(g, width: int):
    """Prefix xor from the top bit; works on ints and uint64 arrays."""
    s = 1
    while s < width:
        g = g ^ (g >> s)
        s <<= 1
    return g


@dataclass
class GraySequence(Sequence):
    """Reflected binary Gray code: i ^ (i >> 1) for i = 0 .. 2^n - 1."""

    def length(self) -> int:
        return 1 << self.width

    def first(self) -> int:
        return 0

    def contains(self, c: int) -> bool:
        return self._fits(c)

    def next(self, c: int) -> int:
        self._need_member(c)
        return self._step(c)

    def _step(self, c: int) -> int:
        b = (_gray_to_binary(c, self.width) + 1) & self.mask
        return b ^ (b >> 1)

    def prev(self, c: int) -> int:
        self._need_member(c)
        b = (_gray_to_binary(c, self.width) - 1) & self.mask
        return b ^ (b >> 1)

    def codes(self) -> Iterator[int]:
        return (i ^ (i >> 1) for i in range(self.length()))

    def describe(self) -> str:
        return f"gray, {_count_text(self.length())} {plural('code', self.length())}"

    def member(self, aig: Aig, bits: list[int]) -> int:
        self._need_width(bits)
        return TRUE

    def _through_binary(self, aig: Aig, bits: list[int], forward: bool) -> list[int]:
        n = self.width
        b = [FALSE] * n
        b[n - 1] = bits[n - 1]
        for i in range(n - 2, -1, -1):
            b[i] = aig.xor(bits[i], b[i + 1])
        s = _increment(aig, b) if forward else _decrement(aig, b)
        return [aig.xor(s[i], s[i + 1]) for i in range(n - 1)] + [s[n - 1]]

    def next_bits(self, aig: Aig, bits: list[int]) -> list[int]:
        self._need_width(bits)
        return self._through_binary(aig, bits, True)

    def prev_bits(self, aig: Aig, bits: list[int]) -> list[int]:
        self._need_width(bits)
        return self._through_binary(aig, bits, False)

    def member_array(self, codes: np.ndarray) -> np.ndarray:
        return self._np_fits(_u64(codes, self.width))

    def next_array(self, codes: np.ndarray) -> np.ndarray:
        import numpy as np
        a = _u64(codes, self.width)
        b = (_gray_to_binary(a, self.width) + np.uint64(1)) & self._np_mask()
        return b ^ (b >> np.uint64(1))


def _low_ones(x):
    """True where x is 0...01...1 (ones only at the bottom); ints or arrays."""
    return (x & (x + 1)) == 0


@dataclass
class JohnsonSequence(Sequence):
    """Twisted ring: from 0, next = (c << 1 | !msb) masked; 2n codes."""

    def length(self) -> int:
        return 2 * self.width

    def first(self) -> int:
        return 0

    def contains(self, c: int) -> bool:
        # The codes are exactly the n-bit words with at most one place where
        # adjacent bits differ: ones at the bottom, or ones at the top.
        return self._fits(c) and (_low_ones(c) or _low_ones(c ^ self.mask))

    def next(self, c: int) -> int:
        self._need_member(c)
        return self._step(c)

    def _step(self, c: int) -> int:
        return ((c << 1) | (((c >> (self.width - 1)) & 1) ^ 1)) & self.mask

    def prev(self, c: int) -> int:
        self._need_member(c)
        return (c >> 1) | (((c & 1) ^ 1) << (self.width - 1))

    def describe(self) -> str:
        return f"johnson, {_count_text(self.length())} {plural('code', self.length())}"

    def member(self, aig: Aig, bits: list[int]) -> int:
        self._need_width(bits)
        pairs = list(zip(bits, bits[1:]))
        ones_low = aig.and_all(aig.or_(lo, hi ^ 1) for lo, hi in pairs)
        ones_high = aig.and_all(aig.or_(lo ^ 1, hi) for lo, hi in pairs)
        return aig.or_(ones_low, ones_high)

    def next_bits(self, aig: Aig, bits: list[int]) -> list[int]:
        self._need_width(bits)
        return [bits[-1] ^ 1] + bits[:-1]

    def prev_bits(self, aig: Aig, bits: list[int]) -> list[int]:
        self._need_width(bits)
        return bits[1:] + [bits[0] ^ 1]

    def member_array(self, codes: np.ndarray) -> np.ndarray:
        a = _u64(codes, self.width)
        m = self._np_mask()
        return self._np_fits(a) & (_low_ones(a) | _low_ones(a ^ m))

    def next_array(self, codes: np.ndarray) -> np.ndarray:
        import numpy as np
        a = _u64(codes, self.width)
        top = (a >> np.uint64(self.width - 1)) & np.uint64(1)
        return ((a << np.uint64(1)) | (top ^ np.uint64(1))) & self._np_mask()


@dataclass
class RingSequence(Sequence):
    """One-hot: from 1, next = rotate left by one; n codes."""

    def length(self) -> int:
        return self.width

    def first(self) -> int:
        return 1

    def contains(self, c: int) -> bool:
        return self._fits(c) and c != 0 and c & (c - 1) == 0

    def next(self, c: int) -> int:
        self._need_member(c)
        return self._step(c)

    def _step(self, c: int) -> int:
        return ((c << 1) | (c >> (self.width - 1))) & self.mask

    def prev(self, c: int) -> int:
        self._need_member(c)
        return (c >> 1) | ((c & 1) << (self.width - 1))

    def describe(self) -> str:
        return f"ring, {_count_text(self.length())} {plural('code', self.length())}"

    def member(self, aig: Aig, bits: list[int]) -> int:
        self._need_width(bits)
        # Balanced merge of (some bit set, two or more bits set).
        items = [(b, FALSE) for b in bits]
        while len(items) > 1:
            merged = []
            for i in range(0, len(items) - 1, 2):
                (a1, m1), (a2, m2) = items[i], items[i + 1]
                merged.append((aig.or_(a1, a2), aig.or_(aig.or_(m1, m2), aig.and_(a1, a2))))
            if len(items) % 2:
                merged.append(items[-1])
            items = merged
        some, many = items[0]
        return aig.and_(some, many ^ 1)

    def next_bits(self, aig: Aig, bits: list[int]) -> list[int]:
        self._need_width(bits)
        return [bits[-1]] + bits[:-1]

    def prev_bits(self, aig: Aig, bits: list[int]) -> list[int]:
        self._need_width(bits)
        return bits[1:] + [bits[0]]

    def member_array(self, codes: np.ndarray) -> np.ndarray:
        import numpy as np
        a = _u64(codes, self.width)
        return self._np_fits(a) & (a != 0) & ((a & (a - np.uint64(1))) == 0)

    def next_array(self, codes: np.ndarray) -> np.ndarray:
        import numpy as np
        a = _u64(codes, self.width)
        return ((a << np.uint64(1)) | (a >> np.uint64(self.width - 1))) & self._np_mask()


def _lfsr_step(c: int, tap_mask: int, width: int) -> int:
    fb = (c & tap_mask).bit_count() & 1
    return ((c << 1) | fb) & ((1 << width) - 1)


def _tap_mask(taps: Iterable[int]) -> int:
    m = 0
    for t in taps:
        m |= 1 << (t - 1)
    return m


@dataclass
class LfsrSequence(Sequence):
    """A maximal-length Fibonacci shift register: every nonzero code, in
    shift-register order from ``start``.

    next = (c << 1 | fb) masked, fb the xor of the tapped bits (tap t is bit
    t - 1); the top bit is always a tap.
    """

    taps: tuple[int, ...]
    start: int

    @property
    def tap_mask(self) -> int:
        return _tap_mask(self.taps)

    def length(self) -> int:
        return (1 << self.width) - 1

    def first(self) -> int:
        return self.start

    def contains(self, c: int) -> bool:
        return self._fits(c) and c != 0

    def next(self, c: int) -> int:
        self._need_member(c)
        return self._step(c)

    def _step(self, c: int) -> int:
        return _lfsr_step(c, self.tap_mask, self.width)

    def prev(self, c: int) -> int:
        self._need_member(c)
        # The shifted-out top bit is the one that makes the feedback equal bit 0.
        others = (c >> 1) & self.tap_mask
        top = (c & 1) ^ (others.bit_count() & 1)
        return (c >> 1) | (top << (self.width - 1))

    def codes(self) -> Iterator[int]:
        m = self.tap_mask
        c = self.start
        for _ in range(self.length()):
            yield c
            c = _lfsr_step(c, m, self.width)

    def describe(self) -> str:
        taps = " ".join(map(str, self.taps))
        return f"lfsr {taps} from {self.start}, maximal length, {_count_text(self.length())} {plural('code', self.length())}"

    def member(self, aig: Aig, bits: list[int]) -> int:
        self._need_width(bits)
        return aig.or_all(bits)

    def next_bits(self, aig: Aig, bits: list[int]) -> list[int]:
        self._need_width(bits)
        fb = aig.xor_all(bits[t - 1] for t in self.taps)
        return [fb] + bits[:-1]

    def prev_bits(self, aig: Aig, bits: list[int]) -> list[int]:
        self._need_width(bits)
        top = aig.xor_all([bits[0]] + [bits[t] for t in self.taps if t != self.width])
        return bits[1:] + [top]

    def member_array(self, codes: np.ndarray) -> np.ndarray:
        a = _u64(codes, self.width)
        return self._np_fits(a) & (a != 0)

    def next_array(self, codes: np.ndarray) -> np.ndarray:
        import numpy as np
        a = _u64(codes, self.width)
        fb = np.zeros_like(a)
        for t in self.taps:
            fb ^= (a >> np.uint64(t - 1)) & np.uint64(1)
        return ((a << np.uint64(1)) | fb) & self._np_mask()


@dataclass
class _Trie:
    """A binary trie of sorted codes that keeps only the bits where they split.

    Node i covers sorted codes ``lo[i]`` .. ``hi[i] - 1``, which agree on every
    bit above ``bit[i]`` and differ at ``bit[i]`` (-1 for a single code, a
    leaf). ``above[i]`` is the parent's split bit (the width at the root), so
    bits ``bit[i] + 1 .. above[i] - 1`` are common to the node and untested on
    the way down. Children have larger numbers than their parent.
    """

    bit: list[int]
    left: list[int]
    right: list[int]
    lo: list[int]
    hi: list[int]
    above: list[int]

    @staticmethod
    def build(codes: list[int], width: int) -> "_Trie":
        t = _Trie([], [], [], [], [], [])
        stack = [(0, len(codes), width, -1, 0)]
        while stack:
            lo, hi, above, parent, side = stack.pop()
            i = len(t.bit)
            if parent >= 0:
                (t.right if side else t.left)[parent] = i
            t.lo.append(lo)
            t.hi.append(hi)
            t.above.append(above)
            t.left.append(-1)
            t.right.append(-1)
            if hi - lo == 1:
                t.bit.append(-1)
                continue
            k = (codes[lo] ^ codes[hi - 1]).bit_length() - 1
            t.bit.append(k)
            mid = bisect_left(codes, ((codes[lo] >> k) | 1) << k, lo, hi)
            stack.append((lo, mid, k, i, 0))
            stack.append((mid, hi, k, i, 1))
        return t


@dataclass
class ListSequence(Sequence):
    """An explicit list of codes, in order.

    Also the form of an lfsr that is not of maximal length: ``label`` then
    says where the list came from.
    """

    items: tuple[int, ...]
    label: str = ""
    _index: dict[int, int] = field(init=False, repr=False, compare=False)
    _sorted: list[int] = field(init=False, repr=False, compare=False)
    _trie: _Trie | None = field(default=None, init=False, repr=False, compare=False)
    _arrays: tuple[np.ndarray, np.ndarray] | None = field(default=None, init=False, repr=False, compare=False)

    def __post_init__(self) -> None:
        self._index = {c: i for i, c in enumerate(self.items)}
        self._sorted = sorted(self.items)

    def length(self) -> int:
        return len(self.items)

    def first(self) -> int:
        return self.items[0]

    def contains(self, c: int) -> bool:
        return c in self._index

    def next(self, c: int) -> int:
        self._need_member(c)
        return self._step(c)

    def _step(self, c: int) -> int:
        return self.items[(self._index[c] + 1) % len(self.items)]

    def prev(self, c: int) -> int:
        self._need_member(c)
        return self.items[self._index[c] - 1]

    def codes(self) -> Iterator[int]:
        return iter(self.items)

    def describe(self) -> str:
        n = len(self.items)
        what = self.label or "list"
        return f"{what}, {_count_text(n)} code{'s' if n != 1 else ''}"

    # --- circuits -------------------------------------------------------
    def _get_trie(self) -> _Trie:
        if self._trie is None:
            self._trie = _Trie.build(self._sorted, self.width)
        return self._trie

    def member(self, aig: Aig, bits: list[int]) -> int:
        self._need_width(bits)
        t = self._get_trie()
        codes = self._sorted
        lit = [FALSE] * len(t.bit)
        for i in range(len(t.bit) - 1, -1, -1):
            k, c = t.bit[i], codes[t.lo[i]]
            common = aig.and_all(bits[j] if (c >> j) & 1 else bits[j] ^ 1 for j in range(k + 1, t.above[i]))
            if k < 0 or t.hi[i] - t.lo[i] == 1 << (k + 1):
                below = TRUE  # every value of the bits below the common ones is a member
            else:
                below = aig.mux(bits[k], lit[t.left[i]], lit[t.right[i]])
            lit[i] = aig.and_(common, below)
        return lit[0]

    def _lookup(self, aig: Aig, bits: list[int], value: dict[int, int]) -> list[int]:
        # A decision tree on the split bits only: outside the members the
        # result is free, so untested bits need no comparison.
        t = self._get_trie()
        codes = self._sorted
        vec: list[list[int] | None] = [None] * len(t.bit)
        for i in range(len(t.bit) - 1, -1, -1):
            k = t.bit[i]
            if k < 0:
                vec[i] = _const_bits(value[codes[t.lo[i]]], self.width)
            else:
                a, b = vec[t.left[i]], vec[t.right[i]]
                vec[i] = _mux_vec(aig, bits[k], a, b)
                vec[t.left[i]] = vec[t.right[i]] = None
        return vec[0]

    def next_bits(self, aig: Aig, bits: list[int]) -> list[int]:
        self._need_width(bits)
        n = len(self.items)
        return self._lookup(aig, bits, {c: self.items[(i + 1) % n] for i, c in enumerate(self.items)})

    def prev_bits(self, aig: Aig, bits: list[int]) -> list[int]:
        self._need_width(bits)
        return self._lookup(aig, bits, {c: self.items[i - 1] for i, c in enumerate(self.items)})

    # --- arrays -----------------------------------------------------------
    def _get_arrays(self) -> tuple[np.ndarray, np.ndarray]:
        import numpy as np
        if self._arrays is None:
            srt = np.array(self._sorted, dtype=np.uint64)
            nxt = np.array([self._step(c) for c in self._sorted], dtype=np.uint64)
            self._arrays = (srt, nxt)
        return self._arrays

    def _positions(self, a: np.ndarray) -> np.ndarray:
        import numpy as np
        srt, _ = self._get_arrays()
        return np.minimum(np.searchsorted(srt, a), len(srt) - 1)

    def member_array(self, codes: np.ndarray) -> np.ndarray:
        a = _u64(codes, self.width)
        srt, _ = self._get_arrays()
        return srt[self._positions(a)] == a

    def next_array(self, codes: np.ndarray) -> np.ndarray:
        a = _u64(codes, self.width)
        _, nxt = self._get_arrays()
        return nxt[self._positions(a)]


# ---------------------------------------------------------------------------
# Building a sequence from a count line
# ---------------------------------------------------------------------------

def make_sequence(form: str, args: list[int | str], width: int) -> Sequence:
    """The sequence of ``count FORM ARGS`` over a code of ``width`` bits.

    ``form`` is 'list' (args: the codes), 'range' (args: first, last),
    'bcd', 'gray', 'johnson', 'ring' (no args) or 'lfsr' (args: taps, then
    optionally 'from' and the start code). Raises :class:`SequenceError`
    when the line does not define a valid sequence.
    """
    if isinstance(width, bool) or not isinstance(width, int) or not 1 <= width <= MAX_WIDTH:
        raise SequenceError(f"a code is 1 to {MAX_WIDTH} bits wide, not {width}")
    if form == "list":
        return _make_list(args, width)
    if form == "range":
        return _make_range(args, width)
    if form == "lfsr":
        return _make_lfsr(args, width)
    families = {"bcd": BcdSequence, "gray": GraySequence, "johnson": JohnsonSequence, "ring": RingSequence}
    if form not in families:
        raise SequenceError(f"unknown sequence form '{form}'")
    if args:
        raise SequenceError(f"'{form}' takes no arguments", 0)
    if form == "bcd" and width % 4:
        raise SequenceError(f"bcd needs a code width that is a multiple of 4; this code is {width} bits wide")
    return families[form](form, width)


def _code_arg(args: list[int | str], i: int, width: int) -> int:
    c = args[i]
    if isinstance(c, bool) or not isinstance(c, int):
        raise SequenceError(f"expected a number, found '{c}'", i)
    if c < 0:
        raise SequenceError(f"a code cannot be negative ({c})", i)
    if c >> width:
        raise SequenceError(
            f"code {c} is too wide for the {width}-bit code (it needs {c.bit_length()} bits)", i)
    return c


def _make_list(args: list[int | str], width: int) -> ListSequence:
    if not args:
        raise SequenceError("count needs at least one code")
    if len(args) > LIST_LIMIT:
        raise SequenceError(
            f"a listed sequence holds at most {LIST_LIMIT} codes; this one has {len(args)}", LIST_LIMIT)
    seen: dict[int, int] = {}
    for i in range(len(args)):
        c = _code_arg(args, i, width)
        if c in seen:
            raise SequenceError(
                f"code {c} repeats: it is code {seen[c] + 1} and again code {i + 1} of the sequence", i)
        seen[c] = i
    return ListSequence("list", width, tuple(args))  # type: ignore[arg-type]


def _make_range(args: list[int | str], width: int) -> RangeSequence:
    if len(args) != 2:
        raise SequenceError("a range is written FIRST .. LAST", None if len(args) < 2 else 2)
    start = _code_arg(args, 0, width)
    end = _code_arg(args, 1, width)
    return RangeSequence("range", width, start, end)


def _make_lfsr(args: list[int | str], width: int) -> Sequence:
    taps: list[int] = []
    start, start_arg = 1, None
    for i, a in enumerate(args):
        if a == "from":
            if i != len(args) - 2:
                raise SequenceError("'from' is followed by exactly one code, at the end", i)
            start_arg = i + 1
            break
        if isinstance(a, bool) or not isinstance(a, int):
            raise SequenceError(f"expected a tap number, found '{a}'", i)
        if not 1 <= a <= width:
            raise SequenceError(f"tap {a} is outside 1 .. {width} (the code is {width} bits wide)", i)
        if a in taps:
            raise SequenceError(f"tap {a} is given twice", i)
        taps.append(a)
    if not taps:
        raise SequenceError("an lfsr needs at least one tap")
    if start_arg is not None:
        start = _code_arg(args, start_arg, width)
        if start == 0:
            raise SequenceError("an lfsr cannot start from 0: it would stay at 0", start_arg)
    label = f"lfsr {' '.join(map(str, taps))} from {start}"
    where = start_arg if start_arg is not None else None

    if width in taps:
        maximal, why = _lfsr_maximal(taps, width)
        if maximal:
            return LfsrSequence("lfsr", width, tuple(taps), start)
    else:
        maximal, why = False, f"the top bit, {width}, is not a tap, so the register forgets it"
    if width > LFSR_WALK_LIMIT_BITS:
        raise SequenceError(
            f"{label} is not of maximal length ({why}); above {LFSR_WALK_LIMIT_BITS} bits "
            f"an lfsr must be of maximal length")

    tap_mask = _tap_mask(taps)
    orbit = [start]
    seen = {start}
    c = _lfsr_step(start, tap_mask, width)
    while c != start:
        if c in seen or (len(orbit) == LIST_LIMIT and not _lfsr_periodic(start, taps, width)):
            raise SequenceError(f"{label} never comes back to {start} ({why})", where)
        if len(orbit) == LIST_LIMIT:
            raise SequenceError(
                f"{label} runs longer than {LIST_LIMIT} codes before it comes back to {start}; "
                f"an lfsr that is not of maximal length is listed code by code, at most {LIST_LIMIT}",
                where)
        orbit.append(c)
        seen.add(c)
        c = _lfsr_step(c, tap_mask, width)
    return ListSequence("lfsr", width, tuple(orbit), label)


def _lfsr_periodic(start: int, taps: list[int], width: int) -> bool:
    """Whether ``start`` lies on a cycle of the shift register."""
    m = max(taps)
    if m == width:
        return True  # the step is then a bijection
    # The low m bits form a register of their own with an invertible step;
    # after width - m steps the higher bits are only history of the low ones.
    # So `start` is on a cycle iff it is what width - m steps make of the
    # low-part state that the small register had width - m steps earlier.
    low_mask = (1 << m) - 1
    tap_mask = _tap_mask(taps)
    low = start & low_mask
    for _ in range(width - m):
        others = (low >> 1) & tap_mask
        low = (low >> 1) | (((low & 1) ^ (others.bit_count() & 1)) << (m - 1))
    c = low
    for _ in range(width - m):
        c = _lfsr_step(c, tap_mask, width)
    return c == start


# ---------------------------------------------------------------------------
# Maximal length (the arithmetic is in checker.gf2)
# ---------------------------------------------------------------------------

def lfsr_is_maximal(taps: Iterable[int], width: int) -> bool:
    """Whether the Fibonacci lfsr with these taps (1 = lsb .. width = msb)
    runs through all 2^width - 1 nonzero codes.

    Raises :class:`SequenceError` when the answer needs prime factors of
    2^width - 1 that :mod:`checker.gf2` cannot find (see there).
    """
    taps = list(taps)
    if width not in taps:
        return False
    return _lfsr_maximal(taps, width)[0]


def _lfsr_maximal(taps: list[int], width: int) -> tuple[bool, str]:
    """(maximal, reason when not) for tap sets that include ``width``."""
    # The bit stream obeys a[j] = sum of a[j - t], so the feedback polynomial
    # is x^n + sum x^(n - t); its reciprocal 1 + sum x^t is primitive exactly
    # when it is. Take the one whose second-highest term is lower: its
    # reduction is cheaper.
    char = (1 << width) | sum(1 << (width - t) for t in taps)
    recip = 1 | sum(1 << t for t in taps)
    second = lambda p: (p ^ (1 << width)).bit_length()  # noqa: E731
    poly = char if second(char) <= second(recip) else recip
    try:
        return primitive(poly)
    except Unfactored as e:
        raise SequenceError(
            f"cannot tell whether lfsr {' '.join(map(str, taps))} is of maximal length: "
            f"its feedback polynomial is irreducible, but {e}") from None
