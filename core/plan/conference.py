"""Conference matrices: the building blocks of definitive screening designs.

A conference matrix C of order n has zeros on its diagonal, +1 or -1 everywhere
else, and C'C = (n - 1) I. Folding one over (C, then -C) and adding a centre
run gives a definitive screening design (Xiao, Lin & Bai 2012, J. Quality
Technology; from memory).

Constructions used here:

- Paley's, for n = q + 1 with q a prime power (Paley 1933): rows and columns
  indexed by GF(q), Q[a, b] = chi(a - b) with chi the quadratic character;
  C = [[0, 1'], [e, Q]] with e = 1 (q = 1 mod 4, C symmetric) or e = -1
  (q = 3 mod 4, C antisymmetric). GF(q) for q = p^k is written as the
  polynomials over GF(p) modulo an irreducible polynomial of degree k.
- Doubling an antisymmetric one: for S antisymmetric of order n,
  [[S, S + I], [S - I, -S]] is antisymmetric of order 2n (common practice for
  skew Hadamard matrices; the identity is checked in tests/plan). It gives 16
  from 8.

No conference matrix of order 22 exists (21 is not a sum of two squares,
Belevitch's condition; from memory): 21 or 22 factors use the order-24 one
with columns left over.
"""
from __future__ import annotations

from functools import lru_cache
from itertools import product

import numpy as np

from ..errors import PlanError

__all__ = ["conference_matrix", "conference_order", "LARGEST_ORDER", "SOURCES"]

LARGEST_ORDER = 30
# how each order up to LARGEST_ORDER is built: ("paley", q) or ("double", half)
SOURCES = {4: ("paley", 3), 6: ("paley", 5), 8: ("paley", 7), 10: ("paley", 9),
           12: ("paley", 11), 14: ("paley", 13), 16: ("double", 8), 18: ("paley", 17),
           20: ("paley", 19), 24: ("paley", 23), 26: ("paley", 25),
           28: ("paley", 27), 30: ("paley", 29)}


def conference_order(columns: int) -> int:
    """The smallest order with a conference matrix of at least ``columns`` columns."""
    for n in sorted(SOURCES):
        if n >= columns:
            return n
    raise PlanError(f"{columns} columns are more than the conference matrices here cover "
                    f"(up to {LARGEST_ORDER})")


def _prime_power(q: int) -> tuple[int, int]:
    for p in range(2, q + 1):
        if q % p == 0:
            k, r = 0, q
            while r % p == 0:
                r //= p
                k += 1
            if r != 1:
                raise PlanError(f"{q} is not a prime power")
            return p, k
    raise PlanError(f"{q} is not a prime power")


def _irreducible(p: int, k: int) -> tuple[int, ...]:
    """Lowest coefficients of a monic irreducible polynomial of degree k over GF(p).

    For k <= 3 a polynomial without a root in GF(p) is irreducible (a factor
    would have degree 1).
    """
    if k == 1:
        return (0,)
    if k > 3:
        raise PlanError(f"GF({p}^{k}) is not needed here")
    for low in product(range(p), repeat=k):
        if low[0] == 0:
            continue
        if all((x ** k + sum(c * x ** i for i, c in enumerate(low))) % p for x in range(p)):
            return low
    raise PlanError(f"no irreducible polynomial of degree {k} over GF({p})")


def _field(q: int):
    """Elements of GF(q) as coefficient tuples, with subtraction and squaring."""
    p, k = _prime_power(q)
    low = _irreducible(p, k)
    elements = list(product(range(p), repeat=k))

    def sub(a, b):
        return tuple((x - y) % p for x, y in zip(a, b))

    def mul(a, b):
        prod = [0] * (2 * k - 1)
        for i, x in enumerate(a):
            for j, y in enumerate(b):
                prod[i + j] = (prod[i + j] + x * y) % p
        # x^k = -(low), reduced from the top down
        for d in range(2 * k - 2, k - 1, -1):
            c = prod[d]
            if c:
                prod[d] = 0
                for i, lc in enumerate(low):
                    prod[d - k + i] = (prod[d - k + i] - c * lc) % p
        return tuple(prod[:k])

    return elements, sub, mul


def _paley(q: int) -> np.ndarray:
    elements, sub, mul = _field(q)
    zero = tuple([0] * len(elements[0]))
    squares = {mul(a, a) for a in elements if a != zero}
    chi = {a: (0 if a == zero else (1 if a in squares else -1)) for a in elements}
    Q = np.array([[chi[sub(a, b)] for b in elements] for a in elements], dtype=float)
    n = q + 1
    C = np.zeros((n, n))
    C[0, 1:] = 1.0
    C[1:, 0] = 1.0 if q % 4 == 1 else -1.0
    C[1:, 1:] = Q
    return C


def _double(S: np.ndarray) -> np.ndarray:
    eye = np.eye(len(S))
    return np.block([[S, S + eye], [S - eye, -S]])


@lru_cache(maxsize=None)
def _built(n: int) -> np.ndarray:
    how, arg = SOURCES[n]
    C = _paley(arg) if how == "paley" else _double(_built(arg))
    C.setflags(write=False)
    return C


def conference_matrix(n: int) -> np.ndarray:
    """The conference matrix of order ``n`` (an even order from 4 to 30 other than 22).

    Returns a read-only (n, n) array with zeros on the diagonal and +-1 elsewhere.
    """
    if n not in SOURCES:
        raise PlanError(f"no conference matrix of order {n} is built here: orders "
                        f"{', '.join(str(k) for k in sorted(SOURCES))}")
    return _built(n)
