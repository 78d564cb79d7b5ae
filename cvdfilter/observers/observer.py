"""Observers and their spec strings.

Spec strings (shared/CONVENTIONS.md, section 4)::

    normal                               CIE 2006 LMS, 2 deg, 32 years (= Stockman & Sharpe 2000 2 deg)
    normal:age=70,field=10               the CIE 170-1 observer for that age (20-80) and field (1-10 deg)
    normal:data=ss2|ss10|sp1975          tabulated fundamentals from colour-science
    protanomalous[:shift=NM|separation=NM|severity=mild|moderate|severe]   L pigment shifted toward M
    deuteranomalous[:shift=NM|separation=NM|...]                          M pigment shifted toward L
    tritanomalous[:shift=NM|separation=NM|...]                            S pigment shifted toward M
    deuteranomalous:severity=0.6,model=machado2009            Machado et al. 2009 (severity 0-1)
    protanope, deuteranope, tritanope    reduction dichromats (the missing cone carries no signal)

``age`` and ``field`` apply to every form (the base normal observer carries over).

``shift`` (protan, deutan) is how far the anomalous cone's fundamental peak
moves toward the other cone's in the CIE 2006 reference observer (32 years,
2 deg); ``separation`` is what remains between the two peaks (27.35 - shift nm
for both). The pigment moves by whatever does that (:func:`pigment_shift`), and
that pigment is used at every age and field. Tritan: the S pigment's peak. See
:data:`SHIFT_MEASURE` and docs/models.md section 2.

Public: :class:`Observer`, :class:`ObserverKind`, :data:`OBSERVER_KINDS`, :func:`observer`,
:func:`observer_forms`, :func:`anomalous_absorbance`, :func:`pigment_shift`, :func:`normal_separation`,
:func:`severity_shift`, :data:`SHIFT_MEASURE`, :data:`SEVERITY_SEPARATIONS`, :data:`SEVERITY_SHIFTS`,
:data:`DEFAULT_SHIFTS`.
"""

from __future__ import annotations

import functools
from dataclasses import dataclass, field

import numpy as np

from ..errors import InputError
from ..spectra.grid import DEFAULT_GRID, Grid
from . import cie2006
from .fundamentals import V_WEIGHTS_2DEG, V_WEIGHTS_10DEG

# DEFAULT_SHIFTS and SEVERITY_SHIFTS come from the module's __getattr__ (computed on first use), which a
# static checker cannot see: hence the noqa.
__all__ = ["Observer", "ObserverKind", "OBSERVER_KINDS", "observer", "observer_forms",  # noqa: F822
           "anomalous_absorbance", "pigment_shift", "normal_separation", "severity_shift", "DEFAULT_SHIFTS",
           "SEVERITY_SHIFTS", "SEVERITY_SEPARATIONS", "SHIFT_MEASURE"]

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
_TRITAN_SHIFTS = {"mild": 8.0, "moderate": 15.0, "severe": 30.0}


def normal_separation(deficiency: str) -> float:
    """The largest ``shift`` (the dichromatic limit), nm, on :data:`SHIFT_MEASURE`.

    L-M: 27.35 nm between the reference observer's fundamental peaks (570.17
    and 542.82 nm); S-M: 112.4 nm between the S and M pigment peaks.

    Examples
    --------
    >>> round(normal_separation("protan"), 2), round(normal_separation("deutan"), 2)
    (27.35, 27.35)
    """
    cone, other = _CONE[deficiency], _TOWARD[deficiency]
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
    return cie2006.pigment_shift_for(_CONE[deficiency], _TOWARD[deficiency], shift)


def severity_shift(deficiency: str, word: str) -> float:
    """The ``shift`` a severity word stands for, nm (:data:`SEVERITY_SEPARATIONS`)."""
    if deficiency == "tritan":
        return _TRITAN_SHIFTS[word]
    return normal_separation(deficiency) - SEVERITY_SEPARATIONS[deficiency][word]


def __getattr__(name: str):
    # DEFAULT_SHIFTS and SEVERITY_SHIFTS depend on the CIE 2006 tables, so they are computed on first use.
    if name == "SEVERITY_SHIFTS":
        return {d: {w: severity_shift(d, w) for w in _TRITAN_SHIFTS} for d in _CONE}
    if name == "DEFAULT_SHIFTS":
        return {d: severity_shift(d, "moderate") for d in _CONE}
    raise AttributeError(name)


