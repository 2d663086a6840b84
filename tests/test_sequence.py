"""Tests of checker.sequence: every kind's single-code answers, lazy code
lists, circuits and array forms agree with each other; the families match
published facts; bad count lines give SequenceError with a position."""

from __future__ import annotations

import time
from itertools import islice
from random import Random

import galois
import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from checker.elab import gf2
from checker.elab import sequence as seqmod
from checker.model import Aig, evaluate
from checker.elab.sequence import (
    LIST_LIMIT,
    LfsrSequence,
    ListSequence,
    SequenceError,
    lfsr_is_maximal,
    make_sequence,
)

GF2 = galois.GF(2)

# Maximal-length tap sets, numbered 1 (lsb) to n (msb), as in the widely
# reproduced published tables of LFSR feedback taps (a fact of the trade).
# Written down from memory, not copied: each is confirmed below with the
# galois package and, for small widths, by walking the register.
PUBLISHED_TAPS = {
    3: [3, 2],
    4: [4, 3],
    5: [5, 3],
    6: [6, 5],
    7: [7, 6],
    8: [8, 6, 5, 4],
    9: [9, 5],
    10: [10, 7],
    11: [11, 9],
    12: [12, 6, 4, 1],
    16: [16, 15, 13, 4],
    24: [24, 23, 22, 17],
    32: [32, 22, 2, 1],
    64: [64, 63, 61, 60],
    128: [128, 126, 101, 99],
}


# ---------------------------------------------------------------------------
# helpers
# ---------------------------------------------------------------------------

def evaluate_circuits(seq, samples: list[int]) -> tuple[list[bool], list[int], list[int]]:
    """member, next and prev circuits of ``seq`` evaluated on every sample at
    once (one bit of a Python int per sample)."""
    aig = Aig()
    bits = [aig.leaf(f"q[{i}]") for i in range(seq.width)]
    m = seq.member(aig, bits)
    nb = seq.next_bits(aig, bits)
    pb = seq.prev_bits(aig, bits)
    assert len(nb) == len(pb) == seq.width
    ones = (1 << len(samples)) - 1
    leaf_values = {}
    for i, b in enumerate(bits):
        v = 0
        for j, c in enumerate(samples):
            v |= ((c >> i) & 1) << j
        leaf_values[b >> 1] = v
    vals = evaluate(aig, leaf_values, [m] + nb + pb, ones)

    def decode(vec: list[int], j: int) -> int:
        return sum(((v >> j) & 1) << i for i, v in enumerate(vec))

    w = seq.width
    member = [bool((vals[0] >> j) & 1) for j in range(len(samples))]
    nxt = [decode(vals[1:1 + w], j) for j in range(len(samples))]
    prv = [decode(vals[1 + w:], j) for j in range(len(samples))]
    return member, nxt, prv


def sample_codes(seq, rng: Random, n_random: int = 300) -> list[int]:
    """All codes for narrow widths; otherwise the sequence's first codes, its
    boundaries' neighbours and random codes."""
    w = seq.width
    if w <= 10:
        return list(range(1 << w))
    picks = set(islice(seq.codes(), 200))
    for c in list(picks)[:50]:
        picks.update(x for x in (c - 1, c + 1, c ^ 1, c ^ (1 << (w - 1))) if 0 <= x < 1 << w)
    picks.update({0, 1, (1 << w) - 1, (1 << w) - 2, 1 << (w - 1)})
    picks.update(rng.getrandbits(w) for _ in range(n_random))
    return sorted(picks)


