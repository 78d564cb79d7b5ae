"""Observers and their spec strings.

Spec strings (shared/CONVENTIONS.md, section 4)::

    normal                               CIE 2006 LMS, 2 deg, 32 years (= Stockman & Sharpe 2000 2 deg)
    normal:age=70,field=10               the CIE 170-1 observer for that age (20-80) and field (1-10 deg)
    normal:data=ss2|ss10|sp1975          tabulated fundamentals from colour-science
    protanomalous[:shift=NM|severity=mild|moderate|severe]    L pigment shifted toward M
    deuteranomalous[:shift=NM|...]                            M pigment shifted toward L
    tritanomalous[:shift=NM|...]                              S pigment shifted toward M
    deuteranomalous:severity=0.6,model=machado2009            Machado et al. 2009 (severity 0-1)
    protanope, deuteranope, tritanope    reduction dichromats (the missing cone carries no signal)

``age`` and ``field`` apply to every form (the base normal observer carries over).

Public: :class:`Observer`, :func:`observer`, :func:`observer_forms`, :data:`DEFAULT_SHIFTS`.
"""

from __future__ import annotations

import functools
from dataclasses import dataclass, field

import numpy as np

from ..errors import InputError
from ..spectra.grid import DEFAULT_GRID, Grid
from . import cie2006
from .fundamentals import V_WEIGHTS_2DEG, V_WEIGHTS_10DEG

__all__ = ["Observer", "observer", "observer_forms", "anomalous_absorbance", "DEFAULT_SHIFTS", "SEVERITY_SHIFTS"]

#: Pigment shifts in nm for the severity words. L and M: hybrid pigments found in
#: anomalous trichromats lie roughly 2-12 nm from the pigment they are confused
#: with (from memory: Neitz & Neitz 2011, Vision Research 51, 633-651; Merbs &
#: Nathans 1992), i.e. shifts of about 11-21 nm on the CIE 2006 scale, whose L-M
#: separation is 23.1 nm (cie2006.pigment_peaks). The words leave about 12, 7 and
#: 3 nm between the pigments. S: no comparable data at hand; points spanning the
#: lower part of the 112 nm S-M separation (from memory).
SEVERITY_SHIFTS = {
    "protan": {"mild": 11.0, "moderate": 16.0, "severe": 20.0},
    "deutan": {"mild": 11.0, "moderate": 16.0, "severe": 20.0},
    "tritan": {"mild": 8.0, "moderate": 15.0, "severe": 30.0},
}
#: Default shift when a spec gives none: ``moderate``.
DEFAULT_SHIFTS = {k: v["moderate"] for k, v in SEVERITY_SHIFTS.items()}
#: Machado severity for the words: the same L/M shifts on Machado's 20 nm scale.
SEVERITY_MACHADO = {"mild": 0.55, "moderate": 0.8, "severe": 1.0}

_NAMES = {
    "normal": ("normal", None),
    "protanomalous": ("anomalous", "protan"),
    "deuteranomalous": ("anomalous", "deutan"),
    "tritanomalous": ("anomalous", "tritan"),
    "protanope": ("dichromat", "protan"),
    "deuteranope": ("dichromat", "deutan"),
    "tritanope": ("dichromat", "tritan"),
}
_CONE = {"protan": 0, "deutan": 1, "tritan": 2}
# The pigment each anomalous pigment moves toward.
_TOWARD = {"protan": 1, "deutan": 0, "tritan": 1}