#: Machado severity (0-1) for the words: the same fraction of the way to the dichromat as the
#: shifted pigment's fundamental-peak shift (protan 0.45/0.63/0.82, deutan 0.67/0.78/0.89);
#: tritan as before (ours).
SEVERITY_MACHADO = {
    "protan": {"mild": 0.45, "moderate": 0.63, "severe": 0.82},
    "deutan": {"mild": 0.67, "moderate": 0.78, "severe": 0.89},
    "tritan": {"mild": 0.55, "moderate": 0.8, "severe": 1.0},
}

@dataclass(frozen=True)
class ObserverKind:
    """One observer form of the spec strings: what it is and which parameters it takes.

    Attributes
    ----------
    kind : str
        ``normal``, ``anomalous`` or ``dichromat`` (:attr:`Observer.kind`).
    deficiency : str or None
        ``protan``, ``deutan``, ``tritan`` or None.
    parameters : tuple of str
        The spec's keys it accepts.
    model : str
        One line on the model, for ``cvdfilter list observers`` (:func:`observer_forms`).
    """

    kind: str
    deficiency: str | None
    parameters: tuple
    model: str


_ANOMALOUS_KEYS = ("age", "field", "shift", "separation", "severity", "model")
_SHIFTED = ("{0} pigment shifted toward {1} on a log-wavenumber axis so that the {0} fundamental's peak moves by "
            "shift (CIE 2006 observer, 32 years, 2 deg)")

#: Every observer form of the spec strings, in the order ``list observers`` shows them. The spec parser,
#: :func:`observer_forms` (``cvdfilter list observers``) and its error hints read this mapping; a new form
#: is an entry here and a builder in :data:`_BUILDERS` (see DEVELOPERS.md, "How to add an observer model").
OBSERVER_KINDS = {
    "normal": ObserverKind("normal", None, ("age", "field", "data"),
                           "CIE 170-1:2006 physiological observer (Stockman & Sharpe 2000)"),
    "protanomalous": ObserverKind("anomalous", "protan", _ANOMALOUS_KEYS, _SHIFTED.format("L", "M")),
    "deuteranomalous": ObserverKind("anomalous", "deutan", _ANOMALOUS_KEYS, _SHIFTED.format("M", "L")),
    "tritanomalous": ObserverKind("anomalous", "tritan", _ANOMALOUS_KEYS,
                                  "S pigment's peak shifted toward M on a log-wavenumber axis"),
    "protanope": ObserverKind("dichromat", "protan", ("age", "field", "data"), "reduction dichromat: no L cone"),
    "deuteranope": ObserverKind("dichromat", "deutan", ("age", "field", "data"), "reduction dichromat: no M cone"),
    "tritanope": ObserverKind("dichromat", "tritan", ("age", "field", "data"), "reduction dichromat: no S cone"),
}
_CONE = {"protan": 0, "deutan": 1, "tritan": 2}
# The pigment each anomalous pigment moves toward.
_TOWARD = {"protan": 1, "deutan": 0, "tritan": 1}


class ReadOnlyDict(dict):
    """A dict that cannot be changed after construction (it still pickles and serialises to JSON)."""

    def _refuse(self, *args, **kwargs):
        raise TypeError("an observer's parameters are read-only; build a new observer instead")

    __setitem__ = __delitem__ = clear = pop = popitem = setdefault = update = _refuse  # type: ignore[assignment]
    __ior__ = _refuse  # type: ignore[assignment]

    def __reduce__(self):
        return (type(self), (dict(self),))


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
    params : Mapping
        age, field, data, shift (nm), severity, model (read-only; the arrays are read-only too).
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

    def __post_init__(self) -> None:
        # Observers are shared (spec strings are memoised), so nothing in one may change:
        # own read-only copies of the arrays and a read-only view of the parameters.
        for name in ("wavelengths", "fundamentals"):
            a = np.array(getattr(self, name), dtype=float)
            a.setflags(write=False)
            object.__setattr__(self, name, a)
        object.__setattr__(self, "params", ReadOnlyDict(self.params))

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


