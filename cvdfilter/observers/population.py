"""Observer populations: the individual-observer model of Asano, Fairchild & Blonde (2016).

A population is any observer spec plus ``n=N``. Each member is the CIE 170-1
observer of its age and field (:mod:`cie2006`) whose physiology deviates from
the mean as Asano, Fairchild & Blonde (2016) model it: Gaussian deviations of

* the lens and ocular media density (whole density scaled by 1 + d/100),
* the macular pigment's peak density (scaled by 1 + d/100),
* the L, M and S photopigments' peak optical densities (scaled by 1 + d/100),
* the L, M and S photopigments' peak wavelengths (the low-density absorbance
  moved along the *wavelength* axis, A'(lambda) = A(lambda - shift), as the
  paper and its reference code do),

with percentage deviations clipped at -100 % (a density never goes negative).
The cone fundamentals are then built exactly as for the fixed observer
(self-screening, macula, lens, energy units, each normalised to a peak of 1).

Spec (``population`` / :func:`parse_population_spec`)::

    OBSERVER_SPEC,n=N[,variation=asano2016|asano2016-fitted|none][,seed=S]
                     [,age=A | age=A1..A2 | age=A1|A2|...][,separation_sd=NM]

e.g. ``deuteranomalous:n=200,seed=7``, ``normal:age=20..70,n=500,seed=1``.
``age=A1..A2`` draws ages uniformly in [A1, A2]; ``age=A1|A2|...`` draws them
with equal probability from the list; the field is fixed per population.

Anomalous trichromats (shifted-pigment model) add a distribution of the
anomalous pigment's position: the residual ``separation`` (on the observer
spec's own measure, :data:`observer.SHIFT_MEASURE`) is drawn from a normal
distribution centred on the spec's separation (default DeMarco, Pokorny &
Smith 1992) with SD ``separation_sd`` (default :data:`SEPARATION_SD`, ours),
truncated to 0..the normal separation; a protan/deutan anomalous pigment then
takes the individual peak shift of the pigment it moves toward (the two move
together, so the residual separation keeps the drawn spread; a tritan S pigment
keeps its own). Dichromats vary like normal observers;
their missing cone carries no signal.

Randomness: ``numpy.random.default_rng`` streams spawned from
``SeedSequence(seed)``, one per quantity, so the same seed gives identical
arrays, and the first k members of a population of n are the members of the
population of k with the same seed and the same settings (and the same
physiology for every observer kind).

References: Asano Y, Fairchild MD, Blonde L (2016), Individual colorimetric
observer model, PLoS One 11, e0145671; CIE 170-1:2006; DeMarco P, Pokorny J,
Smith VC (1992), JOSA A 9, 1465-1476; Merbs SL, Nathans J (1992), Science 258,
464-466 (hybrid pigments; from memory); Neitz J, Neitz M, Kainz PM (1996),
Science 274, 801-804 (from memory).

Public: :func:`population`, :class:`Population`, :func:`is_population_spec`,
:func:`parse_population_spec`, :func:`individual_fundamentals`,
:func:`population_form`, :data:`VARIATIONS`, :data:`PARAMETERS`,
:data:`SEPARATION_SD`, :data:`DEFAULT_VARIATION`, :data:`DEFAULT_SEED`,
:data:`MAX_MEMBERS`.
"""

from __future__ import annotations

import functools
from dataclasses import dataclass

import numpy as np

from ..errors import InputError
from ..spectra.grid import DEFAULT_GRID, Grid
from . import cie2006
from .observer import _CONE, _TOWARD, Observer, normal_separation, observer as _make_observer

__all__ = ["population", "Population", "is_population_spec", "parse_population_spec", "individual_fundamentals",
           "population_form", "VARIATIONS", "PARAMETERS", "SEPARATION_SD", "DEFAULT_VARIATION", "DEFAULT_SEED",
           "MAX_MEMBERS", "MAX_BYTES"]

#: Order of the physiological deviations (one standard-normal draw each per member).
_DEVIATIONS = ("lens_density_pct", "macular_density_pct", "l_density_pct", "m_density_pct", "s_density_pct",
               "l_peak_shift_nm", "m_peak_shift_nm", "s_peak_shift_nm")

#: Standard deviations per variation, in the order of ``_DEVIATIONS`` (percent for densities, nm for peaks).
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

