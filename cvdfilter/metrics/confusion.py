"""Confusion pairs: surfaces on one confusion line of the observer's deficient axis.

A confusion line of a protan, deutan or tritan observer is the set of
chromaticities that differ only in the excitation of the affected cone: along a
deutan line only M changes, so the ratio S / L is the same all along it (the
lines meet at the deutan copunctal point in a chromaticity diagram). The
position *across* the lines is therefore a ratio of the two unaffected cones,
measured here in the observer's own cone space, after von Kries adaptation, as
a natural logarithm:

    protan: v = ln(S / M)      deutan: v = ln(S / L)      tritan: v = ln(L / M)

Log ratios are unchanged by von Kries adaptation and by neutral density (both
scale each cone signal by a constant that cancels in a difference of v).

Dichromats. Two surfaces are a confusion pair when |v_1 - v_2| is below the
tolerance :data:`CONFUSION_TOLERANCE` (0.02, a 2 % difference in the cone
ratio; a modelling choice of this project, of the order of chromatic
discrimination thresholds; users can change it).

Anomalous trichromats keep a weakened version of the lost axis: for
protanomalous u = ln(L' / M), deuteranomalous u = ln(L / M'), tritanomalous
u = ln(S' / (a L + b M)), computed with their shifted pigment. Two surfaces
are a confusion pair for them when they lie on one confusion line *and* the
weakened axis does not separate them either, i.e. when the point
(v / tol, u / tol) of the two surfaces lies less than 1 apart (an ellipse
of semi-axes tol in v and u).

Normal observers have no deficient axis; their confusion counts are null.

Public: :data:`CONFUSION_TOLERANCE`, :func:`confusion_axes`, :func:`confusion_features`,
:func:`confusion_coordinates`, :func:`confusion_reference`, :func:`confusion_from_planes`,
:func:`confusion_pairs`.
"""

from __future__ import annotations

import numpy as np

from .pairs import pair_changes, pair_reference

__all__ = ["CONFUSION_TOLERANCE", "confusion_axes", "confusion_features", "confusion_coordinates",
           "confusion_reference", "confusion_from_planes", "confusion_pairs"]

#: Tolerance on the log cone ratios, natural-log units (a modelling choice; see the module docstring).
CONFUSION_TOLERANCE = 0.02
#: Catches are floored here before taking logs (only a black surface or filter reaches it).
_TINY = 1e-300

_L, _M, _S = np.eye(3)


def confusion_axes(kind: str, deficiency: str | None, luminance_weights=(0.68990272, 0.34832189)):
    """Cone weights of the log-ratio axes an observer's confusion pairs are judged on.

    Parameters
    ----------
    kind : str
        ``normal``, ``anomalous`` or ``dichromat``.
    deficiency : str or None
        ``protan``, ``deutan``, ``tritan``.
    luminance_weights : tuple of float
        (a, b), the weights of L and M in the observer's luminance (tritan weakened axis).

    Returns
    -------
    list of (numpy.ndarray, numpy.ndarray) or None
        One (numerator, denominator) pair of cone-weight vectors per axis:
        the across-line axis v, then (anomalous only) the weakened axis u;
        None for a normal observer.

    Examples
    --------
    >>> [(n.tolist(), d.tolist()) for n, d in confusion_axes("dichromat", "deutan")]
    [([0.0, 0.0, 1.0], [1.0, 0.0, 0.0])]
    """
    if kind == "normal" or deficiency is None:
        return None
    a, b = luminance_weights
    across = {"protan": (_S, _M), "deutan": (_S, _L), "tritan": (_L, _M)}[deficiency]
    axes = [across]
    if kind == "anomalous":
        weak = {"protan": (_L, _M), "deutan": (_L, _M), "tritan": (_S, a * _L + b * _M)}[deficiency]
        axes.append(weak)
    return axes


def _is_unit(w) -> int | None:
    nz = np.nonzero(w)[0]
    return int(nz[0]) if len(nz) == 1 and w[nz[0]] == 1.0 else None


