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
:func:`count_planes_many`, :func:`count_union`, :data:`CUBE_SIZE`, :data:`DENSE_CELLS`, :data:`DENSE_PER_COLOUR`.
"""

from __future__ import annotations

import numpy as np

__all__ = ["lab_from_xyz", "lab_planes", "count_discernible", "count_planes", "count_planes_many", "count_union",
           "receptor_noise_space", "cam16ucs_planes", "CAM16_VIEWING", "CUBE_SIZE", "DENSE_CELLS",
           "DENSE_PER_COLOUR"]

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
    """:func:`lab_from_xyz` on planes: ``xyz`` (3, ...) -> L*, a*, b* (3, ...) (the fast path).

    ``white_xyz`` is one white (3,) or a white per colour, broadcastable to ``xyz`` (e.g. (3, rows, 1)
    for rows of colours seen by different observers). The ratios to the white are formed in float64 and
    then cast to ``dtype`` (float32 halves the work; the rounding is a fixed function of the ratios, so
    colours with equal ratios keep equal CIELAB values).
    """
    white = np.asarray(white_xyz, dtype=float)
    xyz = np.asarray(xyz, dtype=float)
    white = white.reshape(3, *([1] * (xyz.ndim - 1))) if white.ndim == 1 else white
    t = np.empty(np.broadcast_shapes(xyz.shape, white.shape), dtype=dtype)
    np.divide(xyz, white, out=t, casting="same_kind")  # in float64, rounded once to dtype
    d = 6.0 / 29.0  # CIE 15:2018
    f = np.cbrt(t)
    low = t <= d ** 3
    if low.any():  # the linear segment, elementwise as on the selected values (no gather)
        np.copyto(f, t * (1.0 / (3 * d * d)) + 4.0 / 29.0, where=low)
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


# --- many sets at once, the variants' coordinates ----------------------------------------------------

#: Offset that makes every admissible cube index non-negative in a packed global key.
_OFFSET = _LIMIT


def count_planes_many(planes, *, cube_size: float = CUBE_SIZE, keys: bool = False):
    """:func:`count_planes` for K sets of equal size at once: ``planes`` (K, 3, n_colours) -> counts (K,).

    Vectorised over the sets: where a set's colours are many for the cells of their index box (the box
    spans at most :data:`DENSE_CELLS` cells and at most ``DENSE_PER_COLOUR`` cells per colour), the sets are
    marked in dense boolean arrays, as many sets per marking as fit in ``DENSE_CELLS`` cells; otherwise one
    row-wise sort counts every set. Both give the same counts (and keys). With ``keys``, also returns the
    occupied cubes as ``(rows, packed)``: for every (set, occupied cube) the set's row and the cube's
    global int64 key (indices offset by 2^20 and packed 21 bits per axis), in row order and then key
    order, so that cubes of different stimuli can be pooled (:func:`count_union`).

    >>> p = np.array([[[0.1, 0.9, 1.1], [0.2, 0.5, 0.0], [0.3, 0.5, 0.0]]] * 2)
    >>> count_planes_many(p).tolist()
    [2, 2]
    """
    planes = np.asarray(planes)
    if planes.ndim != 3 or planes.shape[1] != 3:
        raise ValueError(f"expected planes shaped (sets, 3, n_colours), got {planes.shape}")
    if not (np.isfinite(cube_size) and cube_size > 0):
        raise ValueError(f"cube_size must be a positive number, got {cube_size}")
    n_sets, _, n = planes.shape
    empty = (np.zeros(0, dtype=np.int64), np.zeros(0, dtype=np.int64))
    if n_sets == 0 or n == 0:
        counts = np.zeros(n_sets, dtype=np.int64)
        return (counts, empty) if keys else counts
    idx = np.floor(planes / cube_size) if cube_size != 1 else np.floor(planes)
    lo, hi = idx.min(axis=(0, 2)), idx.max(axis=(0, 2))
    if not (np.all(np.isfinite(lo)) and np.all(np.isfinite(hi))):
        raise ValueError("colours hold NaN or infinite values")
    if max(np.abs(lo).max(), np.abs(hi).max()) >= _LIMIT:
        raise ValueError(f"colours beyond +-{_LIMIT} cube edges cannot be counted")
    span = (hi - lo + 1).astype(np.int64)
    cells = int(np.prod(span))
    if n_sets * cells <= DENSE_CELLS or (cells <= DENSE_CELLS and cells <= DENSE_PER_COLOUR * n):
        return _count_dense(idx, lo, span, keys)
    k = (idx + _OFFSET).astype(np.int64)
    packed = (k[:, 0] << (2 * _BITS)) | (k[:, 1] << _BITS) | k[:, 2]
    packed.sort(axis=1)
    first = np.ones(packed.shape, dtype=bool)
    first[:, 1:] = packed[:, 1:] != packed[:, :-1]
    counts = np.count_nonzero(first, axis=1).astype(np.int64)
    if not keys:
        return counts
    rows = np.nonzero(first)[0]
    return counts, (rows, packed[first])


#: Dense marking is used (with sets in blocks) while a set's index box has at most this many cells per
#: colour: marking, clearing and counting a cell costs far less than a colour's share of a sort.
DENSE_PER_COLOUR = 64


def _count_dense(idx: np.ndarray, lo: np.ndarray, span: np.ndarray, keys: bool):
    """Counts (and keys) of the sets of ``idx`` (K, 3, n) (cube indices, box ``lo``, ``span``) by marking
    cells, in blocks of as many sets as fit in :data:`DENSE_CELLS` cells (the blocks bound the memory)."""
    n_sets = idx.shape[0]
    cells = int(np.prod(span))
    block = max(1, DENSE_CELLS // cells)
    counts = np.empty(n_sets, dtype=np.int64)
    rows_out, keys_out = [], []
    for b0 in range(0, n_sets, block):  # blocks of sets, not sets: one block unless the sets are many
        sub = idx[b0:b0 + block]
        nb = sub.shape[0]
        dt = np.int32 if nb * cells < 1 << 31 else np.int64  # the cell numbers fit (half the traffic)
        k = (sub - lo[None, :, None]).astype(dt)
        local = (k[:, 0] * dt(span[1]) + k[:, 1]) * dt(span[2]) + k[:, 2]
        local += (np.arange(nb, dtype=dt) * dt(cells))[:, None]
        seen = np.zeros(nb * cells, dtype=bool)
        seen[local.ravel()] = True
        counts[b0:b0 + nb] = np.count_nonzero(seen.reshape(nb, cells), axis=1)
        if not keys:
            continue
        nz = np.flatnonzero(seen)
        rows, cell = np.divmod(nz, cells)
        c0, rest = np.divmod(cell, int(span[1]) * int(span[2]))
        c1, c2 = np.divmod(rest, int(span[2]))
        g = [c + int(lo[a]) + _OFFSET for a, c in enumerate((c0, c1, c2))]
        rows_out.append(rows + b0)
        keys_out.append((g[0] << (2 * _BITS)) | (g[1] << _BITS) | g[2])
    if not keys:
        return counts
    return counts, (np.concatenate(rows_out), np.concatenate(keys_out))


def count_union(parts, n_sets: int) -> np.ndarray:
    """Pooled counts: the cubes occupied in any of several stimuli, per set.

    ``parts`` are ``(rows, packed)`` pairs from :func:`count_planes_many` (``keys=True``) over the same
    ``n_sets`` sets; returns (n_sets,) counts of the distinct (row, cube) pairs.
    """
    rows = np.concatenate([np.asarray(r, dtype=np.int64) for r, _ in parts]) if parts else np.zeros(0, np.int64)
    packed = np.concatenate([np.asarray(k, dtype=np.int64) for _, k in parts]) if parts else np.zeros(0, np.int64)
    order = np.lexsort((packed, rows))
    rows, packed = rows[order], packed[order]
    new = np.ones(len(rows), dtype=bool)
    new[1:] = (rows[1:] != rows[:-1]) | (packed[1:] != packed[:-1])
    return np.bincount(rows[new], minlength=n_sets).astype(np.int64)


def receptor_noise_space(noise) -> np.ndarray:
    """The 3x3 map from ln cone catches to the observer's receptor-noise space, in JND units.

    Rows: the chromatic coordinates of Vorobyev & Osorio (1998) (:func:`~cvdfilter.metrics.discrimination.
    rnl_transform`; Euclidean distance = their Delta S), then the achromatic coordinate of the same
    independent receptor noise, ``sum_i f_i / e_i^2 / sqrt(sum_i 1 / e_i^2)`` over the cones present (the
    component of the noise-whitened log signals along a uniform change of all cones); for a dichromat a
    third row of zeros. The Euclidean distance in this space is the Mahalanobis distance of the log cone
    signals under independent noise e_i: sqrt(Delta S_chromatic^2 + Delta S_achromatic^2).

    >>> from cvdfilter.metrics.discrimination import receptor_noise
    >>> m = receptor_noise_space(receptor_noise())
    >>> d = np.array([0.01, -0.02, 0.03])
    >>> bool(np.isclose(np.linalg.norm(m @ d), np.linalg.norm(d / receptor_noise())))
    True
    """
    from .discrimination import rnl_transform

    e = np.asarray(noise, dtype=float)
    present = np.isfinite(e)
    chroma = rnl_transform(e)
    inv = np.where(present, 1.0 / np.where(present, e, 1.0) ** 2, 0.0)
    achromatic = inv / np.sqrt(inv.sum())
    out = np.zeros((3, 3))
    out[:len(chroma)] = chroma
    out[len(chroma)] = achromatic
    return out


#: CAM16 viewing conditions of the ``cam16ucs`` count (common practice for reflecting samples in a
#: lit room: L_A = 64 cd/m^2, i.e. about 1000 lx / pi x 0.2; Y_b = 20; average surround, CIE 159:2004 /
#: Li et al. 2017); the illuminant is discounted (D = 1) because the cone signals are already adapted.
CAM16_VIEWING = {"L_A": 64.0, "Y_b": 20.0, "surround": "Average", "discount_illuminant": True}


def cam16ucs_planes(xyz, white_xyz) -> np.ndarray:
    """CAM16-UCS J', a', b' (Li et al. 2017) on planes: ``xyz`` (3, n) relative to ``white_xyz``, one white
    (3,) or one per colour (3, n).

    Viewing conditions :data:`CAM16_VIEWING` (colour-science's CAM16 and Luo, Cui & Li 2006 UCS
    coefficients). Colours the model does not define (negative achromatic response: imaginary dark
    colours, possible after a dichromat simulation) come back as NaN; the caller decides.
    """
    import warnings

    import colour

    white = np.asarray(white_xyz, dtype=float)
    scale = 100.0 / white[1]
    white_w = (white * scale).T  # (3,) or (n, 3)
    scale = scale[:, None] if np.ndim(scale) else scale
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", RuntimeWarning)
        jab = colour.XYZ_to_CAM16UCS(
            np.asarray(xyz, dtype=float).T * scale, XYZ_w=white_w, L_A=CAM16_VIEWING["L_A"],
            Y_b=CAM16_VIEWING["Y_b"], surround=colour.VIEWING_CONDITIONS_CAM16[CAM16_VIEWING["surround"]],
            discount_illuminant=CAM16_VIEWING["discount_illuminant"], compute_H=False)
    return np.ascontiguousarray(np.asarray(jab, dtype=float).T)
