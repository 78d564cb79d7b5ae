"""Figures: style, palette, deterministic files, and the plotted data of each kind.

Plotted values are read back from the matplotlib artists (their data, not pixels) and
compared with the numbers the rest of the package computes and with outside references.
"""

from __future__ import annotations

import itertools
import re

import numpy as np
import pytest

from cvdfilter.errors import InputError
from cvdfilter.figures import KINDS, figure, parse_style, width_mm
from cvdfilter.figures.palette import OKABE_ITO, SERIES, series
from cvdfilter.figures.style import Style


def _artist(fig, gid):
    """The first artist in the figure with this gid."""
    found = fig.findobj(lambda a: a.get_gid() == gid)
    assert found, f"no artist with gid {gid!r}"
    return found[0]


# --- style -----------------------------------------------------------------------------------------

def test_widths_are_journal_columns():
    # Source: journal figure guidelines (Nature: single column 89 mm, double column 183 mm; from memory,
    # as the issue states).
    assert width_mm("single") == 89.0
    assert width_mm("double") == 183.0
    assert width_mm("120") == 120.0
    with pytest.raises(InputError):
        width_mm("wide")
    with pytest.raises(InputError):
        width_mm(5)


def test_style_from_options_and_file(tmp_path):
    style = parse_style("font_size=8,tick_size=7.5")
    assert style.font_size == 8.0 and style.tick_size == 7.5
    f = tmp_path / "journal.mplstyle"
    f.write_text("# lab style\nfont_size: 9\naxes.linewidth = 0.8\ncaveat_size: 6.5\n")
    style = parse_style([str(f), "title_size=10"])
    assert style.font_size == 9.0 and style.caveat_size == 6.5 and style.title_size == 10.0
    assert style.rc_params()["axes.linewidth"] == 0.8
    assert style.rc_params()["pdf.fonttype"] == 42 and style.rc_params()["svg.fonttype"] == "none"


@pytest.mark.parametrize("text,word", [("font_size=3", "below 6 pt"), ("colour=red", "unknown style key"),
                                       ("font_size=big", "not a number"), ("font=NoSuchFontXyz", "not installed"),
                                       ("lines.linewidth=thick", "lines.linewidth")])
def test_style_errors_are_one_line(text, word):
    with pytest.raises(InputError) as exc:
        parse_style(text)
    assert word in str(exc.value) and "\n" not in str(exc.value)


def test_style_file_error_names_line(tmp_path):
    f = tmp_path / "bad.style"
    f.write_text("font_size: 8\nnonsense here\n")
    with pytest.raises(InputError) as exc:
        parse_style(str(f))
    assert "line 2" in str(exc.value) and str(f) in str(exc.value)


def test_style_sizes_reach_the_figure():
    r = figure("spectrum", "larkhill-notch-575", style="font_size=9,tick_size=8", title="T")
    ax = r.figure.axes[-1]
    assert ax.xaxis.label.get_fontsize() == 9.0
    assert ax.get_xticklabels()[0].get_fontsize() == 8.0


# --- palette ---------------------------------------------------------------------------------------

def test_palette_is_okabe_ito():
    # Source: Okabe & Ito (2008), Color Universal Design, https://jfly.uni-koeln.de/color/ : RGB
    # (230,159,0) orange, (86,180,233) sky blue, (0,158,115) bluish green, (240,228,66) yellow,
    # (0,114,178) blue, (213,94,0) vermillion, (204,121,167) reddish purple, black.
    published = {"orange": (230, 159, 0), "sky blue": (86, 180, 233), "bluish green": (0, 158, 115),
                 "yellow": (240, 228, 66), "blue": (0, 114, 178), "vermillion": (213, 94, 0),
                 "reddish purple": (204, 121, 167), "black": (0, 0, 0)}
    for name, rgb in published.items():
        assert tuple(int(OKABE_ITO[name][i:i + 2], 16) for i in (1, 3, 5)) == rgb


def test_series_differ_in_colour_line_style_and_marker():
    # Invariant: no two of the first 8 series share a colour, a line style or a marker, so none
    # is told apart by colour alone; 9-16 repeat a colour with another line style and open markers.
    s = series(16)
    for a, b in itertools.combinations(s[:8], 2):
        assert a.color != b.color and a.linestyle != b.linestyle and a.marker != b.marker
    for a, b in itertools.combinations(s, 2):
        differences = (a.color != b.color) + (a.linestyle != b.linestyle) + (a.marker != b.marker) + (
            a.filled != b.filled)
        assert differences >= 2
    with pytest.raises(InputError):
        series(17)


