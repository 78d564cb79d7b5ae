"""Regenerate the CIE 170-1:2006 component tables in this folder.

Run once by a maintainer (``python cone_data/make_cone_data.py``); the runtime
never imports luxpy. The luxpy distribution carries the CIE TC 1-97 tables of
CIE 170-1:2006 at 0.1 nm; this script samples them at whole nanometres and
writes plain CSV files with a header row and units in the column names.
"""

from __future__ import annotations

import pathlib

import numpy as np

HERE = pathlib.Path(__file__).resolve().parent


def main() -> None:
    from luxpy.toolboxes.indvcmf import individual_observer_cmf_model as m

    data = m._load_cietc197_lms_and_odensities()
    wl = np.round(data["wls"], 1)
    keep = np.isclose(wl, np.round(wl))
    wl_nm = wl[keep].astype(int)

    absorbance = data["LMSa"][1:, keep]  # log10 low-density absorbance, peak 0
    rows = ["wavelength_nm,log10_absorbance_L,log10_absorbance_M,log10_absorbance_S"]
    for i, w in enumerate(wl_nm):
        cells = [f"{v:.10f}" if np.isfinite(v) else "" for v in absorbance[:, i]]
        rows.append(f"{w}," + ",".join(cells))
    (HERE / "cie2006_photopigment_absorbance.csv").write_text("\n".join(rows) + "\n")

    docul = data["docul"][1:, keep]  # part 1 (ages), part 2 (age-independent)
    rows = ["wavelength_nm,ocular_density_aging_part_32y,ocular_density_fixed_part"]
    for i, w in enumerate(wl_nm):
        rows.append(f"{w},{docul[0, i]:.10f},{docul[1, i]:.10f}")
    (HERE / "cie2006_ocular_media_density.csv").write_text("\n".join(rows) + "\n")

    macula = data["rmd"][1, keep] * 0.35  # back to the 2 deg table, peak 0.35 at 460 nm
    rows = ["wavelength_nm,macular_density_2deg"]
    for i, w in enumerate(wl_nm):
        rows.append(f"{w},{macula[i]:.10f}")
    (HERE / "cie2006_macular_density.csv").write_text("\n".join(rows) + "\n")


if __name__ == "__main__":
    main()
