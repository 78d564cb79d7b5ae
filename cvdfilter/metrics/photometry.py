"""Photometry of filters: luminous transmittance and chromaticity.

Luminous transmittance follows ISO 12312-1 / ISO 8980-3 practice: the
transmittance weighted by CIE illuminant D65 and the CIE 1931 2 deg V(lambda),
tau_v = sum(T S_D65 V) / sum(S_D65 V).

Public: :func:`luminous_transmittance`, :func:`filter_chromaticity`.
"""

from __future__ import annotations

import numpy as np

__all__ = ["luminous_transmittance", "filter_chromaticity"]


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
    """
    w = np.asarray(spd, dtype=float) * np.asarray(v_lambda, dtype=float)
    return np.asarray(transmittance, dtype=float) @ w / w.sum()


def filter_chromaticity(transmittance, spd, cmfs) -> np.ndarray:
    """CIE xy chromaticity of the light ``spd`` seen through each filter; shape (n_filters, 2)."""
    xyz = (np.atleast_2d(transmittance) * np.asarray(spd)) @ np.asarray(cmfs)
    return xyz[:, :2] / xyz.sum(axis=1, keepdims=True)
