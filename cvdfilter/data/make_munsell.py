"""Regenerate ``munsell_jakob2019.csv``: smooth reflectances for the Munsell renotation colours.

What it does: takes the Munsell renotation "real" colours that colour-science
ships (``colour.notation.datasets.munsell.MUNSELL_COLOURS_REAL``: Newhall,
Nickerson & Judd 1943, xyY under CIE illuminant C, CIE 1931 2 deg observer,
Y taken as the luminance factor in percent) and recovers for each one a
smooth reflectance with the method of Jakob & Hanika (2019), as colour-science
implements it (``colour.recovery.find_coefficients_Jakob2019``): a reflectance
``R(l) = 1/2 + U / (2 sqrt(1 + U^2))`` with ``U = c0 l^2 + c1 l + c2`` (l in nm),
fitted so that its CIELAB under illuminant C matches the published colour.

Why this method: its reflectances are bounded to 0-1 by construction, smooth
(three numbers per colour, so the file is small and any grid can be evaluated
exactly), and it reaches colours outside any RGB gamut, which the Munsell
set has (Mallett & Yuksel 2019 and Smits 1999 start from sRGB; Otsu et al.
2018 can leave 0-1).

These are **metamers** of the published colours (same CIE 1931 colour under
C), not measurements of painted chips: under other lights and for other
observers they can differ from real chips.

Run ``python cvdfilter/data/make_munsell.py`` to rebuild (about 10 minutes on
two cores). Output: ``munsell_jakob2019.csv`` beside this script.
"""

from __future__ import annotations

import os
import pathlib
import sys
from concurrent.futures import ProcessPoolExecutor

import numpy as np

HERE = pathlib.Path(__file__).resolve().parent
OUT = HERE / "munsell_jakob2019.csv"
#: Fitting grid: 380-780 nm at 5 nm (the CIE 15 practice interval; the sigmoid is smooth).
SHAPE = (380, 780, 5)


def _setup():
    import colour

    shape = colour.SpectralShape(*SHAPE)
    cmfs = colour.MSDS_CMFS["CIE 1931 2 Degree Standard Observer"].copy().align(shape)
    ill = colour.SDS_ILLUMINANTS["C"].copy().align(shape)
    return cmfs, ill


def _fit(xyz_rows: np.ndarray) -> np.ndarray:
    from colour.recovery import find_coefficients_Jakob2019

    cmfs, ill = _setup()
    out = np.empty((len(xyz_rows), 4))
    for i, xyz in enumerate(xyz_rows):  # one optimisation per colour: the published method has no batch form
        c, err = find_coefficients_Jakob2019(xyz, cmfs, ill)
        out[i, :3] = c
        out[i, 3] = err
    return out


def main() -> None:
    import colour
    from colour.notation.datasets.munsell import MUNSELL_COLOURS_REAL

    hvc = [m[0] for m in MUNSELL_COLOURS_REAL]
    xyy = np.array([m[1] for m in MUNSELL_COLOURS_REAL], dtype=float)
    xyz = colour.xyY_to_XYZ(xyy * [1, 1, 0.01])
    jobs = int(os.environ.get("JOBS", "2"))
    parts = np.array_split(xyz, jobs * 8)
    with ProcessPoolExecutor(jobs) as pool:
        fits = np.concatenate(list(pool.map(_fit, parts)))
    lines = [
        "# Munsell renotation 'real' colours (Newhall, Nickerson & Judd 1943; colour-science "
        f"{colour.__version__} MUNSELL_COLOURS_REAL), xyY under illuminant C, CIE 1931 2 deg.",
        "# Reflectance of each: R(l) = 1/2 + U/(2*sqrt(1+U^2)), U = c0*l^2 + c1*l + c2, l in nm (Jakob & Hanika "
        "2019, colour.recovery.find_coefficients_Jakob2019, fitted on 380-780 nm at 5 nm).",
        "# SMOOTH METAMERS of the published colours, not measured chips. de76 = fit error (CIELAB, under C).",
        "# Regenerate with: python cvdfilter/data/make_munsell.py",
        "hue,value,chroma,x,y,Y,c0,c1,c2,de76",
    ]
    for (h, v, c), (x, y, yy), f in zip(hvc, xyy, fits):
        lines.append(f"{h},{v:g},{c:g},{x:.4f},{y:.4f},{yy:g},{f[0]:.9e},{f[1]:.9e},{f[2]:.9e},{f[3]:.4f}")
    OUT.write_text("\n".join(lines) + "\n")
    print(f"wrote {OUT} ({len(hvc)} colours; fit error de76 max {fits[:, 3].max():.4f}, "
          f"median {np.median(fits[:, 3]):.4f})", file=sys.stderr)


if __name__ == "__main__":
    main()