def check_consistent(seq, rng: Random | None = None, code_limit: int = 5000) -> None:
    """Cross-check every view of ``seq`` against its single-code answers."""
    rng = rng or Random(7)
    w = seq.width
    samples = sample_codes(seq, rng)

    # circuits agree with contains / next / prev
    member, nxt, prv = evaluate_circuits(seq, samples)
    for j, c in enumerate(samples):
        assert member[j] == seq.contains(c), (seq.describe(), c)
        if member[j]:
            assert nxt[j] == seq.next(c), (seq.describe(), c)
            assert prv[j] == seq.prev(c), (seq.describe(), c)
            assert seq.prev(seq.next(c)) == c
            assert seq.next(seq.prev(c)) == c
    if w <= 10:
        assert sum(member) == seq.length()

    # codes() walks next() from first(), through members only, without repeats
    listed = list(islice(seq.codes(), code_limit))
    assert listed[0] == seq.first()
    assert len(set(listed)) == len(listed)
    for a, b in zip(listed, listed[1:]):
        assert seq.contains(a) and seq.next(a) == b
    if seq.length() <= code_limit:
        assert len(listed) == seq.length()
        assert seq.next(listed[-1]) == listed[0]

    # array forms agree too
    if w <= 64:
        arr = np.array(samples, dtype=np.uint64)
        got = seq.member_array(arr)
        assert got.dtype == bool
        assert got.tolist() == [seq.contains(c) for c in samples]
        nx = seq.next_array(arr)
        assert [int(x) for x, m in zip(nx, got) if m] == [seq.next(c) for c in samples if seq.contains(c)]


def walk_lfsr(taps: list[int], width: int, start: int, limit: int) -> list[int]:
    """The orbit of a Fibonacci register written out independently of the module."""
    out, c = [], start
    for _ in range(limit):
        out.append(c)
        fb = 0
        for t in taps:
            fb ^= (c >> (t - 1)) & 1
        c = ((c << 1) | fb) & ((1 << width) - 1)
        if c == start:
            return out
    return out + [None]  # did not come back within the limit


def galois_primitive(taps: list[int]) -> bool:
    # a[j] = sum of a[j - t]: reciprocal feedback polynomial 1 + sum x^t.
    return galois.Poly.Degrees(sorted(taps + [0], reverse=True), field=GF2).is_primitive()


# ---------------------------------------------------------------------------
# every kind, several widths: all views agree
# ---------------------------------------------------------------------------

@pytest.mark.parametrize("width", [1, 2, 3, 5, 8, 10, 17, 64, 300])
@pytest.mark.parametrize("form", ["gray", "johnson", "ring"])
def test_families_consistent(form, width):
    check_consistent(make_sequence(form, [], width))


@pytest.mark.parametrize("width", [4, 8, 12, 16, 64, 400])
def test_bcd_consistent(width):
    check_consistent(make_sequence("bcd", [], width))


@pytest.mark.parametrize("width", sorted(PUBLISHED_TAPS))
def test_lfsr_consistent(width):
    seq = make_sequence("lfsr", PUBLISHED_TAPS[width], width)
    assert isinstance(seq, LfsrSequence)
    check_consistent(seq)


@pytest.mark.parametrize("taps,width,start", [([4, 2], 4, 1), ([6, 3], 6, 5), ([8, 4, 2], 8, 3), ([10, 5], 10, 1)])
def test_short_lfsr_is_its_orbit(taps, width, start):
    seq = make_sequence("lfsr", taps + ["from", start], width)
    assert isinstance(seq, ListSequence) and seq.kind == "lfsr"
    assert list(seq.codes()) == walk_lfsr(taps, width, start, 1 << width)
    check_consistent(seq)


@settings(max_examples=60, deadline=None)
@given(st.integers(1, 10).flatmap(
    lambda w: st.tuples(st.just(w), st.integers(0, (1 << w) - 1), st.integers(0, (1 << w) - 1))))
def test_ranges_consistent(wab):
    width, a, b = wab
    seq = make_sequence("range", [a, b], width)
    assert seq.length() == abs(a - b) + 1
    step = 1 if b >= a else -1
    assert list(seq.codes()) == list(range(a, b + step, step))
    check_consistent(seq)


@settings(max_examples=60, deadline=None)
@given(st.integers(1, 9).flatmap(
    lambda w: st.tuples(st.just(w), st.lists(st.integers(0, (1 << w) - 1), min_size=1, max_size=1 << w, unique=True))))
