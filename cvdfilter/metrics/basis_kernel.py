"""The compiled builder of a member block's cone basis (numba): the products and the catches without a filter.

A population block scores every filter as one matrix product ``T @ B`` with
``B[lambda, (member, cone, sample)] = fundamental[member, lambda, cone] * stimulus[lambda, sample]`` (the
fixed-observer path's cone basis, member by member). :func:`member_basis` writes ``B`` and, in the same
pass, the catches without a filter (``B`` summed over wavelength), with numpy's arithmetic: each product
rounded once, the sum taken wavelength by wavelength in order, as ``B.sum(axis=0)`` does over a C-ordered
array's first axis; so the bits are those of the numpy path (:func:`basis_and_catches` with
``method="array"``; tests/test_pair_kernel.py), written once instead of written, then read again.

Public: :func:`basis_and_catches`.
"""

from __future__ import annotations

import sys

import numpy as np

__all__ = ["basis_and_catches"]


def basis_and_catches(fund: np.ndarray, stimuli: np.ndarray, out: np.ndarray | None = None, *,
                      method: str = "auto") -> tuple[np.ndarray, np.ndarray]:
    """The cone basis of members ``fund`` (M, W, 3) under ``stimuli`` (W, S), as (W, M, 3, S) float64 (into
    ``out`` when it has that shape), and its sum over wavelengths (M, 3, S).

    ``method``: ``"kernel"`` (compiled, one pass), ``"array"`` (numpy: multiply, then ``sum(axis=0)``) or
    ``"auto"`` (the kernel when numba is loaded already, e.g. by the pair kernel; never loads it). The same
    bits either way.
    """
    fund = np.ascontiguousarray(fund, dtype=float)
    stimuli = np.ascontiguousarray(stimuli, dtype=float)
    m, w, _ = fund.shape
    shape = (w, m, 3, stimuli.shape[1])
    if out is None or out.size != np.prod(shape) or out.dtype != np.float64:
        out = np.empty(shape)
    B = out.reshape(shape)
    if method == "kernel" or (method == "auto" and "numba" in sys.modules):
        from .basis_kernel_compiled import member_basis

        q0 = np.empty((m, 3, stimuli.shape[1]))
        member_basis(fund, stimuli, B, q0)
        return B, q0
    if method not in ("auto", "array", "kernel"):
        raise ValueError(f"method must be auto, kernel or array, got {method!r}")
    np.multiply(fund.transpose(1, 0, 2)[:, :, :, None], stimuli[:, None, None, :], out=B)
    return B, B.reshape(w, -1).sum(axis=0).reshape(m, 3, stimuli.shape[1])
