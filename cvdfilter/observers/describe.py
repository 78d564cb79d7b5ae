"""A plain description of an observer: peaks, shift, confusion geometry.

The API behind ``cvdfilter inspect-observer``; returns plain dicts (JSON-ready
after numpy conversion) so the same numbers are available in a notebook.

Public: :func:`describe_observer`, :func:`describe_observers`, :func:`describe_population`.
"""

from __future__ import annotations

from typing import Any

import numpy as np

from ..spectra.grid import DEFAULT_GRID, Grid
from .anomalous import CONE_INDEX, TOWARD
from .observer import Observer, observer as _make_observer

__all__ = ["describe_observer", "describe_observers", "describe_population"]

_CONES = ("L", "M", "S")
#: The simulation each kind of observer gets by default, as inspect-observer reports it.
_DEFAULT_SIMULATION = {"normal": "identity",
                       "dichromat": "brettel1997 (API default); brettel-adapted in render, figures and reports",
                       "anomalous": "machado2009"}


def _peak_nm(wl: np.ndarray, values: np.ndarray) -> float:
    """Peak wavelength (lambda max), nm: the maximum of a cubic spline through the samples, searched at
    0.001 nm within one sample of the largest sample (the grid alone would be off by up to ~0.1 nm)."""
    from scipy.interpolate import CubicSpline

    i = int(np.argmax(values))
    if not 0 < i < len(values) - 1:
        return float(wl[i])
    fine = np.arange(wl[i - 1], wl[i + 1], 0.001)
    return float(fine[np.argmax(CubicSpline(wl, values)(fine))])


def _pigment_peaks(obs: Observer) -> tuple[dict | None, str]:
    """Peak wavelengths of the photopigments (low-density absorbance), nm, and a note."""
    from . import cie2006

    if obs.params.get("data", "cie2006") != "cie2006":
        return None, "tabulated fundamentals: no separate pigment spectra"
    peaks = cie2006.pigment_peaks()
    if obs.kind == "anomalous":
        if obs.params.get("model") == "machado2009":
            return ({c: float(p) for c, p in zip(_CONES, peaks)},
                    "Machado 2009 shifts the fundamental, not the pigment; normal pigment peaks shown")
        d = str(obs.deficiency)  # anomalous: never None
        k, other = CONE_INDEX[d], TOWARD[d]
        peaks = peaks.copy()
        peaks[k] += np.sign(peaks[other] - peaks[k]) * obs.params["pigment_shift"]
    return ({c: float(p) for c, p in zip(_CONES, peaks)},
            "CIE 2006 low-density absorbance; peak = centroid of the top 10 % (cie2006.pigment_peaks)")


def describe_observer(spec, *, white="D65", grid: Grid = DEFAULT_GRID) -> dict:
    """Describe one observer.

    Parameters
    ----------
    spec : str or Observer
        Observer spec string (``cvdfilter list observers``).
    white : str, array_like or None
        White for the neutral points: an illuminant spec, a spectrum on the
        grid, or None for the equal-energy white.
    grid : Grid

    Returns
    -------
    dict
        ``spec`` (canonical), ``kind``, ``deficiency``, ``parameters``,
        ``fundamental_peaks_nm`` and ``pigment_peaks_nm`` (L, M, S, nm),
        ``luminance_peak_nm``; for the shifted-pigment model ``shift_nm`` (what
        ``shift`` measures is ``shift_measure``: protan/deutan the move of the
        affected fundamental's peak in the CIE 2006 reference observer, 32 years
        and 2 deg; tritan the S pigment's peak), ``separation_nm`` (what is left
        between the two peaks there), ``normal_separation_nm`` (the largest
        shift), ``pigment_shift_nm`` (the pigment's own move) and
        ``fundamental_separation_nm`` (the distance between this observer's own
        affected and target fundamental peaks, at its own age and field);
        Machado: ``shift_nm`` = 20 nm x severity;
        ``affected_cone``, ``xy_system``, ``copunctal_point`` (x, y),
        ``neutral_points`` (dichromats: wavelength nm and xy), ``simulation``
        (the default method), ``notes``.

    Examples
    --------
    >>> d = describe_observer("deuteranope", white=None)
    >>> d["affected_cone"], [round(p["wavelength_nm"]) for p in d["neutral_points"]]
    ('M', [498])
    """
    from .copunctal import neutral_points, xy_system_for

    obs = _make_observer(spec, grid) if not isinstance(spec, Observer) else spec
    wl = obs.wavelengths
    base = obs.base if obs.base is not None else obs
    pig, pig_note = _pigment_peaks(obs)
    notes = [pig_note]
    out: dict[str, Any] = {
        "spec": obs.spec,
        "kind": obs.kind,
        "deficiency": obs.deficiency,
        "parameters": {k: v for k, v in obs.params.items()},
        "fundamental_peaks_nm": {c: _peak_nm(wl, obs.fundamentals[:, i]) for i, c in enumerate(_CONES)},
        "pigment_peaks_nm": pig,
        "luminance_peak_nm": _peak_nm(wl, obs.luminance),
        "luminance_weights": list(obs.luminance_weights),
        "affected_cone": _CONES[obs.affected_cone] if obs.affected_cone is not None else None,
        "shift_nm": obs.params.get("shift") if obs.kind == "anomalous" else None,
        "shift_measure": obs.params.get("shift_measure"),
        "separation_nm": obs.params.get("separation"),
        "normal_separation_nm": obs.params.get("normal_separation"),
        "pigment_shift_nm": obs.params.get("pigment_shift"),
        "fundamental_separation_nm": None,
        "xy_system": xy_system_for(base),
        "copunctal_point": None,
        "neutral_points": [],
        "simulation": _DEFAULT_SIMULATION[obs.kind],
    }
    if obs.kind == "anomalous" and obs.deficiency != "tritan":
        fp = out["fundamental_peaks_nm"]
        d = str(obs.deficiency)
        k, other = _CONES[CONE_INDEX[d]], _CONES[TOWARD[d]]
        out["fundamental_separation_nm"] = abs(fp[k] - fp[other])
    notes += _shift_notes(obs, out)
    if obs.kind == "dichromat":
        notes.append(f"reduction dichromat: the {_CONES[CONE_INDEX[str(obs.deficiency)]]} cone is absent; "
                     "its fundamental is kept only for reference")
    if obs.deficiency is not None:
        notes += _copunctal(obs, base, out)
    if obs.kind == "dichromat":
        out["neutral_points"] = [{"wavelength_nm": p["wavelength"], "xy": p["xy"]}
                                 for p in neutral_points(obs, white)]
    out["notes"] = notes
    return out