@pytest.mark.parametrize("cvd", ["protanomaly", "deuteranomaly", "tritanomaly"])
def test_palette_colours_stay_apart_for_dichromats(cvd):
    # Reference library: colorspacious's sRGB1+CVD (Machado et al. 2009) at severity 100 simulates
    # each dichromat; every pair of the eight colours stays at least 10 CAM02-UCS units apart
    # (measured minimum: 14.0 protan, 14.8 deutan, 11.0 tritan). A difference of 10 units is large
    # (common practice).
    import colorspacious as cs

    rgb = np.array([[int(s.color[i:i + 2], 16) / 255 for i in (1, 3, 5)] for s in SERIES])
    sim = np.clip(cs.cspace_convert(rgb, {"name": "sRGB1+CVD", "cvd_type": cvd, "severity": 100}, "sRGB1"), 0, 1)
    ucs = cs.cspace_convert(sim, "sRGB1", "CAM02-UCS")
    dmin = min(np.linalg.norm(ucs[i] - ucs[j]) for i, j in itertools.combinations(range(len(rgb)), 2))
    assert dmin >= 10.0


# --- output ----------------------------------------------------------------------------------------

@pytest.fixture(scope="module")
def spectrum_result():
    return figure("spectrum", ["larkhill-notch-575", "notch:center=530,fwhm=20,depth=0.6"],
                  observers=["normal", "deuteranomalous:shift=10"])


def test_svg_and_pdf_are_byte_identical_across_runs(spectrum_result):
    again = figure("spectrum", ["larkhill-notch-575", "notch:center=530,fwhm=20,depth=0.6"],
                   observers=["normal", "deuteranomalous:shift=10"])
    for fmt in ("svg", "pdf"):
        first = spectrum_result.to_bytes(fmt)
        spectrum_result.to_bytes("png", dpi=150)   # saving at another dpi must not move anything
        assert spectrum_result.to_bytes(fmt) == first
        assert again.to_bytes(fmt) == first


def test_pdf_embeds_truetype_fonts(spectrum_result):
    pdf = spectrum_result.to_bytes("pdf")
    assert pdf.startswith(b"%PDF")
    assert b"/FontFile2" in pdf                       # TrueType font program embedded
    assert b"/Subtype /Type3" not in pdf              # no Type 3 bitmap-like fonts
    # every font descriptor points at an embedded TrueType program (a small parse of the objects)
    descriptors = re.findall(rb"<< /Type /FontDescriptor(.*?)>>", pdf, flags=re.S)
    assert descriptors and all(b"/FontFile2" in d for d in descriptors)
    assert b"/CreationDate" not in pdf                # no date: reproducible


def test_svg_keeps_text_as_text(spectrum_result):
    svg = spectrum_result.to_bytes("svg").decode()
    assert "<text" in svg and "Wavelength (nm)" in svg
    assert "<dc:date>" not in svg
    assert not re.search(r'id="DejaVuSans-', svg)     # no glyph outlines


def test_png_has_the_asked_dpi(spectrum_result):
    from PIL import Image
    import io

    png = spectrum_result.to_bytes("png", dpi=150)
    with Image.open(io.BytesIO(png)) as im:
        w, _ = im.size
        assert abs(w - round(89 / 25.4 * 150)) <= 1
        assert abs(im.info["dpi"][0] - 150) < 0.5


def test_unknown_kind_and_format():
    with pytest.raises(InputError):
        figure("histogram", "larkhill-notch-575")
    r = figure("spectrum", "larkhill-notch-575")
    with pytest.raises(InputError):
        r.to_bytes("jpg")
    with pytest.raises(InputError):
        r.save("out.gif")
    with pytest.raises(InputError):
        figure("spectrum", "larkhill-notch-575", space="xy")


# --- spectrum --------------------------------------------------------------------------------------

def test_spectrum_plots_the_transmittance_and_notches(spectrum_result):
    from cvdfilter.spectra.filters import find_notches, load_filters

    fig, data = spectrum_result.figure, spectrum_result.data
    fs = load_filters(["larkhill-notch-575", "notch:center=530,fwhm=20,depth=0.6"])
    for i in range(2):
        line = _artist(fig, f"transmittance-{i}")
        assert np.allclose(line.get_xdata(), fs.wavelengths)
        assert np.allclose(line.get_ydata(), 100 * fs.transmittance[i])
    # The parametric notch: centre 530 nm, FWHM 20 nm by construction; the shaded span covers
    # centre +- FWHM/2 as find_notches measures it.
    n = find_notches(fs.wavelengths, fs.transmittance[1])[0]
    assert n["center"] == pytest.approx(530, abs=0.05) and n["fwhm"] == pytest.approx(20, abs=0.1)
    span = _artist(fig, "notch-1")
    xs = span.get_transform().transform(span.get_path().vertices)[:, 0]
    lo, hi = fig.axes[0].transData.inverted().transform([[xs.min(), 0], [xs.max(), 0]])[:, 0]
    assert lo == pytest.approx(n["center"] - n["fwhm"] / 2, abs=1e-6)
    assert hi == pytest.approx(n["center"] + n["fwhm"] / 2, abs=1e-6)
    texts = [t.get_text() for t in fig.axes[0].texts]
    assert "530 nm\nFWHM 20 nm" in texts


