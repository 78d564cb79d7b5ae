"""Write the small invented user files in tests/data/ (one per case, named for what it tests).

INVENTED data: every curve is synthetic, made up for the tests; none is a measurement of a real product.
Run from the repository root: python tests/data/make_user_files.py
"""

from __future__ import annotations

import pathlib
import zipfile

import numpy as np

HERE = pathlib.Path(__file__).resolve().parent
NOTE = "# INVENTED test data (cvdfilter tests): synthetic curve, not a measurement.\n"


def gauss(wl, c, fwhm):
    return np.exp(-4 * np.log(2) * (wl - c) ** 2 / fwhm ** 2)


def write(name, header, wl, *cols, fmt="{:.4f}", delim=",", note=NOTE):
    rows = [delim.join([f"{w:g}"] + [fmt.format(c[i]) for c in cols]) for i, w in enumerate(wl)]
    text = note + (header + "\n" if header is not None else "") + "\n".join(rows) + "\n"
    (HERE / name).write_text(text)


def main() -> None:
    wl20 = np.arange(380, 781, 20.0)
    wl5 = np.arange(380, 781, 5.0)
    wl1 = np.arange(380, 781, 1.0)
    # A tint's optical density 0.03-0.63 (a broad absorption at 560 nm).
    od = 0.03 + 0.60 * gauss(wl5, 560, 120)
    write("abs_header_tab.txt", "nm\tAbs", wl5, od, delim="\t")
    od20 = 0.03 + 0.60 * gauss(wl20, 560, 120)
    for name, word in [("od_header_A.csv", "A"), ("od_header_abs_dot.csv", "Abs."),
                       ("od_header_absorbance.csv", "Absorbance"), ("od_header_OD.csv", "OD"),
                       ("od_header_optical_density.csv", "Optical density"), ("od_header_D.csv", "D")]:
        write(name, f"nm,{word}", wl20, od20)
    pct = 100 * 10 ** -od20
    for name, word in [("pct_header_percent_T.csv", "%T"), ("pct_header_T_percent.csv", "T%"),
                       ("pct_header_T_paren_percent.csv", "T (%)"),
                       ("pct_header_transmission_brackets.csv", "Transmission [%]"),
                       ("pct_header_transmittance_paren.csv", "Transmittance (%)")]:
        write(name, f"nm,{word}", wl20, pct, fmt="{:.2f}")
    write("reflectance_percent_R_in_filter.csv", "nm,%R", wl20, pct, fmt="{:.2f}")
    write("reflectance_R_percent_in_filter.csv", "nm,R%", wl20, pct, fmt="{:.2f}")
    # A dark lens in percent (0.5-0.8 %T) whose header names no unit.
    write("dark_lens_percent_no_unit.csv", "nm,T", wl20, 0.65 + 0.15 * np.sin(wl20 / 50), fmt="{:.3f}")
    # A clear-ish lens in percent (values 5-92, median well above any optical density), no unit word.
    write("percent_by_range_no_unit.csv", "nm,T", wl20, 92 - 87 * gauss(wl20, 580, 40), fmt="{:.2f}")
    # Optical density with out-of-range markers of 99 in the blocked band, no unit word.
    od99 = 0.05 + 0.3 * gauss(wl20, 600, 60)
    od99[(wl20 >= 380) & (wl20 <= 420)] = 99
    write("od_values_reach_99_no_unit.csv", "nm,T", wl20, od99, fmt="{:.2f}")
    # t = 1.5 everywhere, no unit: 1.5 % or optical density 1.5?
    write("t_1_5_everywhere_no_unit.csv", "nm,T", wl20, np.full(wl20.size, 1.5), fmt="{:.1f}")
    # Quoted numeric cells, as spreadsheets export them.
    quoted = [f'"{w:g}","{v:.1f}"' for w, v in zip(wl20, 92 - 60 * gauss(wl20, 575, 40))]
    (HERE / "quoted_cells.csv").write_text(NOTE + '"nm","%T"\n' + "\n".join(quoted) + "\n")
    # Spreadsheet workbooks (a tiny zip container stands in for the real thing).
    for name in ("workbook.xlsx", "workbook.ods"):
        with zipfile.ZipFile(HERE / name, "w") as z:
            z.writestr(zipfile.ZipInfo("mimetype", date_time=(2026, 1, 1, 0, 0, 0)), "invented test workbook")
    # A curve measured 400-700 nm only: the rest of the 380-780 nm grid is extrapolated.
    wl_part = np.arange(400, 701, 5.0)
    write("measured_400_700_only.csv", "nm,T (fraction)", wl_part, 0.9 - 0.5 * gauss(wl_part, 575, 30))
    # A long-pass amber lens: low below 480 nm, high above 520 nm. One edge, no notch.
    amber = 0.03 + 0.85 / (1 + np.exp(-(wl1 - 500) / 9.0))
    write("amber_longpass.csv", "nm,T (fraction)", wl1, amber)
    # A clear lens with one bad sample at 759 nm: noise, not a notch.
    rng = np.random.default_rng(7)
    spike = 0.9 + rng.normal(0, 0.002, wl1.size)
    spike[wl1 == 759] = 0.72
    write("noise_spike_759.csv", "nm,T (fraction)", wl1, spike)
    # The same bad sample in a file sampled every 2 nm (it spans three points of the 1 nm grid after resampling).
    wl2 = np.arange(380, 781, 2.0)
    spike2 = np.full(wl2.size, 0.9)
    spike2[wl2 == 760] = 0.72
    write("noise_spike_760_2nm_sampling.csv", "nm,T (fraction)", wl2, spike2)
    # A 25 nm FWHM dip (depth 40 %) at 520 nm under a broad rose tint.
    tint = (0.85 - 0.35 * gauss(wl1, 620, 210)) * (1 - 0.4 * gauss(wl1, 520, 25))
    write("dip_25nm_under_broad_tint.csv", "nm,T (fraction)", wl1, tint)
    # A band-pass: high 500-600 nm only.
    bp = 0.02 + 0.88 / (1 + np.exp(-(wl1 - 500) / 4.0)) / (1 + np.exp((wl1 - 600) / 4.0))
    write("bandpass_500_600.csv", "nm,T (fraction)", wl1, bp)
    # A small periodic ripple (interference in a coating) on a clear lens.
    write("ripple_coating.csv", "nm,T (fraction)", wl1, 0.9 + 0.02 * np.sin(2 * np.pi * wl1 / 30))
    # Two files whose only value column has the same header.
    write("same_header_a.csv", "nm,T (%)", wl20, 90 - 60 * gauss(wl20, 575, 30), fmt="{:.2f}")
    write("same_header_b.csv", "nm,T (%)", wl20, 90 - 60 * gauss(wl20, 530, 30), fmt="{:.2f}")
    # Two files with the same stem in different folders.
    for sub, c in (("batch1", 560), ("batch2", 590)):
        (HERE / sub).mkdir(exist_ok=True)
        write(f"{sub}/lens.csv", "nm,%T", wl20, 90 - 60 * gauss(wl20, c, 30), fmt="{:.2f}")
    # Three lenses in one file (percent).
    write("three_lenses.csv", "nm,Lens A (%T),Lens B (%T),Lens C (%T)", wl20,
          90 - 70 * gauss(wl20, 575, 30), 90 - 70 * gauss(wl20, 540, 30), np.full(wl20.size, 45.0),
          fmt="{:.2f}")
    # Columns in different units, each header naming its own.
    write("mixed_units_per_column.csv", "nm,Lens A %T,Lens B OD", wl20, pct, od20)
    # Two headers naming two units in one cell.
    write("header_names_two_units.csv", "nm,OD (%)", wl20, od20)
    # Values far below zero in every unit.
    write("far_negative_values.csv", "nm,T", wl20, np.full(wl20.size, -40.0), fmt="{:.1f}")
    # An IES TM-27-14 document with a header but no spectral data.
    (HERE / "tm2714_no_spectral_data.spdx").write_text(
        '<?xml version="1.0" encoding="UTF-8"?>\n<!-- INVENTED test data (cvdfilter tests) -->\n'
        '<IESTM2714 xmlns="iestm2714" version="1.0">\n<Header><Manufacturer>Invented</Manufacturer>'
        "<Description>no data</Description></Header>\n<SpectralDistribution><SpectralQuantity>transmittance"
        "</SpectralQuantity></SpectralDistribution>\n</IESTM2714>\n")


if __name__ == "__main__":
    main()