@dataclass(frozen=True, eq=False)
class Observer:
    """An observer: cone fundamentals on the grid and what they mean.

    Attributes
    ----------
    spec : str
        Canonical spec string (all parameters spelled out).
    kind : str
        ``normal``, ``anomalous`` or ``dichromat``.
    deficiency : str or None
        ``protan``, ``deutan``, ``tritan`` or None.
    wavelengths : numpy.ndarray
        nm, shape (n_wl,).
    fundamentals : numpy.ndarray
        Energy-based L, M, S sensitivities, each peaking at 1, shape (n_wl, 3).
        For a dichromat these are the base observer's three; the missing cone
        is named by :attr:`missing_cone` and metrics drop it.
    luminance : numpy.ndarray
        The observer's luminous efficiency, a L + b M, shape (n_wl,).
    luminance_weights : tuple of float
        (a, b); (0, 1) for protanopes and (1, 0) for deuteranopes (no missing-cone input).
    params : dict
        age, field, data, shift (nm), severity, model.
    base : Observer or None
        The normal observer this one derives from (same age and field).
    """

    spec: str
    kind: str
    deficiency: str | None
    wavelengths: np.ndarray
    fundamentals: np.ndarray
    luminance_weights: tuple
    params: dict = field(default_factory=dict)
    base: Observer | None = None
    grid: Grid = DEFAULT_GRID

    @property
    def luminance(self) -> np.ndarray:
        a, b = self.luminance_weights
        return a * self.fundamentals[:, 0] + b * self.fundamentals[:, 1]

    @property
    def missing_cone(self) -> int | None:
        """Index of the absent cone for dichromats (0 L, 1 M, 2 S), else None."""
        return _CONE[self.deficiency] if self.kind == "dichromat" else None

    @property
    def affected_cone(self) -> int | None:
        """Index of the cone the deficiency concerns (missing or shifted), else None."""
        return _CONE[self.deficiency] if self.deficiency else None

    @property
    def cones_present(self) -> tuple:
        return tuple(i for i in range(3) if i != self.missing_cone)

    @property
    def label(self) -> str:
        return self.spec

    @functools.cached_property
    def s_scale(self) -> float:
        """MacLeod-Boynton s scale: 1 / max over the spectrum of S / (a L + b M) (CIE 170-1)."""
        lum = self.luminance
        ok = lum > 1e-4 * lum.max()
        return float(1.0 / np.max(self.fundamentals[ok, 2] / lum[ok]))

    def cone_excitations(self, spectra) -> np.ndarray:
        """L, M, S of spectra shaped (..., n_wl); returns (..., 3)."""
        from .spaces import cone_excitations

        return cone_excitations(spectra, self.fundamentals)

    def macleod_boynton(self, lms) -> np.ndarray:
        """MacLeod-Boynton (l, s) for this observer, CIE 170-1 scaling; (..., 2)."""
        from .spaces import macleod_boynton

        return macleod_boynton(lms, self.luminance_weights, self.s_scale)

    def dkl(self, lms, white_lms) -> np.ndarray:
        """DKL coordinates relative to ``white_lms``; (..., 3)."""
        from .spaces import dkl

        return dkl(lms, white_lms, self.luminance_weights)

    def __repr__(self) -> str:
        return f"Observer({self.spec!r})"


def observer_forms() -> list[dict]:
    """Every observer form with its parameters, for ``cvdfilter list observers``."""
    common = "age=20-80 (years, default 32), field=1-10 (deg, default 2)"
    return [
        {"form": "normal", "parameters": common + ", data=cie2006|ss2|ss10|sp1975",
         "model": "CIE 170-1:2006 physiological observer (Stockman & Sharpe 2000)"},
        {"form": "protanomalous", "parameters": common + ", shift=NM or severity=mild|moderate|severe",
         "model": "L pigment shifted toward M on a log-wavenumber axis"},
        {"form": "deuteranomalous", "parameters": common + ", shift=NM or severity=mild|moderate|severe",
         "model": "M pigment shifted toward L on a log-wavenumber axis"},
        {"form": "tritanomalous", "parameters": common + ", shift=NM or severity=mild|moderate|severe",
         "model": "S pigment shifted toward M on a log-wavenumber axis"},
        {"form": "DEFICIENCY:model=machado2009,severity=0-1", "parameters": common,
         "model": "Machado et al. (2009), via colour-science"},
        {"form": "protanope", "parameters": common, "model": "reduction dichromat: no L cone"},
        {"form": "deuteranope", "parameters": common, "model": "reduction dichromat: no M cone"},
        {"form": "tritanope", "parameters": common, "model": "reduction dichromat: no S cone"},
    ]


def _luminance_weights(field: float) -> tuple:
    # CIE 170-1 gives the weights for 2 and 10 deg; between them (and outside,
    # clamped) they are interpolated linearly in field size (an approximation).
    t = min(max((field - 2.0) / 8.0, 0.0), 1.0)
    w = (1 - t) * V_WEIGHTS_2DEG + t * V_WEIGHTS_10DEG
    return float(w[0]), float(w[1])


