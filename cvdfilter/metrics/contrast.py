"""Contrast gains: how a filter stretches or shrinks the spread of surface colours.

For each observer, the surfaces' cone catches are adapted to the light they
are seen in (von Kries; with the filter, the filtered illuminant by default),
then expressed on three post-receptoral axes, each as a contrast against the
adapted white:

* luminance: Y = a L + b M (the observer's own luminance), c = Y / Y_white - 1;
* red-green: the MacLeod-Boynton l = a L / (a L + b M), c = l / l_white - 1;
* blue-yellow: the MacLeod-Boynton s = S / (a L + b M), c = s / s_white - 1.

A gain is the RMS over surfaces of c with the filter divided by the RMS without
it: above 1 the filter spreads the surfaces apart on that axis, below 1 it
squeezes them together. Without the filter the observer is adapted to the
unfiltered illuminant. A neutral-density filter under full adaptation gives
exactly 1 on every axis (the adapted catches do not change).

Dichromats have no red-green axis when they lack L or M (protanopes,
deuteranopes; their luminance is carried by the remaining cone, M or L, and
s = S / M or S / L), and no blue-yellow axis when they lack S (tritanopes);
the missing gain is NaN (null in the scorecard).

References: von Kries (1902) coefficient law; MacLeod & Boynton (1979), JOSA
69, 1183-1186; CIE 170-1:2006 (luminance weights a, b); Derrington, Krauskopf &
Lennie (1984), J Physiol 357, 241-265 (contrast against the adapting white).

Public: :data:`AXES`, :func:`opponent_channels`, :func:`opponent_contrasts`,
:func:`contrast_rms`, :func:`rms_without`, :func:`gains_from_planes`, :func:`contrast_gains`.
"""

from __future__ import annotations

import sys

import numpy as np

from ..observers.spaces import von_kries_gains

__all__ = ["AXES", "opponent_channels", "opponent_contrasts", "contrast_rms", "rms_without", "gains_from_planes",
           "contrast_gains"]

#: The three axes, in the order of every array this module returns.
AXES = ("luminance", "red_green", "blue_yellow")


def opponent_channels(kind: str, deficiency: str | None, luminance_weights) -> list:
    """Cone weights (numerator, denominator) of the luminance, red-green and blue-yellow axes.

    Parameters
    ----------
    kind : str
        ``normal``, ``anomalous`` or ``dichromat``.
    deficiency : str or None
        ``protan``, ``deutan``, ``tritan``.
    luminance_weights : tuple of float
        (a, b) of the observer's luminance a L + b M.

    Returns
    -------
    list
        Three entries in :data:`AXES` order, each (numerator (3,), denominator
        (3,) or None) or None where the observer lacks the axis.

    Examples
    --------
    >>> ch = opponent_channels("dichromat", "deutan", (0.69, 0.35))
    >>> ch[1] is None, ch[2][0].tolist(), ch[2][1].tolist()
    (True, [0.0, 0.0, 1.0], [1.0, 0.0, 0.0])
    """
    a, b = luminance_weights
    lum = np.array([a, b, 0.0])
    red_green = (np.array([a, 0.0, 0.0]), lum)
    if kind == "dichromat" and deficiency in ("protan", "deutan"):
        lum = np.array([0.0, 1.0, 0.0]) if deficiency == "protan" else np.array([1.0, 0.0, 0.0])
        red_green = None
    blue_yellow = (np.array([0.0, 0.0, 1.0]), lum)
    if kind == "dichromat" and deficiency == "tritan":
        blue_yellow = None
    return [(lum, None), red_green, blue_yellow]


def opponent_contrasts(catches, white, channels) -> np.ndarray:
    """Contrasts of surfaces against the white on the three axes.

    Parameters
    ----------
    catches : array_like
        Cone catches, shape (..., N, 3).
    white : array_like
        Cone catches of the white (the light itself), shape (..., 3).
    channels : list
        From :func:`opponent_channels`.

    Returns
    -------
    numpy.ndarray
        Shape (..., N, 3); NaN for a missing axis.
    """
    q = np.asarray(catches, dtype=float)
    w = np.asarray(white, dtype=float)[..., None, :]
    out = np.full(q.shape[:-1] + (3,), np.nan)
    with np.errstate(divide="ignore", invalid="ignore"):
        for k, ch in enumerate(channels):
            if ch is None:
                continue
            num, den = ch
            x = q @ num
            xw = w @ num
            if den is not None:
                x = x / (q @ den)
                xw = xw / (w @ den)
            out[..., k] = x / xw - 1.0
    return out


def contrast_rms(planes, white, channels, *, gains=None, catches=None) -> np.ndarray:
    """RMS over surfaces of the three contrasts, from cone-catch planes (the fast path).

    Parameters
    ----------
    planes : sequence of 3 array_like
        L, M, S catches of the surfaces, each (B, N).
    white : array_like
        L, M, S of the white, shape (B, 3).
    channels : list
        From :func:`opponent_channels`.
    gains : array_like, optional
        Von Kries gains (B, 3) applied to surfaces and white alike; default 1.
    catches : numpy.ndarray, optional
        The same catches as one C-ordered float64 array (B, 3, M >= N) whose ``[:, i, :N]`` are the planes
        (e.g. a product's output with the white in the last column): lets the compiled loop read them
        directly. Only the speed depends on it.

    Returns
    -------
    numpy.ndarray
        Shape (B, 3) in :data:`AXES` order; NaN for a missing axis.
    """
    w = np.asarray(white, dtype=float)
    g = np.ones_like(w) if gains is None else np.asarray(gains, dtype=float)
    wg = w * g
    n = np.shape(planes[0])[-1]
    out = np.full((w.shape[0], 3), np.nan)
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        if catches is not None and "numba" in sys.modules:  # compiled (same bits), when numba is loaded already
            c_planes = _compiled_planes(catches, n, wg, g, channels)
        else:
            c_planes = _array_planes(planes, wg, g, channels)
        for k, c in enumerate(c_planes):
            if c is not None:
                out[:, k] = np.sqrt(np.einsum("ij,ij->i", c, c) / n)
    return out