def test_random_lists_consistent(wl):
    width, codes = wl
    seq = make_sequence("list", codes, width)
    assert list(seq.codes()) == codes
    check_consistent(seq)


@settings(max_examples=15, deadline=None)
@given(st.sampled_from([33, 64, 200]).flatmap(
    lambda w: st.tuples(st.just(w), st.lists(st.integers(0, (1 << w) - 1), min_size=1, max_size=60, unique=True))))
def test_wide_lists_consistent(wl):
    width, codes = wl
    check_consistent(make_sequence("list", codes, width))


@pytest.mark.parametrize("a,b", [(3, 12), (12, 3), (0, 2**64 - 1), (2**64 - 1, 0), (5, 5), (2**63 - 2, 2**63 + 2)])
def test_64bit_ranges_consistent(a, b):
    check_consistent(make_sequence("range", [a, b], 64))


def test_range_contract_example():
    up = make_sequence("range", [3, 12], 4)
    assert list(up.codes()) == list(range(3, 13))
    assert up.next(12) == 3 and up.prev(3) == 12
    down = make_sequence("range", [12, 3], 4)
    assert list(down.codes()) == list(range(12, 2, -1))
    assert down.next(3) == 12


def test_list_contract_example():
    seq = make_sequence("list", [0, 1, 2, 9, 4], 4)
    assert list(seq.codes()) == [0, 1, 2, 9, 4]
    assert seq.next(4) == 0 and seq.next(2) == 9 and seq.prev(0) == 4
    assert not seq.contains(3) and seq.length() == 5


def test_list_at_limit():
    rng = Random(3)
    codes = rng.sample(range(1 << 17), LIST_LIMIT)
    seq = make_sequence("list", codes, 17)
    assert seq.length() == LIST_LIMIT
    arr = np.array(codes[:1000] + [c ^ 1 for c in codes[:1000]], dtype=np.uint64)
    assert seq.member_array(arr).tolist() == [seq.contains(int(c)) for c in arr]
    assert seq.next_array(arr[:1000]).tolist() == codes[1:1001]


def test_list_circuit_is_small_for_runs():
    # A list that is one binary block needs no per-code comparison.
    aig = Aig()
    bits = [aig.leaf(f"q[{i}]") for i in range(16)]
    seq = make_sequence("list", list(range(4096)), 16)
    before = len(aig)
    assert seq.member(aig, bits) != 0
    assert len(aig) - before < 16


def test_circuit_sizes_linear():
    for form, args in [("gray", []), ("johnson", []), ("ring", []), ("bcd", []), ("range", [7, 2**1000])]:
        sizes = []
        for w in (1024, 2048):
            seq = make_sequence(form, args, w)
            aig = Aig()
            bits = [aig.leaf(f"q[{i}]") for i in range(w)]
            seq.member(aig, bits)
            seq.next_bits(aig, bits)
            seq.prev_bits(aig, bits)
            sizes.append(len(aig))
        assert sizes[1] < 2.2 * sizes[0], form
        assert sizes[1] < 40 * 2048, form


# ---------------------------------------------------------------------------
# published facts
# ---------------------------------------------------------------------------

@pytest.mark.parametrize("width", range(1, 11))
def test_gray_is_reflected_binary(width):
    seq = make_sequence("gray", [], width)
    # Reflected binary code, g(i) = i xor (i >> 1): the definition in
    # F. Gray, US patent 2,632,058 (filed 1947, granted 1953), from memory.
    assert list(seq.codes()) == [i ^ (i >> 1) for i in range(1 << width)]
    codes = list(seq.codes())
    for a, b in zip(codes, codes[1:] + codes[:1]):
        assert bin(a ^ b).count("1") == 1  # neighbours, wrap included, differ in one bit