def _number(value: str, key: str, spec: str, lo: float, hi: float) -> float:
    try:
        v = float(value)
    except ValueError:
        raise InputError(f"{key}={value} is not a number", source=spec) from None
    if not lo <= v <= hi:
        raise InputError(f"{key}={v:g} is outside {lo:g}-{hi:g}", source=spec)
    return v


def _parse(spec: str) -> tuple[str, dict]:
    name, _, rest = spec.strip().partition(":")
    name = name.strip().lower()
    if name not in _NAMES:
        from ..errors import clip_text, did_you_mean

        close = did_you_mean(name, _NAMES)
        raise InputError(f"unknown observer '{clip_text(name)}'" + (f"; {close}" if close else ""), source=spec,
                         hint="use normal, protanomalous, deuteranomalous, tritanomalous, protanope, "
                              "deuteranope or tritanope (cvdfilter list observers)")
    params = {}
    for part in filter(None, (p.strip() for p in rest.split(","))):
        key, eq, val = part.partition("=")
        if not eq:
            raise InputError(f"'{part}' is not key=value", source=spec)
        params[key.strip().lower()] = val.strip()
    return name, params


def observer(spec: str | Observer = "normal", grid: Grid = DEFAULT_GRID) -> Observer:
    """Build an observer from a spec string (see the module docstring).

    Examples
    --------
    >>> observer("deuteranomalous:shift=8").params["shift"]
    8.0
    >>> observer("protanope").missing_cone
    0
    """
    if isinstance(spec, Observer):
        return spec
    return _observer(str(spec).strip(), grid)


@functools.lru_cache(maxsize=256)
def _observer(spec: str, grid: Grid) -> Observer:
    name, params = _parse(spec)
    kind, deficiency = _NAMES[name]
    allowed = {"age", "field"}
    if kind == "normal" or kind == "dichromat":
        allowed |= {"data"}
    if kind == "anomalous":
        allowed |= {"shift", "severity", "model"}
    unknown = set(params) - allowed
    if unknown:
        raise InputError(f"unknown parameter '{sorted(unknown)[0]}' for {name}", source=spec,
                         hint=f"allowed: {', '.join(sorted(allowed))}")
    age = _number(params["age"], "age", spec, *cie2006.AGE_RANGE) if "age" in params else 32.0
    fld = _number(params["field"], "field", spec, *cie2006.FIELD_RANGE) if "field" in params else 2.0
    data = params.get("data", "cie2006").lower()
    if data not in ("cie2006", "ss2", "ss10", "sp1975"):
        raise InputError(f"data={data} is not cie2006, ss2, ss10 or sp1975", source=spec)
    if data != "cie2006" and ("age" in params or "field" in params):
        raise InputError("age and field apply to the CIE 2006 model, not to tabulated data", source=spec)
    if data == "ss10":
        fld = 10.0

    base_spec = _canonical("normal", {"age": age, "field": fld, "data": data})
    weights = _luminance_weights(fld)
    if data == "cie2006":
        base_table = cie2006.fundamentals_from_absorbance(cie2006.photopigment_absorbance(), age=age, field=fld)
        base_lms = cie2006.to_grid(base_table, grid)
    else:
        from .fundamentals import tabulated_lms

        base_lms = tabulated_lms(data, grid)
    base = Observer(base_spec, "normal", None, grid.wavelengths, base_lms, weights,
                    {"age": age, "field": fld, "data": data}, None, grid)
    if kind == "normal":
        return base
    if kind == "dichromat":
        p = {"age": age, "field": fld, "data": data}
        # Reduction hypothesis: the missing cone contributes nothing, to luminance either. A
        # protanope's luminous efficiency is its M cone's, a deuteranope's its L cone's (Smith &
        # Pokorny 1975), each peaking at 1 as V(lambda) does; a tritanope keeps the normal a L + b M.
        dweights = {"protan": (0.0, 1.0), "deutan": (1.0, 0.0)}.get(deficiency, weights)
        return Observer(_canonical(name, p), kind, deficiency, grid.wavelengths, base_lms, dweights, p, base, grid)

    # anomalous trichromats
    model = params.get("model", "shift").lower()
    if model not in ("shift", "machado2009"):
        raise InputError(f"model={model} is not shift or machado2009", source=spec)
    if data != "cie2006":
        raise InputError("anomalous observers are built on the CIE 2006 model (data=cie2006)", source=spec)
    if "shift" in params and "severity" in params:
        raise InputError("give shift or severity, not both", source=spec)
    cone = _CONE[deficiency]
    if model == "machado2009":
        from .machado2009 import MAX_SHIFT_NM, machado_fundamentals

        sev_text = params.get("severity", "moderate")
        if "shift" in params:
            severity = _number(params["shift"], "shift", spec, 0, MAX_SHIFT_NM) / MAX_SHIFT_NM
        elif sev_text.lower() in SEVERITY_MACHADO:
            severity = SEVERITY_MACHADO[sev_text.lower()]
        else:
            severity = _number(sev_text, "severity", spec, 0.0, 1.0)
        table = machado_fundamentals(deficiency, severity, age=age, field=fld)
        p = {"age": age, "field": fld, "model": "machado2009", "severity": severity,
             "shift": severity * MAX_SHIFT_NM}
        return Observer(_canonical(name, p), kind, deficiency, grid.wavelengths, cie2006.to_grid(table, grid),
                        weights, p, base, grid)

    peaks = cie2006.pigment_peaks()
    separation = abs(peaks[cone] - peaks[_TOWARD[deficiency]])
    if "severity" in params:
        word = params["severity"].lower()
        if word not in SEVERITY_SHIFTS[deficiency]:
            raise InputError(f"severity={word} is not mild, moderate or severe (numbers go with model=machado2009)",
                             source=spec)
        shift = SEVERITY_SHIFTS[deficiency][word]
    elif "shift" in params:
        shift = _number(params["shift"], "shift", spec, 0.0, round(separation, 2))
    else:
        shift = DEFAULT_SHIFTS[deficiency]
    absorbance = cie2006.photopigment_absorbance().copy()
    absorbance[:, cone] = anomalous_absorbance(deficiency, shift)
    table = cie2006.fundamentals_from_absorbance(absorbance, age=age, field=fld)
    p = {"age": age, "field": fld, "model": "shift", "shift": shift, "separation": float(separation)}
    return Observer(_canonical(name, p), kind, deficiency, grid.wavelengths, cie2006.to_grid(table, grid),
                    weights, p, base, grid)