def _form_parameters(name: str, kind: ObserverKind) -> str:
    """The parameters of one form as ``list observers`` prints them."""
    common = "age=20-80 (years, default 32), field=1-10 (deg, default 2)"
    d = kind.deficiency
    if kind.kind == "normal":
        return common + ", data=cie2006|ss2|ss10|sp1975"
    if kind.kind != "anomalous":
        return common
    if d == "tritan":
        return common + (f", shift=0-{normal_separation('tritan'):.1f} or separation (nm, S pigment peak) "
                         f"or severity=mild|moderate|severe (shift "
                         f"{'|'.join(f'{v:g}' for v in _TRITAN_SHIFTS.values())}; default 15)")
    mine, other = "LMS"[_CONE[d]], "LMS"[_TOWARD[d]]
    return common + (f", shift=0-{normal_separation(d):.2f} or separation=0-{normal_separation(d):.2f} "
                     f"(nm, {mine}' to {other} fundamental peaks) or severity=mild|moderate|severe "
                     f"(separation {'|'.join(f'{v:g}' for v in SEVERITY_SEPARATIONS[d].values())}; "
                     f"default {SEVERITY_SEPARATIONS[d]['moderate']:g})")


#: Forms that are a model option of several kinds rather than a kind: listed after the last anomalous kind.
_MODEL_FORMS = ({"form": "DEFICIENCY:model=machado2009,severity=0-1",
                 "model": "Machado et al. (2009), via colour-science"},)


def observer_forms() -> list[dict]:
    """Every observer form with its parameters, for ``cvdfilter list observers`` (from :data:`OBSERVER_KINDS`)."""
    forms = []
    for name, kind in OBSERVER_KINDS.items():
        forms.append({"form": name, "parameters": _form_parameters(name, kind), "model": kind.model})
        if name == "tritanomalous":
            common = _form_parameters("normal", OBSERVER_KINDS["protanope"])
            forms += [{"form": f["form"], "parameters": common, "model": f["model"]} for f in _MODEL_FORMS]
    forms.append(_population_form())
    return forms


def _population_form() -> dict:
    from .population import population_form

    return population_form()


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
    if name not in OBSERVER_KINDS:
        from ..errors import clip_text, did_you_mean

        names = list(OBSERVER_KINDS)
        close = did_you_mean(name, OBSERVER_KINDS)
        raise InputError(f"unknown observer '{clip_text(name)}'" + (f"; {close}" if close else ""), source=spec,
                         hint=f"use {', '.join(names[:-1])} or {names[-1]} (cvdfilter list observers)")
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
    >>> observer("deuteranomalous").spec, observer("deuteranomalous").params["separation"]
    ('deuteranomalous:separation=6', 6.0)
    """
    if isinstance(spec, Observer):
        return spec
    return _observer(str(spec).strip(), grid)


@functools.lru_cache(maxsize=256)
def _observer(spec: str, grid: Grid) -> Observer:
    name, params = _parse(spec)
    kind = OBSERVER_KINDS[name]
    allowed = set(kind.parameters)
    unknown = set(params) - allowed
    if "n" in params:
        raise InputError("n= makes a population, and this takes single observers", source=spec,
                         hint="populations go to 'cvdfilter score', 'inspect-observer', 'report' and the gains and "
                              "population figures "
                              "(Python: cvdfilter.population(spec)); drop n= for one observer")
    if unknown:
        raise InputError(f"unknown parameter '{sorted(unknown)[0]}' for {name}", source=spec,
                         hint=f"allowed: {', '.join(sorted(allowed))}")
    base = _base_observer(spec, params, grid)
    return _BUILDERS[kind.kind](name, kind.deficiency, spec, params, base, grid)


def _base_observer(spec: str, params: dict, grid: Grid) -> Observer:
    """The normal observer of a spec's age, field and data."""
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
    return Observer(base_spec, "normal", None, grid.wavelengths, base_lms, weights,
                    {"age": age, "field": fld, "data": data}, None, grid)


def _normal(name: str, deficiency, spec: str, params: dict, base: Observer, grid: Grid) -> Observer:
    return base


def _dichromat(name: str, deficiency, spec: str, params: dict, base: Observer, grid: Grid) -> Observer:
    p = {k: base.params[k] for k in ("age", "field", "data")}
    # Reduction hypothesis: the missing cone contributes nothing, to luminance either. A
    # protanope's luminous efficiency is its M cone's, a deuteranope's its L cone's (Smith &
    # Pokorny 1975), each peaking at 1 as V(lambda) does; a tritanope keeps the normal a L + b M.
    dweights = {"protan": (0.0, 1.0), "deutan": (1.0, 0.0)}.get(deficiency, base.luminance_weights)
    return Observer(_canonical(name, p), "dichromat", deficiency, grid.wavelengths, base.fundamentals, dweights, p,
                    base, grid)


