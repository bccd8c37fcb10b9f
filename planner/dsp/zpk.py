"""Analog prototypes to digital second-order sections, in numpy alone.

The steps of an IIR crossover design, as scipy.signal takes them: the
Butterworth prototype (``buttap``), the frequency transforms to a cut-off
(``lp2lp_zpk``, ``lp2hp_zpk``), the bilinear transform (``bilinear_zpk``) and
the pairing of poles and zeros into second-order sections (``zpk2sos``, its
digital ``"nearest"`` pairing). They follow scipy.signal's algorithms
(scipy 1.17, BSD licence) operation for operation, so the sections are the
same numbers to the last bit (the tests compare them with scipy.signal over
every family, order, kind and rate): a project of these filters is checked
without importing scipy.signal, whose import takes most of a command's
start-up time.

References
----------
.. [1] A. V. Oppenheim and R. W. Schafer, "Discrete-Time Signal Processing",
   3rd ed., sec. 7.2.2 (the bilinear transform).
.. [2] S. Butterworth, "On the Theory of Filter Amplifiers", Wireless
   Engineer, vol. 7, 1930.
"""

from __future__ import annotations

import numpy as np

__all__ = ["buttap", "lp2lp_zpk", "lp2hp_zpk", "bilinear_zpk", "zpk2sos"]


def buttap(order: int):
    """Zeros, poles and gain of the analog Butterworth lowpass of ``order``, cut-off
    1 rad/s [2]_: poles ``-exp(j pi m / (2 N))`` for ``m = -N+1, -N+3, ..., N-1``."""
    n = int(order)
    m = np.arange(-n + 1, n, 2, dtype=np.float64)
    return np.asarray([], dtype=np.float64), -np.exp(1j * np.pi * m / (2 * n)), 1.0


def lp2lp_zpk(z, p, k, wo: float = 1.0):
    """A lowpass prototype (cut-off 1 rad/s) moved to cut-off ``wo`` rad/s: ``s -> s / wo``."""
    z, p = np.atleast_1d(np.asarray(z)), np.atleast_1d(np.asarray(p))
    wo = float(wo)
    degree = _relative_degree(z, p)
    return wo * z, wo * p, k * wo ** degree


def lp2hp_zpk(z, p, k, wo: float = 1.0):
    """A lowpass prototype turned into a highpass of cut-off ``wo`` rad/s: ``s -> wo / s``
    (the zeros at infinity move to DC)."""
    z, p = np.atleast_1d(np.asarray(z)), np.atleast_1d(np.asarray(p))
    wo = float(wo)
    degree = _relative_degree(z, p)
    z_hp = np.concatenate((wo / z, np.zeros(degree)))
    return z_hp, wo / p, k * np.real(np.prod(-z) / np.prod(-p))


def bilinear_zpk(z, p, k, fs: float):
    """The bilinear transform ``s = 2 fs (z - 1) / (z + 1)`` of zeros, poles and gain [1]_
    (the zeros at infinity move to Nyquist, ``z = -1``)."""
    z, p = np.atleast_1d(np.asarray(z)), np.atleast_1d(np.asarray(p))
    degree = _relative_degree(z, p)
    fs2 = 2.0 * float(fs)
    z_z = np.concatenate(((fs2 + z) / (fs2 - z), -np.ones(degree)))
    p_z = (fs2 + p) / (fs2 - p)
    return z_z, p_z, k * np.real(np.prod(fs2 - z) / np.prod(fs2 - p))


def _relative_degree(z: np.ndarray, p: np.ndarray) -> int:
    degree = p.shape[0] - z.shape[0]
    if degree < 0:
        raise ValueError("improper transfer function: fewer poles than zeros")
    return degree