def _shift_notes(obs: Observer, out: dict) -> list[str]:
    """What the shifted-pigment model's shift means for this observer (none for other models)."""
    if not (obs.kind == "anomalous" and obs.params.get("model") == "shift"):
        return []
    if obs.params["shift_measure"] == "fundamental peak":
        own = ("" if (obs.params["age"], obs.params["field"]) == (32.0, 2.0) else
               f" (at this observer's own age and field the peaks are "
               f"{out['fundamental_separation_nm']:.2f} nm apart: lens and macula move them too)")
        return [f"shift: the {out['affected_cone']} fundamental's peak moves {obs.params['shift']:.2f} nm "
                f"toward the other cone's in the CIE 2006 observer at 32 years and 2 deg, leaving "
                f"{obs.params['separation']:.2f} of {obs.params['normal_separation']:.2f} nm between "
                f"the peaks{own}; the pigment itself moves {obs.params['pigment_shift']:.2f} nm"]
    return [f"shift: the S pigment's peak moves {obs.params['shift']:.2f} nm toward M, leaving "
            f"{obs.params['separation']:.2f} of {obs.params['normal_separation']:.2f} nm between "
            "the pigment peaks"]


def _copunctal(obs: Observer, base: Observer, out: dict) -> list[str]:
    """Fill ``out``'s copunctal point and fit residual; returns the notes on them."""
    from .copunctal import XY_SYSTEMS, copunctal_point, lms_to_xyz_matrix, xy_cmfs

    notes = []
    out["copunctal_point"] = copunctal_point(obs)
    if obs.kind == "anomalous":
        notes.append("copunctal point: where this observer's lines of poorest discrimination converge "
                     "(the base observer's dichromatic copunctal point)")
    _, resid = lms_to_xyz_matrix(base.fundamentals, xy_cmfs(out["xy_system"], obs.grid, observer=obs))
    out["copunctal_fit_residual"] = resid
    if out["xy_system"].startswith("own"):
        notes.append(f"xy system: this observer's own cone-fundamental-based chromaticity "
                     f"({XY_SYSTEMS[out['xy_system']].split(': ')[1]})")
    if resid > 1e-3:
        notes.append(f"copunctal point: best linear fit of these fundamentals to the {out['xy_system']} "
                     f"CMFs (relative RMS misfit {resid:.3f}); confusion lines are only roughly straight "
                     "in that diagram")
    return notes


