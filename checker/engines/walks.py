"""Depths and cycles of a one-successor graph by walks between sampled nodes, in NumPy.

A graph where every node has one successor (a counter's table under one
input row, or the run-contracted form of it) is ranked without a pass per
doubling over every node. About one node in :data:`SPACING`, chosen by a
multiplicative hash (Knuth, TAOCP vol. 3, 6.4), starts a walk; all walks
advance together, one vectorised step at a time, and a walk stops when it
leaves the graph (into the sequence) or meets a node a walk has passed.
Then, a chunk at a time, walks start from the nodes without a predecessor
that no walk passed (the trees hanging off the first walks' paths), and for
cycles from every node left (cycles without a hashed node). Every node is
then passed by one walk at a known distance from its start, and each walk
points to the walk whose path it met: a one-successor graph of walks, ranked
by pointer jumping (Wyllie 1979), whose cycles give the graph's cycles. Work
is proportional to the number of nodes; the number of vectorised steps to
the longest stretch between two starts (about SPACING times the logarithm
of the number of walks).

Before, every node was ranked by pointer jumping: about log2(2^w) passes over
every code, 28 s for the ranking and 40 s for the cycles of a 24-bit shift
register whose codes are all on long cycles (tests/perf/RESULTS_explicit.md).
"""

from __future__ import annotations

from typing import Callable, Optional

import numpy as np

from .budget import Budget

SPACING = 32
"""About one node in this many starts a walk (a power of two)."""

CHUNK = 1 << 21
"""Walks started, or nodes read, per pass."""

SEQ = np.int32(-1)
LOCKED = np.int32(-2)
_HASH = np.uint32(0x9E3779B1)
_INT32_MAX = np.iinfo(np.int32).max


Step = Callable[[np.ndarray], tuple[np.ndarray, Optional[np.ndarray]]]
"""Nodes to (their successors, -1 for one that leaves the graph; the weights of those edges or None for 1)."""


def _tick(budget: Optional[Budget], depth: int = 0) -> None:
    if budget is not None:
        budget.check(depth)


def sampled(lo: int, hi: int) -> np.ndarray:
    """Whether each node lo .. hi-1 is one of the hashed starts (about one in SPACING)."""
    shift = np.uint32(32 - (SPACING.bit_length() - 1))
    return ((np.arange(lo, hi, dtype=np.uint32) * _HASH) >> shift) == 0


Alive = Callable[[int, int], np.ndarray]
"""Nodes lo..hi-1 to whether each belongs to the graph."""

Pick = Callable[[int, int], np.ndarray]
"""Nodes lo..hi-1 to whether each starts a walk (among those alive and not yet passed)."""


def _has_pred(k: int, step: Step, alive: Optional[Alive], budget: Optional[Budget]) -> np.ndarray:
    """Whether some node of the graph leads to each node."""
    has_pred = np.zeros(k, dtype=bool)
    for lo in range(0, k, CHUNK):
        _tick(budget)
        hi = min(k, lo + CHUNK)
        nxt, _ = step(np.arange(lo, hi, dtype=np.intp))
        if alive is not None:
            nxt = nxt[alive(lo, hi)]
        has_pred[nxt[nxt >= 0]] = True
    return has_pred


def _starts(lo: int, hi: int, pick: Pick, owner: np.ndarray, alive: Optional[Alive]) -> np.ndarray:
    mask = pick(lo, hi) & (owner[lo:hi] == -1)
    if alive is not None:
        mask &= alive(lo, hi)
    return (np.flatnonzero(mask) + lo).astype(np.int32)


def _claim(k: int, pick: Pick, owner: np.ndarray, alive: Optional[Alive],
           first: Optional[int]) -> tuple[np.ndarray, np.ndarray]:
    """Every start ``pick`` names and the name of each walk (``first``, ``first + 1``, ...,
    or, with ``first`` None, its start node), claimed in ``owner``. The starts are counted
    first, so that the list is built once."""
    total = sum(_starts(lo, min(k, lo + CHUNK), pick, owner, alive).size for lo in range(0, k, CHUNK))
    starts = np.empty(total, dtype=np.int32)
    at = 0
    for lo in range(0, k, CHUNK):
        got = _starts(lo, min(k, lo + CHUNK), pick, owner, alive)
        starts[at:at + got.size] = got
        at += got.size
    ids = starts if first is None else np.arange(first, first + total, dtype=np.int32)
    owner[starts] = ids
    return starts, ids


