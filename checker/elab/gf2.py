"""Primitive polynomials over GF(2): is a shift register of maximal length?

A Fibonacci shift register of n bits runs through all 2^n - 1 nonzero codes
exactly when its feedback polynomial P is primitive over GF(2): irreducible,
and x of order 2^n - 1 modulo P. Irreducibility is Rabin's test (Rabin 1980).
The order of x needs the prime factors q of 2^n - 1: x^((2^n - 1) / q) must
differ from 1 for each of them.

The verdict depends on the polynomial alone: no clock, no random numbers,
the same on every machine. 2^n - 1 is split into the cyclotomic values
Phi_d(2), d | n, those with d = 4 (mod 8) again by Aurifeuille's identity,
and published factors of the Fermat numbers F7 .. F11 are divided out (each
checked where it is used). The parts are then factored with a fixed amount
of work, in two rounds (:data:`WORK`): trial division, Pollard's p - 1
method and Lenstra's elliptic curve method on fixed curves. Where a
composite part survives both, a polynomial whose x passes the test for every
prime found cannot be called primitive or not: :func:`primitive` raises
:class:`Unfactored`, never guesses. Every n up to 136 is settled, and so are
the powers of two up to 4096 (both checked in tests/test_sequence.py); above
136 many widths are not, and no fixed method could settle them all: 2^n - 1
is not fully factored by anyone for many n up to 4096 (2^1277 - 1 has no
known factor at all).

Primality of the factors is sympy's ``isprime``: below 2^64 a deterministic
Miller-Rabin test, above that the Baillie-PSW test (Baillie and Wagstaff
1980; Pomerance, Selfridge and Wagstaff 1980). Baillie-PSW has no known
counterexample, but it is not proved correct for every number: were some
factor a composite that passes it, a polynomial could be called primitive
whose x misses full order by a factor of that composite. That is the one
assumption of the module.
"""

from __future__ import annotations

import math
from functools import lru_cache
from typing import TYPE_CHECKING, Iterable

if TYPE_CHECKING:
    import numpy as np


def isprime(n: int) -> bool:
    """sympy's isprime, imported on first use: most runs never ask, and importing sympy
    takes about as long as the rest of countersign's imports together."""
    from sympy import isprime as _isprime
    return bool(_isprime(n))


def perfect_power(n: int):
    """sympy's perfect_power (``(base, exponent)`` or False), imported on first use."""
    from sympy.ntheory import perfect_power as _perfect_power
    return _perfect_power(n)


class Unfactored(Exception):
    """2^n - 1 has a composite part that the fixed factoring work does not
    split, and the verdict needs its prime factors; the message names it."""