def test_spectrum_cones_are_cie_170_1(spectrum_result):
    # Source: CIE 170-1:2006 2 deg fundamentals at 32 years = Stockman & Sharpe (2000) 2 deg, energy
    # based, peak 1 (colour-science table), within 1e-3.
    import colour

    fig = spectrum_result.figure
    ref = colour.MSDS_CMFS["Stockman & Sharpe 2 Degree Cone Fundamentals"].copy().align(
        colour.SpectralShape(390, 780, 1))
    ref = np.asarray(ref.values) / np.asarray(ref.values).max(axis=0)
    for c in range(3):
        line = _artist(fig, f"cone-{c}")
        x, y = np.asarray(line.get_xdata()), np.asarray(line.get_ydata())
        assert np.max(np.abs(y[x >= 390] - ref[:, c])) < 1e-3
    # the deuteranomalous M pigment is drawn apart from the normal M, its peak 10 nm toward L
    shifted = _artist(fig, "shifted-cone-0")
    peak_shift = shifted.get_xdata()[np.argmax(shifted.get_ydata())] - 543
    assert 6 <= peak_shift <= 14


def test_spectrum_illuminant_is_relative_d65(spectrum_result):
    # Source: CIE D65 relative SPD (colour-science), normalised to its maximum in 380-780 nm.
    import colour

    d65 = colour.SDS_ILLUMINANTS["D65"].copy().align(colour.SpectralShape(380, 780, 1))
    ref = np.asarray(d65.values) / np.max(d65.values)
    assert np.max(np.abs(spectrum_result.data["illuminant_relative"] - ref)) < 2e-3


def test_every_kind_has_a_default_title():
    from cvdfilter.figures import DEFAULT_TITLES

    assert set(DEFAULT_TITLES) == set(KINDS)


def test_caveat_footnote_and_no_caveat():
    from cvdfilter.cautions import CAVEAT
    from cvdfilter.figures.sweep import sweep_figure

    card = _fake_card()
    r = sweep_figure("notch:center=540..560/10,fwhm=30,depth=0.8", card=card, caveat=CAVEAT)
    text = _artist(r.figure, "caveat").get_text()
    assert " ".join(text.split()) == CAVEAT
    r = sweep_figure("notch:center=540..560/10,fwhm=30,depth=0.8", card=card, caveat=None)
    assert not r.figure.findobj(lambda a: a.get_gid() == "caveat")


def _fake_card():
    # A scorecard-shaped dict for plotting tests that do not need real metrics.
    names = ["notch:center=540,depth=0.8,fwhm=30", "notch:center=550,depth=0.8,fwhm=30",
             "notch:center=560,depth=0.8,fwhm=30"]
    return {"illuminant": "D65", "surfaces": "ces99", "adaptation": "full", "filters": [
        {"name": n, "luminous_transmittance": 0.5 + 0.1 * k,
         "observers": [{"observer": "normal", "red_green_gain": 1.0},
                       {"observer": "deuteranope", "red_green_gain": 1.0 + 0.1 * k}]}
        for k, n in enumerate(names)]}


def test_sweep_plots_the_card_values():
    from cvdfilter.figures.sweep import sweep_figure, swept_parameters

    r = sweep_figure("notch:center=540..560/10,fwhm=30,depth=0.8", card=_fake_card())
    line = _artist(r.figure, "sweep-red_green_gain-1")
    assert np.allclose(line.get_xdata(), [540, 550, 560])
    assert np.allclose(line.get_ydata(), [1.0, 1.1, 1.2])
    lum = _artist(r.figure, "sweep-luminous_transmittance-0")
    assert np.allclose(lum.get_ydata(), [50, 60, 70])          # percent
    assert r.figure.axes[1].get_ylim() == (0, 100)              # the full scale, not a zoom
    varying, values = swept_parameters(["notch:center=540,fwhm=20*nd:t=0.5", "notch:center=540,fwhm=30*nd:t=0.5"])
    assert varying == ["fwhm"] and np.allclose(values["t"], 0.5)
    with pytest.raises(InputError):
        sweep_figure("larkhill-notch-575", card=_fake_card())


# --- chromaticity ----------------------------------------------------------------------------------

@pytest.mark.parametrize("obs,space", [("deuteranope", "xy"), ("protanope", "xy2015"), ("tritanope", "xy2015"),
                                       ("deuteranomalous:shift=10", "xy")])
def test_chromaticity_copunctal_point_is_the_computed_one(obs, space):
    from cvdfilter.observers.copunctal import copunctal_point

    r = figure("chromaticity", "larkhill-notch-575", observers=obs, space=space, caveat=False)
    plotted = np.asarray(_artist(r.figure, "copunctal").get_xydata())[0]
    system = "cie1931" if space == "xy" else "cie2015-2"
    assert np.allclose(plotted, copunctal_point(obs, xy_system=system), atol=1e-12)
    if space == "xy2015":
        # Source: Stockman & Sharpe 2 deg fundamentals in CIE 2015 2 deg xy: protan (0.7384, 0.2616),
        # tritan (0.1586, 0.0000) (issue 3, computed with colour-science; tolerance 0.001).
        expected = {"protanope": (0.7384, 0.2616), "tritanope": (0.1586, 0.0)}[obs]
        assert np.allclose(plotted, expected, atol=1e-3)


