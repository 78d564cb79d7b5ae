"""Anomalous pigments: what ``shift``, ``separation`` and the severity words mean, and the shifted pigment.

Protan and deutan ``shift`` is how far the anomalous cone's fundamental peak
moves toward the other cone's in the CIE 2006 reference observer (32 years,
2 deg); ``separation`` is what remains between the two peaks (27.35 - shift nm
for both). The pigment moves by whatever does that (:func:`pigment_shift`), and
that pigment is used at every age and field. Tritan: the S pigment's peak. See
:data:`SHIFT_MEASURE` and docs/models.md section 2.

Public: :data:`CONE_INDEX`, :data:`TOWARD`, :func:`anomalous_absorbance`, :func:`pigment_shift`,
:func:`normal_separation`, :func:`severity_shift`, :data:`SHIFT_MEASURE`, :data:`SEVERITY_SEPARATIONS`,
:data:`TRITAN_SHIFTS`, :data:`SEVERITY_MACHADO`, :data:`SEVERITY_SHIFTS`, :data:`DEFAULT_SHIFTS`.
"""

from __future__ import annotations

import numpy as np

from . import cie2006

# DEFAULT_SHIFTS and SEVERITY_SHIFTS come from the module's __getattr__ (computed on first use), which a
# static checker cannot see: hence the noqa.
__all__ = ["CONE_INDEX", "TOWARD", "anomalous_absorbance", "pigment_shift", "normal_separation",  # noqa: F822
           "severity_shift", "SHIFT_MEASURE", "SEVERITY_SEPARATIONS", "TRITAN_SHIFTS", "SEVERITY_MACHADO",
           "DEFAULT_SHIFTS", "SEVERITY_SHIFTS"]

#: The cone each deficiency concerns (0 L, 1 M, 2 S).
CONE_INDEX = {"protan": 0, "deutan": 1, "tritan": 2}
#: The pigment each anomalous pigment moves toward.
TOWARD = {"protan": 1, "deutan": 0, "tritan": 1}

#: What ``shift`` measures, per deficiency. Protan and deutan: the move of the
#: affected cone's *fundamental* peak (lambda max of the corneal, energy-based
#: sensitivity of the CIE 2006 reference observer, 32 years, 2 deg) toward the
#: other cone's peak, so that a shift s leaves the same residual separation,
#: 27.35 - s nm, for protans and deutans. Tritan: the move of the S *pigment*'s
#: peak (the S fundamental's peak jumps as the pigment moves; see docs/models.md).
SHIFT_MEASURE = {"protan": "fundamental peak", "deutan": "fundamental peak", "tritan": "pigment peak"}

#: Residual separations in nm for the severity words, on the measure above.
#: ``moderate`` (the default) is the average anomalous trichromat of DeMarco,
#: Pokorny & Smith (1992), JOSA A 9, 1465-1476: corneal energy-based peaks
#: normal 543/566, protanomalous 543/553, deuteranomalous 560/566 nm, i.e. 10 nm
#: between M and L' and 6 nm between M' and L (abstract, verified). ``mild`` and
#: ``severe`` are ours: 1.5 and 0.5 times that average (no published spread at
#: hand). Tritan: no comparable data; S-pigment shifts of 8, 15 and 30 nm from the
#: 112.4 nm S-M pigment separation (ours), i.e. the separations below.
SEVERITY_SEPARATIONS = {
    "protan": {"mild": 15.0, "moderate": 10.0, "severe": 5.0},
    "deutan": {"mild": 9.0, "moderate": 6.0, "severe": 3.0},
}
#: Tritan severity words as S-pigment shifts, nm (ours, see above).
TRITAN_SHIFTS = {"mild": 8.0, "moderate": 15.0, "severe": 30.0}


def normal_separation(deficiency: str) -> float:
    """The largest ``shift`` (the dichromatic limit), nm, on :data:`SHIFT_MEASURE`.

    L-M: 27.35 nm between the reference observer's fundamental peaks (570.17
    and 542.82 nm); S-M: 112.4 nm between the S and M pigment peaks.

    Examples
    --------
    >>> round(normal_separation("protan"), 2), round(normal_separation("deutan"), 2)
    (27.35, 27.35)
    """
    cone, other = CONE_INDEX[deficiency], TOWARD[deficiency]
    if SHIFT_MEASURE[deficiency] == "fundamental peak":
        return cie2006.fundamental_separation(cone, other)
    peaks = cie2006.pigment_peaks()
    return float(abs(peaks[other] - peaks[cone]))


def pigment_shift(deficiency: str, shift: float) -> float:
    """The pigment's own peak shift, nm, for a ``shift`` on :data:`SHIFT_MEASURE`.

    Protan and deutan: the inverse of :func:`cie2006.peak_shift_table` (continuous,
    strictly increasing; 0 -> 0, the fundamental separation -> the pigment
    separation, 23.14 nm). Tritan: the shift itself.

    Examples
    --------
    >>> round(pigment_shift("protan", 16.0), 2), round(pigment_shift("deutan", 16.0), 2)
    (11.99, 15.44)
    """
    if SHIFT_MEASURE[deficiency] == "pigment peak":
        return float(shift)
    return cie2006.pigment_shift_for(CONE_INDEX[deficiency], TOWARD[deficiency], shift)


def severity_shift(deficiency: str, word: str) -> float:
    """The ``shift`` a severity word stands for, nm (:data:`SEVERITY_SEPARATIONS`)."""
    if deficiency == "tritan":
        return TRITAN_SHIFTS[word]
    return normal_separation(deficiency) - SEVERITY_SEPARATIONS[deficiency][word]


def __getattr__(name: str):
    # DEFAULT_SHIFTS and SEVERITY_SHIFTS depend on the CIE 2006 tables, so they are computed on first use.
    if name == "SEVERITY_SHIFTS":
        return {d: {w: severity_shift(d, w) for w in TRITAN_SHIFTS} for d in CONE_INDEX}
    if name == "DEFAULT_SHIFTS":
        return {d: severity_shift(d, "moderate") for d in CONE_INDEX}
    raise AttributeError(name)


#: Machado severity (0-1) for the words: the same fraction of the way to the dichromat as the
#: shifted pigment's fundamental-peak shift (protan 0.45/0.63/0.82, deutan 0.67/0.78/0.89);
#: tritan as before (ours).
SEVERITY_MACHADO = {
    "protan": {"mild": 0.45, "moderate": 0.63, "severe": 0.82},
    "deutan": {"mild": 0.67, "moderate": 0.78, "severe": 0.89},
    "tritan": {"mild": 0.55, "moderate": 0.8, "severe": 1.0},
}


def anomalous_absorbance(deficiency: str, shift: float) -> np.ndarray:
    """Absorbance of the anomalous pigment for a ``shift`` in nm, on the CIE 2006 table grid (441,).

    ``shift`` is measured as :data:`SHIFT_MEASURE` says (protan/deutan: the
    move of the reference observer's fundamental peak; tritan: the S pigment's
    peak); :func:`pigment_shift` converts it to the pigment's own shift, and
    :func:`cie2006.anomalous_pigment` moves the template by that much along log
    wavenumber, blended toward the other pigment's template in proportion to the
    pigment shift over the pigment separation. Shift 0 gives the normal pigment
    exactly; the largest shift (:func:`normal_separation`) gives the other
    pigment exactly (the dichromatic limit).
    """
    cone, other = CONE_INDEX[deficiency], TOWARD[deficiency]
    return cie2006.anomalous_pigment(cone, other, pigment_shift(deficiency, shift))

