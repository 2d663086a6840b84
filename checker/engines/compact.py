"""The explicit engine's compact tables: successors and depths in 4 bytes a code, up to 2^28 codes.

Three pieces, each bounded in memory before it starts:

* :func:`memory_needed` says, from the code width and the number of input
  rows alone, how many bytes the widest run of the table, the ranking and
  the cycle search can hold at once (an upper bound, checked against
  ``tracemalloc`` in tests/test_compact.py); :func:`memory_refusal` refuses
  a check above :data:`MEMORY_LIMIT`, or above the memory this machine has
  available (``MemAvailable``) divided among the claims running at once,
  before anything is built.
* :func:`folded_successors` evaluates the next-state function over
  bit-packed codes, :data:`CHUNK` codes at a time, and turns the bit planes
  it gets back into one ``uint32`` per code with an 8x8 bit-matrix transpose
  (Warren, Hacker's Delight, 2nd ed., section 7-3), with no array of one
  byte per bit; an input row that leads nowhere new from any unused code is
  folded away.
* :func:`depth_functional` finds, when every code has one successor, the
  number of clocks each unused code needs to reach the sequence: runs of
  consecutive codes that count up by one (what a counter's unused codes do)
  are contracted to one node each, and the contracted graph, or the codes
  themselves when runs are short, are ranked by walks between hashed nodes
  (:mod:`checker.engines.walks`); :func:`functional_cycles` lists the cycles
  among the locked codes the same way.
"""

from __future__ import annotations

from contextlib import contextmanager
from typing import Iterator, Optional

import numpy as np

from ..model import Aig, evaluate
from ..model.space import CodeSpace
from .budget import Budget
from . import walks as W

MEMORY_LIMIT = 8 << 30
"""Most bytes the explicit engine's tables may need (checked before a run starts)."""

CHUNK = 1 << 21
"""Codes evaluated, or ranked, per pass (a multiple of 64 and a power of two)."""

BASE_BYTES = 128 << 20
"""Bytes a run holds besides its tables at any width: the interpreter and libraries (about 110
MiB resident)."""

WORK_BYTES = 192
"""Bytes a code, for up to :data:`CHUNK` codes, that a run holds besides its tables and the
interpreter (:func:`base_bytes`): a chunk's temporaries, up to 2^20 codes the second analysis of
a repair plan, the listed cycles' own records (up to 2^16, about 200 bytes each), and with
several input rows the strongly connected sets of up to 2^20 locked codes (about 180 bytes a
locked code)."""


def base_bytes(width: int) -> int:
    """The bytes of a run at ``width`` bits that do not grow with every code: 512 MiB from
    2^21 codes up, less below (a small check is not refused on a small machine)."""
    return BASE_BYTES + WORK_BYTES * min(1 << width, CHUNK)


ONES = np.uint64(0xFFFFFFFFFFFFFFFF)
SETS_LIMIT = 1 << 16
"""Most locked cycles listed one by one (their number is always given)."""

RUN_SHARE = 8
"""Runs are contracted when there are fewer run ends than one code in this many."""

SEQ = np.int32(-1)
LOCKED = np.int32(-2)
_MASKS = [(np.uint64(0x00AA00AA00AA00AA), np.uint64(7)), (np.uint64(0x0000CCCC0000CCCC), np.uint64(14)),
          (np.uint64(0x00000000F0F0F0F0), np.uint64(28))]


def memory_needed(width: int, rows: int) -> int:
    """Upper bound on the bytes a compact run over 2^width codes and ``rows`` input rows holds.

    Rows that lead nowhere new from an unused code are folded away, but the
    bound counts every row. One row: the table (4 bytes a code) and the
    sequence mask (1); while ranking at most 9.5 bytes a code more (the walk
    that passed each code and its distance, whether a code has a
    predecessor, the walks from hashed codes), the depths being those
    distances rewritten; while finding cycles the depths (4) and at most 18
    bytes a code (each code's walk, then cycle; 13 bytes a walk, at most one
    walk a code; the listed cycles). 27 bytes a code. Several rows: the
    table (4 bytes a code and row), the mask (1), the strategy (4), and at
    most 11 bytes a code while ranking it, or the depths and 6 bytes while
    listing cycles: 4 bytes a code and row and 16 a code.
    """
    n = 1 << width
    if rows <= 1:
        return 27 * n + base_bytes(width)
    return (4 * rows + 16) * n + base_bytes(width)