def _walk_all(starts: np.ndarray, ids: np.ndarray, owner: np.ndarray, off: Optional[np.ndarray], step: Step,
              budget: Optional[Budget]) -> tuple[np.ndarray, Optional[np.ndarray]]:
    """Walks from claimed ``starts`` named ``ids``, :data:`CHUNK` at a time: (stop, length) of each."""
    stop = np.empty(starts.size, dtype=np.int32)
    length = np.empty(starts.size, dtype=np.int32) if off is not None else None
    for lo in range(0, starts.size, CHUNK):
        st, ln = _advance(starts[lo:lo + CHUNK], ids[lo:lo + CHUNK], owner, off, step, off is not None, budget)
        stop[lo:lo + st.size] = st
        if length is not None:
            length[lo:lo + ln.size] = ln
    return stop, length


def _advance(starts: np.ndarray, ids: np.ndarray, owner: np.ndarray, off: Optional[np.ndarray], step: Step,
             distances: bool, budget: Optional[Budget]) -> tuple[np.ndarray, np.ndarray]:
    """Walk from ``starts`` (named ``ids`` in ``owner``) until each leaves the graph or meets
    a node already passed; two walks reaching a node at once: the one written last passes
    it, the others stop there."""
    size = starts.size
    stop = np.empty(size, dtype=np.int32)
    length = np.zeros(size, dtype=np.int32)
    cur, who = starts.astype(np.intp), np.arange(size, dtype=np.intp)
    dist = np.zeros(size, dtype=np.int32)
    steps = 0
    while cur.size:
        steps += 1
        if steps & 63 == 0:
            _tick(budget)
        nxt, w = step(cur)
        if distances:
            dist = dist + (np.int32(1) if w is None else w)
        end = nxt < 0
        o = owner[np.where(end, 0, nxt)]
        halt = end | (o != -1)  # passed by a walk, or on a cycle already found
        if halt.any():
            stop[who[halt]] = np.where(end[halt], SEQ, nxt[halt])
            if distances:
                length[who[halt]] = dist[halt]
            go = ~halt
            nxt, who = nxt[go], who[go]
            if distances:
                dist = dist[go]
        mine = ids[who]
        owner[nxt] = mine
        won = owner[nxt] == mine
        if not won.all():
            lost = ~won
            stop[who[lost]] = nxt[lost]
            if distances:
                length[who[lost]] = dist[lost]
            nxt, who = nxt[won], who[won]
            if distances:
                dist = dist[won]
        if distances:
            off[nxt] = dist
        cur = nxt
    return stop, length


def resolve(ptr: np.ndarray, acc: np.ndarray, budget: Optional[Budget] = None) -> int:
    """Pointer jumping in place: node i is ``acc[i]`` from node ``ptr[i]`` (:data:`SEQ`: from
    the end). On return ``ptr[i]`` is SEQ with ``acc[i]`` the distance from i to the end, or
    :data:`LOCKED` (a cycle). Weights may be negative; a pointer not at the end after
    2^r > len(ptr) hops has met a cycle. Returns the rounds taken."""
    k = ptr.size
    limit = max(1, int(k).bit_length() + 1)
    rounds = 0
    while True:
        rounds += 1
        _tick(budget, rounds)
        left = False
        for lo in range(0, k, CHUNK):
            a = np.flatnonzero(ptr[lo:lo + CHUNK] >= 0) + lo
            if a.size == 0:
                continue
            left = True
            if rounds > limit:
                ptr[a] = LOCKED
                continue
            p = ptr[a]
            q = ptr[p]
            s = acc[a].astype(np.int64) + acc[p]
            # a locked chain's sum grows each lap: clip it (it is never read)
            acc[a] = np.clip(s, -_INT32_MAX, _INT32_MAX)
            ptr[a] = q
        if not left or rounds > limit:
            return rounds