#: Per-member parameters: name -> (unit, meaning).
PARAMETERS = {
    "age_years": ("years", "age (CIE 170-1 lens density formula)"),
    "lens_density_pct": ("%", "deviation of the lens and ocular media density from the age's mean"),
    "macular_density_pct": ("%", "deviation of the macular pigment's peak density from the field's mean"),
    "l_density_pct": ("%", "deviation of the L photopigment's peak optical density"),
    "m_density_pct": ("%", "deviation of the M photopigment's peak optical density"),
    "s_density_pct": ("%", "deviation of the S photopigment's peak optical density"),
    "l_peak_shift_nm": ("nm", "shift of the L photopigment's absorbance along wavelength"),
    "m_peak_shift_nm": ("nm", "shift of the M photopigment's absorbance along wavelength"),
    "s_peak_shift_nm": ("nm", "shift of the S photopigment's absorbance along wavelength"),
    "separation_nm": ("nm", "anomalous trichromats: residual separation on the spec's shift measure"),
    "shift_nm": ("nm", "anomalous trichromats: normal separation - separation_nm"),
    "pigment_shift_nm": ("nm", "anomalous trichromats: the anomalous pigment's own shift before the "
                               "individual peak shift"),
}

_POP_KEYS = ("n", "variation", "seed", "separation_sd")
_CHUNK = 1024  # members per vectorised block (bounds the temporaries)


def is_population_spec(spec) -> bool:
    """True if ``spec`` is a string with an ``n=`` parameter (a population)."""
    if not isinstance(spec, str):
        return False
    _, _, rest = spec.partition(":")
    return any(p.split("=", 1)[0].strip().lower() == "n" for p in rest.split(",") if "=" in p)


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


# ---------------------------------------------------------------------------------------------- the model

def _template(cone: int, x: np.ndarray) -> np.ndarray:
    """Linear absorbance of pigment ``cone`` at wavelengths ``x`` (any shape), log absorbance continued
    linearly past the table (the rule of :func:`cie2006.shifted_absorbance`, operation for operation)."""
    knots = cie2006._spline_pieces()[f"x{cone}"]
    lo, hi = knots[0], knots[-1]
    y = cie2006._spline_eval(cone, np.clip(x, lo, hi))
    ends = cie2006._spline_eval(cone, np.array([lo, hi]))
    d_lo, d_hi = cie2006._spline_eval(cone, np.array([lo, hi]), nu=1)
    y = np.where(x < lo, ends[0] + d_lo * (x - lo), y)
    y = np.where(x > hi, ends[1] + d_hi * (x - hi), y)
    return 10.0 ** y


def _normal_pigment(cone: int, peak_shift: np.ndarray) -> np.ndarray:
    """(n, 441) absorbance of a normal pigment moved by ``peak_shift`` nm along wavelength.

    A'(lambda) = A(lambda - shift), the tabulated A exactly where the shift is 0. The S pigment is 0
    beyond its table (615 nm), as in the fixed observer, shifted or not (so the result is continuous
    in the shift).
    """
    wl = cie2006.table_wavelengths()
    table = cie2006.photopigment_absorbance()[:, cone]
    x = wl[None, :] - peak_shift[:, None]
    shifted = _template(cone, x)
    if cone == 2:
        hi = cie2006._spline_pieces()["x2"][-1]
        shifted = np.where(x > hi, 0.0, shifted)
    return np.where(peak_shift[:, None] == 0, table[None, :], shifted)


def _anomalous_pigment(cone: int, other: int, pigment_shift: np.ndarray, peak_shift: np.ndarray) -> np.ndarray:
    """(n, 441) anomalous pigment (:func:`cie2006.anomalous_pigment`) then moved by ``peak_shift`` along
    wavelength; equal to the fixed observer's pigment where ``peak_shift`` is 0."""
    wl = cie2006.table_wavelengths()
    peaks = cie2006.pigment_peaks()
    signed = peaks[other] - peaks[cone]
    separation, direction = abs(signed), np.sign(signed)
    s = np.clip(np.asarray(pigment_shift, dtype=float), 0.0, separation)[:, None]
    lam = wl[None, :] - peak_shift[:, None]
    unshifted = (peak_shift == 0)[:, None]
    table = cie2006.photopigment_absorbance()
    p, q = peaks[cone], peaks[other]
    own = _template(cone, lam * p / (p + direction * s))
    own = np.where(unshifted & (s == 0), table[None, :, cone], own)
    back = -direction * (separation - s)
    toward = _template(other, lam * q / (q + back))
    toward = np.where(unshifted & (back == 0), table[None, :, other], toward)
    w = s / separation
    return np.where(w == 0, own, (1.0 - w) * own + w * toward)


