"""Cone spaces: excitations, von Kries adaptation, cone contrast, MacLeod-Boynton, DKL.

All functions are pure and work on arrays whose last axis holds L, M, S.

References: von Kries (1902) coefficient law; MacLeod & Boynton (1979), JOSA 69,
1183-1186, scaled as CIE 170-1:2006 does; Derrington, Krauskopf & Lennie (1984),
J Physiol 357, 241-265.

Public: :func:`cone_excitations`, :func:`parse_adaptation`, :func:`von_kries_gains`,
:func:`cone_contrast`, :func:`macleod_boynton`, :func:`dkl`.
"""

from __future__ import annotations

import numpy as np

from ..errors import InputError

__all__ = ["cone_excitations", "parse_adaptation", "von_kries_gains", "cone_contrast", "macleod_boynton", "dkl"]


def cone_excitations(spectra, fundamentals) -> np.ndarray:
    """Cone excitations of spectra: ``spectra @ fundamentals``.

    Parameters
    ----------
    spectra : array_like
        Spectral radiance (or illuminant x reflectance x filter), shape (..., n_wl).
    fundamentals : array_like
        Shape (n_wl, 3).

    Returns
    -------
    numpy.ndarray
        L, M, S excitations, shape (..., 3), in the fundamentals' units (sums over 1 nm steps).
    """
    return np.asarray(spectra) @ np.asarray(fundamentals)


def parse_adaptation(value) -> float:
    """``"full"`` -> 1, ``"none"`` -> 0, a number 0-1 -> itself (the degree of adaptation)."""
    if isinstance(value, str):
        v = value.strip().lower()
        if v == "full":
            return 1.0
        if v == "none":
            return 0.0
        try:
            value = float(v)
        except ValueError:
            raise InputError(f"adaptation '{value}' is not full, none or a fraction 0-1") from None
    value = float(value)
    if not 0.0 <= value <= 1.0:
        raise InputError(f"adaptation {value:g} is outside 0-1")
    return value


def von_kries_gains(white, reference_white=None, *, adaptation: float = 1.0) -> np.ndarray:
    """Von Kries gains for an observer adapted to ``white``.

    With ``adaptation`` a in 0-1 the gains are ``reference_white^-(1-a) * white^-a``:
    a = 1 (full) normalises ``white`` to (1, 1, 1); a = 0 (none) keeps the
    observer adapted to ``reference_white`` (e.g. the illuminant without the
    filter). Geometric interpolation keeps a neutral-density filter a pure
    scale for every a.

    Parameters
    ----------
    white : array_like
        L, M, S of the adapting white, shape (..., 3).
    reference_white : array_like, optional
        L, M, S of the white the observer is adapted to without the change;
        defaults to ``white``.
    adaptation : float
        Degree of adaptation, 0-1.

    Returns
    -------
    numpy.ndarray
        Gains, shape (..., 3); multiply cone excitations by them.
    """
    white = np.asarray(white, dtype=float)
    ref = white if reference_white is None else np.asarray(reference_white, dtype=float)
    a = float(adaptation)
    return ref ** -(1.0 - a) * white ** -a


def cone_contrast(lms, white_lms) -> np.ndarray:
    """Weber cone contrast (lms - white) / white, shape (..., 3)."""
    white = np.asarray(white_lms, dtype=float)
    return (np.asarray(lms, dtype=float) - white) / white


def macleod_boynton(lms, luminance_weights, s_scale: float = 1.0) -> np.ndarray:
    """MacLeod-Boynton chromaticity (l, s).

    l = a L / (a L + b M), s = s_scale * S / (a L + b M), with a, b the weights of
    L and M in the observer's luminance (CIE 170-1: 0.68990272, 0.34832189 for
    2 deg) and s_scale making the maximum of s over the spectrum 1 (CIE 170-1).

    Returns
    -------
    numpy.ndarray
        Shape (..., 2).
    """
    lms = np.asarray(lms, dtype=float)
    a, b = luminance_weights
    lum = a * lms[..., 0] + b * lms[..., 1]
    with np.errstate(divide="ignore", invalid="ignore"):
        return np.stack([a * lms[..., 0] / lum, s_scale * lms[..., 2] / lum], axis=-1)


def dkl(lms, white_lms, luminance_weights) -> np.ndarray:
    """DKL coordinates relative to an adapting white (Derrington, Krauskopf & Lennie 1984).

    Axes: luminance (contrast of a L + b M), L-M (the MacLeod-Boynton l change
    at constant luminance, as a contrast of the white's l) and S-(L+M) (the s
    change as a contrast of the white's s). Each axis is 0 at the white;
    scaling is by the white's own coordinates, so the result is independent
    of how the fundamentals are normalised.

    Returns
    -------
    numpy.ndarray
        Shape (..., 3): (luminance, L-M, S-(L+M)).
    """
    lms = np.asarray(lms, dtype=float)
    white = np.asarray(white_lms, dtype=float)
    a, b = luminance_weights
    lum = a * lms[..., 0] + b * lms[..., 1]
    lum_w = a * white[..., 0] + b * white[..., 1]
    mb = macleod_boynton(lms, luminance_weights)
    mb_w = macleod_boynton(white, luminance_weights)
    return np.stack([(lum - lum_w) / lum_w, (mb[..., 0] - mb_w[..., 0]) / mb_w[..., 0],
                     (mb[..., 1] - mb_w[..., 1]) / mb_w[..., 1]], axis=-1)
