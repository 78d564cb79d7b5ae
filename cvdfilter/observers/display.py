"""Simulation operators expressed for a display: linear RGB in, linear RGB out.

A display with primaries P (spectral radiance of R, G and B at full drive,
shape (n_wl, 3)) gives an observer the cone excitations ``F^T P rgb``. With
the observer fully adapted to the display's white (R = G = B = 1, von
Kries), the adapted excitations are ``A rgb`` with ``A = diag(white_lms /
(F^T P 1)) F^T P``. A simulation ``S`` (cone space, see
:mod:`cvdfilter.observers.simulate`) then becomes, on linear RGB,
``A_normal^-1 S A_observer``: the observer's fundamentals on the way in, the
normal base observer's on the way out. For Brettel 1997 the separating plane
is carried over too (``separator_rgb = A_observer^T separator``).

This is how published display-space matrices (Machado et al. 2009, Vienot et
al. 1999) relate to the cone-space operators the tool computes; the tests use
it to compare with colour-science and colorspacious.

Public: :class:`DisplaySimulation`, :func:`display_primaries`, :func:`rgb_to_lms_matrix`,
:func:`adapted_rgb_to_lms`, :func:`display_simulation`,
:data:`DISPLAY_PRIMARIES`.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ..errors import InputError
from ..spectra.cache import cached_arrays
from ..spectra.grid import DEFAULT_GRID, Grid
from .observer import Observer, observer as _make_observer
from .operator import HasOperator, PiecewiseLinear

__all__ = ["DisplaySimulation", "display_primaries", "rgb_to_lms_matrix", "adapted_rgb_to_lms",
           "display_simulation", "DISPLAY_PRIMARIES"]

#: Display primaries colour-science ships (``colour.characterisation.MSDS_DISPLAY_PRIMARIES``).
DISPLAY_PRIMARIES = ("Typical CRT Brainard 1997", "Apple Studio Display")


def display_primaries(primaries, grid: Grid = DEFAULT_GRID) -> np.ndarray:
    """Spectral radiance of a display's R, G, B primaries on ``grid``, shape (n_wl, 3).

    Parameters
    ----------
    primaries : str or array_like
        A name in :data:`DISPLAY_PRIMARIES` (resampled linearly, zero outside
        the measured range) or an array (n_wl, 3) already on the grid.
    grid : Grid
    """
    if isinstance(primaries, str):
        match = [n for n in DISPLAY_PRIMARIES if n.lower() == primaries.strip().lower()]
        if not match:
            raise InputError(f"unknown display primaries '{primaries}'", source=primaries,
                             hint="use " + " or ".join(DISPLAY_PRIMARIES))
        name = match[0]

        def build():
            import colour

            from ..spectra.grid import resample

            p = colour.characterisation.MSDS_DISPLAY_PRIMARIES[name]
            return {"p": resample(p.wavelengths, p.values, grid, method="linear", outside="zero")}

        return cached_arrays(f"display-{name}-{grid.key()}", build)["p"]
    p = np.asarray(primaries, dtype=float)
    if p.shape != (grid.size, 3) or not np.all(np.isfinite(p)) or np.any(p < 0):
        raise InputError(f"display primaries must be finite, non-negative and shaped ({grid.size}, 3), "
                         f"got {p.shape}", source="primaries")
    return p


def rgb_to_lms_matrix(fundamentals, primaries) -> np.ndarray:
    """Unadapted cone excitations of unit R, G, B: ``F^T P``, shape (3, 3) (columns R, G, B).

    Units: the fundamentals' units times the primaries' radiance, summed over
    the grid's wavelengths.
    """
    return np.asarray(fundamentals, dtype=float).T @ np.asarray(primaries, dtype=float)


def adapted_rgb_to_lms(fundamentals, primaries, white_lms=None) -> np.ndarray:
    """Adapted cone excitations of unit R, G, B for an observer adapted to the display's white.

    ``A = diag(white_lms / (F^T P 1)) F^T P``, shape (3, 3), columns R, G, B
    (column vectors: ``lms = A @ rgb``), so that R = G = B = 1 gives
    ``white_lms`` (default (1, 1, 1)). The renderer's display scene uses it
    too (:func:`cvdfilter.rendering.Renderer`).
    """
    p = np.asarray(primaries, dtype=float)
    f = np.asarray(fundamentals, dtype=float)
    # Row form (rgb @ A^T), the product the renderer has always computed.
    rows = (p.T @ f) / (p.sum(axis=1) @ f)
    if white_lms is not None:
        rows = rows * np.asarray(white_lms, dtype=float)
    return rows.T


@dataclass(frozen=True, eq=False)
class DisplaySimulation(HasOperator):
    """A simulation on a display's linear RGB.

    Attributes
    ----------
    operator : PiecewiseLinear
        On linear RGB column vectors (see :mod:`cvdfilter.observers.operator`).
    simulation : Simulation
        The cone-space operator it was made from.
    primaries : numpy.ndarray
        (n_wl, 3).
    """

    operator: PiecewiseLinear
    simulation: object
    primaries: np.ndarray

    # matrices, separator and apply(rgb) (linear RGB (..., 3) in and out, not clipped) come from HasOperator.


def display_simulation(observer, primaries="Typical CRT Brainard 1997", *, method: str | None = None,
                       normalisation: str = "cone", reference_white="display") -> DisplaySimulation:
    """The simulation of ``observer`` as linear-RGB matrices for a display.

    Parameters
    ----------
    observer : Observer or str
    primaries : str or array_like
        See :func:`display_primaries`.
    method, normalisation
        As for :func:`cvdfilter.observers.simulate.simulation`.
    reference_white : "display", None, str or array_like
        ``"display"`` (default) uses the display's white (the sum of its
        primaries: the observer is adapted to it), as Machado et al. and
        Vienot et al. did; otherwise as for
        :func:`~cvdfilter.observers.simulate.simulation`. ``brettel1997``
        keeps the equal-energy stimulus as its neutral axis whatever the
        reference, so the display's white is not exactly preserved; use
        ``vienot1999`` or ``brettel-adapted`` for that.

    Returns
    -------
    DisplaySimulation

    Examples
    --------
    >>> d = display_simulation("deuteranope", method="vienot1999")
    >>> bool(np.allclose(d.apply([1.0, 1.0, 1.0]), 1.0))
    True
    """
    from .simulate import raw_fundamentals, simulation

    obs: Observer = _make_observer(observer)
    p = display_primaries(primaries, obs.grid)
    ref = p.sum(axis=1) if isinstance(reference_white, str) and reference_white == "display" else reference_white
    sim = simulation(obs, method=method, normalisation=normalisation, reference_white=ref, primaries=p)
    a_in = adapted_rgb_to_lms(raw_fundamentals(obs), p, sim.white_lms)
    base = obs.base if obs.base is not None else obs
    a_out = adapted_rgb_to_lms(base.fundamentals, p, sim.white_lms)
    return DisplaySimulation(sim.operator.compose(a_in).then(np.linalg.inv(a_out)), sim, p)