def _anomalous(name: str, deficiency, spec: str, params: dict, base: Observer, grid: Grid) -> Observer:
    model = params.get("model", "shift").lower()
    if model not in ("shift", "machado2009"):
        raise InputError(f"model={model} is not shift or machado2009", source=spec)
    if base.params["data"] != "cie2006":
        raise InputError("anomalous observers are built on the CIE 2006 model (data=cie2006)", source=spec)
    if sum(k in params for k in ("shift", "separation", "severity")) > 1:
        raise InputError("give one of shift, separation or severity", source=spec)
    if model == "machado2009":
        return _machado(name, deficiency, spec, params, base, grid)
    return _shifted(name, deficiency, spec, params, base, grid)


def _machado(name: str, deficiency, spec: str, params: dict, base: Observer, grid: Grid) -> Observer:
    """An anomalous observer of Machado et al. (2009)'s model (``model=machado2009``)."""
    from .machado2009 import machado_fundamentals, machado_severity, machado_shift_nm, max_shift_nm

    age, fld = base.params["age"], base.params["field"]
    sev_text = params.get("severity", "moderate")
    if "separation" in params:
        raise InputError("separation goes with the shifted-pigment model; give severity=0-1 for "
                         "model=machado2009", source=spec)
    if "shift" in params:
        severity = machado_severity(deficiency, _number(params["shift"], "shift", spec, 0,
                                                        max_shift_nm(deficiency)))
    elif sev_text.lower() in SEVERITY_MACHADO[deficiency]:
        severity = SEVERITY_MACHADO[deficiency][sev_text.lower()]
    else:
        severity = _number(sev_text, "severity", spec, 0.0, 1.0)
    table = machado_fundamentals(deficiency, severity, age=age, field=fld)
    p = {"age": age, "field": fld, "model": "machado2009", "severity": severity,
         "shift": machado_shift_nm(deficiency, severity)}
    return Observer(_canonical(name, p), "anomalous", deficiency, grid.wavelengths, cie2006.to_grid(table, grid),
                    base.luminance_weights, p, base, grid)


def _shifted(name: str, deficiency, spec: str, params: dict, base: Observer, grid: Grid) -> Observer:
    """An anomalous observer with a shifted pigment (the default model)."""
    age, fld = base.params["age"], base.params["field"]
    full = normal_separation(deficiency)
    key = "shift"
    if "severity" in params:
        word = params["severity"].lower()
        if word not in _TRITAN_SHIFTS:
            raise InputError(f"severity={word} is not mild, moderate or severe (numbers go with model=machado2009)",
                             source=spec)
        shift = severity_shift(deficiency, word)
        key = "separation" if deficiency != "tritan" else "shift"
    elif "shift" in params:
        shift = _number(params["shift"], "shift", spec, 0.0, full)
    elif "separation" in params:
        shift = full - _number(params["separation"], "separation", spec, 0.0, full)
        key = "separation"
    else:
        shift = severity_shift(deficiency, "moderate")
        key = "separation" if deficiency != "tritan" else "shift"
    shift = min(max(shift, 0.0), full)
    residual = round(full - shift, 9)  # exactly the number given for separation= and the severity words
    p_shift = pigment_shift(deficiency, shift)
    cone = _CONE[deficiency]
    absorbance = cie2006.photopigment_absorbance().copy()
    absorbance[:, cone] = cie2006.anomalous_pigment(cone, _TOWARD[deficiency], p_shift)
    table = cie2006.fundamentals_from_absorbance(absorbance, age=age, field=fld)
    p = {"age": age, "field": fld, "model": "shift", "shift": shift, "separation": residual,
         "normal_separation": full, "shift_measure": SHIFT_MEASURE[deficiency], "pigment_shift": p_shift}
    return Observer(_canonical(name, p, key), "anomalous", deficiency, grid.wavelengths, cie2006.to_grid(table, grid),
                    base.luminance_weights, p, base, grid)


#: How each kind of :data:`OBSERVER_KINDS` is built from its spec's parameters and its normal base observer.
_BUILDERS = {"normal": _normal, "dichromat": _dichromat, "anomalous": _anomalous}


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
    cone, other = _CONE[deficiency], _TOWARD[deficiency]
    return cie2006.anomalous_pigment(cone, other, pigment_shift(deficiency, shift))


def _canonical(name: str, p: dict, key: str = "shift") -> str:
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
    elif key in p:
        parts.insert(0, f"{key}={round(p[key], 9):g}")
    return name + (":" + ",".join(parts) if parts else "")
