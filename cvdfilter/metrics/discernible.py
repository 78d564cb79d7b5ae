"""Number of discernible colours: occupied unit cubes of CIELAB.

Linhares, Pinto & Nascimento (2008) count the colours of a scene an observer
can tell apart by placing every pixel's colour in CIELAB and segmenting the
space into unit cubes (Delta E*ab = 1 on each axis): the number of non-empty
cubes is the number of discernible colours. This module holds the pure,
vectorised parts: CIELAB from XYZ and the count.

References
----------
Linhares, J. M. M., Pinto, P. D. & Nascimento, S. M. C. (2008). The number of
discernible colors in natural scenes. JOSA A 25(12), 2918-2924.
Linhares, J. M. M., Pinto, P. D. & Nascimento, S. M. C. (2008). The number of
discernible colors perceived by dichromats in natural scenes and the effects
of colored lenses. Visual Neuroscience 25, 493-499.
CIE 15:2018 Colorimetry (the CIELAB formulae).

Public: :func:`lab_from_xyz`, :func:`lab_planes`, :func:`count_discernible`, :func:`count_planes`,
:data:`CUBE_SIZE`, :data:`DENSE_CELLS`.
"""

from __future__ import annotations

import numpy as np

__all__ = ["lab_from_xyz", "lab_planes", "count_discernible", "count_planes", "CUBE_SIZE", "DENSE_CELLS"]

#: Edge of the counting cube, CIELAB units (Linhares et al. 2008: unit cubes, Delta E*ab = 1).
CUBE_SIZE = 1.0
#: Bits per axis in the packed cube key: cube indices within +-2^20 (CIELAB values within about
#: +-1e6 cube edges; anything beyond is refused rather than wrapped).
_BITS = 21
_LIMIT = 1 << (_BITS - 1)


def lab_from_xyz(xyz, white_xyz) -> np.ndarray:
    """CIELAB (L*, a*, b*) from XYZ relative to a white (CIE 15:2018).

    Parameters
    ----------
    xyz : array_like
        Tristimulus values, shape (..., 3), any scale shared with ``white_xyz``.
    white_xyz : array_like
        The reference white, shape (3,) or broadcastable to ``xyz``.

    Returns
    -------
    numpy.ndarray
        L*, a*, b*, shape (..., 3). Negative tristimulus ratios (possible after
        a simulation) follow the formula's linear segment, never NaN.

    Examples
    --------
    >>> lab_from_xyz([0.5, 0.5, 0.5], [1.0, 1.0, 1.0]).round(3).tolist()
    [76.069, 0.0, 0.0]
    """
    t = np.asarray(xyz, dtype=float) / np.asarray(white_xyz, dtype=float)
    d = 6.0 / 29.0  # CIE 15:2018, eq. 8.6
    f = np.where(t > d ** 3, np.cbrt(t), t / (3 * d * d) + 4.0 / 29.0)
    return np.stack([116.0 * f[..., 1] - 16.0, 500.0 * (f[..., 0] - f[..., 1]),
                     200.0 * (f[..., 1] - f[..., 2])], axis=-1)


def lab_planes(xyz, white_xyz, *, dtype=np.float64) -> np.ndarray:
    """:func:`lab_from_xyz` on planes: ``xyz`` (3, n) -> L*, a*, b* (3, n) (the fast path).

    The ratios to the white are formed in float64 and then cast to ``dtype``
    (float32 halves the work; the rounding is a fixed function of the ratios,
    so colours with equal ratios keep equal CIELAB values).
    """
    t = (np.asarray(xyz, dtype=float) / np.asarray(white_xyz, dtype=float)[:, None]).astype(dtype, copy=False)
    d = 6.0 / 29.0  # CIE 15:2018
    f = np.cbrt(t)
    low = t <= d ** 3
    if low.any():
        f[low] = t[low] * (1.0 / (3 * d * d)) + 4.0 / 29.0
    out = np.empty_like(f)
    np.multiply(f[1], 116.0, out=out[0])
    out[0] -= 16.0
    np.subtract(f[0], f[1], out=out[1])
    out[1] *= 500.0
    np.subtract(f[1], f[2], out=out[2])
    out[2] *= 200.0
    return out