def anomalous_absorbance(deficiency: str, shift: float) -> np.ndarray:
    """Absorbance of the anomalous pigment, on the CIE 2006 table grid (441,).

    The affected pigment's template is moved by ``shift`` nm toward the other
    pigment along a log-wavenumber axis. The tabulated L, M and S templates are
    not exactly the same shape, so the anomalous template is also blended
    toward the other pigment's template (moved to the same peak) in proportion
    w = shift / separation: A' = (1 - w) A_own(shifted) + w A_other(moved back).
    Shift 0 gives the normal pigment exactly; shift = separation gives the
    other pigment exactly (the dichromatic limit); both parts share the same
    peak, so the peak moves by ``shift``.
    """
    cone, other = _CONE[deficiency], _TOWARD[deficiency]
    peaks = cie2006.pigment_peaks()
    signed_sep = peaks[other] - peaks[cone]
    separation = abs(signed_sep)
    direction = np.sign(signed_sep)
    w = min(max(shift / separation, 0.0), 1.0)
    own = cie2006.shifted_absorbance(cone, direction * shift)
    if w == 0.0:
        return own
    toward = cie2006.shifted_absorbance(other, -direction * (separation - shift))
    return (1.0 - w) * own + w * toward


def _canonical(name: str, p: dict) -> str:
    parts = []
    if p.get("data", "cie2006") != "cie2006":
        parts.append(f"data={p['data']}")
    else:
        if p.get("age", 32.0) != 32.0:
            parts.append(f"age={p['age']:g}")
        if p.get("field", 2.0) != 2.0:
            parts.append(f"field={p['field']:g}")
    if p.get("model") == "machado2009":
        parts += [f"severity={p['severity']:g}", "model=machado2009"]
    elif "shift" in p:
        parts.insert(0, f"shift={p['shift']:g}")
    return name + (":" + ",".join(parts) if parts else "")
