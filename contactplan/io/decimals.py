"""Rounded numbers as text for a whole column at once: ``repr(round(x, digits))`` without a Python call per value.

:func:`rounded_text` gives, for float64 values, exactly the strings Python gives for
``repr(round(x, digits))`` (what ``csv`` writes for a rounded float), built as one matrix of
ASCII digits. How it stays exact:

* ``round`` rounds the exact binary value half to even at ``digits`` decimals. The product
  ``|x| * 10**digits`` is computed with its exact rounding error (Dekker's product with
  Veltkamp's split, T. J. Dekker, "A floating-point technique for extending the available
  precision", Numer. Math. 18, 1971; ``10**digits`` has at most 26 significant bits for
  ``digits <= 11``), so the integer ``k`` nearest to the exact product, ties to even, is known
  exactly.
* The result of ``round`` is the double nearest to ``k / 10**digits``; with at most 15
  significant digits (``k < 10**15``) that decimal is the only one of 15 digits or fewer
  mapping to that double (IEEE 754 double, DBL_DIG = 15), so ``repr`` writes it, trailing zeros
  dropped, one kept after the point.
* Everything else (non-finite, huge, tiny, negative results that round to zero, results
  under 1e-4 that ``repr`` writes in exponent form) goes through Python itself.
"""

from __future__ import annotations

import numpy as np

_SPLIT = 134217729.0  # 2**27 + 1 (Veltkamp's split of a double into two 26-bit halves)


def rounded_text(values, digits: int) -> list[str]:
    """``[repr(round(float(v), digits)) for v in values]``, vectorised (``0 <= digits <= 11``)."""
    if not 0 <= digits <= 11:
        raise ValueError("digits must be 0..11")
    x = np.asarray(values, dtype=float).ravel()
    n = x.size
    if n == 0:
        return []
    scale = 10.0 ** digits
    ax = np.abs(x)
    with np.errstate(all="ignore"):
        p = ax * scale
        big = _SPLIT * ax
        hi = big - (big - ax)
        lo = ax - hi
        err = (hi * scale - p) + lo * scale  # p + err == |x| * 10**digits exactly
        f = np.floor(p)
        d = (p - f) - 0.5  # exact: p - f is a multiple of ulp(p) in [0, 1)
        up = (d > -err) | ((d == -err) & (np.fmod(f, 2.0) == 1.0))
        ok = np.isfinite(p) & (p < 1e15) & ((ax == 0) | (ax > 1e-290))
        k = np.where(ok, f + up, 0.0).astype(np.int64)
    neg = np.signbit(x)
    ok &= ~(neg & (k == 0))  # -0.0 and negatives rounding to zero: as Python writes them
    if digits > 4:
        ok &= (k == 0) | (k >= 10 ** (digits - 4))  # under 1e-4 repr uses an exponent
    # the decimal digits of k, most significant first, at least one before the point
    wk = max(len(str(int(k.max()))), digits + 1)
    dig = np.empty((n, wk), np.uint8)
    rem = k
    for j in range(wk - 1, -1, -1):
        rem, r = np.divmod(rem, 10)
        dig[:, j] = r
    wi = wk - digits  # integer-part digits
    # one row per value: [sign][integer digits][.][fraction][newline]; NUL where nothing is written
    mat = np.zeros((n, wi + max(digits, 1) + 3), np.uint8)
    first = np.zeros(n, np.intp)  # first integer digit written (the units digit at the latest)
    if wi > 1:
        nz = dig[:, :wi - 1] != 0
        first = np.where(nz.any(axis=1), np.argmax(nz, axis=1), wi - 1)
    mat[:, 1:wi + 1] = np.where(np.arange(wi)[None, :] >= first[:, None], dig[:, :wi] + 48, 0)
    mat[np.arange(n), first] = np.where(neg, 45, 0)  # "-" just before it
    mat[:, wi + 1] = 46
    if digits:
        fd = dig[:, wi:]
        nzf = fd[:, ::-1] != 0
        last = np.where(nzf.any(axis=1), digits - 1 - np.argmax(nzf, axis=1), 0)  # last fraction digit kept
        mat[:, wi + 2:wi + 2 + digits] = np.where(np.arange(digits)[None, :] <= last[:, None], fd + 48, 0)
    else:
        mat[:, wi + 2] = 48
    mat[:, -1] = 10
    text = mat[mat != 0].tobytes().decode("ascii").split("\n")
    text.pop()
    for i in np.flatnonzero(~ok).tolist():
        text[i] = repr(round(float(x[i]), digits))
    return text
