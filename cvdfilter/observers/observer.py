"""Observers: the :class:`Observer` (cone fundamentals on the grid and what they mean) and how each form of
the spec strings is built.

The spec strings, their registry :data:`~cvdfilter.observers.specs.OBSERVER_KINDS` and the parser live in
:mod:`cvdfilter.observers.specs`; what ``shift``, ``separation`` and the severity words mean, and the shifted
pigment, in :mod:`cvdfilter.observers.anomalous`. Each kind of form has a builder in :data:`BUILDERS`, which
gets the parsed parameters and the normal base observer of the spec's age, field and data.

Public: :class:`Observer`, :func:`observer`, :data:`BUILDERS`.
"""

from __future__ import annotations

import functools
from dataclasses import dataclass, field

import numpy as np

from ..errors import InputError
from ..spectra.grid import DEFAULT_GRID, Grid
from . import cie2006
from .anomalous import (CONE_INDEX, SEVERITY_MACHADO, SHIFT_MEASURE, TOWARD, TRITAN_SHIFTS, normal_separation,
                        pigment_shift, severity_shift)
from .fundamentals import V_WEIGHTS_2DEG, V_WEIGHTS_10DEG
from .specs import OBSERVER_KINDS, canonical_spec, number, split_spec

__all__ = ["Observer", "observer", "BUILDERS"]


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
        return CONE_INDEX[self.deficiency] if self.kind == "dichromat" and self.deficiency else None

    @property
    def affected_cone(self) -> int | None:
        """Index of the cone the deficiency concerns (missing or shifted), else None."""
        return CONE_INDEX[self.deficiency] if self.deficiency else None

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


def _luminance_weights(field: float) -> tuple:
    # CIE 170-1 gives the weights for 2 and 10 deg; between them (and outside,
    # clamped) they are interpolated linearly in field size (an approximation).
    t = min(max((field - 2.0) / 8.0, 0.0), 1.0)
    w = (1 - t) * V_WEIGHTS_2DEG + t * V_WEIGHTS_10DEG
    return float(w[0]), float(w[1])


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
    name, params = split_spec(spec)
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
    return BUILDERS[kind.kind](name, kind.deficiency, spec, params, base, grid)


def _base_observer(spec: str, params: dict, grid: Grid) -> Observer:
    """The normal observer of a spec's age, field and data."""
    age = number(params["age"], "age", spec, *cie2006.AGE_RANGE) if "age" in params else 32.0
    fld = number(params["field"], "field", spec, *cie2006.FIELD_RANGE) if "field" in params else 2.0
    data = params.get("data", "cie2006").lower()
    if data not in ("cie2006", "ss2", "ss10", "sp1975"):
        raise InputError(f"data={data} is not cie2006, ss2, ss10 or sp1975", source=spec)
    if data != "cie2006" and ("age" in params or "field" in params):
        raise InputError("age and field apply to the CIE 2006 model, not to tabulated data", source=spec)
    if data == "ss10":
        fld = 10.0
    base_spec = canonical_spec("normal", {"age": age, "field": fld, "data": data})
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
    return Observer(canonical_spec(name, p), "dichromat", deficiency, grid.wavelengths, base.fundamentals, dweights, p,
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
        severity = machado_severity(deficiency, number(params["shift"], "shift", spec, 0,
                                                        max_shift_nm(deficiency)))
    elif sev_text.lower() in SEVERITY_MACHADO[deficiency]:
        severity = SEVERITY_MACHADO[deficiency][sev_text.lower()]
    else:
        severity = number(sev_text, "severity", spec, 0.0, 1.0)
    table = machado_fundamentals(deficiency, severity, age=age, field=fld)
    p = {"age": age, "field": fld, "model": "machado2009", "severity": severity,
         "shift": machado_shift_nm(deficiency, severity)}
    return Observer(canonical_spec(name, p), "anomalous", deficiency, grid.wavelengths, cie2006.to_grid(table, grid),
                    base.luminance_weights, p, base, grid)


def _shifted(name: str, deficiency, spec: str, params: dict, base: Observer, grid: Grid) -> Observer:
    """An anomalous observer with a shifted pigment (the default model)."""
    age, fld = base.params["age"], base.params["field"]
    full = normal_separation(deficiency)
    key = "shift"
    if "severity" in params:
        word = params["severity"].lower()
        if word not in TRITAN_SHIFTS:
            raise InputError(f"severity={word} is not mild, moderate or severe (numbers go with model=machado2009)",
                             source=spec)
        shift = severity_shift(deficiency, word)
        key = "separation" if deficiency != "tritan" else "shift"
    elif "shift" in params:
        shift = number(params["shift"], "shift", spec, 0.0, full)
    elif "separation" in params:
        shift = full - number(params["separation"], "separation", spec, 0.0, full)
        key = "separation"
    else:
        shift = severity_shift(deficiency, "moderate")
        key = "separation" if deficiency != "tritan" else "shift"
    shift = min(max(shift, 0.0), full)
    residual = round(full - shift, 9)  # exactly the number given for separation= and the severity words
    p_shift = pigment_shift(deficiency, shift)
    cone = CONE_INDEX[deficiency]
    absorbance = cie2006.photopigment_absorbance().copy()
    absorbance[:, cone] = cie2006.anomalous_pigment(cone, TOWARD[deficiency], p_shift)
    table = cie2006.fundamentals_from_absorbance(absorbance, age=age, field=fld)
    p = {"age": age, "field": fld, "model": "shift", "shift": shift, "separation": residual,
         "normal_separation": full, "shift_measure": SHIFT_MEASURE[deficiency], "pigment_shift": p_shift}
    return Observer(canonical_spec(name, p, key), "anomalous", deficiency, grid.wavelengths,
                    cie2006.to_grid(table, grid), base.luminance_weights, p, base, grid)


#: How each kind of :data:`OBSERVER_KINDS` is built from its spec's parameters and its normal base observer.
BUILDERS = {"normal": _normal, "dichromat": _dichromat, "anomalous": _anomalous}

