"""Regenerate ``task_caps.csv``: the caps of the hue-circle arrangement tasks (our own design).

Design (ours, not any commercial or clinical test's caps, numbering or layout):

* ``coarse``: 16 caps at Munsell value 6, chroma 6, hues equally spaced
  (6.25 Munsell hue steps apart), starting at 2.5R;
* ``fine``: 24 caps at Munsell value 6, chroma 4, hues equally spaced
  (100/24 Munsell hue steps apart), starting at 2.5R.

Colours: the Munsell renotation data shipped with colour-science
(``colour.munsell_colour_to_xyY``, which interpolates between the renotation
hues; Newhall, Nickerson & Judd 1943, JOSA 33, 385-418, under CIE illuminant C),
adapted from illuminant C to D65 with the CAT02 von Kries transform (CIE 159:2004).
Reflectances: recovered from the D65 tristimulus values (CIE 1931 2 deg CMFs)
with the method of Jakob & Hanika (2019), "A low-dimensional function space for
efficient spectral upsampling", Computer Graphics Forum 38(2), 147-155, as
implemented by colour-science (``colour.XYZ_to_sd(..., method="Jakob 2019")``):
a smooth sigmoid-of-quadratic spectrum, bounded in 0-1, whose colour under D65
reproduces the target.

Run: ``python cvdfilter/data/make_task_caps.py`` (about 15 s). Writes
``cvdfilter/data/task_caps.csv`` on a 380-780 nm, 5 nm grid.
"""

from __future__ import annotations

import pathlib

import numpy as np

FAMILIES = ["R", "YR", "Y", "GY", "G", "BG", "B", "PB", "P", "RP"]
#: (name, number of caps, Munsell value, Munsell chroma), ours.
DESIGNS = [("coarse", 16, 6, 6), ("fine", 24, 6, 4)]
FIRST_HUE = 2.5  # 2.5R on the 0-100 Munsell hue circle (0 = 10RP)


def munsell_hue(h: float) -> str:
    """Munsell hue notation for a position 0-100 on the hue circle (10RP = 0 = 100)."""
    h = h % 100.0
    family, number = divmod(h, 10.0)
    if number < 1e-9:  # 10 of the previous family
        family, number = family - 1, 10.0
    return f"{number:.4g}{FAMILIES[int(family) % 10]}"


def main() -> None:
    import colour

    shape = colour.SpectralShape(380, 780, 5)
    cmfs = colour.MSDS_CMFS["CIE 1931 2 Degree Standard Observer"].copy().align(shape)
    d65 = colour.SDS_ILLUMINANTS["D65"].copy().align(shape)
    ccs = colour.CCS_ILLUMINANTS["CIE 1931 2 Degree Standard Observer"]
    white_c, white_d65 = colour.xy_to_XYZ(ccs["C"]), colour.xy_to_XYZ(ccs["D65"])
    names, notations, columns = [], [], []
    for design, n, value, chroma in DESIGNS:
        for k in range(n):
            notation = f"{munsell_hue(FIRST_HUE + 100.0 * k / n)} {value}/{chroma}"
            xyz_c = colour.xyY_to_XYZ(colour.munsell_colour_to_xyY(notation))
            xyz = colour.adaptation.chromatic_adaptation_VonKries(xyz_c, white_c, white_d65, transform="CAT02")
            sd = colour.XYZ_to_sd(xyz, method="Jakob 2019", cmfs=cmfs, illuminant=d65)
            names.append(f"{design}-{k + 1:02d}")
            notations.append(notation)
            columns.append(np.clip(sd.values, 0.0, 1.0))
    wl = shape.wavelengths
    lines = ["# Caps of the cvdfilter arrangement tasks (our own design; see cvdfilter/data/make_task_caps.py).",
             "# Reflectance (fraction 0-1) recovered with Jakob & Hanika 2019 (colour-science) from Munsell",
             "# renotation colours (illuminant C) adapted to D65 with CAT02. Munsell notation per column:",
             "# " + ",".join(notations),
             "wavelength_nm," + ",".join(names)]
    for i, w in enumerate(wl):
        lines.append(f"{w:g}," + ",".join(f"{c[i]:.6f}" for c in columns))
    out = pathlib.Path(__file__).with_name("task_caps.csv")
    out.write_text("\n".join(lines) + "\n")
    print(f"wrote {out} ({len(names)} caps)")


if __name__ == "__main__":
    main()
