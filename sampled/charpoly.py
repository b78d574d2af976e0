"""Exact characteristic polynomials of floating-point matrices.

Every double is a dyadic rational ``m 2^e``; scaling a matrix by a power of two makes it an integer
matrix ``N = 2^E M`` whose characteristic polynomial the Faddeev-LeVerrier recursion gives in exact
integer arithmetic (its divisions by k are exact for integer matrices). Then
``det(lambda I - M) = sum_k c_k(N) 2^(-E k) lambda^(n-k)``. The result is the characteristic
polynomial of the matrix *as stored*, so a verdict from it is exact for those numbers.

References
----------
U. J. J. Le Verrier (1840); D. K. Faddeev and V. N. Faddeeva, *Computational Methods of Linear
Algebra*, 1963, section 24 (the recursion M_k = A M_(k-1) + c_(k-1) I, c_k = -tr(A M_k)/k).
"""

from __future__ import annotations

import math
from fractions import Fraction

import numpy as np

from sampled import poly as P


def _dyadic_scale(values: np.ndarray) -> int:
    """Smallest E >= 0 with every value times 2^E an integer."""
    e_max = 0
    for x in values.ravel():
        if x == 0:
            continue
        m, e = math.frexp(float(x))  # x = m 2^e, 0.5 <= |m| < 1, m has 53 bits
        # x = (m 2^53) 2^(e-53): integer mantissa times 2^(e-53).
        shift = 53 - e
        # Remove trailing zero bits of the mantissa.
        mant = int(m * (1 << 53))
        while mant and mant % 2 == 0 and shift > 0:
            mant //= 2
            shift -= 1
        e_max = max(e_max, shift)
    return e_max


def characteristic_polynomial(matrix: np.ndarray) -> P.ExactPoly:
    """``det(lambda I - A)`` exactly, descending powers, monic, for a finite float matrix."""
    a = np.asarray(matrix, dtype=float)
    n = a.shape[0]
    if n == 0:
        return P.ONE
    if not np.all(np.isfinite(a)):
        raise ValueError("matrix entries must be finite")
    e = _dyadic_scale(a)
    scale = 1 << e
    nmat = [[int(Fraction(float(a[i, j])) * scale) for j in range(n)] for i in range(n)]
    coeffs = [1]
    m = [[int(i == j) for j in range(n)] for i in range(n)]  # M_1 = I
    for k in range(1, n + 1):
        am = [[sum(nmat[i][t] * m[t][j] for t in range(n) if m[t][j]) for j in range(n)] for i in range(n)]
        trace = sum(am[i][i] for i in range(n))
        c = -trace // k
        assert c * k == -trace, "Faddeev-LeVerrier division must be exact for integer matrices"
        coeffs.append(c)
        if k < n:
            m = am
            for i in range(n):
                m[i][i] += c
    return tuple(Fraction(c, 1 << (e * k)) if e else Fraction(c) for k, c in enumerate(coeffs))
