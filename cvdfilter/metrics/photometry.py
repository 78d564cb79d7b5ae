"""Photometry of filters: luminous transmittance, chromaticity and white shift.

Luminous transmittance follows ISO 12312-1 / ISO 8980-3 practice: the
transmittance weighted by CIE illuminant D65 and the CIE 1931 2 deg V(lambda),
tau_v = sum(T S_D65 V) / sum(S_D65 V).

The chromaticity of a filter is that of D65 seen through it (CIE 1931 x, y;
CIE 15:2004). The white shift is the distance in the CIE 1976 u', v' diagram
between a light seen through the filter and the same light without it,
Delta u'v' = sqrt((u'_1 - u'_0)^2 + (v'_1 - v'_0)^2), with
u' = 4X / (X + 15Y + 3Z) and v' = 9Y / (X + 15Y + 3Z) (CIE 15:2004).

Public: :func:`luminous_transmittance`, :func:`filter_chromaticity`,
:func:`xyz_to_xy`, :func:`xyz_to_uv_prime`, :func:`white_shift`.
"""

from __future__ import annotations

import numpy as np

__all__ = ["luminous_transmittance", "filter_chromaticity", "xyz_to_xy", "xyz_to_uv_prime", "white_shift"]


def luminous_transmittance(transmittance, spd, v_lambda) -> np.ndarray:
    """Luminous transmittance of filters under a light.

    Parameters
    ----------
    transmittance : array_like
        Fractions 0-1, shape (n_filters, n_wl) or (n_wl,).
    spd : array_like
        Relative spectral power of the light, shape (n_wl,).
    v_lambda : array_like
        Luminous efficiency function, shape (n_wl,) (CIE 1931 2 deg y-bar for ISO photometry).

    Returns
    -------
    numpy.ndarray
        Fractions 0-1, shape (n_filters,) or scalar.

    Examples
    --------
    >>> float(luminous_transmittance(np.full(3, 0.5), [1.0, 2.0, 1.0], [0.1, 1.0, 0.1]))
    0.5
    """
    w = np.asarray(spd, dtype=float) * np.asarray(v_lambda, dtype=float)
    return np.asarray(transmittance, dtype=float) @ w / w.sum()


def xyz_to_xy(xyz) -> np.ndarray:
    """CIE x, y from X, Y, Z (CIE 15:2004); shape (..., 2)."""
    xyz = np.asarray(xyz, dtype=float)
    with np.errstate(divide="ignore", invalid="ignore"):
        return xyz[..., :2] / xyz.sum(axis=-1, keepdims=True)


def xyz_to_uv_prime(xyz) -> np.ndarray:
    """CIE 1976 u', v' from X, Y, Z (CIE 15:2004); shape (..., 2).

    >>> xyz_to_uv_prime([95.047, 100.0, 108.883]).round(4).tolist()   # D65 white
    [0.1978, 0.4683]
    """
    xyz = np.asarray(xyz, dtype=float)
    d = xyz[..., 0] + 15.0 * xyz[..., 1] + 3.0 * xyz[..., 2]
    with np.errstate(divide="ignore", invalid="ignore"):
        return np.stack([4.0 * xyz[..., 0] / d, 9.0 * xyz[..., 1] / d], axis=-1)


def filter_chromaticity(transmittance, spd, cmfs) -> np.ndarray:
    """CIE xy chromaticity of the light ``spd`` seen through each filter; shape (n_filters, 2).

    Parameters
    ----------
    transmittance : array_like
        Shape (n_filters, n_wl) or (n_wl,).
    spd : array_like
        Shape (n_wl,) (CIE D65 for the chromaticity of a filter).
    cmfs : array_like
        x-bar, y-bar, z-bar, shape (n_wl, 3) (CIE 1931 2 deg).
    """
    xyz = (np.atleast_2d(transmittance) * np.asarray(spd)) @ np.asarray(cmfs)
    return xyz_to_xy(xyz)


def white_shift(transmittance, spd, cmfs) -> np.ndarray:
    """Delta u'v' between the light seen through each filter and the light itself.

    Parameters
    ----------
    transmittance : array_like
        Shape (n_filters, n_wl) or (n_wl,).
    spd : array_like
        The light, shape (n_wl,).
    cmfs : array_like
        Shape (n_wl, 3) (CIE 1931 2 deg).

    Returns
    -------
    numpy.ndarray
        Shape (n_filters,); 0 for a neutral filter.

    Examples
    --------
    >>> import numpy as np
    >>> cmfs = np.array([[1.0, 0.2, 0.0], [0.3, 1.0, 0.1], [0.1, 0.1, 1.0]])
    >>> round(float(white_shift(np.full((1, 3), 0.3), np.ones(3), cmfs)[0]), 12)
    0.0
    """
    spd = np.asarray(spd, dtype=float)
    cmfs = np.asarray(cmfs, dtype=float)
    uv1 = xyz_to_uv_prime((np.atleast_2d(transmittance) * spd) @ cmfs)
    uv0 = xyz_to_uv_prime(spd @ cmfs)
    return np.hypot(*(uv1 - uv0).T)