def count_discernible(lab, *, cube_size: float = CUBE_SIZE) -> np.ndarray:
    """Number of non-empty cubes of edge ``cube_size`` that the colours occupy.

    Parameters
    ----------
    lab : array_like
        Colours, shape (..., n_colours, 3), CIELAB (or any 3-D space with
        units where ``cube_size`` is the step), e.g. (n_conditions, n_pixels, 3).
    cube_size : float
        Edge of a cube, in the units of ``lab`` (default 1, Linhares et al. 2008).

    Returns
    -------
    numpy.ndarray
        Counts, integer, shape ``lab.shape[:-2]`` (a 0-d array for one set).

    Raises
    ------
    ValueError
        Bad shape, non-finite values, a non-positive cube size, or values
        beyond +-2^20 cube edges.

    Notes
    -----
    Cube indices are ``floor(lab / cube_size)`` per axis. Where the indices
    span at most :data:`DENSE_CELLS` cells, each colour marks its cell in a
    boolean array and the marks are counted; otherwise the indices are packed
    into one int64 per colour and the distinct keys counted after a sort.
    Both are exact, independent of the order of the colours, and never more
    than the number of colours.

    Examples
    --------
    >>> int(count_discernible([[0.1, 0.2, 0.3], [0.9, 0.5, 0.5], [1.1, 0.0, 0.0]]))
    2
    """
    lab = np.asarray(lab, dtype=float)
    if lab.ndim < 2 or lab.shape[-1] != 3:
        raise ValueError(f"expected colours shaped (..., n_colours, 3), got {lab.shape}")
    lead = lab.shape[:-2]
    flat = lab.reshape(-1, lab.shape[-2], 3)
    out = np.array([count_planes(np.moveaxis(rows, -1, 0), cube_size=cube_size) for rows in flat],
                   dtype=np.int64)  # one pass per condition (observer x filter), vectorised over colours
    return out.reshape(lead)


#: Largest index box counted with a dense boolean array (32 Mi cells = 32 MiB); beyond it, a sort.
DENSE_CELLS = 1 << 25


def count_planes(planes, *, cube_size: float = CUBE_SIZE) -> int:
    """:func:`count_discernible` for one set given as three planes, shape (3, n_colours) (the fast path)."""
    planes = np.asarray(planes)
    if planes.ndim != 2 or planes.shape[0] != 3:
        raise ValueError(f"expected planes shaped (3, n_colours), got {planes.shape}")
    if not (np.isfinite(cube_size) and cube_size > 0):
        raise ValueError(f"cube_size must be a positive number, got {cube_size}")
    if planes.shape[1] == 0:
        return 0
    idx = np.floor(planes / cube_size) if cube_size != 1 else np.floor(planes)
    lo, hi = idx.min(axis=1), idx.max(axis=1)
    if not (np.all(np.isfinite(lo)) and np.all(np.isfinite(hi))):
        raise ValueError("colours hold NaN or infinite values")
    if max(np.abs(lo).max(), np.abs(hi).max()) >= _LIMIT:
        raise ValueError(f"colours beyond +-{_LIMIT} cube edges cannot be counted")
    span = (hi - lo + 1).astype(np.int64)
    if int(np.prod(span)) <= DENSE_CELLS:
        k = (idx - lo[:, None]).astype(np.int32)
        keys = (k[0] * int(span[1]) + k[1]) * int(span[2]) + k[2]
        seen = np.zeros(int(np.prod(span)), dtype=bool)
        seen[keys] = True
        return int(np.count_nonzero(seen))
    k = (idx - lo[:, None]).astype(np.int64)
    keys = (k[0] << (2 * _BITS)) | (k[1] << _BITS) | k[2]
    keys.sort()
    return int(1 + np.count_nonzero(keys[1:] != keys[:-1]))