def individual_fundamentals(*, age, field: float = 2.0, lens_density_pct=0.0, macular_density_pct=0.0,
                            density_pct=(0.0, 0.0, 0.0), peak_shift_nm=(0.0, 0.0, 0.0), anomalous=None,
                            quanta: bool = False) -> np.ndarray:
    """Cone fundamentals of individual observers on the CIE 2006 table grid (390-830 nm, 1 nm).

    Vectorised over members (no loop over members or wavelengths).

    Parameters
    ----------
    age : array_like
        Years (20-80), shape (n,) or scalar.
    field : float
        Field size, deg (1-10), one for all members.
    lens_density_pct, macular_density_pct : array_like
        Deviations, %, shape (n,) or scalar; clipped at -100.
    density_pct : array_like
        Deviations of the L, M, S peak optical densities, %, shape (n, 3) or (3,); clipped at -100.
    peak_shift_nm : array_like
        Shifts of the L, M, S pigments along wavelength, nm, shape (n, 3) or (3,).
    anomalous : tuple (cone, other, pigment_shift) or None
        Replace pigment ``cone`` by the anomalous pigment moved ``pigment_shift`` nm (shape (n,))
        toward ``other`` (:func:`cie2006.anomalous_pigment`), before its individual peak shift.
    quanta : bool
        Quantal instead of energy-based sensitivities.

    Returns
    -------
    numpy.ndarray
        Shape (n, 441, 3), each member's L, M, S normalised to a peak of 1.

    Examples
    --------
    >>> lms = individual_fundamentals(age=[32.0])
    >>> bool(np.array_equal(lms[0], cie2006.fundamentals_from_absorbance(cie2006.photopigment_absorbance())))
    True
    """
    age = np.atleast_1d(np.asarray(age, dtype=float))
    n = len(age)
    lens = np.broadcast_to(np.asarray(lens_density_pct, dtype=float), (n,))
    mac = np.broadcast_to(np.asarray(macular_density_pct, dtype=float), (n,))
    dens = np.broadcast_to(np.asarray(density_pct, dtype=float), (n, 3))
    shifts = np.broadcast_to(np.asarray(peak_shift_nm, dtype=float), (n, 3))
    if anomalous is not None:
        cone, other, pshift = anomalous
        pshift = np.broadcast_to(np.asarray(pshift, dtype=float), (n,))
    out = np.empty((n, len(cie2006.table_wavelengths()), 3))
    for start in range(0, n, _CHUNK):  # blocks of members bound the temporaries; each block is vectorised
        sl = slice(start, min(start + _CHUNK, n))
        pig = np.empty((sl.stop - sl.start, out.shape[1], 3))
        for c in range(3):  # three cones, each vectorised over members and wavelengths
            if anomalous is not None and c == cone:
                pig[:, :, c] = _anomalous_pigment(cone, other, pshift[sl], shifts[sl, c])
            else:
                pig[:, :, c] = _normal_pigment(c, shifts[sl, c])
        out[sl] = _build(pig, age[sl], field, lens[sl], mac[sl], dens[sl], quanta)
    return out


def _build(absorbance, age, field, lens_pct, mac_pct, dens_pct, quanta):
    """Self-screening, macula and lens per member, as :func:`cie2006.fundamentals_from_absorbance`."""
    t = cie2006._tables()
    d = cie2006.peak_optical_density(field)[None, :] * (1.0 + np.maximum(dens_pct, -100.0) / 100.0)  # (n, 3)
    alpha = 1.0 - 10.0 ** (-d[:, None, :] * absorbance)
    factor = np.where(age <= 60, 1 + 0.02 * (age - 32), 1.56 + 0.0667 * (age - 60))  # CIE 170-1 lens by age
    ocular = (t["docul1"][None, :] * factor[:, None] + t["docul2"][None, :]) \
        * (1.0 + np.maximum(lens_pct, -100.0) / 100.0)[:, None]
    macula = cie2006.macular_density(field)[None, :] * (1.0 + np.maximum(mac_pct, -100.0) / 100.0)[:, None]
    pre = 10.0 ** (-(macula + ocular))
    sens = alpha * pre[:, :, None]
    if not quanta:
        sens = sens * t["wl"][None, :, None]
    return sens / sens.max(axis=1, keepdims=True)


