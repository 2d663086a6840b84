"""Primitive polynomials over GF(2): is a shift register of maximal length?

A Fibonacci shift register of n bits runs through all 2^n - 1 nonzero codes
exactly when its feedback polynomial is primitive over GF(2). The test is
Rabin's irreducibility test (Rabin 1980), then the order of x modulo the
polynomial, which needs the prime factors of 2^n - 1. Those come from the
cyclotomic factors Phi_d(2), d | n, split by trial division, Pollard's rho
method in Brent's variant (Brent 1980), Pollard's p - 1 method and
Miller-Rabin probable-prime tests.
"""

from __future__ import annotations

import math
import random
import time
from functools import lru_cache

import numpy as np

class OutOfTime(Exception):
    """A factorisation step ran past its deadline; the message names the step."""


def primitive(poly: int, seconds: float) -> tuple[bool, str]:
    """Whether ``poly`` (bit i = coefficient of x^i, degree n >= 1) is primitive over GF(2).

    Returns (primitive, why not). Raises :class:`OutOfTime` when the prime
    factors of 2^n - 1 (or the irreducibility test) take longer than
    ``seconds``.
    """
    n = poly.bit_length() - 1
    deadline = time.monotonic() + seconds
    mod = _Gf2Modulus(poly)
    if not _irreducible(mod, deadline):
        return False, "its feedback polynomial factors"
    for q in _prime_factors_2n_minus_1(n, deadline):
        if mod.pow_x(((1 << n) - 1) // q) == 1:
            return False, f"its feedback polynomial is irreducible but x has order below 2^{n} - 1"
    return True, ""


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
        # Over GF(2) squaring spreads the coefficients: sum a_i x^(2i).
        return self.reduce(int("0".join(bin(a)[2:]), 2))

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


def _irreducible(mod: _Gf2Modulus, deadline: float) -> bool:
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
        if i % 64 == 0 and time.monotonic() > deadline:
            raise OutOfTime("testing its feedback polynomial for irreducibility")
    if y != x:
        return False
    return all(_gf2_gcd(mod.poly, yi ^ x) == 1 for yi in kept.values())


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


_FACTORS: dict[int, tuple[int, ...]] = {}


def _prime_factors_2n_minus_1(n: int, deadline: float) -> tuple[int, ...]:
    """The distinct primes dividing 2^n - 1, ascending."""
    got = _FACTORS.get(n)
    if got is not None:
        return got
    primes: set[int] = set()
    try:
        for d in _divisors(n)[1:]:
            if time.monotonic() > deadline:
                raise OutOfTime
            m = _cyclotomic_at_2(d)
            # A prime q dividing Phi_d(2) either divides d or has 2 of order d
            # modulo q, so q = 1 (mod d), and q is odd: q = 1 (mod lcm(2, d)).
            for p in _small_prime_factors(d):
                while m % p == 0:
                    primes.add(p)
                    m //= p
            primes |= _factor(m, d if d % 2 == 0 else 2 * d, deadline)
    except OutOfTime:
        raise OutOfTime(f"factoring 2^{n} - 1") from None
    got = tuple(sorted(primes))
    _FACTORS[n] = got
    return got


def _factor(m: int, step: int, deadline: float) -> set[int]:
    """The distinct primes of ``m``, all of which are 1 modulo ``step``."""
    out: set[int] = set()
    todo = [m]
    while todo:
        x = todo.pop()
        if x == 1:
            continue
        if _probable_prime(x):
            out.add(x)
            continue
        if time.monotonic() > deadline:
            raise OutOfTime
        f = (_trial_factor(x, step) or _rho(x, step, deadline, 1 << 16)
             or _p_minus_1(x, step, deadline) or _rho(x, step, deadline, None))
        todo += [f, x // f]
    return out


def _trial_factor(x: int, step: int, limit: int = 1 << 20) -> int | None:
    # The first divisor of the form k * step + 1 is prime, since every prime
    # factor of x has that form.
    for q in range(step + 1, min(limit, math.isqrt(x)) + 1, step):
        if x % q == 0:
            return q
    return None


def _rho(n: int, step: int, deadline: float, budget: int | None) -> int | None:
    """A proper factor of composite ``n`` by Pollard's rho method in Brent's
    form (Brent 1980), iterating y -> y^e + c with e = ``step``, or None after
    about ``budget`` iterations. Every prime factor p has e | p - 1, so y^e
    takes only (p - 1) / e values modulo p and the cycle closes sooner
    (Brent and Pollard 1981).
    """
    e = step if step > 2 else 2
    batch = 128
    spent = 0
    for c in range(1, 1 << 30, 2):
        y, r, q, g = 2, 1, 1, 1
        x = ys = y
        while g == 1:
            if budget is not None and spent > budget:
                return None
            x = y
            for _ in range(r):
                y = (pow(y, e, n) + c) % n
            k = 0
            while k < r and g == 1:
                ys = y
                for _ in range(min(batch, r - k)):
                    y = (pow(y, e, n) + c) % n
                    q = q * abs(x - y) % n
                g = math.gcd(q, n)
                k += batch
                if time.monotonic() > deadline:
                    raise OutOfTime
            spent += 2 * r
            r *= 2
        if g == n:
            while True:
                ys = (pow(ys, e, n) + c) % n
                g = math.gcd(abs(x - ys), n)
                if g > 1:
                    break
        if g != n:
            return g
    return None  # pragma: no cover


@lru_cache(maxsize=4)
def _primes_below(limit: int) -> list[int]:
    sieve = np.ones(limit, dtype=bool)
    sieve[:2] = False
    for p in range(2, math.isqrt(limit - 1) + 1):
        if sieve[p]:
            sieve[p * p::p] = False
    return np.flatnonzero(sieve).tolist()


def _p_minus_1(n: int, step: int, deadline: float, bound: int = 1_000_000) -> int | None:
    """A proper factor of ``n`` by Pollard's p - 1 method (Pollard 1974),
    stage one with primes up to ``bound``; it finds a prime factor p when
    (p - 1) / ``step`` has no prime power factor above the bound.
    """
    a = pow(3, step, n)
    primes = _primes_below(bound)
    for i in range(0, len(primes), 4096):
        for p in primes[i:i + 4096]:
            pk = p
            while pk * p <= bound:
                pk *= p
            a = pow(a, pk, n)
        g = math.gcd(a - 1, n)
        if 1 < g < n:
            return g
        if g == n:
            return None
        if time.monotonic() > deadline:
            raise OutOfTime
    return None


_SMALL_PRIMES = (2, 3, 5, 7, 11, 13, 17, 19, 23, 29, 31, 37, 41)


def _probable_prime(n: int) -> bool:
    """Miller-Rabin; deterministic below 3.3e24 (the first 13 prime bases),
    otherwise with 24 further pseudo-random bases."""
    if n < 2:
        return False
    for p in _SMALL_PRIMES:
        if n % p == 0:
            return n == p
    d, s = n - 1, 0
    while d % 2 == 0:
        d //= 2
        s += 1
    bases = list(_SMALL_PRIMES)
    if n >= 3_317_044_064_679_887_385_961_981:
        rng = random.Random(n)
        bases += [rng.randrange(2, n - 1) for _ in range(24)]
    for a in bases:
        x = pow(a, d, n)
        if x in (1, n - 1):
            continue
        for _ in range(s - 1):
            x = x * x % n
            if x == n - 1:
                break
        else:
            return False
    return True