def depths(k: int, step: Step, alive: Optional[Alive] = None,
           budget: Optional[Budget] = None) -> tuple[np.ndarray, int]:
    """Distance from every node to where it leaves the graph (int32; -1: never, a cycle).

    A walk is named by its start node, and the distance from its start,
    once known, is kept in the start's own slot of ``off`` (a start is 0
    from itself). First the walks from hashed nodes, ranked together (about
    one walk per SPACING nodes); then, a chunk at a time, the walks from
    nodes without a predecessor (trees hanging off the first walks' paths,
    often one node in two), each chunk ranked on its own: such a walk stops
    on a path walked before, or on one of its own chunk, never on a later
    one (nothing leads to a node without a predecessor). About 9.5 bytes a
    node besides the graph; the result is ``off``, rewritten in place.
    """
    has_pred = _has_pred(k, step, alive, budget)
    owner = np.full(k, -1, dtype=np.int32)
    off = np.zeros(k, dtype=np.int32)

    def gap(stop: np.ndarray) -> np.ndarray:
        """Distance from the start of the walk that passed ``stop`` to it (a start: 0)."""
        o = owner[stop]
        return np.where(o == stop, np.int32(0), off[stop])

    starts, _ = _claim(k, sampled, owner, alive, None)
    ptr, acc = _walk_all(starts, starts, owner, off, step, budget)
    inside = ptr >= 0
    at = ptr[inside]
    acc[inside] -= gap(at)
    ptr[inside] = np.searchsorted(starts, owner[at]).astype(np.int32)  # starts are sorted
    rounds = resolve(ptr, acc, budget)
    off[starts] = np.where(ptr == SEQ, acc, np.int32(-1))
    del starts, ptr, acc, inside, at

    def leaf(lo: int, hi: int) -> np.ndarray:
        return ~has_pred[lo:hi]

    for lo in range(0, k, CHUNK):
        got = _starts(lo, min(k, lo + CHUNK), leaf, owner, alive)
        if got.size == 0:
            continue
        owner[got] = got
        p, a = _walk_all(got, got, owner, off, step, budget)
        inside = p >= 0
        at = p[inside]
        o = owner[at]
        a[inside] -= gap(at)
        mine = np.zeros(p.size, dtype=bool)
        mine[inside] = (o >= got[0]) & (o <= got[-1]) & (got[np.searchsorted(got, o).clip(0, got.size - 1)] == o)
        known = inside.copy()
        known[inside] = ~mine[inside]
        d = off[owner[p[known]]]  # a walk ranked before: its distance is in its start's slot
        p[known] = np.where(d < 0, LOCKED, SEQ)
        a[known] += np.maximum(d, 0)
        p[mine] = np.searchsorted(got, owner[p[mine]]).astype(np.int32)
        rounds = max(rounds, resolve(p, a, budget))
        off[got] = np.where(p == SEQ, a, np.int32(-1))
    del has_pred
    for lo in range(0, k, CHUNK):
        _tick(budget, rounds)
        o = owner[lo:lo + CHUNK]
        seg = off[lo:lo + CHUNK]
        me = np.arange(lo, lo + o.size, dtype=np.int32)
        t = off[np.maximum(o, 0)]  # the walk's distance, in its start's slot (kept as it is)
        start = o == me
        val = np.where(t < 0, np.int32(-1), t - seg)
        val[start] = seg[start]
        val[o < 0] = -1
        seg[:] = val
    return off, rounds


def cycles(k: int, step: Step, alive: Optional[Alive] = None, budget: Optional[Budget] = None,
           limit: int = 1 << 16, first: Optional[int] = None) -> tuple[list[np.ndarray], int]:
    """The cycles of a one-successor graph on nodes 0..k-1 (``alive`` ones; closed under the
    successor): the first ``limit`` by smallest node, each sorted, and how many there are.
    With ``first``, only the cycles reached from the first ``first`` nodes (and how many).

    Walks start from hashed nodes (all together), then, a chunk at a time, from nodes
    without a predecessor and from nodes no walk passed (cycles without a hashed node); a
    later walk that meets an earlier one never closes a cycle, so each group's cycles are
    found on its own, and their nodes marked at once (:func:`_close`). At most 5 bytes a
    node and 16 a hashed walk, then the listing: 4 bytes a node, 8 a cycle, 4 a listed node.
    """
    owner = np.full(k, -1, dtype=np.int32)
    found = [0]  # cycles so far
    if first is not None:
        cut, seen = k, 0  # the node after the first ``first`` alive ones
        for lo in range(0, k, CHUNK):
            on = np.flatnonzero(np.ones(min(k, lo + CHUNK) - lo, dtype=bool) if alive is None
                                else alive(lo, min(k, lo + CHUNK)))
            if seen + on.size >= first:
                cut = lo + int(on[first - seen - 1]) + 1 if first > seen else lo
                break
            seen += on.size

        def leading(lo: int, hi: int) -> np.ndarray:
            return np.arange(lo, hi) < cut
        starts, ids = _claim(k, leading, owner, alive, 0)
        _close(starts, ids, owner, step, found, budget)
    else:
        has_pred = _has_pred(k, step, alive, budget)
        starts, ids = _claim(k, sampled, owner, alive, 0)
        _close(starts, ids, owner, step, found, budget)
        count = starts.size
        del starts, ids
        for pick in (lambda lo, hi: ~has_pred[lo:hi], lambda lo, hi: np.ones(hi - lo, dtype=bool)):
            for lo in range(0, k, CHUNK):
                got = _starts(lo, min(k, lo + CHUNK), pick, owner, alive)
                if got.size:
                    ids = np.arange(count, count + got.size, dtype=np.int32)
                    owner[got] = ids
                    _close(got, ids, owner, step, found, budget)
                    count += got.size
        del has_pred
    label = owner  # rewritten in place: the cycle of each node, -1 off cycles
    for lo in range(0, k, CHUNK):
        seg = label[lo:lo + CHUNK]
        np.copyto(seg, np.where(seg <= -2, -seg - 2, np.int32(-1)))
    return _listing(label, found[0], limit, budget)