def test_chromaticity_mb_copunctal_points_and_tritan_lines():
    # Source: MacLeod & Boynton (1979): protan confusion lines converge at (l, s) = (1, 0), deutan
    # lines at (0, 0); tritan lines are lines of constant l (from memory; follows from the definition).
    for obs, expected in (("protanope", (1.0, 0.0)), ("deuteranope", (0.0, 0.0))):
        r = figure("chromaticity", "larkhill-notch-575", observers=obs, caveat=False)
        assert np.allclose(np.asarray(_artist(r.figure, "copunctal").get_xydata())[0], expected, atol=1e-12)
    r = figure("chromaticity", "larkhill-notch-575", observers="tritanope", caveat=False)
    assert not r.figure.findobj(lambda a: a.get_gid() == "copunctal")
    line = _artist(r.figure, "fan-0-0")
    assert np.ptp(line.get_xdata()) == 0    # vertical


def test_chromaticity_surfaces_match_colour_science_cie2015_xy():
    # Source: colour-science sd_to_XYZ with the "CIE 2015 2 Degree Standard Observer" CMFs and CIE D65
    # for the 24-patch chart (chart24, N. Ohta) reflectances; the figure maps the CIE 2006 cone excitations through
    # CIE 170-2's exact LMS-to-XYZ relation; xy agree within 5e-4 (measured 1.0e-4: the CIE 2006
    # model at 32 years matches the tabulated Stockman & Sharpe data to 1e-3 of the peak).
    import colour

    from cvdfilter.spectra.grid import DEFAULT_GRID
    from cvdfilter.spectra.surfaces import surface_set

    r = figure("chromaticity", "nd:t=0.5", observers="deuteranope", space="xy2015", surfaces="chart24",
               caveat=False)
    plotted = np.asarray(_artist(r.figure, "surfaces-without-0").get_xydata())
    surf = surface_set("chart24", DEFAULT_GRID)
    cmfs = colour.MSDS_CMFS["CIE 2015 2 Degree Standard Observer"]
    shape = colour.SpectralShape(380, 780, 1)
    d65 = colour.SDS_ILLUMINANTS["D65"].copy().align(shape)
    ref = []
    for j in range(len(surf)):
        sd = colour.SpectralDistribution(surf.reflectance[:, j], DEFAULT_GRID.wavelengths)
        xyz = colour.sd_to_XYZ(sd, cmfs.copy().align(shape), d65, method="Integration")
        ref.append(xyz[:2] / xyz.sum())
    assert np.max(np.abs(plotted - np.array(ref))) < 5e-4
    # A neutral-density filter under full adaptation moves nothing (invariant).
    with_filter = np.asarray(_artist(r.figure, "surfaces-with-0").get_xydata())
    assert np.allclose(with_filter, plotted, atol=1e-12)


def test_chromaticity_mb_surfaces_follow_the_published_formula():
    # Source: MacLeod-Boynton coordinates as defined in CIE 170-1:2006: l = 0.68990272 L / V,
    # s = S / V scaled so that max over the spectrum of S / V is 1, V = 0.68990272 L + 0.34832189 M,
    # with colour-science's Stockman & Sharpe 2 deg fundamentals; within 2e-3 (CIE 2006 model vs the
    # tabulated data differ by up to 1e-3).
    import colour

    from cvdfilter.spectra.grid import Grid
    from cvdfilter.spectra.illuminants import illuminant
    from cvdfilter.spectra.surfaces import surface_set

    r = figure("chromaticity", "larkhill-notch-575", observers="protanope", surfaces="chart24", caveat=False)
    plotted = np.asarray(_artist(r.figure, "surfaces-without-0").get_xydata())
    g = Grid(390, 780, 1)
    lms = colour.MSDS_CMFS["Stockman & Sharpe 2 Degree Cone Fundamentals"].copy().align(
        colour.SpectralShape(390, 780, 1)).values
    lms = np.asarray(lms) / np.asarray(lms).max(axis=0)
    spd = illuminant("D65", g).spd
    refl = surface_set("chart24", g).reflectance
    e = (spd[:, None] * refl).T @ lms
    v = 0.68990272 * e[:, 0] + 0.34832189 * e[:, 1]
    vl = 0.68990272 * lms[:, 0] + 0.34832189 * lms[:, 1]
    ok = vl > 1e-4 * vl.max()
    s_scale = 1 / np.max(lms[ok, 2] / vl[ok])
    ref = np.stack([0.68990272 * e[:, 0] / v, s_scale * e[:, 2] / v], axis=1)
    assert np.max(np.abs(plotted[:, 0] - ref[:, 0])) < 2e-3
    assert np.max(np.abs(plotted[:, 1] - ref[:, 1]) / ref[:, 1].max()) < 2e-2


