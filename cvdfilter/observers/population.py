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
spec's own measure, :data:`anomalous.SHIFT_MEASURE`) is drawn from a normal
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

Modules: the spec and the drawing constants in :mod:`.population_spec`, the individual-observer model
(vectorised over members) in :mod:`.individual`; here the draws and :class:`Population`.
"""

from __future__ import annotations

import functools

import numpy as np

from ..errors import InputError
from ..spectra.grid import DEFAULT_GRID, Grid
from . import cie2006
from .anomalous import CONE_INDEX, TOWARD
from .individual import individual_fundamentals, members_to_grid
from .observer import Observer, observer as _make_observer
from .population_spec import (DEFAULT_SEED, DEFAULT_VARIATION, DEVIATIONS, MAX_BYTES, MAX_MEMBERS, SEPARATION_SD,
                              VARIATIONS, PopulationSpec, is_population_spec, parse_population_spec, population_form)

__all__ = ["population", "Population", "is_population_spec", "parse_population_spec", "individual_fundamentals",
           "population_form", "VARIATIONS", "PARAMETERS", "SEPARATION_SD", "DEFAULT_VARIATION", "DEFAULT_SEED",
           "MAX_MEMBERS", "MAX_BYTES", "DEVIATIONS", "PopulationSpec"]

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


# ---------------------------------------------------------------------------------------------- sampling

def _draws(ps: PopulationSpec, centre: Observer) -> dict:
    """Per-member parameters (arrays of length n), drawn from streams spawned from the seed."""
    from scipy.special import ndtr, ndtri

    phys, ages, seps = (np.random.default_rng(s) for s in np.random.SeedSequence(ps.seed).spawn(3))
    n = ps.n
    z = phys.standard_normal((n, len(DEVIATIONS)))
    sd = np.asarray(VARIATIONS[ps.variation])
    dev = z * sd[None, :]
    dev[:, :5] = np.maximum(dev[:, :5], -100.0)  # densities clipped at -100 % (Asano et al. 2016)
    out = {k: dev[:, i] for i, k in enumerate(DEVIATIONS)}
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
            d = str(centre.deficiency)  # anomalous: never None
            table = cie2006.peak_shift_table(CONE_INDEX[d], TOWARD[d])
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
            d = str(centre.deficiency)
            out[names[CONE_INDEX[d]]] = out[names[TOWARD[d]]].copy()
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
            d = str(self.deficiency)
            kwargs["anomalous"] = (CONE_INDEX[d], TOWARD[d], p["pigment_shift_nm"])
        values = individual_fundamentals(**kwargs)
        if machado:
            # Machado et al. (2009)'s construction applied to each member's own normal fundamentals, as the
            # fixed observer applies it to the CIE 2006 ones (observer._machado), peaks normalised to 1.
            from .machado2009 import machado_shifted

            values = machado_shifted(values, cie2006.table_wavelengths(), str(self.deficiency),
                                     self.centre.params["severity"])
            values = values / values.max(axis=1, keepdims=True)
        values = members_to_grid(values, self.grid)
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