def _to_grid(values: np.ndarray, grid: Grid) -> np.ndarray:
    """(n, 441, 3) table values onto ``grid`` -> (n, n_wl, 3); zero outside 390-830 nm."""
    wl = cie2006.table_wavelengths()
    target = grid.wavelengths
    if np.allclose(target, np.round(target)):
        out = np.zeros((values.shape[0], len(target), 3))
        idx = np.round(target - wl[0]).astype(int)
        ok = (idx >= 0) & (idx < len(wl))
        k = np.flatnonzero(ok)
        if len(k) and np.all(np.diff(idx[k]) == 1):  # a whole-nm 1 nm grid: one block copy
            out[:, k[0]:k[-1] + 1] = values[:, idx[k[0]]:idx[k[-1]] + 1]
        else:
            out[:, ok] = values[:, idx[ok]]
        return out
    n = values.shape[0]
    flat = np.moveaxis(values, 1, 0).reshape(len(wl), n * 3)
    return np.moveaxis(cie2006.to_grid(flat, grid).reshape(len(target), n, 3), 0, 1)


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


def _int(value: str, key: str, spec: str, lo: int, hi: int) -> int:
    try:
        v = int(value)
    except ValueError:
        raise InputError(f"{key}={value} is not a whole number", source=spec) from None
    if not lo <= v <= hi:
        raise InputError(f"{key}={v} is outside {lo}-{hi}", source=spec)
    return v


def parse_population_spec(spec: str) -> PopulationSpec:
    """Parse and validate a population spec (module docstring); raises :class:`InputError`.

    Examples
    --------
    >>> parse_population_spec("deuteranomalous:n=200,seed=7").spec
    'deuteranomalous:separation=6,n=200,variation=asano2016,seed=7,separation_sd=2.5'
    >>> parse_population_spec("normal:age=20..70,n=500,seed=1").spec
    'normal:age=20..70,n=500,variation=asano2016,seed=1'
    """
    from .observer import _parse

    text = str(spec).strip()
    name, params = _parse(text)
    if "n" not in params:
        raise InputError("a population needs n=N (number of members)", source=text,
                         hint="e.g. deuteranomalous:n=200,seed=7")
    n = _int(params["n"], "n", text, 1, MAX_MEMBERS)
    variation = params.get("variation", DEFAULT_VARIATION).lower()
    if variation not in VARIATIONS:
        raise InputError(f"variation={variation} is not {', '.join(VARIATIONS)}", source=text)
    seed = _int(params["seed"], "seed", text, 0, 2 ** 63 - 1) if "seed" in params else DEFAULT_SEED
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
        if "separation_sd" in params:
            try:
                sep_sd = float(params["separation_sd"])
            except ValueError:
                raise InputError(f"separation_sd={params['separation_sd']} is not a number", source=text) from None
            if not 0.0 <= sep_sd <= normal_separation(centre.deficiency):
                raise InputError(f"separation_sd={sep_sd:g} is outside 0-{normal_separation(centre.deficiency):.2f}",
                                 source=text)
        else:
            sep_sd = 0.0 if variation == "none" else SEPARATION_SD[centre.deficiency]
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


# ---------------------------------------------------------------------------------------------- sampling

