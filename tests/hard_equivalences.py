"""Generators of the hard `equal ... after` pairs users meet (issue 13, item 4), shared by
tests/test_hard_equal.py and tests/perf/bench_hard_equal.py.

Scenarios of our own: a fermenter's valve-step tally re-implemented as a Gray
counter (so only one wire of the bus to the panel changes a step) with a
Gray-to-binary decoder at the panel; and a bottle conveyor's diverter lanes
kept by a one-hot ring of flops against a binary lane counter, the ring's
lane number encoded back to binary by OR gates.
"""

from __future__ import annotations

from typing import Optional


def _low_zero(name: str, i: int) -> str:
    """`z[i]`: every bit of `name` below i is 0 (z[0] = 1)."""
    return f"z[{i}]"


def valve_tally(n: int, mutation: Optional[str] = None) -> str:
    """An n-bit binary tally (T flops, carry chain) against an n-bit Gray counter
    (T flops toggled by the parity rule) whose outputs are decoded to binary.

    Both step on ``adv`` and clear on ``rst``; both show the tally as ``n[n-1:0]``.
    ``mutation`` changes one gate of the Gray design: ``"toggle and->or"`` (the
    toggle of bit 2 takes an OR where an AND belongs) or ``"decoder xor->xnor"``
    (the decoder's bit 1 inverted).
    """
    assert n >= 4
    top = n - 1
    b = ["design valve_bin", "  in adv, rst",
         f"  node c[{n}:0] = {{c[{top}:0] & q[{top}:0], adv}}",  # c[i]: advance and every lower bit 1
         f"  flop q[{top}:0] : T (t = c[{top}:0]) clear rst",
         f"  out n[{top}:0] = q", "end"]
    g = ["design valve_gray", "  in adv, rst",
         "  node odd = xor(" + ", ".join(f"g[{i}]" for i in range(n)) + ")",
         # z[i]: every bit below i is 0
         f"  node z[{n - 1}:0] = {{z[{n - 2}:0] & !g[{n - 2}:0], 1}}"]
    toggles = []
    for i in range(n):
        if i == 0:
            t = "adv & !odd"
        elif i < top:
            op = "|" if mutation == "toggle and->or" and i == 2 else "&"
            t = f"adv & odd {op} g[{i - 1}] & z[{i - 1}]"
        else:
            t = f"adv & odd & (g[{top}] | g[{top - 1}]) & z[{top - 1}]"
        toggles.append(f"  flop g[{i}] : T (t = {t}) clear rst")
    g += toggles[::-1]
    dec = []
    for i in range(n):
        if i == top:
            dec.append(f"g[{top}]")
        else:
            op = "xnor" if mutation == "decoder xor->xnor" and i == 1 else "xor"
            dec.append(f"{op}(d[{i + 1}], g[{i}])")
    g += [f"  node d[{top}:0] = {{{', '.join(reversed(dec))}}}", f"  out n[{top}:0] = d", "end"]
    chk = ["check valve_steps of valve_bin", "  equal valve_gray after rst", "end"]
    return "\n".join(b + g + chk) + "\n"


def diverter(n: int, mutation: Optional[str] = None) -> str:
    """A conveyor diverter's n lanes (n a power of two): a binary lane counter of
    log2(n) T flops against a one-hot ring of n D flops, the ring's lane encoded
    to binary by one OR gate per bit. Both show ``lane`` and ``home`` (lane 0).

    ``mutation``: ``"encoder drops lane 3"`` (lane 3 left out of its OR gates),
    or ``"ring skips"`` (one ring flop takes the lane before the one behind it).
    """
    k = n.bit_length() - 1
    assert 1 << k == n and k >= 2
    b = ["design lanes_bin", "  in adv, rst",
         f"  node c[{k}:0] = {{c[{k - 1}:0] & p[{k - 1}:0], adv}}",
         f"  flop p[{k - 1}:0] : T (t = c[{k - 1}:0]) clear rst",
         f"  out lane[{k - 1}:0] = p",
         "  out home = nor(" + ", ".join(f"p[{j}]" for j in range(k)) + ")", "end"]
    h = ["design lanes_ring", "  in adv, rst", f"  flop h[0] : D (d = mux(adv, h[0], h[{n - 1}])) preset rst"]
    for i in reversed(range(1, n)):
        src = i - 1
        if mutation == "ring skips" and i == 2:
            src = 0
        h.append(f"  flop h[{i}] : D (d = mux(adv, h[{i}], h[{src}])) clear rst")
    items = []
    for j in reversed(range(k)):
        lanes = [i for i in range(n) if (i >> j) & 1 and not (mutation == "encoder drops lane 3" and i == 3)]
        items.append("or(" + ", ".join(f"h[{i}]" for i in lanes) + ")")
    h += [f"  out lane[{k - 1}:0] = {{{', '.join(items)}}}", "  out home = h[0]", "end"]
    chk = ["check lane_steps of lanes_bin", "  equal lanes_ring after rst", "end"]
    return "\n".join(b + h + chk) + "\n"