def test_chromaticity_adapted_white_returns_home():
    # Invariant: under full von Kries adaptation the filtered white maps onto the unfiltered white;
    # with adaptation none it stays where the filtered light falls.
    r = figure("chromaticity", "larkhill-rose-tint", observers="deuteranope", caveat=False)
    d = r.data
    assert np.allclose(d["filters"][0]["white_adapted"], d["white"], atol=1e-12)
    assert np.linalg.norm(d["filters"][0]["white_filtered"] - d["white"]) > 1e-3
    r = figure("chromaticity", "larkhill-rose-tint", observers="deuteranope", adaptation="none", caveat=False)
    assert np.allclose(r.data["filters"][0]["white_adapted"], r.data["filters"][0]["white_filtered"], atol=1e-12)
    with pytest.raises(InputError):
        figure("chromaticity", "larkhill-notch-575", observers=["protanope", "deuteranope"])
    with pytest.raises(InputError):
        figure("chromaticity", "larkhill-notch-575", space="luv")


# --- kinds built on the scorecard and the renderer -------------------------------------------------

_SMALL_IMAGE = None


def _small_image():
    # Open data shipped with scikit-image (NASA astronaut photograph), reduced to 64 x 64.
    global _SMALL_IMAGE
    if _SMALL_IMAGE is None:
        import skimage.data

        _SMALL_IMAGE = np.ascontiguousarray(skimage.data.astronaut()[::8, ::8])
    return _SMALL_IMAGE


_KIND_ARGS = {
    "spectrum": (["larkhill-notch-575"], {"observers": ["normal", "protanomalous"]}),
    "chromaticity": (["larkhill-notch-575"], {"surfaces": "chart24"}),
    "gains": (["larkhill-notch-575", "larkhill-rose-tint"], {"surfaces": "chart24",
                                                             "observers": ["normal", "deuteranope"]}),
    "hues": (["larkhill-notch-575"], {}),
    "swatches": (["larkhill-notch-575"], {"surfaces": "chart24"}),
    "images": (["larkhill-notch-575"], {"image": None}),
    "sweep": (["notch:center=550..590/20,fwhm=30,depth=0.8"], {"surfaces": "chart24",
                                                              "observers": ["normal", "deuteranope"]}),
    "tasks": (["larkhill-notch-575"], {"observers": ["normal", "deuteranope"], "trials": 30}),
    "population": (["larkhill-notch-575"], {"surfaces": "chart24", "observers": ["deuteranomalous:n=40,seed=3"]}),
}


@pytest.fixture(scope="module")
def every_kind():
    out = {}
    for kind in KINDS:
        filters, kw = _KIND_ARGS[kind]
        kw = dict(kw)
        if "image" in kw:
            kw["image"] = _small_image()
        out[kind] = figure(kind, filters, **kw)
    return out


@pytest.mark.parametrize("kind", KINDS)
def test_every_kind_in_every_format(every_kind, kind, tmp_path):
    r = every_kind[kind]
    for fmt, magic in (("pdf", b"%PDF"), ("svg", b"<?xml"), ("png", b"\x89PNG")):
        path = r.save(tmp_path / f"{kind}.{fmt}", dpi=100)
        data = path.read_bytes()
        assert data.startswith(magic), (kind, fmt)
        if fmt == "svg" or (fmt == "pdf" and kind in ("swatches", "images")):
            assert r.to_bytes(fmt, dpi=100) == data         # the same bytes every time
    if kind != "spectrum":
        assert r.figure.findobj(lambda a: a.get_gid() == "caveat")    # model predictions carry the caveat
    assert r.figure.get_figwidth() * 25.4 == pytest.approx(89.0)


def test_gains_plot_the_scorecard(every_kind):
    from cvdfilter.scorecard import score

    r = every_kind["gains"]
    card = score(["larkhill-notch-575", "larkhill-rose-tint"], surfaces="chart24",
                 observers=["normal", "deuteranope"], metrics="core").to_dict()
    for i, f in enumerate(card["filters"]):
        for key in ("blue_yellow_gain", "luminance_contrast_gain"):
            xs = _artist(r.figure, f"gain-{key}-{i}").get_xdata()
            assert np.allclose(xs, [o[key] for o in f["observers"]])
    # the deuteranope has no red-green axis: marked "not defined", no marker drawn
    assert np.isnan(r.data["gains"]["red_green_gain"][:, 1]).all()
    assert _artist(r.figure, "na-red_green_gain-1").get_text().strip() == "not defined"
    ax = r.figure.axes[0]
    assert ax.get_xscale() == "log" and 1.0 in [line.get_xdata()[0] for line in ax.lines
                                                if line.get_gid() == "reference-1"]