def primitive(poly: int) -> tuple[bool, str]:
    """Whether ``poly`` (bit i = coefficient of x^i, degree n >= 1) is primitive over GF(2).

    Returns (primitive, why not). Raises :class:`Unfactored` when the
    polynomial is irreducible, x passes the test for every prime found, and
    2^n - 1 keeps a part this module cannot split.
    """
    n = poly.bit_length() - 1
    mod = _Gf2Modulus(poly)
    if not _irreducible(mod):
        return False, "its feedback polynomial factors"
    period = (1 << n) - 1
    tried: set[int] = set()

    def short(parts: Iterable[int]) -> bool:
        # x^(period / c) = 1 for any divisor c > 1 of the period shows that
        # the order of x is short, so composite parts are tried as well.
        for c in parts:
            if c not in tried:
                tried.add(c)
                if mod.pow_x(period // c) == 1:
                    return True
        return False

    why = f"its feedback polynomial is irreducible but x has order below 2^{n} - 1"
    divisors = _divisors(n)[1:]
    quick = {d: _cyclotomic_factors(d, 0) for d in divisors}
    if short(c for d in divisors for c in quick[d][0] + quick[d][1]):
        return False, why
    # The parts the quick round left composite get the long round, smallest
    # first; the first that stays composite puts the answer out of reach.
    for d in sorted((d for d in divisors if quick[d][1]), key=lambda d: (min(quick[d][1]), d)):
        primes, unsplit = _cyclotomic_factors(d, 1)
        if short(primes + unsplit):
            return False, why
        if unsplit:
            raise Unfactored(
                f"deciding needs every prime factor of 2^{n} - 1, and a {len(str(unsplit[0]))}-digit "
                f"composite part of it is beyond this tool's fixed factoring work (trial division, "
                f"Pollard's p - 1 and elliptic curves, with fixed bounds)")
    return True, ""


# ---------------------------------------------------------------------------
# Arithmetic in GF(2)[x]
# ---------------------------------------------------------------------------

def _spread4(v: int) -> int:
    return sum(((v >> i) & 1) << (2 * i) for i in range(4))


_SPREAD_LOW = bytes(_spread4(b & 15) for b in range(256))
_SPREAD_HIGH = bytes(_spread4(b >> 4) for b in range(256))


class _Gf2Modulus:
    """Arithmetic in GF(2)[x] modulo ``poly`` (an int, bit i = coefficient of x^i)."""

    def __init__(self, poly: int) -> None:
        self.poly = poly
        self.n = n = poly.bit_length() - 1
        self.low_mask = (1 << n) - 1
        low = poly & self.low_mask
        self.terms = [i for i in range(n) if (low >> i) & 1]
        # Sparse reduction folds the part above x^n back with one shift per
        # term, dropping n - (second-highest degree) bits a pass; a byte table
        # drops 8 bits a pass whatever the polynomial.
        passes = -(-n // (n - max(self.terms))) if self.terms else 1
        self.table: list[int] | None = None
        if len(self.terms) * passes > 2 * -(-n // 8):
            base = [low]
            for _ in range(7):
                base.append(self.times_x_raw(base[-1]))
            table = [0] * 256
            for v in range(1, 256):
                table[v] = table[v & (v - 1)] ^ base[(v & -v).bit_length() - 1]
            self.table = table

    def times_x_raw(self, a: int) -> int:
        a <<= 1
        return a ^ self.poly if (a >> self.n) & 1 else a

    def reduce(self, a: int) -> int:
        n = self.n
        if self.table is None:
            while a >> n:
                h = a >> n
                a &= self.low_mask
                for t in self.terms:
                    a ^= h << t
            return a
        table = self.table
        while True:
            extra = a.bit_length() - n
            if extra <= 0:
                return a
            s = extra - 8 if extra > 8 else 0
            chunk = a >> (n + s)
            a ^= (chunk << (n + s)) ^ (table[chunk] << s)

    def square(self, a: int) -> int:
        # Over GF(2) squaring spreads the coefficients: sum a_i x^(2i). Each
        # byte spreads to two, its low and its high nibble, by table.
        data = a.to_bytes((a.bit_length() + 7) // 8, "little")
        out = bytearray(2 * len(data))
        out[0::2] = data.translate(_SPREAD_LOW)
        out[1::2] = data.translate(_SPREAD_HIGH)
        return self.reduce(int.from_bytes(out, "little"))

    def pow_x(self, e: int) -> int:
        """x^e modulo the polynomial."""
        r = 1
        for ch in bin(e)[2:]:
            r = self.square(r)
            if ch == "1":
                r = self.times_x_raw(r)
        return r


def _gf2_gcd(a: int, b: int) -> int:
    while b:
        db = b.bit_length()
        while a.bit_length() >= db:
            a ^= b << (a.bit_length() - db)
        a, b = b, a
    return a


def _irreducible(mod: _Gf2Modulus) -> bool:
    """Rabin's test: x^(2^n) = x, and gcd(x^(2^(n/r)) - x, P) = 1 for each prime r | n."""
    n = mod.n
    x = mod.reduce(2)
    wanted = {n // r for r in _small_prime_factors(n)}
    kept: dict[int, int] = {}
    y = x
    for i in range(1, n + 1):
        y = mod.square(y)
        if i in wanted:
            kept[i] = y
    if y != x:
        return False
    return all(_gf2_gcd(mod.poly, yi ^ x) == 1 for yi in kept.values())


# ---------------------------------------------------------------------------
# The prime factors of 2^n - 1
# ---------------------------------------------------------------------------

TRIAL_LIMIT = 1 << 26
TRIAL_CANDIDATES = 1 << 17
"""Trial division tries the candidates q = 1 (mod step) up to TRIAL_LIMIT,
or the first TRIAL_CANDIDATES of them when the step is large."""

_Work = tuple[tuple[int, int, int, tuple[tuple[int, int, int], ...], int], ...]

WORK: tuple[_Work, _Work] = (
    (  # the quick round, on every part
        (320, 100_000, 1_000_000, ((2_000, 150_000, 6),), 6),
        (1_200, 30_000, 300_000, (), 6),
        (4_096, 3_000, 30_000, (), 6),
    ),
    (  # the long round, on what the quick one left composite
        (320, 0, 0, ((2_000, 150_000, 24), (11_000, 1_100_000, 8)), 12),
        (1_200, 0, 0, ((2_000, 150_000, 2),), 12),
        (4_096, 0, 0, (), 12),
    ),
)
"""The fixed work spent on a composite part, by round and by the part's
size: (most bits, Pollard p - 1 stage-one bound and stage-two bound (0: not
run), rounds of the elliptic curve method as (stage-one bound, stage-two
bound, curves), first sigma). Each curve and each p - 1 step costs more on a
larger number, while the chance that what is left after a small factor is
prime shrinks, so larger parts get less. :func:`primitive` runs the long
round only where the quick one left a composite part, and stops at the first
part that the long round cannot split either."""

# Prime factors of Fermat numbers F_m = 2^(2^m) + 1 = Phi_(2^(m+1))(2) that
# were found with far more work than the methods here can spend, keyed by d.
# Each is checked at run time (it must divide and pass the primality test),
# so a wrong entry could only leave a part unsplit, never give a wrong answer.
PUBLISHED_FACTORS: dict[int, tuple[int, ...]] = {
    # F7: Morrison and Brillhart, "A method of factoring and the
    # factorization of F7", Math. Comp. 29 (1975).
    256: (59649589127497217,),
    # F8: Brent and Pollard, "Factorization of the eighth Fermat number",
    # Math. Comp. 36 (1981).
    512: (1238926361552897,),
    # F9: Lenstra, Lenstra, Manasse and Pollard, "The factorization of the
    # ninth Fermat number", Math. Comp. 61 (1993).
    1024: (7455602825647884208337395736200454918783366342657,),
    # F10: Brent, "Factorization of the tenth Fermat number", Math. Comp. 68
    # (1999).
    2048: (4659775785220018543264560743076778192897,),
    # F11: Brent, found with the elliptic curve method in 1988; listed in
    # the F10 paper above.
    4096: (167988556341760475137, 3560841906445833920513),
}


def factors_2n_minus_1(n: int, level: int = 1) -> tuple[tuple[int, ...], tuple[int, ...]]:
    """(the distinct primes found in 2^n - 1, ascending; its composite parts
    left unsplit) after the quick round (level 0) or both rounds (level 1).
    The product of the primes' powers and the parts is 2^n - 1."""
    primes: set[int] = set()
    unsplit: list[int] = []
    for d in _divisors(n)[1:]:
        p, u = _cyclotomic_factors(d, level)
        primes.update(p)
        unsplit += u
    return tuple(sorted(primes)), tuple(sorted(unsplit))


def _small_prime_factors(n: int) -> list[int]:
    out, p = [], 2
    while p * p <= n:
        if n % p == 0:
            out.append(p)
            while n % p == 0:
                n //= p
        p += 1
    if n > 1:
        out.append(n)
    return out


def _divisors(n: int) -> list[int]:
    return [d for d in range(1, n + 1) if n % d == 0]


_CYCLOTOMIC: dict[int, int] = {}


def _cyclotomic_at_2(d: int) -> int:
    """Phi_d(2): 2^d - 1 with the cyclotomic factors of the proper divisors removed."""
    v = _CYCLOTOMIC.get(d)
    if v is None:
        v = (1 << d) - 1
        for e in _divisors(d)[:-1]:
            v //= _cyclotomic_at_2(e)
        _CYCLOTOMIC[d] = v
    return v


_FACTORS: dict[tuple[int, int], tuple[tuple[int, ...], tuple[int, ...]]] = {}


def _cyclotomic_factors(d: int, level: int) -> tuple[tuple[int, ...], tuple[int, ...]]:
    """(distinct primes, unsplit composite parts) of Phi_d(2) after the
    quick round (level 0) or both rounds (level 1); a function of d and
    level alone."""
    got = _FACTORS.get((d, level))
    if got is not None:
        return got
    step = d if d % 2 == 0 else 2 * d
    if level == 1:
        done, parts = _cyclotomic_factors(d, 0)
        primes = set(done)
        unsplit: list[int] = []
        for part in parts:
            p, u = _factor(part, step, WORK[1], composite=True)
            primes |= p
            unsplit += u
        got = (tuple(sorted(primes)), tuple(sorted(unsplit)))
        _FACTORS[(d, level)] = got
        return got
    m = _cyclotomic_at_2(d)
    primes: set[int] = set()
    # A prime q dividing Phi_d(2) either divides d or has 2 of order d
    # modulo q, so q = 1 (mod d), and q is odd: q = 1 (mod lcm(2, d)).
    for p in _small_prime_factors(d):
        while m % p == 0:
            primes.add(p)
            m //= p
    parts = [m]
    if d % 8 == 4 and d > 4:
        # Aurifeuille's identity: with h = d/4 odd, 2^(2h) + 1 =
        # (2^h - 2^((h+1)/2) + 1)(2^h + 2^((h+1)/2) + 1), two coprime odd
        # factors (they differ by a power of two). Phi_d(2) divides
        # 2^(2h) + 1, so its gcds with the two split it.
        h = d // 4
        low = (1 << h) - (1 << ((h + 1) // 2)) + 1
        parts = [math.gcd(m, low), math.gcd(m, (1 << h) + (1 << ((h + 1) // 2)) + 1)]
    for p in PUBLISHED_FACTORS.get(d, ()):
        for i, part in enumerate(parts):
            if part % p == 0 and isprime(p):
                primes.add(p)
                while part % p == 0:
                    part //= p
                parts[i] = part
    unsplit = []
    for part in parts:
        p, u = _factor(_trial_division(part, step, primes), step, WORK[0])
        primes |= p
        unsplit += u
    got = (tuple(sorted(primes)), tuple(sorted(unsplit)))
    _FACTORS[(d, level)] = got
    return got


def _factor(m: int, step: int, work: _Work, composite: bool = False) -> tuple[set[int], list[int]]:
    """(primes, unsplit composite parts) of ``m``, all of whose prime factors
    are 1 modulo ``step``, with the given work on each composite part
    (``composite``: ``m`` is known to be composite)."""
    primes: set[int] = set()
    unsplit: list[int] = []
    todo = [m]
    while todo:
        x = todo.pop()
        if x == 1:
            continue
        if not (composite and x == m) and isprime(x):
            primes.add(x)
            continue
        power = perfect_power(x)
        if power:
            todo.append(power[0])
            continue
        _, pm1_b1, pm1_b2, ecm_rounds, sigma = next(w for w in work if x.bit_length() <= w[0])
        f = (_p_minus_1(x, step, pm1_b1, pm1_b2) if pm1_b1 else None) or _ecm(x, ecm_rounds, sigma)
        if f is None:
            unsplit.append(x)
        else:
            todo += [f, x // f]
    return primes, unsplit


def _trial_division(m: int, step: int, primes: set[int]) -> int:
    """``m`` without its prime factors q = 1 (mod step) below the trial bound,
    which go into ``primes``."""
    # The first divisor of the form k * step + 1 is prime, since every prime
    # factor of m has that form.
    limit = max(TRIAL_LIMIT, step * TRIAL_CANDIDATES)
    q = step + 1
    while q <= limit and q * q <= m:
        if m % q == 0:
            primes.add(q)
            while m % q == 0:
                m //= q
        q += step
    if 1 < m and q * q > m:
        primes.add(m)  # no factor up to its square root
        m = 1
    return m


@lru_cache(maxsize=16)
def _primes_below(limit: int) -> list[int]:
    import numpy as np
    sieve = np.ones(limit, dtype=bool)
    sieve[:2] = False
    for p in range(2, math.isqrt(limit - 1) + 1):
        if sieve[p]:
            sieve[p * p::p] = False
    return np.flatnonzero(sieve).tolist()


def _p_minus_1(n: int, step: int, b1: int, b2: int) -> int | None:
    """A proper factor of ``n`` by Pollard's p - 1 method (Pollard 1974).

    Every prime factor p of n is 1 modulo ``step``, so the base is raised to
    ``step`` first. Stage one finds p when (p - 1) / step has no prime power
    factor above ``b1``; stage two (the standard continuation, Montgomery
    1987) also when it has one more prime factor up to ``b2``.
    """
    import numpy as np
    a = pow(3, step, n)
    primes = _primes_below(b2 + 1)
    stop = int(np.searchsorted(primes, b1, side="right"))
    for i in range(0, stop, 4096):
        for p in primes[i:min(i + 4096, stop)]:
            pk = p
            while pk * p <= b1:
                pk *= p
            a = pow(a, pk, n)
        g = math.gcd(a - 1, n)
        if 1 < g < n:
            return g
        if g == n:
            return None
    # a^q for the primes q above B1, one multiplication a prime, from a table
    # of a^gap for the gaps between consecutive primes.
    powers: dict[int, int] = {}
    q = primes[stop - 1]
    b = pow(a, q, n)
    acc = 1
    for j in range(stop, len(primes)):
        p = primes[j]
        gap = p - q
        t = powers.get(gap)
        if t is None:
            t = powers[gap] = pow(a, gap, n)
        b = b * t % n
        acc = acc * (b - 1) % n
        q = p
        if j % 8192 == 0 or j == len(primes) - 1:
            g = math.gcd(acc, n)
            if 1 < g < n:
                return g
            if g == n:
                return None
    return None


def _ecm(n: int, rounds: tuple[tuple[int, int, int], ...], sigma: int) -> int | None:
    """A proper factor of ``n`` by Lenstra's elliptic curve method (Lenstra
    1987) on Montgomery curves B y^2 = x^3 + A x^2 + x with x-only
    arithmetic (Montgomery 1987), chosen by Suyama's parametrisation with
    sigma = ``sigma``, ``sigma`` + 1, ... (Suyama 1985), with the given
    rounds; stage two is the standard continuation (Montgomery 1987)."""
    for b1, b2, curves in rounds:
        k = _stage_one_multiplier(b1)
        for _ in range(curves):
            f = _ecm_curve(n, sigma, k, b1, b2)
            sigma += 1
            if f is not None:
                return f
    return None


@lru_cache(maxsize=8)
def _stage_one_multiplier(b1: int) -> int:
    k = 1
    for p in _primes_below(b1 + 1):
        pk = p
        while pk * p <= b1:
            pk *= p
        k *= pk
    return k


def _ecm_curve(n: int, sigma: int, k: int, b1: int, b2: int) -> int | None:
    u = (sigma * sigma - 5) % n
    v = 4 * sigma % n
    x0, z0 = pow(u, 3, n), pow(v, 3, n)
    # a24 = (A + 2) / 4 = (v - u)^3 (3u + v) / (16 u^3 v)
    den = 16 * x0 * v % n
    g = math.gcd(den, n)
    if g != 1:
        return g if g != n else None
    a24 = pow(v - u, 3, n) * (3 * u + v) * pow(den, -1, n) % n

    def dbl(x: int, z: int) -> tuple[int, int]:
        s, d = (x + z) ** 2 % n, (x - z) ** 2 % n
        t = s - d
        return s * d % n, t * (d + a24 * t) % n

    def add(x1: int, z1: int, x2: int, z2: int, xd: int, zd: int) -> tuple[int, int]:
        # P1 + P2 from P1, P2 and P1 - P2
        a = (x1 - z1) * (x2 + z2) % n
        b = (x1 + z1) * (x2 - z2) % n
        return zd * (a + b) ** 2 % n, xd * (a - b) ** 2 % n

    def mul(x: int, z: int, e: int) -> tuple[int, int]:
        # Montgomery's ladder: (r0, r1) = (jP, (j+1)P)
        x0_, z0_ = x, z
        x1_, z1_ = dbl(x, z)
        for bit in bin(e)[3:]:
            if bit == "1":
                x0_, z0_ = add(x1_, z1_, x0_, z0_, x, z)
                x1_, z1_ = dbl(x1_, z1_)
            else:
                x1_, z1_ = add(x1_, z1_, x0_, z0_, x, z)
                x0_, z0_ = dbl(x0_, z0_)
        return x0_, z0_

    # Stage one: Q = kP with k the product of the prime powers up to b1.
    qx, qz = mul(x0, z0, k)
    g = math.gcd(qz, n)
    if g != 1:
        return g if g != n else None

    # Stage two: a prime p in (b1, b2] is i*w +- j with j < w/2 odd and
    # prime to w; if pQ = O modulo some prime factor, then x(i*w*Q) = x(jQ)
    # there, and the cross product X_(iw) Z_j - X_j Z_(iw) collects it.
    w = 2310
    js = [j for j in range(1, w // 2, 2) if math.gcd(j, w) == 1]
    x2, z2 = dbl(qx, qz)
    baby = {1: (qx, qz), 3: add(x2, z2, qx, qz, qx, qz)}
    for j in range(5, w // 2, 2):
        baby[j] = add(*baby[j - 2], x2, z2, *baby[j - 4])  # (j-2)Q + 2Q
    wx, wz = mul(qx, qz, w)
    i = max(1, b1 // w)
    gpx, gpz = mul(qx, qz, i * w)  # G_i = i*w*Q
    gx, gz = mul(qx, qz, (i + 1) * w)  # G_(i+1)
    gx, gz, gpx, gpz = gpx, gpz, gx, gz  # (gx, gz) = G_i, (gpx, gpz) = G_(i+1)
    is_prime = _prime_flags(b2)
    acc = 1
    while i * w - w // 2 <= b2:
        for j in js:
            lo, hi = i * w - j, i * w + j
            if (b1 < lo <= b2 and is_prime[lo]) or (b1 < hi <= b2 and is_prime[hi]):
                bx, bz = baby[j]
                acc = acc * (gx * bz - bx * gz) % n
        # G_(i+2) = G_(i+1) + W, their difference G_i
        gx, gz, gpx, gpz = gpx, gpz, *add(gpx, gpz, wx, wz, gx, gz)
        i += 1
    g = math.gcd(acc, n)
    return g if 1 < g < n else None


@lru_cache(maxsize=16)
def _prime_flags(limit: int) -> np.ndarray:
    import numpy as np
    flags = np.zeros(limit + 1, dtype=bool)
    flags[_primes_below(limit + 1)] = True
    return flags