def _draws(ps: PopulationSpec, centre: Observer) -> dict:
    """Per-member parameters (arrays of length n), drawn from streams spawned from the seed."""
    from scipy.special import ndtr, ndtri

    phys, ages, seps = (np.random.default_rng(s) for s in np.random.SeedSequence(ps.seed).spawn(3))
    n = ps.n
    z = phys.standard_normal((n, len(_DEVIATIONS)))
    sd = np.asarray(VARIATIONS[ps.variation])
    dev = z * sd[None, :]
    dev[:, :5] = np.maximum(dev[:, :5], -100.0)  # densities clipped at -100 % (Asano et al. 2016)
    out = {k: dev[:, i] for i, k in enumerate(_DEVIATIONS)}
    kind = ps.age[0]
    if kind == "fixed":
        out["age_years"] = np.full(n, ps.age[1])
    elif kind == "uniform":
        out["age_years"] = ps.age[1] + (ps.age[2] - ps.age[1]) * ages.random(n)
    else:
        choices = np.asarray(ps.age[1:])
        out["age_years"] = choices[ages.integers(0, len(choices), n)]
    if centre.kind == "anomalous" and centre.params.get("model") != "machado2009":
        full = centre.params["normal_separation"]
        if ps.separation_sd:
            mu, s = centre.params["separation"], ps.separation_sd
            lo, hi = ndtr((0.0 - mu) / s), ndtr((full - mu) / s)
            u = seps.random(n)  # inverse-CDF truncated normal: vectorised and prefix-stable
            sep = np.clip(mu + s * ndtri(lo + u * (hi - lo)), 0.0, full)
            shift = full - sep
        else:
            sep = np.full(n, centre.params["separation"])
            shift = np.full(n, centre.params["shift"])
        if centre.params["shift_measure"] == "fundamental peak":
            table = cie2006.peak_shift_table(_CONE[centre.deficiency], _TOWARD[centre.deficiency])
            pshift = np.interp(shift, table[:, 1], table[:, 0])
        else:
            pshift = shift.copy()
        out.update(separation_nm=sep, shift_nm=shift, pigment_shift_nm=pshift)
        # Protan/deutan: the hybrid pigment's place relative to the pigment it resembles is what the
        # separation distribution describes; an independent individual peak shift on top would count
        # that spread twice (the normal L/M peak polymorphisms sit at the same amino-acid sites as the
        # hybrids' differences). So it moves with the other pigment: its individual peak shift is the
        # other pigment's. Tritan: the S pigment is no hybrid of M and keeps its own S peak shift.
        if centre.deficiency != "tritan":
            names = ("l_peak_shift_nm", "m_peak_shift_nm", "s_peak_shift_nm")
            out[names[_CONE[centre.deficiency]]] = out[names[_TOWARD[centre.deficiency]]].copy()
    for v in out.values():
        v.flags.writeable = False
    return out