MEMINFO = "/proc/meminfo"
"""Where the kernel says how much memory a new program can take (``MemAvailable``, Linux 3.14+)."""


def available_memory() -> Optional[int]:
    """Bytes of ``MemAvailable`` in :data:`MEMINFO`, or None where the file or the line is missing."""
    try:
        with open(MEMINFO, encoding="ascii", errors="replace") as f:
            for line in f:
                if line.startswith("MemAvailable:"):
                    parts = line.split()
                    return int(parts[1]) * (1024 if parts[2:3] == ["kB"] else 1)
    except (OSError, ValueError, IndexError):
        return None
    return None


def memory_refusal(need: int, what: str, parallel: int = 1) -> Optional[str]:
    """Why a run needing ``need`` bytes cannot start, or None when it fits: above
    :data:`MEMORY_LIMIT`, or above the memory this machine has available divided among the
    ``parallel`` claims running at once (``check --jobs``). ``what`` names the run."""
    if need > MEMORY_LIMIT:
        return f"{what} would need {gib(need)} (the explicit engine's limit is {gib(MEMORY_LIMIT)})"
    free = available_memory()
    if free is None:
        return None
    share = free // max(1, parallel)
    if need <= share:
        return None
    if parallel > 1:
        return (f"{what} would need {gib(need)}, and this machine has {gib(free)} available for "
                f"{parallel} claims running at once ({gib(share)} each; fewer --jobs leave each more)")
    return f"{what} would need {gib(need)}, and this machine has {gib(free)} available"


@contextmanager
def small_pages() -> Iterator[None]:
    """Large NumPy arrays on ordinary pages while the engine runs.

    NumPy asks the kernel for 2 MiB pages on large arrays (``madvise``); on the
    virtual machines this project runs on, the first touch of such pages costs
    several times that of ordinary ones, and the engine writes its tables
    once, in order: a 26-bit exploration took 3.7 to 4.2 s with ordinary pages
    against 6.5 to 8.0 s with large ones, measured side by side.
    """
    try:
        from numpy._core import multiarray as ma
    except ImportError:  # NumPy 1.x
        from numpy.core import multiarray as ma  # type: ignore[no-redef]
    switch = getattr(ma, "_set_madvise_hugepage", None)
    if switch is None:
        yield
        return
    before = switch(False)
    try:
        yield
    finally:
        switch(bool(before))


def gib(nbytes: int) -> str:
    """Bytes for people: '6.3 GiB' or '410 MiB'."""
    return f"{nbytes / (1 << 30):.1f} GiB" if nbytes >= 1 << 30 else f"{nbytes / (1 << 20):.0f} MiB"


def _tick(budget: Optional[Budget], depth: int = 0) -> None:
    if budget is not None:
        budget.check(depth)


# --- the successor table -------------------------------------------------------

def _code_bit(base: int, nw: int, k: int) -> np.ndarray:
    """Words of bit k of the codes base, base+1, ... (base a multiple of 64)."""
    if k < 6:
        v = 0
        for i in range(64):
            if (i >> k) & 1:
                v |= 1 << i
        return np.full(nw, np.uint64(v), dtype=np.uint64)
    words = (np.arange(nw, dtype=np.uint64) + np.uint64(base >> 6)) >> np.uint64(k - 6)
    return (words & np.uint64(1)) * ONES


