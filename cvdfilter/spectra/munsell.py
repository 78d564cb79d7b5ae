"""The Munsell renotation colours as smooth reflectances (surface set ``munsell``).

The 2,734 "real" colours of the Munsell renotation (Newhall, Nickerson & Judd
1943), as colour-science ships them (xyY under CIE illuminant C, CIE 1931
2 deg observer), each given a reflectance recovered with the method of Jakob
& Hanika (2019) by ``cvdfilter/data/make_munsell.py`` (colour-science's
``colour.recovery.find_coefficients_Jakob2019``). The bundled file
``cvdfilter/data/munsell_jakob2019.csv`` keeps three coefficients per colour;
the reflectance on any grid is

    R(l) = 1/2 + U / (2 sqrt(1 + U^2)),   U = c0 l^2 + c1 l + c2   (l in nm),

so it is evaluated exactly here, without colour-science. These are smooth
**metamers** of the published colours (the same CIE 1931 colour under
illuminant C, within the fit error in the file: Delta E*ab at most 0.023 for 2,655
colours; 79 of the most saturated are beyond the sigmoid's reach, up to 6.7),
not measurements of painted chips: under other lights or for other observers
they may differ from chips.

References
----------
Newhall, S. M., Nickerson, D. & Judd, D. B. (1943). Final report of the
O.S.A. subcommittee on the spacing of the Munsell colors. JOSA 33(7), 385-418.
Jakob, W. & Hanika, J. (2019). A low-dimensional function space for efficient
spectral upsampling. Computer Graphics Forum 38(2), 147-155.

Public: :func:`munsell_table`, :func:`munsell_reflectance`, :func:`jakob2019_reflectance`,
:data:`MUNSELL_FILE`.
"""

from __future__ import annotations

import functools
import pathlib

import numpy as np

from .grid import DEFAULT_GRID, Grid

__all__ = ["munsell_table", "munsell_reflectance", "jakob2019_reflectance", "MUNSELL_FILE"]

MUNSELL_FILE = pathlib.Path(__file__).resolve().parent.parent / "data" / "munsell_jakob2019.csv"


@functools.lru_cache(maxsize=1)
def munsell_table() -> dict:
    """The bundled table: ``labels`` (e.g. ``5R 4/14``), ``hvc`` (hue text, value, chroma),
    ``xyY`` (published, Y in percent), ``coefficients`` (n, 3) and ``de76`` (fit error).

    Arrays are read-only.
    """
    rows = [ln.split(",") for ln in MUNSELL_FILE.read_text().splitlines()
            if ln and not ln.startswith("#")][1:]
    hue = tuple(r[0] for r in rows)
    num = np.array([[float(v) for v in r[1:]] for r in rows])
    out = {"labels": tuple(f"{h} {v:g}/{c:g}" for h, v, c in zip(hue, num[:, 0], num[:, 1])),
           "hue": hue, "value": num[:, 0], "chroma": num[:, 1], "xyY": num[:, 2:5],
           "coefficients": num[:, 5:8], "de76": num[:, 8]}
    for v in out.values():
        if isinstance(v, np.ndarray):
            v.setflags(write=False)
    return out


def jakob2019_reflectance(coefficients, wavelengths) -> np.ndarray:
    """Jakob & Hanika (2019) sigmoid-polynomial reflectance.

    Parameters
    ----------
    coefficients : array_like
        (n, 3) dimensional coefficients c0 (1/nm^2), c1 (1/nm), c2.
    wavelengths : array_like
        nm, shape (n_wl,).

    Returns
    -------
    numpy.ndarray
        Reflectance 0-1, shape (n_wl, n).
    """
    c = np.asarray(coefficients, dtype=float)
    wl = np.asarray(wavelengths, dtype=float)[:, None]
    u = c[:, 0] * wl ** 2 + c[:, 1] * wl + c[:, 2]
    return 0.5 + u / (2.0 * np.sqrt(1.0 + u * u))


def munsell_reflectance(grid: Grid = DEFAULT_GRID) -> np.ndarray:
    """Reflectance of the 2,734 recovered Munsell colours on ``grid``, shape (n_wl, 2734)."""
    return jakob2019_reflectance(munsell_table()["coefficients"], grid.wavelengths)
