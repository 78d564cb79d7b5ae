"""Export the task designs so a lab can inspect exactly what was modelled.

:func:`export_stimuli` writes into a folder:

* ``caps.csv``: the reflectances (fraction 0-1) of both cap sets on the 380-780 nm grid, one column per cap,
  with each cap's Munsell notation and CIELUV L*, u*, v* under the reference light in comment lines;
* ``plate-<name>.png``: each plate as an 8-bit sRGB picture of the dot reflectances under the reference light
  for the CIE 1931 standard observer (a display rendering: only an approximation of the modelled spectra);
* ``plate-<name>.csv``: per dot its position (unit disc), radius, figure flag and reflectance (5 nm steps);
* ``rayleigh-primaries.csv``: the three primary spectra (unit area);
* ``stimuli.json``: what each file is, with the caveat.

Public: :func:`export_stimuli`.
"""

from __future__ import annotations

import json
import pathlib

import numpy as np

from .._version import __version__
from ..cautions import CAVEAT
from ..spectra.grid import DEFAULT_GRID, Grid
from .arrangement import ARRANGEMENT_DESIGNS, cap_luv, caps
from .plates import PLATE_NAMES, plate_designs, plate_image
from .rayleigh import PRIMARIES_NM, PRIMARY_FWHM_NM, primaries

__all__ = ["export_stimuli"]


def _srgb(reflectance, spd, grid: Grid) -> np.ndarray:
    """Encoded sRGB (IEC 61966-2-1) of reflectances (n, n_wl) under a light, white = the light -> D65 display."""
    from ..observers.fundamentals import cie1931_cmfs

    w = np.asarray(spd)[:, None] * cie1931_cmfs(grid)
    xyz = np.asarray(reflectance) @ w / w[:, 1].sum()
    m = np.array([[3.2404542, -1.5371385, -0.4985314],  # XYZ -> linear sRGB, IEC 61966-2-1 (D65 white)
                  [-0.9692660, 1.8760108, 0.0415560],
                  [0.0556434, -0.2040259, 1.0572252]])
    rgb = np.clip(xyz @ m.T, 0.0, 1.0)
    return np.where(rgb <= 0.0031308, 12.92 * rgb, 1.055 * np.power(rgb, 1 / 2.4) - 0.055)


def export_stimuli(folder, *, illuminant: str = "D65", grid: Grid = DEFAULT_GRID, inputs=()) -> list[pathlib.Path]:
    """Write the caps, plates and Rayleigh primaries into ``folder`` (atomically, file by file).

    Returns
    -------
    list of pathlib.Path
        The files written.
    """
    from ..io.atomic import check_writable, write_text
    from ..io.images import write_image
    from ..spectra.illuminants import illuminant as make_illuminant

    out = pathlib.Path(folder)
    check_writable(out, folder=True)
    ill = make_illuminant(illuminant, grid)
    wl = grid.wavelengths
    written = []
    names, notes, luv_rows, cols = [], [], [], []
    for task in ARRANGEMENT_DESIGNS:
        n, notation, refl = caps(task, grid)
        names += n
        notes += notation
        luv_rows += [" ".join(f"{x:.2f}" for x in row) for row in cap_luv(refl, ill.spd, grid)]
        cols.append(refl)
    refl = np.vstack(cols)
    lines = [f"# cvdfilter {__version__}: caps of the arrangement tasks (our own design). {CAVEAT}",
             "# Munsell notation: " + ",".join(notes),
             f"# CIELUV L* u* v* under {ill.name}: " + ",".join(luv_rows),
             "wavelength_nm," + ",".join(names)]
    lines += [f"{w:g}," + ",".join(f"{v:.6f}" for v in refl[:, i]) for i, w in enumerate(wl)]
    written.append(write_text(out / "caps.csv", "\n".join(lines) + "\n", inputs=inputs))
    files = {"caps.csv": "reflectances of the arrangement caps (coarse-*: arrangement, fine-*: arrangement-fine)"}
    for plate in plate_designs(grid):
        srgb = _srgb(plate.reflectance, ill.spd, grid)
        meta = {"tool": "cvdfilter", "version": __version__, "plate": plate.name, "caveat": CAVEAT}
        written.append(write_image(out / f"plate-{plate.name}.png", plate_image(plate, srgb), metadata=meta,
                                   inputs=inputs))
        every = max(1, int(round(5.0 / grid.step)))  # the plate spectra are smooth: 5 nm steps suffice
        head = "x,y,radius,figure," + ",".join(f"{w:g}" for w in wl[::every])
        rows = [f"{c[0]:.5f},{c[1]:.5f},{r:.5f},{int(f)}," + ",".join(f"{v:.5f}" for v in refl_row[::every])
                for c, r, f, refl_row in zip(plate.centres, plate.radii, plate.figure, plate.reflectance)]
        written.append(write_text(out / f"plate-{plate.name}.csv",
                                  f"# plate {plate.name}: one dot per row, reflectance 0-1 every 5 nm\n{head}\n"
                                  + "\n".join(rows) + "\n", inputs=inputs))
        files[f"plate-{plate.name}.png"] = f"plate {plate.name} rendered in sRGB under {ill.name} (approximate)"
        files[f"plate-{plate.name}.csv"] = f"plate {plate.name}: dots and their reflectances"
    prim = primaries(wl)
    lines = ["wavelength_nm,red,green,yellow"] + [f"{w:g},{prim[0, i]:.6g},{prim[1, i]:.6g},{prim[2, i]:.6g}"
                                                   for i, w in enumerate(wl)]
    written.append(write_text(out / "rayleigh-primaries.csv", "\n".join(lines) + "\n", inputs=inputs))
    files["rayleigh-primaries.csv"] = (f"Rayleigh primaries, Gaussian {PRIMARY_FWHM_NM:g} nm FWHM at "
                                       + ", ".join(f"{k} {v:g} nm" for k, v in PRIMARIES_NM.items()))
    doc = {"tool": "cvdfilter", "version": __version__, "caveat": CAVEAT, "illuminant": ill.name,
           "plates": list(PLATE_NAMES), "files": files,
           "note": "Task designs of our own; not the stimuli of any commercial or clinical test."}
    written.append(write_text(out / "stimuli.json", json.dumps(doc, indent=2) + "\n", inputs=inputs))
    return written
