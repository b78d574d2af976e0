"""Matrix phi functions and hold integrals from one block matrix exponential.

For a square matrix ``M`` the phi functions are

    phi_0(M) = exp(M),   phi_1(M) = sum_k M^k / (k+1)!,   phi_2(M) = sum_k M^k / (k+2)!,

so that ``exp(M) = I + M phi_1(M)`` and ``phi_1(M) = I + M phi_2(M)``. With ``M = A T`` they give
the zero-order-hold integral ``int_0^T exp(A s) ds = T phi_1(A T)`` and the triangle-hold integral
``int_0^T exp(A s) (T - s) ds = T^2 phi_2(A T)``, and they give the delta form of a hold
equivalent, ``(Phi - I)/T = A phi_1(A T)``, without subtracting the identity from a matrix that is
close to it (the subtraction loses every digit when ``||A T|| << 1``).

All are read off one exponential of a block upper-triangular matrix (Van Loan 1978):

    expm([[M, I, 0], [0, 0, I], [0, 0, 0]]) = [[exp(M), phi_1(M), phi_2(M)], [0, I, I], [0, 0, I]].

References
----------
C. F. Van Loan, "Computing integrals involving the matrix exponential", IEEE Trans. Automatic
Control 23(3), 1978, pp. 395-404, section 2 (block-triangular exponentials).
M. Hochbruck and A. Ostermann, "Exponential integrators", Acta Numerica 19, 2010, pp. 209-286,
section 2.1 (definition and recurrence of the phi functions).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import scipy.linalg


@dataclass(frozen=True)
class PhiFunctions:
    """``exp(M)``, ``phi_1(M)`` and (when asked for) ``phi_2(M)`` of one matrix ``M``.

    Attributes
    ----------
    exp, phi1 : ndarray (n, n)
    phi2 : ndarray (n, n) or None
    """

    exp: np.ndarray
    phi1: np.ndarray
    phi2: np.ndarray | None


def phi_functions(m: np.ndarray, order: int = 1) -> PhiFunctions:
    """Compute ``exp(M)``, ``phi_1(M)`` and, for ``order=2``, ``phi_2(M)`` from one exponential.

    Parameters
    ----------
    m : ndarray (n, n)
        The (dimensionless) matrix, usually ``A T``.
    order : {1, 2}
        Highest phi function wanted.

    Notes
    -----
    scipy.linalg.expm (scaling and squaring with Pade approximation; Al-Mohy and Higham 2009) is
    accurate in the normwise relative sense for the whole block, so ``phi_1`` keeps full relative
    accuracy when ``||M||`` is tiny (there it is close to ``I``), which is the fast-sampling case.
    """
    m = np.asarray(m, dtype=float)
    n = m.shape[0]
    if order not in (1, 2):
        raise ValueError(f"order must be 1 or 2, got {order!r}")
    if n == 0:
        empty = np.zeros((0, 0))
        return PhiFunctions(empty, empty, empty if order == 2 else None)
    eye = np.eye(n)
    size = (order + 1) * n
    big = np.zeros((size, size))
    big[:n, :n] = m
    big[:n, n : 2 * n] = eye
    if order == 2:
        big[n : 2 * n, 2 * n :] = eye
    e = scipy.linalg.expm(big)  # Van Loan (1978), section 2
    return PhiFunctions(
        exp=e[:n, :n],
        phi1=e[:n, n : 2 * n],
        phi2=e[:n, 2 * n :] if order == 2 else None,
    )


@dataclass(frozen=True)
class HoldIntegrals:
    """Shift and delta forms of one hold interval of length ``h``.

    Attributes
    ----------
    phi : ndarray (n, n)
        ``exp(A h)``.
    a_delta : ndarray (n, n)
        ``(exp(A h) - I)/h = A phi_1(A h)`` [1/s], formed without the subtraction.
    gamma : ndarray (n, 1)
        ``int_0^h exp(A s) ds B = h phi_1(A h) B``.
    b_delta : ndarray (n, 1)
        ``gamma / h = phi_1(A h) B``.
    ramp : ndarray (n, 1) or None
        ``h phi_2(A h) B = (1/h) int_0^h exp(A s) (h - s) ds B`` (triangle hold), when asked.
    """

    phi: np.ndarray
    a_delta: np.ndarray
    gamma: np.ndarray
    b_delta: np.ndarray
    ramp: np.ndarray | None


def hold_integrals(a: np.ndarray, b: np.ndarray, h: float, ramp: bool = False) -> HoldIntegrals:
    """Exponential and input integrals of ``dx/dt = A x + B u`` over an interval ``h`` [s].

    Parameters
    ----------
    a : ndarray (n, n) [1/s]
    b : ndarray (n, 1)
    h : float [s]
        Interval length, ``h >= 0``; ``h = 0`` gives ``phi = I``, ``gamma = 0``, ``a_delta = A``.
    ramp : bool
        Also return the triangle-hold integral ``h phi_2(A h) B``.
    """
    a = np.asarray(a, dtype=float)
    n = a.shape[0]
    b = np.asarray(b, dtype=float).reshape(n, -1) if n else np.zeros((0, 1))
    f = phi_functions(a * h, order=2 if ramp else 1)
    a_delta = a @ f.phi1
    b_delta = f.phi1 @ b
    return HoldIntegrals(
        phi=f.exp,
        a_delta=a_delta,
        gamma=h * b_delta,
        b_delta=b_delta,
        ramp=(h * (f.phi2 @ b)) if ramp and f.phi2 is not None else None,
    )