class Population:
    """A population of observers (build with :func:`population`).

    Attributes
    ----------
    spec : str
        Canonical population spec (every setting spelled out, the seed included).
    centre : Observer
        The fixed observer the members vary about (for an age range: at 32 years).
    n, variation, seed, separation_sd
        As in the spec (``separation_sd`` None unless anomalous).
    kind, deficiency, grid, wavelengths, luminance_weights
        As for :class:`Observer` (one luminance weighting for all members: CIE 170-1 for the field).
    fundamentals : numpy.ndarray
        (n, n_wl, 3), read-only: each member's energy-based L, M, S, each peaking at 1 (dichromats: the
        member's three, the missing cone carries no signal, as for :class:`Observer`).
    parameters : dict of numpy.ndarray
        One value per member, read-only; names and units in :data:`PARAMETERS`.

    ``len(pop)``, ``pop[i]`` and iteration give :class:`Observer` members (spec ``SPEC#i``) whose ``base``
    is the member's own normal observer (same physiology, normal pigments).
    """

    def __init__(self, ps: PopulationSpec, grid: Grid = DEFAULT_GRID) -> None:
        n_wl = len(grid.wavelengths)
        if ps.n * n_wl * 3 * 8 > MAX_BYTES:
            raise InputError(f"{ps.n} members x {n_wl} wavelengths need more than {MAX_BYTES >> 20} MiB",
                             source=ps.spec, hint="use fewer members or a coarser grid")
        self._ps = ps
        self.spec = ps.spec
        self.n, self.variation, self.seed, self.separation_sd = ps.n, ps.variation, ps.seed, ps.separation_sd
        self.grid = grid
        self.wavelengths = grid.wavelengths
        self.centre = _make_observer(ps.centre, grid)
        self.kind, self.deficiency = self.centre.kind, self.centre.deficiency
        self.luminance_weights = self.centre.luminance_weights
        self.field = float(self.centre.params["field"])
        self.parameters = _draws(ps, self.centre)

    def _compute(self, anomalous: bool) -> np.ndarray:
        p = self.parameters
        kwargs = dict(age=p["age_years"], field=self.field, lens_density_pct=p["lens_density_pct"],
                      macular_density_pct=p["macular_density_pct"],
                      density_pct=np.column_stack([p["l_density_pct"], p["m_density_pct"], p["s_density_pct"]]),
                      peak_shift_nm=np.column_stack([p["l_peak_shift_nm"], p["m_peak_shift_nm"],
                                                     p["s_peak_shift_nm"]]))
        machado = anomalous and self.centre.params.get("model") == "machado2009"
        if anomalous and not machado:
            d = self.deficiency
            kwargs["anomalous"] = (_CONE[d], _TOWARD[d], p["pigment_shift_nm"])
        values = individual_fundamentals(**kwargs)
        if machado:
            # Machado et al. (2009)'s construction applied to each member's own normal fundamentals, as the
            # fixed observer applies it to the CIE 2006 ones (observer._machado), peaks normalised to 1.
            from .machado2009 import machado_shifted

            values = machado_shifted(values, cie2006.table_wavelengths(), self.deficiency,
                                     self.centre.params["severity"])
            values = values / values.max(axis=1, keepdims=True)
        values = _to_grid(values, self.grid)
        values.flags.writeable = False
        return values

    @functools.cached_property
    def fundamentals(self) -> np.ndarray:
        if self.kind == "anomalous":
            return self._compute(True)
        return self.base_fundamentals

    @functools.cached_property
    def base_fundamentals(self) -> np.ndarray:
        """(n, n_wl, 3) read-only: each member's normal counterpart (same physiology, normal pigments)."""
        return self._compute(False)

    @property
    def missing_cone(self) -> int | None:
        """Index of the absent cone for dichromats (0 L, 1 M, 2 S), else None (as :class:`Observer`)."""
        return self.centre.missing_cone

    @property
    def affected_cone(self) -> int | None:
        return self.centre.affected_cone

    @property
    def label(self) -> str:
        return self.spec

    def members(self, start: int = 0, stop: int | None = None) -> list:
        """Members ``start`` to ``stop`` as :class:`Observer` objects."""
        stop = self.n if stop is None else min(stop, self.n)
        return [self[i] for i in range(start, stop)]

    @property
    def luminance(self) -> np.ndarray:
        """(n, n_wl): a L + b M per member."""
        a, b = self.luminance_weights
        return a * self.fundamentals[:, :, 0] + b * self.fundamentals[:, :, 1]

    def __len__(self) -> int:
        return self.n

    def _member_params(self, i: int) -> dict:
        p = {k: float(v[i]) for k, v in self.parameters.items()}
        out = {"age": p["age_years"], "field": self.field, "data": "cie2006", "population": self.spec,
               "member": i, **p}
        if self.kind == "anomalous" and self.centre.params.get("model") == "machado2009":
            out.update(model="machado2009", severity=self.centre.params["severity"],
                       shift=self.centre.params["shift"])
        elif self.kind == "anomalous":
            out.update(model="shift", shift=p["shift_nm"], separation=p["separation_nm"],
                       normal_separation=self.centre.params["normal_separation"],
                       shift_measure=self.centre.params["shift_measure"], pigment_shift=p["pigment_shift_nm"])
        return out

    def __getitem__(self, i: int) -> Observer:
        if not -self.n <= i < self.n:
            raise IndexError(f"member {i} of a population of {self.n}")
        i = i % self.n
        params = self._member_params(i)
        c = self.centre
        base_params = {k: v for k, v in params.items()
                       if k not in ("model", "shift", "severity", "separation", "normal_separation", "shift_measure",
                                    "pigment_shift", "separation_nm", "shift_nm", "pigment_shift_nm")}
        base_weights = c.base.luminance_weights if c.base is not None else c.luminance_weights
        base = Observer(f"{self.spec}#{i} (normal)", "normal", None, self.wavelengths, self.base_fundamentals[i],
                        base_weights, base_params, None, self.grid)
        if self.kind == "normal":
            return Observer(f"{self.spec}#{i}", "normal", None, self.wavelengths, self.fundamentals[i],
                            self.luminance_weights, base_params, None, self.grid)
        return Observer(f"{self.spec}#{i}", self.kind, self.deficiency, self.wavelengths, self.fundamentals[i],
                        self.luminance_weights, params, base, self.grid)

    def __iter__(self):
        return (self[i] for i in range(self.n))

    def __repr__(self) -> str:
        return f"Population({self.spec!r})"


def population(spec, grid: Grid = DEFAULT_GRID) -> Population:
    """Build a population of observers from a spec (module docstring).

    Parameters
    ----------
    spec : str or Population
        Any observer spec plus ``n=N`` (and ``variation=``, ``seed=``, ``age=``, ``separation_sd=``).
    grid : Grid

    Returns
    -------
    Population

    Examples
    --------
    >>> pop = population("deuteranomalous:n=20,seed=7")
    >>> len(pop), pop.fundamentals.shape, pop.spec
    (20, (20, 401, 3), 'deuteranomalous:separation=6,n=20,variation=asano2016,seed=7,separation_sd=2.5')
    >>> next(iter(pop)).kind
    'anomalous'
    """
    if isinstance(spec, Population):
        return spec
    return Population(parse_population_spec(spec), grid)
