"""The one matrix product that gives cone catches through filters, shaped so that its bits do not depend on its size.

Every scorer forms the catches of the surfaces and the white through a chunk of filters as
``T[chunk] @ B`` with ``B[lambda, (cone, sample)]`` (the fixed observers' unique cone columns, or a
population block's members' cones). A BLAS library sums each element over wavelength in an order that
can depend on where the element sits in the product: OpenBLAS computes the columns of a last, narrower
panel and products of at most 100**3 multiply-adds with other kernels. So that a population member
scores, bit for bit, as the same observer scored alone, and a filter as in any other chunk:

* each cone's samples (surfaces, then the white) are padded with zero columns to a multiple of
  :data:`SAMPLE_ALIGN` (:func:`stimuli_columns`), so every column sits in a full panel, at the same
  place within it, whatever the product's width;
* a product of at most :data:`SMALL_PRODUCT` multiply-adds, or of one filter (a matrix-vector
  product), gets zero rows of filters until it is larger (:func:`catch_product`), so one kernel computes
  every product.

tests/test_population_score.py holds a population without variation to the fixed observer bit for bit
over filter counts and chunks.

Public: :func:`stimuli_columns`, :func:`catch_product`, :data:`SAMPLE_ALIGN`, :data:`SMALL_PRODUCT`.
"""

from __future__ import annotations

import numpy as np

__all__ = ["stimuli_columns", "catch_product", "SAMPLE_ALIGN", "SMALL_PRODUCT"]

#: Columns per cone are a multiple of this (the widest column panel of the BLAS kernels in use, 8 doubles).
SAMPLE_ALIGN = 8
#: Products of at most this many multiply-adds are padded with zero rows (OpenBLAS's small-matrix kernels
#: take products up to 100**3).
SMALL_PRODUCT = 100 ** 3


def stimuli_columns(spd: np.ndarray, reflectance: np.ndarray) -> np.ndarray:
    """(wavelengths, P) stimuli: the surfaces under ``spd``, then the white (``spd`` itself), then zero columns
    up to a multiple of :data:`SAMPLE_ALIGN` (P >= surfaces + 1)."""
    n_wl, n_s = reflectance.shape
    width = -(-(n_s + 1) // SAMPLE_ALIGN) * SAMPLE_ALIGN
    out = np.zeros((n_wl, width))
    np.multiply(spd[:, None], reflectance, out=out[:, :n_s])
    out[:, n_s] = spd * 1.0  # the white, as spd[:, None] * ones gives it
    return out


def catch_product(transmittance: np.ndarray, basis: np.ndarray) -> np.ndarray:
    """``transmittance @ basis`` (filters x columns), with zero rows of filters added to a product of one
    filter or of at most :data:`SMALL_PRODUCT` multiply-adds (and dropped from the result), so that the same
    kernel forms every product."""
    m, k = transmittance.shape
    n = basis.shape[1]
    if (m * n * k > SMALL_PRODUCT and m >= 2) or m == 0 or n == 0:
        return transmittance @ basis
    rows = max(SMALL_PRODUCT // max(n * k, 1) + 1, 2)  # one row would be a matrix-vector product
    padded = np.zeros((max(rows, m), k))
    padded[:m] = transmittance
    return (padded @ basis)[:m]
