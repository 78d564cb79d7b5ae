"""What a colour-deficient observer sees, shown to a normal viewer.

A simulation maps an observer's own *adapted* cone excitations to the
adapted cone excitations, for the observer's normal base observer (same age
and field), of a colour that a normal viewer sees as the observer sees the
input. Inputs are von Kries-adapted: the *reference white* (``reference_white``)
has adapted excitations ``white_lms`` ((1, 1, 1) after full adaptation), so
the unadapted excitations are ``raw = lms * raw_reference / white_lms`` and
every construction below is made on those, exactly as published, then
carried back with the same gains. Every operator is linear per pixel (one
3x3 matrix, or two with a half-space test for Brettel 1997), computed here
from the observer's own fundamentals, never copied from a paper, so it stays
right for any fundamentals, age, field, white and illuminant.

Methods (:data:`METHODS`; :data:`METHOD_DESCRIPTIONS` says what each is)
-------------------------------------------------------------------------
``identity``
    Normal observers.
``brettel1997`` (default for dichromats)
    Brettel, Vienot & Mollon (1997), as published. The dichromat's colours
    lie on two half-planes through the neutral axis, the **equal-energy
    stimulus**, and an anchor each: monochromatic 475 and 575 nm for
    protanopes and deuteranopes, 485 and 660 nm for tritanopes. A colour is
    moved along the missing cone's axis onto the half-plane on its side of
    the plane through the neutral axis and that axis, so the two remaining
    cone signals are unchanged (a metamer for the dichromat) and a whole
    confusion line collapses onto one colour. With ``reference_white=None``
    (the inputs are read as adapted to the equal-energy white) the adapted
    white is the neutral axis; with another reference white it is not, and
    that white is changed by the projection as in the paper.
``brettel-adapted``
    Brettel's half-planes and anchors with the neutral axis at the reference
    white instead of the equal-energy stimulus, so the adapted white always
    maps to itself. Not a published construction; equal to ``brettel1997``
    when the reference white is equal energy.
``vienot1999`` (protan, deutan; needs a display)
    Vienot, Brettel & Mollon (1999), as published: one plane through black,
    the display's white and the display's blue primary, in the display's own
    cone excitations (:func:`vienot_plane_matrix`). Vienot et al. give
    protanopes and deuteranopes only; tritanopes are refused.
``brettel-plane`` (protan, deutan)
    One plane through the reference white that fits Brettel's two anchors
    best (least squares on unit vectors): a single-plane stand-in for
    Brettel's half-planes where no display is in view. Not a published
    construction.
``machado2009`` (anomalous trichromats, both models)
    Machado, Oliveira & Fernandes (2009): the anomalous cone signals go
    through the normal observer's opponent stage (the Ingling & Tsou matrix
    ``T``: WS, YB, RG) and back through the normal observer's inverse:
    ``lms_n = T^-1 N T lms_a``, where ``N`` makes the white map to itself.
    Where that normalisation happens is a modelling choice
    (``normalisation``, :data:`NORMALISATIONS`):

    * ``"cone"`` (default): von Kries gains at the cones, as everywhere else
      in the tool. Both observers' whites are ``white_lms``, ``N`` is the
      identity and so is the operator: the anomalous observer's adapted cone
      signals are shown as the normal observer's, and the anomalous view
      lives entirely in the observer's fundamentals, which produce the input.
      Continuous in every parameter (age, field, shift, severity, white,
      filter); independent of how the fundamentals are scaled and of ``T``.
    * ``"opponent"``: Machado's own scaling, one gain per opponent channel,
      ``N = diag(T w_n / T w_a)`` with w_n and w_a the reference white's
      unadapted normal and anomalous excitations (:func:`raw_fundamentals`
      gives the cone scales: colour-science's for ``model=machado2009``, the
      normal cone's area for shifted pigments). With a display's white as
      the reference this is exactly colour-science's
      ``matrix_anomalous_trichromacy_Machado2009`` in cone space. The YB and
      RG responses of a white are close to 0, so these gains have poles as
      age, field, shift or white change; a gain outside 0.2-5 raises an
      error rather than return a meaningless operator. Never a default.

The reference white
-------------------
The white the inputs are adapted to: an illuminant spec (``"D65"``), a
spectrum on the observer's grid (e.g. a display's white, the sum of its
primaries), or None for the equal-energy white. Only its spectral shape
matters. The adapting white of a scene (an illuminant seen through a
filter) is usually given here, or folded into the caller's von Kries gains
with ``reference_white`` left at the white those gains normalise.

References
----------
Brettel, H., Vienot, F., & Mollon, J. D. (1997). Computerized simulation of
color appearance for dichromats. JOSA A, 14(10), 2647-2655.
Vienot, F., Brettel, H., & Mollon, J. D. (1999). Digital video colourmaps for
checking the legibility of displays by dichromats. Color Research &
Application, 24(4), 243-252.
Machado, G. M., Oliveira, M. M., & Fernandes, L. A. F. (2009). A
physiologically-based model for simulation of color vision deficiency. IEEE
TVCG, 15(6), 1291-1298.
Ingling, C. R., & Tsou, B. H.-P. (1977). Orthogonal combination of the three
visual channels. Vision Research, 17, 1075-1082.

Public: :class:`Simulation`, :func:`simulation`, :func:`simulate`, :func:`raw_fundamentals`,
:func:`reference_white_spectrum`, :func:`vienot_plane_matrix`, :func:`methods_for`, :data:`METHODS`,
:data:`METHOD_DESCRIPTIONS`, :data:`NORMALISATIONS`, :data:`DEFAULT_NORMALISATION`, :data:`ANCHORS_NM`,
:data:`MATRIX_LMS_TO_OPPONENT`.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from ..errors import InputError
from .observer import Observer, observer as _make_observer
from .operator import HasOperator, PiecewiseLinear

__all__ = ["Simulation", "simulation", "simulate", "METHODS", "METHOD_DESCRIPTIONS", "NORMALISATIONS",
           "DEFAULT_NORMALISATION", "ANCHORS_NM", "MATRIX_LMS_TO_OPPONENT", "reference_white_spectrum",
           "raw_fundamentals", "vienot_plane_matrix", "methods_for"]

#: What each method is; the one registry the spec parser, ``list``, the CLI help and the docs read.
METHOD_DESCRIPTIONS = {
    "identity": "normal observers: no change",
    "brettel1997": "Brettel, Vienot & Mollon 1997 as published: two half-planes through the equal-energy "
                   "stimulus and monochromatic anchors (475/575 nm; tritan 485/660 nm)",
    "brettel-adapted": "Brettel's half-planes and anchors with the neutral axis at the reference (adapting) "
                       "white, so the adapted white stays neutral (not a published construction)",
    "vienot1999": "Vienot, Brettel & Mollon 1999 as published: one plane through black, the display's white "
                  "and its blue primary (protan, deutan; needs a display)",
    "brettel-plane": "one plane through the reference white fitting Brettel's two anchors best, least squares "
                     "(protan, deutan; not a published construction)",
    "machado2009": "Machado, Oliveira & Fernandes 2009 opponent-stage mapping (anomalous trichromats)",
}
#: Method names.
METHODS = tuple(METHOD_DESCRIPTIONS)
#: Where the Machado (2009) mapping makes the white map to itself.
NORMALISATIONS = ("cone", "opponent")
#: The default normalisation: the only one continuous in every parameter.
DEFAULT_NORMALISATION = "cone"

#: Anchor wavelengths, nm (Brettel, Vienot & Mollon 1997): the stimuli dichromats
#: see as normal trichromats do.
ANCHORS_NM = {"protan": (475.0, 575.0), "deutan": (475.0, 575.0), "tritan": (485.0, 660.0)}

#: LMS -> opponent (WS, YB, RG) matrix Machado et al. (2009) take from Ingling &
#: Tsou (1977); the same values as colour-science's
#: ``colour.blindness.machado2009.MATRIX_LMS_TO_WSYBRG`` (checked in tests/test_simulate.py).
MATRIX_LMS_TO_OPPONENT = np.array([[0.600, 0.400, 0.000],
                                   [0.240, 0.105, -0.700],
                                   [1.200, -1.600, 0.400]])


@dataclass(frozen=True, eq=False)
class Simulation(HasOperator):
    """A per-pixel operator from an observer's adapted LMS to the normal observer's, with its provenance.

    Attributes
    ----------
    observer : Observer
        The simulated observer.
    method : str
        One of :data:`METHODS` (see :data:`METHOD_DESCRIPTIONS`).
    operator : PiecewiseLinear
        The operator on adapted L, M, S (column vectors; one matrix, or two
        split by a plane for Brettel 1997), see :mod:`cvdfilter.observers.operator`.
    white_lms : numpy.ndarray
        Adapted excitations of the white (3,), the same for input and output.
    info : dict
        Details: anchor wavelengths (nm) and their adapted excitations, the
        reference white's unadapted excitations, the missing or affected cone.
    """

    observer: Observer
    method: str
    operator: PiecewiseLinear
    white_lms: np.ndarray = field(default_factory=lambda: np.ones(3))
    info: dict = field(default_factory=dict)

    # matrices, separator, apply(lms) and __call__ come from HasOperator: ``apply`` maps the observer's
    # adapted L, M, S (..., 3) to the normal base observer's adapted L, M, S (..., 3).


def reference_white_spectrum(obs: Observer, reference_white=None) -> np.ndarray:
    """The reference white as a spectrum on the observer's grid, shape (n_wl,).

    ``None`` -> equal-energy white; a string -> :func:`cvdfilter.spectra.illuminants.illuminant`;
    an array -> taken as a spectrum on ``obs.wavelengths``.
    """
    n = len(obs.wavelengths)
    if reference_white is None:
        return np.ones(n)
    if isinstance(reference_white, str):
        from ..spectra.illuminants import illuminant

        return np.asarray(illuminant(reference_white, obs.grid).spd, dtype=float)
    spd = np.asarray(reference_white, dtype=float)
    if spd.shape != (n,):
        raise InputError(f"reference white has shape {spd.shape}; expected a spectrum of {n} values "
                         f"on the observer's grid", source="reference_white")
    if not np.all(np.isfinite(spd)) or np.any(spd < 0) or not np.any(spd > 0):
        raise InputError("reference white must be finite, non-negative and not all zero", source="reference_white")
    return spd


def raw_fundamentals(obs: Observer) -> np.ndarray:
    """The observer's fundamentals at the scale the opponent stage sees them, shape (n_wl, 3).

    ``Observer.fundamentals`` each peak at 1, which says nothing about how
    strongly an anomalous cone responds relative to the normal ones; the
    Machado (2009) opponent stage mixes cones, so that scale matters.

    * ``model=machado2009``: Machado et al. blend the affected cone with the
      other one scaled by a ratio of areas (so the blend keeps close to the
      normal cone's area); colour-science's unnormalised blend is restored.
    * ``model=shift``: the anomalous cone is scaled to the same area (sum over
      the grid, energy units) as the normal cone it replaces, the rule
      Machado's blend follows, so that a white's signals stay close to the
      normal ones and the opponent-channel scaling stays well conditioned.
    * everyone else: the fundamentals as they are.
    """
    f = obs.fundamentals
    if obs.kind != "anomalous":
        return f
    if "raw_scale" in obs.params:  # an observer built elsewhere that states its own cone scales
        return f * np.asarray(obs.params["raw_scale"], dtype=float)
    if obs.params.get("model") == "machado2009":
        from .machado2009 import machado_peak_factors

        p = obs.params
        return f * machado_peak_factors(str(obs.deficiency), p["severity"], age=p["age"], field=p["field"])
    scale = np.ones(3)
    k = obs.affected_cone
    base = obs.base if obs.base is not None else obs  # an anomalous observer always has its base
    scale[k] = base.fundamentals[:, k].sum() / f[:, k].sum()
    return f * scale


def _white_lms(white_lms) -> np.ndarray:
    w = np.asarray(white_lms, dtype=float)
    if w.shape != (3,) or not np.all(np.isfinite(w)) or np.any(w <= 0):
        raise InputError(f"white_lms must be three positive numbers, got {white_lms!r}", source="white_lms")
    return w


def _anchor_lms(obs: Observer, wavelengths_nm) -> np.ndarray:
    """Unadapted L, M, S of monochromatic lights (unit power), shape (n, 3)."""
    wl = obs.wavelengths
    f = obs.fundamentals
    return np.stack([[np.interp(x, wl, f[:, c]) for c in range(3)] for x in wavelengths_nm])


def _plane_matrix(normal: np.ndarray, cone: int) -> np.ndarray:
    """Move along ``cone``'s axis onto the plane through 0 with ``normal``: a 3x3 matrix."""
    m = np.eye(3)
    m[cone] = -normal / normal[cone]
    m[cone, cone] = 0.0
    return m


_MISSING = {"protan": 0, "deutan": 1, "tritan": 2}


def vienot_plane_matrix(rgb_to_lms, deficiency: str) -> np.ndarray:
    """Vienot, Brettel & Mollon (1999): the dichromat projection for a display, in its cone space.

    The dichromat's colours lie on one plane through black, the display's
    white (R = G = B = 1) and its blue primary (R = G = 0, B = 1); a colour
    keeps its two remaining cone signals and the missing one is read off
    the plane.

    Parameters
    ----------
    rgb_to_lms : array_like
        (3, 3): the display's cone excitations of unit R, G, B (columns), in
        any cone scaling (the construction does not depend on it).
    deficiency : str
        ``protan`` or ``deutan`` (Vienot et al. give no tritan plane).

    Returns
    -------
    numpy.ndarray
        (3, 3), acting on column vectors of L, M, S.

    Examples
    --------
    Vienot et al.'s own RGB-to-LMS matrix (their Smith & Pokorny-based one)
    gives their published protanope plane L = 2.02344 M - 2.52581 S:

    >>> m = [[17.8824, 43.5161, 4.11935], [3.45565, 27.1554, 3.86714], [0.0299566, 0.184309, 1.46709]]
    >>> np.round(vienot_plane_matrix(m, "protan")[0], 5)
    array([ 0.     ,  2.02344, -2.52581])
    """
    if deficiency not in ("protan", "deutan"):
        raise InputError(f"Vienot et al. (1999) give planes for protan and deutan dichromats, not {deficiency}",
                         source="vienot1999", hint="use brettel1997 for tritanopes")
    m = np.asarray(rgb_to_lms, dtype=float)
    if m.shape != (3, 3) or not np.all(np.isfinite(m)):
        raise ValueError(f"expected a finite (3, 3) RGB-to-LMS matrix, got shape {m.shape}")
    white, blue = m.sum(axis=1), m[:, 2]
    return _plane_matrix(np.cross(white, blue), _MISSING[deficiency])


def methods_for(obs: Observer) -> tuple:
    """The simulation methods that apply to an observer, the default first."""
    if obs.kind == "normal":
        return ("identity",)
    if obs.kind == "anomalous":
        return ("machado2009",)
    if obs.deficiency == "tritan":
        return ("brettel1997", "brettel-adapted")
    return ("brettel1997", "brettel-adapted", "vienot1999", "brettel-plane")


def _dichromat(obs: Observer, method: str, white: np.ndarray, spd: np.ndarray, primaries) -> Simulation:
    deficiency = str(obs.deficiency)
    k = _MISSING[deficiency]  # obs.missing_cone, as an int for a dichromat
    f = obs.fundamentals
    raw_white = spd @ f
    gains = white / raw_white  # raw excitations -> adapted, as for the inputs
    anchors_nm = ANCHORS_NM[deficiency]
    anchors = _anchor_lms(obs, anchors_nm) * gains
    axis = np.eye(3)[k]
    info = {"missing_cone": k, "anchors_nm": anchors_nm, "anchors_lms": anchors,
            "raw_white_lms": raw_white}
    if method == "vienot1999":
        p = np.asarray(primaries, dtype=float)
        m = vienot_plane_matrix((f.T @ p) * gains[:, None], deficiency)
        info["neutral_lms"] = (p.sum(axis=1) @ f) * gains
        info["blue_lms"] = (p[:, 2] @ f) * gains
        return Simulation(obs, method, PiecewiseLinear.linear(m), white, info)
    if method == "brettel1997":
        neutral = f.sum(axis=0) * gains  # the equal-energy stimulus (Brettel et al. 1997)
    else:
        neutral = white  # the reference white itself
    info["neutral_lms"] = neutral
    if method in ("brettel1997", "brettel-adapted"):
        separator = np.cross(neutral, axis)
        if anchors[0] @ separator < 0:
            separator = -separator
        if not anchors[1] @ separator < 0:  # pragma: no cover - would need absurd fundamentals
            raise InputError("the two anchors lie on the same side of the neutral axis", source=obs.spec)
        matrices = np.stack([_plane_matrix(np.cross(neutral, a), k) for a in anchors])
        return Simulation(obs, method, PiecewiseLinear(matrices, separator), white, info)
    # brettel-plane: one plane through the neutral axis fitting both anchors best
    e = neutral / np.linalg.norm(neutral)
    u = np.cross(e, axis)
    u /= np.linalg.norm(u)
    v = np.cross(e, u)
    unit = anchors / np.linalg.norm(anchors, axis=1, keepdims=True)
    coords = unit @ np.stack([u, v]).T  # components of each anchor across the neutral axis
    _, vecs = np.linalg.eigh(coords.T @ coords)
    normal = vecs[0, 0] * u + vecs[1, 0] * v  # the direction the anchors are least spread along
    info["plane_normal"] = normal
    return Simulation(obs, method, PiecewiseLinear.linear(_plane_matrix(normal, k)), white, info)


def _machado(obs: Observer, white: np.ndarray, spd: np.ndarray, normalisation: str) -> Simulation:
    info: dict = {"affected_cone": obs.affected_cone, "normalisation": normalisation}
    if normalisation == "cone":
        return Simulation(obs, "machado2009", PiecewiseLinear.linear(np.eye(3)), white, info)
    t = MATRIX_LMS_TO_OPPONENT
    raw_a = spd @ raw_fundamentals(obs)
    raw_n = spd @ (obs.base if obs.base is not None else obs).fundamentals
    scale = (t @ raw_n) / (t @ raw_a)
    # Machado's per-channel scaling divides by the white's opponent responses;
    # YB and RG are near 0 for many whites, and then the scaling is meaningless
    # (no white balancing needs a gain beyond 5 or below 1/5, let alone a negative one).
    if not np.all(np.isfinite(scale)) or np.any(scale < 0.2) or np.any(scale > 5.0):
        raise InputError("Machado's opponent-channel normalisation is ill-conditioned for this observer and "
                         f"reference white (channel gains {np.round(scale, 3).tolist()})", source=obs.spec,
                         hint="use normalisation='cone' (the default), or another reference white")
    operator = np.linalg.solve(t, scale[:, None] * t)  # T^-1 diag(scale) T on unadapted signals
    m = (white / raw_n)[:, None] * operator * (raw_a / white)[None, :]
    info.update({"raw_white_lms": raw_a, "base_raw_white_lms": raw_n, "opponent_scale": scale,
                 "unadapted_operator": operator})
    return Simulation(obs, "machado2009", PiecewiseLinear.linear(m), white, info)


def _primaries(obs: Observer, primaries) -> np.ndarray:
    p = np.asarray(primaries, dtype=float)
    if p.shape != (len(obs.wavelengths), 3) or not np.all(np.isfinite(p)) or np.any(p < 0) \
            or not np.all(p.sum(axis=0) > 0):
        raise InputError(f"display primaries must be finite, non-negative spectra shaped "
                         f"({len(obs.wavelengths)}, 3) on the observer's grid, got {p.shape}", source="primaries")
    return p


def simulation(observer, *, white_lms=(1.0, 1.0, 1.0), method: str | None = None,
               reference_white=None, normalisation: str = DEFAULT_NORMALISATION,
               primaries=None) -> Simulation:
    """Build the simulation operator for an observer.

    Parameters
    ----------
    observer : Observer or str
        An observer or its spec string.
    white_lms : array_like
        Adapted L, M, S of the reference white (3,), default (1, 1, 1) (full
        von Kries adaptation); input and output share this scaling.
    method : str, optional
        One of :func:`methods_for` the observer (see :data:`METHOD_DESCRIPTIONS`);
        None picks the default: ``identity`` (normal), ``brettel1997``
        (dichromats), ``machado2009`` (anomalous trichromats).
    reference_white : str or array_like, optional
        The white the inputs are adapted to (its adapted excitations are
        ``white_lms``), as an illuminant spec or a spectrum (n_wl,) on the
        observer's grid; None = equal-energy white, except for
        ``vienot1999``, where None = the display's white (the sum of
        ``primaries``). Only its spectral shape matters.
    normalisation : str
        ``machado2009`` only: ``"cone"`` (default: von Kries at the cones,
        continuous everywhere) or ``"opponent"`` (Machado's per-channel
        gains, an error where ill-conditioned); see the module docstring.
    primaries : array_like, optional
        (n_wl, 3) spectral radiance of a display's R, G, B at full drive on the
        observer's grid: required by ``vienot1999``, ignored otherwise.

    Returns
    -------
    Simulation

    Examples
    --------
    >>> s = simulation("deuteranope")
    >>> s.method, s.matrices.shape
    ('brettel1997', (2, 3, 3))
    >>> bool(np.allclose(s.apply([1.0, 1.0, 1.0]), 1.0))
    True
    """
    obs = _make_observer(observer)
    white = _white_lms(white_lms)
    allowed = methods_for(obs)
    method = allowed[0] if method is None else str(method).strip().lower()
    if method not in METHODS:
        raise InputError(f"unknown simulation method '{method}'", source=obs.spec,
                         hint="use " + ", ".join(METHODS[1:]))
    if method not in allowed:
        raise InputError(f"method {method} does not apply to this observer", source=obs.spec,
                         hint="use " + " or ".join(allowed))
    if normalisation not in NORMALISATIONS:
        raise InputError(f"normalisation '{normalisation}' is not cone or opponent", source=obs.spec,
                         hint="'auto' was removed: it switched between the two at a hidden boundary"
                         if normalisation == "auto" else None)
    if method == "identity":
        return Simulation(obs, method, PiecewiseLinear.linear(np.eye(3)), white, {})
    p = None
    if method == "vienot1999":
        if primaries is None:
            raise InputError("vienot1999 is defined for a display and needs its primaries", source=obs.spec,
                             hint="give primaries (or render with a scene), or use brettel1997 or brettel-plane")
        p = _primaries(obs, primaries)
        if reference_white is None:
            reference_white = p.sum(axis=1)
    spd = reference_white_spectrum(obs, reference_white)
    if method == "machado2009":
        return _machado(obs, white, spd, normalisation)
    return _dichromat(obs, method, white, spd, p)


def simulate(lms, observer, *, white_lms=(1.0, 1.0, 1.0), method: str | None = None,
             reference_white=None, normalisation: str = DEFAULT_NORMALISATION, primaries=None) -> np.ndarray:
    """Simulate adapted cone excitations ``lms`` (..., 3) for ``observer``; see :func:`simulation`.

    Examples
    --------
    >>> out = simulate([[0.8, 1.2, 1.0]], "protanope")
    >>> bool(np.allclose(out[:, 1:], [[1.2, 1.0]]))  # M and S unchanged: a metamer
    True
    """
    return simulation(observer, white_lms=white_lms, method=method, reference_white=reference_white,
                      normalisation=normalisation, primaries=primaries).apply(lms)
