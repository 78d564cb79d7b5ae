"""Write the invented "your own measurements" example files in this folder (run from anywhere).

Everything here is INVENTED for the cvdfilter documentation: the curves are smooth formulas shaped like
bench measurements, the images are drawn from simple shapes. No file is a measurement of a real product.
Scenario: the fictional Brackenholm Teaching Clinic measured clip-on lenses for a student project.
"""

from __future__ import annotations

import pathlib

import numpy as np

HERE = pathlib.Path(__file__).resolve().parent
WL = np.arange(380, 781, 5)


def _gauss(center: float, fwhm: float) -> np.ndarray:
    return np.exp(-4 * np.log(2) * ((WL - center) / fwhm) ** 2)


def _write(name: str, comments: list[str], header: str, columns: list[np.ndarray], fmt: str) -> None:
    lines = [f"# {c}" for c in comments] + [header]
    for i, w in enumerate(WL):
        lines.append(",".join([f"{w:d}"] + [format(col[i], fmt) for col in columns]))
    (HERE / name).write_text("\n".join(lines) + "\n")


def curves() -> None:
    # An amber clip-on: a soft long-pass edge near 505 nm, in percent as a spectrophotometer exports it.
    amber = 3.0 + 86.0 / (1.0 + np.exp(-(WL - 505.0) / 11.0)) - 2.5 * _gauss(690, 60)
    _write("amber-clip-on.csv",
           ["INVENTED example data (cvdfilter documentation), not a measurement of any real product.",
            "Fictional Brackenholm Teaching Clinic, bench spectrophotometer, clip-on lens BTC-7 (amber).",
            "Normal incidence, 5 nm steps, transmittance in percent."],
           "wavelength_nm,T (%)", [amber], ".2f")
    # A grey lens given as optical density (T = 10^-OD), slightly denser in the blue.
    od = 0.62 - 0.08 * (WL - 380.0) / 400.0 + 0.03 * _gauss(420, 80)
    _write("grey-lens-od.csv",
           ["INVENTED example data (cvdfilter documentation), not a measurement of any real product.",
            "Fictional Brackenholm Teaching Clinic, grey lens BTC-2, optical density (absorbance, base 10)."],
           "wavelength_nm,OD", [od], ".4f")
    # Three lenses in one file, one column each, percent transmittance.
    lens_a = 88.0 - 70.0 * _gauss(578, 32)
    lens_b = 90.0 - 62.0 * _gauss(490, 28) - 66.0 * _gauss(585, 30)
    lens_c = 72.0 + 14.0 * np.cos((WL - 380.0) / 400.0 * 2 * np.pi) - 20.0 * _gauss(545, 70)
    _write("bench-lenses.csv",
           ["INVENTED example data (cvdfilter documentation), not measurements of any real products.",
            "Fictional Brackenholm Teaching Clinic: three trial lenses measured in one session.",
            "Lens A: single notch near 578 nm; Lens B: two notches; Lens C: rose tint. Percent transmittance."],
           "wavelength_nm,Lens A (%T),Lens B (%T),Lens C (%T)", [lens_a, lens_b, lens_c], ".2f")


def _disc(yy, xx, cy, cx, r):
    return (yy - cy) ** 2 + (xx - cx) ** 2 <= r ** 2


def images() -> None:
    from PIL import Image

    h, w = 96, 128
    yy, xx = np.mgrid[0:h, 0:w]
    rng = np.random.default_rng(7)
    # Berries among leaves: red and dark-red discs on a mottled green ground.
    img = np.zeros((h, w, 3), np.uint8)
    img[:] = (62, 120, 48)
    for _ in range(40):
        cy, cx, r = rng.integers(0, h), rng.integers(0, w), rng.integers(6, 14)
        img[_disc(yy, xx, cy, cx, r)] = rng.choice([(48, 104, 40), (88, 146, 60), (70, 130, 52)])
    for _ in range(14):
        cy, cx, r = rng.integers(6, h - 6), rng.integers(6, w - 6), rng.integers(3, 6)
        img[_disc(yy, xx, cy, cx, r)] = rng.choice([(196, 36, 44), (150, 24, 40), (222, 82, 60)])
    Image.fromarray(img).save(HERE / "stimuli" / "berries.png")
    # Wire colours: bands of the insulation colours an electrician tells apart.
    colours = [(150, 75, 0), (20, 20, 20), (128, 128, 128), (0, 90, 200), (40, 150, 60), (230, 200, 30),
               (220, 120, 20), (200, 30, 30)]
    img = np.zeros((h, w, 3), np.uint8)
    for k, c in enumerate(colours):
        img[k * h // len(colours):(k + 1) * h // len(colours)] = c
    img[:, w // 2:] = np.roll(img[:, w // 2:], h // 16, axis=0)  # a second column, shifted
    Image.fromarray(img).save(HERE / "stimuli" / "wires.png")
    # A transit-map fragment: coloured lines on a pale ground.
    img = np.full((h, w, 3), 240, np.uint8)
    for (y0, c) in [(20, (220, 40, 40)), (44, (40, 160, 70)), (68, (140, 90, 40))]:
        img[y0:y0 + 6] = c
    img[:, 60:66] = (30, 90, 200)
    img[:, 96:102] = (230, 120, 170)
    Image.fromarray(img).save(HERE / "stimuli" / "map.png")


if __name__ == "__main__":
    curves()
    images()