def test_gains_pairs_bars_are_the_counts(every_kind):
    r = every_kind["gains"]
    ax = r.figure.axes[3]
    for i in range(2):
        gained = [p.get_width() for p in ax.patches if p.get_gid() == f"pairs-gained-{i}"]
        lost = [p.get_width() for p in ax.patches if p.get_gid() == f"pairs-lost-{i}"]
        rows = np.arange(len(r.data["observers"]))
        assert np.allclose(gained, np.nan_to_num(r.data["gained"][i][rows]))
        assert np.allclose(lost, -np.nan_to_num(r.data["lost"][i][rows]))


def test_hues_reference_is_colour_science_tm30():
    # Reference library: colour-science's ANSI/IES TM-30-18 implementation; the "illuminant alone"
    # series of the hues figure for CIE FL2 equals its local chroma shifts R_cs,hj within 0.006 %
    # (the scorecard rounds to 2 decimals).
    import colour

    r = figure("hues", "larkhill-notch-575", illuminant="FL2", caveat=False)
    ref_line = _artist(r.figure, "hue-reference")
    plotted = np.asarray(ref_line.get_ydata()).reshape(16, 3)[:, 0]
    sd = colour.SDS_ILLUMINANTS["FL2"].copy().align(colour.SpectralShape(380, 780, 1))
    spec = colour.colour_fidelity_index(sd, additional_data=True, method="ANSI/IES TM-30-18")
    assert np.max(np.abs(plotted - np.asarray(spec.R_cs))) < 0.006
    heights = [_artist(r.figure, f"hue-bar-0-{j}").get_height() for j in range(1, 17)]
    assert np.allclose(heights, r.data["series"][1]["chroma_shift"])
    radial = figure("hues", "larkhill-notch-575", illuminant="FL2", chart="radial", caveat=False)
    outline = _artist(radial.figure, "hue-outline-0")
    assert np.allclose(outline.get_ydata()[:16], 100 + r.data["series"][1]["chroma_shift"])
    with pytest.raises(InputError):
        figure("hues", "larkhill-notch-575", chart="pie")


def test_sweep_plots_scorecard_values(every_kind):
    from cvdfilter.scorecard import score

    r = every_kind["sweep"]
    card = score("notch:center=550..590/20,fwhm=30,depth=0.8", surfaces="chart24",
                 observers=["normal", "deuteranope"], metrics="core").to_dict()
    line = _artist(r.figure, "sweep-luminous_transmittance-0")
    assert np.allclose(line.get_xdata(), [550, 570, 590])
    assert np.allclose(line.get_ydata(), [100 * f["luminous_transmittance"] for f in card["filters"]])
    rg = _artist(r.figure, "sweep-red_green_gain-0")
    assert np.allclose(rg.get_ydata(), [f["observers"][0]["red_green_gain"] for f in card["filters"]])


def test_swatches_are_the_renderers_colours(every_kind):
    from cvdfilter.rendering import encode_srgb, render_spectra
    from cvdfilter.spectra.surfaces import surface_set

    r = every_kind["swatches"]
    refl = surface_set("chart24").reflectance.T
    for view in ("original", "observer-filtered"):
        expected = encode_srgb(render_spectra(refl, filter="larkhill-notch-575", observer="deuteranope",
                                              view=view), np.uint8)
        img = np.asarray(_artist(r.figure, f"swatches-{view}").get_array())
        patches = img[1 + 5::11, 1 + 5::11][:1].reshape(-1, 3)[:len(expected)]   # centre of each patch
        assert np.array_equal(patches, expected)


def test_swatches_normal_view_matches_colour_science_srgb():
    # Reference library: colour-science sd_to_XYZ (CIE 1931 2 deg, D65) then XYZ_to_sRGB for the
    # 24-patch chart (chart24, N. Ohta) reflectances. The swatches go through the CIE 2006 observer and the
    # renderer's display model instead, so agreement is close, not exact: mean CIEDE2000 below 0.6
    # and every patch below 1.5 (measured 0.35 and 1.16, the largest on the out-of-gamut yellow).
    import colour

    from cvdfilter.figures.swatches import swatch_colours
    from cvdfilter.spectra.surfaces import surface_set

    mine = swatch_colours("nd:t=1", observer="deuteranope", surfaces="chart24")["srgb8"]["original"]
    s = surface_set("chart24")
    shape = colour.SpectralShape(380, 780, 1)
    cmfs = colour.MSDS_CMFS["CIE 1931 2 Degree Standard Observer"].copy().align(shape)
    d65 = colour.SDS_ILLUMINANTS["D65"].copy().align(shape)
    ref = []
    for j in range(len(s)):
        xyz = colour.sd_to_XYZ(colour.SpectralDistribution(s.reflectance[:, j], shape.wavelengths), cmfs, d65) / 100
        ref.append(np.clip(colour.XYZ_to_sRGB(xyz), 0, 1))
    ref8 = np.round(np.array(ref) * 255) / 255
    lab_mine = colour.XYZ_to_Lab(colour.sRGB_to_XYZ(mine / 255.0))
    lab_ref = colour.XYZ_to_Lab(colour.sRGB_to_XYZ(ref8))
    de = colour.delta_E(lab_mine, lab_ref, method="CIE 2000")
    assert de.mean() < 0.6 and de.max() < 1.5


