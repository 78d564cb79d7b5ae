"""The per-pixel end of rendering: sRGB transfer tables and the kernel that applies a folded view to tiles.

Presentation-free arithmetic on arrays: :func:`decode_srgb`/:func:`encode_srgb` (IEC 61966-2-1 transfer
functions as lookup tables), and :class:`_Kernel`, which applies a view's
:class:`~cvdfilter.observers.operator.PiecewiseLinear` to tiles of pixels (rows) in float32, scaled so that
8-bit and 16-bit encoding is one table lookup. :mod:`cvdfilter.rendering` builds the views and re-exports
the public names.

Public: :func:`decode_srgb`, :func:`encode_srgb`, :data:`TILE_PIXELS`.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ..observers.operator import PiecewiseLinear
from ..spectra.cache import cached_arrays

__all__ = ["decode_srgb", "encode_srgb", "TILE_PIXELS"]

#: Pixels per tile (64 Ki: a few hundred kB of float32 per array, cache-resident).
TILE_PIXELS = 1 << 16

_SCALE = 65536  # encode tables: linear light is scaled by 2**16 and truncated to an index


# --- transfer functions -------------------------------------------------------------

def _srgb_tables() -> dict:
    """Lookup tables for the sRGB transfer function, built once with colour-science.

    ``dec8``/``dec16``: code value -> linear light (float32). ``enc8``: index
    ``i = floor(65536 y)`` (y linear, 0-1) -> 8-bit code of the interval's
    midpoint; within 0.03 code values of the exact function before rounding
    (the steepest slope, 12.92 x 255 codes per unit at black, times half an
    interval). ``enc``: the encoded value at ``i / 65536``, i = 0..65536, for
    linear interpolation (16-bit and float output, within 0.01 of a 16-bit code).
    """

    def build():
        import colour

        grid = np.arange(_SCALE + 1) / _SCALE
        mid = (np.arange(_SCALE) + 0.5) / _SCALE
        return {
            "dec8": colour.cctf_decoding(np.arange(256) / 255.0, function="sRGB").astype(np.float32),
            "dec16": colour.cctf_decoding(np.arange(65536) / 65535.0, function="sRGB").astype(np.float32),
            "enc8": np.round(colour.cctf_encoding(mid, function="sRGB") * 255.0).astype(np.uint8),
            "enc": colour.cctf_encoding(grid, function="sRGB").astype(np.float64),
            "dec_grid": colour.cctf_decoding(grid, function="sRGB").astype(np.float64),
        }

    return cached_arrays("srgb-transfer-tables-v2", build)


def decode_srgb(values) -> np.ndarray:
    """sRGB code values (or encoded floats 0-1) to linear light, float32.

    Parameters
    ----------
    values : array_like
        uint8 (0-255), uint16 (0-65535) or float (encoded, 0-1; clipped to 0-1).

    Returns
    -------
    numpy.ndarray
        Linear sRGB, 0-1, float32, same shape (IEC 61966-2-1 through colour-science).

    Examples
    --------
    >>> round(float(decode_srgb(np.uint8(128))), 4)
    0.2159
    """
    t = _srgb_tables()
    v = np.asarray(values)
    if v.dtype == np.uint8:
        return np.take(t["dec8"], v, mode="wrap")  # indices are in range; "wrap" skips the bounds check
    if v.dtype == np.uint16:
        return np.take(t["dec16"], v, mode="wrap")
    grid = np.arange(_SCALE + 1, dtype=np.float64) / _SCALE
    return np.interp(np.clip(v, 0.0, 1.0), grid, t["dec_grid"]).astype(np.float32)


def encode_srgb(linear, dtype=np.uint8) -> np.ndarray:
    """Linear light to sRGB code values (clipped to 0-1 first).

    Parameters
    ----------
    linear : array_like
        Linear sRGB.
    dtype : numpy dtype
        ``uint8`` or ``uint16`` (code values) or a float type (encoded values 0-1).

    Returns
    -------
    numpy.ndarray

    Examples
    --------
    >>> int(encode_srgb(0.2158605))
    128
    """
    y = np.asarray(linear, dtype=np.float32).reshape(-1) * np.float32(_SCALE if np.dtype(dtype).kind == "u" else 1)
    out = np.empty(y.shape, dtype=dtype)
    _encode(y, out, np.dtype(dtype), "srgb", True)
    return out.reshape(np.shape(linear))


def _encode(y: np.ndarray, out: np.ndarray, dtype: np.dtype, encoding: str, clip: bool) -> None:
    """Encode linear light into ``out`` (same shape as ``y``); ``y`` is modified.

    Integer output: ``y`` holds linear light times 65536. Float output: linear light.
    """
    if dtype == np.uint8:
        np.clip(y, 0.0, _SCALE - 1, out=y)
        np.take(_srgb_tables()["enc8"], y.astype(np.uint16), out=out, mode="wrap")
        return
    if dtype == np.uint16 or encoding == "srgb":
        if dtype.kind != "u":
            y *= np.float32(_SCALE)
        np.clip(y, 0.0, _SCALE, out=y)
        enc = _srgb_tables()["enc"]
        i = np.minimum(y.astype(np.int32), _SCALE - 1)
        frac = y - i
        lo = np.take(enc, i)
        v = lo + frac * (np.take(enc, i + 1) - lo)
        if dtype == np.uint16:
            v *= 65535.0
            v += 0.5
            out[...] = v.astype(np.uint16)
        else:
            out[...] = v
        return
    if clip:
        np.clip(y, 0.0, 1.0, out=y)
    out[...] = y


def _gamut_tolerance(dtype: np.dtype) -> tuple[float, float]:
    """Linear-light bounds beyond which a value counts as clipped: half an output code value.

    For float output: 1e-6.
    """
    if dtype.kind == "u":
        top = 255.0 if dtype == np.uint8 else 65535.0
        # sRGB slopes: 12.92 at black, 1.055 / 2.4 at white (IEC 61966-2-1).
        return -0.5 / (top * 12.92), 1.0 + 0.5 / (top * 1.055 / 2.4)
    return -1e-6, 1.0 + 1e-6


@dataclass(frozen=True, eq=False)
class _Kernel:
    """Float32 matrices for one view, scaled for the output.

    ``first`` (3, 3) or (3, 4); with Brettel's two half-planes whose matrices
    differ by ``outer(separator, w)`` (they meet on the separating plane) the
    fourth column is the separator and ``second`` = [[I], [w]] (4, 3) adds
    ``min(rgb . separator, 0) w``: two small matrix products, no selection.
    Otherwise ``alternative`` and ``separator`` select per pixel.
    """

    first: np.ndarray
    second: np.ndarray | None = None
    alternative: np.ndarray | None = None
    separator: np.ndarray | None = None
    lo: float = 0.0
    hi: float = 1.0

    @classmethod
    def build(cls, operator: PiecewiseLinear, scale: float, lo: float, hi: float) -> _Kernel:
        """The kernel of ``operator`` (tiles are rows: it takes the operator's row matrices)."""
        mats, sep = operator.row_matrices, operator.separator
        m0 = np.asarray(mats[0], dtype=np.float64) * scale
        if len(mats) == 1:
            return cls(m0.astype(np.float32), lo=lo * scale, hi=hi * scale)
        m1 = np.asarray(mats[1], dtype=np.float64) * scale
        sep = np.asarray(sep, dtype=np.float64)
        w = sep @ (m1 - m0) / (sep @ sep)
        if np.allclose(np.outer(sep, w), m1 - m0, rtol=0, atol=1e-9 * max(1.0, float(np.abs(m0).max()))):
            first = np.concatenate([m0, sep[:, None]], axis=1).astype(np.float32)
            second = np.concatenate([np.eye(3), w[None]], axis=0).astype(np.float32)
            return cls(first, second, lo=lo * scale, hi=hi * scale)
        return cls(m0.astype(np.float32), None, m1.astype(np.float32), sep.astype(np.float32),
                   lo * scale, hi * scale)

    def __call__(self, x: np.ndarray) -> np.ndarray:
        """Rows of ``x`` (n, 3) float32 -> (n, 3) float32."""
        y = x @ self.first
        if self.second is not None:
            s = y[:, 3]
            np.minimum(s, 0.0, out=s)
            return y @ self.second
        if self.alternative is not None:
            neg = (x @ self.separator) < 0
            if neg.any():
                y[neg] = x[neg] @ self.alternative
        return y

    def count_clipped(self, y: np.ndarray) -> int:
        """Pixels (rows) with a channel beyond the gamut tolerance."""
        if not y.size or (float(y.min()) >= self.lo and float(y.max()) <= self.hi):
            return 0
        b = y < self.lo
        b |= y > self.hi
        return int(np.count_nonzero(b[:, 0] | b[:, 1] | b[:, 2]))


def _decode_tile(s: np.ndarray, encoding: str, grey: bool) -> np.ndarray:
    """Linear float32 (n, 3) from a tile of code values or floats."""
    rgb = decode_srgb(s) if encoding == "srgb" else s.astype(np.float32)
    if grey:
        rgb = np.repeat(rgb.reshape(-1, 1), 3, axis=1)
    return rgb


def _finish_tile(y: np.ndarray, d: np.ndarray, dtype: np.dtype, encoding: str, clip: bool) -> None:
    """Encode ``y`` (n, 3) float32 into ``d[:, :3]``."""
    if d.shape[1] == 3 and d.flags.c_contiguous:
        _encode(y.reshape(-1), d.reshape(-1), dtype, encoding, clip)
    else:
        tmp = np.empty(y.shape, dtype=dtype)
        _encode(y.reshape(-1), tmp.reshape(-1), dtype, encoding, clip)
        d[:, :3] = tmp


def _convert_alpha(a: np.ndarray, dtype: np.dtype) -> np.ndarray:
    """Alpha is linear coverage: rescale between sample types."""
    src = np.asarray(a)
    if np.issubdtype(src.dtype, np.floating):
        v = np.clip(src, 0.0, 1.0).astype(np.float64)
    else:
        v = src / float(np.iinfo(src.dtype).max)
    if np.dtype(dtype).kind == "u":
        return np.round(v * np.iinfo(dtype).max).astype(dtype)
    return v.astype(dtype)