def confusion_features(catch_planes, log_planes, axes) -> list:
    """The log ratios of :func:`confusion_axes`, as planes.

    Parameters
    ----------
    catch_planes : sequence of 3 array_like
        L, M, S catches, each (..., N).
    log_planes : sequence of 3 array_like
        Their natural logs (:func:`cvdfilter.metrics.discrimination.log_catches`).
    axes : list
        From :func:`confusion_axes`.

    Returns
    -------
    list of numpy.ndarray
        One plane per axis, shape (..., N), natural-log units.
    """
    def log_of(w):
        k = _is_unit(w)
        if k is not None:
            return log_planes[k]
        combo = sum(float(wi) * catch_planes[i] for i, wi in enumerate(w) if wi != 0.0)
        return np.log(np.maximum(combo, _TINY))

    return [log_of(num) - log_of(den) for num, den in axes]


def confusion_coordinates(catches, axes, tolerance: float = CONFUSION_TOLERANCE) -> np.ndarray:
    """Points whose Euclidean distance below 1 marks a confusion pair.

    Parameters
    ----------
    catches : array_like
        Cone catches (adapted or not: the result is the same), shape (..., N, 3).
    axes : list
        From :func:`confusion_axes`.
    tolerance : float
        In natural-log units of the cone ratios, > 0.

    Returns
    -------
    numpy.ndarray
        Shape (..., N, len(axes)): each log ratio divided by ``tolerance``.
    """
    if not tolerance > 0:
        raise ValueError(f"tolerance must be positive, got {tolerance}")
    q = np.asarray(catches, dtype=float)
    planes = [q[..., c] for c in range(3)]
    logs = [np.log(np.maximum(p, _TINY)) for p in planes]
    return np.stack(confusion_features(planes, logs, axes), axis=-1) / tolerance


def confusion_reference(catches_without, axes, *, tolerance: float = CONFUSION_TOLERANCE) -> dict:
    """The state without the filter, prepared once for :func:`confusion_from_planes`."""
    if not tolerance > 0:
        raise ValueError(f"tolerance must be positive, got {tolerance}")
    q0 = np.asarray(catches_without, dtype=float)
    features = np.stack(confusion_features([q0[:, c] for c in range(3)],
                                           [np.log(np.maximum(q0[:, c], _TINY)) for c in range(3)], axes), axis=-1)
    return pair_reference(features, np.eye(len(axes)) / tolerance, 1.0)


def confusion_from_planes(catch_planes, log_planes, axes, reference: dict) -> dict:
    """Confusion-pair counts from catch and log-catch planes (the fast path); see :func:`confusion_pairs`."""
    close0, close1, both = pair_changes(confusion_features(catch_planes, log_planes, axes), reference)
    return {"without": np.int64(close0), "with": close1, "resolved": close0 - both, "created": close1 - both}


def confusion_pairs(catches_with, catches_without, axes, *, tolerance: float = CONFUSION_TOLERANCE) -> dict:
    """Confusion pairs without and with a filter, and the pairs it resolves or creates.

    Parameters
    ----------
    catches_with : array_like
        Cone catches through each filter, shape (F, N, 3).
    catches_without : array_like
        Without the filter, shape (N, 3).
    axes : list
        From :func:`confusion_axes` (not None).
    tolerance : float
        Natural-log units.

    Returns
    -------
    dict of numpy.ndarray
        ``without`` (scalar), ``with``, ``resolved`` (confused without the
        filter, not with it), ``created`` (confused only with it); int64, shape (F,).

    Examples
    --------
    >>> q0 = np.array([[1.0, 0.5, 0.2], [1.0, 0.9, 0.2], [1.0, 0.5, 0.6]])  # rows 0, 1: same S/L
    >>> q1 = q0 * [[1.0, 1, 1], [1.3, 1, 1], [1.0, 1, 1]]                   # the filter raises L of row 1
    >>> r = confusion_pairs(q1[None], q0, confusion_axes("dichromat", "deutan"))
    >>> {k: int(np.ravel(v)[0]) for k, v in r.items()}
    {'without': 1, 'with': 0, 'resolved': 1, 'created': 0}
    """
    reference = confusion_reference(catches_without, axes, tolerance=tolerance)
    q = np.asarray(catches_with, dtype=float)
    planes = [q[..., c] for c in range(3)]
    logs = [np.log(np.maximum(p, _TINY)) for p in planes]
    return confusion_from_planes(planes, logs, axes, reference)