def test_images_show_the_renderers_views(every_kind):
    from cvdfilter.rendering import render_views

    r = every_kind["images"]
    views = render_views(_small_image(), filter="larkhill-notch-575", observer="deuteranope")
    for view, arr in views.items():
        shown = np.asarray(_artist(r.figure, f"image-{view}").get_array())
        assert np.array_equal(shown, arr[..., :3])
    titles = [ax.get_title(loc="left") for ax in r.figure.axes]
    assert any("deuteranope" in t and "larkhill-notch-575" in t for t in titles)


def test_spectrum_notch_labels_never_overlap():
    # Invariant: notch labels set side by side do not overlap; when they cannot fit in one row they
    # move into the legend instead.
    r = figure("spectrum", ["larkhill-notch-575", "larkhill-double-notch", "notch:center=560,fwhm=20,depth=0.7"],
               width="double")
    fig = r.figure
    renderer = fig.canvas.get_renderer()
    from matplotlib.text import Text

    boxes = [Text.get_window_extent(t, renderer) for t in fig.axes[0].texts]   # the text, not the leader
    assert len(boxes) == 4
    for a, b in itertools.combinations(boxes, 2):
        assert not a.overlaps(b)
    many = figure("spectrum", "notch:center=530..620/10,fwhm=30,depth=0.8")
    assert not many.figure.axes[0].texts
    labels = [t.get_text() for t in many.figure.axes[1].get_legend().get_texts()]
    assert "center=530; 530 nm, FWHM 30 nm" in labels and "center=620; 620 nm, FWHM 30 nm" in labels


# --- two-parameter sweep, arrows, hue bins, labels, data ------------------------------------------

def _fake_card_2d():
    # A scorecard-shaped dict over a 3 x 2 sweep (centre x FWHM), in the sweep's filter order; values
    # invented for plotting tests.
    out = []
    for k, c in enumerate((540, 550, 560)):
        for fwhm in (20, 30):
            out.append({"name": f"notch:center={c},depth=0.8,fwhm={fwhm}",
                        "luminous_transmittance": 0.5 + 0.01 * c / 10,
                        "observers": [{"observer": "normal", "red_green_gain": 1.0 + 0.01 * k + 0.001 * fwhm},
                                      {"observer": "deuteranope", "red_green_gain": None}]})
    return {"illuminant": "D65", "surfaces": "ces99", "adaptation": "full", "filters": out}


def test_two_parameter_sweep_is_a_heat_map_of_the_card_values():
    from cvdfilter.figures.sweep import sweep_figure

    card = _fake_card_2d()
    r = sweep_figure("notch:center=540..560/10,fwhm=20..30/10,depth=0.8", card=card)
    assert r.data["chart"] == "heatmap" and r.data["x_key"] == "center" and r.data["y_key"] == "fwhm"
    mesh = _artist(r.figure, "heatmap-red_green_gain-0")
    z = np.ma.getdata(mesh.get_array()).reshape(2, 3)
    expected = np.array([[1.0 + 0.01 * k + 0.001 * f for k in range(3)] for f in (20, 30)])
    assert np.allclose(z, expected)
    assert mesh.get_cmap().name == "cividis"                   # reads in greyscale and for dichromats
    lum = np.ma.getdata(_artist(r.figure, "heatmap-luminous_transmittance-0").get_array()).reshape(2, 3)
    assert np.allclose(lum, 100 * np.array([[0.5 + 0.01 * c / 10 for c in (540, 550, 560)]] * 2))
    # the dichromat has no red-green axis: its panel says so instead of a blank map
    assert "not defined" in _artist(r.figure, "na-red_green_gain-1").get_text()


def test_cividis_lightness_rises_monotonically():
    # Reference library: colorspacious CAM02-UCS lightness J' of the cividis colour map (Nunez, Anderton &
    # Renslow 2018 designed it to rise monotonically, so the map reads in greyscale and for dichromats).
    import colorspacious as cs
    import matplotlib

    from cvdfilter.figures.sweep import HEATMAP_CMAP

    rgb = matplotlib.colormaps[HEATMAP_CMAP](np.linspace(0, 1, 64))[:, :3]
    for cvd in (None, "protanomaly", "deuteranomaly"):
        seen = rgb if cvd is None else np.clip(cs.cspace_convert(
            rgb, {"name": "sRGB1+CVD", "cvd_type": cvd, "severity": 100}, "sRGB1"), 0, 1)
        j = cs.cspace_convert(seen, "sRGB1", "CAM02-UCS")[:, 0]
        assert np.all(np.diff(j) > 0)