def zpk2sos(z, p, k) -> np.ndarray:
    """Digital zeros, poles and gain as second-order sections ``[b0, b1, b2, 1, a1, a2]``.

    Poles are taken from the one nearest the unit circle outwards and each is
    paired with the zeros nearest to it; the sections are filled from the last,
    so that the poles nearest the unit circle come last, and the gain goes into
    the first section (scipy.signal's ``zpk2sos``, ``pairing="nearest"``).
    """
    z, p = np.asarray(z), np.asarray(p)
    k = np.asarray(k)
    if len(z) == len(p) == 0:
        return np.asarray([[k, 0.0, 0.0, 1.0, 0.0, 0.0]])
    p = np.concatenate((p, np.zeros(max(len(z) - len(p), 0))))
    z = np.concatenate((z, np.zeros(max(len(p) - len(z), 0))))
    n_sections = (max(len(p), len(z)) + 1) // 2
    if len(p) % 2 == 1:
        p = np.concatenate((p, [0.0]))
        z = np.concatenate((z, [0.0]))
    # One of each complex pair (positive imaginary part), then the real ones.
    z = np.concatenate(_cplxreal(z))
    p = np.concatenate(_cplxreal(p))
    if not np.isreal(k):
        raise ValueError("k must be real")
    k = k.real

    def idx_worst(q):                 # the pole nearest the unit circle
        return np.argmin(np.abs(1 - np.abs(q)))

    sos = np.zeros((n_sections, 6))
    for si in range(n_sections - 1, -1, -1):   # a loop over sections (at most a few)
        p1_idx = idx_worst(p)
        p1 = p[p1_idx]
        p = np.delete(p, p1_idx)
        if np.isreal(p1) and np.isreal(p).sum() == 0:
            # The last real pole: a first-order section with the nearest real zero.
            z1_idx = _nearest_idx(z, p1, "real")
            z1 = z[z1_idx]
            z = np.delete(z, z1_idx)
            sos[si] = _section([z1, 0], [p1, 0])
        elif (len(p) + 1 == len(z) and not np.isreal(p1) and np.isreal(p).sum() == 1
              and np.isreal(z).sum() == 1):
            # One real pole and one real zero left: this pole takes a complex zero.
            z1_idx = _nearest_idx(z, p1, "complex")
            z1 = z[z1_idx]
            z = np.delete(z, z1_idx)
            sos[si] = _section([z1, z1.conj()], [p1, p1.conj()])
        else:
            if np.isreal(p1):
                real = np.flatnonzero(np.isreal(p))
                p2_idx = real[idx_worst(p[real])]
                p2 = p[p2_idx]
                p = np.delete(p, p2_idx)
            else:
                p2 = p1.conj()
            if len(z) > 0:
                z1_idx = _nearest_idx(z, p1, "any")
                z1 = z[z1_idx]
                z = np.delete(z, z1_idx)
                if not np.isreal(z1):
                    sos[si] = _section([z1, z1.conj()], [p1, p2])
                elif len(z) > 0:
                    z2_idx = _nearest_idx(z, p1, "real")
                    z2 = z[z2_idx]
                    z = np.delete(z, z2_idx)
                    sos[si] = _section([z1, z2], [p1, p2])
                else:
                    sos[si] = _section([z1], [p1, p2])
            else:
                sos[si] = _section([], [p1, p2])
    sos[0][:3] *= k
    return sos


def _nearest_idx(fro: np.ndarray, to, which: str) -> int:
    """Index of the element of ``fro`` nearest to ``to`` among the real ones, the complex
    ones or any."""
    order = np.argsort(np.abs(fro - to))
    if which == "any":
        return order[0]
    mask = np.isreal(fro[order])
    if which == "complex":
        mask = ~mask
    return order[np.nonzero(mask)[0][0]]


def _section(z, p) -> np.ndarray:
    """One section from up to two zeros and two poles (gain 1)."""
    sos = np.zeros(6)
    z, p = np.atleast_1d(np.asarray(z)), np.atleast_1d(np.asarray(p))
    k = np.asarray(1, dtype=np.result_type(np.real(z), np.real(p), 1))
    if np.issubdtype(k.dtype, np.integer):
        k = k.astype(np.float64)
    b = np.multiply(np.atleast_1d(k), _poly(z))
    a = np.atleast_1d(_poly(p))
    sos[3 - len(b):3] = b
    sos[6 - len(a):6] = a
    return sos


def _poly(roots: np.ndarray) -> np.ndarray:
    """Coefficients of the monic polynomial with ``roots`` (real when they come in
    conjugate pairs), by successive convolutions."""
    roots = np.atleast_1d(np.asarray(roots))
    if roots.shape[0] == 0:
        return np.asarray(1.0, dtype=np.real(roots).dtype)
    a = np.ones((1,), dtype=roots.dtype)
    one = np.ones_like(roots[0])
    for r in roots:                   # at most two roots
        a = np.convolve(a, np.stack((one, -r)), mode="full")
    if np.iscomplexobj(a):
        c = np.asarray(roots, dtype=np.complex128)
        if np.all(np.sort(np.imag(c)) == np.sort(np.imag(np.conj(c)))):
            a = np.array(np.real(a), copy=True)
    return a


def _cplxreal(z, tol: float | None = None):
    """Complex values of ``z`` (one of each conjugate pair, the mean of the two, positive
    imaginary part; sorted by real part, then by imaginary magnitude) and its real values
    (sorted)."""
    z = np.atleast_1d(z)
    if z.size == 0:
        return z, z
    if tol is None:
        tol = 100 * np.finfo((1.0 * z).dtype).eps
    z = z[np.lexsort((abs(z.imag), z.real))]
    real_indices = abs(z.imag) <= tol * abs(z)
    zr = z[real_indices].real
    if len(zr) == len(z):
        return np.array([]), zr
    z = z[~real_indices]
    zp = z[z.imag > 0]
    zn = z[z.imag < 0]
    if len(zp) != len(zn):
        raise ValueError("a complex value has no matching conjugate")
    same_real = np.diff(zp.real) <= tol * abs(zp[:-1])
    diffs = np.diff(np.concatenate(([0], same_real, [0])))
    run_starts = np.nonzero(diffs > 0)[0]
    run_stops = np.nonzero(diffs < 0)[0]
    for i in range(len(run_starts)):  # runs of equal real parts (few)
        start, stop = run_starts[i], run_stops[i] + 1
        for chunk in (zp[start:stop], zn[start:stop]):
            chunk[...] = chunk[np.lexsort([abs(chunk.imag)])]
    if any(abs(zp - zn.conj()) > tol * abs(zn)):
        raise ValueError("a complex value has no matching conjugate")
    return (zp + zn.conj()) / 2, zr
