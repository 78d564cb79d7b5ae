"""Population spec strings: ``OBSERVER_SPEC,n=N[,variation=..][,seed=..][,age=..][,separation_sd=..]``,
parsed with the observers' own spec parser (:func:`cvdfilter.observers.specs.split_spec`), and the
constants that say how members are drawn.

Public: :class:`PopulationSpec`, :func:`parse_population_spec`, :func:`population_form`,
:func:`is_population_spec`, :data:`DEVIATIONS`, :data:`VARIATIONS`, :data:`DEFAULT_VARIATION`,
:data:`DEFAULT_SEED`, :data:`MAX_MEMBERS`, :data:`MAX_BYTES`, :data:`SEPARATION_SD`.
"""

from __future__ import annotations

from dataclasses import dataclass

from ..errors import InputError
from . import cie2006
from .anomalous import normal_separation
from .observer import observer as _make_observer
from .specs import is_population_spec, number, split_spec

__all__ = ["PopulationSpec", "parse_population_spec", "population_form", "is_population_spec", "DEVIATIONS",
           "VARIATIONS", "DEFAULT_VARIATION", "DEFAULT_SEED", "MAX_MEMBERS", "MAX_BYTES", "SEPARATION_SD"]

#: Order of the physiological deviations (one standard-normal draw each per member).
DEVIATIONS = ("lens_density_pct", "macular_density_pct", "l_density_pct", "m_density_pct", "s_density_pct",
               "l_peak_shift_nm", "m_peak_shift_nm", "s_peak_shift_nm")

#: Standard deviations per variation, in the order of ``DEVIATIONS`` (percent for densities, nm for peaks).
#: ``asano2016``: Asano, Fairchild & Blonde (2016), PLoS One 11:e0145671, the literature values of their
#: table of physiological parameters: lens 19.1 %, macula 37.2 %, L and M optical density 17.9 %, S 14.7 %,
#: peak shifts L 4.0, M 3.0, S 2.5 nm (the same numbers as luxpy 1.12.5, indvcmf ``dsrc='matlab'``).
#: ``asano2016-fitted``: the same scaled by 0.98 (lens, macula) and 0.5 (optical densities and peak shifts),
#: the factors luxpy 1.12.5 (indvcmf ``_load_asano_std_data(dsrc='germany')``) carries as "optimized using
#: Asano's 75 observers collected in Germany". ``none``: no individual variation.
VARIATIONS = {
    "asano2016": (19.1, 37.2, 17.9, 17.9, 14.7, 4.0, 3.0, 2.5),
    "asano2016-fitted": (19.1 * 0.98, 37.2 * 0.98, 17.9 * 0.5, 17.9 * 0.5, 14.7 * 0.5, 4.0 * 0.5, 3.0 * 0.5,
                         2.5 * 0.5),
    "none": (0.0,) * 8,
}
#: The default: the paper's published literature values (see docs/models.md, "Observer populations").
DEFAULT_VARIATION = "asano2016"
#: Seed used when the spec gives none (always written into the canonical spec).
DEFAULT_SEED = 0
#: Largest population, and largest fundamentals array (n x n_wl x 3 float64), checked before allocating.
MAX_MEMBERS = 50_000
MAX_BYTES = 1 << 30

#: SD, nm, of the anomalous pigment's residual separation across members (on the spec's measure:
#: protan/deutan the fundamental peaks of the reference observer, tritan the S-M pigment peaks). Ours:
#: Merbs & Nathans (1992) and Neitz, Neitz & Kainz (1996) show that different anomalous trichromats carry
#: different hybrid pigments, a few nm to about 12 nm from the pigment they resemble (from memory; we
#: have no tabulated distribution at hand), so the centre (DeMarco, Pokorny & Smith 1992: 10 nm protan,
#: 6 nm deutan) gets a spread of that order. A parameter (``separation_sd=``); 0 fixes the pigment.
SEPARATION_SD = {"protan": 2.5, "deutan": 2.5, "tritan": 5.0}

_POP_KEYS = ("n", "variation", "seed", "separation_sd")


def population_form() -> dict:
    """The population form for ``cvdfilter list observers``."""
    return {"form": "ANY_SPEC,n=N",
            "parameters": (f"n=1-{MAX_MEMBERS} (required), variation={'|'.join(VARIATIONS)} "
                           f"(default {DEFAULT_VARIATION}), seed=S (default {DEFAULT_SEED}), age=A or A1..A2 "
                           "(uniform) or A1|A2|... (one of), separation_sd=NM (anomalous; default "
                           + ", ".join(f"{d} {v:g}" for d, v in SEPARATION_SD.items()) + ")"),
            "model": "a population: individual variation of lens, macula, pigment densities and peaks "
                     "(Asano, Fairchild & Blonde 2016) on the CIE 170-1 observer; anomalous pigments spread "
                     "about the spec's separation"}