@pytest.mark.parametrize("width", sorted(PUBLISHED_TAPS))
def test_xapp052_taps_are_maximal(width):
    taps = PUBLISHED_TAPS[width]
    assert galois_primitive(taps)
    assert lfsr_is_maximal(taps, width)
    seq = make_sequence("lfsr", taps, width)
    assert seq.length() == 2**width - 1
    if width <= 16:
        orbit = walk_lfsr(taps, width, 1, 1 << width)
        assert len(orbit) == 2**width - 1 and None not in orbit
        assert list(seq.codes()) == orbit


@pytest.mark.parametrize("width", range(1, 13))
def test_johnson_has_2n_codes(width):
    # A twisted-ring (Johnson) counter of n flops has 2n states: common practice.
    seq = make_sequence("johnson", [], width)
    codes = list(seq.codes())
    assert len(codes) == len(set(codes)) == 2 * width == seq.length()
    assert codes[:2] == [0, 1]


def test_ring_is_one_hot():
    seq = make_sequence("ring", [], 6)
    assert list(seq.codes()) == [1, 2, 4, 8, 16, 32]


def test_decade_has_ten_codes_six_unused():
    # A decade (4-bit BCD) counter uses 10 of its 16 codes: a fact of the trade.
    seq = make_sequence("bcd", [], 4)
    assert list(seq.codes()) == list(range(10))
    assert sum(seq.contains(c) for c in range(16)) == 10
    assert [c for c in range(16) if not seq.contains(c)] == [10, 11, 12, 13, 14, 15]


def test_bcd_digits():
    seq = make_sequence("bcd", [], 12)
    assert seq.length() == 1000
    assert seq.next(0x199) == 0x200 and seq.next(0x999) == 0 and seq.prev(0) == 0x999
    assert not seq.contains(0x1A0)


# ---------------------------------------------------------------------------
# maximal length: our test against galois
# ---------------------------------------------------------------------------

@settings(max_examples=120, deadline=None)
@given(st.integers(2, 40).flatmap(
    lambda w: st.tuples(st.just(w), st.lists(st.integers(1, w - 1), max_size=6, unique=True))))
def test_maximal_matches_galois(wt):
    width, others = wt
    taps = [width] + others
    assert lfsr_is_maximal(taps, width) == galois_primitive(taps)


@settings(max_examples=40, deadline=None)
@given(st.integers(2, 12).flatmap(
    lambda w: st.tuples(st.just(w), st.lists(st.integers(1, w), min_size=1, max_size=5, unique=True))))
def test_lfsr_against_walk(wt):
    width, taps = wt
    orbit = walk_lfsr(taps, width, 1, (1 << width) + 1)
    if None in orbit:
        with pytest.raises(SequenceError, match="never comes back"):
            make_sequence("lfsr", taps, width)
        return
    seq = make_sequence("lfsr", taps, width)
    assert list(seq.codes()) == orbit
    assert (seq.length() == 2**width - 1) == (width in taps and galois_primitive(taps))


@pytest.mark.parametrize("width", [25, 33, 48, 64, 96, 100, 127, 128])
@pytest.mark.parametrize("method", ["min", "max"])
def test_galois_primitive_polynomials(width, method):
    # galois's least primitive polynomial is sparse, its greatest dense: the
    # two reduction methods of the module.
    poly = galois.primitive_poly(2, width, method=method)
    taps = [int(d) for d in poly.nonzero_degrees if d > 0]
    assert lfsr_is_maximal(taps, width)
    assert lfsr_is_maximal([width - t for t in taps if t != width] + [width], width)  # reciprocal
    # One term more or less makes the count of terms even, so x + 1 divides it.
    assert not lfsr_is_maximal(taps + [1] if 1 not in taps else [t for t in taps if t != 1], width)