def _factors(weights, wg: np.ndarray, g: np.ndarray) -> tuple[list, np.ndarray]:
    """The cones with a non-zero weight and, per cone, weight x gain / (the white's weighted sum), (3, B)."""
    scale = 1.0 / (wg @ weights)
    f = np.zeros((3, wg.shape[0]))
    cones = []
    for i, wi in enumerate(weights):
        if wi != 0.0:
            cones.append(i)
            f[i] = wi * g[:, i] * scale
    return cones, f


def _array_planes(planes, wg: np.ndarray, g: np.ndarray, channels) -> list:
    """Each channel's contrast plane (B, N) (None for a missing axis), array by array."""
    memo: dict = {}

    def normalised(weights):
        # sum_i weights_i g_i q_i divided by the same sum for the white: (B, N), 1 at the white.
        key = tuple(float(v) for v in weights)
        if key not in memo:
            cones, f = _factors(weights, wg, g)
            acc = None
            for i in cones:
                term = planes[i] * f[i][:, None]
                acc = term if acc is None else np.add(acc, term, out=acc)
            memo[key] = acc
        return memo[key]

    def plane(num, den):
        c = normalised(num) - 1.0 if den is None else np.divide(normalised(num), normalised(den))
        if den is not None:
            c -= 1.0
        return c

    return [None if ch is None else plane(*ch) for ch in channels]


def _compiled_planes(catches: np.ndarray, n: int, wg: np.ndarray, g: np.ndarray, channels) -> list:
    """:func:`_array_planes` by the compiled loop of :mod:`cvdfilter.metrics.contrast_kernel` (same bits), from
    the catches as one (B, 3, M) array."""
    from .contrast_kernel import channel_contrast

    cat = np.ascontiguousarray(catches, dtype=float)

    def plane(num, den):
        cn, fn = _factors(num, wg, g)
        cd, fd = _factors(den, wg, g) if den is not None else ([], fn)
        c = np.empty((cat.shape[0], n))
        channel_contrast(cat, np.array(cn, dtype=np.int64), fn, np.array(cd, dtype=np.int64), fd, c)
        return c

    return [None if ch is None else plane(*ch) for ch in channels]


def contrast_gains(catches_with, white_with, catches_without, white_without, channels, *,
                   adaptation: float = 1.0) -> np.ndarray:
    """RMS contrast with the filter over RMS contrast without it, per axis.

    Parameters
    ----------
    catches_with : array_like
        Cone catches of the surfaces through each filter, shape (F, N, 3).
    white_with : array_like
        Cone catches of the illuminant through each filter, shape (F, 3).
    catches_without : array_like
        Without the filter, shape (N, 3).
    white_without : array_like
        The illuminant without the filter, shape (3,).
    channels : list
        From :func:`opponent_channels`.
    adaptation : float
        Degree of von Kries adaptation to the filtered light, 0-1
        (:func:`cvdfilter.observers.spaces.von_kries_gains`).

    Returns
    -------
    numpy.ndarray
        Shape (F, 3) in :data:`AXES` order; NaN for a missing axis or a black filter.

    Examples
    --------
    >>> q0 = np.array([[0.2, 0.3, 0.1], [0.5, 0.4, 0.3], [0.3, 0.3, 0.6]])
    >>> w0 = np.array([1.0, 1.0, 1.0])
    >>> ch = opponent_channels("normal", None, (0.69, 0.35))
    >>> contrast_gains(0.5 * q0[None], 0.5 * w0[None], q0, w0, ch).round(12).tolist()
    [[1.0, 1.0, 1.0]]
    """
    q1 = np.asarray(catches_with, dtype=float)
    q0 = np.asarray(catches_without, dtype=float)
    rms0 = rms_without(q0, white_without, channels)
    return gains_from_planes([q1[..., c] for c in range(3)], white_with, white_without, rms0, channels,
                             adaptation=adaptation)


def rms_without(catches_without, white_without, channels) -> np.ndarray:
    """RMS contrasts without the filter (observer fully adapted to the unfiltered light); shape (3,)."""
    q0 = np.asarray(catches_without, dtype=float)
    w0 = np.asarray(white_without, dtype=float)
    with np.errstate(divide="ignore", invalid="ignore"):
        g0 = von_kries_gains(w0, adaptation=1.0)
    return contrast_rms([q0[None, :, c] for c in range(3)], w0[None], channels, gains=g0[None])[0]


def gains_from_planes(planes, white_with, white_without, rms0, channels, *, adaptation: float = 1.0) -> np.ndarray:
    """Contrast gains from cone-catch planes (the fast path of :func:`contrast_gains`).

    Parameters
    ----------
    planes : sequence of 3 array_like
        L, M, S catches through each filter, each (F, N).
    white_with : array_like
        Shape (F, 3).
    white_without : array_like
        Shape (3,).
    rms0 : array_like
        From :func:`rms_without`, shape (3,).
    channels : list
    adaptation : float

    Returns
    -------
    numpy.ndarray
        Shape (F, 3).
    """
    w1 = np.asarray(white_with, dtype=float)
    w0 = np.asarray(white_without, dtype=float)
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        g1 = von_kries_gains(w1, w0[None, :], adaptation=adaptation)
        gains = contrast_rms(planes, w1, channels, gains=g1) / np.asarray(rms0, dtype=float)
    return np.where(np.isfinite(gains), gains, np.nan)