def _close(starts: np.ndarray, ids: np.ndarray, owner: np.ndarray, step: Step, found: list[int],
           budget: Optional[Budget]) -> None:
    """Walk from ``starts`` (named by the consecutive ``ids``), find the cycles among these
    walks, and mark every node on one in ``owner`` as ``-2 - its cycle's number``.

    A walk points to the walk whose path it stopped on; walks of this group on a cycle of
    such pointers stopped on nodes of a real cycle, and the real cycle is the stretches
    from those nodes to the next of them, walked once more."""
    size = starts.size
    if size == 0:
        return
    stop, _ = _walk_all(starts, ids, owner, None, step, budget)
    base = int(ids[0])
    ptr = owner[stop].astype(np.int64) - base  # outside this group (earlier, or a marked cycle): a sink
    ptr[(ptr < 0) | (ptr >= size)] = size
    ptr = np.append(ptr, size).astype(np.int32)
    rounds = max(1, int(size).bit_length() + 1)
    p = ptr.copy()
    for _ in range(rounds):  # after 2^rounds > size jumps, p maps each cycle of walks onto itself
        _tick(budget)
        p = p[p]
    mark = np.zeros(size + 1, dtype=bool)
    mark[p] = True
    del p
    mark[size] = False
    on = np.flatnonzero(mark).astype(np.int32)  # walks on a cycle of walks
    del mark
    if on.size == 0:
        return
    q = np.searchsorted(on, ptr[on]).astype(np.int32)
    lab = np.arange(on.size, dtype=np.int32)
    for _ in range(rounds):
        _tick(budget)
        lab = np.minimum(lab, lab[q])
        q = q[q]
    heads, lab = np.unique(lab, return_inverse=True)
    tag = (-2 - (found[0] + lab)).astype(np.int32)
    found[0] += int(heads.size)
    anchors, at = np.unique(stop[on], return_index=True)
    tag = tag[at]
    del ptr, q, on, lab, heads, stop, at
    cur = anchors.astype(np.intp)
    owner[cur] = tag
    while cur.size:
        _tick(budget)
        nxt, _ = step(cur)
        go = owner[nxt] != tag
        cur, tag = nxt[go], tag[go]
        owner[cur] = tag


def _listing(label: np.ndarray, labels: int, limit: int, budget: Optional[Budget]) -> tuple[list[np.ndarray], int]:
    """The first ``limit`` cycles of ``label`` (-1: on none) by smallest node, each ascending,
    and how many cycles there are; one int32 array of the listed nodes, cut into views."""
    k = label.size
    smallest = np.full(labels, _INT32_MAX, dtype=np.int32)
    for lo in range(0, k, CHUNK):
        _tick(budget)
        idx = np.flatnonzero(label[lo:lo + CHUNK] >= 0)
        np.minimum.at(smallest, label[lo:lo + CHUNK][idx], (idx + lo).astype(np.int32))
    heads = np.flatnonzero(smallest < _INT32_MAX)
    count = int(heads.size)
    keep = heads[np.argsort(smallest[heads], kind="stable")[:limit]]  # cycles by smallest node
    rank = np.full(labels, -1, dtype=np.int32)
    rank[keep] = np.arange(keep.size, dtype=np.int32)
    sizes = np.zeros(keep.size, dtype=np.int64)
    for lo in range(0, k, CHUNK):
        lab = label[lo:lo + CHUNK]
        r = rank[lab[lab >= 0]]
        sizes += np.bincount(r[r >= 0], minlength=keep.size)
    ends = np.cumsum(sizes)
    fill = ends - sizes  # next free place of each cycle
    out = np.empty(int(ends[-1]) if ends.size else 0, dtype=np.int32)
    for lo in range(0, k, CHUNK):  # chunks in order: each cycle's nodes stay ascending
        _tick(budget)
        lab = label[lo:lo + CHUNK]
        idx = np.flatnonzero(lab >= 0)
        r = rank[lab[idx]]
        sel = r >= 0
        idx, r = idx[sel], r[sel]
        order = np.argsort(r, kind="stable")
        idx, r = idx[order], r[order]
        first = np.searchsorted(r, r, side="left")
        out[fill[r] + (np.arange(r.size) - first)] = (idx + lo).astype(np.int32)
        fill += np.bincount(r, minlength=keep.size)
    return np.split(out, ends[:-1]) if keep.size else [], count
