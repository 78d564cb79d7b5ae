"""numba body of :func:`cvdfilter.metrics.basis_kernel.basis_and_catches` (imported only when numba is wanted).

Public: :func:`member_basis`.
"""

from __future__ import annotations

from numba import njit

__all__ = ["member_basis"]


@njit(cache=True, nogil=True)
def member_basis(fund, stimuli, B, q0):
    """``B[w, a, c, j] = fund[a, w, c] * stimuli[w, j]`` and ``q0[a, c, j]`` their sum over ``w``, in order."""
    n_wl, n_s = stimuli.shape
    m = fund.shape[0]
    st = stimuli[0]
    for a in range(m):  # the first wavelength starts the sums (as numpy's reduction copies its first row)
        for c in range(3):
            f = fund[a, 0, c]
            row = B[0, a, c]
            acc = q0[a, c]
            for j in range(n_s):
                v = f * st[j]
                row[j] = v
                acc[j] = v
    for w in range(1, n_wl):
        st = stimuli[w]
        for a in range(m):
            for c in range(3):
                f = fund[a, w, c]
                row = B[w, a, c]
                acc = q0[a, c]
                for j in range(n_s):
                    v = f * st[j]
                    row[j] = v
                    acc[j] += v
