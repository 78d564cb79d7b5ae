"""What a colour-deficient observer sees, shown to a normal viewer.

A simulation maps an observer's own *adapted* cone excitations (the adapting
white has excitations ``white_lms``, (1, 1, 1) after full von Kries
adaptation) to the adapted cone excitations, for the observer's normal base
observer (same age and field), of a colour that a normal viewer sees as the
observer sees the input. Every operator is linear per pixel (one 3x3 matrix,
or two with a half-space test for Brettel 1997), computed here from the
observer's own fundamentals and a reference white, never copied from a
paper, so it stays right for any fundamentals, age, field, white and
illuminant.

Methods
-------
``identity``
    Normal observers.
``brettel1997`` (default for dichromats)
    Brettel, Vienot & Mollon (1997). The dichromat's colours lie on two
    half-planes through the neutral axis (the white) and an anchor
    each: monochromatic 475 and 575 nm for protanopes and deuteranopes, 485
    and 660 nm for tritanopes (lights a unilateral dichromat names alike with
    both eyes). A colour is moved along the missing cone's axis onto the
    half-plane on its side of the plane through the neutral axis and that
    axis, so the two remaining cone signals are unchanged (the result is a
    metamer for the dichromat) and a whole confusion line collapses onto one
    colour.
``vienot1999`` (protan, deutan)
    Vienot, Brettel & Mollon (1999): one plane through the neutral axis
    instead of two half-planes. Vienot et al. chose the plane through the
    display's white and blue (which lies near both anchors); without a display
    in view, this module takes the plane through the neutral axis that fits
    both anchors best (least squares on unit vectors).
``machado2009`` (anomalous trichromats, both models)
    Machado, Oliveira & Fernandes (2009): the anomalous cone signals go
    through the normal observer's opponent stage (the Ingling & Tsou matrix
    ``T``: WS, YB, RG) and back through the normal observer's inverse, so
    the normal viewer is shown the colour whose opponent signals equal the
    anomalous observer's: ``lms_n = T^-1 N T lms_a``, where ``N`` makes the
    white map to itself. Where that normalisation happens is a modelling
    choice (``normalisation``):

    * ``"auto"`` (default): ``"opponent"`` where its channel gains lie
      within 0.2-5 (the standard observers under ordinary whites), else
      ``"cone"``; ``Simulation.info["normalisation"]`` says which was used.
    * ``"cone"``: von Kries gains at the cones, as everywhere else
      in the tool. The inputs are already adapted, both observers' whites
      are ``white_lms``, ``N`` is the identity and so is the operator: the
      anomalous observer's adapted cone signals are shown as the normal
      observer's. The anomalous view lives entirely in the observer's
      fundamentals, which produce the input. The result does not depend on
      how the fundamentals are scaled, nor on the opponent matrix.
    * ``"opponent"``: Machado's own scaling, one gain per opponent channel,
      ``N = diag(T w_n / T w_a)`` with w_n and w_a the reference white's
      unadapted normal and anomalous excitations (:func:`raw_fundamentals`
      gives the cone scales: colour-science's for ``model=machado2009``, the
      normal cone's area for shifted pigments). With a display's white as
      the reference this is exactly colour-science's
      ``matrix_anomalous_trichromacy_Machado2009`` in cone space. The YB and
      RG responses of a white are close to 0, so these gains are
      ill-conditioned for many whites, ages and fields; a gain outside 0.2-5
      raises an error rather than return a meaningless operator.

The reference white
-------------------
Each model is defined at a white: the neutral axis and the anchors of
Brettel and Vienot, and the opponent-channel scaling of Machado. Inputs are
adapted cone excitations (gains ``white_lms / raw_white`` applied at the
cones, von Kries), so they are read as corresponding colours under the
``reference_white``: ``raw = lms * raw_reference / white_lms``, the model
acts, and the result is scaled back the same way with the normal observer's
excitations of the reference. The reference white is an illuminant spec
(``"D65"``), a spectrum on the observer's grid (e.g. a display's white, the
sum of its primaries), or None for the equal-energy white (the neutral
stimulus of Brettel et al. 1997). Only its spectral shape matters. The
adapting white of a scene (an illuminant seen through a filter) belongs in
the caller's von Kries gains, not here.

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
:func:`reference_white_spectrum`, :data:`METHODS`, :data:`NORMALISATIONS`, :data:`ANCHORS_NM`,
:data:`MATRIX_LMS_TO_OPPONENT`.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from ..errors import InputError
from .observer import Observer, observer as _make_observer

__all__ = ["Simulation", "simulation", "simulate", "METHODS", "NORMALISATIONS", "ANCHORS_NM", "MATRIX_LMS_TO_OPPONENT",
           "reference_white_spectrum", "raw_fundamentals"]

#: Method names.
METHODS = ("identity", "brettel1997", "vienot1999", "machado2009")
#: Where the Machado (2009) mapping makes the white map to itself.
NORMALISATIONS = ("auto", "cone", "opponent")

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
class Simulation:
    """A per-pixel linear operator from an observer's adapted LMS to the normal observer's.

    Attributes
    ----------
    observer : Observer
        The simulated observer.
    method : str
        ``identity``, ``brettel1997``, ``vienot1999`` or ``machado2009``.
    matrices : numpy.ndarray
        Shape (k, 3, 3), k = 1 or 2, float64; act on column vectors
        (``out = M @ lms``).
    separator : numpy.ndarray or None
        Shape (3,): with two matrices, ``matrices[0]`` applies where
        ``lms @ separator >= 0`` and ``matrices[1]`` elsewhere.
    white_lms : numpy.ndarray
        Adapted excitations of the white (3,), the same for input and output.
    info : dict
        Details: anchor wavelengths (nm) and their adapted excitations, the
        reference white's unadapted excitations, the missing or affected cone.
    """

    observer: Observer
    method: str
    matrices: np.ndarray
    separator: np.ndarray | None = None
    white_lms: np.ndarray = field(default_factory=lambda: np.ones(3))
    info: dict = field(default_factory=dict)

    def apply(self, lms) -> np.ndarray:
        """Simulate adapted cone excitations.

        Parameters
        ----------
        lms : array_like
            The observer's adapted L, M, S, shape (..., 3).

        Returns
        -------
        numpy.ndarray
            The normal base observer's adapted L, M, S, shape (..., 3).
        """
        lms = np.asarray(lms, dtype=float)
        if lms.shape[-1:] != (3,):
            raise ValueError(f"expected cone excitations shaped (..., 3), got {lms.shape}")
        if len(self.matrices) == 1:
            return lms @ self.matrices[0].T
        m0, m1 = self.matrices
        out = lms @ m0.T
        differ = np.nonzero(np.any(m0 != m1, axis=1))[0]  # Brettel: only the missing cone's row
        if len(differ):
            side = lms @ self.separator >= 0
            out[..., differ] = np.where(side[..., None], out[..., differ], lms @ m1[differ].T)
        return out

    __call__ = apply


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
        return f * machado_peak_factors(obs.deficiency, p["severity"], age=p["age"], field=p["field"])
    scale = np.ones(3)
    k = obs.affected_cone
    scale[k] = obs.base.fundamentals[:, k].sum() / f[:, k].sum()
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


def _dichromat(obs: Observer, method: str, white: np.ndarray, spd: np.ndarray) -> Simulation:
    k = obs.missing_cone
    raw_white = spd @ obs.fundamentals
    gains = white / raw_white
    anchors_nm = ANCHORS_NM[obs.deficiency]
    anchors = _anchor_lms(obs, anchors_nm) * gains
    axis = np.eye(3)[k]
    info = {"missing_cone": k, "anchors_nm": anchors_nm, "anchors_lms": anchors,
            "raw_white_lms": raw_white}
    if method == "brettel1997":
        separator = np.cross(white, axis)
        if anchors[0] @ separator < 0:
            separator = -separator
        if not anchors[1] @ separator < 0:  # pragma: no cover - would need absurd fundamentals
            raise InputError("the two anchors lie on the same side of the neutral axis", source=obs.spec)
        matrices = np.stack([_plane_matrix(np.cross(white, a), k) for a in anchors])
        return Simulation(obs, method, matrices, separator, white, info)
    # vienot1999: one plane through the neutral axis fitting both anchors best
    e = white / np.linalg.norm(white)
    u = np.cross(e, axis)
    u /= np.linalg.norm(u)
    v = np.cross(e, u)
    unit = anchors / np.linalg.norm(anchors, axis=1, keepdims=True)
    coords = unit @ np.stack([u, v]).T  # components of each anchor across the neutral axis
    _, vecs = np.linalg.eigh(coords.T @ coords)
    normal = vecs[0, 0] * u + vecs[1, 0] * v  # the direction the anchors are least spread along
    info["plane_normal"] = normal
    return Simulation(obs, method, _plane_matrix(normal, k)[None], None, white, info)


def _machado(obs: Observer, white: np.ndarray, spd: np.ndarray, normalisation: str) -> Simulation:
    info = {"affected_cone": obs.affected_cone, "normalisation": normalisation}
    t = MATRIX_LMS_TO_OPPONENT
    raw_a = spd @ raw_fundamentals(obs)
    raw_n = spd @ obs.base.fundamentals
    scale = (t @ raw_n) / (t @ raw_a)
    # Machado's per-channel scaling divides by the white's opponent responses;
    # YB and RG are near 0 for many whites, and then the scaling is meaningless
    # (no white balancing needs a gain beyond 5 or below 1/5, let alone a negative one).
    ill_conditioned = not np.all(np.isfinite(scale)) or np.any(scale < 0.2) or np.any(scale > 5.0)
    if normalisation == "auto":
        # Machado's own scaling where it is meaningful (it keeps renderings comparable with the
        # published method and tends to the dichromat simulations at severity 1); otherwise the
        # cone-level normalisation, saying so in ``info``.
        normalisation = "cone" if ill_conditioned else "opponent"
        info["normalisation"] = normalisation
        if ill_conditioned:
            info["note"] = ("Machado's opponent-channel normalisation is ill-conditioned here (channel gains "
                            f"{np.round(scale, 3).tolist()}); the white is normalised at the cones instead")
    if normalisation == "cone":
        return Simulation(obs, "machado2009", np.eye(3)[None], None, white, info)
    if ill_conditioned:
        raise InputError("Machado's opponent-channel normalisation is ill-conditioned for this observer and "
                         f"reference white (channel gains {np.round(scale, 3).tolist()})", source=obs.spec,
                         hint="use normalisation='cone', or another reference white")
    operator = np.linalg.solve(t, scale[:, None] * t)  # T^-1 diag(scale) T on unadapted signals
    m = (white / raw_n)[:, None] * operator * (raw_a / white)[None, :]
    info.update({"raw_white_lms": raw_a, "base_raw_white_lms": raw_n, "opponent_scale": scale,
                 "unadapted_operator": operator})
    return Simulation(obs, "machado2009", m[None], None, white, info)


def simulation(observer, *, white_lms=(1.0, 1.0, 1.0), method: str | None = None,
               reference_white=None, normalisation: str = "auto") -> Simulation:
    """Build the simulation operator for an observer.

    Parameters
    ----------
    observer : Observer or str
        An observer or its spec string.
    white_lms : array_like
        Adapted L, M, S of the adapting white (3,), default (1, 1, 1) (full von
        Kries adaptation); input and output share this scaling.
    method : str, optional
        ``identity`` (normal), ``brettel1997`` (dichromats, default),
        ``vienot1999`` (protan and deutan dichromats), ``machado2009``
        (anomalous trichromats, default). None picks the default.
    reference_white : str or array_like, optional
        The white at which the model is defined (see the module docstring),
        as an illuminant spec or a spectrum (n_wl,) on the observer's grid;
        None = equal-energy white. Only its spectral shape matters.
    normalisation : str
        ``machado2009`` only: ``"auto"`` (default: ``"opponent"`` where its
        channel gains lie within 0.2-5, else ``"cone"``, recorded in ``info``),
        ``"cone"`` (von Kries at the cones) or ``"opponent"`` (Machado's
        per-channel gains, an error where ill-conditioned); see the module docstring.

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
    default = {"normal": "identity", "dichromat": "brettel1997", "anomalous": "machado2009"}[obs.kind]
    method = default if method is None else str(method).strip().lower()
    if method not in METHODS:
        raise InputError(f"unknown simulation method '{method}'", source=obs.spec,
                         hint="use " + ", ".join(METHODS))
    allowed = {"normal": ("identity",), "anomalous": ("machado2009",),
               "dichromat": ("brettel1997", "vienot1999") if obs.deficiency != "tritan" else ("brettel1997",)}
    if method not in allowed[obs.kind]:
        raise InputError(f"method {method} does not apply to this observer", source=obs.spec,
                         hint="use " + " or ".join(allowed[obs.kind]))
    if normalisation not in NORMALISATIONS:
        raise InputError(f"normalisation '{normalisation}' is not auto, cone or opponent", source=obs.spec)
    if method == "identity":
        return Simulation(obs, method, np.eye(3)[None], None, white, {})
    spd = reference_white_spectrum(obs, reference_white)
    if method == "machado2009":
        return _machado(obs, white, spd, normalisation)
    return _dichromat(obs, method, white, spd)


def simulate(lms, observer, *, white_lms=(1.0, 1.0, 1.0), method: str | None = None,
             reference_white=None, normalisation: str = "auto") -> np.ndarray:
    """Simulate adapted cone excitations ``lms`` (..., 3) for ``observer``; see :func:`simulation`.

    Examples
    --------
    >>> out = simulate([[0.8, 1.2, 1.0]], "protanope")
    >>> bool(np.allclose(out[:, 1:], [[1.2, 1.0]]))  # M and S unchanged: a metamer
    True
    """
    return simulation(observer, white_lms=white_lms, method=method, reference_white=reference_white,
                      normalisation=normalisation).apply(lms)