def test_chromaticity_arrow_modes():
    from cvdfilter.figures.chromaticity import AUTO_ARROWS, arrow_subset

    r = figure("chromaticity", "larkhill-notch-575", surfaces="ces99", caveat=False)   # 99 surfaces: auto subset
    assert len(_artist(r.figure, "surfaces-without-0").get_xdata()) == AUTO_ARROWS
    assert len(_artist(r.figure, "surfaces-all-0").get_xdata()) == 99
    assert r.data["arrows"] == {"mode": "subset", "n": AUTO_ARROWS}
    full = figure("chromaticity", "larkhill-notch-575", surfaces="ces99", arrows="all", caveat=False)
    assert len(_artist(full.figure, "surfaces-without-0").get_xdata()) == 99
    mean = figure("chromaticity", "larkhill-notch-575", surfaces="ces99", arrows="mean", caveat=False)
    assert 1 <= len(_artist(mean.figure, "surfaces-without-0").get_xdata()) <= 16
    # the subset is deterministic and spreads over the cloud: it keeps the extreme points
    pts = np.random.default_rng(1).normal(size=(200, 2))
    keep = arrow_subset(pts, 10)
    assert np.array_equal(keep, arrow_subset(pts, 10)) and len(set(keep)) == 10
    assert int(np.argmax(np.linalg.norm(pts - pts.mean(axis=0), axis=1))) in keep
    with pytest.raises(InputError):
        figure("chromaticity", "larkhill-notch-575", arrows="some")
    # the title names the filter and the surface set
    assert "larkhill-notch-575" in r.figure._suptitle.get_text() and "ces99" in r.figure._suptitle.get_text()


def test_hue_bin_colours_lie_in_their_bins():
    # Reference library: colorspacious CAM02-UCS (CIECAM02 defaults) hue angle of each bin's sRGB colour
    # lies inside the bin's 22.5 deg range (TM-30-18: bin j spans (j-1) x 22.5 to j x 22.5 deg).
    import colorspacious as cs

    from cvdfilter.figures.hues import HUE_BIN_NAMES, hue_bin_colours

    jab = cs.cspace_convert(hue_bin_colours(), "sRGB1", "CAM02-UCS")
    h = np.degrees(np.arctan2(jab[:, 2], jab[:, 1])) % 360
    lo = np.arange(16) * 22.5
    assert np.all((h >= lo - 1.0) & (h <= lo + 22.5 + 1.0))     # 1 deg for the 8-bit-free clip and model
    assert len(set(HUE_BIN_NAMES)) == 16


def test_one_observer_label_everywhere():
    from cvdfilter.figures.labelling import observer_label as in_figures
    from cvdfilter.observers.labels import observer_label

    assert in_figures is observer_label
    r = figure("spectrum", "larkhill-notch-575", observers=["normal", "protanomalous:shift=16"])
    labels = [t.get_text() for t in r.figure.axes[1].get_legend().get_texts()]
    assert any("protanomalous (shift 16 nm)" in t for t in labels)


def test_figure_data_csv_holds_the_plotted_numbers(every_kind):
    import csv
    import io

    for kind, r in every_kind.items():
        text = r.data_csv()
        assert "# caveat:" in text and f"# figure: {kind}" in text
        rows = list(csv.reader(io.StringIO("\n".join(line for line in text.splitlines()
                                                      if not line.startswith("#")))))
        assert len(rows) >= 2, kind
    sp = every_kind["spectrum"]
    rows = [line.split(",") for line in sp.data_csv().splitlines() if not line.startswith("#")]
    assert rows[0][0] == "wavelength_nm" and len(rows) - 1 == len(sp.data["wavelengths"])
    assert float(rows[200][1]) == pytest.approx(100 * sp.data["transmittance"][0][199])


def test_large_surface_sets_make_swatch_rows_of_bounded_height():
    # The patch rows of a large set (e.g. the 2,734 Munsell samples) wrap at about sqrt(n / 0.3) patches,
    # so a row is at most about 0.3 of its width tall (common practice: a figure fits a journal page);
    # the patch image equals the patches drawn one by one.
    from cvdfilter.figures.swatches import _per_line, _row_image

    assert _per_line(24) == 24 and _per_line(99) == 25 and _per_line(270) == 30
    for n in (271, 1000, 2734):
        p = _per_line(n)
        lines = -(-n // p)
        assert lines / p <= 0.33  # about 0.3: lines are balanced (equal lengths)
    rng = np.random.default_rng(0)
    rgb = rng.integers(0, 256, (37, 3), dtype=np.uint8)
    img = _row_image(rgb, 10)
    ref = np.full((4 * 11 + 1, 10 * 11 + 1, 3), 255, np.uint8)
    for k in range(37):
        r, c = divmod(k, 10)
        ref[1 + r * 11:1 + r * 11 + 10, 1 + c * 11:1 + c * 11 + 10] = rgb[k]
    assert np.array_equal(img, ref)