# ---------------------------------------------------------------------------------------------- the spec

@dataclass(frozen=True)
class PopulationSpec:
    """A parsed population spec: the centre observer and how members are drawn."""

    spec: str            # canonical
    centre: str          # canonical spec of the fixed observer at the centre (age: fixed age, else 32)
    n: int
    variation: str
    seed: int
    age: tuple           # ("fixed", a) | ("uniform", a1, a2) | ("choice", a1, a2, ...)
    separation_sd: float | None


def _age(value: str, spec: str) -> tuple:
    lo, hi = cie2006.AGE_RANGE

    def num(v):
        try:
            a = float(v)
        except ValueError:
            raise InputError(f"age={value} is not a number, A1..A2 or A1|A2|...", source=spec) from None
        if not lo <= a <= hi:
            raise InputError(f"age {a:g} is outside {lo:g}-{hi:g}", source=spec)
        return a

    if ".." in value:
        a, _, b = value.partition("..")
        a1, a2 = num(a), num(b)
        if a2 < a1:
            raise InputError(f"age={value}: the range must rise (A1..A2 with A1 <= A2)", source=spec)
        return ("fixed", a1) if a1 == a2 else ("uniform", a1, a2)
    if "|" in value:
        vals = tuple(num(v) for v in value.split("|"))
        return ("choice", *vals) if len(set(vals)) > 1 else ("fixed", vals[0])
    return ("fixed", num(value))


def parse_population_spec(spec: str) -> PopulationSpec:
    """Parse and validate a population spec (module docstring); raises :class:`InputError`.

    Examples
    --------
    >>> parse_population_spec("deuteranomalous:n=200,seed=7").spec
    'deuteranomalous:separation=6,n=200,variation=asano2016,seed=7,separation_sd=2.5'
    >>> parse_population_spec("normal:age=20..70,n=500,seed=1").spec
    'normal:age=20..70,n=500,variation=asano2016,seed=1'
    """
    text = str(spec).strip()
    name, params = split_spec(text)
    if "n" not in params:
        raise InputError("a population needs n=N (number of members)", source=text,
                         hint="e.g. deuteranomalous:n=200,seed=7")
    n = int(number(params["n"], "n", text, 1, MAX_MEMBERS, whole=True))
    variation = params.get("variation", DEFAULT_VARIATION).lower()
    if variation not in VARIATIONS:
        raise InputError(f"variation={variation} is not {', '.join(VARIATIONS)}", source=text)
    seed = int(number(params["seed"], "seed", text, 0, 2 ** 63 - 1, whole=True)) if "seed" in params else DEFAULT_SEED
    age = _age(params["age"], text) if "age" in params else ("fixed", 32.0)
    rest = {k: v for k, v in params.items() if k not in _POP_KEYS and k != "age"}
    if age[0] == "fixed" and "age" in params:
        rest["age"] = f"{age[1]:g}"
    centre_text = name + (":" + ",".join(f"{k}={v}" for k, v in rest.items()) if rest else "")
    centre = _make_observer(centre_text)
    if centre.params.get("data", "cie2006") != "cie2006":
        raise InputError("populations are built on the CIE 2006 model (data=cie2006)", source=text)
    sep_sd = None
    if centre.params.get("model") == "machado2009":
        if "separation_sd" in params:
            raise InputError("separation_sd goes with the shifted-pigment model, not model=machado2009",
                             source=text, hint="the severity is one for the whole population")
    elif centre.kind == "anomalous":
        deficiency = str(centre.deficiency)  # every anomalous observer names its deficiency
        if "separation_sd" in params:
            try:
                sep_sd = float(params["separation_sd"])
            except ValueError:
                raise InputError(f"separation_sd={params['separation_sd']} is not a number", source=text) from None
            if not 0.0 <= sep_sd <= normal_separation(deficiency):
                raise InputError(f"separation_sd={sep_sd:g} is outside 0-{normal_separation(deficiency):.2f}",
                                 source=text)
        else:
            sep_sd = 0.0 if variation == "none" else SEPARATION_SD[deficiency]
    elif "separation_sd" in params:
        raise InputError("separation_sd applies to anomalous trichromats only", source=text)
    head, _, tail = centre.spec.partition(":")
    parts = [p for p in tail.split(",") if p]
    if age[0] == "uniform":
        parts.append(f"age={age[1]:g}..{age[2]:g}")
    elif age[0] == "choice":
        parts.append("age=" + "|".join(f"{a:g}" for a in age[1:]))
    parts += [f"n={n}", f"variation={variation}", f"seed={seed}"]
    if sep_sd is not None:
        parts.append(f"separation_sd={sep_sd:g}")
    return PopulationSpec(head + ":" + ",".join(parts), centre.spec, n, variation, seed, age, sep_sd)