def planes_to_codes(planes: list[np.ndarray], size: int) -> np.ndarray:
    """One uint32 per sample from bit planes (``planes[b]``: words of bit b of every sample).

    Eight planes at a time: byte i of each plane's word is stacked into one
    64-bit word, an 8x8 bit matrix, and transposed by three delta swaps
    (Warren, Hacker's Delight, 7-3), giving one byte per sample.
    """
    nbytes = size // 8
    out = np.zeros(size, dtype=np.uint32)
    view = out.view(np.uint8).reshape(size, 4)
    t = np.empty(nbytes, dtype=np.uint64)
    for g in range(0, len(planes), 8):
        group = [np.ascontiguousarray(p).view(np.uint8) for p in planes[g:g + 8]]
        group += [np.zeros(nbytes, dtype=np.uint8)] * (8 - len(group))
        x = np.stack(group, axis=1).view(np.uint64).ravel()  # byte j of word i: plane j's byte i
        for mask, s in _MASKS:  # x ^= t ^ (t << s) with t = (x ^ (x >> s)) & mask, in place
            np.right_shift(x, s, out=t)
            t ^= x
            t &= mask
            x ^= t
            t <<= s
            x ^= t
        view[:, g // 8] = x.view(np.uint8)
    return out


def _row_chunks(space: CodeSpace, values: list[int], names: list[str],
                budget: Optional[Budget]) -> Iterator[tuple[int, np.ndarray]]:
    """(base, next codes of base, base+1, ...) under one input row, :data:`CHUNK` codes at a time."""
    m = space.model
    w = space.width
    n = 1 << w
    aig: Aig = m.aig
    roots = [m.next_lits[i] for i in space.code]  # msb first
    code_nodes = [m.state_lits[i] >> 1 for i in space.code]
    lit_of = dict(zip(m.inputs, m.input_lits))
    size = max(64, min(CHUNK, n))
    nw = size // 64
    full = np.full(nw, ONES, dtype=np.uint64)
    zero = np.zeros(nw, dtype=np.uint64)
    row_leaves = {lit_of[name] >> 1: (full if b else zero) for name, b in zip(names, values)}
    for base in range(0, n, size):
        _tick(budget)
        leaves = dict(row_leaves)
        for pos, node in enumerate(code_nodes):
            leaves[node] = _code_bit(base, nw, w - 1 - pos)
        vals = evaluate(aig, leaves, roots, full)
        planes = [np.broadcast_to(v, (nw,)) for v in reversed(vals)]  # bit 0 first
        yield base, planes_to_codes(planes, size)[:min(size, n)]


def successors(space: CodeSpace, rows_values: list[list[int]], names: list[str],
               budget: Optional[Budget] = None) -> np.ndarray:
    """``succ[r, c]``: the next code of code ``c`` under input row ``r`` (uint32), in chunks."""
    n = 1 << space.width
    out = np.empty((len(rows_values), n), dtype=np.uint32)
    for r, values in enumerate(rows_values):
        for base, got in _row_chunks(space, values, names, budget):
            out[r, base:base + got.size] = got
    return out


def folded_successors(space: CodeSpace, rows_values: list[list[int]], names: list[str], member: np.ndarray,
                      budget: Optional[Budget] = None) -> tuple[np.ndarray, list[int]]:
    """The successor table with the input rows folded per code: (table, the rows kept).

    Row 0 is always kept. Every other row is evaluated a chunk at a time and
    kept only if, at some unused code, it leads somewhere no kept row does
    (the claim asks about unused codes alone: an input that only changes what
    a sequence code does cannot keep a code out of the sequence, and one
    that does what another row does adds no run). A row found to differ
    after its first chunks has those chunks evaluated again. The table is
    allocated for every row (the bound stated before the run); the rows
    folded away are never written, so they take no memory.
    """
    n = 1 << space.width
    out = np.empty((len(rows_values), n), dtype=np.uint32)
    kept: list[int] = []
    for r, values in enumerate(rows_values):
        row = out[len(kept)]
        differs = not kept
        for base, got in _row_chunks(space, values, names, budget):
            hi = base + got.size
            if not differs:
                new = ~member[base:hi]
                for i in range(len(kept)):
                    new &= out[i, base:hi] != got
                differs = bool(new.any())
                if differs and base:  # the chunks before agreed: evaluate them again
                    for b2, g2 in _row_chunks(space, values, names, budget):
                        if b2 >= base:
                            break
                        row[b2:b2 + g2.size] = g2
            if differs:
                row[base:hi] = got
        if differs:
            kept.append(r)
    return out[:len(kept)], kept


def members(space: CodeSpace, budget: Optional[Budget] = None) -> np.ndarray:
    """The sequence mask of every code (bool), asked a chunk at a time."""
    n = 1 << space.width
    out = np.empty(n, dtype=bool)
    for base in range(0, n, CHUNK):
        _tick(budget)
        hi = min(n, base + CHUNK)
        out[base:hi] = space.member_array(np.arange(base, hi, dtype=np.uint64))
    return out


# --- depth with one successor per code ------------------------------------------

def _run_ends(succ: np.ndarray, unused: np.ndarray, budget: Optional[Budget]) -> np.ndarray:
    """The last code of every run of unused codes c, c+1, ... in which each steps to the next."""
    n = succ.size
    pieces = []
    ramp = np.arange(min(n, CHUNK), dtype=np.uint32)
    for base in range(0, n, CHUNK):
        _tick(budget)
        hi = min(n, base + CHUNK)
        cont = (succ[base:hi] - ramp[:hi - base]) == np.uint32(base + 1)  # succ[c] == c + 1, in 32 bits
        cont[:hi - base - 1] &= unused[base + 1:hi]
        if hi < n:
            cont[-1] &= unused[hi]
        else:
            cont[-1] = False
        pieces.append((np.flatnonzero(unused[base:hi] & ~cont) + base).astype(np.int32))
    return np.concatenate(pieces) if pieces else np.zeros(0, dtype=np.int32)


def depth_functional(succ: np.ndarray, member: np.ndarray,
                     budget: Optional[Budget] = None) -> tuple[np.ndarray, int]:
    """Clocks from every code to the sequence when every code has one successor (-1: never).

    A run of unused codes ``a, a+1, ..., e`` in which each steps to the next
    needs ``e - c`` clocks from ``c`` to its end ``e``, so when runs are long
    (fewer ends than one code in :data:`RUN_SHARE`) only run ends are ranked:
    end ``i`` leads to the run holding ``succ[e_i]`` at a known distance.
    Otherwise the codes themselves are ranked. Either graph is ranked by
    walks between sampled nodes (:mod:`checker.engines.walks`).
    """
    n = succ.size
    ends = _run_ends(succ, ~member, budget)
    k = ends.size
    if k == 0:
        return np.where(member, 0, -1).astype(np.int32), 0
    if k * RUN_SHARE > n:  # short runs: rank the codes
        del ends

        def step(cur: np.ndarray) -> tuple[np.ndarray, None]:
            nxt = succ[cur].astype(np.intp)
            return np.where(member[nxt], -1, nxt), None

        steps, rounds = W.depths(n, step, lambda lo, hi: ~member[lo:hi], budget)
        for base in range(0, n, CHUNK):
            steps[base:base + CHUNK][member[base:base + CHUNK]] = 0
        return steps, rounds
    # ptr[i] >= 0: end i is acc[i] clocks before end ptr[i], every code between unused;
    # ptr[i] == SEQ: end i is acc[i] clocks from the sequence
    ptr = np.empty(k, dtype=np.int32)
    acc = np.empty(k, dtype=np.int32)
    for lo in range(0, k, CHUNK):
        _tick(budget)
        t = succ[ends[lo:lo + CHUNK]].astype(np.int32)
        into = member[t]
        j = np.searchsorted(ends, t).astype(np.int32)
        ptr[lo:lo + CHUNK] = np.where(into, SEQ, j)
        acc[lo:lo + CHUNK] = 1 + np.where(into, 0, ends[np.minimum(j, k - 1)] - t)

    def jump(cur: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        return ptr[cur].astype(np.intp), acc[cur]

    top, rounds = W.depths(k, jump, None, budget)
    del ptr, acc
    # fill: a code of run i needs top[i] - code clocks (top = end + clocks from the end)
    locked = top < 0
    top += ends
    top[locked] = -1
    del locked
    steps = np.empty(n, dtype=np.int32)
    for base in range(0, n, CHUNK):
        _tick(budget, rounds)
        hi = min(n, base + CHUNK)
        lo_i, hi_i = (int(x) for x in np.searchsorted(ends, [base, hi]))
        cuts = ends[lo_i:hi_i].astype(np.int64) - base + 1  # the code after an end starts the next run
        lens = np.diff(np.concatenate(([0], cuts, [hi - base])))
        vals = top[lo_i:hi_i + 1] if hi_i < k else np.append(top[lo_i:hi_i], np.int32(-1))
        t = np.repeat(vals, lens)
        seg = np.where(t < 0, np.int32(-1), t - np.arange(base, hi, dtype=np.int32))
        seg[member[base:hi]] = 0
        steps[base:hi] = seg
    return steps, rounds


def _take(table: np.ndarray, idx: np.ndarray) -> np.ndarray:
    """``table[idx]`` a chunk at a time (no index array widened to 64 bits as a whole)."""
    out = np.empty(idx.size, dtype=table.dtype)
    for lo in range(0, idx.size, CHUNK):
        out[lo:lo + CHUNK] = table[idx[lo:lo + CHUNK]]
    return out


def _positions(mask: np.ndarray, offset: int = 0) -> np.ndarray:
    """``flatnonzero(mask) + offset`` as int32, a chunk at a time."""
    parts = [np.flatnonzero(mask[b:b + CHUNK]).astype(np.int32) + np.int32(b + offset)
             for b in range(0, mask.size, CHUNK)]
    return np.concatenate(parts) if parts else np.zeros(0, dtype=np.int32)


def functional_cycles(succ: np.ndarray, steps: np.ndarray, budget: Optional[Budget] = None,
                      limit: int = SETS_LIMIT, first: Optional[int] = None) -> tuple[list[np.ndarray], int]:
    """The cycles among the locked codes (``steps < 0``) of a one-successor table, and how many.

    Returns the first ``limit`` cycles by smallest code (each sorted) and the
    number of cycles, found by walks between sampled codes
    (:func:`checker.engines.walks.cycles`). Many locked codes are walked in
    place; few are first numbered (8 bytes a locked code). With ``first``:
    only the cycles reached from the ``first`` smallest locked codes, walked
    in place (4 bytes a code and the codes listed).
    """
    n = succ.size
    size = sum(int(np.count_nonzero(steps[b:b + CHUNK] < 0)) for b in range(0, n, CHUNK))
    if size == 0:
        return [], 0
    if size * 4 > n or first is not None:
        def step(cur: np.ndarray) -> tuple[np.ndarray, None]:
            return succ[cur].astype(np.intp), None

        sets, count = W.cycles(n, step, lambda lo, hi: steps[lo:hi] < 0, budget, limit, first)
        return sets, count
    locked = np.concatenate([np.flatnonzero(steps[b:b + CHUNK] < 0).astype(np.int32) + np.int32(b)
                             for b in range(0, n, CHUNK)])
    pos = np.empty(size, dtype=np.int32)
    for lo in range(0, size, CHUNK):
        _tick(budget)
        pos[lo:lo + CHUNK] = np.searchsorted(locked, succ[locked[lo:lo + CHUNK]].astype(np.int32))

    def near(cur: np.ndarray) -> tuple[np.ndarray, None]:
        return pos[cur].astype(np.intp), None

    sets, count = W.cycles(size, near, None, budget, limit)
    return [locked[s] for s in sets], count