@settings(max_examples=150, deadline=None)
@given(st.integers(1, 60).flatmap(lambda n: st.integers(0, (1 << n) - 1).map(lambda low: (1 << n) | low | 1)))
def test_irreducibility_matches_galois(poly):
    n = poly.bit_length() - 1
    ours = gf2._irreducible(gf2._Gf2Modulus(poly))
    coeffs = [(poly >> i) & 1 for i in range(n, -1, -1)]
    assert ours == galois.Poly(coeffs, field=GF2).is_irreducible()


def test_reducible_with_full_period_factors_reported():
    # Two distinct irreducible factors of degree 13: x^(2^26) = x modulo their
    # product, so only the gcd step of the irreducibility test rejects it.
    p = galois.irreducible_poly(2, 13, method="min") * galois.irreducible_poly(2, 13, method="max")
    taps = [int(d) for d in p.nonzero_degrees if d > 0]
    e = error("lfsr", taps, 26)
    assert "factors" in e.message


@settings(max_examples=80, deadline=None)
@given(st.integers(2, 12).flatmap(
    lambda w: st.tuples(st.just(w), st.integers(1, w - 1), st.integers(1, (1 << w) - 1))),
    st.randoms(use_true_random=False))
def test_periodic_test_matches_walk(wms, rnd):
    width, top, start = wms
    taps = [top] + rnd.sample(range(1, top), rnd.randint(0, top - 1))
    assert seqmod._lfsr_periodic(start, taps, width) == (None not in walk_lfsr(taps, width, start, 1 << width))


@pytest.mark.parametrize("width,k", [(28, 1), (30, 1), (33, 10)])
def test_irreducible_but_not_primitive_rejected(width, k):
    poly = galois.Poly.Degrees([width, k, 0], field=GF2)
    assert poly.is_irreducible() and not poly.is_primitive()
    with pytest.raises(SequenceError, match="not of maximal length"):
        make_sequence("lfsr", [width, k], width)


def complete_factors(n: int) -> tuple[int, ...]:
    """The primes of 2^n - 1 by checker.gf2, asserting that they are all of them."""
    primes, unsplit = gf2.factors_2n_minus_1(n)
    assert unsplit == (), n
    rest = 2**n - 1
    for q in primes:
        assert rest % q == 0, (n, q)
        while rest % q == 0:
            rest //= q
    assert rest == 1, n
    return primes


def test_every_width_up_to_136_is_factored_as_galois_says():
    # galois's table of prime factors of 2^n - 1 (its prime_factors database)
    # is the reference; the module's bounds promise every width up to 136.
    for n in range(2, 137):
        assert list(complete_factors(n)) == sorted(galois.factors(2**n - 1)[0]), n


@pytest.mark.parametrize("n", [256, 512, 1000, 1024])
def test_wide_factorisations_match_galois(n):
    assert list(complete_factors(n)) == sorted(galois.factors(2**n - 1)[0])


def test_powers_of_two_up_to_4096_are_factored():
    # 2^4096 - 1 = F0 F1 ... F11 (the Fermat numbers F_m = 2^(2^m) + 1). Too
    # large for galois's factoring; every prime is checked with its own
    # primality test instead, and the count against the known complete
    # factorisations (F0 .. F4 prime; F5 .. F11 have 2, 2, 2, 2, 3, 4 and 5
    # prime factors, as summed up in Brent, "Factorization of the tenth
    # Fermat number", Math. Comp. 68 (1999)).
    for k in range(1, 13):
        primes = complete_factors(2**k)
        assert all(galois.is_prime(q) for q in primes)
    assert len(complete_factors(4096)) == 5 + 2 + 2 + 2 + 2 + 3 + 4 + 5


