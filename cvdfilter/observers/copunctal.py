"""Confusion geometry: copunctal points, confusion lines and neutral points.

For a dichromat missing cone k, two lights look alike when their two
remaining cone signals are equal, so in cone space the lights it confuses lie
on lines parallel to cone k's axis. In a chromaticity diagram these lines
all pass through one point, the *copunctal point*: the chromaticity of the
(imaginary) stimulus that excites cone k alone. If ``XYZ = M @ LMS``, the
copunctal point of the protan, deutan and tritan lines is the chromaticity of
column 0, 1 or 2 of ``M``.

``M`` is found by least squares over the spectrum from the fundamentals and
the colour-matching functions of the chosen xy system; it is exact when the
fundamentals are a linear transform of those CMFs (Stockman & Sharpe 2000 /
CIE 170-1 in the CIE 2015 xy; Smith & Pokorny 1975 in the Judd-Vos modified
CIE 1931 xy; any CIE 2006 observer in its own cone-fundamental-based xy),
and a best fit otherwise (an older observer's fundamentals in the CIE 2015
xy; Smith & Pokorny in the unmodified CIE 1931 xy, which colour-science
ships: off by up to 0.034 in x).

A dichromat's *neutral points* are the wavelengths it cannot tell from the
white: where the monochromatic light's two remaining cone signals stand in
the white's ratio. They are found in cone space from the observer's own
fundamentals (no xy system involved) and reported with their chromaticity.

References: Smith, V. C., & Pokorny, J. (1975). Spectral sensitivity of the
foveal cone photopigments between 400 and 500 nm. Vision Research 15,
161-171; Judd, D. B. (1944/1966) on copunctal points; Stockman, A., & Sharpe,
L. T. (2000). Vision Research 40, 1711-1737; CIE 170-2:2015; Wyszecki, G., &
Stiles, W. S. (1982). Color Science, 2nd ed., section 5.14 (dichromatic
confusion loci and neutral points).

Public: :data:`XY_SYSTEMS`, :func:`xy_system_for`, :func:`xy_cmfs`, :func:`lms_to_xyz_matrix`,
:func:`copunctal_points`, :func:`copunctal_point`, :class:`ConfusionLine`, :func:`confusion_line`,
:func:`spectrum_locus`, :func:`neutral_points`, :func:`confusion_direction_lms`.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ..errors import InputError
from ..spectra.grid import Grid
from .observer import Observer, observer as _make_observer

__all__ = ["XY_SYSTEMS", "DEFICIENCIES", "xy_system_for", "xy_cmfs", "lms_to_xyz_matrix", "copunctal_points",
           "copunctal_point", "ConfusionLine", "confusion_line", "spectrum_locus", "neutral_points",
           "confusion_direction_lms"]

#: Chromaticity systems offered (all from colour-science).
XY_SYSTEMS = {
    "cie1931": "CIE 1931 2 deg (colour-science; Judd-Vos is not shipped)",
    "cie2015-2": "CIE 2015 (CIE 170-2) 2 deg cone-fundamental-based",
    "cie2015-10": "CIE 2015 (CIE 170-2) 10 deg cone-fundamental-based",
    "own-2": "the observer's own cone-fundamental-based xy: its LMS through the CIE 170-2 2 deg matrix",
    "own-10": "the observer's own cone-fundamental-based xy: its LMS through the CIE 170-2 10 deg matrix",
}
DEFICIENCIES = ("protan", "deutan", "tritan")


def xy_system_for(obs: Observer) -> str:
    """The xy system that matches an observer's fundamentals.

    ``data=sp1975`` -> ``cie1931`` (Smith & Pokorny derive from the Judd-Vos
    modification of CIE 1931); ``data=ss2`` / ``ss10`` and the 32-year CIE
    2006 observer at 2 or 10 deg -> ``cie2015-2`` / ``cie2015-10`` (exact);
    any other age or field -> ``own-2`` / ``own-10`` (nearer field), the
    observer's own fundamentals through the CIE 170-2 matrix, in which its
    confusion lines are exactly straight. (An older eye's fundamentals are no
    linear transform of the CIE 2015 CMFs, so in the CIE 2015 diagram its
    confusion lines do not quite meet in one point.)
    """
    data = obs.params.get("data", "cie2006")
    if data == "sp1975":
        return "cie1931"
    if data == "ss10":
        return "cie2015-10"
    if data == "ss2":
        return "cie2015-2"
    field = obs.params.get("field", 2.0)
    wide = field >= 6.0
    if obs.params.get("age", 32.0) == 32.0 and field in (2.0, 10.0):
        return "cie2015-10" if wide else "cie2015-2"
    return "own-10" if wide else "own-2"


def xy_cmfs(system: str, grid: Grid, *, observer=None) -> np.ndarray:
    """Colour-matching functions x, y, z of an xy system on ``grid``, shape (n_wl, 3).

    ``own-2`` / ``own-10`` need the ``observer`` (its normal base observer's
    fundamentals are used).
    """
    from .fundamentals import LMS_TO_XYZ_2DEG, LMS_TO_XYZ_10DEG, cie1931_cmfs, cie2015_cmfs

    if system == "cie1931":
        return cie1931_cmfs(grid)
    if system in ("cie2015-2", "cie2015-10"):
        return cie2015_cmfs(grid, field=int(system.rsplit("-", 1)[1]))
    if system in ("own-2", "own-10"):
        if observer is None:
            raise InputError(f"the xy system {system} needs an observer", source=system)
        o = _make_observer(observer)
        base = o.base if o.base is not None else o
        m = LMS_TO_XYZ_2DEG if system == "own-2" else LMS_TO_XYZ_10DEG
        return base.fundamentals @ m.T
    raise InputError(f"unknown xy system '{system}'", source=system, hint="use " + ", ".join(XY_SYSTEMS))


def lms_to_xyz_matrix(fundamentals, cmfs) -> tuple[np.ndarray, float]:
    """Least-squares matrix M with ``XYZ ~= M @ LMS`` over the spectrum.

    Parameters
    ----------
    fundamentals : array_like
        (n_wl, 3) cone fundamentals.
    cmfs : array_like
        (n_wl, 3) x, y, z colour-matching functions on the same grid.

    Returns
    -------
    matrix : numpy.ndarray
        (3, 3).
    residual : float
        RMS misfit relative to the RMS of the CMFs (0 for an exact linear relation).
    """
    f = np.asarray(fundamentals, dtype=float)
    c = np.asarray(cmfs, dtype=float)
    sol, *_ = np.linalg.lstsq(f, c, rcond=None)  # c ~= f @ sol
    resid = float(np.sqrt(np.mean((f @ sol - c) ** 2)) / np.sqrt(np.mean(c ** 2)))
    return sol.T, resid


def copunctal_points(fundamentals, cmfs) -> np.ndarray:
    """Copunctal points of protan, deutan and tritan confusion lines, CIE xy, shape (3, 2).

    Examples
    --------
    >>> from cvdfilter.observers.observer import observer
    >>> from cvdfilter.observers.fundamentals import cie2015_cmfs
    >>> copunctal_points(observer("normal").fundamentals, cie2015_cmfs()).round(4)
    array([[ 0.7384,  0.2616],
           [ 1.3267, -0.3267],
           [ 0.1586, -0.    ]])
    """
    m, _ = lms_to_xyz_matrix(fundamentals, cmfs)
    return (m[:2] / m.sum(axis=0)).T


def copunctal_point(obs, deficiency: str | None = None, *, xy_system: str | None = None) -> np.ndarray:
    """Copunctal point (x, y) of an observer's confusion lines.

    Parameters
    ----------
    obs : Observer or str
    deficiency : str, optional
        ``protan``, ``deutan`` or ``tritan``; default the observer's own. For
        an anomalous trichromat this is the point the lines of reduced
        discrimination converge on (its base observer's copunctal point).
    xy_system : str, optional
        Default :func:`xy_system_for`.
    """
    o = _make_observer(obs)
    d = deficiency or o.deficiency
    if d not in DEFICIENCIES:
        raise InputError("a copunctal point needs a deficiency (protan, deutan or tritan)", source=o.spec)
    base = o.base if o.base is not None else o
    system = xy_system or xy_system_for(base)
    return copunctal_points(base.fundamentals, xy_cmfs(system, o.grid, observer=o))[DEFICIENCIES.index(d)]


@dataclass(frozen=True)
class ConfusionLine:
    """A confusion line in CIE xy: through ``copunctal`` and ``through``.

    Attributes
    ----------
    copunctal, through : numpy.ndarray
        (2,) chromaticities.
    direction : numpy.ndarray
        (2,) unit vector from the copunctal point toward ``through``.
    """

    copunctal: np.ndarray
    through: np.ndarray
    direction: np.ndarray

    def points(self, t) -> np.ndarray:
        """Points ``through + t * direction`` for distances ``t`` (...,) -> (..., 2)."""
        return self.through + np.asarray(t, dtype=float)[..., None] * self.direction

    def distance(self, xy) -> np.ndarray:
        """Perpendicular distance of chromaticities (..., 2) from the line."""
        d = np.asarray(xy, dtype=float) - self.through
        return np.abs(d[..., 0] * self.direction[1] - d[..., 1] * self.direction[0])


def confusion_line(xy, copunctal) -> ConfusionLine:
    """The confusion line through chromaticity ``xy`` for a copunctal point (both (2,))."""
    p = np.asarray(xy, dtype=float)
    c = np.asarray(copunctal, dtype=float)
    d = p - c
    n = np.linalg.norm(d)
    if not n > 0:
        raise InputError("the chromaticity is the copunctal point itself; no single line passes through it")
    return ConfusionLine(c, p, d / n)


def spectrum_locus(obs, *, xy_system: str | None = None) -> tuple[np.ndarray, np.ndarray]:
    """Wavelengths (nm) and chromaticities (n, 2) of the spectrum locus in an xy system.

    Only wavelengths where the CMFs sum to more than 1e-4 of their maximum are kept.
    """
    o = _make_observer(obs)
    base = o.base if o.base is not None else o
    c = xy_cmfs(xy_system or xy_system_for(base), o.grid, observer=o)
    s = c.sum(axis=1)
    ok = s > 1e-4 * s.max()
    return o.wavelengths[ok], c[ok, :2] / s[ok, None]


def neutral_points(obs, white=None, *, xy_system: str | None = None) -> list[dict]:
    """A dichromat's neutral points: wavelengths it confuses with the white.

    Parameters
    ----------
    obs : Observer or str
        A dichromat (``protanope``, ``deuteranope``, ``tritanope``).
    white : str or array_like, optional
        The white: an illuminant spec, a spectrum on the observer's grid, or
        None for the equal-energy white.
    xy_system : str, optional
        For the reported chromaticities; default :func:`xy_system_for`.

    Returns
    -------
    list of dict
        One per neutral point, in order of wavelength: ``wavelength`` (nm,
        linear interpolation between grid points) and ``xy``. Only
        wavelengths where both remaining cones have at least 1e-3 of their
        peak sensitivity are searched.

    Examples
    --------
    >>> [round(p["wavelength"]) for p in neutral_points("deuteranope")]
    [498]
    """
    from .simulate import reference_white_spectrum

    o = _make_observer(obs)
    if o.kind != "dichromat":
        raise InputError("neutral points belong to dichromats (protanope, deuteranope, tritanope)", source=o.spec)
    spd = reference_white_spectrum(o, white)
    a, b = o.cones_present
    f = o.fundamentals
    w = spd @ f
    g = f[:, a] * w[b] - f[:, b] * w[a]  # 0 where the light's remaining signals have the white's ratio
    ok = (f[:, a] > 1e-3 * f[:, a].max()) & (f[:, b] > 1e-3 * f[:, b].max())
    idx = np.nonzero(ok[:-1] & ok[1:] & (np.sign(g[:-1]) * np.sign(g[1:]) < 0))[0]
    wl = o.wavelengths
    lam = wl[idx] + (wl[idx + 1] - wl[idx]) * g[idx] / (g[idx] - g[idx + 1])
    base = o.base if o.base is not None else o
    c = xy_cmfs(xy_system or xy_system_for(base), o.grid, observer=o)
    xyz = np.stack([np.interp(lam, wl, c[:, i]) for i in range(3)], axis=-1)
    xy = xyz[:, :2] / xyz.sum(axis=1, keepdims=True)
    return [{"wavelength": float(x), "xy": p} for x, p in zip(lam, xy)]


def confusion_direction_lms(obs) -> np.ndarray:
    """Unit vector (3,) in the observer's own cone space along which it confuses colours.

    For a dichromat, lights that differ only along the missing cone's axis
    look alike; for an anomalous trichromat, discrimination is poorest along
    the affected cone's axis. The same axis holds for adapted excitations
    (von Kries gains scale axes, they do not turn them).

    Examples
    --------
    >>> confusion_direction_lms("deuteranope")
    array([ 0.,  1.,  0.])
    """
    o = _make_observer(obs)
    if o.affected_cone is None:
        raise InputError("a normal observer has no confusion direction", source=o.spec)
    return np.eye(3)[o.affected_cone]
