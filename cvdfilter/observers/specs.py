"""Observer spec strings: the registry of forms, the parser both single observers and populations use,
canonical specs, and what ``cvdfilter list observers`` shows.

Spec strings (shared/CONVENTIONS.md, section 4)::

    normal                               CIE 2006 LMS, 2 deg, 32 years (= Stockman & Sharpe 2000 2 deg)
    normal:age=70,field=10               the CIE 170-1 observer for that age (20-80) and field (1-10 deg)
    normal:data=ss2|ss10|sp1975          tabulated fundamentals from colour-science
    protanomalous[:shift=NM|separation=NM|severity=mild|moderate|severe]   L pigment shifted toward M
    deuteranomalous[:shift=NM|separation=NM|...]                          M pigment shifted toward L
    tritanomalous[:shift=NM|separation=NM|...]                            S pigment shifted toward M
    deuteranomalous:severity=0.6,model=machado2009            Machado et al. 2009 (severity 0-1)
    protanope, deuteranope, tritanope    reduction dichromats (the missing cone carries no signal)
    ANY_SPEC,n=N[,variation=..,seed=..,age=A1..A2]           a population (observers/population.py)

``age`` and ``field`` apply to every form (the base normal observer carries over).

Public: :class:`ObserverKind`, :data:`OBSERVER_KINDS`, :func:`split_spec`, :func:`number`,
:func:`canonical_spec`, :func:`is_population_spec`, :func:`observer_forms`.
"""

from __future__ import annotations

from dataclasses import dataclass

from ..errors import InputError
from .anomalous import CONE_INDEX, SEVERITY_SEPARATIONS, TOWARD, TRITAN_SHIFTS, normal_separation

__all__ = ["ObserverKind", "OBSERVER_KINDS", "split_spec", "number", "canonical_spec", "is_population_spec",
           "observer_forms"]


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
#: is an entry here and, for a new kind of construction, a builder in
#: :data:`cvdfilter.observers.observer.BUILDERS` (see DEVELOPERS.md, "How to add an observer model").
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
                         f"{'|'.join(f'{v:g}' for v in TRITAN_SHIFTS.values())}; default 15)")
    assert d is not None  # every anomalous form names its deficiency
    mine, other = "LMS"[CONE_INDEX[d]], "LMS"[TOWARD[d]]
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


def number(value: str, key: str, spec: str, lo: float, hi: float, *, whole: bool = False) -> float:
    """One spec value as a number within lo-hi (``whole``: an integer); InputError naming the key otherwise."""
    try:
        v = int(value) if whole else float(value)
    except ValueError:
        raise InputError(f"{key}={value} is not a {'whole ' if whole else ''}number", source=spec) from None
    if not lo <= v <= hi:
        raise InputError(f"{key}={v} is outside {lo}-{hi}" if whole else f"{key}={v:g} is outside {lo:g}-{hi:g}",
                         source=spec)
    return v


def split_spec(spec: str) -> tuple[str, dict]:
    """(form name, {key: value text}) of an observer or population spec; InputError for an unknown form or a
    part that is not key=value. Values are checked by whoever uses them (:func:`number`)."""
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


def is_population_spec(spec) -> bool:
    """True if ``spec`` is a string with an ``n=`` parameter (a population)."""
    if not isinstance(spec, str):
        return False
    _, _, rest = spec.partition(":")
    return any(p.split("=", 1)[0].strip().lower() == "n" for p in rest.split(",") if "=" in p)


def canonical_spec(name: str, p: dict, key: str = "shift") -> str:
    """The canonical spec of a form with parameters ``p`` (defaults left out; ``key``: shift or separation)."""
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