def describe_observers(specs, *, white="D65", grid: Grid = DEFAULT_GRID) -> dict:
    """Describe several observers; adds ``tool``, ``version``, ``inputs``, ``white`` and ``caveat``.

    A population spec (``n=``) is described by :func:`describe_population` (its entry has ``population``).
    """
    from .._version import __version__
    from ..cautions import CAVEAT
    from .population import is_population_spec

    specs = [specs] if isinstance(specs, (str, Observer)) else list(specs)
    return {
        "tool": "cvdfilter",
        "version": __version__,
        "inputs": {"observers": [str(s) if isinstance(s, str) else s.spec for s in specs],
                   "white": white if isinstance(white, str) or white is None else "spectrum",
                   "grid": grid.key()},
        "white": white if isinstance(white, str) else ("equal-energy" if white is None else "spectrum"),
        "caveat": CAVEAT,
        "observers": [describe_population(s, grid=grid) if is_population_spec(s)
                      else describe_observer(s, white=white, grid=grid) for s in specs],
    }


def _grid_peaks(wl: np.ndarray, values: np.ndarray) -> np.ndarray:
    """Peak wavelengths along axis 1 of (n, n_wl, k) values, nm: the highest sample refined by a parabola
    through it and its neighbours (vectorised over members)."""
    i = np.clip(np.argmax(values, axis=1), 1, values.shape[1] - 2)  # (n, k)
    y0 = np.take_along_axis(values, (i - 1)[:, None, :], axis=1)[:, 0]
    y1 = np.take_along_axis(values, i[:, None, :], axis=1)[:, 0]
    y2 = np.take_along_axis(values, (i + 1)[:, None, :], axis=1)[:, 0]
    den = y0 - 2 * y1 + y2
    offset = np.where(den < 0, 0.5 * (y0 - y2) / np.where(den < 0, den, -1.0), 0.0)
    return wl[i] + offset * (wl[1] - wl[0])


def _spread(values: np.ndarray) -> dict:
    v = np.asarray(values, dtype=float)
    p = np.percentile(v, [2.5, 50, 97.5])
    return {"mean": float(v.mean()), "sd": float(v.std(ddof=1)) if len(v) > 1 else 0.0,
            "p2_5": float(p[0]), "p50": float(p[1]), "p97_5": float(p[2])}


def describe_population(spec, *, grid: Grid = DEFAULT_GRID) -> dict:
    """Describe a population (``cvdfilter inspect-observer`` for an ``n=`` spec).

    Returns
    -------
    dict
        ``spec`` (canonical, seed included), ``population`` ({n, variation, seed}), ``kind``,
        ``deficiency``, ``centre`` (the fixed observer's spec), ``separation_sd_nm`` (anomalous),
        ``standard_deviations`` (the variation's SDs: % for densities, nm for peaks), ``parameters``
        ({name: {unit, mean, sd, p2_5, p50, p97_5}}), ``fundamental_peaks_nm`` ({L, M, S: the same
        statistics of the members' peaks, nm}), ``fundamental_separation_nm`` (anomalous protan/deutan:
        the members' own affected-to-other peak distance), ``notes``.

    Examples
    --------
    >>> d = describe_population("normal:n=50,seed=1")
    >>> d["population"], abs(d["fundamental_peaks_nm"]["L"]["p50"] - 570.2) < 3
    ({'n': 50, 'variation': 'asano2016', 'seed': 1}, True)
    """
    from .population import DEVIATIONS, PARAMETERS, VARIATIONS, population

    pop = population(spec, grid)
    peaks = _grid_peaks(pop.wavelengths, pop.fundamentals)  # (n, 3)
    out: dict[str, Any] = {
        "spec": pop.spec,
        "population": {"n": pop.n, "variation": pop.variation, "seed": pop.seed},
        "kind": pop.kind,
        "deficiency": pop.deficiency,
        "centre": pop.centre.spec,
        "separation_sd_nm": pop.separation_sd,
        "standard_deviations": dict(zip(DEVIATIONS, VARIATIONS[pop.variation])),
        "parameters": {k: {"unit": PARAMETERS[k][0], **_spread(v)} for k, v in pop.parameters.items()},
        "fundamental_peaks_nm": {c: _spread(peaks[:, i]) for i, c in enumerate(_CONES)},
        "fundamental_separation_nm": None,
        "notes": ["individual variation: Asano, Fairchild & Blonde (2016) on the CIE 170-1 observer; "
                  "peaks on the grid refined by a parabola"],
    }
    if pop.kind == "anomalous" and pop.deficiency != "tritan":
        d = str(pop.deficiency)
        k, other = CONE_INDEX[d], TOWARD[d]
        out["fundamental_separation_nm"] = _spread(np.abs(peaks[:, k] - peaks[:, other]))
        out["notes"].append("separation_nm is drawn on the reference measure (32 years, 2 deg, before the "
                            "individual peak shifts); fundamental_separation_nm is each member's own")
    if pop.kind == "dichromat":
        out["notes"].append(f"reduction dichromats: the {_CONES[CONE_INDEX[str(pop.deficiency)]]} cone carries "
                            "no signal (its parameters are drawn so every kind shares the seed's physiology)")
    return out