def test_published_fermat_factors_divide_and_are_prime():
    for d, primes in gf2.PUBLISHED_FACTORS.items():
        fermat = 2**(d // 2) + 1  # Phi_d(2) for d a power of two
        for q in primes:
            assert fermat % q == 0 and galois.is_prime(q), (d, q)


# Primitive trinomials x^n + x^k + 1 whose degree n is a Mersenne exponent
# (2^n - 1 prime, so irreducible means primitive), from N. Zierler and J.
# Brillhart, "On primitive trinomials (mod 2)", Information and Control 13
# (1968), and N. Zierler, "Primitive trinomials whose degree is a Mersenne
# exponent", Information and Control 15 (1969). The first four are checked
# with galois as well; above that galois takes too long for a unit test.
MERSENNE_TRINOMIALS = [(127, 1), (521, 32), (607, 105), (1279, 216), (2281, 715), (3217, 67)]


@pytest.mark.parametrize("n,k", MERSENNE_TRINOMIALS)
def test_published_primitive_trinomials(n, k):
    assert lfsr_is_maximal([n, k], n) and lfsr_is_maximal([n, n - k], n)  # and the reciprocal
    if n < 2000:
        assert galois_primitive([n, k])
    # Next to it, k + 1 is not primitive (the table lists no such neighbour);
    # whatever galois says, we say the same.
    if n < 700:
        assert lfsr_is_maximal([n, k + 1], n) == galois_primitive([n, k + 1])


@pytest.mark.parametrize("taps,irreducible,maximal", [
    # x^8 + x^4 + x^3 + x + 1: the field of AES (FIPS-197, section 4.2):
    # irreducible, and x has order 51, so not primitive.
    ([8, 4, 3, 1], True, False),
    # x^8 + x^4 + x^3 + x^2 + 1: the Reed-Solomon field of QR codes (ISO/IEC
    # 18004), whose log tables use x as a generator: primitive.
    ([8, 4, 3, 2], True, True),
    # x^128 + x^7 + x^2 + x + 1: the field of GCM (NIST SP 800-38D),
    # irreducible there; primitive by galois.
    ([128, 7, 2, 1], True, True),
    # x^64 + x^4 + x^3 + x + 1: the 64-bit CRC of ISO 3309; primitive by galois.
    ([64, 4, 3, 1], True, True),
])
def test_published_pentanomials(taps, irreducible, maximal):
    poly = galois.Poly.Degrees(taps + [0], field=GF2)
    assert poly.is_irreducible() == irreducible and galois_primitive(taps) == maximal
    assert lfsr_is_maximal(taps, taps[0]) == maximal


def test_a_4096_bit_lfsr_is_settled():
    # x^4096 + x^27 + x^15 + x + 1 was found irreducible by the module's
    # Rabin test (galois takes minutes at this degree); its order is then
    # settled with the 25 primes of 2^4096 - 1 checked above.
    assert lfsr_is_maximal([4096, 27, 15, 1], 4096)
    assert lfsr_is_maximal([4096, 4096 - 27, 4096 - 15, 4095], 4096)  # reciprocal
    assert not lfsr_is_maximal([4096, 27, 15, 2], 4096)


# 2^1277 - 1 is composite with no known factor: no fixed amount of work
# settles a width-1277 register whose polynomial is irreducible.
# x^1277 + x^18 + x^11 + x^10 + 1 is irreducible (galois, below).
IRREDUCIBLE_1277 = [1277, 18, 11, 10]


def test_width_1277_cannot_be_settled():
    assert galois.Poly.Degrees(IRREDUCIBLE_1277 + [0], field=GF2).is_irreducible()
    e = error("lfsr", IRREDUCIBLE_1277, 1277)
    assert "cannot tell whether lfsr 1277 18 11 10 is of maximal length" in e.message
    assert "2^1277 - 1" in e.message and "385-digit" in e.message and e.arg is None
    with pytest.raises(gf2.Unfactored):
        gf2.primitive((1 << 1277) | (1 << 18) | (1 << 11) | (1 << 10) | 1)
    # A reducible polynomial of that degree is answered: it factors.
    e = error("lfsr", [1277, 18, 11], 1277)
    assert "factors" in e.message


@settings(max_examples=60, deadline=None)
@given(st.integers(4, 16).flatmap(lambda n: st.integers(0, (1 << n) - 1).map(lambda low: (1 << n) | low | 1)))
def test_without_factoring_work_never_a_guess(poly):
    # With trial division and both rounds switched off, most parts of
    # 2^n - 1 stay composite: the answer must then be galois's or Unfactored,
    # and "primitive" only when every part was prime anyway.
    n = poly.bit_length() - 1
    saved = (gf2.WORK, gf2.TRIAL_LIMIT, gf2.TRIAL_CANDIDATES, gf2._FACTORS)
    nothing = ((4096, 0, 0, (), 6),)
    gf2.WORK, gf2.TRIAL_LIMIT, gf2.TRIAL_CANDIDATES, gf2._FACTORS = (nothing, nothing), 0, 0, {}
    try:
        _, unsplit = gf2.factors_2n_minus_1(n)
        coeffs = [(poly >> i) & 1 for i in range(n, -1, -1)]
        want = galois.Poly(coeffs, field=GF2).is_primitive()
        try:
            got = gf2.primitive(poly)[0]
        except gf2.Unfactored:
            assert unsplit
            return
        assert got == want
        assert not got or not unsplit
    finally:
        gf2.WORK, gf2.TRIAL_LIMIT, gf2.TRIAL_CANDIDATES, gf2._FACTORS = saved


def run_settled_cases() -> list:
    """Verdicts (or error messages) of lfsr widths that take every path: p - 1,
    the elliptic curve method, both rounds, a published factor, Unfactored."""
    out = []
    for taps, width in [([67, 10, 9, 1], 67), ([101, 7, 6, 1], 101), (IRREDUCIBLE_1277, 1277),
                        ([256, 10, 5, 2], 256), ([28, 1], 28), ([137, 21], 137)]:
        try:
            out.append(lfsr_is_maximal(taps, width))
        except SequenceError as e:
            out.append(e.message)
    return out


def test_the_verdict_does_not_depend_on_the_clock(monkeypatch):
    monkeypatch.setattr(gf2, "_FACTORS", {})
    before = run_settled_cases()
    # 67 and 101: primitive by galois too; 137: galois knows the two prime
    # factors of 2^137 - 1 (20 and 22 digits), the fixed work here does not.
    assert galois_primitive([67, 10, 9, 1]) and galois_primitive([101, 7, 6, 1]) and galois_primitive([137, 21])
    assert before[:2] == [True, True] and before[3:5] == [galois_primitive([256, 10, 5, 2]), False]
    assert "cannot tell" in before[2] and "cannot tell" in before[5] and "2^137 - 1" in before[5]

    # A machine an hour slower per clock reading, and one infinitely fast.
    for name, fake in [("slow", lambda: next(ticks) * 3600.0), ("stopped", lambda: 0.0)]:
        ticks = iter(range(10**9))
        for f in ("monotonic", "perf_counter", "time", "process_time"):
            monkeypatch.setattr(time, f, fake)
        for f in ("monotonic_ns", "perf_counter_ns", "time_ns", "process_time_ns"):
            monkeypatch.setattr(time, f, lambda: int(fake() * 1e9))
        monkeypatch.setattr(gf2, "_FACTORS", {})  # nothing remembered from the run before
        monkeypatch.setattr(gf2, "_CYCLOTOMIC", {})
        assert run_settled_cases() == before, name


# ---------------------------------------------------------------------------
# wide sequences stay symbolic
# ---------------------------------------------------------------------------

def test_64bit_range_is_symbolic_and_fast():
    t = time.monotonic()
    seq = make_sequence("range", [0, 0xFFFFFFFFFFFFFFFF], 64)
    assert seq.length() == 2**64
    aig = Aig()
    bits = [aig.leaf(f"q[{i}]") for i in range(64)]
    assert seq.member(aig, bits) == 1  # every 64-bit code
    seq.next_bits(aig, bits)
    seq.prev_bits(aig, bits)
    assert seq.next(2**64 - 1) == 0 and seq.prev(0) == 2**64 - 1
    assert "2^64 codes" in seq.describe()
    assert time.monotonic() - t < 1.0


def test_wide_maximal_lfsr():
    seq = make_sequence("lfsr", PUBLISHED_TAPS[64] + ["from", 0xDEADBEEF], 64)
    assert seq.length() == 2**64 - 1 and seq.first() == 0xDEADBEEF
    assert seq.contains(2**64 - 1) and not seq.contains(0)
    check_consistent(seq)


def test_describe():
    assert make_sequence("gray", [], 4).describe() == "gray, 16 codes"
    assert make_sequence("johnson", [], 4).describe() == "johnson, 8 codes"
    assert "descending" in make_sequence("range", [12, 3], 4).describe()
    assert "5 codes" in make_sequence("list", [0, 1, 2, 9, 4], 4).describe()
    assert "maximal" in make_sequence("lfsr", [4, 3], 4).describe()


# ---------------------------------------------------------------------------
# errors
# ---------------------------------------------------------------------------

def error(form, args, width) -> SequenceError:
    with pytest.raises(SequenceError) as e:
        make_sequence(form, args, width)
    assert e.value.message == str(e.value)
    return e.value


def test_repeated_code():
    e = error("list", [0, 1, 2, 9, 4, 2], 4)
    assert "code 2" in e.message and "3" in e.message and "6" in e.message
    assert e.arg == 5


def test_code_too_wide():
    e = error("list", [0, 1, 17], 4)
    assert "17" in e.message and "4-bit" in e.message and e.arg == 2
    e = error("range", [3, 16], 4)
    assert e.arg == 1 and "4-bit" in e.message


def test_bcd_width():
    e = error("bcd", [], 6)
    assert "multiple of 4" in e.message and "6" in e.message


def test_taps():
    e = error("lfsr", [6], 5)
    assert "tap 6" in e.message and e.arg == 0
    e = error("lfsr", [5, 3, 3], 5)
    assert "twice" in e.message and e.arg == 2
    e = error("lfsr", [0], 5)
    assert e.arg == 0


def test_lfsr_from():
    e = error("lfsr", [4, 3, "from", 0], 4)
    assert "0" in e.message and e.arg == 3
    e = error("lfsr", [4, 3, "from", 16], 4)
    assert "4-bit" in e.message and e.arg == 3
    assert make_sequence("lfsr", [4, 3, "from", 9], 4).first() == 9


def test_lfsr_never_returns():
    # Without the top bit tapped, 1000 shifts to 0000 and stays there.
    e = error("lfsr", [2, "from", 8], 4)
    assert "never comes back" in e.message and e.arg == 2


def test_non_maximal_above_24_bits():
    # An odd number of taps gives an even number of terms: x + 1 divides the polynomial.
    assert not galois_primitive([32, 31, 30])
    e = error("lfsr", [32, 31, 30], 32)
    assert "maximal" in e.message and "24" in e.message
    e = error("lfsr", [31, 3], 32)  # top bit not tapped
    assert "maximal" in e.message


def test_long_non_maximal_lfsr_hits_limit():
    assert not galois_primitive([20, 19, 17])
    assert None in walk_lfsr([20, 19, 17], 20, 1, LIST_LIMIT)
    e = error("lfsr", [20, 19, 17], 20)
    assert str(LIST_LIMIT) in e.message


def test_list_limit():
    e = error("list", list(range(LIST_LIMIT + 1)), 17)
    assert str(LIST_LIMIT) in e.message and e.arg == LIST_LIMIT


def test_misc_errors():
    assert error("gray", [1], 4).arg == 0
    assert "width" in error("gray", [], 0).message or "bits" in error("gray", [], 0).message
    error("gray", [], 4097)
    error("list", [], 4)
    error("range", [1], 4)
    error("lfsr", [4, "from"], 4)
    error("spiral", [], 4)


def test_non_member_rejected():
    seq = make_sequence("ring", [], 4)
    with pytest.raises(ValueError):
        seq.next(3)
