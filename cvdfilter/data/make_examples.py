"""Regenerate the bundled example filter curves in ``examples/``.

INVENTED DATA. The scenario: a fictional university teaching lab, the
"Larkhill Optics Bench", characterises four lens designs for a student project
on notch filters. No real product is described; the curves are synthetic,
made from the parametric shapes below plus a little seeded noise so that they
look like spectrophotometer exports (and so that the reader's noise handling
is exercised). Run ``python cvdfilter/data/make_examples.py`` to rebuild.
"""

from __future__ import annotations

import pathlib

import numpy as np

HERE = pathlib.Path(__file__).resolve().parent / "examples"
HEADER = ("# INVENTED example data (cvdfilter demo): fictional 'Larkhill Optics Bench' lens design {tag}.\n"
          "# Synthetic curve, not a measurement of any real product.\n")


def _gauss(wl, c, fwhm):
    return np.exp(-4 * np.log(2) * (wl - c) ** 2 / fwhm ** 2)


def main() -> None:
    rng = np.random.default_rng(20261201)
    HERE.mkdir(exist_ok=True)

    # LB-1: one deep flat-topped notch at 575 nm, exported in percent at 2 nm.
    wl = np.arange(380, 781, 2.0)
    od = 2.2 * np.exp(-np.log(2) * np.abs(2 * (wl - 575) / 32) ** 6)
    t = 0.93 * 10 ** -od * 100 + rng.normal(0, 0.15, wl.size)
    rows = "\n".join(f"{w:.0f},{v:.2f}" for w, v in zip(wl, t))
    (HERE / "larkhill-notch-575.csv").write_text(
        HEADER.format(tag="LB-1 (single notch)") + "wavelength_nm,transmittance_percent\n" + rows + "\n")

    # LB-2: two notches (490 nm and 585 nm), fraction, 1 nm, tab separated.
    wl = np.arange(380, 781, 1.0)
    t = 0.9 * (1 - 0.85 * _gauss(wl, 490, 22)) * (1 - 0.95 * _gauss(wl, 585, 26))
    t = t + rng.normal(0, 0.002, wl.size)
    rows = "\n".join(f"{w:.0f}\t{v:.4f}" for w, v in zip(wl, t))
    (HERE / "larkhill-double-notch.csv").write_text(
        HEADER.format(tag="LB-2 (double notch)") + "wavelength\ttransmittance_fraction\n" + rows + "\n")

    # LB-3: a broad rose tint (absorbs the middle of the spectrum), optical density, 5 nm.
    wl = np.arange(380, 781, 5.0)
    od = 0.05 + 0.45 * _gauss(wl, 545, 110)
    rows = "\n".join(f"{w:.0f},{v:.4f}" for w, v in zip(wl, od))
    (HERE / "larkhill-rose-tint.csv").write_text(
        HEADER.format(tag="LB-3 (rose tint)") + "wavelength_nm,optical_density\n" + rows + "\n")

    # LB-4: a grey neutral-density reference, fraction, 5 nm.
    wl = np.arange(380, 781, 5.0)
    t = 0.35 + 0.01 * np.sin(wl / 40.0)
    rows = "\n".join(f"{w:.0f},{v:.4f}" for w, v in zip(wl, t))
    (HERE / "larkhill-grey-reference.csv").write_text(
        HEADER.format(tag="LB-4 (grey reference)") + "wavelength_nm,transmittance_fraction\n" + rows + "\n")


if __name__ == "__main__":
    main()
